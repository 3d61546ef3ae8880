//! The one door in: every file vetscore reads is opened here, and nowhere else.
//!
//! Everything a merge request carries is untrusted (manifests, the files they name, the policy, any
//! ledger or report in the tree), so opening a file must never block, never read without end and
//! never hold one unbounded line in memory. [`open`] therefore
//!
//! 1. looks at the file's metadata *before* opening it (following symlinks, so a symlink is judged
//!    by what it points to; a loop fails with the system's own error) and refuses anything that
//!    is not a regular file: a FIFO would block the open until a writer came, `/dev/zero` would
//!    never end, a directory or socket cannot be read as text;
//! 2. opens it with `O_NONBLOCK` (and `O_NOCTTY`), so a file swapped for a FIFO between the look
//!    and the open cannot block either, and checks the opened handle again: still a regular file,
//!    and the same file (device and inode) that was looked at;
//! 3. refuses a file over the size limit of its [`Kind`];
//! 4. hands back a [`Bounded`] reader that stops with an error when the file grows past the limit
//!    while it is read, or when one record passes [`MAX_RECORD_BYTES`]. For CSV the record is
//!    counted the way the CSV reader frames it, so a quoted field that runs over many lines is
//!    one record and cannot slip past the limit; for line formats (JSON Lines, id lists) a record
//!    is a line. The error carries the line the record started on ([`limit_line`]).
//!
//! Binary files (Parquet) are read at offsets, not as a stream: [`open_binary`] makes the same
//! checks (1–3) and hands back a [`Binary`] whose length is fixed when it is opened; a read past
//! that length is an error, so a file that grows while it is read cannot pass its limit. They
//! have no lines, so no record limit; the reader of the format bounds what it decodes.
//!
//! Standard input (`check -`) is the one source that is not a file: [`stdin`] bounds it by the
//! same reader with its own limit, and diagnostics name it [`STDIN_NAME`].
//!
//! The opener decides nothing about formats; readers parse what it hands them.

use std::fs::File;
use std::io::Read;
use std::path::Path;

use crate::diag::{Diagnostic, Place};

/// Longest record (a CSV record, a JSON Lines line, an id) read from a streamed file, in bytes.
/// A row of predictions or a trial is a short line; the readers hold one record in memory, so a
/// file without line breaks (or with one quote that never closes) must not become one huge
/// allocation.
pub const MAX_RECORD_BYTES: usize = 1 << 20;

/// How diagnostics name standard input.
pub const STDIN_NAME: &str = "<stdin>";

/// What is being read; each kind has its own size limit and framing.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Kind {
    /// A results manifest (JSON or YAML), read whole.
    Manifest,
    /// A results manifest on standard input (`check -`).
    StdinManifest,
    /// A policy file (the change's or the base branch's), read whole.
    Policy,
    /// A trials file in CSV.
    TrialsCsv,
    /// A trials file in JSON Lines.
    TrialsJsonl,
    /// scikit-learn's `cv_results_` in pandas' JSON form: one document on one line, read whole.
    TrialsResultsJson,
    /// A predictions file (CSV).
    Predictions,
    /// A search's out-of-fold predictions: every configuration on every training row (CSV).
    OutOfFold,
    /// A predictions file (Parquet), read at offsets.
    PredictionsParquet,
    /// A search's out-of-fold predictions (Parquet), read at offsets.
    OutOfFoldParquet,
    /// A train or test id list (one id per line).
    Ids,
    /// The holdout ledger (JSON Lines).
    Ledger,
    /// The base branch's JSON report (`--baseline`), read whole.
    BaseReport,
    /// The base branch's list of reviewed policy digests (`--reviewed-policies`).
    ReviewedPolicies,
    /// A report template from `--templates DIR`, read whole.
    Template,
}

/// How a kind's bytes are cut into records for the record limit.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Framing {
    /// Parsed as one document; only the size limit applies.
    Whole,
    /// One record per line (`\n`).
    Lines,
    /// CSV records: a line break inside a quoted field does not end the record.
    Csv,
    /// A binary file read at offsets through [`Binary`]; only the size limit applies.
    Binary,
}

const MIB: u64 = 1 << 20;

