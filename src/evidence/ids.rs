//! Train and test id lists, for the leakage check: no row id may be in both.
//!
//! An id list is a text file with one id per line (a trailing `\r` is dropped; blank lines are
//! skipped). Each list is held in one byte arena and sorted once by key ([`IdArena::sorted`]),
//! the two lists at once on two threads; the sorted lists are then merged ([`super::walk`]), so
//! memory is about twice the bytes of the ids and time n log n whatever the ids share.

use std::io::BufRead;
use std::path::Path;

use super::{IdArena, IdOrder, Step};
use crate::diag::Diagnostic;

/// How many overlapping ids a report names.
pub const SHOWN: usize = 5;

/// What comparing the two lists found.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Overlap {
    pub train_ids: u64,
    pub test_ids: u64,
    pub shared: u64,
    /// The first few shared ids, in train-file order.
    pub examples: Vec<String>,
}

fn open(
    path: &Path,
    named_by: &str,
) -> Result<std::io::BufReader<crate::opener::Bounded<std::fs::File>>, Diagnostic> {
    crate::opener::open(path, crate::opener::Kind::Ids)
        .map(|f| std::io::BufReader::with_capacity(1 << 20, f))
        .map_err(|reason| {
            Diagnostic::file(
                path.display().to_string(),
                format!("cannot read the id list named by {named_by}: {reason}"),
            )
        })
}

fn clean(line: &[u8]) -> &[u8] {
    let line = line.strip_suffix(b"\n").unwrap_or(line);
    let line = line.strip_suffix(b"\r").unwrap_or(line);
    line.trim_ascii()
}

/// Reads an id list whole, in order; `which` (train or test) names it in the one message of its
/// own. Room for the ids is reserved from the file's size (an upper bound on their bytes) and
/// the lines in its first bytes ([`super::estimated_rows`]). Lines are taken from the reader's
/// buffer where they lie; only a line cut off at the buffer's end is copied, to be completed.
fn read_all(path: &Path, named_by: &str, which: &str) -> Result<IdArena, Diagnostic> {
    let mut reader = open(path, named_by)?;
    let head = reader.fill_buf().unwrap_or_default();
    let size = std::fs::metadata(path).map_or(0, |m| m.len());
    let mut ids = IdArena::default();
    ids.reserve(
        super::estimated_rows(size, head),
        usize::try_from(size).unwrap_or(0),
    );
    let mut number = 0u64;
    let mut cut_off = Vec::new();
    loop {
        let buffer = match reader.fill_buf() {
            Ok(buffer) => buffer,
            Err(e) => {
                return Err(Diagnostic::at(
                    &path.display().to_string(),
                    crate::diag::Place {
                        line: crate::opener::limit_line(&e),
                        column: None,
                    },
                    "(line)",
                    format!("cannot read: {}", crate::opener::read_reason(&e)),
                ));
            }
        };
        if buffer.is_empty() {
            if !cut_off.is_empty() {
                add_line(&mut ids, &cut_off, number + 1, path, which)?;
            }
            return Ok(ids);
        }
        let mut start = 0;
        // A line cut off at the end of the last buffer is completed first.
        if !cut_off.is_empty()
            && let Some(first) = memchr::memchr(b'\n', buffer)
        {
            number += 1;
            cut_off.extend_from_slice(&buffer[..=first]);
            add_line(&mut ids, &cut_off, number, path, which)?;
            cut_off.clear();
            start = first + 1;
        }
        // Then the whole lines after it: in one pass when they are plain ids, else one by one.
        let whole = memchr::memrchr(b'\n', buffer).map_or(start, |last| (last + 1).max(start));
        if let Some(count) = ids.push_lines(&buffer[start..whole]) {
            number += count;
            start = whole;
        }
        let from = start;
        for end in memchr::memchr_iter(b'\n', &buffer[from..whole]).map(|end| from + end) {
            number += 1;
            add_line(&mut ids, &buffer[start..=end], number, path, which)?;
            start = end + 1;
        }
        cut_off.extend_from_slice(&buffer[start..]);
        let read = buffer.len();
        reader.consume(read);
    }
}

