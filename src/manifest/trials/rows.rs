//! A CSV trials file, read in blocks of whole lines.
//!
//! Most trials files are plain: no quotes, and every carriage return the first half of a CRLF
//! line break. A plain block is split into fields at its commas and line breaks without the
//! general CSV tokenizer, two blocks at a time on two threads; their trials are then pushed in
//! file order, so the result is the one a single thread reading record by record would give. From
//! the first block that is not plain to the end of the file, and for scikit-learn's results, the
//! csv crate reads the records (quoted fields may span lines, so blocks can no longer be cut at
//! line breaks). Both ways check every record alike ([`Parsed::record`]).

use std::io::Read;

use super::TrialReader;
use super::number::parse_score;
use crate::diag::Place;

/// Bytes read for one block before it is cut after its last line break. At least four times the
/// longest record ([`crate::opener::MAX_RECORD_BYTES`]), so a block always holds whole records.
const BLOCK_BYTES: usize = 4 << 20;

/// Bytes asked of the source in one read.
const READ_BYTES: usize = 64 << 10;

/// Records the csv crate reads between two hand-overs to the reader.
const RECORDS_PER_BATCH: usize = 4096;

/// Where the columns of vetscore's layout are.
struct Columns {
    id: usize,
    folds: Vec<usize>,
    /// Fields of the header, which every record must have.
    width: usize,
}

/// The trials and problems of a run of records, in file order: trial `i` has the id
/// `ids[id_ends[i - 1]..id_ends[i]]`, the scores `scores[i * folds..(i + 1) * folds]` and the line
/// `lines[i]`, counted from the run's first line (0).
#[derive(Default)]
struct Parsed {
    ids: String,
    id_ends: Vec<usize>,
    scores: Vec<f64>,
    lines: Vec<u64>,
    /// Each problem with the number of trials before it.
    problems: Vec<(usize, Problem)>,
    /// Line breaks in the run.
    newlines: u64,
}

/// A problem with one record, found while parsing (see [`TrialReader::take`] for the messages).
enum Problem {
    /// The record has a number of fields other than the header's.
    Ragged { line: u64, fields: usize },
    /// The id is not UTF-8.
    Id { line: u64 },
    /// A fold cell is not a number.
    Cell {
        line: u64,
        fold: usize,
        text: String,
    },
}

impl Parsed {
    /// Checks one record of `fields` fields on `line`, `cell(k)` its field `k`, and keeps its
    /// trial or its problem.
    fn record<'a>(
        &mut self,
        columns: &Columns,
        line: u64,
        fields: usize,
        cell: impl Fn(usize) -> &'a [u8],
    ) {
        let trials = self.lines.len();
        if fields != columns.width {
            self.problems
                .push((trials, Problem::Ragged { line, fields }));
            return;
        }
        let Ok(id) = std::str::from_utf8(cell(columns.id)) else {
            self.problems.push((trials, Problem::Id { line }));
            return;
        };
        let start = self.scores.len();
        for (fold, &c) in columns.folds.iter().enumerate() {
            let text = cell(c);
            match parse_score(text) {
                Some(score) => self.scores.push(score),
                None => {
                    self.scores.truncate(start);
                    let text = String::from_utf8_lossy(text).trim().to_owned();
                    self.problems
                        .push((trials, Problem::Cell { line, fold, text }));
                    return;
                }
            }
        }
        self.ids.push_str(id);
        self.id_ends.push(self.ids.len());
        self.lines.push(line);
    }

    /// Parses a plain block (see [`plain`]) whose first line is line 0.
    fn plain(block: &[u8], columns: &Columns) -> Parsed {
        let mut parsed = Parsed::default();
        // Where each field of the current line starts.
        let mut starts: Vec<usize> = Vec::with_capacity(columns.width + 1);
        let mut line = 0;
        starts.push(0);
        for at in memchr::memchr2_iter(b',', b'\n', block) {
            if block[at] == b',' {
                starts.push(at + 1);
                continue;
            }
            parsed.line(block, columns, &mut starts, line, at);
            line += 1;
            starts.clear();
            starts.push(at + 1);
        }
        // The last line of the file may have no line break.
        if starts[0] < block.len() {
            parsed.line(block, columns, &mut starts, line, block.len());
        }
        parsed.newlines = line;
        parsed
    }

    /// The line of a plain block that ends at `end` (its line break, or the end of the block),
    /// its fields starting at `starts`.
    fn line(
        &mut self,
        block: &[u8],
        columns: &Columns,
        starts: &mut Vec<usize>,
        line: u64,
        end: usize,
    ) {
        let end = if end > starts[0] && block[end - 1] == b'\r' {
            end - 1
        } else {
            end
        };
        // An empty line is no record, as the csv crate reads it.
        if end == starts[0] {
            return;
        }
        // One past the end, as if a delimiter followed, so field k is starts[k]..starts[k+1]-1.
        starts.push(end + 1);
        let fields = starts.len() - 1;
        self.record(columns, line, fields, |k| {
            &block[starts[k]..starts[k + 1] - 1]
        });
    }
}

