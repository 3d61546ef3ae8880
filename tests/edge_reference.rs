//! Reference values for the boundary cases of the paired tests and the ROC AUC interval, from
//! scipy 1.17.1 as written by `tests/reference/edge_scenarios.py` into
//! `tests/reference/edge_values.json`: the exact sign-flip test against
//! `scipy.stats.permutation_test(..., permutation_type='samples', n_resamples=inf)`.

#![allow(clippy::unwrap_used)]

mod common;

use serde_json::Value;
use vetscore::stats;

fn values() -> Value {
    let path = common::root().join("tests/reference/edge_values.json");
    serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap()
}

fn num(v: &Value) -> f64 {
    v.as_f64().unwrap()
}

#[test]
fn sign_flip_matches_scipy_permutation_test() {
    let values = values();
    let cases = values["sign_flip"].as_array().unwrap();
    assert!(cases.len() >= 5);
    for case in cases {
        let d: Vec<f64> = case["d"].as_array().unwrap().iter().map(num).collect();
        let p = stats::sign_flip_exact(&d).unwrap();
        common::assert_close(&format!("sign flip {d:?}"), p, num(&case["p"]), 1e-12);
    }
}

#[test]
fn auc_score_interval_matches_a_root_finder() {
    // The score-type interval's equation (Hanley & McNeil 1982 variance at θ, N* = (m + n)/2 as
    // in Newcombe 2006) solved by scipy.optimize.brentq; at m = n = 1 it is Wilson's interval
    // for 1/1, whose lower end 1/(1 + z²) = 0.2065 is a fact of the trade.
    let values = values();
    let cases = values["auc_score"].as_array().unwrap();
    assert!(cases.len() >= 6);
    for case in cases {
        let (auc, m, n) = (
            num(&case["auc"]),
            case["m"].as_u64().unwrap(),
            case["n"].as_u64().unwrap(),
        );
        let i = stats::auc_score_interval(auc, m, n, 0.95).unwrap();
        let what = format!("AUC {auc} on {m} + {n}");
        common::assert_close(&format!("{what} lower"), i.lower, num(&case["lower"]), 1e-9);
        common::assert_close(&format!("{what} upper"), i.upper, num(&case["upper"]), 1e-9);
        assert!(
            i.upper - i.lower > 0.0,
            "{what}: the interval keeps its width"
        );
    }
    assert!(stats::auc_score_interval(0.5, 0, 3, 0.95).is_err());
    assert!(stats::auc_score_interval(1.5, 3, 3, 0.95).is_err());
}

#[test]
fn balanced_accuracy_on_one_row_needs_no_positive_class() {
    // Issue 9 item 12: balanced accuracy on a single row said "binary F1 needs positive_class".
    // Reference: scikit-learn 1.9.1 balanced_accuracy_score(["a"], ["a"]) = 1.0 (the mean recall
    // over the classes present in y_true). With one row the claim still fails claim_support's
    // minimum rows, never through a message about F1.
    let dir = tempfile::tempdir().unwrap();
    // sha256("r1") by coreutils sha256sum: the fingerprint of a split holding the one id r1.
    let fingerprint = "sha256:82f3e9c695dc6b8d1b11818d5701919e286de8d47f7c3eb3100c485f79e57828";
    let manifest = format!(
        "format_version: 1\nmodels:\n  - name: one-row\n    task: binary\n    metric: \
         balanced_accuracy\n    data: {{train_rows: 10, test_rows: 1, test_fingerprint: \
         \"{fingerprint}\"}}\n    holdout:\n      - {{time: 2026-11-20T10:00:00Z, score: 1.0}}\n    \
         predictions:\n      file: predictions.csv\n      classes: [a, b]\n    claim: {{value: \
         1.0, basis: test}}\n"
    );
    std::fs::write(dir.path().join("manifest.yaml"), manifest).unwrap();
    std::fs::write(
        dir.path().join("predictions.csv"),
        "id,label,prediction\nr1,a,a\n",
    )
    .unwrap();
    let report = dir.path().join("report.json");
    let out = std::process::Command::new(env!("CARGO_BIN_EXE_vetscore"))
        .current_dir(dir.path())
        .args(["check", "--json", report.to_str().unwrap(), "manifest.yaml"])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(1), "{}", common::stderr(&out));
    let report: Value = serde_json::from_str(&std::fs::read_to_string(&report).unwrap()).unwrap();
    let findings = report["models"][0]["findings"].as_array().unwrap();
    let rule = |id: &str| findings.iter().find(|f| f["rule"] == id).unwrap();
    assert_eq!(rule("recompute")["status"], "pass");
    assert_eq!(rule("claim_support")["status"], "fail");
    assert!(!report.to_string().contains("positive_class"));
}
