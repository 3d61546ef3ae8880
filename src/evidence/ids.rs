//! Train and test id lists, for the leakage check: no row id may be in both.
//!
//! An id list is a text file with one id per line (a trailing `\r` is dropped; blank lines are
//! skipped). The test ids are held in one byte arena, sorted; the train ids are streamed and
//! looked up by binary search, so memory is about twice the bytes of the test ids.

use std::io::BufRead;
use std::path::Path;

use super::IdArena;
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

/// Calls `each` with every id in a list file, in order; an error from `each` stops the read.
fn for_each_id(
    path: &Path,
    named_by: &str,
    mut each: impl FnMut(&[u8]) -> Result<(), Diagnostic>,
) -> Result<(), Diagnostic> {
    let mut reader = open(path, named_by)?;
    let mut line = Vec::new();
    let mut number = 0u64;
    loop {
        line.clear();
        number += 1;
        match reader.read_until(b'\n', &mut line) {
            Ok(0) => return Ok(()),
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
                if !id.is_empty() {
                    each(id)?;
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
    let mut test_ids = IdArena::default();
    for_each_id(test, test_named_by, |id| {
        test_ids.push(id).ok_or_else(|| {
            Diagnostic::file(test.display().to_string(), "the test ids exceed 4 GiB")
        })
    })?;
    let sorted = test_ids.sorted();
    let mut result = Overlap {
        train_ids: 0,
        test_ids: test_ids.len() as u64,
        shared: 0,
        examples: Vec::new(),
    };
    for_each_id(train, train_named_by, |id| {
        result.train_ids += 1;
        if sorted.contains(id) {
            result.shared += 1;
            if result.examples.len() < SHOWN {
                result
                    .examples
                    .push(String::from_utf8_lossy(id).into_owned());
            }
        }
        Ok(())
    })?;
    Ok(result)
}
