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
