//! The comment budget (`--max-chars`, the step summary): at 1 to 5,000 models the Markdown stays
//! under its limit, lists failing models first and says what it left out and where the full
//! report is.

#![allow(clippy::unwrap_used)]

mod common;

use std::path::Path;
use std::process::Command;

use common::{root, stderr};

/// Manifests per file: well under the manifest's node limit.
const PER_FILE: usize = 500;

/// Odd models claim 0.40 (not supported), even ones 0.31 (supported): see
/// [`common::quince_model`].
fn model(i: usize) -> String {
    let claim = if i % 2 == 1 { "0.40" } else { "0.31" };
    common::quince_model(
        &format!("quince-sorter-{i:05}"),
        &format!("quince-{i}"),
        claim,
    )
}

fn write_manifests(dir: &Path, models: usize) {
    std::fs::create_dir_all(dir.join("runs")).unwrap();
    for (f, start) in (0..models).step_by(PER_FILE).enumerate() {
        let mut text = String::from("format_version: 1\nmodels:\n");
        for i in start..models.min(start + PER_FILE) {
            text.push_str(&model(i));
        }
        std::fs::write(dir.join(format!("runs/run-{f:03}.yaml")), text).unwrap();
    }
}

fn run(dir: &Path, extra: &[&str], summary: Option<&Path>) -> std::process::Output {
    let mut command = Command::new(env!("CARGO_BIN_EXE_vetscore"));
    command
        .args(["check", "--today", "2026-12-01", "--root"])
        .arg(dir)
        .args(extra)
        .arg(dir.join("runs/*.yaml"))
        .current_dir(root())
        .env_remove("NO_COLOR");
    match summary {
        Some(path) => command.env("GITHUB_STEP_SUMMARY", path),
        None => command.env_remove("GITHUB_STEP_SUMMARY"),
    };
    command.output().unwrap()
}

fn utf16_len(text: &str) -> usize {
    text.encode_utf16().count()
}

#[test]
fn the_comment_fits_at_every_size_and_says_what_it_left_out() {
    for models in [1usize, 5, 50, 500, 5000] {
        let dir = tempfile::tempdir().unwrap();
        write_manifests(dir.path(), models);
        let (md, full, json) = (
            dir.path().join("report.md"),
            dir.path().join("report-full.md"),
            dir.path().join("report.json"),
        );
        // The largest run also appends to a step summary that holds an earlier step's text
        // (one run of 5,000 models is the slow part of this test, so it checks both).
        let summary = dir.path().join("summary.md");
        let earlier = "Earlier step's summary without a final line break";
        std::fs::write(&summary, earlier).unwrap();
        let out = run(
            dir.path(),
            &[
                "--markdown",
                md.to_str().unwrap(),
                "--markdown-full",
                full.to_str().unwrap(),
                "--json",
                json.to_str().unwrap(),
            ],
            (models == 5000).then_some(summary.as_path()),
        );
        if models == 5000 {
            let text = std::fs::read_to_string(&summary).unwrap();
            // GitHub's limit is 1 MiB per step summary; the report uses most of what is left.
            assert!(text.len() <= 1_000_000, "{}", text.len());
            assert!(text.len() > 900_000, "{}", text.len());
            assert!(text.starts_with(&format!("{earlier}\n<!-- vetscore:report -->\n")));
            assert!(text.ends_with('\n'));
            assert!(
                text.contains("\nTo fit in 999"),
                "the summary says what it left out"
            );
        }
        let expected_code = if models == 1 { 0 } else { 1 };
        assert_eq!(out.status.code(), Some(expected_code), "{}", stderr(&out));
        let text = std::fs::read_to_string(&md).unwrap();
        let whole = std::fs::read_to_string(&full).unwrap();
        assert!(text.starts_with("<!-- vetscore:report -->\n"), "{models}");
        assert!(text.ends_with('\n') && whole.ends_with('\n'), "{models}");
        assert!(utf16_len(&text) <= 65_000, "{models}: {}", utf16_len(&text));
        // Every model is in the full report.
        assert_eq!(whole.matches("\n| quince\\-sorter\\-").count(), models);
        let failing = models / 2;
        if whole == text {
            assert!(models <= 5, "{models} models should not fit whole");
            continue;
        }
        // Failing models come first: the first table row is a failing (odd) model.
        let first_row = text.lines().find(|l| l.starts_with("| quince")).unwrap();
        assert!(
            first_row.ends_with("| not supported |"),
            "{models}: {first_row}"
        );
        let rows = text.matches("\n| quince\\-sorter\\-").count();
        let details = text.matches("\n### quince\\-sorter\\-").count();
        assert!(
            details <= failing,
            "{models}: supported models lose details first"
        );
        let note = text
            .lines()
            .find(|l| l.starts_with("To fit in 65000 characters"))
            .unwrap_or_else(|| panic!("{models}: no line says what was left out"));
        assert!(note.contains(&format!(
            "the details of {} of {models} models are left out",
            models - details
        )));
        if rows < models {
            assert!(note.contains(&format!("{} models are not listed", models - rows)));
        }
        assert!(
            note.contains("report\\-full\\.md and report\\.json"),
            "{note}"
        );
    }
}

#[test]
fn a_limit_below_the_minimum_is_a_usage_error() {
    let dir = tempfile::tempdir().unwrap();
    write_manifests(dir.path(), 1);
    let out = run(dir.path(), &["--max-chars", "100"], None);
    assert_eq!(out.status.code(), Some(2));
    assert!(stderr(&out).contains("--max-chars"));
}
