//! Reading and appending the ledger file, safely under concurrency and crashes.
//!
//! Appends take an exclusive lock on a companion file (`<ledger>.lock`), read and verify the
//! ledger, write the old content plus the new entries to a temporary file in the same directory,
//! flush it to disk and rename it over the ledger. A crash leaves either the old or the new file,
//! never a half-written one, and two jobs appending at once take turns, so no entry is lost.

use std::io::Write;
use std::path::{Path, PathBuf};

use super::{Entry, new_entries, verify};
use crate::diag::{Diagnostic, Place};
use crate::manifest::Model;

/// Reads and verifies a ledger; a missing file is an empty ledger only when `missing_ok`.
pub fn read(path: &Path, missing_ok: bool) -> Result<Vec<Entry>, Diagnostic> {
    let shown = path.display().to_string();
    let text = match std::fs::read_to_string(path) {
        Ok(t) => t,
        Err(e) if missing_ok && e.kind() == std::io::ErrorKind::NotFound => return Ok(Vec::new()),
        Err(e) => {
            return Err(Diagnostic::file(
                &shown,
                format!("cannot read the ledger: {}", crate::input::io_reason(&e)),
            ));
        }
    };
    verify(&text).map_err(|b| {
        Diagnostic::at(
            &shown,
            Place {
                line: Some(b.line),
                column: None,
            },
            "(ledger)",
            b.message,
        )
        .with_help("the ledger is append-only; restore it from version control")
    })
}

fn lock_path(path: &Path) -> PathBuf {
    let mut name = path.file_name().unwrap_or_default().to_os_string();
    name.push(".lock");
    path.with_file_name(name)
}

/// Appends the evaluations in `models` that the ledger lacks; returns how many were added.
pub fn append(path: &Path, models: &[Model]) -> anyhow::Result<Result<usize, Diagnostic>> {
    use anyhow::Context as _;
    let lock = std::fs::OpenOptions::new()
        .create(true)
        .truncate(false)
        .write(true)
        .open(lock_path(path))
        .with_context(|| format!("cannot open the lock file for {}", path.display()))?;
    lock.lock()
        .with_context(|| format!("cannot lock {}", path.display()))?;
    let existing = match read(path, true) {
        Ok(entries) => entries,
        Err(d) => return Ok(Err(d)),
    };
    let added = new_entries(&existing, models);
    if added.is_empty() {
        return Ok(Ok(0));
    }
    let mut text = std::fs::read(path).or_else(|e| {
        if e.kind() == std::io::ErrorKind::NotFound {
            Ok(Vec::new())
        } else {
            Err(e)
        }
    })?;
    for entry in &added {
        text.extend_from_slice(super::line(entry).as_bytes());
    }
    let tmp = path.with_file_name(format!(
        ".{}.{}.tmp",
        path.file_name().unwrap_or_default().to_string_lossy(),
        std::process::id()
    ));
    {
        let mut file = std::fs::File::create(&tmp)
            .with_context(|| format!("cannot write {}", tmp.display()))?;
        file.write_all(&text)?;
        file.sync_all()?;
    }
    std::fs::rename(&tmp, path).with_context(|| format!("cannot replace {}", path.display()))?;
    if let Some(dir) = path.parent().filter(|d| !d.as_os_str().is_empty()) {
        // Make the rename itself durable.
        std::fs::File::open(dir).and_then(|d| d.sync_all()).ok();
    }
    lock.unlock().ok();
    Ok(Ok(added.len()))
}