/// Whether a block is plain: no quote, and no carriage return but before a line feed.
fn plain(block: &[u8]) -> bool {
    memchr::memchr(b'"', block).is_none()
        && memchr::memchr_iter(b'\r', block).all(|at| block.get(at + 1) == Some(&b'\n'))
}

/// What [`Blocks::fill`] put in the buffer.
#[derive(Debug, PartialEq, Eq)]
enum Fill {
    /// Whole lines of a plain block (the rest of the last line is kept for the next block).
    Plain,
    /// Everything read, not plain: the csv crate reads it and the rest of the source.
    Other,
    /// Nothing left.
    End,
}

/// The source, cut into blocks of whole lines.
struct Blocks<R> {
    source: R,
    /// The start of a line read with the block before.
    carry: Vec<u8>,
    /// The source's read error, once it has failed: reported after the records before it.
    failed: Option<std::io::Error>,
    ended: bool,
}

impl<R: Read> Blocks<R> {
    fn new(source: R) -> Self {
        Blocks {
            source,
            carry: Vec::new(),
            failed: None,
            ended: false,
        }
    }

    /// Fills `block` with the next [`BLOCK_BYTES`] or so: cut after its last line break when it
    /// is plain and the source goes on.
    fn fill(&mut self, block: &mut Vec<u8>) -> Fill {
        block.clear();
        block.append(&mut self.carry);
        let mut want = BLOCK_BYTES;
        loop {
            self.read_to(block, want);
            // A line longer than a block (only from a source without the opener's record limit)
            // makes the block longer.
            if self.ended || memchr::memrchr(b'\n', block).is_some() {
                break;
            }
            want = want.saturating_mul(2);
        }
        if block.is_empty() {
            return Fill::End;
        }
        // Whole lines: all of the block at the end of the source, else up to its last line break
        // (after a read error, the lines before the one it cut).
        let whole = if self.ended && self.failed.is_none() {
            block.len()
        } else {
            memchr::memrchr(b'\n', block).map_or(0, |at| at + 1)
        };
        if !plain(&block[..whole]) {
            return Fill::Other;
        }
        self.carry.extend_from_slice(&block[whole..]);
        block.truncate(whole);
        if self.ended {
            self.carry.clear();
        }
        if block.is_empty() && self.ended {
            Fill::End
        } else {
            Fill::Plain
        }
    }

