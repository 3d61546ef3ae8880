//! Inputs a merge request controls, at their worst: a `--root` that is gone, a base report that
//! is not a report or carries markup, and sizes that used to take quadratic time. Each test just
//! has to end with the documented exit code; none times anything.

#![allow(clippy::unwrap_used)]

mod common;

use common::{stderr, vetscore};

#[test]
fn a_root_that_cannot_be_resolved_confines_by_refusing() {
    // The library entry point, called with a root that does not exist: the file a manifest
    // names outside it must be refused, not read (the check's own --root is refused earlier).
    let dir = tempfile::tempdir().unwrap();
    let manifest = dir.path().join("manifest.yaml");
    let text = std::fs::read_to_string(
        common::root().join("tests/bad-input/trials-file-outside-root/manifest.yaml"),
    )
    .unwrap();
    std::fs::write(&manifest, text).unwrap();
    let problems = vetscore::manifest::load(&manifest, &dir.path().join("deleted")).unwrap_err();
    assert_eq!(problems.len(), 1, "{problems:?}");
    assert!(
        problems[0].to_string().contains("cannot be resolved"),
        "{}",
        problems[0]
    );
    // And `ledger append`, which loads manifests the same way.
    let out = vetscore(&[
        "ledger",
        "append",
        "--ledger",
        dir.path().join("l.jsonl").to_str().unwrap(),
        "--root",
        dir.path().join("deleted").to_str().unwrap(),
        manifest.to_str().unwrap(),
    ]);
    assert_eq!(out.status.code(), Some(2), "{}", stderr(&out));
    assert!(stderr(&out).contains("--root: the root directory"));
}
