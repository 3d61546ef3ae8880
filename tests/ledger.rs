//! The holdout ledger: idempotent appends, tamper detection naming the broken entry, appends from
//! concurrent processes that lose nothing, appends killed mid-way that corrupt nothing, and the
//! holdout budget counting ledger entries.

#![allow(clippy::unwrap_used)]

mod common;

use std::path::Path;
use std::process::{Command, Stdio};

use common::{Report, stderr, stdout, vetscore};

fn bin() -> Command {
    let mut c = Command::new(env!("CARGO_BIN_EXE_vetscore"));
    c.current_dir(common::root());
    c
}

/// A manifest with one model and `looks` scorings of the test split `fingerprint`.
fn manifest(dir: &Path, name: &str, fingerprint: &str, looks: usize) -> String {
    let holdout: String = (0..looks)
        .map(|i| {
            format!(
                "      - {{time: 2026-11-01T{:02}:{:02}:00Z, score: 0.5}}\n",
                i / 60,
                i % 60
            )
        })
        .collect();
    let text = format!(
        "format_version: 1\nmodels:\n  - name: {name}\n    task: binary\n    metric: accuracy\n    \
         data: {{train_rows: 100, test_rows: 100, test_fingerprint: \"{fingerprint}\"}}\n    \
         search:\n      method: grid\n      configurations: 2\n      cv:\n        scheme: k_fold\n        \
         folds:\n          - {{rows: 50, score: 0.5}}\n          - {{rows: 50, score: 0.5}}\n    \
         holdout:\n{holdout}    claim: {{value: 0.5, basis: test}}\n"
    );
    let path = dir.join(format!("{name}.yaml"));
    std::fs::write(&path, text).unwrap();
    path.to_string_lossy().into_owned()
}

fn lines(path: &Path) -> Vec<String> {
    std::fs::read_to_string(path)
        .unwrap()
        .lines()
        .map(str::to_owned)
        .collect()
}

#[test]
fn appending_twice_records_each_evaluation_once() {
    let dir = tempfile::tempdir().unwrap();
    let ledger = dir.path().join("ledger.jsonl");
    let ledger = ledger.to_str().unwrap();
    let first = vetscore(&[
        "ledger",
        "append",
        "--ledger",
        ledger,
        "fixtures/demo/manifests/*",
    ]);
    assert_eq!(first.status.code(), Some(0), "{}", stderr(&first));
    // The demo manifests record 2 + 1 + 4 + 1 + 1 = 9 holdout evaluations.
    assert!(stdout(&first).contains("9 new entries"));
    let again = vetscore(&[
        "ledger",
        "append",
        "--ledger",
        ledger,
        "fixtures/demo/manifests/*",
    ]);
    assert!(stdout(&again).contains("0 new entries"));
    assert_eq!(lines(Path::new(ledger)).len(), 9);
    let verify = vetscore(&["ledger", "verify", "--ledger", ledger]);
    assert_eq!(verify.status.code(), Some(0));
    assert!(stdout(&verify).contains("9 entries, hash chain intact"));
}

#[test]
fn a_tampered_middle_entry_is_rejected_by_name() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("ledger.jsonl");
    let ledger = path.to_str().unwrap();
    vetscore(&[
        "ledger",
        "append",
        "--ledger",
        ledger,
        "fixtures/demo/manifests/*",
    ]);
    let original = lines(&path);

    // Change the score of entry 5 and leave its hash alone.
    let mut edited = original.clone();
    let mut entry: serde_json::Value = serde_json::from_str(&edited[4]).unwrap();
    entry["score"] = serde_json::json!(0.99);
    edited[4] = entry.to_string();
    std::fs::write(&path, edited.join("\n") + "\n").unwrap();
    let out = vetscore(&["ledger", "verify", "--ledger", ledger]);
    assert_eq!(out.status.code(), Some(2));
    assert!(
        stderr(&out).contains(":5: (ledger): entry 5 does not match its own hash"),
        "{}",
        stderr(&out)
    );

    // Remove entry 5 altogether: entry 6 now sits at position 5.
    let mut removed = original.clone();
    removed.remove(4);
    std::fs::write(&path, removed.join("\n") + "\n").unwrap();
    let out = vetscore(&["ledger", "verify", "--ledger", ledger]);
    assert_eq!(out.status.code(), Some(2));
    assert!(
        stderr(&out).contains(":5: (ledger): entry 6 is at position 5"),
        "{}",
        stderr(&out)
    );

    // A check that counts a tampered ledger is refused, not run.
    std::fs::write(&path, edited.join("\n") + "\n").unwrap();
    let out = vetscore(&[
        "check",
        "--ledger",
        ledger,
        "fixtures/scenarios/supported/manifest.yaml",
    ]);
    assert_eq!(out.status.code(), Some(2));
}