/// Adds the id on line `number` (with its line break, if it has one) to `ids`; a blank line
/// adds none.
fn add_line(
    ids: &mut IdArena,
    line: &[u8],
    number: u64,
    path: &Path,
    which: &str,
) -> Result<(), Diagnostic> {
    let id = clean(line);
    if let Some(at) = crate::evidence::control_at(id) {
        return Err(Diagnostic::at(
            &path.display().to_string(),
            crate::diag::Place::new(number, at as u64 + 1),
            "(id)",
            crate::evidence::CONTROL_IN_ID,
        ));
    }
    if !id.is_empty() && ids.push(id).is_none() {
        return Err(Diagnostic::file(
            path.display().to_string(),
            format!("the {which} ids exceed 4 GiB"),
        ));
    }
    Ok(())
}

/// Compares a train id list with a test id list.
pub fn overlap(
    train: &Path,
    train_named_by: &str,
    test: &Path,
    test_named_by: &str,
) -> Result<Overlap, Diagnostic> {
    // The two lists are read and sorted at once; the test list's problem is reported first, as
    // when it was read first.
    let (train, test) = crate::parallel::both(
        || read_sorted(train, train_named_by, "train"),
        || read_sorted(test, test_named_by, "test"),
    );
    let (test_ids, test_order) = test?;
    let (train_ids, train_order) = train?;
    Ok(overlap_sorted(
        (&train_ids, &train_order),
        (&test_ids, &test_order),
    ))
}

/// An id list read whole and sorted.
fn read_sorted(path: &Path, named_by: &str, which: &str) -> Result<(IdArena, IdOrder), Diagnostic> {
    let ids = read_all(path, named_by, which)?;
    let order = ids.sorted();
    Ok((ids, order))
}

/// What two id lists share: every train id found among the test ids counts, a repeated train id
/// each time it appears.
pub fn overlap_of(train: &IdArena, test: &IdArena) -> Overlap {
    overlap_sorted((train, &train.sorted()), (test, &test.sorted()))
}

/// [`overlap_of`] on lists already sorted.
fn overlap_sorted(
    (train, train_order): (&IdArena, &IdOrder),
    (test, test_order): (&IdArena, &IdOrder),
) -> Overlap {
    let mut result = Overlap {
        train_ids: train.len() as u64,
        test_ids: test.len() as u64,
        shared: 0,
        examples: Vec::new(),
    };
    // Each part of the walk counts its shared ids and keeps its first few shared train rows in
    // file order (the merge meets them in id order); the first few of all are among those.
    let parts = super::walk_parts(
        (train, train_order),
        (test, test_order),
        || (0u64, Vec::with_capacity(SHOWN + 1)),
        |(shared, first_rows): &mut (u64, Vec<u32>), step| {
            if let Step::Both(row, _) = step {
                *shared += 1;
                if first_rows.len() < SHOWN || first_rows.last().is_some_and(|&last| row < last) {
                    let at = first_rows.partition_point(|&r| r < row);
                    first_rows.insert(at, row);
                    first_rows.truncate(SHOWN);
                }
            }
        },
    );
    let mut first_rows = Vec::new();
    for (shared, rows) in parts {
        result.shared += shared;
        first_rows.extend(rows);
    }
    first_rows.sort_unstable();
    first_rows.truncate(SHOWN);
    result.examples = first_rows
        .iter()
        .map(|&row| String::from_utf8_lossy(train.get(row as usize)).into_owned())
        .collect();
    result
}

#[cfg(test)]
#[allow(clippy::unwrap_used)]
mod tests {
    use super::*;

    /// An id list of about 3 MB, so lines are cut off at the ends of the reader's 1 MiB
    /// buffer: ids of 1 to 22 bytes, CRLF and LF line breaks, blank lines, spaces around ids and
    /// no line break after the last. Read against the obvious: the text split at line breaks,
    /// each line trimmed, blank ones dropped.
    fn long_list() -> String {
        let mut text = String::new();
        let mut state = 0x2545_f491_4f6c_dd1du64;
        for i in 0..200_000u64 {
            state ^= state << 13;
            state ^= state >> 7;
            state ^= state << 17;
            let id: String = format!("{i:x}-{state:x}")
                .chars()
                .take(1 + (state % 40) as usize)
                .collect();
            match state % 7 {
                0 => text.push_str(&format!(" {id}\r\n")),
                1 => text.push_str(&format!("{id}\n\n")),
                _ => text.push_str(&format!("{id}\n")),
            }
        }
        text.push_str("last-without-a-line-break");
        text
    }

