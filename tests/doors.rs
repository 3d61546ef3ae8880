//! One door in, one door out: every input kind through the opener (FIFOs, devices, sparse and
//! endless files, over-long lines and quoted records) and every output path through the console
//! (forged workflow commands, invisible characters, closed and broken standard output).
//!
//! Each run is bounded by a child-process time limit far above its expected time; the limit
//! catches a hang, it times nothing.

#![allow(clippy::unwrap_used)]

mod common;

use std::path::Path;
use std::time::Duration;

use common::{Bounded, is_workflow_command, run_bounded};

const LIMIT: Duration = Duration::from_secs(60);

/// A small valid check: one model whose manifest names a trials file, a predictions file and
/// two id lists, plus a policy and a base policy. Each test replaces one of the files.
fn scenario(dir: &Path) {
    let manifest = "format_version: 1\nmodels:\n  - name: door-model\n    task: binary\n    \
        metric: accuracy\n    data:\n      train_rows: 8\n      test_rows: 4\n      \
        test_fingerprint: \"sha256:00\"\n      train_ids_file: train.txt\n      \
        test_ids_file: test.txt\n    search:\n      method: random\n      configurations: 2\n      \
        trials_file: trials.csv\n      cv:\n        scheme: k_fold\n        folds:\n          \
        - {rows: 4, score: 0.75}\n          - {rows: 4, score: 0.5}\n    holdout:\n      \
        - {time: 2026-11-20T10:00:00Z, score: 0.75, correct: 3}\n    predictions:\n      \
        file: predictions.csv\n      classes: [a, b]\n    claim: {value: 0.75, basis: test}\n";
    std::fs::write(dir.join("manifest.yaml"), manifest).unwrap();
    std::fs::write(
        dir.join("trials.csv"),
        "id,fold_1,fold_2\nc1,0.75,0.5\nc2,0.5,0.5\n",
    )
    .unwrap();
    std::fs::write(
        dir.join("predictions.csv"),
        "id,label,prediction\nr1,a,a\nr2,b,b\nr3,a,a\nr4,b,a\n",
    )
    .unwrap();
    std::fs::write(dir.join("train.txt"), "t1\nt2\nt3\nt4\nt5\nt6\nt7\nt8\n").unwrap();
    std::fs::write(dir.join("test.txt"), "r1\nr2\nr3\nr4\n").unwrap();
    std::fs::write(dir.join("policy.yaml"), "format_version: 1\n").unwrap();
    std::fs::write(dir.join("base-policy.yaml"), "format_version: 1\n").unwrap();
}

fn check(dir: &Path, extra: &[&str]) -> Bounded {
    let mut args = vec![
        "check",
        "--today",
        "2026-12-01",
        "--policy",
        "policy.yaml",
        "--base-policy",
        "base-policy.yaml",
    ];
    args.extend_from_slice(extra);
    args.push("manifest.yaml");
    run_bounded(dir, &args, None, &[], LIMIT)
}

/// The run ended with exit 2 and a message naming `file` and holding `expected`.
fn refused(run: &Bounded, file: &str, expected: &str) {
    assert_eq!(run.code, Some(2), "{run:?}");
    let line = run
        .stderr
        .lines()
        .find(|l| l.starts_with(&format!("error: {file}")))
        .unwrap_or_else(|| panic!("no error naming {file}:\n{}", run.stderr));
    assert!(line.contains(expected), "expected {expected:?} in {line:?}");
}

/// The files each input kind is read from, and what `check` calls it.
const KINDS: &[(&str, &str)] = &[
    ("manifest.yaml", "manifest"),
    ("policy.yaml", "policy"),
    ("base-policy.yaml", "policy"),
    ("trials.csv", "trials file"),
    ("predictions.csv", "predictions file"),
    ("train.txt", "id list"),
    ("test.txt", "id list"),
];

#[test]
fn the_scenario_itself_is_accepted() {
    let dir = tempfile::tempdir().unwrap();
    scenario(dir.path());
    let run = check(dir.path(), &[]);
    // The fingerprint "sha256:00" does not match the predictions, so the claim is not
    // supported (exit 1); what matters here is that every file was read.
    assert!(matches!(run.code, Some(0 | 1)), "{run:?}");
}

