//! Runs of the real binary: exit codes, files written, the demo report, escaping, schemas.

#![allow(clippy::unwrap_used)]

mod common;
#[path = "../fuzz/harness.rs"]
mod harness;

use std::process::Command;

use common::{Report, assert_close, stderr, stdout, vetscore};

const DEMO: &[&str] = &[
    "check",
    "--policy",
    "fixtures/demo/policy.yaml",
    "--today",
    "2026-12-01",
    "fixtures/demo/manifests/*",
];

fn demo_with(extra: &[&str]) -> std::process::Output {
    let mut args = DEMO.to_vec();
    args.extend_from_slice(extra);
    vetscore(&args)
}

#[test]
fn demo_fails_the_unsupported_models_and_reports_key_numbers() {
    let dir = tempfile::tempdir().unwrap();
    let json = dir.path().join("report.json");
    let output = demo_with(&["--json", json.to_str().unwrap()]);
    assert_eq!(output.status.code(), Some(1), "{}", stderr(&output));
    let report = Report::read(&json);
    assert_eq!(report.report_version, 2);
    assert_eq!(report.verdict, "not_supported");
    assert_eq!(report.counts.models, 5);
    let verdict = |name: &str| report.model(name).verdict.clone();
    assert_eq!(verdict("ripeness-gbm-v4"), "supported");
    assert_eq!(verdict("ripeness-forest-v6"), "supported");
    assert_eq!(verdict("ripeness-forest-v7"), "not_supported");
    assert_eq!(verdict("ripeness-knn-small"), "not_supported");
    assert_eq!(verdict("ripeness-logit-v2"), "not_supported");

    let v7 = report.model("ripeness-forest-v7").finding("holdout_budget");
    assert_eq!(v7.status, "fail");
    // Two looks in the 11-28 run and four in the 11-30 run share one fingerprint.
    assert_eq!(
        v7.evidence("looks").value.as_ref().unwrap().as_f64(),
        Some(6.0)
    );
    assert_eq!(
        report
            .model("ripeness-forest-v6")
            .finding("holdout_budget")
            .status,
        "waived"
    );

    let knn = report.model("ripeness-knn-small");
    let cv = knn.cv.as_ref().unwrap();
    // 16/20 Wilson 95%: statsmodels 0.15.0 proportion_confint(16, 20, method='wilson').
    assert_close("knn CV lower", cv.lower.unwrap(), 0.58398257, 1e-8);
    assert_close("knn CV upper", cv.upper.unwrap(), 0.91934234, 1e-8);
    let test = knn.test.as_ref().unwrap();
    // 1220/1980 Wilson 95%: statsmodels 0.15.0 proportion_confint(1220, 1980, method='wilson').
    assert_close("knn test lower", test.lower.unwrap(), 0.59453539, 1e-8);
    assert_close("knn test upper", test.upper.unwrap(), 0.63733798, 1e-8);
    assert_eq!(knn.finding("fold_size").status, "fail");
    assert_eq!(knn.finding("cv_test_gap").status, "fail");
    assert_eq!(knn.finding("waiver_expiry").status, "fail");
    assert_eq!(
        report
            .model("ripeness-logit-v2")
            .finding("claim_support")
            .status,
        "fail"
    );
}

#[test]
fn demo_markdown_matches_the_snapshot() {
    let output = demo_with(&["--markdown", "-"]);
    assert_eq!(output.status.code(), Some(1));
    let markdown = stdout(&output);
    assert!(markdown.starts_with("<!-- vetscore:report -->\n"));
    assert!(markdown.contains("necessary, not sufficient"));
    insta::assert_snapshot!("demo_report", markdown);
}

#[test]
fn json_report_validates_against_its_published_schema() {
    let dir = tempfile::tempdir().unwrap();
    let json = dir.path().join("report.json");
    demo_with(&["--json", json.to_str().unwrap()]);
    let schema: serde_json::Value =
        serde_json::from_str(&stdout(&vetscore(&["schema", "report"]))).unwrap();
    let report: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&json).unwrap()).unwrap();
    let validator = jsonschema::validator_for(&schema).unwrap();
    let errors: Vec<String> = validator
        .iter_errors(&report)
        .map(|e| e.to_string())
        .collect();
    assert!(errors.is_empty(), "{errors:#?}");
}

