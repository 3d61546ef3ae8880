//! Parsing an input file (manifest or policy) into its raw serde type; [`crate::opener`] reads it.
//!
//! JSON and YAML share one path: JSON syntax is checked strictly by serde_json first (so YAML-only
//! forms such as comments or `.nan` are not accepted in a `.json` file), then both formats are
//! deserialized by serde-saphyr, whose node locations give every later diagnostic a line and
//! column. serde-saphyr also rejects duplicate keys and enforces alias, depth and size budgets.
//! What it would coerce (a quoted number or boolean) is refused by a second walk, [`scalars`].

mod scalars;

use std::path::Path;

use schemars::JsonSchema;
use serde::de::DeserializeOwned;

use crate::diag::{Diagnostic, Place};

/// The syntax of an input file.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Syntax {
    Json,
    Yaml,
}

impl Syntax {
    /// From the extension; otherwise from the first non-blank byte (`{` means JSON).
    pub fn detect(path: &Path, text: &str) -> Syntax {
        match path.extension().and_then(|e| e.to_str()) {
            Some("json") => Syntax::Json,
            Some("yaml" | "yml") => Syntax::Yaml,
            _ if text.trim_start().starts_with('{') => Syntax::Json,
            _ => Syntax::Yaml,
        }
    }
}

/// A short reason for an I/O error, for messages.
pub fn io_reason(error: &std::io::Error) -> String {
    match error.kind() {
        std::io::ErrorKind::NotFound => "no such file".to_owned(),
        std::io::ErrorKind::PermissionDenied => "permission denied".to_owned(),
        std::io::ErrorKind::IsADirectory => "it is a directory".to_owned(),
        _ => error.to_string(),
    }
}

/// Parses `text` into `T`, reporting syntax and type errors with their position; a quoted value
/// where `T`'s JSON Schema allows only a number or a boolean is refused too (see [`scalars`]),
/// every such value in the file at once.
pub fn parse<T: DeserializeOwned + JsonSchema>(
    file: &str,
    text: &str,
    syntax: Syntax,
) -> Result<T, Vec<Diagnostic>> {
    let value = deserialize::<T>(file, text, syntax).map_err(|d| vec![d])?;
    let schema = schemars::SchemaGenerator::default().into_root_schema_for::<T>();
    let problems = scalars::check(file, text, schema.as_value());
    if problems.is_empty() {
        Ok(value)
    } else {
        Err(problems)
    }
}

fn deserialize<T: DeserializeOwned>(
    file: &str,
    text: &str,
    syntax: Syntax,
) -> Result<T, Diagnostic> {
    if text.trim().is_empty() {
        return Err(Diagnostic::file(file, "the file is empty"));
    }
    if syntax == Syntax::Json
        && let Err(e) = serde_json::from_str::<serde::de::IgnoredAny>(text)
    {
        let message = strip_position(&e.to_string(), " at line ");
        let place = Place {
            line: Some(e.line() as u64),
            // serde_json reports column 0 at the very start of a line (end of input).
            column: (e.column() > 0).then_some(e.column() as u64),
        };
        return Err(Diagnostic::at(
            file,
            place,
            "(json)",
            format!("invalid JSON: {message}"),
        ));
    }
    let options = serde_saphyr::options! { with_snippet: false, strict_booleans: true };
    serde_saphyr::from_str_with_options::<T>(text, options).map_err(|e| {
        let place = e.location().map(|l| Place::of(&l)).unwrap_or_default();
        let mut message = strip_position(&e.to_string(), " at line ");
        // serde-saphyr suggests one of its own options here; that advice is for programmers.
        if let Some(i) = message.find(", set DuplicateKeyPolicy") {
            message.truncate(i);
        }
        if let Some(limit) = message.strip_prefix("budget breached: ") {
            message = budget_message(limit);
        } else if message == "recursion limit exceeded" {
            message = "the document exceeds the limit on nesting depth".to_owned();
        } else {
            message = plain_message(&message, token_at(text, place).as_deref());
        }
        // Type errors say what was expected; add what was found.
        if message.starts_with("invalid ")
            && let Some(token) = token_at(text, place)
        {
            message.push_str(&format!(", found `{token}`"));
        }
        let diagnostic = Diagnostic {
            file: file.to_owned(),
            line: place.line,
            column: place.column,
            path: None,
            message,
            help: None,
        };
        if diagnostic.message.starts_with("the document exceeds") {
            // Blame aliases only where the file has some: a plain file over the node limit is
            // simply too large for one document.
            return diagnostic.with_help(if text.contains('*') && text.contains('&') {
                "anchors and aliases (`&a`, `*a`) can expand a small file enormously; write the values out and keep nesting shallow"
            } else {
                "split the models over several manifests: one document holds at most 250,000 values, a few thousand models"
            });
        }
        match unknown_field_hint(&diagnostic.message) {
            Some(hint) => diagnostic.with_help(hint),
            None => diagnostic,
        }
    })
}