#[cfg(unix)]
#[test]
fn a_fifo_in_place_of_any_input_is_refused_without_blocking() {
    for (name, kind) in KINDS {
        let dir = tempfile::tempdir().unwrap();
        scenario(dir.path());
        let path = dir.path().join(name);
        std::fs::remove_file(&path).unwrap();
        let made = std::process::Command::new("mkfifo")
            .arg(&path)
            .status()
            .unwrap();
        assert!(made.success());
        let run = check(dir.path(), &[]);
        // No writer ever opens the FIFO: a blocking open would hang until the time limit.
        assert!(run.code.is_some(), "{name} blocked: {run:?}");
        let shown = if *kind == "manifest" || kind.ends_with("policy") {
            (*name).to_owned()
        } else {
            format!("./{name}")
        };
        let shown = if run.stderr.contains(&format!("error: {shown}")) {
            shown
        } else {
            (*name).to_owned()
        };
        refused(
            &run,
            &shown,
            "it is a named pipe (FIFO); only regular files are read",
        );
        assert!(run.stderr.contains(kind), "{name}: {}", run.stderr);
    }
}

/// The ledger and the base report, given on the command line, as FIFOs.
#[cfg(unix)]
#[test]
fn a_fifo_ledger_or_base_report_is_refused_without_blocking() {
    for (option, kind) in [("--ledger", "ledger"), ("--baseline", "base report")] {
        let dir = tempfile::tempdir().unwrap();
        scenario(dir.path());
        let made = std::process::Command::new("mkfifo")
            .arg(dir.path().join("fifo"))
            .status()
            .unwrap();
        assert!(made.success());
        let run = check(dir.path(), &[option, "fifo"]);
        refused(
            &run,
            "fifo",
            &if kind == "ledger" {
                "the ledger is a named pipe (FIFO); it must be a regular file".to_owned()
            } else {
                format!("cannot read the {kind}: it is a named pipe (FIFO)")
            },
        );
    }
    let dir = tempfile::tempdir().unwrap();
    let made = std::process::Command::new("mkfifo")
        .arg(dir.path().join("fifo"))
        .status()
        .unwrap();
    assert!(made.success());
    let run = run_bounded(
        dir.path(),
        &["ledger", "verify", "--ledger", "fifo"],
        None,
        &[],
        LIMIT,
    );
    refused(
        &run,
        "fifo",
        "the ledger is a named pipe (FIFO); it must be a regular file",
    );
}

#[cfg(unix)]
#[test]
fn a_symlink_to_an_endless_device_is_refused() {
    for (name, _) in KINDS {
        let dir = tempfile::tempdir().unwrap();
        scenario(dir.path());
        let path = dir.path().join(name);
        std::fs::remove_file(&path).unwrap();
        std::os::unix::fs::symlink("/dev/zero", &path).unwrap();
        // With the root at `/` the symlink is inside it, so the opener is what refuses it.
        let run = check(dir.path(), &["--root", "/"]);
        assert_eq!(run.code, Some(2), "{name}: {run:?}");
        assert!(
            run.stderr
                .contains("it is a device; only regular files are read"),
            "{name}: {}",
            run.stderr
        );
    }
}

/// A sparse file: `len` bytes of zeros without writing them.
fn sparse(path: &Path, prefix: &[u8], len: u64) {
    let mut file = std::fs::File::create(path).unwrap();
    std::io::Write::write_all(&mut file, prefix).unwrap();
    file.set_len(len).unwrap();
}

#[test]
fn two_gigabyte_sparse_predictions_and_id_files_end_at_the_line_limit() {
    for (name, prefix) in [
        (
            "predictions.csv",
            b"id,label,prediction\nr1,a,a\n".as_slice(),
        ),
        ("test.txt", b"r1\nr2\n".as_slice()),
        ("train.txt", b"t1\n".as_slice()),
        ("trials.csv", b"id,fold_1,fold_2\n".as_slice()),
    ] {
        let dir = tempfile::tempdir().unwrap();
        scenario(dir.path());
        // Under each kind's size limit (4 GiB; 1 GiB for trials), so the record limit stops it.
        let len = if name == "trials.csv" {
            1 << 29
        } else {
            2_000_000_000
        };
        sparse(&dir.path().join(name), prefix, len);
        let run = check(dir.path(), &[]);
        assert_eq!(run.code, Some(2), "{name}: {run:?}");
        let line = prefix.iter().filter(|&&b| b == b'\n').count() + 1;
        let expected = format!(":{line}: ");
        let message = format!("line {line} is longer than 1048576 bytes");
        assert!(
            run.stderr
                .lines()
                .any(|l| l.contains(name) && l.contains(&expected) && l.contains(&message)),
            "{name}: {}",
            run.stderr
        );
    }
}

