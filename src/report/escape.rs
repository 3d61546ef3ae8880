//! Making untrusted text inert in Markdown.
//!
//! Model names, claim text and notes come from manifests written by training jobs; they must not
//! open an HTML tag, a link, an image, a table cell, a heading or a code span, and must not
//! mention a user or team. Every character with a meaning in CommonMark or GitHub Flavored
//! Markdown is backslash-escaped, `<`, `>` and `&` become entities, `@` is followed by a
//! zero-width joiner so no mention forms, and control characters and line breaks become spaces.

/// Longest untrusted string kept in a report, in characters; longer ones are cut with an ellipsis.
pub const MAX_CHARS: usize = 200;

/// Escapes `text` for use inline in Markdown (paragraphs, list items and table cells).
pub fn markdown(text: &str) -> String {
    let mut out = String::with_capacity(text.len() + 8);
    for (count, c) in text.chars().enumerate() {
        if count == MAX_CHARS {
            out.push('…');
            break;
        }
        match c {
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '&' => out.push_str("&amp;"),
            // A zero-width joiner keeps the text readable while breaking @-mentions.
            '@' => out.push_str("@\u{200d}"),
            '\\' | '`' | '*' | '_' | '{' | '}' | '[' | ']' | '(' | ')' | '#' | '+' | '-' | '.'
            | '!' | '|' | '~' | ':' | '"' | '\'' | '=' | '$' | '%' | '^' => {
                out.push('\\');
                out.push(c);
            }
            c if c.is_control() || c == '\u{2028}' || c == '\u{2029}' => out.push(' '),
            c => out.push(c),
        }
    }
    out
}

/// Drops the characters XML 1.0 cannot carry even escaped (most control characters); the
/// template engine's HTML escaping then takes care of `<`, `>`, `&` and quotes.
pub fn xml_chars(text: &str) -> String {
    text.chars()
        .filter(|&c| {
            matches!(c, '\t' | '\n' | '\r')
                || !(c.is_control() || c == '\u{fffe}' || c == '\u{ffff}')
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn html_links_and_mentions_are_inert() {
        assert_eq!(
            markdown("<img src=x>"),
            "&lt;img src=x&gt;".replace('=', "\\=")
        );
        assert_eq!(markdown("[a](http://x)"), "\\[a\\]\\(http\\://x\\)");
        assert_eq!(markdown("@team"), "@\u{200d}team");
        assert_eq!(markdown("a|b\nc"), "a\\|b c");
        assert_eq!(markdown("`x`"), "\\`x\\`");
    }

    #[test]
    fn xml_drops_control_characters() {
        assert_eq!(xml_chars("a\u{1}b\tc\u{7f}"), "ab\tc");
    }

    #[test]
    fn long_text_is_cut() {
        let long = "x".repeat(MAX_CHARS + 50);
        let escaped = markdown(&long);
        assert_eq!(escaped.chars().count(), MAX_CHARS + 1);
        assert!(escaped.ends_with('…'));
    }
}
