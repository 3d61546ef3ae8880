//! Writing an output file atomically: the whole new content or the old file, never a part.
//!
//! The content goes to a temporary file in the target's directory (so the rename stays on one
//! file system), created exclusively (`O_CREAT | O_EXCL`: a file or symlink planted under that
//! name is never followed or reused) under a name no one can guess in advance, is flushed to
//! disk, and is then renamed over the target. `rename` replaces a symlink at the target rather
//! than writing through it. Any failure removes the temporary file; the error names the target
//! (the caller adds it) and keeps the system's reason, such as "No space left on device".

use std::collections::hash_map::RandomState;
use std::hash::{BuildHasher, Hasher};
use std::io::Write;
use std::path::{Path, PathBuf};

/// An unpredictable name suffix: `RandomState` is seeded from the operating system's random
/// source for each process; the counter and the clock make two calls differ.
fn unpredictable() -> u64 {
    static CALLS: std::sync::atomic::AtomicU64 = std::sync::atomic::AtomicU64::new(0);
    let mut hasher = RandomState::new().build_hasher();
    hasher.write_u64(CALLS.fetch_add(1, std::sync::atomic::Ordering::Relaxed));
    hasher.write_u32(std::process::id());
    if let Ok(since) = std::time::SystemTime::now().duration_since(std::time::UNIX_EPOCH) {
        hasher.write_u128(since.as_nanos());
    }
    hasher.finish()
}

/// Writes `bytes` to `path` atomically (see the module docs).
pub fn write(path: &Path, bytes: &[u8]) -> std::io::Result<()> {
    let dir = match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => PathBuf::from("."),
    };
    let name = path
        .file_name()
        .map_or_else(|| "output".into(), |n| n.to_string_lossy().into_owned());
    let mut attempt = 0;
    let (tmp, mut file) = loop {
        let tmp = dir.join(format!(".{name}.{:016x}.tmp", unpredictable()));
        match std::fs::OpenOptions::new()
            .write(true)
            .create_new(true)
            .open(&tmp)
        {
            Ok(file) => break (tmp, file),
            Err(e) if e.kind() == std::io::ErrorKind::AlreadyExists && attempt < 8 => {
                attempt += 1;
            }
            Err(e) => return Err(e),
        }
    };
    let written = file
        .write_all(bytes)
        .and_then(|()| file.sync_all())
        .and_then(|()| std::fs::rename(&tmp, path));
    if written.is_err() {
        let _ = std::fs::remove_file(&tmp);
    }
    written
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn replaces_the_file_and_leaves_no_temporary_behind() {
        let dir = tempfile::tempdir().unwrap();
        let target = dir.path().join("report.md");
        std::fs::write(&target, "old").unwrap();
        write(&target, b"new").unwrap();
        assert_eq!(std::fs::read_to_string(&target).unwrap(), "new");
        let names: Vec<_> = std::fs::read_dir(dir.path()).unwrap().collect();
        assert_eq!(names.len(), 1);
    }

    #[cfg(unix)]
    #[test]
    fn a_symlink_at_the_target_is_replaced_not_followed() {
        let dir = tempfile::tempdir().unwrap();
        let victim = dir.path().join("victim");
        std::fs::write(&victim, "keep").unwrap();
        let target = dir.path().join("report.md");
        std::os::unix::fs::symlink(&victim, &target).unwrap();
        write(&target, b"report").unwrap();
        assert_eq!(std::fs::read_to_string(&victim).unwrap(), "keep");
        assert!(!std::fs::symlink_metadata(&target).unwrap().is_symlink());
    }

    #[test]
    fn names_differ_between_calls() {
        assert_ne!(unpredictable(), unpredictable());
    }
}