#[test]
fn files_over_their_kind_limit_are_refused_before_reading() {
    // 400 MB manifest and policy (limits 64 MiB and 16 MiB), a 5 GiB predictions file (4 GiB).
    for (name, len, limit) in [
        ("manifest.yaml", 400_000_000u64, 64u64 << 20),
        ("policy.yaml", 400_000_000, 16 << 20),
        ("predictions.csv", 5 << 30, 4 << 30),
        ("trials.csv", 1_200_000_000, 1 << 30),
    ] {
        let dir = tempfile::tempdir().unwrap();
        scenario(dir.path());
        sparse(&dir.path().join(name), b"", len);
        let run = check(dir.path(), &[]);
        assert_eq!(run.code, Some(2), "{name}: {run:?}");
        assert!(
            run.stderr
                .contains(&format!("it is {len} bytes; the limit for a")),
            "{name}: {}",
            run.stderr
        );
        assert!(run.stderr.contains(&format!("is {limit} bytes")));
    }
}

#[test]
fn a_quoted_record_over_many_lines_cannot_pass_the_record_limit() {
    // One quoted id cell of 3,000 lines × 999 bytes: 3 MB in a single CSV record.
    let cell = format!("\"{}\"", vec!["x".repeat(999); 3000].join("\n"));
    for (name, header) in [
        ("predictions.csv", "id,label,prediction\n"),
        ("trials.csv", "id,fold_1,fold_2\n"),
    ] {
        let dir = tempfile::tempdir().unwrap();
        scenario(dir.path());
        std::fs::write(dir.path().join(name), format!("{header}{cell},a,a\n")).unwrap();
        let run = check(dir.path(), &[]);
        assert_eq!(run.code, Some(2), "{name}: {run:?}");
        assert!(
            run.stderr.contains(&format!("{name}:2: "))
                && run.stderr.contains(
                    "the record starting on line 2 is longer than 1048576 bytes \
                     (a quoted field runs on over line breaks)"
                ),
            "{name}: {}",
            run.stderr
        );
    }
}

#[test]
fn a_manifest_is_read_from_standard_input_and_named_stdin() {
    let dir = tempfile::tempdir().unwrap();
    scenario(dir.path());
    let file = std::fs::File::open(dir.path().join("manifest.yaml")).unwrap();
    let run = run_bounded(
        dir.path(),
        &["check", "--today", "2026-12-01", "--json", "out.json", "-"],
        Some(file.into()),
        &[],
        LIMIT,
    );
    assert!(matches!(run.code, Some(0 | 1)), "{run:?}");
    let report: serde_json::Value =
        serde_json::from_slice(&std::fs::read(dir.path().join("out.json")).unwrap()).unwrap();
    assert_eq!(report["models"][0]["file"], "<stdin>");

    // A broken manifest on standard input is named <stdin> with its line.
    let bad = dir.path().join("bad.yaml");
    std::fs::write(&bad, "format_version: 1\nmodels:\n  - name: [\n").unwrap();
    let run = run_bounded(
        dir.path(),
        &["check", "-"],
        Some(std::fs::File::open(&bad).unwrap().into()),
        &[],
        LIMIT,
    );
    assert_eq!(run.code, Some(2), "{run:?}");
    assert!(run.stderr.starts_with("error: <stdin>:"), "{}", run.stderr);
}

#[test]
fn standard_input_past_its_limit_is_refused() {
    let dir = tempfile::tempdir().unwrap();
    let big = dir.path().join("big.yaml");
    sparse(&big, b"format_version: 1\n#", 17 << 20);
    let run = run_bounded(
        dir.path(),
        &["check", "-"],
        Some(std::fs::File::open(&big).unwrap().into()),
        &[],
        LIMIT,
    );
    assert_eq!(run.code, Some(2), "{run:?}");
    assert!(
        run.stderr
            .contains("<stdin>: cannot read: it passed the limit for a manifest of 16777216 bytes"),
        "{}",
        run.stderr
    );
}

// ---- the door out ----

/// Every line either run wrote, on both streams.
fn lines(run: &Bounded) -> impl Iterator<Item = &str> {
    run.stdout.lines().chain(run.stderr.lines())
}

