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

/// A multiclass F1 model whose predictions file has `classes` classes, two rows each (the true
/// class, predicted right on the first row and as the next class on the second), and a
/// baseline file of the same rows.
fn many_classes(dir: &std::path::Path, classes: usize, policy: &str) -> Vec<String> {
    let mut predictions = String::from("id,label,prediction\n");
    let mut baseline = String::from("id,label,prediction\n");
    for c in 0..classes {
        let next = (c + 1) % classes;
        predictions.push_str(&format!("a{c},c{c},c{c}\nb{c},c{c},c{next}\n"));
        baseline.push_str(&format!("a{c},c{c},c{next}\nb{c},c{c},c{c}\n"));
    }
    std::fs::write(dir.join("predictions.csv"), predictions).unwrap();
    std::fs::write(dir.join("baseline.csv"), baseline).unwrap();
    let rows = 2 * classes;
    std::fs::write(
        dir.join("manifest.yaml"),
        format!(
            "format_version: 1\nmodels:\n  - name: many-classes\n    task: multiclass\n    \
             metric: f1\n    data: {{train_rows: {rows}, test_rows: {rows}, test_fingerprint: \"fp\"}}\n    \
             holdout:\n      - {{time: 2026-11-20T10:00:00Z, score: 0.5}}\n    \
             predictions: {{file: predictions.csv, f1_average: macro}}\n    \
             baseline: {{name: older, predictions_file: baseline.csv}}\n    \
             claim: {{value: 0.5, basis: test, beats_baseline: true}}\n"
        ),
    )
    .unwrap();
    std::fs::write(dir.join("policy.yaml"), policy).unwrap();
    [
        "check",
        "--today",
        "2026-12-01",
        "--root",
        dir.to_str().unwrap(),
        "--policy",
        dir.join("policy.yaml").to_str().unwrap(),
        "--json",
        dir.join("report.json").to_str().unwrap(),
        dir.join("manifest.yaml").to_str().unwrap(),
    ]
    .map(str::to_owned)
    .to_vec()
}

fn report_of(dir: &std::path::Path) -> serde_json::Value {
    serde_json::from_str(&std::fs::read_to_string(dir.join("report.json")).unwrap()).unwrap()
}

fn finding<'a>(report: &'a serde_json::Value, rule: &str) -> &'a serde_json::Value {
    report["models"][0]["findings"]
        .as_array()
        .unwrap()
        .iter()
        .find(|f| f["rule"] == rule)
        .unwrap()
}

#[test]
fn a_bootstrap_over_thousands_of_classes_is_refused_not_run_for_minutes() {
    // 4,096 classes in a 74 KB file: 16.8 M cells per resample; the F1 bootstrap took 423 s.
    let dir = tempfile::tempdir().unwrap();
    let args = many_classes(dir.path(), 4096, "format_version: 1\n");
    let argv: Vec<&str> = args.iter().map(String::as_str).collect();
    let out = vetscore(&argv);
    // The interval cannot be formed, so recompute is inconclusive: with the default
    // `inconclusive: fail` the claim is not supported (exit 1), never a pass.
    assert_eq!(out.status.code(), Some(1), "{}", stderr(&out));
    let report = report_of(dir.path());
    let recompute = finding(&report, "recompute");
    assert_eq!(recompute["status"], "inconclusive", "{recompute}");
    assert!(
        recompute["message"]
            .as_str()
            .unwrap()
            .contains("even 100 resamples pass the limit"),
        "{recompute}"
    );
}

#[test]
fn the_largest_resample_count_is_lowered_to_what_fits_and_the_report_says_so() {
    // 256 classes with `bootstrap_resamples: 1000000`: 6.6e10 cell draws, 288 s before. The
    // count used is the cap's share, 5e7 / 65,536 = 762 (arithmetic on the documented cap).
    let dir = tempfile::tempdir().unwrap();
    let policy = "format_version: 1\nbootstrap_resamples: 1000000\n";
    let args = many_classes(dir.path(), 256, policy);
    let argv: Vec<&str> = args.iter().map(String::as_str).collect();
    let out = vetscore(&argv);
    assert!(matches!(out.status.code(), Some(0 | 1)), "{}", stderr(&out));
    let report = report_of(dir.path());
    let basis = &report["models"][0]["test"]["basis"];
    assert_eq!(basis["method"]["resamples"], 762, "{basis}");
    // The paired bootstrap against the baseline is limited to 64 classes; its message says so.
    let paired = finding(&report, "baseline_improvement");
    assert!(
        paired["message"].as_str().unwrap().contains("64 classes"),
        "{paired}"
    );
}

