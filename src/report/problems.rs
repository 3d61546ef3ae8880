//! The report of a run that could not check: when the inputs are invalid, the reviewer still
//! gets a comment (verdict "could not check", every input problem with its file and line), under
//! the same marker, so it replaces an earlier comment that may say "supported". The exit code
//! stays 2; only the reports change.

use schemars::JsonSchema;
use serde::Serialize;

use super::budget::{self, Layout, Measure};
use super::templates::Prepared;
use super::view::{REPORT_VERSION, Tool};
use crate::diag::Diagnostic;

/// The verdict of a run whose inputs were invalid.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, JsonSchema)]
#[serde(rename_all = "snake_case")]
pub enum CouldNotCheck {
    /// Nothing was checked; `input_problems` says why.
    CouldNotCheck,
}

/// The JSON and Markdown report of a run with invalid inputs.
#[derive(Debug, Clone, Serialize, JsonSchema)]
pub struct ProblemsView {
    pub report_version: u32,
    pub tool: Tool,
    pub verdict: CouldNotCheck,
    pub verdict_label: &'static str,
    /// Every input problem found, in the order found.
    pub input_problems: Vec<ProblemView>,
}

/// One input problem, as the terminal shows it and field by field.
#[derive(Debug, Clone, Serialize, JsonSchema)]
pub struct ProblemView {
    pub file: String,
    pub line: Option<u64>,
    pub column: Option<u64>,
    /// Key path inside the file, such as `models[1].claim.value`.
    pub path: Option<String>,
    pub message: String,
    pub help: Option<String>,
}

/// The view of a run stopped by `problems`.
pub fn build(problems: &[Diagnostic]) -> ProblemsView {
    ProblemsView {
        report_version: REPORT_VERSION,
        tool: Tool {
            name: env!("CARGO_PKG_NAME"),
            version: env!("CARGO_PKG_VERSION"),
        },
        verdict: CouldNotCheck::CouldNotCheck,
        verdict_label: "could not check",
        input_problems: problems
            .iter()
            .map(|d| ProblemView {
                file: d.file.clone(),
                line: d.line,
                column: d.column,
                path: d.path.clone(),
                message: d.message.clone(),
                help: d.help.clone(),
            })
            .collect(),
    }
}

/// The problems report's Markdown within `limit`: as many problems as fit, in order, and a line
/// saying how many were left out (the terminal log and the JSON report list them all).
pub fn markdown(
    prepared: &Prepared<'_>,
    view: &ProblemsView,
    limit: usize,
    measure: Measure,
) -> anyhow::Result<String> {
    let n = view.input_problems.len();
    let full = Layout::full(n);
    let text = prepared.render(&full)?;
    if measure.size(&text) <= limit {
        return Ok(text);
    }
    let cut = |rows: usize| Layout {
        rows,
        details: 0,
        list_limit: 0,
        omitted: Some(format!(
            "To fit in {limit} characters, {} of {n} problems are left out; the job's log and \
             the JSON report list them all.",
            n - rows
        )),
    };
    let mut attempt = |rows: usize| -> anyhow::Result<Option<budget::Fitted>> {
        let text = prepared.render(&cut(rows))?;
        Ok((measure.size(&text) <= limit).then_some(budget::Fitted { text, layout: None }))
    };
    if let Some(found) = budget::largest(n, &mut attempt)? {
        return Ok(found.text);
    }
    match attempt(0)? {
        Some(found) => Ok(found.text),
        None => Ok(format!(
            "{}\n## vetscore: could not check\n\n{n} input problems were found; the job's log \
             lists them.\n",
            super::templates::MARKER
        )),
    }
}