/// A model name, a claim text and trained_at carrying forged commands and invisible
/// characters, through the terminal summary, diagnostics, and `--json -`.
#[test]
fn forged_workflow_commands_are_inert_on_every_path() {
    let forged = [
        "::error file=src/main.rs,line=1::forged",
        "  ::stop-commands::pwned",
        "x ##[set-output name=verdict]supported",
        "y ##vso[task.setvariable variable=ok]true",
    ];
    for text in forged {
        let dir = tempfile::tempdir().unwrap();
        scenario(dir.path());
        let manifest = std::fs::read_to_string(dir.path().join("manifest.yaml")).unwrap();
        let quoted = serde_json::to_string(&format!("{text}\u{202e}")).unwrap();
        // The model name reaches the summary and --json -.
        let named = manifest.replace("name: door-model", &format!("name: {quoted}"));
        std::fs::write(dir.path().join("manifest.yaml"), &named).unwrap();
        for extra in [&[][..], &["--json", "-"][..], &["--markdown", "-"][..]] {
            let run = check(dir.path(), extra);
            assert!(matches!(run.code, Some(0 | 1)), "{run:?}");
            for line in lines(&run) {
                assert!(!is_workflow_command(line), "{extra:?}: {line:?}");
                assert!(!line.contains('\u{202e}'), "{extra:?}: {line:?}");
            }
        }
        // trained_at and a trial cell reach diagnostics.
        let dated = manifest.replace(
            "    data:\n",
            &format!("    trained_at: {quoted}\n    data:\n"),
        );
        std::fs::write(dir.path().join("manifest.yaml"), &dated).unwrap();
        std::fs::write(
            dir.path().join("trials.csv"),
            format!(
                "id,fold_1,fold_2\n{},0.75,{}\n",
                text.replace(',', ";"),
                text.replace(',', ";")
            ),
        )
        .unwrap();
        let run = check(dir.path(), &[]);
        assert_eq!(run.code, Some(2), "{run:?}");
        for line in lines(&run) {
            assert!(!is_workflow_command(line), "{line:?}");
        }
    }
}

#[cfg(unix)]
#[test]
fn a_file_name_with_a_forged_command_is_inert_in_diagnostics() {
    let dir = tempfile::tempdir().unwrap();
    scenario(dir.path());
    let name = "::error::x\n::stop-commands::y ##[group]z.yaml";
    std::fs::write(dir.path().join(name), "format_version: [\n").unwrap();
    let run = run_bounded(dir.path(), &["check", name], None, &[], LIMIT);
    assert_eq!(run.code, Some(2), "{run:?}");
    for line in lines(&run) {
        assert!(!is_workflow_command(line), "{line:?}");
    }
}

/// Under GITHUB_ACTIONS=true the only command lines are vetscore's own annotations, one per
/// blocking finding or input problem, each a well-formed `::error file=…::` whose properties
/// hold no unescaped `:` or `,` from the untrusted file name.
#[test]
fn github_annotations_point_at_the_file_and_escape_untrusted_text() {
    let dir = tempfile::tempdir().unwrap();
    scenario(dir.path());
    let name = "a,line=99::b.yaml";
    std::fs::write(
        dir.path().join(name),
        "format_version: 1\nmodels:\n  - name: x\n    task: binary\n    metric: nonsense\n",
    )
    .unwrap();
    let run = run_bounded(
        dir.path(),
        &["check", name],
        None,
        &[("GITHUB_ACTIONS", "true")],
        LIMIT,
    );
    assert_eq!(run.code, Some(2), "{run:?}");
    let commands: Vec<&str> = lines(&run).filter(|l| is_workflow_command(l)).collect();
    assert!(!commands.is_empty(), "{}", run.stderr);
    for c in &commands {
        let rest = c
            .strip_prefix("::error file=a%2Cline=99%3A%3Ab.yaml,")
            .unwrap();
        let (properties, _message) = rest.split_once("::").unwrap();
        assert!(properties.starts_with("line="), "{c}");
    }

    // A failing finding is annotated at its model's manifest line.
    scenario(dir.path());
    let run = check_in_github(dir.path());
    assert_eq!(run.code, Some(1), "{run:?}");
    let annotation = lines(&run)
        .find(|l| l.starts_with("::error file=manifest.yaml,line=3,title=vetscore"))
        .unwrap_or_else(|| panic!("{}", run.stderr));
    assert!(annotation.contains("(door-model)::"), "{annotation}");
    assert_eq!(
        lines(&run).filter(|l| is_workflow_command(l)).count(),
        lines(&run)
            .filter(|l| l.starts_with("::error ") || l.starts_with("::warning "))
            .count()
    );
}

fn check_in_github(dir: &Path) -> Bounded {
    run_bounded(
        dir,
        &["check", "--today", "2026-12-01", "manifest.yaml"],
        None,
        &[("GITHUB_ACTIONS", "true")],
        LIMIT,
    )
}