#[test]
fn the_paired_bootstrap_names_the_resamples_it_used() {
    // 16 classes (4,096 cells of the joint table) afford the policy's 300: 1.2 M draws. (What
    // larger tables are lowered to is arithmetic, in the unit test beside the cap.)
    let dir = tempfile::tempdir().unwrap();
    let args = many_classes(
        dir.path(),
        16,
        "format_version: 1\nbootstrap_resamples: 300\n",
    );
    let argv: Vec<&str> = args.iter().map(String::as_str).collect();
    let out = vetscore(&argv);
    assert!(matches!(out.status.code(), Some(0 | 1)), "{}", stderr(&out));
    let report = report_of(dir.path());
    let paired = finding(&report, "baseline_improvement");
    let test = paired["evidence"]
        .as_array()
        .unwrap()
        .iter()
        .find(|e| e["key"] == "test")
        .unwrap();
    assert_eq!(
        test["value"], "paired bootstrap of the joint confusion table, 300 resamples",
        "{paired}"
    );
}

#[path = "../fuzz/harness.rs"]
mod harness;

/// The test-split-changed scenario's base report (a real report), edited by `edit`; returns the
/// exit code, standard error and the Markdown of a check against it.
fn against_base(edit: impl Fn(&mut serde_json::Value)) -> (Option<i32>, String, String) {
    let scenario = common::root().join("fixtures/scenarios/test-split-changed");
    let mut base: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(scenario.join("base-report.json")).unwrap())
            .unwrap();
    edit(&mut base);
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("base.json");
    std::fs::write(&path, base.to_string()).unwrap();
    let markdown = dir.path().join("report.md");
    let out = vetscore(&[
        "check",
        "--today",
        "2026-12-01",
        "--baseline",
        path.to_str().unwrap(),
        "--markdown",
        markdown.to_str().unwrap(),
        scenario.join("manifest.yaml").to_str().unwrap(),
    ]);
    let text = std::fs::read_to_string(&markdown).unwrap_or_default();
    (out.status.code(), stderr(&out), text)
}

const HOSTILE: &str = "<img src=x onerror=alert(1)> [link](https://example.invalid) @reviewers \
                       <!-- vetscore:report --> ![i](x)";

#[test]
fn a_base_report_cannot_inject_markup_into_the_comment() {
    // Names are free text in a report: a removed model with a hostile name is shown escaped.
    let (code, err, markdown) = against_base(|b| {
        let mut extra = b["models"][0].clone();
        extra["name"] = HOSTILE.into();
        b["models"].as_array_mut().unwrap().push(extra);
    });
    assert_eq!(code, Some(1), "{err}");
    assert!(markdown.contains("Model removed: "), "{markdown}");
    assert_eq!(markdown.matches("vetscore:report").count(), 1, "{markdown}");
    // Headings: the title, the "since the base branch" section and one per model (two), which
    // the harness counts as 1 + models.
    harness::assert_inert(&markdown, 3);

    // Verdicts, statuses and effects are the report's own words: anything else is refused.
    for field in [
        "verdict",
        "/models/0/verdict",
        "/models/0/findings/0/status",
    ] {
        let (code, err, markdown) = against_base(|b| {
            let target = if field == "verdict" {
                &mut b["verdict"]
            } else {
                b.pointer_mut(field).unwrap()
            };
            *target = HOSTILE.into();
        });
        assert_eq!(code, Some(2), "{field}: {err}");
        assert!(err.contains("not a vetscore JSON report"), "{field}: {err}");
        // Invalid inputs still write the "could not check" report; what it quotes is inert.
        assert!(
            markdown.starts_with("<!-- vetscore:report -->\n## vetscore: could not check\n"),
            "{markdown}"
        );
        for raw in ["<img", "](", "@reviewers", "<!-- vetscore:report --> !["] {
            assert!(
                !markdown.contains(raw),
                "{field}: {raw} survived:\n{markdown}"
            );
        }
    }
    // A finding's rule must be a rule id.
    let (code, err, _) = against_base(|b| b["models"][0]["findings"][0]["rule"] = HOSTILE.into());
    assert_eq!(code, Some(2), "{err}");
    assert!(err.contains("is not a rule id"), "{err}");
}