#[test]
fn every_fixture_validates_against_the_published_input_schemas() {
    let manifest_schema: serde_json::Value =
        serde_json::from_str(&stdout(&vetscore(&["schema", "manifest"]))).unwrap();
    let policy_schema: serde_json::Value =
        serde_json::from_str(&stdout(&vetscore(&["schema", "policy"]))).unwrap();
    let manifests = jsonschema::validator_for(&manifest_schema).unwrap();
    let policies = jsonschema::validator_for(&policy_schema).unwrap();
    let mut checked = 0;
    for entry in glob::glob(&format!("{}/fixtures/**/*", common::root().display())).unwrap() {
        let path = entry.unwrap();
        let ext = path.extension().and_then(|e| e.to_str()).unwrap_or("");
        let name = path.file_name().unwrap().to_string_lossy();
        if !matches!(ext, "yaml" | "json") || name == "expect.yaml" || name == "base-report.json" {
            continue;
        }
        let text = std::fs::read_to_string(&path).unwrap();
        let value: serde_json::Value = serde_saphyr::from_str(&text).unwrap();
        let validator = if name.ends_with("policy.yaml") {
            &policies
        } else {
            &manifests
        };
        let errors: Vec<String> = validator
            .iter_errors(&value)
            .map(|e| e.to_string())
            .collect();
        assert!(errors.is_empty(), "{}: {errors:#?}", path.display());
        checked += 1;
    }
    assert!(checked >= 20, "only {checked} fixtures checked");
}

#[test]
fn untrusted_strings_cannot_inject_markdown_html_or_mentions() {
    let output = vetscore(&[
        "check",
        "--today",
        "2026-12-01",
        "--markdown",
        "-",
        "fixtures/hostile/manifest.yaml",
    ]);
    assert_eq!(output.status.code(), Some(0), "{}", stderr(&output));
    let markdown = stdout(&output);
    // The same invariants the fuzzer and the property tests check: no tag, link, autolink,
    // mention or heading opens, and table rows keep their cells.
    harness::assert_inert(&markdown, 1);
    assert!(!markdown.contains("@release-team") && !markdown.contains("@everyone"));
}

#[test]
fn custom_templates_replace_the_built_in_ones() {
    let dir = tempfile::tempdir().unwrap();
    std::fs::write(
        dir.path().join("report.md.j2"),
        "{{ marker }}\n{% for m in report.models %}{{ m.name | md }}={{ m.verdict }}\n{% endfor %}",
    )
    .unwrap();
    let output = demo_with(&[
        "--markdown",
        "-",
        "--templates",
        dir.path().to_str().unwrap(),
    ]);
    assert_eq!(output.status.code(), Some(1));
    assert!(stdout(&output).contains("ripeness\\-gbm\\-v4=supported\n"));
}

#[test]
fn the_report_is_appended_to_the_github_step_summary() {
    let dir = tempfile::tempdir().unwrap();
    let summary = dir.path().join("summary.md");
    std::fs::write(&summary, "earlier step\n").unwrap();
    let mut args = DEMO.to_vec();
    args.push("--json");
    args.push("-");
    let output = Command::new(env!("CARGO_BIN_EXE_vetscore"))
        .args(&args)
        .current_dir(common::root())
        .env("GITHUB_STEP_SUMMARY", &summary)
        .output()
        .unwrap();
    assert_eq!(output.status.code(), Some(1));
    let text = std::fs::read_to_string(&summary).unwrap();
    // A blank line keeps the report apart from the earlier step's text.
    assert!(text.starts_with("earlier step\n\n<!-- vetscore:report -->\n"));
    assert!(text.ends_with('\n'));
    // JSON went to stdout, so the terminal summary went to stderr, uncoloured (not a tty).
    assert!(!stderr(&output).contains('\x1b'));
    serde_json::from_str::<serde_json::Value>(&stdout(&output)).unwrap();
}

#[test]
fn a_report_that_cannot_be_written_is_an_internal_error_not_a_pass() {
    let dir = tempfile::tempdir().unwrap();
    let output = vetscore(&[
        "check",
        "--today",
        "2026-12-01",
        "--markdown",
        dir.path().to_str().unwrap(),
        "fixtures/scenarios/supported/manifest.yaml",
    ]);
    assert_eq!(output.status.code(), Some(3));
    assert!(stderr(&output).contains("vetscore could not finish: cannot write"));
}

#[test]
fn explain_describes_every_rule_and_rejects_unknown_ones() {
    for rule in vetscore::rules::RULES {
        let output = vetscore(&["explain", rule.id]);
        assert_eq!(output.status.code(), Some(0));
        assert!(stdout(&output).contains(rule.name));
    }
    let output = vetscore(&["explain", "holdout_budgt"]);
    assert_eq!(output.status.code(), Some(2));
    assert!(stderr(&output).contains("did you mean `holdout_budget`?"));
}

#[test]
fn usage_errors_exit_with_code_2() {
    // clap's own usage errors use exit code 2, matching vetscore's "invalid input".
    assert_eq!(vetscore(&["check"]).status.code(), Some(2));
    assert_eq!(vetscore(&["frobnicate"]).status.code(), Some(2));
}