impl Kind {
    /// Largest input of this kind, in bytes.
    ///
    /// Manifests, policies and reports are parsed whole, so their limit bounds memory; the
    /// streamed kinds are bounded in time: a trials file of 1 GiB is about ten million trials of
    /// ten folds, a predictions or id file of 4 GiB about a hundred million rows (the id arena
    /// holds at most 4 GiB of ids in any case).
    pub const fn max_bytes(self) -> u64 {
        match self {
            Kind::Manifest | Kind::BaseReport => 64 * MIB,
            Kind::StdinManifest | Kind::Policy => 16 * MIB,
            Kind::TrialsCsv | Kind::TrialsJsonl => 1024 * MIB,
            // Parsed whole, so it bounds memory (several times its size as parsed values).
            Kind::TrialsResultsJson => 256 * MIB,
            Kind::Predictions
            | Kind::OutOfFold
            | Kind::PredictionsParquet
            | Kind::OutOfFoldParquet
            | Kind::Ids => 4096 * MIB,
            Kind::Ledger => 256 * MIB,
            Kind::Template | Kind::ReviewedPolicies => MIB,
        }
    }

    /// The kind in words, for messages.
    pub const fn noun(self) -> &'static str {
        match self {
            Kind::Manifest | Kind::StdinManifest => "manifest",
            Kind::Policy => "policy",
            Kind::TrialsCsv | Kind::TrialsJsonl | Kind::TrialsResultsJson => "trials file",
            Kind::Predictions | Kind::PredictionsParquet => "predictions file",
            Kind::OutOfFold | Kind::OutOfFoldParquet => "out-of-fold file",
            Kind::Ids => "id list",
            Kind::Ledger => "ledger",
            Kind::BaseReport => "base report",
            Kind::Template => "template",
            Kind::ReviewedPolicies => "reviewed-policy list",
        }
    }

    const fn framing(self) -> Framing {
        match self {
            Kind::TrialsCsv | Kind::Predictions | Kind::OutOfFold => Framing::Csv,
            Kind::TrialsJsonl | Kind::Ids | Kind::Ledger | Kind::ReviewedPolicies => Framing::Lines,
            Kind::PredictionsParquet | Kind::OutOfFoldParquet => Framing::Binary,
            Kind::Manifest
            | Kind::StdinManifest
            | Kind::Policy
            | Kind::TrialsResultsJson
            | Kind::BaseReport
            | Kind::Template => Framing::Whole,
        }
    }
}

/// Why a file was refused, in words that follow "cannot read …: ".
pub type Refusal = String;

/// Opens `path` as an input of `kind`: a regular file (after following symlinks) within the
/// kind's size limit, opened without blocking. The refusal says why in a few words.
pub fn open(path: &Path, kind: Kind) -> Result<Bounded<File>, Refusal> {
    if kind.framing() == Framing::Binary {
        return Err(format!(
            "a {} of this kind is read with open_binary",
            kind.noun()
        ));
    }
    Ok(Bounded::new(open_checked(path, kind)?.0, kind))
}

/// Opens `path` as a binary input of `kind` (a kind with binary framing), with the checks of
/// [`open`]: the handle reads at offsets within the length the file had when it was opened.
pub fn open_binary(path: &Path, kind: Kind) -> Result<Binary, Refusal> {
    if kind.framing() != Framing::Binary {
        return Err(format!("a {} of this kind is read with open", kind.noun()));
    }
    let (file, len) = open_checked(path, kind)?;
    Ok(Binary { file, len })
}

/// The checked open shared by [`open`] and [`open_binary`]: the file and its length.
fn open_checked(path: &Path, kind: Kind) -> Result<(File, u64), Refusal> {
    let before = std::fs::metadata(path).map_err(|e| crate::input::io_reason(&e))?;
    refuse_unless_regular(&before, kind)?;
    let mut options = std::fs::OpenOptions::new();
    options.read(true);
    #[cfg(unix)]
    {
        use std::os::unix::fs::OpenOptionsExt as _;
        options.custom_flags(libc::O_NONBLOCK | libc::O_NOCTTY);
    }
    let file = options
        .open(path)
        .map_err(|e| crate::input::io_reason(&e))?;
    let opened = file.metadata().map_err(|e| crate::input::io_reason(&e))?;
    refuse_unless_regular(&opened, kind)?;
    #[cfg(unix)]
    {
        use std::os::unix::fs::MetadataExt as _;
        if (before.dev(), before.ino()) != (opened.dev(), opened.ino()) {
            return Err("the file was replaced while it was opened".to_owned());
        }
    }
    Ok((file, opened.len()))
}

