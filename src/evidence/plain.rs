//! CSV records read without the csv crate where the text is plain: no quote and no carriage
//! return, so that every line feed ends a record and every comma ends a field.
//!
//! A predictions file is mostly such text. Its records are found a word at a time (the commas
//! and line feeds of 8 bytes at once, [`super::bytes_equal`]) and handed over as slices of the
//! reader's buffer, where the csv crate would tokenise each byte through its state machine and
//! copy the fields out. From the first line that is not plain (a quote, a carriage return) to
//! the end, the csv crate reads the rest. Either way a record reads as the csv crate reads it
//! (`has_headers`, not `flexible`): the same fields, the same position (the line and byte just
//! after the record before, as the crate counts them, blank lines skipped), and a record with
//! another number of fields than the header is refused with the crate's own words.

use std::io::{BufRead, Read};

use super::bytes_equal;

/// One record: fields of a plain line, or a record the csv crate read.
pub(crate) enum Fields<'a> {
    /// The fields of `bytes[start..ends[last]]`, field `i` ending at `ends[i]` (a comma, or the
    /// line's end).
    Plain {
        bytes: &'a [u8],
        start: usize,
        ends: &'a [usize],
    },
    Csv(&'a csv::ByteRecord),
}

impl Fields<'_> {
    /// Field `i`, if the record has it.
    #[inline]
    pub(crate) fn get(&self, i: usize) -> Option<&[u8]> {
        match self {
            Fields::Plain { bytes, start, ends } => {
                let end = *ends.get(i)?;
                let from = i.checked_sub(1).map_or(*start, |before| ends[before] + 1);
                Some(&bytes[from..end])
            }
            Fields::Csv(record) => record.get(i),
        }
    }
}

/// Why reading stopped short: the line the csv crate would name, and its reason.
pub(crate) type Failure = (Option<u64>, String);

/// A CSV source after its header, read as plain lines while they are.
pub(crate) struct PlainCsv<R> {
    source: R,
    header: csv::ByteRecord,
    counts: Counts,
}

/// Where reading is, in the csv crate's terms and the scan's.
struct Counts {
    /// The line and byte just after the last record (the header first), as the csv crate
    /// gives a record's position.
    pos_line: u64,
    pos_byte: u64,
    /// Records so far, the header included (the csv crate's record number of the next).
    records: u64,
    /// The line the scan is on (1-based) and the byte it is at.
    line: u64,
    byte: u64,
}

/// Where a scan of plain lines stopped.
enum Scan {
    /// Every line was read; go on.
    Done,
    /// The caller wants no more records.
    Stop,
    /// A record of another width than the header's: its line and its number of fields.
    Ragged(u64, usize),
}

impl<R: BufRead> PlainCsv<R> {
    /// The source with its header read, when the header is a plain line: not empty, ended by
    /// a line feed within the source's first buffer, without quotes or carriage returns.
    /// Otherwise the source is handed back, untouched, for the csv crate to read.
    pub(crate) fn open(mut source: R) -> Result<PlainCsv<R>, R> {
        let Ok(head) = source.fill_buf() else {
            return Err(source);
        };
        let Some(end) = memchr::memchr(b'\n', head) else {
            return Err(source);
        };
        let line = &head[..end];
        if line.is_empty() || memchr::memchr2(b'"', b'\r', line).is_some() {
            return Err(source);
        }
        let Some(header) = csv::ReaderBuilder::new()
            .has_headers(true)
            .from_reader(line)
            .byte_headers()
            .ok()
            .cloned()
        else {
            return Err(source);
        };
        source.consume(end + 1);
        Ok(PlainCsv {
            source,
            header,
            counts: Counts {
                pos_line: 2,
                pos_byte: end as u64 + 1,
                records: 1,
                line: 2,
                byte: end as u64 + 1,
            },
        })
    }

    pub(crate) fn header(&self) -> &csv::ByteRecord {
        &self.header
    }