    /// Writes `text` to `path` and reads it as the obvious reading does: the text split at line
    /// breaks, each line trimmed, blank ones dropped.
    fn read_as_split_lines(path: &Path, text: &str) {
        std::fs::write(path, text).unwrap();
        let ids = read_all(path, "the test", "test").unwrap();
        let expected: Vec<&str> = text
            .split('\n')
            .map(str::trim)
            .filter(|l| !l.is_empty())
            .collect();
        assert_eq!(ids.len(), expected.len());
        for (i, id) in expected.iter().enumerate() {
            assert_eq!(ids.get(i), id.as_bytes(), "id {i}");
        }
    }

    #[test]
    fn lines_cut_off_at_the_buffer_end_are_read_whole() {
        let text = long_list();
        assert!(text.len() > 2 << 20);
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("ids.txt");
        read_as_split_lines(&path, &text);

        // A tab inside an id past the first buffer: its line and column (within the trimmed id,
        // 1-based) are counted from the text.
        let at = text.len() / 2 + 5;
        let start = text[..at].rfind('\n').map_or(0, |p| p + 1);
        let line = text[..at].matches('\n').count() as u64 + 1;
        let mut bad = text.clone().into_bytes();
        bad[at] = b'\t';
        std::fs::write(&path, &bad).unwrap();
        let lead = text[start..].len() - text[start..].trim_start().len();
        let diagnostic = read_all(&path, "the test", "test").unwrap_err();
        assert_eq!(diagnostic.line, Some(line));
        assert_eq!(diagnostic.column, Some((at - start - lead) as u64 + 1));
    }

    /// About 3 MB of plain ids (so most of the reader's 1 MiB buffers are read in one pass),
    /// with blank lines, and in the middle buffer only a few lines the one-pass reader leaves to
    /// the line-by-line path (spaces, a CRLF, a tab inside an id): read against the text split
    /// at line breaks, each line trimmed, blank ones dropped; and the tab's line and column,
    /// counted from the text, through the buffers read in one pass before it.
    #[test]
    fn plain_buffers_read_in_one_pass_as_line_by_line() {
        let mut text = String::new();
        let mut i = 0u64;
        while text.len() < 3 << 20 {
            let id = format!("row-{}", i * 7919 % 1_000_003);
            match i % 50 {
                0 => text.push_str(&format!("{id}\n\n")),
                _ => text.push_str(&format!("{id}\n")),
            }
            if i == 100_000 {
                text.push_str(" spaced \r\nafter-crlf\n");
            }
            i += 1;
        }
        text.push_str("last");
        let (buffer, spaced) = (1 << 20, text.find(" spaced").unwrap());
        assert!(
            spaced > buffer && spaced < 2 * buffer,
            "in the middle buffer"
        );
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("ids.txt");
        read_as_split_lines(&path, &text);

        // A tab in the last buffer, after two read in one pass or partly line by line.
        let at = 2 * buffer + 1_000;
        let at = at + text[at..].find('-').unwrap();
        let start = text[..at].rfind('\n').unwrap() + 1;
        let line = text[..at].matches('\n').count() as u64 + 1;
        let mut bad = text.into_bytes();
        bad[at] = b'\t';
        std::fs::write(&path, &bad).unwrap();
        let diagnostic = read_all(&path, "the test", "test").unwrap_err();
        assert_eq!(diagnostic.line, Some(line));
        assert_eq!(diagnostic.column, Some((at - start) as u64 + 1));
    }