/// A regular file opened by [`open_binary`], read at offsets within the length it had then.
#[derive(Debug)]
pub struct Binary {
    file: File,
    len: u64,
}

impl Binary {
    /// The file's length when it was opened (within its kind's size limit).
    pub fn len(&self) -> u64 {
        self.len
    }

    /// Whether the file was empty when it was opened.
    pub fn is_empty(&self) -> bool {
        self.len == 0
    }

    /// Fills `buf` from `offset`; an error when that reaches past [`Binary::len`] or the file
    /// ends early (it shrank).
    pub fn read_at(&self, offset: u64, buf: &mut [u8]) -> std::io::Result<()> {
        let end = offset.checked_add(buf.len() as u64);
        if end.is_none_or(|end| end > self.len) {
            return Err(std::io::Error::new(
                std::io::ErrorKind::UnexpectedEof,
                format!(
                    "a read of {} bytes at offset {offset} passes the end of the file ({} bytes)",
                    buf.len(),
                    self.len
                ),
            ));
        }
        read_exact_at(&self.file, offset, buf)
    }
}

#[cfg(unix)]
fn read_exact_at(file: &File, offset: u64, buf: &mut [u8]) -> std::io::Result<()> {
    use std::os::unix::fs::FileExt as _;
    file.read_exact_at(buf, offset)
}

#[cfg(not(unix))]
fn read_exact_at(file: &File, offset: u64, buf: &mut [u8]) -> std::io::Result<()> {
    use std::io::Seek as _;
    // A clone shares the cursor; every read seeks first, so no read depends on the last.
    let mut handle = file.try_clone()?;
    handle.seek(std::io::SeekFrom::Start(offset))?;
    handle.read_exact(buf)
}

fn refuse_unless_regular(metadata: &std::fs::Metadata, kind: Kind) -> Result<(), Refusal> {
    let file_type = metadata.file_type();
    if file_type.is_dir() {
        return Err("it is a directory".to_owned());
    }
    if !file_type.is_file() {
        return Err(format!(
            "it is {}; only regular files are read",
            special_file(&file_type)
        ));
    }
    if metadata.len() > kind.max_bytes() {
        return Err(format!(
            "it is {} bytes; the limit for a {} is {} bytes",
            metadata.len(),
            kind.noun(),
            kind.max_bytes()
        ));
    }
    Ok(())
}

#[cfg(unix)]
fn special_file(file_type: &std::fs::FileType) -> &'static str {
    use std::os::unix::fs::FileTypeExt as _;
    if file_type.is_fifo() {
        "a named pipe (FIFO)"
    } else if file_type.is_char_device() || file_type.is_block_device() {
        "a device"
    } else if file_type.is_socket() {
        "a socket"
    } else {
        "not a regular file"
    }
}

#[cfg(not(unix))]
fn special_file(_: &std::fs::FileType) -> &'static str {
    "not a regular file"
}

impl Bounded<File> {
    /// The file's length now, when the system tells it (a hint for sizing what is read from it;
    /// the limits are enforced as it is read).
    pub fn source_len(&self) -> Option<u64> {
        self.inner.metadata().ok().map(|m| m.len())
    }
}

/// Standard input as an input of `kind`, bounded like a file of that kind.
pub fn stdin(kind: Kind) -> Bounded<std::io::Stdin> {
    Bounded::new(std::io::stdin(), kind)
}

/// Reads a whole input as UTF-8 text, refusing what [`open`] refuses and invalid UTF-8. A leading
/// byte-order mark is dropped. `path` `None` reads standard input, named [`STDIN_NAME`].
pub fn read_text(path: Option<&Path>, kind: Kind) -> Result<String, Diagnostic> {
    let shown = path.map_or_else(|| STDIN_NAME.to_owned(), |p| p.display().to_string());
    let mut bytes = Vec::new();
    let result = match path {
        Some(path) => {
            let mut file = open(path, kind).map_err(|reason| {
                Diagnostic::file(&shown, format!("cannot read the {}: {reason}", kind.noun()))
            })?;
            file.read_to_end(&mut bytes)
        }
        None => stdin(kind).read_to_end(&mut bytes),
    };
    result.map_err(|e| Diagnostic::file(&shown, format!("cannot read: {}", read_reason(&e))))?;
    let text = String::from_utf8(bytes).map_err(|e| {
        let offset = e.utf8_error().valid_up_to();
        let before = &e.as_bytes()[..offset];
        let line = before.iter().filter(|&&b| b == b'\n').count() as u64 + 1;
        let column = (offset
            - before
                .iter()
                .rposition(|&b| b == b'\n')
                .map_or(0, |p| p + 1)) as u64
            + 1;
        Diagnostic::at(
            &shown,
            Place::new(line, column),
            "(file)",
            "file is not valid UTF-8",
        )
        .with_help("save the file as UTF-8")
    })?;
    Ok(match text.strip_prefix('\u{feff}') {
        Some(rest) => rest.to_owned(),
        None => text,
    })
}