#[test]
fn markdown_and_json_both_on_standard_output_is_a_usage_error() {
    let dir = tempfile::tempdir().unwrap();
    scenario(dir.path());
    let run = check(dir.path(), &["--markdown", "-", "--json", "-"]);
    assert_eq!(run.code, Some(2), "{run:?}");
    assert!(run.stdout.is_empty());
    assert!(
        run.stderr
            .contains("--markdown - and --json - would both write to standard output")
    );
}

/// Runs a shell command line with the binary as `$0`, for redirections Rust cannot express.
#[cfg(unix)]
fn shell(dir: &Path, script: &str, args: &[&str]) -> std::process::Output {
    std::process::Command::new("sh")
        .arg("-c")
        .arg(script)
        .arg(env!("CARGO_BIN_EXE_vetscore"))
        .args(args)
        .current_dir(dir)
        .env_remove("GITHUB_ACTIONS")
        .output()
        .unwrap()
}

#[cfg(unix)]
#[test]
fn a_report_that_could_not_be_written_is_exit_3() {
    let dir = tempfile::tempdir().unwrap();
    scenario(dir.path());
    let check = ["check", "--today", "2026-12-01"];
    // Rust's runtime reopens a closed standard output on /dev/null before `main`, so `>&-`
    // looks like `>/dev/null` to any Rust program; a standard output open only for reading
    // is the closed stream vetscore can see (every write fails with EBADF).
    let read_only = "exec \"$0\" \"$@\" 1</dev/null";
    for report in ["--markdown", "--json"] {
        let mut args = check.to_vec();
        args.extend([report, "-", "manifest.yaml"]);
        let out = shell(dir.path(), read_only, &args);
        assert_eq!(out.status.code(), Some(3), "{report}: {out:?}");
        assert!(String::from_utf8_lossy(&out.stderr).contains("vetscore could not finish"));
        // Standard output on a full device.
        let out = shell(dir.path(), "exec \"$0\" \"$@\" >/dev/full", &args);
        assert_eq!(out.status.code(), Some(3), "{report}: {out:?}");
        assert!(
            String::from_utf8_lossy(&out.stderr).contains("No space left on device"),
            "{out:?}"
        );
    }
    // The terminal summary of a plain check, too.
    let mut args = check.to_vec();
    args.push("manifest.yaml");
    let out = shell(dir.path(), read_only, &args);
    assert_eq!(out.status.code(), Some(3), "{out:?}");
    // A report file that cannot be created names the file.
    let mut args = check.to_vec();
    args.extend(["--json", "no/such/dir/report.json", "manifest.yaml"]);
    let out = shell(dir.path(), "exec \"$0\" \"$@\"", &args);
    assert_eq!(out.status.code(), Some(3), "{out:?}");
    assert!(String::from_utf8_lossy(&out.stderr).contains("cannot write no/such/dir/report.json"));
}

#[cfg(unix)]
#[test]
fn a_broken_pipe_ends_a_listing_quietly_but_a_report_loudly() {
    let dir = tempfile::tempdir().unwrap();
    scenario(dir.path());
    let broken = |args: &[&str]| {
        let (reader, writer) = std::io::pipe().unwrap();
        // The reader is gone before vetscore writes a byte: every write is EPIPE.
        drop(reader);
        std::process::Command::new(env!("CARGO_BIN_EXE_vetscore"))
            .args(args)
            .current_dir(dir.path())
            .env_remove("GITHUB_ACTIONS")
            .stdout(writer)
            .output()
            .unwrap()
    };
    for listing in [
        &["explain"][..],
        &["schema", "manifest"][..],
        &["plan", "--rows", "100"][..],
    ] {
        let out = broken(listing);
        assert_eq!(out.status.code(), Some(0), "{listing:?}: {out:?}");
        assert!(out.stderr.is_empty(), "{listing:?}: {out:?}");
    }
    let out = broken(&[
        "check",
        "--today",
        "2026-12-01",
        "--json",
        "-",
        "manifest.yaml",
    ]);
    assert_eq!(out.status.code(), Some(3), "{out:?}");
}

#[test]
fn colour_follows_the_color_option() {
    let dir = tempfile::tempdir().unwrap();
    scenario(dir.path());
    let run = check(dir.path(), &["--color", "always"]);
    assert!(run.stdout.contains("\u{1b}["), "{run:?}");
    let run = check(dir.path(), &["--color", "never"]);
    assert!(!run.stdout.contains('\u{1b}'), "{run:?}");
    // auto: standard output is a pipe here, so no colour.
    let run = check(dir.path(), &[]);
    assert!(!run.stdout.contains('\u{1b}'), "{run:?}");
}

