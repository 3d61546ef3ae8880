//! The Markdown report, rendered from a minijinja template.
//!
//! The default templates are compiled in from `templates/`; `--templates DIR` loads a user's own
//! instead (same file names). Templates receive the [`View`] and a few filters: `md` escapes
//! untrusted text, `score`, `probability` and `interval` format numbers the same way the rest of
//! the report does. minijinja does no auto-escaping for Markdown, so every string that came from
//! a manifest must go through `md`; the default templates do.

use std::path::Path;

use anyhow::{Context as _, Result};
use minijinja::syntax::SyntaxConfig;
use minijinja::value::Serde;
use minijinja::{Environment, UndefinedBehavior, Value};

use super::view::View;
use super::{escape, format};

/// The main template's file name.
pub const REPORT_TEMPLATE: &str = "report.md.j2";

/// The default templates, compiled into the binary.
const DEFAULT_TEMPLATES: &[(&str, &str)] = &[(
    REPORT_TEMPLATE,
    include_str!("../../templates/report.md.j2"),
)];

/// The first line of every report; CI finds the comment to update by it.
pub const MARKER: &str = "<!-- vetscore:report -->";

/// Renders the Markdown report, with templates from `dir` when given.
pub fn render(view: &View, dir: Option<&Path>) -> Result<String> {
    let mut env = environment()?;
    match dir {
        Some(dir) => {
            let path = dir.join(REPORT_TEMPLATE);
            let source = std::fs::read_to_string(&path)
                .with_context(|| format!("cannot read template {}", path.display()))?;
            env.add_template_owned(REPORT_TEMPLATE, source)
                .with_context(|| format!("template {} does not parse", path.display()))?;
        }
        None => {
            for (name, source) in DEFAULT_TEMPLATES {
                env.add_template(name, source)
                    .with_context(|| format!("built-in template {name} does not parse"))?;
            }
        }
    }
    let template = env.get_template(REPORT_TEMPLATE)?;
    let body = template
        .render(minijinja::context! { report => Value::from(Serde(view)), marker => MARKER })
        .context("rendering the Markdown report")?;
    Ok(body)
}

fn environment() -> Result<Environment<'static>> {
    let mut env = Environment::new();
    env.set_undefined_behavior(UndefinedBehavior::Strict);
    env.set_syntax(
        SyntaxConfig::builder()
            .trim_blocks(true)
            .lstrip_blocks(true)
            .build()?,
    );
    env.add_filter("md", |s: Option<String>| {
        escape::markdown(s.as_deref().unwrap_or(""))
    });
    env.add_filter("score", |x: Option<f64>| {
        x.map_or("n/a".to_owned(), format::score)
    });
    env.add_filter("probability", format::probability);
    env.add_filter(
        "interval",
        |lower: Option<f64>, upper: Option<f64>| match (lower, upper) {
            (Some(l), Some(u)) => format::interval(l, u),
            _ => "no interval".to_owned(),
        },
    );
    Ok(env)
}