/// An I/O error while reading, in words: a limit error says which limit, others their reason.
pub fn read_reason(error: &std::io::Error) -> String {
    match error.get_ref().and_then(|e| e.downcast_ref::<LimitError>()) {
        Some(limit) => limit.message.clone(),
        None => crate::input::io_reason(error),
    }
}

/// The line a limit error points at (where the over-long record started, or where the input
/// passed its size limit), when `error` is one.
pub fn limit_line(error: &std::io::Error) -> Option<u64> {
    error
        .get_ref()
        .and_then(|e| e.downcast_ref::<LimitError>())
        .map(|l| l.line)
}

/// The line and the reason of a CSV reader's error: an I/O error (a limit passed) points at the
/// line its record started on, a CSV error at its record.
pub fn csv_failure(error: &csv::Error) -> (Option<u64>, String) {
    match error.kind() {
        csv::ErrorKind::Io(io) => (limit_line(io), read_reason(io)),
        _ => (error.position().map(csv::Position::line), error.to_string()),
    }
}

/// A limit of [`Bounded`] was passed.
#[derive(Debug)]
pub struct LimitError {
    /// 1-based line the offending record started on.
    pub line: u64,
    pub message: String,
}

impl std::fmt::Display for LimitError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(&self.message)
    }
}

impl std::error::Error for LimitError {}

/// Where a CSV scanner is within a record (RFC 4180 quoting, as the csv crate reads it).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum CsvState {
    FieldStart,
    Unquoted,
    Quoted,
    /// A quote seen inside a quoted field: either the closing quote or the first of `""`.
    QuoteInQuoted,
}

/// A reader that enforces its kind's size and record limits on the bytes that pass through it.
#[derive(Debug)]
pub struct Bounded<R> {
    inner: R,
    kind: Kind,
    read: u64,
    /// Bytes of the current record so far.
    record: usize,
    /// Line the current record started on (1-based).
    record_line: u64,
    /// Line the reader is on (1-based).
    line: u64,
    csv: CsvState,
    /// Longest record, in bytes: [`MAX_RECORD_BYTES`] (a field so that tests can make it small).
    max_record: usize,
}

impl<R> Bounded<R> {
    fn new(inner: R, kind: Kind) -> Self {
        Bounded {
            inner,
            kind,
            read: 0,
            record: 0,
            record_line: 1,
            line: 1,
            csv: CsvState::FieldStart,
            max_record: MAX_RECORD_BYTES,
        }
    }

    /// The kind this reader was opened as.
    pub fn kind(&self) -> Kind {
        self.kind
    }

    fn limit(&self, line: u64, message: String) -> std::io::Error {
        std::io::Error::new(
            std::io::ErrorKind::InvalidData,
            LimitError { line, message },
        )
    }

    /// Advances the framing over `bytes`; an error once a record passes the limit.
    ///
    /// It jumps (memchr) from one byte that matters to the next: in a line format the line break;
    /// in CSV outside quotes a quote or a line break (a comma only changes the state, which the
    /// byte before the next stop tells), inside quotes the next quote. Those bytes go through
    /// [`Bounded::step`] one at a time; the runs between them only add to the record's length
    /// (and, inside quotes, to the line count). A run that would pass the limit is stepped byte by
    /// byte, so the limit is reported at the byte that passes it, as a byte-by-byte scan would.
    fn scan(&mut self, bytes: &[u8]) -> std::io::Result<()> {
        let framing = self.kind.framing();
        if self.scan_short_records(framing, bytes) {
            return Ok(());
        }
        let mut rest = bytes;
        while !rest.is_empty() {
            let stop = match (framing, self.csv) {
                (Framing::Whole | Framing::Binary, _) => return Ok(()),
                (Framing::Lines, _) => memchr::memchr(b'\n', rest),
                (Framing::Csv, CsvState::Quoted) => memchr::memchr(b'"', rest),
                (Framing::Csv, CsvState::FieldStart | CsvState::Unquoted) => {
                    memchr::memchr3(b'"', b'\n', b'\r', rest)
                }
                (Framing::Csv, CsvState::QuoteInQuoted) => Some(0),
            };
            let (run, after) = rest.split_at(stop.unwrap_or(rest.len()));
            self.skip(framing, run)?;
            let Some((&b, after)) = after.split_first() else {
                break;
            };
            self.step(framing, b)?;
            rest = after;
        }
        Ok(())
    }