// ---- loops that depend on floating-point progress ----

#[test]
fn trials_whose_means_differ_by_one_subnormal_do_not_hang() {
    // 1,023 trials with mean 0 and one with mean 5e-324 (fold scores 1e-323 and 0): the
    // histogram's bin width underflowed to 0 and its range never grew (issue 12, item 1). The
    // selected configuration must be one of the trials, so its folds score 0 like trial c0.
    let dir = tempfile::tempdir().unwrap();
    scenario(dir.path());
    let mut csv = String::from("id,fold_1,fold_2\n");
    for i in 0..1023 {
        csv.push_str(&format!("c{i},0,0\n"));
    }
    csv.push_str("last,1e-323,0\n");
    std::fs::write(dir.path().join("trials.csv"), csv).unwrap();
    let manifest = std::fs::read_to_string(dir.path().join("manifest.yaml"))
        .unwrap()
        .replace("configurations: 2", "configurations: 1024")
        .replace("{rows: 4, score: 0.75}", "{rows: 4, score: 0.0}")
        .replace("{rows: 4, score: 0.5}", "{rows: 4, score: 0.0}");
    std::fs::write(dir.path().join("manifest.yaml"), manifest).unwrap();
    let run = check(dir.path(), &[]);
    assert!(matches!(run.code, Some(0 | 1)), "{run:?}");
}

#[test]
fn a_very_long_model_name_is_cut_in_the_summary() {
    // 70,000 characters: the summary padded to `{name:<width$}` and panicked past 65,535.
    let dir = tempfile::tempdir().unwrap();
    scenario(dir.path());
    let long = "n".repeat(70_000);
    let manifest = std::fs::read_to_string(dir.path().join("manifest.yaml"))
        .unwrap()
        .replace("name: door-model", &format!("name: {long}"));
    std::fs::write(dir.path().join("manifest.yaml"), manifest).unwrap();
    let run = check(dir.path(), &[]);
    assert!(matches!(run.code, Some(0 | 1)), "{run:?}");
    // Two spaces, 40 characters of name, then the claim and verdict.
    let line = run.stdout.lines().next().unwrap();
    assert!(
        line.starts_with(&format!("  {}…  claim", "n".repeat(39))),
        "{line}"
    );
}

// ---- strict evidence ----

#[test]
fn blank_cells_duplicate_columns_and_control_characters_in_ids_are_refused() {
    // Each case: the predictions file, then the message and place expected.
    let cases = [
        (
            "id,label,prediction\nr1,a,a\nr2,,b\nr3,a,a\nr4,b,a\n",
            "predictions.csv:3:2: label: expected a class in the label column, found an empty cell",
        ),
        (
            "id,label,prediction\nr1,a,a\nr2,b,b\nr3,a, \nr4,b,a\n",
            "predictions.csv:4:3: prediction: expected a class in the prediction column, found an empty cell",
        ),
        (
            "id,label,prediction,prediction\nr1,a,a,b\n",
            "predictions.csv:1:4: (header): the column \"prediction\" appears twice",
        ),
        (
            "id,label,id,prediction\nr1,a,r9,a\n",
            "predictions.csv:1:3: (header): the column \"id\" appears twice",
        ),
        (
            "id,label,prediction\nr1,a,a\n\"r2\nr3\",b,b\nr4,b,a\n",
            "predictions.csv:3:1: id: an id must not contain a line break, tab or other control character",
        ),
    ];
    for (text, expected) in cases {
        let dir = tempfile::tempdir().unwrap();
        scenario(dir.path());
        std::fs::write(dir.path().join("predictions.csv"), text).unwrap();
        let run = check(dir.path(), &[]);
        assert_eq!(run.code, Some(2), "{text:?}: {run:?}");
        assert!(run.stderr.contains(expected), "{text:?}: {}", run.stderr);
    }
    let dir = tempfile::tempdir().unwrap();
    scenario(dir.path());
    std::fs::write(dir.path().join("test.txt"), "r1\nr2\tr3\nr4\n").unwrap();
    let run = check(dir.path(), &[]);
    assert_eq!(run.code, Some(2), "{run:?}");
    assert!(
        run.stderr.contains(
            "test.txt:2:3: (id): an id must not contain a line break, tab or other control character"
        ),
        "{}",
        run.stderr
    );
}

// ---- messages (issue 12, item 15) ----

