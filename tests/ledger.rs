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

/// Appends the demo manifests' nine evaluations to a new ledger in `dir`; returns its path and
/// its head as `ledger head` prints it.
fn demo_ledger(dir: &Path) -> (std::path::PathBuf, String) {
    let path = dir.join("ledger.jsonl");
    let out = vetscore(&[
        "ledger",
        "append",
        "--ledger",
        path.to_str().unwrap(),
        "fixtures/demo/manifests/*",
    ]);
    assert_eq!(out.status.code(), Some(0), "{}", stderr(&out));
    let head = vetscore(&["ledger", "head", "--ledger", path.to_str().unwrap()]);
    assert_eq!(head.status.code(), Some(0), "{}", stderr(&head));
    (path, stdout(&head).trim().to_owned())
}

/// The ways a merge request can reset the holdout budget with a chain that is still whole: cut
/// entries off the end, empty the file, point at /dev/null, or edit an entry and recompute every
/// hash after it. Each is a valid chain on its own, so only a trusted head shows it.
fn tampered_ledgers(dir: &Path, original: &[String]) -> Vec<(&'static str, String)> {
    let cut = dir.join("cut.jsonl");
    std::fs::write(&cut, original[..6].join("\n") + "\n").unwrap();
    let empty = dir.join("empty.jsonl");
    std::fs::write(&empty, "").unwrap();
    // Entry 3's score lowered, and its hash and every later `prev` and `hash` recomputed.
    let mut entries: Vec<vetscore::ledger::Entry> = original
        .iter()
        .map(|l| serde_json::from_str(l).unwrap())
        .collect();
    entries[2].score = 0.01;
    for i in 2..entries.len() {
        if i > 0 {
            entries[i].prev = entries[i - 1].hash.clone();
        }
        entries[i].hash = entries[i].content_hash();
    }
    let rechained = dir.join("rechained.jsonl");
    let text: String = entries.iter().map(vetscore::ledger::line).collect();
    std::fs::write(&rechained, text).unwrap();
    let missing = dir.join("missing.jsonl");
    vec![
        ("cut off", cut.to_string_lossy().into_owned()),
        ("emptied", empty.to_string_lossy().into_owned()),
        ("/dev/null", "/dev/null".to_owned()),
        ("rechained", rechained.to_string_lossy().into_owned()),
        ("deleted", missing.to_string_lossy().into_owned()),
    ]
}

#[test]
fn a_ledger_that_does_not_extend_the_trusted_head_is_refused() {
    let dir = tempfile::tempdir().unwrap();
    let (path, head) = demo_ledger(dir.path());
    let original = lines(&path);
    assert!(head.starts_with("9:sha256:"), "{head}");

    // Without a head the rewritten ledgers pass verify: the chain alone cannot tell, and verify
    // says so.
    let cases = tampered_ledgers(dir.path(), &original);
    let rechained = &cases[3].1;
    let plain = vetscore(&["ledger", "verify", "--ledger", rechained]);
    assert_eq!(plain.status.code(), Some(0), "{}", stderr(&plain));
    assert!(stdout(&plain).contains("no trusted head given"));

    // The base branch's report records the head of the ledger its check read.
    let base = dir.path().join("base.json");
    let out = vetscore(&[
        "check",
        "--today",
        "2026-12-01",
        "--json",
        base.to_str().unwrap(),
        "--ledger",
        path.to_str().unwrap(),
        "fixtures/scenarios/supported/manifest.yaml",
    ]);
    assert_eq!(out.status.code(), Some(0), "{}", stderr(&out));
    let report = Report::read(&base);
    let recorded = report.ledger_head.as_ref().unwrap();
    assert_eq!(format!("{}:{}", recorded.entries, recorded.last_hash), head);
    assert!(!recorded.file_missing);

    for (what, ledger) in &cases {
        let verify = vetscore(&[
            "ledger",
            "verify",
            "--ledger",
            ledger,
            "--ledger-head",
            &head,
        ]);
        assert_eq!(
            verify.status.code(),
            Some(2),
            "verify, {what}: {}",
            stdout(&verify)
        );
        for anchor in [
            ["--ledger-head", head.as_str()],
            ["--baseline", base.to_str().unwrap()],
        ] {
            let check = vetscore(&[
                "check",
                "--today",
                "2026-12-01",
                "--ledger",
                ledger,
                anchor[0],
                anchor[1],
                "fixtures/scenarios/supported/manifest.yaml",
            ]);
            assert_eq!(check.status.code(), Some(2), "check {}, {what}", anchor[0]);
            // /dev/null is refused before its (empty) content is compared with the head.
            let why = stderr(&check);
            assert!(
                why.contains("trusted head") || why.contains("must be a regular file"),
                "{why}"
            );
        }
    }
    let rechained = vetscore(&[
        "ledger",
        "verify",
        "--ledger",
        rechained,
        "--ledger-head",
        &head,
    ]);
    assert!(
        stderr(&rechained)
            .contains(":9: (ledger): entry 9 is not the entry the trusted head ends with"),
        "{}",
        stderr(&rechained)
    );

    // A ledger that grew on the base branch after the head was taken extends it.
    let grown = manifest(dir.path(), "later-run", "fp-later", 2);
    vetscore(&[
        "ledger",
        "append",
        "--ledger",
        path.to_str().unwrap(),
        &grown,
    ]);
    let verify = vetscore(&[
        "ledger",
        "verify",
        "--ledger",
        path.to_str().unwrap(),
        "--ledger-head",
        &head,
    ]);
    assert_eq!(verify.status.code(), Some(0), "{}", stderr(&verify));
    assert!(stdout(&verify).contains("11 entries, hash chain intact; extends the trusted head 9:"));
}

