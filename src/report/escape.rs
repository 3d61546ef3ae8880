//! Making untrusted text inert in Markdown.
//!
//! Model names, claim text and notes come from manifests written by training jobs; they must not
//! open an HTML tag, a link, an image, a table cell, a heading or a code span, and must not
//! mention a user or team. Every character with a meaning in CommonMark or GitHub Flavored
//! Markdown is backslash-escaped, `<`, `>` and `&` become entities, `@` is followed by a
//! zero-width joiner so no mention forms, and control characters and line breaks become spaces.

/// Longest untrusted string kept in a report, in characters; longer ones are cut with an ellipsis.
pub const MAX_CHARS: usize = 200;

/// Whether the word starting at `rest` looks like a commit id GitHub would link: 7 to 40 hex
/// digits, at least one of them a digit, not followed by another word character.
fn looks_like_commit(rest: &str) -> bool {
    let hex = rest.bytes().take_while(u8::is_ascii_hexdigit).count();
    let next = rest[hex..].chars().next();
    (7..=40).contains(&hex)
        && rest[..hex].bytes().any(|b| b.is_ascii_digit())
        && !next.is_some_and(|c| c.is_alphanumeric() || c == '_')
}

/// Escapes `text` for use inline in Markdown (paragraphs, list items and table cells).
///
/// GitHub links `#123` and commit ids after Markdown is parsed, so escaping `#` does not stop
/// them: a zero-width joiner follows `#`, and splits a word that looks like a commit id after
/// its first character. Bidirectional and invisible characters are written visibly (`<U+202E>`).
pub fn markdown(text: &str) -> String {
    let mut out = String::with_capacity(text.len() + 8);
    let mut previous: Option<char> = None;
    for (count, (i, c)) in text.char_indices().enumerate() {
        if count == MAX_CHARS {
            out.push('…');
            break;
        }
        let word_start = !previous.is_some_and(|p| p.is_alphanumeric() || p == '_');
        previous = Some(c);
        if word_start && c.is_ascii_hexdigit() && looks_like_commit(&text[i..]) {
            out.push(c);
            out.push('\u{200d}');
            continue;
        }
        if crate::console::is_deceptive(c) {
            out.push_str(&markdown(&crate::console::visible(c)));
            continue;
        }
        match c {
            '#' => out.push_str("\\#\u{200d}"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '&' => out.push_str("&amp;"),
            // A zero-width joiner keeps the text readable while breaking @-mentions.
            '@' => out.push_str("@\u{200d}"),
            '\\' | '`' | '*' | '_' | '{' | '}' | '[' | ']' | '(' | ')' | '+' | '-' | '.' | '!'
            | '|' | '~' | ':' | '"' | '\'' | '=' | '$' | '%' | '^' => {
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
    fn references_and_commit_ids_do_not_link() {
        assert_eq!(markdown("#123"), "\\#\u{200d}123");
        assert_eq!(markdown("at 9d03e5a."), "at 9\u{200d}d03e5a\\.");
        // Not a commit id: too short, no digit, or part of a longer word.
        assert_eq!(markdown("abc123"), "abc123");
        assert_eq!(markdown("deadbeef"), "deadbeef");
        assert_eq!(markdown("x9d03e5a"), "x9d03e5a");
        assert_eq!(markdown("a\u{202e}b"), "a&lt;U\\+202E&gt;b");
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