    proptest::proptest! {
        /// Lines taken in one pass are what taking each line's cleaned id would add, and text
        /// of plain ids is taken; anything the one pass leaves is left untouched.
        #[test]
        fn lines_in_one_pass_are_lines_one_by_one(
            text in proptest::collection::vec(
                proptest::sample::select(b"ab\n\n \r\t\x00\x7f\xc3\xa9".to_vec()),
                0..200,
            ),
            kind in 0..3,
        ) {
            // Any bytes; plain ids; plain ids with spaces, which the one pass must not take.
            let mut text = text;
            let plain = kind == 1;
            if kind > 0 {
                let keep: &[u8] = if plain { b"ab\n\xc3\xa9" } else { b"ab \n\xc3\xa9" };
                text.retain(|b| keep.contains(b));
                text.push(b'\n');
            }
            let mut one_pass = IdArena::default();
            one_pass.push(b"before").unwrap();
            let before = one_pass.clone();
            let mut by_line = before.clone();
            let lines: Vec<&[u8]> = text.split_inclusive(|&b| b == b'\n').collect();
            match one_pass.push_lines(&text) {
                Some(count) => {
                    proptest::prop_assert_eq!(count as usize, lines.len());
                    for line in lines {
                        add_line(&mut by_line, line, 1, Path::new("t"), "test").unwrap();
                    }
                    proptest::prop_assert_eq!(one_pass, by_line);
                }
                None => {
                    proptest::prop_assert!(!plain, "plain ids were left to the line-by-line path");
                    proptest::prop_assert_eq!(one_pass, before);
                }
            }
        }
    }

    fn arena(ids: &[String]) -> IdArena {
        let mut arena = IdArena::default();
        for id in ids {
            arena.push(id.as_bytes()).unwrap();
        }
        arena
    }

    /// Past 2^20 train ids the merge is split at the train list's middle id and walked on two
    /// threads: the count and the first shared train ids in file order against a `HashSet` of
    /// the test ids. The train list takes ids from both ends of id order in turn, so its first
    /// shared ids fall in both parts.
    #[test]
    fn a_split_overlap_agrees_with_a_set() {
        let n = (1 << 20) + 1000;
        let train: Vec<String> = (0..n)
            .map(|k| if k % 2 == 0 { k / 2 } else { n - 1 - k / 2 })
            .map(|i| format!("id{i:07}"))
            .collect();
        let test: Vec<String> = (0..n)
            .step_by(97)
            .map(|i| format!("id{i:07}"))
            .chain((0..5000).map(|j| format!("x{j}")))
            .collect();
        let test_set: std::collections::HashSet<&String> = test.iter().collect();
        let shared: Vec<&String> = train.iter().filter(|id| test_set.contains(id)).collect();
        let got = overlap_of(&arena(&train), &arena(&test));
        assert_eq!(got.shared, shared.len() as u64);
        let firsts: Vec<&String> = got.examples.iter().collect();
        assert_eq!(firsts, shared[..SHOWN]);
        // From both halves of id order (split at the middle of the sorted train ids): the list's
        // first shared ids are its smallest and largest.
        let middle = format!("id{:07}", n / 2);
        assert!(firsts.iter().any(|id| **id < middle));
        assert!(firsts.iter().any(|id| **id > middle));
    }

    proptest::proptest! {
        /// The merge of the two sorted lists against the obvious: a `HashSet` of the test ids,
        /// the train ids looked up in file order. Both lists may repeat ids.
        #[test]
        fn overlap_agrees_with_a_set(
            train in proptest::collection::vec(crate::evidence::tests::hostile_id(), 0..60),
            test in proptest::collection::vec(crate::evidence::tests::hostile_id(), 0..60),
            with_nul in proptest::bool::ANY,
        ) {
            // Without zero bytes (as the readers give them) ties on a key are settled unread.
            let strip = |ids: Vec<String>| -> Vec<String> {
                if with_nul { ids } else { ids.into_iter().map(|id| id.replace('\0', "z")).collect() }
            };
            let (train, test) = (strip(train), strip(test));
            let test_set: std::collections::HashSet<&String> = test.iter().collect();
            let shared: Vec<String> = train.iter().filter(|id| test_set.contains(id)).cloned().collect();
            let got = overlap_of(&arena(&train), &arena(&test));
            proptest::prop_assert_eq!(got, Overlap {
                train_ids: train.len() as u64,
                test_ids: test.len() as u64,
                shared: shared.len() as u64,
                examples: shared.into_iter().take(SHOWN).collect(),
            });
        }
    }
}
