//! Reading and appending the ledger file, safely under concurrency, crashes and planted links.
//!
//! Appends take an exclusive lock on the ledger's directory (a directory is never replaced, and
//! locking it leaves no file behind for git to show), read and verify the ledger, write the old
//! content plus the new entries to a new temporary file in the same directory, flush it to disk
//! and rename it over the ledger. A crash leaves either the old or the new file, never a
//! half-written one, and two jobs appending at once take turns, so no entry is lost.
//!
//! The temporary file is created exclusively (`O_CREAT | O_EXCL`, which never follows a symbolic
//! link) under a name with 64 random bits, so a link planted in the directory cannot redirect the
//! write. The ledger itself must be a regular file: a symbolic link is refused, never followed
//! nor replaced (replacing it would fork the chain from the file it pointed at).

use std::io::Write;
use std::path::{Path, PathBuf};

use super::{Entry, Head, extends, new_entries, verify};
use crate::diag::{Diagnostic, Place};
use crate::manifest::Model;

/// A ledger as a check read it.
#[derive(Debug, Clone, PartialEq)]
pub struct Loaded {
    pub entries: Vec<Entry>,
    /// The file did not exist, so the ledger is empty (a repository adopting vetscore).
    pub missing: bool,
}

/// Reads and verifies a ledger; a missing file is an empty ledger only when `missing_ok`.
pub fn read(path: &Path, missing_ok: bool) -> Result<Vec<Entry>, Diagnostic> {
    load(path, missing_ok).map(|(l, _)| l.entries)
}

/// Reads and verifies a ledger, then checks that it extends every trusted head given (each with
/// where it came from, for the message). A missing file is an empty ledger when `missing_ok`,
/// and an empty ledger extends only the head of an empty ledger.
pub fn read_anchored(
    path: &Path,
    missing_ok: bool,
    heads: &[(&str, &Head)],
) -> Result<Loaded, Diagnostic> {
    let (loaded, _) = load(path, missing_ok)?;
    for (source, head) in heads {
        extends(&loaded.entries, head).map_err(|b| {
            let message = if loaded.missing {
                format!(
                    "the ledger file does not exist, but the trusted head ({source}) has {} entries",
                    head.entries
                )
            } else {
                b.message
            };
            Diagnostic::at(
                &path.display().to_string(),
                Place {
                    line: (b.line > 0).then_some(b.line),
                    column: None,
                },
                "(ledger)",
                message,
            )
            .with_help(format!(
                "the ledger must extend the head {head} from {source}; restore it from the base branch"
            ))
        })?;
    }
    Ok(loaded)
}

/// The ledger's entries and its text as read.
fn load(path: &Path, missing_ok: bool) -> Result<(Loaded, String), Diagnostic> {
    let shown = path.display().to_string();
    let cannot = |e: &std::io::Error| {
        Diagnostic::file(
            &shown,
            format!("cannot read the ledger: {}", crate::input::io_reason(e)),
        )
    };
    match std::fs::symlink_metadata(path) {
        Err(e) if missing_ok && e.kind() == std::io::ErrorKind::NotFound => {
            let empty = Loaded {
                entries: Vec::new(),
                missing: true,
            };
            return Ok((empty, String::new()));
        }
        Err(e) => return Err(cannot(&e)),
        Ok(m) if !m.file_type().is_file() => return Err(not_regular(&shown, &m)),
        Ok(_) => {}
    }
    // Read through the one bounded opener: a regular file of at most 256 MiB, no record
    // (entry) longer than 1 MiB.
    let mut file = crate::opener::open(path, crate::opener::Kind::Ledger)
        .map_err(|reason| Diagnostic::file(&shown, format!("cannot read the ledger: {reason}")))?;
    let mut text = String::new();
    std::io::Read::read_to_string(&mut file, &mut text).map_err(|e| {
        Diagnostic::file(
            &shown,
            format!("cannot read the ledger: {}", crate::opener::read_reason(&e)),
        )
    })?;
    let entries = verify(&text).map_err(|b| {
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
    })?;
    let loaded = Loaded {
        entries,
        missing: false,
    };
    Ok((loaded, text))
}

