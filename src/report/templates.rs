//! The Markdown report and the JUnit XML file, rendered from minijinja templates.
//!
//! The default templates are compiled in from `templates/`; a user's directory (`--templates
//! DIR`) replaces any of them by file name. Templates receive the [`View`] as `report` and a few
//! filters: `md` escapes untrusted text for Markdown, `xml` drops characters XML cannot carry
//! (`.xml` templates are HTML-escaped automatically), and `score`, `probability` and `interval`
//! format numbers as the rest of the report does. minijinja does not escape Markdown, so every
//! string from a manifest must go through `md`; the default templates do.

use std::collections::BTreeMap;
use std::path::Path;

use anyhow::{Context as _, Result};
use minijinja::syntax::SyntaxConfig;
use minijinja::value::Serde;
use minijinja::{Environment, UndefinedBehavior, Value};

use super::budget::Layout;
use super::view::View;
use super::{escape, format};

/// The Markdown report's template.
pub const MARKDOWN: &str = "report.md.j2";
/// The Markdown report of a run whose inputs were invalid.
pub const PROBLEMS: &str = "could-not-check.md.j2";
/// The JUnit XML template.
pub const JUNIT: &str = "junit.xml.j2";

/// The first line of every Markdown report; CI finds the comment to update by it.
pub const MARKER: &str = "<!-- vetscore:report -->";

const BUILT_IN: &[(&str, &str)] = &[
    (MARKDOWN, include_str!("../../templates/report.md.j2")),
    (JUNIT, include_str!("../../templates/junit.xml.j2")),
    (
        PROBLEMS,
        include_str!("../../templates/could-not-check.md.j2"),
    ),
];

/// A set of template sources by file name.
#[derive(Debug, Clone)]
pub struct Templates {
    sources: BTreeMap<&'static str, String>,
}

impl Templates {
    /// The templates compiled into the binary.
    pub fn built_in() -> Templates {
        Templates {
            sources: BUILT_IN
                .iter()
                .map(|(n, s)| (*n, (*s).to_owned()))
                .collect(),
        }
    }

    /// The built-in templates, each replaced by a file of the same name in `dir` when present.
    pub fn with_overrides(dir: &Path) -> Result<Templates> {
        if !dir.is_dir() {
            anyhow::bail!("template directory {} does not exist", dir.display());
        }
        let mut templates = Templates::built_in();
        for (name, source) in templates.sources.iter_mut() {
            let path = dir.join(name);
            if path.exists() {
                *source = crate::opener::read_text(Some(&path), crate::opener::Kind::Template)
                    .map_err(|d| anyhow::anyhow!("{d}"))?;
            }
        }
        Ok(templates)
    }

    /// Renders template `name` with the view, everything shown.
    pub fn render(&self, name: &'static str, view: &View) -> Result<String> {
        self.prepare(name, view)?
            .render(&Layout::full(view.models.len()))
    }

    /// Parses template `name` and converts the view once, for rendering several layouts.
    pub fn prepare<'s>(
        &'s self,
        name: &'static str,
        view: &impl serde::Serialize,
    ) -> Result<Prepared<'s>> {
        let mut env = environment()?;
        let source = self
            .sources
            .get(name)
            .with_context(|| format!("no template named {name}"))?;
        env.add_template(name, source)
            .with_context(|| format!("template {name} does not parse"))?;
        Ok(Prepared {
            env,
            name,
            report: Value::from(Serde(view)),
        })
    }
}

/// A parsed template and its view, ready to render in any [`Layout`].
pub struct Prepared<'s> {
    env: Environment<'s>,
    name: &'static str,
    report: Value,
}

impl Prepared<'_> {
    /// Renders with `layout`; the text always ends with a line break.
    pub fn render(&self, layout: &Layout) -> Result<String> {
        let mut text = self
            .env
            .get_template(self.name)?
            .render(minijinja::context! {
                report => self.report.clone(),
                marker => MARKER,
                layout => Value::from(Serde(layout)),
            })
            .with_context(|| format!("rendering {}", self.name))?;
        if !text.ends_with('\n') {
            text.push('\n');
        }
        Ok(text)
    }
}

fn environment<'s>() -> Result<Environment<'s>> {
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
    env.add_filter("xml", |s: Option<String>| {
        escape::xml_chars(s.as_deref().unwrap_or(""))
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
