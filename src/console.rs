//! The one door out: every byte vetscore writes to standard output or standard error passes
//! through [`Console`], which writes it through [`clean`] and flushes it.
//!
//! Output reaches CI logs, and a CI runner reads certain log lines as commands: GitHub Actions
//! takes a line whose first non-blank characters are `::` (`::error file=…::`,
//! `::stop-commands::…`, `::add-mask::…`), and both GitHub and Azure Pipelines take `##[…]` and
//! `##vso[…]` anywhere in a line. Model names, file names, trial cells and every other string
//! from a merge request end up in that output, so in every line
//!
//! - control characters are written as escapes (`\u{1b}`), except tab and, when colour is on,
//!   the colour sequences vetscore itself writes (`ESC [ digits ; … m`);
//! - bidirectional overrides and invisible characters (U+202E, U+200B, U+2066 …), which can make
//!   a name read differently from what it is, are written visibly as `<U+202E>`;
//! - a leading `::` (after any whitespace) gets a space between the colons, and `##` before `[`
//!   or `vso[` gets a space after it, so no runner command can form.
//!
//! Reports written to standard output (`--markdown -`, `--json -`) are documents another program
//! reads, so there the same characters are replaced by JSON escapes (`\u202e`, `#\u0023[`): a
//! JSON report keeps its data exactly, and Markdown has escaped them already.
//!
//! The one deliberate exception is [`Console::annotate`]: vetscore's own GitHub annotations
//! (`::error file=F,line=L::message`), whose property and message parts are escaped the way
//! GitHub documents (`%25`, `%0D`, `%0A`, and `%3A`, `%2C` in properties) after cleaning, so
//! untrusted text cannot end the annotation or start another command.
//!
//! Nothing below `app` and `main` prints; they print only through this module.

use std::fmt::Write as _;

/// How a piece of output is read.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Style {
    /// Read by people: summaries, diagnostics, listings.
    Text,
    /// Read by programs: a report on standard output. Replacements are JSON string escapes.
    Document,
}

/// Characters that change how text around them is displayed without showing themselves:
/// bidirectional controls, zero-width and other invisible formatting characters, line and
/// paragraph separators.
pub fn is_deceptive(c: char) -> bool {
    matches!(
        c,
        '\u{00ad}'
            | '\u{034f}'
            | '\u{061c}'
            | '\u{115f}'
            | '\u{1160}'
            | '\u{17b4}'
            | '\u{17b5}'
            | '\u{180b}'..='\u{180f}'
            | '\u{200b}'..='\u{200f}'
            | '\u{2028}'..='\u{202e}'
            | '\u{2060}'..='\u{206f}'
            | '\u{3164}'
            | '\u{feff}'
            | '\u{ffa0}'
            | '\u{fff9}'..='\u{fffb}'
            | '\u{1d173}'..='\u{1d17a}'
            | '\u{e0000}'..='\u{e007f}'
    )
}

/// `c` in the visible form text output uses: `<U+202E>`.
pub fn visible(c: char) -> String {
    format!("<U+{:04X}>", u32::from(c))
}

fn json_escape(c: char, out: &mut String) {
    let mut units = [0u16; 2];
    for unit in c.encode_utf16(&mut units) {
        let _ = write!(out, "\\u{unit:04x}");
    }
}

/// `text` made safe for a terminal or CI log, line by line (see the module docs). `color` keeps
/// vetscore's own colour sequences.
pub fn clean(text: &str, style: Style, color: bool) -> String {
    let mut out = String::with_capacity(text.len() + 16);
    for (i, line) in text.split('\n').enumerate() {
        if i > 0 {
            out.push('\n');
        }
        clean_line(line, style, color, &mut out);
    }
    out
}

fn clean_line(line: &str, style: Style, color: bool, out: &mut String) {
    // First every character is made harmless on its own; removing or replacing characters can
    // bring `::` to the start of the line, so command syntax is neutralised afterwards.
    let mut chars = String::with_capacity(line.len());
    let mut rest = line;
    while let Some(c) = rest.chars().next() {
        if c == '\u{1b}'
            && color
            && style == Style::Text
            && let Some(len) = sgr_len(rest)
        {
            chars.push_str(&rest[..len]);
            rest = &rest[len..];
            continue;
        }
        rest = &rest[c.len_utf8()..];
        let deceptive = is_deceptive(c) && !(style == Style::Document && c == '\u{200d}');
        if c == '\t' || !(c.is_control() || deceptive) {
            chars.push(c);
        } else if style == Style::Document {
            json_escape(c, &mut chars);
        } else if c.is_control() {
            chars.push_str(&c.escape_default().to_string());
        } else {
            chars.push_str(&visible(c));
        }
    }
    neutralise(&chars, style, out);
}

/// The length of a colour sequence `ESC [ (digit | ;)* m` at the start of `text`.
fn sgr_len(text: &str) -> Option<usize> {
    let body = text.strip_prefix("\u{1b}[")?;
    let params = body
        .bytes()
        .take_while(|b| b.is_ascii_digit() || *b == b';')
        .count();
    (body.as_bytes().get(params) == Some(&b'm')).then_some(2 + params + 1)
}

