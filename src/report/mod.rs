//! Reports: one [`view::View`] built from the assessment, rendered as Markdown and JUnit XML
//! (minijinja templates), JSON and a short terminal summary. Renderers read only the view.

pub mod budget;
pub mod escape;
pub mod format;
pub mod problems;
pub mod schema_check;
pub mod since;
pub mod strip;
pub mod templates;
pub mod terminal;
pub mod view;

use anyhow::Result;

/// The JSON report: the view (of a checked run, or of one that could not check),
/// pretty-printed, with a trailing newline.
pub fn json(view: &impl serde::Serialize) -> Result<String> {
    let mut text = serde_json::to_string_pretty(view)?;
    text.push('\n');
    Ok(text)
}

/// Every shape the JSON report takes: a checked run, or one whose inputs were invalid.
#[derive(schemars::JsonSchema)]
#[serde(untagged)]
// Only its schema is used (the reports serialize their own views), so no value is built.
#[allow(dead_code, clippy::large_enum_variant)]
enum ReportDocument {
    Checked(view::View),
    CouldNotCheck(problems::ProblemsView),
}

/// The JSON Schema of the JSON report (either shape; `verdict` tells them apart).
pub fn schema() -> schemars::Schema {
    schemars::schema_for!(ReportDocument)
}

/// The JSON Schema of a checked run's report alone: what a `--baseline` report must be (a base
/// report that could not check is refused before, with its own message).
pub fn checked_schema() -> schemars::Schema {
    schemars::schema_for!(view::View)
}