    /// Reads into `block` until it holds `want` bytes or the source ends or fails, at most
    /// [`READ_BYTES`] at a time: a read that fails (a record over the opener's limit) loses what
    /// it read, so the lines before the failure are not lost with it.
    fn read_to(&mut self, block: &mut Vec<u8>, want: usize) {
        while block.len() < want && !self.ended {
            let start = block.len();
            block.resize(want.min(start + READ_BYTES), 0);
            match self.source.read(&mut block[start..]) {
                Ok(0) => {
                    block.truncate(start);
                    self.ended = true;
                }
                Ok(n) => block.truncate(start + n),
                Err(e) if e.kind() == std::io::ErrorKind::Interrupted => block.truncate(start),
                Err(e) => {
                    block.truncate(start);
                    self.failed = Some(e);
                    self.ended = true;
                }
            }
        }
    }

    /// `block`, then what the source holds after it, then the source's error if it failed.
    fn rest(self, block: Vec<u8>) -> Rest<R> {
        Rest {
            read: std::io::Cursor::new(block),
            source: (!self.ended).then_some(self.source),
            failed: self.failed,
        }
    }
}

/// See [`Blocks::rest`].
struct Rest<R> {
    read: std::io::Cursor<Vec<u8>>,
    source: Option<R>,
    failed: Option<std::io::Error>,
}

impl<R: Read> Read for Rest<R> {
    fn read(&mut self, buf: &mut [u8]) -> std::io::Result<usize> {
        let n = self.read.read(buf)?;
        if n > 0 || buf.is_empty() {
            return Ok(n);
        }
        if let Some(source) = &mut self.source {
            return source.read(buf);
        }
        match self.failed.take() {
            Some(e) => Err(e),
            None => Ok(0),
        }
    }
}

/// Where the header of a plain first block ends (after its line break), past any empty lines
/// before it; `None` when the block holds no whole header line.
fn header_end(block: &[u8]) -> Option<usize> {
    let mut start = 0;
    loop {
        let at = start + memchr::memchr(b'\n', &block[start..])?;
        if block[start..at].iter().any(|&b| b != b'\r') {
            return Some(at + 1);
        }
        start = at + 1;
    }
}

/// What the header says the file is.
enum Layout {
    Trials(Columns),
    CvResults,
}

/// A reader of the whole file, header first.
fn csv_reader<R: Read>(source: R) -> csv::Reader<R> {
    // Records of another length than the header's are reported by the reader, not the crate.
    csv::ReaderBuilder::new()
        .has_headers(true)
        .flexible(true)
        .from_reader(source)
}

