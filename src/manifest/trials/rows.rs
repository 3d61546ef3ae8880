//! A CSV trials file, read in blocks of whole lines.
//!
//! Lines end with a line feed; a carriage return before it (CRLF) is dropped, and anywhere else
//! it is part of the field (the csv crate's line numbers lag a line at every CRLF, so it is told
//! that records end at a line feed only, and [`EmptyLines`] mends its lag after empty lines).
//!
//! Most trials files are plain: no quotes. A plain block is split into fields at its commas and
//! line breaks without the general CSV tokenizer, a second thread parsing the next block while
//! the main thread pushes the trials of the blocks before in file order
//! ([`TrialReader::read_blocks`]), so the result is the one a single thread reading record by
//! record would give. From the first block that is not plain to the end of the file, and for
//! scikit-learn's results, the csv crate reads the records (quoted fields may span lines, so
//! blocks can no longer be cut at line breaks). Both ways check every record alike
//! ([`Parsed::record`]).

use std::io::Read;

use super::TrialReader;
use super::number::{delimiter_in, parse_score, short_decimal};
use super::sums::{Checks, Sums};
use crate::diag::Place;

/// Bytes read for the main thread's block before it is cut after its last line break (the second
/// thread's are [`THEIRS`] times as large; see [`TrialReader::read_blocks`]).
const BLOCK_BYTES: usize = 1 << 20;

/// How many times larger the second thread's blocks are than the main thread's, which also
/// pushes the trials and reads the source (measured at 10^6 trials of 10 folds: 2 beat 1, 3, 4
/// and 6).
const THEIRS: usize = 2;

/// Bytes asked of the source in one read.
const READ_BYTES: usize = 64 << 10;

/// Records the csv crate reads between two hand-overs to the reader.
const RECORDS_PER_BATCH: usize = 4096;

/// Where the columns of vetscore's layout are.
struct Columns {
    id: usize,
    folds: Vec<usize>,
    /// What each field of the header holds (every record must have as many), for
    /// [`Parsed::whole_line`].
    roles: Vec<Role>,
}

/// What a column of vetscore's layout holds.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Role {
    Id,
    /// The score of fold `k + 1`.
    Fold(usize),
    /// A column the reader does not use (a hyperparameter).
    Other,
}

impl Columns {
    fn new(id: usize, folds: Vec<usize>, width: usize) -> Columns {
        let mut roles = vec![Role::Other; width];
        // A fold column named twice is read from its first place, as `folds` says; the id
        // column is never a fold's (their names differ).
        for (k, &c) in folds.iter().enumerate().rev() {
            roles[c] = Role::Fold(k);
        }
        roles[id] = Role::Id;
        Columns { id, folds, roles }
    }