    /// Calls `each` with every record and the line of its position, in order, until it returns
    /// false; a [`Failure`] for a record the csv crate would refuse or a source that fails.
    pub(crate) fn visit(
        mut self,
        mut each: impl FnMut(&Fields<'_>, u64) -> bool,
    ) -> Result<(), Failure> {
        let width = self.header.len();
        let mut ends: Vec<usize> = Vec::with_capacity(width + 1);
        // A line cut off at the end of a buffer, completed from the next.
        let mut cut_off: Vec<u8> = Vec::new();
        loop {
            let buffer = match self.source.fill_buf() {
                Ok(buffer) => buffer,
                Err(e) => {
                    return Err((
                        crate::opener::limit_line(&e),
                        crate::opener::read_reason(&e),
                    ));
                }
            };
            if buffer.is_empty() {
                // The last line, without a line feed.
                if cut_off.is_empty() {
                    return Ok(());
                }
                if memchr::memchr2(b'"', b'\r', &cut_off).is_some() {
                    return self.rest_by_csv(cut_off, &mut each);
                }
                cut_off.push(b'\n');
                let scan =
                    Self::scan_lines(&cut_off, &mut self.counts, width, &mut ends, &mut each);
                return self.finish_scan(scan).map(|_| ());
            }
            if !cut_off.is_empty() {
                let Some(first) = memchr::memchr(b'\n', buffer) else {
                    cut_off.extend_from_slice(buffer);
                    let read = buffer.len();
                    self.source.consume(read);
                    continue;
                };
                cut_off.extend_from_slice(&buffer[..=first]);
                self.source.consume(first + 1);
                if memchr::memchr2(b'"', b'\r', &cut_off).is_some() {
                    return self.rest_by_csv(cut_off, &mut each);
                }
                let scan =
                    Self::scan_lines(&cut_off, &mut self.counts, width, &mut ends, &mut each);
                if !self.finish_scan(scan)? {
                    return Ok(());
                }
                cut_off.clear();
                continue;
            }
            // The buffer's whole lines up to the first that is not plain.
            let whole = memchr::memrchr(b'\n', buffer).map_or(0, |last| last + 1);
            let odd = memchr::memchr2(b'"', b'\r', &buffer[..whole]);
            let plain = match odd {
                None => whole,
                Some(at) => memchr::memrchr(b'\n', &buffer[..at]).map_or(0, |feed| feed + 1),
            };
            if plain > 0 {
                let scan = Self::scan_lines(
                    &buffer[..plain],
                    &mut self.counts,
                    width,
                    &mut ends,
                    &mut each,
                );
                self.source.consume(plain);
                if !self.finish_scan(scan)? {
                    return Ok(());
                }
                // The buffer's rest comes next: a line that is not plain, or a cut-off line.
                continue;
            }
            let rest = buffer.to_vec();
            self.source.consume(rest.len());
            if odd.is_some() {
                return self.rest_by_csv(rest, &mut each);
            }
            // No whole line in the buffer: all of it is a cut-off line.
            cut_off = rest;
        }
    }

    /// Reads whole plain lines (each ended by a line feed), the commas and line feeds found a
    /// word at a time; `counts` advanced over the lines read.
    fn scan_lines(
        lines: &[u8],
        counts: &mut Counts,
        width: usize,
        ends: &mut Vec<usize>,
        each: &mut impl FnMut(&Fields<'_>, u64) -> bool,
    ) -> Scan {
        let Counts {
            pos_line,
            pos_byte,
            records,
            line,
            byte,
        } = counts;
        let base = *byte;
        let mut start = 0;
        ends.clear();
        let mut mark = |at: usize, feed: bool, ends: &mut Vec<usize>| -> Option<Scan> {
            ends.push(at);
            if !feed {
                return None;
            }
            let this_line = *line;
            *line += 1;
            let from = start;
            start = at + 1;
            // A blank line is no record.
            if at == from {
                ends.clear();
                return None;
            }
            if ends.len() != width {
                return Some(Scan::Ragged(*pos_line, ends.len()));
            }
            let record = Fields::Plain {
                bytes: lines,
                start: from,
                ends,
            };
            let more = each(&record, *pos_line);
            *pos_line = this_line + 1;
            *pos_byte = base + at as u64 + 1;
            *records += 1;
            ends.clear();
            (!more).then_some(Scan::Stop)
        };
        let words = lines.chunks_exact(8);
        let tail = lines.len() - words.remainder().len();
        for (w, word) in words.enumerate() {
            let word = u64::from_le_bytes(word.try_into().unwrap_or_default());
            let feeds = bytes_equal(word, b'\n');
            let mut marks = feeds | bytes_equal(word, b',');
            while marks != 0 {
                let bit = marks.trailing_zeros();
                if let Some(stop) = mark(8 * w + (bit / 8) as usize, feeds >> bit & 1 == 1, ends) {
                    return stop;
                }
                marks &= marks - 1;
            }
        }
        for (i, &b) in lines[tail..].iter().enumerate() {
            if (b == b'\n' || b == b',')
                && let Some(stop) = mark(tail + i, b == b'\n', ends)
            {
                return stop;
            }
        }
        *byte = base + lines.len() as u64;
        Scan::Done
    }

    /// Whether to go on after a scan; a ragged record as the csv crate refuses it.
    fn finish_scan(&self, scan: Scan) -> Result<bool, Failure> {
        let Counts {
            records, pos_byte, ..
        } = self.counts;
        match scan {
            Scan::Done => Ok(true),
            Scan::Stop => Ok(false),
            Scan::Ragged(line, fields) => Err((
                Some(line),
                unequal_lengths(records, line, pos_byte, fields, self.header.len()),
            )),
        }
    }

    /// The csv crate reads the rest of the source, `first` before it, from the position of the
    /// record after the last one read (lines and bytes counted on from there).
    fn rest_by_csv(
        self,
        first: Vec<u8>,
        each: &mut impl FnMut(&Fields<'_>, u64) -> bool,
    ) -> Result<(), Failure> {
        let width = self.header.len();
        // The rest starts at the scan's line and byte; its first record's position is the
        // last record's end (blank lines before it are skipped, as the crate skips them).
        let Counts { line, byte, .. } = self.counts;
        let mut csv = csv::ReaderBuilder::new()
            .has_headers(false)
            .flexible(true)
            .buffer_capacity(1 << 20)
            .from_reader(std::io::Cursor::new(first).chain(self.source));
        let mut record = csv::ByteRecord::new();
        let mut first_record = true;
        let mut records = self.counts.records;
        loop {
            match csv.read_byte_record(&mut record) {
                Ok(false) => return Ok(()),
                Ok(true) => {
                    let (at_line, at_byte) = match (first_record, record.position()) {
                        (false, Some(p)) => (line + p.line() - 1, byte + p.byte()),
                        _ => (self.counts.pos_line, self.counts.pos_byte),
                    };
                    first_record = false;
                    if record.len() != width {
                        return Err((
                            Some(at_line),
                            unequal_lengths(records, at_line, at_byte, record.len(), width),
                        ));
                    }
                    if !each(&Fields::Csv(&record), at_line) {
                        return Ok(());
                    }
                    records += 1;
                }
                Err(e) => {
                    let (at, reason) = crate::opener::csv_failure(&e);
                    // A limit error names the file's line; the crate's own, its reader's.
                    let at = match e.kind() {
                        csv::ErrorKind::Io(_) => at,
                        _ => at.map(|l| l + line - 1),
                    };
                    return Err((at, reason));
                }
            }
        }
    }
}

/// The csv crate's message for a record of `len` fields after a header of `expected`
/// (`csv::ErrorKind::UnequalLengths` as csv 1.4 displays it).
fn unequal_lengths(record: u64, line: u64, byte: u64, len: usize, expected: usize) -> String {
    format!(
        "CSV error: record {record} (line: {line}, byte: {byte}): found record with {len} \
         fields, but the previous record has {expected} fields"
    )
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    /// What a reading gave: each record's line and fields, then how it ended.
    type Outcome = (Vec<(u64, Vec<Vec<u8>>)>, Option<Failure>);

    /// Read by the csv crate alone, as the predictions reader reads with it: records with
    /// their positions' lines, and a failure as `opener::csv_failure` words it. At most `keep`
    /// records are taken.
    fn by_csv_crate(text: &[u8], keep: usize) -> Outcome {
        let mut csv = csv::ReaderBuilder::new()
            .has_headers(true)
            .from_reader(text);
        let mut records = Vec::new();
        let mut record = csv::ByteRecord::new();
        if let Err(e) = csv.byte_headers() {
            return (records, Some(crate::opener::csv_failure(&e)));
        }
        while records.len() < keep {
            match csv.read_byte_record(&mut record) {
                Ok(false) => break,
                Ok(true) => records.push((
                    record.position().map_or(0, |p| p.line()),
                    record.iter().map(<[u8]>::to_vec).collect(),
                )),
                Err(e) => return (records, Some(crate::opener::csv_failure(&e))),
            }
        }
        (records, None)
    }

    /// Read as plain lines through a buffer of `capacity` bytes; `None` when the header is not
    /// a plain line (the csv crate then reads the whole file).
    fn by_plain_lines(text: &[u8], capacity: usize, keep: usize) -> Option<Outcome> {
        let plain = PlainCsv::open(std::io::BufReader::with_capacity(capacity, text)).ok()?;
        let mut records = Vec::new();
        let read = plain.visit(|fields, line| {
            let all = (0..).map_while(|i| fields.get(i)).map(<[u8]>::to_vec);
            records.push((line, all.collect()));
            records.len() < keep
        });
        Some((records, read.err()))
    }

    fn cell() -> impl Strategy<Value = String> {
        prop_oneof![
            8 => "[a-c0-9]{0,3}",
            1 => prop_oneof![
                Just("\"q\""), Just("\"a,b\""), Just("\"x\ny\""), Just("\"d\"\"e\""), Just(" ")
            ]
            .prop_map(str::to_owned),
        ]
    }

    fn file() -> impl Strategy<Value = Vec<u8>> {
        let header = prop_oneof![
            6 => Just("id,label,prediction"),
            1 => Just("\u{feff}id,label,prediction"),
            1 => Just("id,\"label\",prediction"),
            1 => Just("id,label,prediction\r"),
            1 => Just(""),
        ];
        let row = prop_oneof![
            12 => proptest::collection::vec(cell(), 3..=3),
            1 => proptest::collection::vec(cell(), 1..6),
        ]
        .prop_map(|cells| cells.join(","));
        let ending = prop_oneof![
            8 => Just("\n"),
            1 => Just("\r\n"),
            1 => Just("\n\n"),
            1 => Just("\r"),
            1 => Just("\n\r\n"),
        ];
        (
            header,
            proptest::collection::vec((row, ending), 0..30),
            any::<bool>(),
        )
            .prop_map(|(header, rows, last_break)| {
                crate::opener::csv_text(header, rows, last_break)
            })
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(2048))]

        /// Plain lines read as the csv crate reads them, through buffers of any size, with
        /// quotes, carriage returns, blank lines and ragged records anywhere: the same records
        /// with the same lines, the same refusal in the crate's words, and no record after a
        /// stop.
        #[test]
        fn plain_lines_read_as_the_csv_crate_reads_them(
            text in file(),
            capacity in 1usize..64,
            keep in prop_oneof![4 => Just(usize::MAX), 1 => 1usize..10],
        ) {
            if let Some(plain) = by_plain_lines(&text, capacity, keep) {
                prop_assert_eq!(plain, by_csv_crate(&text, keep));
            }
        }
    }

    /// Records counted by hand: after a header on line 1, blank lines skipped, a quoted field
    /// over two lines read by the csv crate, and the ragged record's message with its record
    /// number, line and byte (26 bytes before it: 9 + 4 + 1 + 4 + 8), as the csv crate itself
    /// gives them for the same text.
    #[test]
    fn positions_and_the_ragged_message_are_the_csv_crates() {
        let text = b"id,label\na,x\n\nb,y\n\"c\nd\",z\ne,w,v\n";
        let (records, failure) = by_plain_lines(text, 16, usize::MAX).unwrap();
        let lines: Vec<u64> = records.iter().map(|r| r.0).collect();
        // Each position is the line after the record before: the blank line 3 is skipped into
        // the next record's position, which is line 3.
        assert_eq!(lines, [2, 3, 5]);
        assert_eq!(records[2].1, [b"c\nd".to_vec(), b"z".to_vec()]);
        assert_eq!(
            failure,
            Some((
                Some(7),
                "CSV error: record 4 (line: 7, byte: 26): found record with 3 fields, but the \
                 previous record has 2 fields"
                    .to_owned()
            ))
        );
        assert_eq!((records, failure), by_csv_crate(text, usize::MAX));
    }
}
