//! Hostile inputs that are generated at run time rather than kept in `tests/bad-input/`: a file
//! over the size limit, 10,000 levels of nesting, an unreadable file; and the encodings a
//! training job on another platform may write (a UTF-8 byte-order mark, CRLF line endings), which
//! must be accepted and checked exactly like the plain file. Also: a crash never exits 0.

#![allow(clippy::unwrap_used)]

mod common;

use std::path::Path;
use std::process::Command;
use std::time::{Duration, Instant};

use common::{Report, stderr, vetscore};

const SUPPORTED: &str = "fixtures/scenarios/supported/manifest.yaml";

/// Runs `vetscore check` on one manifest and returns the exit code, stderr and the JSON report.
fn check(manifest: &Path, json: &Path) -> (Option<i32>, String) {
    let output = vetscore(&[
        "check",
        "--today",
        "2026-12-01",
        "--json",
        json.to_str().unwrap(),
        manifest.to_str().unwrap(),
    ]);
    (output.status.code(), stderr(&output))
}

/// Runs `vetscore check` on one invalid manifest: exit 2, and stderr holds `expected`.
fn rejects(manifest: &Path, expected: &str) {
    let start = Instant::now();
    let output = vetscore(&["check", manifest.to_str().unwrap()]);
    let elapsed = start.elapsed();
    let err = stderr(&output);
    assert_eq!(output.status.code(), Some(2), "{err}");
    assert!(err.contains(expected), "expected {expected:?} in:\n{err}");
    assert!(output.stdout.is_empty());
    // A generous bound that still catches an exponential parse (debug build, 2 slow cores).
    assert!(elapsed < Duration::from_secs(20), "took {elapsed:?}");
}

/// The verdicts and finding sentences of a report, without file paths and lines, which differ
/// between the copies.
fn report_without_paths(path: &Path) -> String {
    let report = Report::read(path);
    let models: Vec<String> = report
        .models
        .iter()
        .map(|m| {
            let findings: Vec<String> = m
                .findings
                .iter()
                .map(|f| format!("{} {} {}", f.rule, f.status, f.message))
                .collect();
            format!("{} {} {findings:?}", m.name, m.verdict)
        })
        .collect();
    format!("{} {models:?}", report.verdict)
}

fn accepted_like_the_plain_file(transform: impl Fn(&str) -> Vec<u8>, name: &str) {
    let dir = tempfile::tempdir().unwrap();
    let text = std::fs::read_to_string(common::root().join(SUPPORTED)).unwrap();
    let plain = dir.path().join("plain.yaml");
    std::fs::write(&plain, &text).unwrap();
    let variant = dir.path().join(name);
    let bytes = transform(&text);
    assert_ne!(
        bytes,
        text.as_bytes(),
        "the variant differs from the plain file"
    );
    std::fs::write(&variant, bytes).unwrap();
    let (plain_code, plain_err) = check(&plain, &dir.path().join("plain.json"));
    let (code, err) = check(&variant, &dir.path().join("variant.json"));
    // The supported scenario passes every rule (fixtures/scenarios/supported/expect.yaml).
    assert_eq!(plain_code, Some(0), "{plain_err}");
    assert_eq!(code, Some(0), "{name} was not accepted:\n{err}");
    assert_eq!(
        report_without_paths(&dir.path().join("variant.json")),
        report_without_paths(&dir.path().join("plain.json"))
    );
}

#[test]
fn a_utf8_byte_order_mark_is_accepted() {
    accepted_like_the_plain_file(|t| ["\u{feff}", t].concat().into_bytes(), "bom.yaml");
}

#[test]
fn crlf_line_endings_are_accepted() {
    accepted_like_the_plain_file(|t| t.replace('\n', "\r\n").into_bytes(), "crlf.yaml");
}

#[test]
fn a_json_manifest_with_bom_and_crlf_is_accepted() {
    accepted_like_the_plain_file(
        |t| {
            let value: serde_json::Value = serde_saphyr::from_str(t).unwrap();
            let json = serde_json::to_string_pretty(&value).unwrap();
            ["\u{feff}", &json.replace('\n', "\r\n")]
                .concat()
                .into_bytes()
        },
        "bom-crlf.json",
    );
}

#[test]
fn a_file_over_the_size_limit_is_refused_before_it_is_read() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("huge.yaml");
    let file = std::fs::File::create(&path).unwrap();
    // Sparse: 64 MiB + 1 byte of zeros without writing them.
    file.set_len(vetscore::opener::Kind::Manifest.max_bytes() + 1)
        .unwrap();
    rejects(
        &path,
        "it is 67108865 bytes; the limit for a manifest is 67108864 bytes",
    );
}