    /// Fields of the header, which every record must have.
    fn width(&self) -> usize {
        self.roles.len()
    }
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
    /// Bytes of the run (of a plain block; 0 from the csv crate).
    bytes: usize,
    /// What the trials add up to, for [`TrialReader::take_sums`] (of a plain block without
    /// problems; from the csv crate, never clean).
    sums: Sums,
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
        if fields != columns.width() {
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

    /// Empties the run, keeping the room its lists have.
    fn clear(&mut self) {
        self.ids.clear();
        self.id_ends.clear();
        self.scores.clear();
        self.lines.clear();
        self.problems.clear();
        self.newlines = 0;
        self.bytes = 0;
    }

    /// Parses a plain block (see [`plain`]) whose first line is line 0.
    ///
    /// Each line is first read in one pass that splits its fields and parses its scores as it
    /// goes ([`Parsed::whole_line`]), which holds for a well-formed trial. Any other line (empty,
    /// ragged, an id that is not UTF-8, a cell that is not a number) is read again by the
    /// general path ([`Parsed::line`]), so its problem is the one the csv crate's path reports.
    ///
    /// `parsed` is an earlier run's, emptied here: its lists keep their room, so a block's
    /// trials need no fresh memory.
    fn plain(block: &[u8], columns: &Columns, checks: &Checks, mut parsed: Parsed) -> Parsed {
        parsed.clear();
        // Where each field of a line starts, for the general path.
        let mut starts: Vec<usize> = Vec::with_capacity(columns.width() + 1);
        let mut line = 0;
        let mut at = 0;
        while at < block.len() {
            let end = match parsed.whole_line(block, at, columns, line) {
                Some(end) => end,
                None => {
                    let end = memchr::memchr(b'\n', &block[at..]).map_or(block.len(), |e| at + e);
                    starts.clear();
                    starts.push(at);
                    starts.extend(memchr::memchr_iter(b',', &block[at..end]).map(|c| at + c + 1));
                    parsed.line(block, columns, &mut starts, line, end);
                    end
                }
            };
            // `end` is the line's line break, or the end of the block (the file's last line).
            if end < block.len() {
                line += 1;
            }
            at = end + 1;
        }
        parsed.newlines = line;
        parsed.bytes = block.len();
        let room = std::mem::take(&mut parsed.sums);
        if parsed.problems.is_empty() {
            let ids = parsed.id_ends.iter().scan(0, |start, &end| {
                let id = &parsed.ids[*start..end];
                *start = end;
                Some(id)
            });
            parsed.sums = Sums::of(checks, ids, &parsed.scores, room);
        }
        parsed
    }

    /// Reads the line of `block` that starts at `at` as a well-formed trial: `columns.width()`
    /// fields split at commas, the last ending at a line feed (a carriage return before it
    /// dropped) or at the end of the block, a UTF-8 id and a number in every fold cell. Keeps
    /// the trial and returns where the line ends (its line feed, or the block's length); `None`,
    /// with nothing kept, for any other line. What it keeps is what [`Parsed::line`] keeps for
    /// the same line: the same fields, the same cells through [`parse_score`].
    fn whole_line(
        &mut self,
        block: &[u8],
        at: usize,
        columns: &Columns,
        line: u64,
    ) -> Option<usize> {
        // An empty line (or one the general path must look at for its carriage return).
        if matches!(block[at], b'\n' | b'\r') {
            return None;
        }
        let start = self.scores.len();
        self.scores.resize(start + columns.folds.len(), 0.0);
        let mut id: &str = "";
        let mut p = at;
        let last = columns.roles.len() - 1;
        for (col, &role) in columns.roles.iter().enumerate() {
            let from = p;
            // A short score is read with its length a word at a time; any other cell is
            // scanned to its end (a word at a time while 8 bytes remain).
            let short = match role {
                Role::Fold(_) => word_at(block, p).and_then(short_decimal),
                Role::Id | Role::Other => None,
            };
            match short {
                Some((_, len)) => p += len,
                None => p = cell_end(block, p),
            }
            let ends_line = block.get(p) != Some(&b',');
            let mut field = &block[from..p];
            if col == last {
                if !ends_line {
                    break;
                }
                field = field.strip_suffix(b"\r").unwrap_or(field);
            } else if ends_line {
                break;
            }
            let good = match role {
                Role::Id => std::str::from_utf8(field).map(|text| id = text).is_ok(),
                Role::Fold(k) => short
                    .map(|(score, _)| score)
                    .or_else(|| parse_score(field))
                    .map(|score| self.scores[start + k] = score)
                    .is_some(),
                Role::Other => true,
            };
            if !good {
                break;
            }
            if col == last {
                self.ids.push_str(id);
                self.id_ends.push(self.ids.len());
                self.lines.push(line);
                return Some(p);
            }
            p += 1;
        }
        self.scores.truncate(start);
        None
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

/// The 8 bytes of `block` from `at` as one word, the first byte lowest; `None` within 8 bytes
/// of the end.
fn word_at(block: &[u8], at: usize) -> Option<u64> {
    let bytes = block.get(at..)?.first_chunk::<8>()?;
    Some(u64::from_le_bytes(*bytes))
}

/// Where the cell of `block` that starts at `from` ends: its comma or line feed, or the end of
/// the block. A word at a time while 8 bytes remain (cells are a few bytes long, too short
/// for a vector search to gain), then `memchr2` on the rest.
fn cell_end(block: &[u8], from: usize) -> usize {
    let mut p = from;
    while let Some(word) = word_at(block, p) {
        match delimiter_in(word) {
            Some(at) => return p + at,
            None => p += 8,
        }
    }
    memchr::memchr2(b',', b'\n', &block[p..]).map_or(block.len(), |at| p + at)
}

/// Whether a block is plain: no quote, so every line break ends a record.
fn plain(block: &[u8]) -> bool {
    memchr::memchr(b'"', block).is_none()
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
    /// [`BLOCK_BYTES`], but in tests.
    block_bytes: usize,
}

impl<R: Read> Blocks<R> {
    fn new(source: R, block_bytes: usize) -> Self {
        Blocks {
            source,
            block_bytes,
            carry: Vec::new(),
            failed: None,
            ended: false,
        }
    }

    /// Fills `block` with the next `bytes` or so: cut after its last line break when it is plain
    /// and the source goes on (more when a line is longer).
    fn fill(&mut self, block: &mut Vec<u8>, bytes: usize) -> Fill {
        block.clear();
        block.append(&mut self.carry);
        let mut want = bytes;
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
        block.reserve(want.saturating_sub(block.len()));
        while block.len() < want && !self.ended {
            let piece = (want - block.len()).min(READ_BYTES) as u64;
            // Into the spare capacity, without zeroing it first; what was read stays on error.
            match (&mut self.source).take(piece).read_to_end(block) {
                Ok(n) if (n as u64) < piece => self.ended = true,
                Ok(_) => {}
                Err(e) => {
                    self.failed = Some(e);
                    self.ended = true;
                }
            }
        }
    }

    /// `block`, then what the source holds after it (from the line cut off the last block on),
    /// then the source's error if it failed.
    fn rest(mut self, mut block: Vec<u8>) -> Rest<R> {
        block.append(&mut self.carry);
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

/// A source that notes where its empty lines are, for the line numbers of the records after them:
/// the csv crate skips empty lines, but gives the record after them the line it started looking
/// on, a line early for each.
pub(super) struct EmptyLines<R> {
    source: R,
    /// Bytes read so far.
    read: u64,
    /// Whether the last byte read was a line feed (true at the start: a line starts there).
    after_line_feed: bool,
    /// Runs of empty lines not yet asked about, as (offset of the first one's line feed, lines).
    runs: std::collections::VecDeque<(u64, u64)>,
}

impl<R> EmptyLines<R> {
    fn new(source: R) -> Self {
        EmptyLines {
            source,
            read: 0,
            after_line_feed: true,
            runs: std::collections::VecDeque::new(),
        }
    }

    /// The empty lines that start at byte `offset`, where the csv crate says a record starts;
    /// offsets asked about must grow.
    fn at(&mut self, offset: u64) -> u64 {
        while let Some(&(start, lines)) = self.runs.front() {
            if start > offset {
                break;
            }
            self.runs.pop_front();
            if start == offset {
                return lines;
            }
        }
        0
    }
}

impl<R: Read> Read for EmptyLines<R> {
    fn read(&mut self, buf: &mut [u8]) -> std::io::Result<usize> {
        let n = self.source.read(buf)?;
        let bytes = &buf[..n];
        for at in memchr::memchr_iter(b'\n', bytes) {
            let empty = match at.checked_sub(1) {
                Some(before) => bytes[before] == b'\n',
                None => self.after_line_feed,
            };
            if !empty {
                continue;
            }
            let offset = self.read + at as u64;
            match self.runs.back_mut() {
                Some((start, lines)) if *start + *lines == offset => *lines += 1,
                _ => self.runs.push_back((offset, 1)),
            }
        }
        if let Some(&last) = bytes.last() {
            self.after_line_feed = last == b'\n';
        }
        self.read += n as u64;
        Ok(n)
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

/// A csv crate reader whose records end at line feeds (see the module's documentation) and may
/// have any number of fields: one of another length than the header's is reported by the
/// reader, not the crate.
fn records<R: Read>(source: R, header: bool) -> csv::Reader<EmptyLines<R>> {
    csv::ReaderBuilder::new()
        .has_headers(header)
        .flexible(true)
        .terminator(csv::Terminator::Any(b'\n'))
        .from_reader(EmptyLines::new(source))
}

/// The file's line (1-based) of a record the csv crate read at `position`, `csv` being read
/// from the start of the file or of a record.
pub(super) fn record_line<R: Read>(
    csv: &mut csv::Reader<EmptyLines<R>>,
    position: Option<&csv::Position>,
) -> u64 {
    let (line, byte) = position.map_or((1, 0), |p| (p.line(), p.byte()));
    line + csv.get_mut().at(byte)
}

/// A field without the carriage return of a CRLF line break, when it is the record's last.
fn without_cr(field: &[u8], last: bool) -> &[u8] {
    if last {
        field.strip_suffix(b"\r").unwrap_or(field)
    } else {
        field
    }
}

impl TrialReader<'_> {
    /// Reads a CSV trials file with an `id` column and `fold_1` … `fold_K` columns, or
    /// scikit-learn's results as pandas writes them.
    pub fn read_csv(&mut self, source: impl Read) {
        self.read_csv_in_blocks(source, BLOCK_BYTES);
    }

    fn read_csv_in_blocks(&mut self, source: impl Read, block_bytes: usize) {
        let mut blocks = Blocks::new(source, block_bytes);
        let mut block = Vec::new();
        let first = blocks.fill(&mut block, block_bytes);
        let header = (first == Fill::Plain)
            .then(|| header_end(&block))
            .flatten()
            .and_then(|end| Some((end, records(&block[..end], true).headers().ok()?.clone())));
        let Some((end, header)) = header else {
            // Whatever is unusual about the start of the file, the csv crate reads it all.
            let mut csv = records(blocks.rest(block), true);
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
                let mut csv = records(blocks.rest(block), true);
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
            return Some(Layout::Trials(Columns::new(
                id,
                folds.into_iter().flatten().collect(),
                header.len(),
            )));
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

    /// Reads the records after the header, `mine` the first of them (whole lines of a plain
    /// block) on `line`, until the first block that is not plain, from which the csv crate reads.
    ///
    /// In each round the main thread pushes the trials of the round before, parses a block of
    /// [`Blocks::block_bytes`] and reads the next round's two blocks, while a second thread
    /// parses the block after its own, [`THEIRS`] times as large: pushing trials one by one in
    /// file order is the one part that cannot be shared, and the source is read in file order
    /// by one thread.
    fn read_blocks<R: Read>(
        &mut self,
        mut blocks: Blocks<R>,
        mut mine: Vec<u8>,
        columns: &Columns,
        mut line: u64,
    ) {
        let size = blocks.block_bytes;
        let checks = Checks::new(self.metric, self.folds, self.selected.clone());
        let checks = &checks;
        let mut theirs = Vec::new();
        let mut fill = blocks.fill(&mut theirs, THEIRS * size);
        // The next round's blocks, read during this one.
        let (mut next_mine, mut next_theirs) = (Vec::new(), Vec::new());
        let mut before: Vec<Parsed> = Vec::new();
        // Runs taken in an earlier round, whose room the next blocks reuse.
        let mut spare: Vec<Parsed> = Vec::new();
        loop {
            let (for_theirs, for_mine) = (spare.pop(), spare.pop());
            let (going, parsed, next) = std::thread::scope(|scope| {
                let other = (fill == Fill::Plain).then(|| {
                    scope.spawn(|| {
                        Parsed::plain(&theirs, columns, checks, for_theirs.unwrap_or_default())
                    })
                });
                let going = self.take_all(&before, columns, &mut line);
                let mut parsed = vec![Parsed::plain(
                    &mine,
                    columns,
                    checks,
                    for_mine.unwrap_or_default(),
                )];
                let next = (going && fill == Fill::Plain).then(|| {
                    let next = blocks.fill(&mut next_mine, size);
                    let after = match next {
                        Fill::Plain => blocks.fill(&mut next_theirs, THEIRS * size),
                        Fill::Other | Fill::End => Fill::End,
                    };
                    (next, after)
                });
                if let Some(other) = other {
                    match other.join() {
                        Ok(other) => parsed.push(other),
                        Err(panic) => std::panic::resume_unwind(panic),
                    }
                }
                (going, parsed, next)
            });
            if !going {
                return;
            }
            spare.extend(std::mem::replace(&mut before, parsed));
            let other = match (fill, next) {
                (Fill::Plain, Some((Fill::Plain, after))) => {
                    std::mem::swap(&mut mine, &mut next_mine);
                    std::mem::swap(&mut theirs, &mut next_theirs);
                    fill = after;
                    continue;
                }
                (Fill::Plain, Some((Fill::Other, _))) => next_mine,
                (Fill::Other, _) => theirs,
                _ => break,
            };
            if !self.take_all(&before, columns, &mut line) {
                return;
            }
            // The block starts a record: read without a header, lines counted from `line`.
            let csv = records(blocks.rest(other), false);
            self.read_records(csv, columns, line);
            return;
        }
        if self.take_all(&before, columns, &mut line)
            && let Some(e) = blocks.failed.take()
        {
            self.read_failed(&e, line);
        }
    }

    /// [`TrialReader::take`] for each of `parsed` in turn, `line` the first one's first line and
    /// then the line after the last one.
    fn take_all(&mut self, parsed: &[Parsed], columns: &Columns, line: &mut u64) -> bool {
        for parsed in parsed {
            if let (Some(&id_bytes), false) = (parsed.id_ends.first(), parsed.lines.is_empty()) {
                self.expect_records_like(parsed.bytes / parsed.lines.len(), id_bytes);
            }
            if !self.take(parsed, columns, *line) {
                return false;
            }
            *line += parsed.newlines;
        }
        true
    }

    /// Reads records with the csv crate, its line 1 being the file's line `first_line`.
    fn read_records<R: Read>(
        &mut self,
        mut csv: csv::Reader<EmptyLines<R>>,
        columns: &Columns,
        first_line: u64,
    ) {
        let mut record = csv::ByteRecord::new();
        let mut parsed = Parsed::default();
        loop {
            match csv.read_byte_record(&mut record) {
                Ok(true) => {
                    let line = record_line(&mut csv, record.position()) - 1;
                    if parsed.lines.is_empty() && parsed.problems.is_empty() {
                        let bytes = record.as_slice().len() + record.len();
                        self.expect_records_like(
                            bytes,
                            record.get(columns.id).map_or(0, <[u8]>::len),
                        );
                    }
                    let fields = record.len();
                    let cell = |k: usize| without_cr(record.get(k).unwrap_or(b""), k + 1 == fields);
                    // A line holding only the CR of a CRLF is an empty line.
                    if fields == 1 && cell(0).is_empty() {
                        continue;
                    }
                    parsed.record(columns, line, fields, cell);
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
                        self.unreadable_row(line, &reason);
                    }
                    return;
                }
            }
        }
    }

    /// Reports that the source failed after the records before `line`.
    fn read_failed(&mut self, error: &std::io::Error, line: u64) {
        let line = crate::opener::limit_line(error).unwrap_or(line);
        self.unreadable_row(Some(line), &crate::opener::read_reason(error));
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
        if parsed.problems.is_empty()
            && self.take_sums(
                &parsed.sums,
                (&parsed.ids, &parsed.id_ends),
                &parsed.lines,
                &parsed.scores,
                first_line,
            )
        {
            return true;
        }
        let folds = columns.folds.len();
        let mut problems = parsed.problems.iter().peekable();
        for trial in 0..=parsed.lines.len() {
            while let Some((_, problem)) = problems.next_if(|(before, _)| *before == trial) {
                match problem {
                    Problem::Ragged { line, fields } => {
                        self.ragged(first_line + line, *fields, columns.width())
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

#[cfg(test)]
mod tests {
    use super::*;
    use crate::manifest::Metric;
    use crate::manifest::trials::{Named, Selected};
    use proptest::prelude::*;

    fn reader() -> TrialReader<'static> {
        TrialReader::new("t.csv", Metric::Accuracy, 2).select(Selected {
            folds: vec![0.8, 0.9],
            named: None,
        })
    }

    /// A reader of two folds for `metric`, with no selected configuration, one found by its
    /// fold scores, or one named by its id.
    fn reader_for(metric: Metric, selection: u8) -> TrialReader<'static> {
        let reader = TrialReader::new("t.csv", metric, 2);
        let named = |id: &str| Named {
            id: id.to_owned(),
            file: "m.json".to_owned(),
            place: Place::default(),
            path: "search.selected_trial".to_owned(),
        };
        match selection {
            0 => reader,
            1 => reader.select(Selected {
                folds: vec![0.8, 0.9],
                named: None,
            }),
            _ => reader.select(Selected {
                folds: vec![0.8, 0.9],
                named: Some(named("t7")),
            }),
        }
    }

    /// The summary or the problems, as text.
    fn outcome(reader: TrialReader<'_>) -> String {
        format!("{:?}", reader.finish())
    }

    /// Read in blocks of `block_bytes`.
    fn in_blocks(text: &[u8], block_bytes: usize) -> String {
        let mut reader = reader();
        reader.read_csv_in_blocks(text, block_bytes);
        outcome(reader)
    }

    /// Read by the csv crate alone, record by record.
    fn by_record(text: &[u8]) -> String {
        let mut reader = reader();
        let mut csv = records(text, true);
        if let Some(header) = reader.header(&mut csv) {
            match reader.layout(&header) {
                Some(Layout::Trials(columns)) => reader.read_records(csv, &columns, 1),
                Some(Layout::CvResults) => reader.read_cv_results_csv(&header, csv),
                None => {}
            }
        }
        outcome(reader)
    }

    /// A cell: mostly scores, sometimes not a number, empty, padded, quoted or spanning lines.
    fn cell() -> impl Strategy<Value = String> {
        prop_oneof![
            6 => prop_oneof![Just("0.8"), Just("0.9"), Just("0.75"), Just("1"), Just("0")]
                .prop_map(str::to_owned),
            1 => prop_oneof![
                Just(""), Just(" 0.5"), Just("1e-1"), Just("x"), Just("\"0.8\""),
                Just("\"a\nb\""), Just("\"q,\"\"r\""), Just("1.5"), Just("é"),
            ]
            .prop_map(str::to_owned),
        ]
    }

    fn row() -> impl Strategy<Value = String> {
        let id = prop_oneof![
            8 => "[a-d]{1,2}",
            1 => Just(String::new()),
            1 => Just("\"a\"".to_owned()),
        ];
        (id, proptest::collection::vec(cell(), 1..4)).prop_map(|(id, cells)| {
            std::iter::once(id)
                .chain(cells)
                .collect::<Vec<_>>()
                .join(",")
        })
    }

    fn file() -> impl Strategy<Value = Vec<u8>> {
        let header = prop_oneof![
            Just("id,fold_1,fold_2"),
            Just("\u{feff}id,fold_1,fold_2"),
            Just("fold_2,id,fold_1"),
            Just("id,\"fold_1\",fold_2"),
            Just("id,fold_1"),
            Just("params,split0_test_score,split1_test_score,rank_test_score"),
        ];
        let ending = prop_oneof![Just("\n"), Just("\r\n"), Just("\n\n"), Just("\r")];
        (
            header,
            proptest::collection::vec((row(), ending), 0..40),
            any::<bool>(),
        )
            .prop_map(|(header, rows, last_break)| {
                crate::opener::csv_text(header, rows, last_break)
            })
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(512))]

        /// Blocks of any size, plain or not, give what the csv crate's path gives read record
        /// by record: the same trials, the same problems on the same lines. (Both count lines
        /// with this module's mends; the hand-counted test below checks the lines themselves.)
        #[test]
        fn blocks_read_as_the_csv_crate_path_reads_records(text in file(), block in 1usize..120) {
            prop_assert_eq!(in_blocks(&text, block), by_record(&text));
        }

        /// A plain file of many blocks, read on two threads, is read as one block would be.
        #[test]
        fn plain_blocks_on_two_threads_read_as_one(
            rows in proptest::collection::vec(("[a-z]{1,3}", 0u32..=10_000, 0u32..=10_000), 1..300),
            crlf in any::<bool>(),
            block in 16usize..400,
        ) {
            let ending = if crlf { "\r\n" } else { "\n" };
            let mut text = format!("id,depth,fold_1,fold_2{ending}");
            for (id, a, b) in &rows {
                text.push_str(&format!("{id},3,{},{}{ending}", f64::from(*a) / 1e4, f64::from(*b) / 1e4));
            }
            let text = text.into_bytes();
            prop_assert!(plain(&text));
            prop_assert_eq!(in_blocks(&text, block), in_blocks(&text, BLOCK_BYTES));
            prop_assert_eq!(in_blocks(&text, block), by_record(&text));
        }
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(256))]

        /// Trials that all pass, joined by their sums when read in blocks, give what pushing
        /// them one by one through the csv crate's path gives: the same accumulator (tied best
        /// means, the selected configuration's bias), candidate, matching count and histogram,
        /// for a metric either way round and each kind of selection.
        #[test]
        fn runs_joined_by_their_sums_read_as_trials_pushed_one_by_one(
            scores in proptest::collection::vec((0usize..6, 0usize..6), 1..200),
            lower_is_better in any::<bool>(),
            selection in 0u8..3,
            block in 16usize..300,
        ) {
            const VALUES: [&str; 6] = ["0.8", "0.9", "0.75", "1", "0", "0.5"];
            let mut text = String::from("id,fold_1,fold_2\n");
            for (i, (a, b)) in scores.iter().enumerate() {
                text.push_str(&format!("t{i},{},{}\n", VALUES[*a], VALUES[*b]));
            }
            let text = text.into_bytes();
            let metric = if lower_is_better { Metric::LogLoss } else { Metric::Accuracy };
            let mut blocks = reader_for(metric, selection);
            blocks.read_csv_in_blocks(&text[..], block);
            let mut records = reader_for(metric, selection);
            let mut csv = super::records(&text[..], true);
            let header = records.header(&mut csv).expect("a header");
            let Some(Layout::Trials(columns)) = records.layout(&header) else {
                panic!("the trials layout");
            };
            records.read_records(csv, &columns, 1);
            prop_assert_eq!(outcome(blocks), outcome(records));
        }
    }

    /// The line and message of each problem of `text` read in blocks of `block_bytes`.
    fn lines_of_problems(text: &[u8], block_bytes: usize) -> Vec<(u64, String)> {
        let mut reader = TrialReader::new("t.csv", Metric::Accuracy, 2).select(Selected {
            folds: vec![0.8, 0.9],
            named: None,
        });
        reader.read_csv_in_blocks(text, block_bytes);
        match reader.finish() {
            Ok(summary) => panic!("no problems: {summary:?}"),
            Err(problems) => problems
                .into_iter()
                .map(|p| (p.line.unwrap_or(0), p.message))
                .collect(),
        }
    }

    /// Lines counted by hand: the problems name the line each bad record starts on, whether the
    /// file is read in blocks or (quoted from line 6 on) by the csv crate, through CRLF line
    /// breaks, empty lines and a quoted field over two lines.
    #[test]
    fn problems_name_the_line_each_record_starts_on() {
        let text = "id,fold_1,fold_2\r\n\
                    a,0.8,0.9\r\n\
                    \r\n\
                    b,x,0.9\r\n\
                    \n\
                    \"c\",0.8,\"y\"\r\n\
                    \"d\ne\",0.8\r\n\
                    \r\n\
                    \n\
                    f,0.8,0.9,1\n\
                    a,0.8,0.9";
        // One block, or blocks of a few bytes, so that both readers see the quoted records.
        for block in [3, 1 << 20] {
            let problems = lines_of_problems(text.as_bytes(), block);
            assert_eq!(
                problems,
                [
                    (4, "expected a number, found \"x\"".to_owned()),
                    (6, "expected a number, found \"y\"".to_owned()),
                    (7, "the row has 2 fields, but the header has 3".to_owned()),
                    (11, "the row has 4 fields, but the header has 3".to_owned()),
                    (12, "trial id \"a\" appears twice".to_owned()),
                ],
                "block of {block} bytes"
            );
        }
    }

    /// scikit-learn's results read by the csv crate count lines alike: through CRLF line breaks
    /// and empty lines, the ragged row is on line 5 (counted by hand).
    #[test]
    fn results_rows_are_named_by_the_line_they_start_on() {
        let text = "split0_test_score,split1_test_score,mean_test_score,rank_test_score\r\n\
                    \r\n\
                    0.8,0.9,0.85,1\r\n\
                    \n\
                    0.8,0.9\r\n";
        for block in [3, 1 << 20] {
            assert_eq!(
                lines_of_problems(text.as_bytes(), block),
                [(5, "the row has 2 fields, but the header has 4".to_owned())],
                "block of {block} bytes"
            );
        }
    }
}