#[test]
fn a_base_report_of_another_version_is_refused_with_its_version() {
    let (code, err, _) = against_base(|b| b["report_version"] = 1.into());
    assert_eq!(code, Some(2), "{err}");
    assert!(err.contains("expected report version 2, found 1"), "{err}");
}

#[test]
fn the_base_report_check_agrees_with_the_jsonschema_crate() {
    // Reference: the jsonschema crate (0.61, a general-purpose validator) on the published
    // schema, for a real report and for mutations of it.
    let schema = serde_json::to_value(vetscore::report::schema()).unwrap();
    let reference = jsonschema::validator_for(&schema).unwrap();
    let base: serde_json::Value = serde_json::from_str(
        &std::fs::read_to_string(
            common::root().join("fixtures/scenarios/test-split-changed/base-report.json"),
        )
        .unwrap(),
    )
    .unwrap();
    let mutations: Vec<(&str, serde_json::Value)> = vec![
        ("", serde_json::Value::Null),
        ("/verdict", "fine".into()),
        ("/verdict", "supported".into()),
        ("/report_version", (-2).into()),
        ("/report_version", 1.5.into()),
        ("/models/0/findings/0/effect", "hides".into()),
        ("/models/0/findings/0/evidence/0/type", "text".into()),
        ("/models/0/test", serde_json::Value::Null),
        ("/models/0/test/rows", "many".into()),
        ("/models", serde_json::json!({})),
        ("/counts/models", 4294967296u64.into()),
        (
            "/ledger_head",
            serde_json::json!({"file": "l", "entries": 1}),
        ),
    ];
    for (at, value) in mutations {
        let mut report = base.clone();
        if at.is_empty() {
            report = value;
        } else {
            *report.pointer_mut(at).unwrap_or_else(|| panic!("{at}")) = value;
        }
        let ours = vetscore::report::schema_check::check(&schema, &report);
        assert_eq!(
            ours.is_empty(),
            reference.is_valid(&report),
            "{at}: ours {ours:?}"
        );
    }
}

/// One model scored `looks` times on test split `fingerprint`, as a manifest list item.
fn model_yaml(name: &str, fingerprint: &str, looks: usize) -> String {
    let holdout: String = (0..looks)
        .map(|i| {
            format!(
                "      - {{time: 2026-11-01T{:02}:{:02}:{:02}Z, score: 0.5}}\n",
                i / 3600,
                (i / 60) % 60,
                i % 60
            )
        })
        .collect();
    format!(
        "  - name: {name}\n    task: binary\n    metric: accuracy\n    \
         data: {{train_rows: 100, test_rows: 100, test_fingerprint: \"{fingerprint}\"}}\n    \
         holdout:\n{holdout}    claim: {{value: 0.5, basis: test}}\n"
    )
}

/// Writes `files` manifests of `per_file` models each, all on one test split; returns a glob.
fn many_models(dir: &std::path::Path, files: usize, per_file: usize) -> String {
    for f in 0..files {
        let models: String = (0..per_file)
            .map(|m| model_yaml(&format!("model-{f}-{m}"), "fp-shared", 1))
            .collect();
        std::fs::write(
            dir.join(format!("run-{f}.yaml")),
            format!("format_version: 1\nmodels:\n{models}"),
        )
        .unwrap();
    }
    format!("{}/run-*.yaml", dir.display())
}