impl TrialReader<'_> {
    /// Reads a CSV trials file with an `id` column and `fold_1` … `fold_K` columns, or
    /// scikit-learn's results as pandas writes them.
    pub fn read_csv(&mut self, source: impl Read) {
        let mut blocks = Blocks::new(source);
        let mut block = Vec::new();
        let first = blocks.fill(&mut block);
        let header = (first == Fill::Plain)
            .then(|| header_end(&block))
            .flatten()
            .and_then(|end| Some((end, csv_reader(&block[..end]).headers().ok()?.clone())));
        let Some((end, header)) = header else {
            // Whatever is unusual about the start of the file, the csv crate reads it all.
            let mut csv = csv_reader(blocks.rest(block));
            let Some(header) = self.header(&mut csv) else {
                return;
            };
            match self.layout(&header) {
                Some(Layout::CvResults) => self.read_cv_results_csv(&header, csv),
                Some(Layout::Trials(columns)) => self.read_records(csv, &columns, 1),
                None => {}
            }
            return;
        };
        match self.layout(&header) {
            Some(Layout::Trials(columns)) => {
                let line = 1 + memchr::memchr_iter(b'\n', &block[..end]).count() as u64;
                block.drain(..end);
                self.read_blocks(blocks, block, &columns, line);
            }
            Some(Layout::CvResults) => {
                let mut csv = csv_reader(blocks.rest(block));
                if let Some(header) = self.header(&mut csv) {
                    self.read_cv_results_csv(&header, csv);
                }
            }
            None => {}
        }
    }

    /// The header, or `None` with the problem reported.
    fn header<R: Read>(&mut self, csv: &mut csv::Reader<R>) -> Option<csv::StringRecord> {
        match csv.headers() {
            Ok(header) => Some(header.clone()),
            Err(e) => {
                let (line, reason) = crate::opener::csv_failure(&e);
                self.problem(
                    Place::new(line.unwrap_or(1), 1),
                    "(header)".into(),
                    format!("cannot read the CSV header: {reason}"),
                );
                None
            }
        }
    }

    /// The layout the header names, or `None` with the missing columns reported.
    fn layout(&mut self, header: &csv::StringRecord) -> Option<Layout> {
        let column = |name: &str| header.iter().position(|h| h.trim() == name);
        let id = column("id");
        if id.is_none() && super::super::sklearn::is_cv_results(header.iter()) {
            return Some(Layout::CvResults);
        }
        let folds: Vec<Option<usize>> = (1..=self.folds)
            .map(|k| column(&format!("fold_{k}")))
            .collect();
        let missing: Vec<String> = std::iter::once(("id".to_owned(), id))
            .chain(
                folds
                    .iter()
                    .enumerate()
                    .map(|(k, c)| (format!("fold_{}", k + 1), *c)),
            )
            .filter(|(_, c)| c.is_none())
            .map(|(name, _)| name)
            .collect();
        if let (Some(id), true) = (id, missing.is_empty()) {
            return Some(Layout::Trials(Columns {
                id,
                folds: folds.into_iter().flatten().collect(),
                width: header.len(),
            }));
        }
        if !self.full() {
            self.note(
                crate::diag::Diagnostic::at(
                    self.file,
                    Place::new(1, 1),
                    "(header)",
                    format!(
                        "missing column{} {}",
                        if missing.len() == 1 { "" } else { "s" },
                        missing.join(", ")
                    ),
                )
                .with_help(
                    "a trials CSV has vetscore's columns (id, fold_1 … fold_K) or is scikit-learn's cv_results_ as pandas writes it (split0_test_score …)",
                ),
            );
        }
        None
    }

    /// Reads the records after the header, `block` the first of them (whole lines of a plain
    /// block) on `line`: plain blocks two at a time, then the csv crate from the first block
    /// that is not plain.
    fn read_blocks<R: Read>(
        &mut self,
        mut blocks: Blocks<R>,
        mut block: Vec<u8>,
        columns: &Columns,
        mut line: u64,
    ) {
        let mut next = Vec::new();
        loop {
            let fill = blocks.fill(&mut next);
            let (this, after) = if fill == Fill::Plain {
                std::thread::scope(|scope| {
                    let after = scope.spawn(|| Parsed::plain(&next, columns));
                    let this = Parsed::plain(&block, columns);
                    match after.join() {
                        Ok(after) => (this, Some(after)),
                        Err(panic) => std::panic::resume_unwind(panic),
                    }
                })
            } else {
                (Parsed::plain(&block, columns), None)
            };
            if let Some(id_bytes) = this.id_ends.first() {
                self.expect_records_like(block.len() / this.lines.len(), *id_bytes);
            }
            for parsed in std::iter::once(this).chain(after) {
                if !self.take(&parsed, columns, line) {
                    return;
                }
                line += parsed.newlines;
            }
            let other = match fill {
                Fill::Plain => match blocks.fill(&mut block) {
                    Fill::Plain => continue,
                    Fill::Other => block,
                    Fill::End => break,
                },
                Fill::Other => next,
                Fill::End => break,
            };
            // The block starts a record: read without a header, lines counted from `line`.
            let csv = csv::ReaderBuilder::new()
                .has_headers(false)
                .flexible(true)
                .from_reader(blocks.rest(other));
            self.read_records(csv, columns, line);
            return;
        }
        if let Some(e) = blocks.failed.take() {
            self.read_failed(&e, line);
        }
    }

    /// Reads records with the csv crate, its line 1 being the file's line `first_line`.
    fn read_records<R: Read>(
        &mut self,
        mut csv: csv::Reader<R>,
        columns: &Columns,
        first_line: u64,
    ) {
        let mut record = csv::ByteRecord::new();
        let mut parsed = Parsed::default();
        loop {
            match csv.read_byte_record(&mut record) {
                Ok(true) => {
                    let line = record.position().map_or(1, csv::Position::line) - 1;
                    if parsed.lines.is_empty() && parsed.problems.is_empty() {
                        let bytes = record.as_slice().len() + record.len();
                        self.expect_records_like(
                            bytes,
                            record.get(columns.id).map_or(0, <[u8]>::len),
                        );
                    }
                    parsed.record(columns, line, record.len(), |k| {
                        record.get(k).unwrap_or(b"")
                    });
                    if parsed.lines.len() + parsed.problems.len() >= RECORDS_PER_BATCH {
                        if !self.take(&parsed, columns, first_line) {
                            return;
                        }
                        parsed = Parsed::default();
                    }
                }
                Ok(false) => {
                    self.take(&parsed, columns, first_line);
                    return;
                }
                Err(e) => {
                    if self.take(&parsed, columns, first_line) {
                        let (line, reason) = crate::opener::csv_failure(&e);
                        // A limit error names the file's line; the crate's own, its reader's.
                        let line = match e.kind() {
                            csv::ErrorKind::Io(_) => line,
                            _ => line.map(|l| l + first_line - 1),
                        };
                        self.problem(
                            Place { line, column: None },
                            "(row)".into(),
                            format!("cannot read the row: {reason}"),
                        );
                    }
                    return;
                }
            }
        }
    }

    /// Reports that the source failed after the records before `line`.
    fn read_failed(&mut self, error: &std::io::Error, line: u64) {
        let line = crate::opener::limit_line(error).unwrap_or(line);
        self.problem(
            Place {
                line: Some(line),
                column: None,
            },
            "(row)".into(),
            format!("cannot read the row: {}", crate::opener::read_reason(error)),
        );
    }

    /// Reports a record whose number of fields is not the header's.
    pub(super) fn ragged(&mut self, line: u64, fields: usize, width: usize) {
        self.problem(
            Place {
                line: Some(line),
                column: None,
            },
            "(row)".into(),
            format!("the row has {fields} fields, but the header has {width}"),
        );
    }

    /// Pushes the trials of `parsed` and reports its problems, in file order, its line 0 being
    /// the file's `first_line`. False once the problems are too many to go on.
    fn take(&mut self, parsed: &Parsed, columns: &Columns, first_line: u64) -> bool {
        let folds = columns.folds.len();
        let mut problems = parsed.problems.iter().peekable();
        for trial in 0..=parsed.lines.len() {
            while let Some((_, problem)) = problems.next_if(|(before, _)| *before == trial) {
                match problem {
                    Problem::Ragged { line, fields } => {
                        self.ragged(first_line + line, *fields, columns.width)
                    }
                    Problem::Id { line } => self.problem(
                        Place::new(first_line + line, columns.id as u64 + 1),
                        "id".into(),
                        "the trial id is not valid UTF-8".into(),
                    ),
                    Problem::Cell { line, fold, text } => self.problem(
                        Place::new(first_line + line, columns.folds[*fold] as u64 + 1),
                        format!("fold_{}", fold + 1),
                        format!("expected a number, found {text:?}"),
                    ),
                }
            }
            if self.full() {
                return false;
            }
            let Some(&line) = parsed.lines.get(trial) else {
                break;
            };
            let start = trial
                .checked_sub(1)
                .map_or(0, |before| parsed.id_ends[before]);
            let id = &parsed.ids[start..parsed.id_ends[trial]];
            let scores = &parsed.scores[trial * folds..(trial + 1) * folds];
            let place = Place {
                line: Some(first_line + line),
                column: None,
            };
            self.push(place, "", id, scores);
        }
        true
    }
}
