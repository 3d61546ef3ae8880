//! scikit-learn's own search results as the trials file: files written by a real scikit-learn
//! 1.9.1 search through pandas 3.1.1 (`tests/sklearn/generate.py`, which also computes the
//! expected values with numpy into `tests/sklearn/expected.json`) are read, the first row ranked
//! 1 is the selected trial, negated losses are turned back, and what cannot be mapped is refused.

#![allow(clippy::unwrap_used)]

mod common;

use common::{stderr, vetscore};

fn expected() -> serde_json::Value {
    serde_json::from_str(
        &std::fs::read_to_string(common::root().join("tests/sklearn/expected.json")).unwrap(),
    )
    .unwrap()
}

/// Runs a check and returns the selection-optimism evidence of its one model.
fn selection_evidence(manifest: &str) -> Vec<serde_json::Value> {
    let out = tempfile::tempdir().unwrap();
    let json = out.path().join("report.json");
    let output = vetscore(&["check", manifest, "--json", json.to_str().unwrap()]);
    assert!(
        matches!(output.status.code(), Some(0 | 1)),
        "{manifest}: {}",
        stderr(&output)
    );
    let report: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(json).unwrap()).unwrap();
    let findings = report["models"][0]["findings"].as_array().unwrap().clone();
    let finding = findings
        .into_iter()
        .find(|f| f["rule"] == "selection_optimism")
        .unwrap();
    finding["evidence"].as_array().unwrap().clone()
}

fn value(evidence: &[serde_json::Value], key: &str) -> serde_json::Value {
    evidence
        .iter()
        .find(|e| e["key"] == key)
        .unwrap_or_else(|| panic!("no evidence {key}"))["value"]
        .clone()
}

/// (manifest, expected.json entry, tolerance on the bias). pandas' JSON writer keeps ten
/// decimals, so the bias from a `.json` file differs from numpy's by up to about 1e-10.
const CASES: [(&str, &str, f64); 4] = [
    (
        "tests/sklearn/svc_grid_csv.manifest.json",
        "svc_grid",
        1e-12,
    ),
    (
        "tests/sklearn/svc_grid_json.manifest.json",
        "svc_grid",
        1e-8,
    ),
    ("tests/sklearn/ridge_rmse.manifest.json", "ridge_rmse", 1e-8),
    (
        "tests/sklearn/iris_multi.manifest.json",
        "iris_multi",
        1e-12,
    ),
];

#[test]
fn cv_results_files_give_the_trials_the_selected_row_and_its_bias() {
    let expected = expected();
    for (manifest, case, tolerance) in CASES {
        let want = &expected[case];
        let evidence = selection_evidence(manifest);
        assert_eq!(
            value(&evidence, "trials").as_f64().unwrap(),
            want["trials"].as_f64().unwrap(),
            "{manifest}: every row of cv_results_ is a trial"
        );
        let selected = value(&evidence, "selected_trial");
        assert_eq!(
            selected.as_str().unwrap(),
            format!("{} (ranked first by the search)", want["best_index"]),
            "{manifest}: the selected trial is scikit-learn's best_index_"
        );
        let bias = value(&evidence, "tt_bias").as_f64().unwrap();
        let reference = want["tt_bias"].as_f64().unwrap();
        assert!(
            (bias - reference).abs() <= tolerance,
            "{manifest}: bias {bias}, numpy {reference}"
        );
    }
}

#[test]
fn what_cannot_be_mapped_is_refused_with_a_hint() {
    for (manifest, want) in [
        (
            "tests/sklearn/ridge_rmse_unnamed.manifest.json",
            "scikit-learn wrote `split0_test_score` without the scorer's name, and the model's metric rmse is not an estimator's default score",
        ),
        (
            "tests/sklearn/iris_multi_unnamed.manifest.json",
            "this search scored several metrics (accuracy, balanced_accuracy); the manifest must say which one the trials are",
        ),
        (
            "tests/sklearn/ridge_mse.manifest.json",
            "scorer \"neg_mean_squared_error\" has no vetscore metric",
        ),
    ] {
        let output = vetscore(&["check", manifest]);
        assert_eq!(output.status.code(), Some(2), "{manifest}");
        assert!(
            stderr(&output).contains(want),
            "{manifest}: {}",
            stderr(&output)
        );
    }
}