/// Replaces the parser's programmer-facing texts (which name its own API or Rust types) with
/// what a manifest author can act on. `token` is the text at the error's position.
fn plain_message(message: &str, token: Option<&str>) -> String {
    if message.starts_with("multiple YAML documents detected") {
        return "the file holds more than one YAML document (a `---` line starts another); \
                a manifest or policy is one document"
            .to_owned();
    }
    if message.starts_with("invalid boolean") {
        // serde-saphyr's "(strict mode expects true/false)" names its own option.
        return "invalid boolean: expected true or false".to_owned();
    }
    if message.starts_with("cannot deserialize null into") {
        return "expected a value, found nothing (null)".to_owned();
    }
    if message == "expected string scalar" || message.starts_with("expected scalar") {
        let found = match token.and_then(|t| t.chars().next()) {
            Some('[') | Some('-') => "a list",
            Some('{') => "a mapping",
            Some(_) => "a nested value",
            None => "a list or mapping",
        };
        return format!("expected a single value, found {found}");
    }
    message.to_owned()
}

/// serde-saphyr reports a breached parsing budget as the `Debug` form of its limit, such as
/// `Nodes { nodes: 250001 }`; this says it in words.
fn budget_message(limit: &str) -> String {
    let kind = limit.split([' ', '{']).next().unwrap_or(limit);
    let count: String = limit.chars().filter(char::is_ascii_digit).collect();
    let what = match kind {
        "Nodes" => "nodes (values, after expanding aliases)",
        "Depth" => "nesting depth",
        "Aliases" => "aliases",
        "Anchors" => "anchors",
        "Events" => "parser events",
        "ScalarBytes" => "text in scalars",
        "Documents" => "documents",
        _ => return format!("the document exceeds a parsing limit: {limit}"),
    };
    format!("the document exceeds the limit on {what}: {count} reached")
}

/// The scalar that starts at `place` in `text`, for messages.
fn token_at(text: &str, place: Place) -> Option<String> {
    let line = text
        .lines()
        .nth(usize::try_from(place.line?).ok()?.checked_sub(1)?)?;
    let start = usize::try_from(place.column?).ok()?.checked_sub(1)?;
    let token: String = line
        .chars()
        .skip(start)
        .take_while(|c| !matches!(c, ',' | '}' | ']' | '#'))
        .take(40)
        .collect();
    let token = token.trim();
    (!token.is_empty()).then(|| token.to_owned())
}

/// Drops the parser's own " at line N, column M" suffix; the diagnostic carries the position.
fn strip_position(message: &str, marker: &str) -> String {
    match message.find(marker) {
        Some(i) => message[..i].to_owned(),
        None => message.to_owned(),
    }
}

/// For serde's "unknown field `x`, expected one of `a`, `b`" (or "unknown variant ..."),
/// suggests the closest expected name.
fn unknown_field_hint(message: &str) -> Option<String> {
    let rest = message
        .strip_prefix("unknown field `")
        .or_else(|| message.strip_prefix("unknown variant `"))?;
    let (word, rest) = rest.split_once('`')?;
    let expected = rest.split_once("expected ")?.1;
    let expected = expected.replace(" or ", ",");
    let candidates: Vec<&str> = expected
        .trim_start_matches("one of ")
        .split(',')
        .map(|c| c.trim().trim_matches('`'))
        .filter(|c| !c.is_empty())
        .collect();
    crate::diag::closest(word, candidates.iter().copied()).map(|c| format!("did you mean `{c}`?"))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn unknown_field_gets_a_suggestion() {
        let hint = unknown_field_hint(
            "unknown field `max_evaluation`, expected one of severity, max_evaluations",
        );
        assert_eq!(hint.as_deref(), Some("did you mean `max_evaluations`?"));
        let hint = unknown_field_hint("unknown field `zzz`, expected `severity` or `min_rows`");
        assert_eq!(hint, None);
    }
}
