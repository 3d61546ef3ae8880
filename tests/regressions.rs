//! Replays every input kept under `tests/regressions/<target>/` through the fuzz target of the
//! same name (the harness in `fuzz/harness.rs` is compiled into this test), so a crash the fuzzer
//! once found stays fixed. The files are the fuzzer's own artifacts: the first byte selects the
//! variant (JSON or YAML, CSV or JSON Lines), the rest is the input.

#![allow(clippy::unwrap_used)]

#[path = "../fuzz/harness.rs"]
mod harness;

use std::path::Path;

fn replay(target: &str, run: fn(&[u8])) -> usize {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/regressions")
        .join(target);
    let mut files: Vec<_> = std::fs::read_dir(&dir)
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.is_file() && p.file_name().is_some_and(|n| n != ".gitkeep"))
        .collect();
    files.sort();
    for file in &files {
        let data = std::fs::read(file).unwrap();
        let result = std::panic::catch_unwind(|| run(&data));
        assert!(result.is_ok(), "{} still fails", file.display());
    }
    files.len()
}

#[test]
fn manifest_regressions() {
    replay("manifest", harness::manifest);
}

#[test]
fn policy_regressions() {
    replay("policy", harness::policy);
}

#[test]
fn trials_regressions() {
    replay("trials", harness::trials);
}

#[test]
fn markdown_regressions() {
    replay("markdown", harness::markdown);
}