#[test]
fn concurrent_appends_from_several_processes_lose_nothing() {
    let dir = tempfile::tempdir().unwrap();
    let ledger = dir.path().join("ledger.jsonl");
    let writers = 8;
    let looks = 25;
    let children: Vec<_> = (0..writers)
        .map(|w| {
            let m = manifest(
                dir.path(),
                &format!("writer-{w}"),
                &format!("fp-{w}"),
                looks,
            );
            bin()
                .args(["ledger", "append", "--ledger", ledger.to_str().unwrap(), &m])
                .stdout(Stdio::null())
                .spawn()
                .unwrap()
        })
        .collect();
    for mut child in children {
        assert!(child.wait().unwrap().success());
    }
    assert_eq!(lines(&ledger).len(), writers * looks);
    let verify = vetscore(&["ledger", "verify", "--ledger", ledger.to_str().unwrap()]);
    assert_eq!(verify.status.code(), Some(0), "{}", stderr(&verify));
}

#[test]
fn an_append_killed_midway_leaves_the_old_or_the_new_ledger() {
    let dir = tempfile::tempdir().unwrap();
    let ledger = dir.path().join("ledger.jsonl");
    let ledger_arg = ledger.to_str().unwrap().to_owned();
    let mut recorded = 0;
    for round in 0..12u64 {
        let m = manifest(dir.path(), &format!("round-{round}"), "fp-shared", 400);
        let mut child = bin()
            .args(["ledger", "append", "--ledger", &ledger_arg, &m])
            .stdout(Stdio::null())
            .spawn()
            .unwrap();
        std::thread::sleep(std::time::Duration::from_millis(round * 3));
        child.kill().ok();
        child.wait().unwrap();
        let verify = vetscore(&["ledger", "verify", "--ledger", &ledger_arg]);
        if ledger.exists() {
            assert_eq!(
                verify.status.code(),
                Some(0),
                "round {round}: {}",
                stderr(&verify)
            );
            let now = lines(&ledger).len();
            assert!(
                now == recorded || now == recorded + 400,
                "round {round}: {now} entries"
            );
            recorded = now;
        }
    }
}

#[test]
fn the_holdout_budget_counts_ledger_entries_from_earlier_runs() {
    let dir = tempfile::tempdir().unwrap();
    let ledger = dir.path().join("ledger.jsonl");
    let ledger = ledger.to_str().unwrap();
    let earlier = manifest(dir.path(), "earlier-run", "fp-reused", 2);
    vetscore(&["ledger", "append", "--ledger", ledger, &earlier]);
    let today = manifest(dir.path(), "todays-run", "fp-reused", 2);
    let json = dir.path().join("report.json");
    let args = [
        "check",
        "--today",
        "2026-12-01",
        "--json",
        json.to_str().unwrap(),
    ];
    // Alone, two looks fit the default budget of three.
    let mut alone = args.to_vec();
    alone.push(&today);
    vetscore(&alone);
    let report = Report::read(&json);
    assert_eq!(
        report.model("todays-run").finding("holdout_budget").status,
        "pass"
    );
    // With the ledger, the two earlier looks at the same split count too: four looks.
    let mut with_ledger = args.to_vec();
    with_ledger.extend(["--ledger", ledger, &today]);
    let out = vetscore(&with_ledger);
    assert_eq!(out.status.code(), Some(1), "{}", stderr(&out));
    let report = Report::read(&json);
    let finding = report.model("todays-run").finding("holdout_budget");
    assert_eq!(finding.status, "fail");
    assert_eq!(
        finding.evidence("looks").value.as_ref().unwrap().as_f64(),
        Some(4.0)
    );
}