    /// [`Bounded::scan`] in one step for a chunk in which no record can pass the limit: lines, or
    /// CSV outside quotes with no quote in the chunk, whose current record ends within the limit
    /// and whose later records are all shorter than it. Only the first and last record ends are
    /// looked for and the line feeds counted (a search call per record costs more than the
    /// record when records are short). False, with nothing changed, for any other chunk.
    fn scan_short_records(&mut self, framing: Framing, bytes: &[u8]) -> bool {
        let (first, last) = match (framing, self.csv) {
            (Framing::Lines, _) => (memchr::memchr(b'\n', bytes), memchr::memrchr(b'\n', bytes)),
            (Framing::Csv, CsvState::FieldStart | CsvState::Unquoted)
                if memchr::memchr(b'"', bytes).is_none() =>
            {
                (
                    memchr::memchr2(b'\n', b'\r', bytes),
                    memchr::memrchr2(b'\n', b'\r', bytes),
                )
            }
            _ => return false,
        };
        let (Some(first), Some(last)) = (first, last) else {
            return false;
        };
        // The current record's bytes before `first`, each later one's at most `last - first - 1`,
        // the last one's after `last`.
        let tail = bytes.len() - last - 1;
        if self.record + first > self.max_record
            || last - first > self.max_record + 1
            || tail > self.max_record
        {
            return false;
        }
        // memchr counts without stopping at each match.
        self.line += memchr::memchr_iter(b'\n', bytes).count() as u64;
        self.record = tail;
        // No line feed follows the last record end.
        self.record_line = self.line;
        if framing == Framing::Csv {
            self.csv = match bytes.last() {
                Some(b',') | None => CsvState::FieldStart,
                Some(_) if tail == 0 => CsvState::FieldStart,
                Some(_) => CsvState::Unquoted,
            };
        }
        true
    }

    /// Advances over a run of bytes that holds none of the bytes [`Bounded::scan`] stops at.
    fn skip(&mut self, framing: Framing, run: &[u8]) -> std::io::Result<()> {
        let Some(&last) = run.last() else {
            return Ok(());
        };
        if self.record + run.len() > self.max_record {
            return run.iter().try_for_each(|&b| self.step(framing, b));
        }
        self.record += run.len();
        match (framing, self.csv) {
            (Framing::Csv, CsvState::Quoted) => {
                self.line += memchr::memchr_iter(b'\n', run).count() as u64;
            }
            (Framing::Csv, _) => {
                self.csv = if last == b',' {
                    CsvState::FieldStart
                } else {
                    CsvState::Unquoted
                };
            }
            _ => {}
        }
        Ok(())
    }

    /// Advances the framing over one byte; an error once the record passes the limit.
    fn step(&mut self, framing: Framing, b: u8) -> std::io::Result<()> {
        let ends_record = match framing {
            Framing::Lines => b == b'\n',
            Framing::Csv => {
                let (next, ends) = match (self.csv, b) {
                    (CsvState::Quoted, b'"') => (CsvState::QuoteInQuoted, false),
                    (CsvState::Quoted, _) => (CsvState::Quoted, false),
                    (CsvState::FieldStart, b'"') | (CsvState::QuoteInQuoted, b'"') => {
                        (CsvState::Quoted, false)
                    }
                    (_, b',') => (CsvState::FieldStart, false),
                    (_, b'\n' | b'\r') => (CsvState::FieldStart, true),
                    _ => (CsvState::Unquoted, false),
                };
                self.csv = next;
                ends
            }
            Framing::Whole | Framing::Binary => false,
        };
        if b == b'\n' {
            self.line += 1;
        }
        if ends_record {
            self.record = 0;
            self.record_line = self.line;
            return Ok(());
        }
        self.record += 1;
        if self.record <= self.max_record {
            return Ok(());
        }
        let max = self.max_record;
        let message = if self.line > self.record_line {
            format!(
                "the record starting on line {} is longer than {max} bytes (a quoted field runs \
                 on over line breaks)",
                self.record_line
            )
        } else {
            format!("line {} is longer than {max} bytes", self.record_line)
        };
        Err(self.limit(self.record_line, message))
    }
}

