//! The short terminal summary: one line per model and the overall verdict, coloured only when
//! the caller says the output is a terminal and `NO_COLOR` is unset.

use super::format;
use super::view::{Effect, View};
use crate::finding::Verdict;

/// Widest model name shown, in characters; longer names are cut with an ellipsis. The column is
/// as wide as the longest name shown, so one long name cannot pad every line of a large check.
pub const NAME_WIDTH: usize = 40;

/// `name` without control characters, cut to [`NAME_WIDTH`] characters with an ellipsis.
fn display_name(name: &str) -> String {
    let mut shown: String = name
        .chars()
        .filter(|c| !c.is_control())
        .take(NAME_WIDTH + 1)
        .collect();
    if shown.chars().count() > NAME_WIDTH {
        shown = shown.chars().take(NAME_WIDTH - 1).collect();
        shown.push('…');
    }
    shown
}

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
    let names: Vec<String> = view.models.iter().map(|m| display_name(&m.name)).collect();
    let width = names.iter().map(|n| n.chars().count()).max().unwrap_or(0);
    let mut out = String::new();
    for (m, name) in view.models.iter().zip(&names) {
        let blocking: Vec<&str> = m
            .findings
            .iter()
            .filter(|f| f.effect == Effect::Blocks)
            .map(|f| f.rule)
            .collect();
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

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn long_names_are_cut_to_the_column() {
        // 70,000 characters: `{name:<width$}` with a width past 65,535 panicked in `format!`.
        let long = "n".repeat(70_000);
        let shown = display_name(&long);
        assert_eq!(shown.chars().count(), NAME_WIDTH);
        assert!(shown.ends_with('…'));
        assert_eq!(display_name("short\u{7}"), "short");
        let exact = "x".repeat(NAME_WIDTH);
        assert_eq!(display_name(&exact), exact);
    }
}
