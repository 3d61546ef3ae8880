//! BBC-CV and the effective number of configurations against the numpy reference implementation
//! (`tests/reference/bbc_reference.py`, numpy 2.4.6, which wrote `tests/reference/bbc_values.json`
//! together with the matrices used here).
#![allow(clippy::unwrap_used)]

use serde_json::Value;
use vetscore::stats::{
    CorrectnessMatrix, Direction, OofResults, RowValueMatrix, bbc_cv, effective_configurations,
    effective_configurations_of_correctness,
};

fn values() -> Value {
    let text = std::fs::read_to_string("tests/reference/bbc_values.json").unwrap();
    serde_json::from_str(&text).unwrap()
}

fn correctness(case: &Value) -> CorrectnessMatrix {
    let rows: Vec<Vec<u8>> = case["correctness"]
        .as_array()
        .unwrap()
        .iter()
        .map(|s| s.as_str().unwrap().bytes().map(|b| b - b'0').collect())
        .collect();
    let slices: Vec<&[u8]> = rows.iter().map(Vec::as_slice).collect();
    CorrectnessMatrix::from_rows(&slices).unwrap()
}

fn row_values(case: &Value) -> Vec<f64> {
    case["values"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v.as_f64().unwrap())
        .collect()
}

#[test]
fn effective_configurations_match_numpy_eigvalsh() {
    let all = values();
    let cases = all["effective"].as_array().unwrap();
    assert_eq!(cases.len(), 4);
    for case in cases {
        let name = case["name"].as_str().unwrap();
        let got = if case.get("values").is_some() {
            let rows = case["rows"].as_u64().unwrap() as usize;
            effective_configurations(&row_values(case), rows).unwrap()
        } else {
            effective_configurations_of_correctness(&correctness(case)).unwrap()
        };
        // Eigenvalues agree to round-off; 1e-9 leaves room for a different solver's order of
        // operations on matrices up to 60 × 60.
        for (label, value) in [("li_ji", got.li_ji), ("galwey", got.galwey)] {
            let expected = case[label].as_f64().unwrap();
            assert!(
                (value - expected).abs() < 1e-9,
                "{name} {label}: {value} vs numpy {expected}"
            );
        }
        if name == "duplicates_and_constants" {
            assert_eq!((got.configurations, got.distinct, got.constant), (12, 8, 2));
        }
        if name == "more_configurations_than_rows" {
            assert!(got.distinct > 25, "the n × n Gram path must be exercised");
        }
    }
}

/// Rust and numpy draw different resamples, so the two estimates are two independent Monte Carlo
/// means of the same bootstrap quantity (the out-of-bag score of the in-bag winner on the same
/// matrix). Their difference is approximately normal with variance s_r²/B_r + s_p²/B_p (central
/// limit theorem), so a gap within 4 of its standard deviations is agreement: the chance of a false
/// failure is 6e-5 per comparison (normal tail, common practice, no source).
#[test]
fn bbc_estimates_match_numpy_within_monte_carlo_error() {
    let all = values();
    let cases = all["bbc"].as_array().unwrap();
    assert_eq!(cases.len(), 3);
    for case in cases {
        let name = case["name"].as_str().unwrap();
        let rows = case["rows"].as_u64().unwrap() as usize;
        let (matrix, loss);
        let results = if case.get("values").is_some() {
            let direction = if case["higher_is_better"].as_bool().unwrap() {
                Direction::HigherIsBetter
            } else {
                Direction::LowerIsBetter
            };
            loss = RowValueMatrix::new(row_values(case), rows, direction).unwrap();
            OofResults::RowValues(&loss)
        } else {
            matrix = correctness(case);
            OofResults::Correctness(&matrix)
        };
        let got = bbc_cv(results, 5_000, 0.95, 11, 2).unwrap();
        let (expected, spread, used) = (
            case["estimate"].as_f64().unwrap(),
            case["spread"].as_f64().unwrap(),
            case["resamples"].as_f64().unwrap(),
        );
        let se =
            (got.spread.powi(2) / f64::from(got.resamples_used) + spread.powi(2) / used).sqrt();
        assert!(
            (got.estimate - expected).abs() < 4.0 * se,
            "{name}: {} vs numpy {expected} (standard error of the gap {se})",
            got.estimate
        );
        // The spread of the out-of-bag scores is a property of the bootstrap distribution too; its
        // Monte Carlo error at 5,000 draws is about 1% of itself (normal theory), so 5% is loose.
        assert!(
            (got.spread - spread).abs() < 0.05 * spread,
            "{name}: spread {} vs numpy {spread}",
            got.spread
        );
    }
}
