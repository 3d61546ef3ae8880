//! Resource harness: every input kind at 10× and 100× a realistic size, generated here in a
//! temporary directory, run through the real binary with a wall-clock limit.
//!
//! Each run must end (a hang is killed at the limit and fails the test) with the documented exit
//! code, and its peak resident memory, polled by the harness from /proc (VmHWM), must stay under
//! a bound. The times and peaks are printed (`cargo test --test resources -- --nocapture`) as a
//! report; no test asserts a time. The limit is a hang detector set far above any expected
//! run time on a slow shared machine with a debug build.
//!
//! Realistic sizes (common practice, no source): a check of 5 models, a search of 1,000
//! configurations of 5 folds, 10,000 test predictions and ids, a policy with 10 overrides.

// The harness prints its measurements: it reports, it does not time.
#![allow(clippy::unwrap_used, clippy::print_stderr)]

mod common;

use std::fmt::Write as _;
use std::path::Path;
use std::time::Duration;

use common::run_bounded;

/// A hang detector, not a timing: runs here take seconds.
const LIMIT: Duration = Duration::from_secs(600);

/// Peak memory bound for every run, in KiB. The streamed inputs hold one record at a time plus
/// compact columns (about 40 bytes a row at 1 M rows); whole documents at most a few times their
/// size; 1 GiB is far above both and far below what the unbounded readers reached (1.3–3.5 GB).
const PEAK_KIB: u64 = 1 << 20;

fn model(name: &str, extra_data: &str, extra: &str) -> String {
    format!(
        "  - name: {name}\n    task: binary\n    metric: accuracy\n    seed: 1\n    data:\n      \
         train_rows: 1000\n      test_rows: 1000\n      test_fingerprint: \"sha256:00\"\n{extra_data}    \
         holdout:\n      - {{time: 2026-11-20T10:00:00Z, score: 0.75, correct: 750}}\n{extra}    \
         claim: {{value: 0.75, basis: test}}\n"
    )
}

fn write_manifest(dir: &Path, models: &[String]) {
    let mut text = String::from("format_version: 1\nmodels:\n");
    for m in models {
        text.push_str(m);
    }
    std::fs::write(dir.join("manifest.yaml"), text).unwrap();
}

/// One input kind scaled by `factor`; returns the arguments after `check`.
fn generate(kind: &str, factor: usize, dir: &Path) -> Vec<String> {
    let mut args = vec!["--today".to_owned(), "2026-12-01".to_owned()];
    match kind {
        "manifest" => {
            let models: Vec<String> = (0..5 * factor)
                .map(|i| model(&format!("m{i}"), "", ""))
                .collect();
            write_manifest(dir, &models);
        }
        "policy" => {
            write_manifest(dir, &[model("m0", "", "")]);
            let mut policy = String::from("format_version: 1\noverrides:\n");
            for i in 0..10 * factor {
                let _ = writeln!(
                    policy,
                    "  - models: [\"m{i}-*\"]\n    rules:\n      fold_size: {{min_rows: 20}}"
                );
            }
            std::fs::write(dir.join("policy.yaml"), &policy).unwrap();
            std::fs::write(dir.join("base-policy.yaml"), &policy).unwrap();
            args.extend(
                [
                    "--policy",
                    "policy.yaml",
                    "--base-policy",
                    "base-policy.yaml",
                ]
                .map(String::from),
            );
        }
        "trials" => {
            let trials = 1000 * factor;
            let mut csv = String::from("id,fold_1,fold_2,fold_3,fold_4,fold_5\n");
            for i in 0..trials {
                let s = (i % 97) as f64 / 100.0;
                let _ = writeln!(csv, "cfg-{i},{s},{s},{s},{s},{s}");
            }
            std::fs::write(dir.join("trials.csv"), csv).unwrap();
            let search = format!(
                "    search:\n      method: random\n      configurations: {trials}\n      \
                 trials_file: trials.csv\n      cv:\n        scheme: k_fold\n        folds:\n{}",
                "          - {rows: 200, score: 0.75}\n".repeat(5)
            );
            write_manifest(dir, &[model("m0", "", &search)]);
        }
        "predictions" | "ids" => {
            let rows = 10_000 * factor;
            if kind == "predictions" {
                let mut csv = String::from("id,label,prediction\n");
                for i in 0..rows {
                    let _ = writeln!(csv, "row-{i:08},{},{}", i % 2, (i / 3) % 2);
                }
                std::fs::write(dir.join("predictions.csv"), csv).unwrap();
                let predictions = "    predictions:\n      file: predictions.csv\n";
                write_manifest(dir, &[model("m0", "", predictions)]);
            } else {
                let mut train = String::new();
                let mut test = String::new();
                for i in 0..rows {
                    let _ = writeln!(train, "2026-11-29/plant-A/row-{i:08}");
                    let _ = writeln!(test, "2026-11-30/plant-B/row-{i:08}");
                }
                std::fs::write(dir.join("train.txt"), train).unwrap();
                std::fs::write(dir.join("test.txt"), test).unwrap();
                let ids = "      train_ids_file: train.txt\n      test_ids_file: test.txt\n";
                write_manifest(dir, &[model("m0", ids, "")]);
            }
        }
        "stdin" => {
            let models: Vec<String> = (0..5 * factor)
                .map(|i| model(&format!("m{i}"), "", ""))
                .collect();
            write_manifest(dir, &models);
        }
        _ => unreachable!(),
    }
    args.extend(["--json", "report.json", "--markdown", "report.md"].map(String::from));
    args.push(
        if kind == "stdin" {
            "-"
        } else {
            "manifest.yaml"
        }
        .to_owned(),
    );
    args
}

#[test]
fn every_input_kind_at_ten_and_a_hundred_times_a_realistic_size_ends_within_bounds() {
    let mut report = String::from("kind         factor  exit  seconds  peak MiB\n");
    for kind in [
        "manifest",
        "policy",
        "trials",
        "predictions",
        "ids",
        "stdin",
    ] {
        for factor in [10, 100] {
            let dir = tempfile::tempdir().unwrap();
            let mut args = vec!["check".to_owned()];
            args.extend(generate(kind, factor, dir.path()));
            let args: Vec<&str> = args.iter().map(String::as_str).collect();
            let stdin = (kind == "stdin").then(|| {
                std::process::Stdio::from(
                    std::fs::File::open(dir.path().join("manifest.yaml")).unwrap(),
                )
            });
            let run = run_bounded(dir.path(), &args, stdin, &[], LIMIT);
            let _ = writeln!(
                report,
                "{kind:<12} {factor:>6}  {:>4}  {:>7.1}  {:>8.1}",
                run.code.map_or("kill".to_owned(), |c| c.to_string()),
                run.elapsed.as_secs_f64(),
                run.peak_kib as f64 / 1024.0
            );
            // Every generated check is valid input; its claims are judged (0 or 1), never
            // refused, never unfinished.
            assert!(
                matches!(run.code, Some(0 | 1)),
                "{kind} ×{factor}: {}\n{report}",
                run.stderr
            );
            assert!(dir.path().join("report.json").exists(), "{kind} ×{factor}");
            assert!(
                run.peak_kib < PEAK_KIB,
                "{kind} ×{factor}: peak {} KiB\n{report}",
                run.peak_kib
            );
        }
    }
    eprintln!("{report}");
}