fn neutralise(line: &str, style: Style, out: &mut String) {
    let start = line.len() - line.trim_start().len();
    let mut rest = line;
    if line[start..].starts_with("::") {
        out.push_str(&line[..=start]);
        match style {
            Style::Text => out.push_str(" :"),
            // `\u003a` is the second colon, escaped.
            Style::Document => out.push_str("\\u003a"),
        }
        rest = &line[start + 2..];
    }
    while let Some(i) = rest.find("##") {
        let after = &rest[i + 2..];
        let command = after.starts_with('[')
            || after
                .get(..4)
                .is_some_and(|s| s.eq_ignore_ascii_case("vso["));
        if command {
            out.push_str(&rest[..i]);
            match style {
                Style::Text => out.push_str("## "),
                Style::Document => out.push_str("#\\u0023"),
            }
            rest = after;
        } else {
            out.push_str(&rest[..=i]);
            rest = &rest[i + 1..];
        }
    }
    out.push_str(rest);
}

/// The level of a GitHub annotation.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Level {
    Error,
    Warning,
}

/// A GitHub annotation: a message shown on a line of a file in the merge request.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Annotation {
    pub level: Level,
    pub file: String,
    pub line: Option<u64>,
    pub column: Option<u64>,
    pub title: Option<String>,
    pub message: String,
}

/// GitHub's escaping of a workflow command's message: `%`, CR and LF.
fn escape_data(text: &str) -> String {
    text.replace('%', "%25")
        .replace('\r', "%0D")
        .replace('\n', "%0A")
}

/// GitHub's escaping of a workflow command's property value: as data, plus `:` and `,`, which
/// end a property.
fn escape_property(text: &str) -> String {
    escape_data(text).replace(':', "%3A").replace(',', "%2C")
}

impl Annotation {
    /// The workflow-command line, without its line break. Every untrusted part is cleaned as
    /// text first (control, bidirectional and invisible characters made visible) and then
    /// escaped, so it stays inside its property or message.
    pub fn line(&self) -> String {
        let text = |s: &str| {
            let mut out = String::new();
            clean_line(s, Style::Text, false, &mut out);
            out
        };
        let mut properties = vec![format!("file={}", escape_property(&text(&self.file)))];
        if let Some(line) = self.line {
            properties.push(format!("line={line}"));
            if let Some(column) = self.column {
                properties.push(format!("col={column}"));
            }
        }
        if let Some(title) = &self.title {
            properties.push(format!("title={}", escape_property(&text(title))));
        }
        let level = match self.level {
            Level::Error => "error",
            Level::Warning => "warning",
        };
        // Line breaks in the message are GitHub's to show; each line is cleaned on its own.
        let message: Vec<String> = self.message.split('\n').map(text).collect();
        format!(
            "::{level} {}::{}",
            properties.join(","),
            escape_data(&message.join("\n"))
        )
    }
}

/// Where output goes, and whether each stream gets colour.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct Console {
    pub stdout_color: bool,
    pub stderr_color: bool,
}

impl Console {
    /// Writes text for people to standard output, cleaned, and flushes it.
    pub fn out(&self, text: &str) -> std::io::Result<()> {
        write_all(Stream::Out, &clean(text, Style::Text, self.stdout_color))
    }

    /// Writes text for people to standard error, cleaned, and flushes it.
    pub fn err(&self, text: &str) -> std::io::Result<()> {
        write_all(Stream::Err, &clean(text, Style::Text, self.stderr_color))
    }

    /// Writes a report (a document another program reads) to standard output and flushes it.
    pub fn document(&self, text: &str) -> std::io::Result<()> {
        write_all(Stream::Out, &clean(text, Style::Document, false))
    }

    /// Writes vetscore's own GitHub annotation to standard error (so a report on standard
    /// output stays intact; the runner reads commands from both streams).
    pub fn annotate(&self, annotation: &Annotation) -> std::io::Result<()> {
        let mut line = annotation.line();
        line.push('\n');
        write_all(Stream::Err, &line)
    }
}

#[derive(Clone, Copy)]
enum Stream {
    Out,
    Err,
}

/// Writes to the stream through a duplicate of its descriptor. The standard library's own
/// handles report a write to a descriptor that is not open for writing (EBADF) as success, so
/// a report sent to such a stream would vanish with exit 0; the duplicate reports the error.
#[cfg(unix)]
fn write_all(stream: Stream, text: &str) -> std::io::Result<()> {
    use std::io::Write as _;
    use std::os::fd::AsFd as _;
    let fd = match stream {
        Stream::Out => std::io::stdout().as_fd().try_clone_to_owned()?,
        Stream::Err => std::io::stderr().as_fd().try_clone_to_owned()?,
    };
    let mut file = std::fs::File::from(fd);
    file.write_all(text.as_bytes())?;
    file.flush()
}

