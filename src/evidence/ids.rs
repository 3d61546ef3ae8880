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
/// the lines in its first bytes ([`super::estimated_rows`]).
fn read_all(path: &Path, named_by: &str, which: &str) -> Result<IdArena, Diagnostic> {
    let mut reader = open(path, named_by)?;
    let mut line = Vec::new();
    let head = reader.fill_buf().unwrap_or_default();
    let size = std::fs::metadata(path).map_or(0, |m| m.len());
    let mut ids = IdArena::default();
    ids.reserve(
        super::estimated_rows(size, head),
        usize::try_from(size).unwrap_or(0),
    );
    let mut number = 0u64;
    loop {
        line.clear();
        number += 1;
        match reader.read_until(b'\n', &mut line) {
            Ok(0) => return Ok(ids),
            Ok(_) => {
                let id = clean(&line);
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
            }
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
        }
    }
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
    let ((test_ids, test_order), train) = std::thread::scope(|scope| {
        let train = scope.spawn(|| read_sorted(train, train_named_by, "train"));
        let test = read_sorted(test, test_named_by, "test");
        let train = train
            .join()
            .unwrap_or_else(|e| std::panic::resume_unwind(e));
        test.map(|test| (test, train))
    })?;
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
    // The first few shared train rows in file order: the merge meets them in id order.
    let mut first_rows: Vec<u32> = Vec::with_capacity(SHOWN + 1);
    super::walk((train, train_order), (test, test_order), |step| {
        if let Step::Both(row, _) = step {
            result.shared += 1;
            if first_rows.len() < SHOWN || first_rows.last().is_some_and(|&last| row < last) {
                let at = first_rows.partition_point(|&r| r < row);
                first_rows.insert(at, row);
                first_rows.truncate(SHOWN);
            }
        }
    });
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
            let arena = |ids: &[String]| {
                let mut arena = IdArena::default();
                for id in ids {
                    arena.push(id.as_bytes()).unwrap();
                }
                arena
            };
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