fn not_regular(shown: &str, metadata: &std::fs::Metadata) -> Diagnostic {
    #[cfg(unix)]
    let fifo = std::os::unix::fs::FileTypeExt::is_fifo(&metadata.file_type());
    #[cfg(not(unix))]
    let fifo = false;
    let kind = if metadata.file_type().is_symlink() {
        "a symbolic link"
    } else if metadata.is_dir() {
        "a directory"
    } else if fifo {
        "a named pipe (FIFO)"
    } else {
        "a device or socket"
    };
    Diagnostic::file(
        shown,
        format!("the ledger is {kind}; it must be a regular file"),
    )
    .with_help("keep the ledger as a plain file committed in the repository")
}

/// The directory holding `path` (`.` for a bare file name).
fn directory(path: &Path) -> PathBuf {
    match path.parent() {
        Some(d) if !d.as_os_str().is_empty() => d.to_path_buf(),
        _ => PathBuf::from("."),
    }
}

/// Takes the append lock: the ledger's directory on Unix; elsewhere, where a directory cannot be
/// opened as a file, a companion `<ledger>.lock` file (which then stays behind).
fn lock(path: &Path) -> std::io::Result<std::fs::File> {
    #[cfg(unix)]
    let file = std::fs::File::open(directory(path))?;
    #[cfg(not(unix))]
    let file = {
        let mut name = path.file_name().unwrap_or_default().to_os_string();
        name.push(".lock");
        std::fs::OpenOptions::new()
            .create(true)
            .truncate(false)
            .write(true)
            .open(path.with_file_name(name))?
    };
    file.lock()?;
    Ok(file)
}

/// 64 bits no other process can predict: std's hasher keys come from the operating system's
/// random source, and the clock and process id vary them further.
fn random_suffix(attempt: u32) -> String {
    use std::hash::{BuildHasher, Hasher};
    let mut hasher = std::collections::hash_map::RandomState::new().build_hasher();
    hasher.write_u32(std::process::id());
    hasher.write_u32(attempt);
    if let Ok(t) = std::time::SystemTime::now().duration_since(std::time::UNIX_EPOCH) {
        hasher.write_u128(t.as_nanos());
    }
    format!("{:016x}", hasher.finish())
}

/// Creates a new temporary file beside `path`, exclusively; returns it with its path.
fn create_temporary(path: &Path) -> std::io::Result<(std::fs::File, PathBuf)> {
    let name = path.file_name().unwrap_or_default().to_string_lossy();
    let mut attempt = 0;
    loop {
        let tmp = path.with_file_name(format!(".{name}.{}.tmp", random_suffix(attempt)));
        match std::fs::OpenOptions::new()
            .write(true)
            .create_new(true)
            .open(&tmp)
        {
            Ok(file) => return Ok((file, tmp)),
            Err(e) if e.kind() == std::io::ErrorKind::AlreadyExists && attempt < 16 => {
                attempt += 1;
            }
            Err(e) => return Err(e),
        }
    }
}

/// Appends the evaluations in `models` that the ledger lacks; returns how many were added.
pub fn append(path: &Path, models: &[Model]) -> anyhow::Result<Result<usize, Diagnostic>> {
    use anyhow::Context as _;
    let lock = lock(path).with_context(|| format!("cannot lock the ledger {}", path.display()))?;
    let (existing, text) = match load(path, true) {
        Ok(read) => read,
        Err(d) => return Ok(Err(d)),
    };
    let added = new_entries(&existing.entries, models);
    if added.is_empty() {
        return Ok(Ok(0));
    }
    // The old bytes unchanged, then the new lines.
    let mut text = text.into_bytes();
    for entry in &added {
        text.extend_from_slice(super::line(entry).as_bytes());
    }
    let (mut file, tmp) = create_temporary(path)
        .with_context(|| format!("cannot create a temporary file beside {}", path.display()))?;
    let written = file
        .write_all(&text)
        .and_then(|()| file.sync_all())
        .with_context(|| format!("cannot write {}", tmp.display()))
        .and_then(|()| {
            std::fs::rename(&tmp, path)
                .with_context(|| format!("cannot replace {}", path.display()))
        });
    if written.is_err() {
        std::fs::remove_file(&tmp).ok();
    }
    written?;
    // Make the rename itself durable.
    std::fs::File::open(directory(path))
        .and_then(|d| d.sync_all())
        .ok();
    lock.unlock().ok();
    Ok(Ok(added.len()))
}