#[test]
fn thousands_of_models_on_one_split_with_thousands_of_waivers_and_overrides_end() {
    // 3,000 models on one test split (each once sorted the names of all 3,000), judged under
    // 1,500 overrides and 1,500 waivers (each model was matched against every pattern, one at
    // a time). Only the end matters: every model blows the budget of 3 looks.
    let dir = tempfile::tempdir().unwrap();
    let pattern = many_models(dir.path(), 4, 750);
    let mut policy = String::from("format_version: 1\noverrides:\n");
    for i in 0..1500 {
        policy.push_str(&format!(
            "  - {{models: [\"model-{}-{}*\"], rules: {{holdout_budget: {{max_evaluations: 3}}}}}}\n",
            i % 4,
            i
        ));
    }
    policy.push_str("waivers:\n");
    for i in 0..1500 {
        policy.push_str(&format!(
            "  - {{rule: cv_test_gap, models: \"model-{}-{i}\", reason: \"reviewed\", expires: 2027-01-01}}\n",
            i % 4
        ));
    }
    let policy_path = dir.path().join("policy.yaml");
    std::fs::write(&policy_path, policy).unwrap();
    let json = dir.path().join("report.json");
    let out = vetscore(&[
        "check",
        "--today",
        "2026-12-01",
        "--policy",
        policy_path.to_str().unwrap(),
        "--json",
        json.to_str().unwrap(),
        &pattern,
    ]);
    assert_eq!(out.status.code(), Some(1), "{}", stderr(&out));
    let report: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&json).unwrap()).unwrap();
    let budget = finding(&report, "holdout_budget");
    let sharing = budget["evidence"]
        .as_array()
        .unwrap()
        .iter()
        .find(|e| e["key"] == "models_sharing")
        .unwrap();
    assert_eq!(sharing["value"].as_f64(), Some(3000.0));
}

#[test]
fn appending_forty_thousand_evaluations_ends() {
    // 40 models × 1,000 looks: de-duplicating each new entry against those added before it
    // was quadratic (13 s).
    let dir = tempfile::tempdir().unwrap();
    let models: String = (0..40)
        .map(|m| model_yaml(&format!("m{m}"), &format!("fp-{m}"), 1000))
        .collect();
    let manifest = dir.path().join("looks.yaml");
    std::fs::write(&manifest, format!("format_version: 1\nmodels:\n{models}")).unwrap();
    let ledger = dir.path().join("ledger.jsonl");
    let out = vetscore(&[
        "ledger",
        "append",
        "--ledger",
        ledger.to_str().unwrap(),
        manifest.to_str().unwrap(),
    ]);
    assert_eq!(out.status.code(), Some(0), "{}", stderr(&out));
    assert!(common::stdout(&out).contains("40000 new entries"));
}

#[cfg(unix)]
#[test]
fn a_glob_through_directory_links_to_itself_ends() {
    // runs/a -> . and runs/b -> .: a walk that follows links never ends. Links are not
    // walked into, so the one manifest is found once.
    let dir = tempfile::tempdir().unwrap();
    let runs = dir.path().join("runs");
    std::fs::create_dir(&runs).unwrap();
    std::os::unix::fs::symlink(".", runs.join("a")).unwrap();
    std::os::unix::fs::symlink(".", runs.join("b")).unwrap();
    std::fs::create_dir(runs.join("nested")).unwrap();
    std::fs::write(
        runs.join("nested/run.yaml"),
        format!(
            "format_version: 1\nmodels:\n{}",
            model_yaml("only", "fp", 1)
        ),
    )
    .unwrap();
    let json = dir.path().join("report.json");
    let pattern = format!("{}/runs/**/*.yaml", dir.path().display());
    let out = vetscore(&[
        "check",
        "--today",
        "2026-12-01",
        "--json",
        json.to_str().unwrap(),
        &pattern,
    ]);
    // Checked (exit 0 or 1: the claim has no search to back it), not refused.
    assert!(matches!(out.status.code(), Some(0 | 1)), "{}", stderr(&out));
    let report: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&json).unwrap()).unwrap();
    assert_eq!(report["models"].as_array().unwrap().len(), 1);
}