#[test]
fn ten_thousand_nested_arrays_are_refused_in_json_and_yaml() {
    let dir = tempfile::tempdir().unwrap();
    let nested = format!("{}{}", "[".repeat(10_000), "]".repeat(10_000));
    let cases = [
        (
            "deep.json",
            format!("{{\"format_version\": 1, \"metadata\": {{\"x\": {nested}}}, \"models\": []}}"),
        ),
        (
            "deep.yaml",
            format!("format_version: 1\nmetadata:\n  x: {nested}\nmodels: []\n"),
        ),
    ];
    for (name, text) in cases {
        let path = dir.path().join(name);
        std::fs::write(&path, text).unwrap();
        rejects(&path, "the document exceeds the limit on nesting depth");
    }
}

#[test]
fn a_wide_alias_expansion_is_refused() {
    // Each level holds 10 aliases of the one before: 10^9 strings if expanded.
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("laughs.yaml");
    let mut text = String::from("format_version: 1\nmetadata:\n  l0: &l0 [\"lol\"]\n");
    for level in 1..=9 {
        let row = vec![format!("*l{}", level - 1); 10].join(", ");
        text.push_str(&format!("  l{level}: &l{level} [{row}]\n"));
    }
    text.push_str("models: []\n");
    std::fs::write(&path, text).unwrap();
    rejects(&path, "the document exceeds the limit on nodes");
}

#[test]
#[allow(clippy::print_stderr)] // says in the test output why the case was skipped
fn an_unreadable_file_is_an_input_error() {
    use std::os::unix::fs::PermissionsExt;
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("locked.yaml");
    std::fs::copy(common::root().join(SUPPORTED), &path).unwrap();
    std::fs::set_permissions(&path, std::fs::Permissions::from_mode(0o000)).unwrap();
    if std::fs::read(&path).is_ok() {
        // Running as root (as CI does): permission bits do not stop reads, so the case cannot
        // be produced here. The message path is shared with "no such file" (io_reason).
        eprintln!("skipped: this user can read a mode-000 file");
        return;
    }
    rejects(&path, "locked.yaml: cannot read file: permission denied");
}

#[test]
fn a_crash_exits_101_with_the_crash_message_never_0() {
    let output = vetscore(&["crash-for-test"]);
    let err = stderr(&output);
    assert_eq!(output.status.code(), Some(101), "{err}");
    assert!(
        err.contains("vetscore crashed: this is a bug in vetscore, not a verdict on your models."),
        "{err}"
    );
}

#[test]
fn a_closed_stdout_is_a_failure_to_finish_not_a_crash_and_not_a_pass() {
    let (reader, writer) = std::io::pipe().unwrap();
    drop(reader);
    let output = Command::new(env!("CARGO_BIN_EXE_vetscore"))
        .args(["check", "--today", "2026-12-01", SUPPORTED])
        .current_dir(common::root())
        .env_remove("GITHUB_STEP_SUMMARY")
        .stdout(writer)
        .stderr(std::process::Stdio::piped())
        .output()
        .unwrap();
    let err = stderr(&output);
    assert_eq!(output.status.code(), Some(3), "{err}");
    assert!(
        err.contains("vetscore could not finish: writing the terminal summary"),
        "{err}"
    );
}

#[test]
fn a_file_name_cannot_forge_a_log_line() {
    // A line break in a file name would start a new CI log line, which GitHub Actions reads as a
    // workflow command (`::error ...::`); an escape character would drive the terminal.
    let dir = tempfile::tempdir().unwrap();
    let name = "run\n::error title=check::all claims supported\u{1b}[2K.yaml";
    std::fs::write(dir.path().join(name), "format_version: 1\nmodels: []\n").unwrap();
    let pattern = format!("{}/*.yaml", dir.path().display());
    let output = vetscore(&["check", &pattern]);
    let err = stderr(&output);
    assert_eq!(output.status.code(), Some(2), "{err}");
    assert!(!err.contains('\u{1b}'), "{err}");
    assert!(
        err.lines().all(|l| !l.starts_with("::")),
        "a line starts a workflow command:\n{err}"
    );
    assert!(err.contains("run\\n::error title=check::all claims supported\\u{1b}[2K.yaml:2:9: models: expected at least one model"), "{err}");
}
