//! Replays every input kept under `tests/regressions/<target>/` through the fuzz target of the
//! same name (the harness in `fuzz/harness.rs` is compiled into this test), so a crash the fuzzer
//! once found stays fixed. The files are the fuzzer's own artifacts: the first byte selects the
//! variant (JSON or YAML, CSV or JSON Lines), the rest is the input.

#![allow(clippy::unwrap_used)]

#[path = "../fuzz/harness.rs"]
mod harness;

use std::path::Path;

/// Replays every kept input of `target`; returns how many there were.
fn replay(target: &str, run: fn(&[u8])) -> usize {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/regressions")
        .join(target);
    // Git keeps no empty folder: a target without kept inputs has none.
    let Ok(entries) = std::fs::read_dir(&dir) else {
        return 0;
    };
    let mut files: Vec<_> = entries
        .map(|e| e.unwrap().path())
        .filter(|p| p.is_file())
        .collect();
    files.sort();
    for file in &files {
        let data = std::fs::read(file).unwrap();
        let result = std::panic::catch_unwind(|| run(&data));
        assert!(result.is_ok(), "{} fails again", file.display());
    }
    files.len()
}

/// A fuzz target: its folder under `tests/regressions/` and its harness function.
type Target = (&'static str, fn(&[u8]));

#[test]
fn every_kept_crash_input_replays_cleanly() {
    let targets: [Target; 8] = [
        ("manifest", harness::manifest),
        ("policy", harness::policy),
        ("trials", harness::trials),
        ("markdown", harness::markdown),
        // Seeds rather than crashes: a real ledger and one cut mid-entry, a real base report
        // and one with markup in its verdicts, so the harness itself is exercised here.
        ("ledger", harness::ledger),
        ("base_report", harness::base_report),
        ("predictions", harness::predictions),
        ("ids", harness::ids),
    ];
    let replayed: usize = targets.iter().map(|(t, run)| replay(t, *run)).sum();
    // The two u64-overflow manifests (fixed in validate.rs) are kept at least.
    assert!(replayed >= 2, "only {replayed} kept inputs replayed");
}
