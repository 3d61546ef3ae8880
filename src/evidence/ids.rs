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

fn open(path: &Path, named_by: &str) -> Result<std::io::BufReader<std::fs::File>, Diagnostic> {
    std::fs::File::open(path)
        .map(|f| std::io::BufReader::with_capacity(1 << 20, f))
        .map_err(|e| {
            Diagnostic::file(
                path.display().to_string(),
                format!(
                    "cannot read the id list named by {named_by}: {}",
                    crate::input::io_reason(&e)
                ),
            )
        })
}

fn clean(line: &[u8]) -> &[u8] {
    let line = line.strip_suffix(b"\n").unwrap_or(line);
    let line = line.strip_suffix(b"\r").unwrap_or(line);
    line.trim_ascii()
}

/// Compares a train id list with a test id list.
pub fn overlap(
    train: &Path,
    train_named_by: &str,
    test: &Path,
    test_named_by: &str,
) -> Result<Overlap, Diagnostic> {
    let mut test_ids = IdArena::default();
    let mut reader = open(test, test_named_by)?;
    let mut line = Vec::new();
    loop {
        line.clear();
        match reader.read_until(b'\n', &mut line) {
            Ok(0) => break,
            Ok(_) => {
                let id = clean(&line);
                if !id.is_empty() && test_ids.push(id).is_none() {
                    return Err(Diagnostic::file(
                        test.display().to_string(),
                        "the test ids exceed 4 GiB",
                    ));
                }
            }
            Err(e) => {
                return Err(Diagnostic::file(
                    test.display().to_string(),
                    format!("cannot read: {e}"),
                ));
            }
        }
    }
    let sorted = test_ids.sorted();
    let mut result = Overlap {
        train_ids: 0,
        test_ids: test_ids.len() as u64,
        shared: 0,
        examples: Vec::new(),
    };
    let mut reader = open(train, train_named_by)?;
    loop {
        line.clear();
        match reader.read_until(b'\n', &mut line) {
            Ok(0) => break,
            Ok(_) => {
                let id = clean(&line);
                if id.is_empty() {
                    continue;
                }
                result.train_ids += 1;
                if sorted.contains(id) {
                    result.shared += 1;
                    if result.examples.len() < SHOWN {
                        result
                            .examples
                            .push(String::from_utf8_lossy(id).into_owned());
                    }
                }
            }
            Err(e) => {
                return Err(Diagnostic::file(
                    train.display().to_string(),
                    format!("cannot read: {e}"),
                ));
            }
        }
    }
    Ok(result)
}