#[test]
fn parser_messages_speak_to_the_manifest_author() {
    let dir = tempfile::tempdir().unwrap();
    scenario(dir.path());
    let manifest = std::fs::read_to_string(dir.path().join("manifest.yaml")).unwrap();
    let cases = [
        // YAML 1.1 booleans are strings to the JSON Schema, so the parser refuses them too.
        (
            manifest.replace("basis: test}", "basis: test, beats_baseline: yes}"),
            "invalid boolean: expected true or false, found `yes`",
        ),
        (
            manifest.replace("name: door-model", "name: ~"),
            "manifest.yaml:3:11: expected a value, found nothing (null)",
        ),
        (
            manifest.replace("train_rows: 8", "train_rows: [8]"),
            "expected a single value, found a list",
        ),
        (
            format!("{manifest}---\nformat_version: 1\n"),
            "the file holds more than one YAML document",
        ),
    ];
    for (text, expected) in cases {
        std::fs::write(dir.path().join("manifest.yaml"), &text).unwrap();
        let run = check(dir.path(), &[]);
        assert_eq!(run.code, Some(2), "{run:?}");
        assert!(run.stderr.contains(expected), "{expected}: {}", run.stderr);
        for internal in [
            "from_str_multiple",
            "Option<String>",
            "string scalar",
            "strict mode",
        ] {
            assert!(!run.stderr.contains(internal), "{}", run.stderr);
        }
    }
}

#[test]
fn a_manifest_path_with_a_bracket_is_taken_literally_when_it_exists() {
    let dir = tempfile::tempdir().unwrap();
    scenario(dir.path());
    std::fs::rename(
        dir.path().join("manifest.yaml"),
        dir.path().join("run[1].yaml"),
    )
    .unwrap();
    let run = run_bounded(
        dir.path(),
        &["check", "--today", "2026-12-01", "run[1].yaml"],
        None,
        &[],
        LIMIT,
    );
    assert!(matches!(run.code, Some(0 | 1)), "{run:?}");
}

#[test]
fn a_margin_no_split_can_reach_is_refused() {
    let dir = tempfile::tempdir().unwrap();
    let run = run_bounded(
        dir.path(),
        &["plan", "--margin", "1e-300"],
        None,
        &[],
        LIMIT,
    );
    assert_eq!(run.code, Some(2), "{run:?}");
    assert!(!run.stdout.contains("18446744073709551615"));
    assert!(
        run.stderr
            .contains("needs more than 9007199254740992 rows, the most a manifest can state"),
        "{}",
        run.stderr
    );
}

#[test]
fn quoted_numbers_and_booleans_are_refused_with_the_type_expected() {
    // `train_rows: "100"` was read as 100 (and, in an earlier version, refused as "expected
    // string scalar"); the JSON Schema rejects it, so the parser does too.
    let dir = tempfile::tempdir().unwrap();
    scenario(dir.path());
    let manifest = std::fs::read_to_string(dir.path().join("manifest.yaml")).unwrap();
    let quoted = manifest
        .replace("train_rows: 8", "train_rows: \"8\"")
        .replace("basis: test}", "basis: test, beats_baseline: 'false'}");
    std::fs::write(dir.path().join("manifest.yaml"), quoted).unwrap();
    let run = check(dir.path(), &[]);
    // Line 7 is `      train_rows: "8"`: the quote is the 19th character.
    refused(
        &run,
        "manifest.yaml:7:19",
        "models[0].data.train_rows: expected a number, found the string \"8\"; write it without quotes",
    );
    assert!(
        run.stderr.contains(
            "models[0].claim.beats_baseline: expected a boolean (true or false), found the string \"false\""
        ),
        "{}",
        run.stderr
    );
}

#[test]
fn an_over_long_trials_jsonl_line_is_reported_at_its_line() {
    // An over-long trials line was reported at line 0.
    let dir = tempfile::tempdir().unwrap();
    scenario(dir.path());
    let manifest = std::fs::read_to_string(dir.path().join("manifest.yaml"))
        .unwrap()
        .replace("trials.csv", "trials.jsonl");
    std::fs::write(dir.path().join("manifest.yaml"), manifest).unwrap();
    let long = "x".repeat(2 << 20);
    std::fs::write(
        dir.path().join("trials.jsonl"),
        format!(
            "{{\"id\": \"c1\", \"fold_scores\": [0.75, 0.5]}}\n{{\"id\": \"{long}\", \"fold_scores\": [0.5, 0.5]}}\n"
        ),
    )
    .unwrap();
    let run = check(dir.path(), &[]);
    refused(
        &run,
        "trials.jsonl:2:",
        "line 2 is longer than 1048576 bytes",
    );
}

