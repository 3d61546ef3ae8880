//! Reports: one [`view::View`] built from the assessment, rendered as Markdown and JUnit XML
//! (minijinja templates), JSON and a short terminal summary. Renderers read only the view.

pub mod escape;
pub mod format;
pub mod schema_check;
pub mod since;
pub mod strip;
pub mod templates;
pub mod terminal;
pub mod view;

use anyhow::Result;

/// The JSON report: the view, pretty-printed, with a trailing newline.
pub fn json(view: &view::View) -> Result<String> {
    let mut text = serde_json::to_string_pretty(view)?;
    text.push('\n');
    Ok(text)
}

/// The JSON Schema of the JSON report.
pub fn schema() -> schemars::Schema {
    schemars::schema_for!(view::View)
}