#[test]
fn a_malformed_head_is_a_usage_error() {
    for bad in [
        "9",
        "x:sha256:00",
        "3:sha256:abc",
        &format!("0:sha256:{}", "1".repeat(64)),
    ] {
        let out = vetscore(&["ledger", "verify", "--ledger-head", bad]);
        assert_eq!(out.status.code(), Some(2), "{bad}: {}", stderr(&out));
        assert!(stderr(&out).contains("--ledger-head"), "{}", stderr(&out));
    }
}

#[test]
fn a_missing_ledger_is_an_empty_one_and_the_report_says_so() {
    let dir = tempfile::tempdir().unwrap();
    let missing = dir.path().join("vetscore-ledger.jsonl");
    let json = dir.path().join("report.json");
    let markdown = dir.path().join("report.md");
    let out = vetscore(&[
        "check",
        "--today",
        "2026-12-01",
        "--json",
        json.to_str().unwrap(),
        "--markdown",
        markdown.to_str().unwrap(),
        "--ledger",
        missing.to_str().unwrap(),
        "fixtures/scenarios/supported/manifest.yaml",
    ]);
    assert_eq!(out.status.code(), Some(0), "{}", stderr(&out));
    let head = Report::read(&json).ledger_head.unwrap();
    assert!(head.file_missing);
    assert_eq!(head.entries, 0);
    assert_eq!(head.last_hash, vetscore::ledger::GENESIS);
    let text = std::fs::read_to_string(&markdown).unwrap();
    assert!(
        text.contains("the file does not exist yet, so it counts as empty"),
        "{text}"
    );
    // The empty ledger's head is what `ledger head` prints for a missing file, and it is
    // extended by any ledger.
    let empty_head = vetscore(&["ledger", "head", "--ledger", missing.to_str().unwrap()]);
    assert_eq!(
        stdout(&empty_head).trim(),
        format!("0:{}", vetscore::ledger::GENESIS)
    );
    // verify is asked about a file: a missing one is still an error there.
    let verify = vetscore(&["ledger", "verify", "--ledger", missing.to_str().unwrap()]);
    assert_eq!(verify.status.code(), Some(2));
}

#[test]
fn append_leaves_no_lock_file_for_git_to_show() {
    let dir = tempfile::tempdir().unwrap();
    demo_ledger(dir.path());
    let names: Vec<String> = std::fs::read_dir(dir.path())
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    assert_eq!(names, vec!["ledger.jsonl".to_owned()]);
}

#[cfg(unix)]
#[test]
fn a_symlinked_ledger_is_refused_and_its_target_left_alone() {
    let dir = tempfile::tempdir().unwrap();
    let outside = tempfile::tempdir().unwrap();
    let victim = outside.path().join("victim.txt");
    std::fs::write(&victim, "keep me\n").unwrap();
    let link = dir.path().join("ledger.jsonl");
    std::os::unix::fs::symlink(&victim, &link).unwrap();
    let m = manifest(dir.path(), "linked", "fp-linked", 1);
    let out = vetscore(&["ledger", "append", "--ledger", link.to_str().unwrap(), &m]);
    assert_eq!(out.status.code(), Some(2), "{}", stderr(&out));
    assert!(
        stderr(&out).contains("the ledger is a symbolic link"),
        "{}",
        stderr(&out)
    );
    assert_eq!(std::fs::read_to_string(&victim).unwrap(), "keep me\n");
    assert!(
        std::fs::symlink_metadata(&link)
            .unwrap()
            .file_type()
            .is_symlink()
    );
    // Temporary files the old code would have used (`.<ledger>.<pid>.tmp`), planted as links to
    // the victim for every pid near this one, are never opened either.
    let real = dir.path().join("real.jsonl");
    let me = std::process::id();
    for pid in me..me + 200 {
        std::os::unix::fs::symlink(&victim, dir.path().join(format!(".real.jsonl.{pid}.tmp")))
            .unwrap();
    }
    let out = vetscore(&["ledger", "append", "--ledger", real.to_str().unwrap(), &m]);
    assert_eq!(out.status.code(), Some(0), "{}", stderr(&out));
    assert_eq!(std::fs::read_to_string(&victim).unwrap(), "keep me\n");
    assert_eq!(lines(&real).len(), 1);
}