impl<R: Read> Read for Bounded<R> {
    fn read(&mut self, buf: &mut [u8]) -> std::io::Result<usize> {
        let max = self.kind.max_bytes();
        // One byte past the limit tells "exactly at the limit" from "over it".
        let room = (max + 1).saturating_sub(self.read);
        let want = buf.len().min(usize::try_from(room).unwrap_or(usize::MAX));
        let n = self.inner.read(&mut buf[..want])?;
        self.read += n as u64;
        if self.read > max {
            return Err(self.limit(
                self.line,
                format!(
                    "it passed the limit for a {} of {max} bytes while it was read",
                    self.kind.noun()
                ),
            ));
        }
        self.scan(&buf[..n])?;
        Ok(n)
    }
}

/// CSV text for the readers' tests: a header line, then each row followed by its line ending,
/// the endings after the last row dropped unless `last_break`.
#[cfg(test)]
pub(crate) fn csv_text<'a>(
    header: &str,
    rows: impl IntoIterator<Item = (String, &'a str)>,
    last_break: bool,
) -> Vec<u8> {
    let mut text = format!("{header}\n");
    for (row, ending) in rows {
        text.push_str(&row);
        text.push_str(ending);
    }
    if !last_break {
        text.truncate(text.trim_end_matches(['\r', '\n']).len());
    }
    text.into_bytes()
}

#[cfg(test)]
mod tests {
    use super::*;

    fn read_all(kind: Kind, bytes: &[u8]) -> std::io::Result<Vec<u8>> {
        let mut out = Vec::new();
        Bounded::new(bytes, kind).read_to_end(&mut out)?;
        Ok(out)
    }

    /// The scanner as it was before it jumped with memchr (byte by byte), kept as the oracle;
    /// the only change is that it reads the limit from `max_record`.
    fn byte_by_byte<R>(me: &mut Bounded<R>, bytes: &[u8]) -> std::io::Result<()> {
        let max = me.max_record;
        let framing = me.kind.framing();
        if matches!(framing, Framing::Whole | Framing::Binary) {
            return Ok(());
        }
        for &b in bytes {
            let ends_record = match framing {
                Framing::Lines => b == b'\n',
                Framing::Csv => {
                    let (next, ends) = match (me.csv, b) {
                        (CsvState::Quoted, b'"') => (CsvState::QuoteInQuoted, false),
                        (CsvState::Quoted, _) => (CsvState::Quoted, false),
                        (CsvState::FieldStart, b'"') | (CsvState::QuoteInQuoted, b'"') => {
                            (CsvState::Quoted, false)
                        }
                        (_, b',') => (CsvState::FieldStart, false),
                        (_, b'\n' | b'\r') => (CsvState::FieldStart, true),
                        _ => (CsvState::Unquoted, false),
                    };
                    me.csv = next;
                    ends
                }
                Framing::Whole | Framing::Binary => false,
            };
            if b == b'\n' {
                me.line += 1;
            }
            if ends_record {
                me.record = 0;
                me.record_line = me.line;
            } else {
                me.record += 1;
                if me.record > max {
                    let message = if me.line > me.record_line {
                        format!(
                            "the record starting on line {} is longer than {max} \
                             bytes (a quoted field runs on over line breaks)",
                            me.record_line
                        )
                    } else {
                        format!("line {} is longer than {max} bytes", me.record_line)
                    };
                    return Err(me.limit(me.record_line, message));
                }
            }
        }
        Ok(())
    }

    /// What a reader's framing state is after a chunk, and how the chunk ended.
    fn outcome<R>(me: &Bounded<R>, result: std::io::Result<()>) -> String {
        let state = (me.record, me.record_line, me.line, me.csv);
        match result {
            Ok(()) => format!("ok {state:?}"),
            Err(e) => format!(
                "error at {:?}: {} {state:?}",
                limit_line(&e),
                read_reason(&e)
            ),
        }
    }

