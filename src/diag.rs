//! Input problems: a [`Diagnostic`] names the file, the line and column where known, the key path,
//! what was expected and what was found, and one line of help when the fix is known.
//!
//! Loading and validation collect every diagnostic they find instead of stopping at the first, so
//! a user fixes a manifest in one pass. Diagnostics are input errors (exit code 2), never findings.

use std::fmt;

/// One problem with an input file.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Diagnostic {
    pub file: String,
    pub line: Option<u64>,
    pub column: Option<u64>,
    /// Key path inside the file, such as `models[1].search.cv.folds[3].rows`.
    pub path: Option<String>,
    pub message: String,
    pub help: Option<String>,
}

impl Diagnostic {
    /// A problem with the file as a whole (missing, unreadable, too large).
    pub fn file(file: impl Into<String>, message: impl Into<String>) -> Self {
        Diagnostic {
            file: file.into(),
            line: None,
            column: None,
            path: None,
            message: message.into(),
            help: None,
        }
    }

    /// A problem at a place in the file.
    pub fn at(
        file: &str,
        place: Place,
        path: impl Into<String>,
        message: impl Into<String>,
    ) -> Self {
        Diagnostic {
            file: file.to_owned(),
            line: place.line,
            column: place.column,
            path: Some(path.into()),
            message: message.into(),
            help: None,
        }
    }

    /// Adds one line of help.
    pub fn with_help(mut self, help: impl Into<String>) -> Self {
        self.help = Some(help.into());
        self
    }
}

/// `text` with control characters (line breaks, escape) written as Rust escapes. File names and
/// input text reach diagnostics; raw, a line break would start a new log line (which CI runners
/// read as commands, such as GitHub's `::error::`) and an escape would drive the terminal.
fn inert(text: &str) -> std::borrow::Cow<'_, str> {
    if !text.chars().any(char::is_control) {
        return text.into();
    }
    text.chars()
        .map(|c| {
            if c.is_control() {
                c.escape_default().to_string()
            } else {
                c.to_string()
            }
        })
        .collect::<String>()
        .into()
}

impl fmt::Display for Diagnostic {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}", inert(&self.file))?;
        if let Some(line) = self.line {
            write!(f, ":{line}")?;
            if let Some(column) = self.column {
                write!(f, ":{column}")?;
            }
        }
        write!(f, ": ")?;
        if let Some(path) = &self.path {
            write!(f, "{}: ", inert(path))?;
        }
        write!(f, "{}", inert(&self.message))?;
        if let Some(help) = &self.help {
            write!(f, "\n  help: {}", inert(help))?;
        }
        Ok(())
    }
}

/// A line and column in an input file, when the parser knows them.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct Place {
    pub line: Option<u64>,
    pub column: Option<u64>,
}

impl Place {
    /// A known position (1-based).
    pub fn new(line: u64, column: u64) -> Self {
        Place {
            line: Some(line),
            column: Some(column),
        }
    }

    /// The position of a YAML node, unknown when the parser did not record it.
    pub fn of(location: &serde_saphyr::Location) -> Self {
        if location.line() == 0 {
            Place::default()
        } else {
            Place::new(location.line(), location.column())
        }
    }
}

/// Collects diagnostics during validation.
#[derive(Debug, Default)]
pub struct Diagnostics(Vec<Diagnostic>);

impl Diagnostics {
    pub fn push(&mut self, diagnostic: Diagnostic) {
        self.0.push(diagnostic);
    }

    pub fn extend(&mut self, other: impl IntoIterator<Item = Diagnostic>) {
        self.0.extend(other);
    }

    pub fn is_empty(&self) -> bool {
        self.0.is_empty()
    }

    pub fn len(&self) -> usize {
        self.0.len()
    }

    pub fn into_vec(self) -> Vec<Diagnostic> {
        self.0
    }

    /// `Ok(value)` when nothing was collected, else every diagnostic.
    pub fn finish<T>(self, value: T) -> Result<T, Vec<Diagnostic>> {
        if self.0.is_empty() {
            Ok(value)
        } else {
            Err(self.0)
        }
    }
}

/// A problem when a file's `format_version` is not the one this build reads.
pub fn format_version(
    file: &str,
    kind: &str,
    found: &serde_saphyr::Spanned<u32>,
    expected: u32,
) -> Option<Diagnostic> {
    (found.value != expected).then(|| {
        Diagnostic::at(
            file,
            Place::of(&found.referenced),
            "format_version",
            format!("expected format version {expected}, found {}", found.value),
        )
        .with_help(format!(
            "this build of vetscore reads {kind} format version {expected}"
        ))
    })
}

/// Edit distance between two short strings, for "did you mean" hints.
pub fn edit_distance(a: &str, b: &str) -> usize {
    let b: Vec<char> = b.chars().collect();
    let mut previous: Vec<usize> = (0..=b.len()).collect();
    for (i, ca) in a.chars().enumerate() {
        let mut current = Vec::with_capacity(b.len() + 1);
        current.push(i + 1);
        for (j, cb) in b.iter().enumerate() {
            let substitution = previous[j] + usize::from(ca != *cb);
            current.push(substitution.min(previous[j + 1] + 1).min(current[j] + 1));
        }
        previous = current;
    }
    previous[b.len()]
}

/// The candidate closest to `word`, if it is close enough to be a likely typo.
pub fn closest<'a>(word: &str, candidates: impl IntoIterator<Item = &'a str>) -> Option<&'a str> {
    candidates
        .into_iter()
        .map(|c| (edit_distance(word, c), c))
        .filter(|(d, c)| *d <= (c.len() / 3).max(2))
        .min_by_key(|(d, _)| *d)
        .map(|(_, c)| c)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn edit_distance_counts_single_edits() {
        // Textbook example (common practice, no source): kitten -> sitting takes 3 edits.
        assert_eq!(edit_distance("kitten", "sitting"), 3);
        assert_eq!(edit_distance("", "abc"), 3);
        assert_eq!(edit_distance("same", "same"), 0);
    }

    #[test]
    fn closest_suggests_only_near_words() {
        let keys = ["max_evaluations", "severity", "min_rows"];
        assert_eq!(closest("max_evaluation", keys), Some("max_evaluations"));
        assert_eq!(closest("severty", keys), Some("severity"));
        assert_eq!(closest("colour", keys), None);
    }

    #[test]
    fn display_keeps_one_line_whatever_the_file_name() {
        let d = Diagnostic::file("runs/a\n::error::forged\u{1b}[2K.yaml", "the file is empty");
        assert_eq!(
            d.to_string(),
            "runs/a\\n::error::forged\\u{1b}[2K.yaml: the file is empty"
        );
    }

    #[test]
    fn display_names_file_line_and_path() {
        let d = Diagnostic::at("m.yaml", Place::new(4, 7), "models[0].claim.value", "bad")
            .with_help("fix it");
        assert_eq!(
            d.to_string(),
            "m.yaml:4:7: models[0].claim.value: bad\n  help: fix it"
        );
    }
}