#[cfg(not(unix))]
fn write_all(stream: Stream, text: &str) -> std::io::Result<()> {
    use std::io::Write as _;
    match stream {
        Stream::Out => {
            let mut out = std::io::stdout().lock();
            out.write_all(text.as_bytes())?;
            out.flush()
        }
        Stream::Err => {
            let mut err = std::io::stderr().lock();
            err.write_all(text.as_bytes())?;
            err.flush()
        }
    }
}

/// Whether an error chain ends in a broken pipe: the reader of standard output went away.
pub fn is_broken_pipe(error: &anyhow::Error) -> bool {
    error.chain().any(|e| {
        e.downcast_ref::<std::io::Error>()
            .is_some_and(|io| io.kind() == std::io::ErrorKind::BrokenPipe)
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn text(s: &str) -> String {
        clean(s, Style::Text, false)
    }

    /// Whether a GitHub or Azure runner would read `line` as a command: a leading `::` after
    /// whitespace (the runner trims with .NET's `TrimStart`, i.e. Unicode whitespace), or `##[`
    /// or `##vso[` anywhere (documented behaviour of both runners, from their docs, no source
    /// beyond that).
    fn is_command(line: &str) -> bool {
        line.trim_start().starts_with("::")
            || line.contains("##[")
            || line.to_ascii_lowercase().contains("##vso[")
    }

    #[test]
    fn workflow_commands_are_broken_in_every_line() {
        let forged = "::error file=a.yaml,line=1::forged\n  \u{3000}::stop-commands::tok\n\
                      x ##[set-output name=v]1\nok ##VSO[task.setvariable variable=x]1\n\
                      \u{1}::add-mask::secret\n\u{202e}::warning::x";
        for style in [Style::Text, Style::Document] {
            let cleaned = clean(forged, style, false);
            assert_eq!(cleaned.lines().count(), 6, "{cleaned}");
            for line in cleaned.lines() {
                assert!(!is_command(line), "{style:?}: {line:?}");
            }
        }
        assert_eq!(text("::error::x"), ": :error::x");
        assert_eq!(text("  ::error::x"), "  : :error::x");
        assert_eq!(text("a ##[group]b"), "a ## [group]b");
        // A `::` that does not lead the line is no command and is kept.
        assert_eq!(text("see a::b"), "see a::b");
        assert_eq!(text("## Heading"), "## Heading");
    }

    #[test]
    fn document_replacements_are_json_escapes_of_the_same_text() {
        let value = serde_json::json!({
            "name": "##[set-output name=x]\u{202e}gpj.exe\u{200b}",
            "claim": "::error::x",
            "mention": "@\u{200d}team",
        });
        let pretty = serde_json::to_string_pretty(&value).unwrap();
        let cleaned = clean(&pretty, Style::Document, false);
        assert!(!cleaned.lines().any(is_command), "{cleaned}");
        assert!(!cleaned.contains('\u{202e}'));
        let back: serde_json::Value = serde_json::from_str(&cleaned).unwrap();
        assert_eq!(back, value);
    }

    #[test]
    fn control_and_deceptive_characters_are_made_visible() {
        assert_eq!(text("a\u{1b}[2Jb\tc\rd"), "a\\u{1b}[2Jb\tc\\rd");
        assert_eq!(text("abc\u{202e}fed"), "abc<U+202E>fed");
        assert_eq!(text("a\u{200b}b\u{2066}c"), "a<U+200B>b<U+2066>c");
        assert_eq!(text("\u{e0041}"), "<U+E0041>");
        // Outside the 16-bit range a JSON escape is a surrogate pair.
        assert_eq!(clean("\u{e0041}", Style::Document, false), "\\udb40\\udc41");
    }

    #[test]
    fn colour_sequences_survive_only_when_colour_is_on() {
        let painted = "\u{1b}[31mnot supported\u{1b}[0m";
        assert_eq!(clean(painted, Style::Text, true), painted);
        assert_eq!(
            clean(painted, Style::Text, false),
            "\\u{1b}[31mnot supported\\u{1b}[0m"
        );
        // Only colour: a sequence that moves the cursor is escaped even with colour on.
        assert_eq!(clean("\u{1b}[2J", Style::Text, true), "\\u{1b}[2J");
    }

    #[test]
    fn an_annotation_keeps_untrusted_text_in_its_place() {
        let annotation = Annotation {
            level: Level::Error,
            file: "runs/a,line=9::x.yaml".into(),
            line: Some(3),
            column: None,
            title: Some("model ::stop-commands::t".into()),
            message: "100% sure\r\n::error::forged\n##[set-output x]".into(),
        };
        let line = annotation.line();
        assert_eq!(
            line,
            "::error file=runs/a%2Cline=9%3A%3Ax.yaml,line=3,\
             title=model %3A%3Astop-commands%3A%3At::100%25 sure\\r%0A: :error::forged%0A## [set-output x]"
        );
        // One line, and its properties end at the first `::` after the command.
        assert!(!line.contains('\n'));
        let properties = line
            .trim_start_matches("::error ")
            .split("::")
            .next()
            .unwrap();
        assert_eq!(properties.split(',').count(), 3);
    }
}
