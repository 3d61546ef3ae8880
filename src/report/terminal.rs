//! The short terminal summary: one line per model and the overall verdict, coloured only when
//! the caller says the output is a terminal and `NO_COLOR` is unset.

use super::format;
use super::view::{Effect, View};
use crate::finding::Verdict;

/// Renders the summary; `color` adds ANSI colours.
pub fn render(view: &View, color: bool) -> String {
    let paint = |verdict: Verdict, text: &str| -> String {
        if !color {
            return text.to_owned();
        }
        let code = match verdict {
            Verdict::Supported => "32",
            Verdict::SupportedWithWarnings => "33",
            Verdict::NotSupported => "31",
        };
        format!("\x1b[{code}m{text}\x1b[0m")
    };
    let width = view
        .models
        .iter()
        .map(|m| m.name.chars().count())
        .max()
        .unwrap_or(0);
    let mut out = String::new();
    for m in &view.models {
        let blocking: Vec<&str> = m
            .findings
            .iter()
            .filter(|f| f.effect == Effect::Blocks)
            .map(|f| f.rule)
            .collect();
        let name: String = m.name.chars().filter(|c| !c.is_control()).collect();
        out.push_str(&format!(
            "  {name:<width$}  claim {}  {}",
            format::score(m.claim.value),
            paint(m.verdict, m.verdict_label)
        ));
        if !blocking.is_empty() {
            out.push_str(&format!(" ({})", blocking.join(", ")));
        }
        out.push('\n');
    }
    out.push_str(&format!(
        "vetscore: {} ({} of {} models not supported)\n",
        paint(view.verdict, view.verdict_label),
        view.counts.not_supported,
        view.counts.models
    ));
    out
}