    proptest::proptest! {
        #[test]
        fn memchr_scan_agrees_with_the_byte_by_byte_scan(
            bytes in proptest::collection::vec(
                proptest::sample::select(b"ab,\"\n\r".to_vec()),
                0..400,
            ),
            cuts in proptest::collection::vec(0usize..400, 0..6),
            max_record in 1usize..24,
            csv in proptest::bool::ANY,
            quotes in proptest::bool::ANY,
        ) {
            // Without quotes, a CSV chunk of short records is scanned in one step.
            let bytes: Vec<u8> = if quotes {
                bytes
            } else {
                bytes.into_iter().filter(|&b| b != b'"').collect()
            };
            let kind = if csv { Kind::TrialsCsv } else { Kind::Ids };
            let mut fast = Bounded { max_record, ..Bounded::new((), kind) };
            let mut slow = Bounded { max_record, ..Bounded::new((), kind) };
            // The same bytes in the chunks a reader might hand over.
            let mut cuts: Vec<usize> = cuts.into_iter().map(|c| c.min(bytes.len())).collect();
            cuts.push(0);
            cuts.push(bytes.len());
            cuts.sort_unstable();
            for chunk in cuts.windows(2).map(|w| &bytes[w[0]..w[1]]) {
                let expected = byte_by_byte(&mut slow, chunk);
                let failed = expected.is_err();
                let expected = outcome(&slow, expected);
                let found = fast.scan(chunk);
                proptest::prop_assert_eq!(outcome(&fast, found), expected);
                if failed {
                    break;
                }
            }
        }
    }

    #[test]
    fn a_quoted_field_over_many_lines_is_one_record() {
        // 2,000 lines of 1,000 bytes inside one quoted field: 2 MB in one CSV record.
        let mut csv = b"id,label\n\"".to_vec();
        for _ in 0..2000 {
            csv.extend_from_slice(&[b'x'; 999]);
            csv.push(b'\n');
        }
        csv.extend_from_slice(b"\",1\n");
        let error = read_all(Kind::Predictions, &csv).unwrap_err();
        assert_eq!(limit_line(&error), Some(2));
        assert!(
            read_reason(&error).contains("starting on line 2"),
            "{error}"
        );
        // The same lines unquoted are 2,000 short records.
        let plain: Vec<u8> = csv.iter().copied().filter(|&b| b != b'"').collect();
        assert!(read_all(Kind::Predictions, &plain).is_ok());
        // In a line format a quote means nothing.
        assert!(read_all(Kind::Ids, &csv).is_ok());
    }

    #[test]
    fn doubled_quotes_stay_inside_the_field() {
        // `"a""b"` is one field holding a"b; the record ends at the line break after it.
        let mut csv = b"id\n\"a\"\"b\"\n".to_vec();
        csv.extend(std::iter::repeat_n(b"x\n".as_slice(), 600_000).flatten());
        assert!(read_all(Kind::TrialsCsv, &csv).is_ok());
    }

    #[test]
    fn a_long_line_is_refused_with_its_line_number() {
        let mut text = b"a\nb\n".to_vec();
        text.extend(std::iter::repeat_n(b'y', MAX_RECORD_BYTES + 1));
        let error = read_all(Kind::Ids, &text).unwrap_err();
        assert_eq!(limit_line(&error), Some(3));
        assert_eq!(
            read_reason(&error),
            format!("line 3 is longer than {MAX_RECORD_BYTES} bytes")
        );
        // Exactly at the limit is accepted.
        let ok = vec![b'y'; MAX_RECORD_BYTES];
        assert!(read_all(Kind::Ids, &ok).is_ok());
    }

    #[test]
    fn whole_documents_have_no_record_limit() {
        let long = vec![b' '; MAX_RECORD_BYTES * 2];
        assert!(read_all(Kind::Manifest, &long).is_ok());
    }

    #[test]
    fn a_source_past_its_size_limit_stops_there() {
        // A reader that never ends, like /dev/zero behind a pipe.
        let endless = std::io::repeat(b'\n');
        let mut reader = Bounded::new(endless, Kind::Template);
        let mut sink = Vec::new();
        let error = reader.read_to_end(&mut sink).unwrap_err();
        assert!(read_reason(&error).contains("limit for a template of 1048576 bytes"));
        assert!(sink.len() as u64 <= Kind::Template.max_bytes());
    }
}