#[test]
fn the_node_limit_help_blames_aliases_only_where_there_are_some() {
    // serde-saphyr's node budget is 250,000 values (docs/manifest.md); 300,000 metadata values
    // exceed it with no alias in the file, and a few aliases of a 1,000-value list exceed it by
    // expansion.
    let dir = tempfile::tempdir().unwrap();
    scenario(dir.path());
    let manifest = std::fs::read_to_string(dir.path().join("manifest.yaml")).unwrap();
    let plain = format!(
        "{manifest}metadata:\n  values: [{}]\n",
        vec!["1"; 300_000].join(", ")
    );
    std::fs::write(dir.path().join("manifest.yaml"), &plain).unwrap();
    let run = check(dir.path(), &[]);
    refused(
        &run,
        "manifest.yaml",
        "the document exceeds the limit on nodes",
    );
    assert!(
        run.stderr
            .contains("help: split the models over several manifests"),
        "{}",
        run.stderr
    );
    assert!(!run.stderr.contains("aliases (`&a`"), "{}", run.stderr);
    let list = vec!["1"; 1_000].join(", ");
    let aliases = vec!["*l"; 300].join(", ");
    let aliased = format!("{manifest}metadata:\n  list: &l [{list}]\n  copies: [{aliases}]\n");
    std::fs::write(dir.path().join("manifest.yaml"), &aliased).unwrap();
    let run = check(dir.path(), &[]);
    assert_eq!(run.code, Some(2), "{run:?}");
    assert!(
        run.stderr
            .contains("anchors and aliases (`&a`, `*a`) can expand"),
        "{}",
        run.stderr
    );
}

#[cfg(unix)]
#[test]
fn a_report_path_that_is_a_pipe_is_refused_not_replaced() {
    // The atomic rename replaced whatever stood at the report path; as root, `--json /dev/full`
    // turned the device into a regular file. A FIFO stands in for the device here.
    use std::os::unix::fs::FileTypeExt as _;
    let dir = tempfile::tempdir().unwrap();
    scenario(dir.path());
    let fifo = dir.path().join("report.json");
    let made = std::process::Command::new("mkfifo")
        .arg(&fifo)
        .status()
        .unwrap();
    assert!(made.success());
    let run = check(dir.path(), &["--json", "report.json"]);
    assert_eq!(run.code, Some(3), "{run:?}");
    assert!(
        run.stderr
            .contains("cannot write report.json: it is not a regular file"),
        "{}",
        run.stderr
    );
    assert!(
        std::fs::symlink_metadata(&fifo)
            .unwrap()
            .file_type()
            .is_fifo()
    );
}

#[test]
fn invisible_characters_and_github_references_in_names_are_inert() {
    // A right-to-left override, a zero-width space, an issue reference and a commit id in a
    // model name: the terminal shows the invisible characters by code point, and in the
    // Markdown comment no `#123` or bare 40-hex word remains for GitHub to link.
    let commit = "0123456789abcdef0123456789abcdef01234567";
    let name = format!("fix\u{202e}txt.exe\u{200b} #123 {commit}");
    let dir = tempfile::tempdir().unwrap();
    scenario(dir.path());
    let manifest = std::fs::read_to_string(dir.path().join("manifest.yaml"))
        .unwrap()
        .replace(
            "name: door-model",
            &format!("name: {}", serde_json::to_string(&name).unwrap()),
        );
    std::fs::write(dir.path().join("manifest.yaml"), manifest).unwrap();
    let run = check(dir.path(), &[]);
    assert!(matches!(run.code, Some(0 | 1)), "{run:?}");
    assert!(
        run.stdout.contains("fix<U+202E>txt.exe<U+200B>"),
        "{}",
        run.stdout
    );
    let run = check(dir.path(), &["--markdown", "-"]);
    assert!(matches!(run.code, Some(0 | 1)), "{run:?}");
    let markdown = &run.stdout;
    // The Markdown escapes the dot and shows the two characters by code point.
    assert!(
        markdown.contains("fix&lt;U\\+202E&gt;txt\\.exe&lt;U\\+200B&gt;"),
        "{markdown}"
    );
    for raw in ['\u{202e}', '\u{200b}'] {
        assert!(!markdown.contains(raw), "{raw:?} in {markdown}");
    }
    assert!(!markdown.contains("#123"), "{markdown}");
    assert!(!markdown.contains(commit), "{markdown}");
}
