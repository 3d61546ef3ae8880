//! Runs every scenario under `fixtures/scenarios/`: each folder holds one or more manifests
//! (`.yaml`/`.json`; other files, such as trials, are read through them), an
//! optional `policy.yaml` (and `base-policy.yaml` and `base-report.json`, the base branch's) and an `expect.yaml` naming the exit code, the findings that must
//! appear with their status, and reference numbers with their published source. Together the
//! scenarios must make every rule both fail and pass at least once.

#![allow(clippy::unwrap_used)]

mod common;

use std::collections::BTreeSet;
use std::path::Path;

use common::{Report, assert_close, stderr, vetscore};
use serde::Deserialize;

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct Expect {
    /// What the scenario shows.
    about: String,
    exit: i32,
    #[serde(default)]
    today: Option<String>,
    findings: Vec<ExpectedFinding>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct ExpectedFinding {
    model: String,
    rule: String,
    status: String,
    #[serde(default)]
    numbers: Vec<ExpectedNumber>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct ExpectedNumber {
    key: String,
    #[serde(default)]
    value: Option<f64>,
    #[serde(default)]
    lower: Option<f64>,
    #[serde(default)]
    upper: Option<f64>,
    tolerance: f64,
    /// Where the expected value comes from: a publication or a named reference-library call.
    source: String,
}

fn run_scenario(dir: &Path, seen: &mut BTreeSet<(String, String)>) {
    let name = dir.file_name().unwrap().to_string_lossy().into_owned();
    let expect: Expect =
        serde_saphyr::from_str(&std::fs::read_to_string(dir.join("expect.yaml")).unwrap())
            .unwrap_or_else(|e| panic!("{name}/expect.yaml: {e}"));
    assert!(
        !expect.about.trim().is_empty(),
        "{name}: say what the scenario shows"
    );
    let mut manifests: Vec<String> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| {
            let file = p.file_name().unwrap().to_string_lossy();
            let manifest =
                (file.ends_with(".yaml") || file.ends_with(".json")) && file != "base-report.json";
            manifest && !matches!(&*file, "expect.yaml" | "policy.yaml" | "base-policy.yaml")
        })
        .map(|p| p.to_string_lossy().into_owned())
        .collect();
    manifests.sort();
    let out = tempfile::tempdir().unwrap();
    let json = out.path().join("report.json");
    let mut args = vec![
        "check".to_owned(),
        "--json".to_owned(),
        json.to_string_lossy().into_owned(),
    ];
    let policy = dir.join("policy.yaml");
    if policy.exists() {
        args.push("--policy".into());
        args.push(policy.to_string_lossy().into_owned());
    }
    let report = dir.join("base-report.json");
    if report.exists() {
        args.push("--baseline".into());
        args.push(report.to_string_lossy().into_owned());
    }
    let base = dir.join("base-policy.yaml");
    if base.exists() {
        args.push("--base-policy".into());
        args.push(base.to_string_lossy().into_owned());
    }
    args.push("--today".into());
    args.push(expect.today.clone().unwrap_or_else(|| "2026-12-01".into()));
    args.extend(manifests);
    let argv: Vec<&str> = args.iter().map(String::as_str).collect();
    let output = vetscore(&argv);
    assert_eq!(
        output.status.code(),
        Some(expect.exit),
        "{name}: exit code; stderr:\n{}",
        stderr(&output)
    );
    let report = Report::read(&json);
    for model in &report.models {
        for finding in &model.findings {
            assert!(
                !finding.message.contains("(missing "),
                "{name}: {} on {} names evidence it lacks: {}",
                finding.rule,
                model.name,
                finding.message
            );
            seen.insert((finding.rule.clone(), finding.status.clone()));
        }
    }
    for expected in &expect.findings {
        let finding = report.model(&expected.model).finding(&expected.rule);
        assert_eq!(
            finding.status, expected.status,
            "{name}: {} on {}: {}",
            expected.rule, expected.model, finding.message
        );
        for number in &expected.numbers {
            assert!(
                !number.source.trim().is_empty(),
                "{name}: {} needs a source",
                number.key
            );
            let evidence = finding.evidence(&number.key);
            let what = format!("{name}: {}.{}", expected.rule, number.key);
            if let Some(v) = number.value {
                let actual = evidence.value.as_ref().and_then(|v| v.as_f64()).unwrap();
                assert_close(&what, actual, v, number.tolerance);
            }
            if let Some(l) = number.lower {
                assert_close(
                    &format!("{what} lower"),
                    evidence.lower.unwrap(),
                    l,
                    number.tolerance,
                );
            }
            if let Some(u) = number.upper {
                assert_close(
                    &format!("{what} upper"),
                    evidence.upper.unwrap(),
                    u,
                    number.tolerance,
                );
            }
        }
    }
}

#[test]
fn every_scenario_meets_its_expectations_and_every_rule_fails_and_passes_somewhere() {
    let root = common::root().join("fixtures/scenarios");
    let mut dirs: Vec<_> = std::fs::read_dir(&root)
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.is_dir())
        .collect();
    dirs.sort();
    assert!(!dirs.is_empty());
    let mut seen = BTreeSet::new();
    for dir in &dirs {
        run_scenario(dir, &mut seen);
    }
    for rule in vetscore::rules::RULES {
        for status in ["pass", "fail"] {
            assert!(
                seen.contains(&(rule.id.to_owned(), status.to_owned())),
                "no scenario makes rule {} {status}",
                rule.id
            );
        }
    }
}
