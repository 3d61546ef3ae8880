//! The metrics BBC-CV recomputes on resampled rows (`stats::weighted`) against scikit-learn
//! 1.9.1 on the rows repeated by their weights (`tests/reference/weighted_metrics.py`, which
//! wrote `tests/reference/weighted_values.json`), and the weighted BBC-CV path against the
//! bit-packed accuracy path, which `tests/bbc_reference.rs` checks against numpy.
#![allow(clippy::unwrap_used)]

use serde_json::Value;
use vetscore::stats::{
    ClassKind, ClassMetric, CorrectnessMatrix, ErrorKind, ErrorMetric, F1Average, OofResults,
    RankMetric, WeightedMetric, bbc_cv,
};

fn cases() -> Vec<Value> {
    let text = std::fs::read_to_string("tests/reference/weighted_values.json").unwrap();
    let all: Value = serde_json::from_str(&text).unwrap();
    all["cases"].as_array().unwrap().clone()
}

fn u32s(v: &Value) -> Vec<u32> {
    v.as_array()
        .unwrap()
        .iter()
        .map(|x| x.as_u64().unwrap() as u32)
        .collect()
}

fn f64s(v: &Value) -> Vec<f64> {
    v.as_array()
        .unwrap()
        .iter()
        .map(|x| x.as_f64().unwrap())
        .collect()
}

fn close(name: &str, got: f64, want: f64) {
    // The same sums in another order: agreement to round-off.
    assert!(
        (got - want).abs() <= 1e-12 * want.abs().max(1.0),
        "{name}: {got} against scikit-learn's {want}"
    );
}

#[test]
fn weighted_metrics_match_scikit_learn_on_the_repeated_rows() {
    let cases = cases();
    assert_eq!(cases.len(), 6);
    for case in &cases {
        let w = u32s(&case["weights"]);
        let (three, pred3) = (u32s(&case["three"]), u32s(&case["pred3"]));
        let class = |kind| {
            ClassMetric::new(&three, &pred3, 3, kind)
                .unwrap()
                .score(0, &w)
        };
        close(
            "balanced accuracy",
            class(ClassKind::BalancedAccuracy),
            case["balanced_accuracy_3"].as_f64().unwrap(),
        );
        close(
            "macro F1",
            class(ClassKind::F1(F1Average::Macro)),
            case["f1_macro_3"].as_f64().unwrap(),
        );
        close(
            "micro F1",
            class(ClassKind::F1(F1Average::Micro)),
            case["f1_micro_3"].as_f64().unwrap(),
        );
        let (binary, predb) = (u32s(&case["binary"]), u32s(&case["predb"]));
        let f1 = ClassMetric::new(
            &binary,
            &predb,
            2,
            ClassKind::F1(F1Average::Binary { positive: 1 }),
        )
        .unwrap();
        close(
            "binary F1",
            f1.score(0, &w),
            case["f1_binary"].as_f64().unwrap(),
        );
        let scores = f64s(&case["scores"]);
        let auc = RankMetric::new(binary.iter().map(|&b| b == 1).collect(), &scores).unwrap();
        close(
            "ROC AUC",
            auc.score(0, &w),
            case["roc_auc"].as_f64().unwrap(),
        );
        let (target, predicted) = (f64s(&case["target"]), f64s(&case["predicted"]));
        let rmse = ErrorMetric::new(&target, &predicted, ErrorKind::Rmse).unwrap();
        close("RMSE", rmse.score(0, &w), case["rmse"].as_f64().unwrap());
        let r2 = ErrorMetric::new(&target, &predicted, ErrorKind::R2).unwrap();
        close("R²", r2.score(0, &w), case["r2"].as_f64().unwrap());
    }
}

#[test]
fn undefined_metrics_are_nan() {
    // ROC AUC without a negative row, R² of a constant target, any metric on no rows: undefined
    // (scikit-learn raises or warns there).
    let auc = RankMetric::new(vec![true, true, false], &[0.1, 0.2, 0.3]).unwrap();
    assert!(auc.score(0, &[1, 1, 0]).is_nan());
    let r2 = ErrorMetric::new(&[2.0, 2.0, 5.0], &[1.0, 2.0, 3.0], ErrorKind::R2).unwrap();
    assert!(r2.score(0, &[3, 1, 0]).is_nan());
    let ba = ClassMetric::new(&[0, 1], &[0, 1], 2, ClassKind::BalancedAccuracy).unwrap();
    assert!(ba.score(0, &[0, 0]).is_nan());
}

#[test]
fn weighted_bbc_on_micro_f1_is_the_bit_packed_accuracy_path() {
    // Micro F1 of single-label predictions is accuracy (scikit-learn's documentation), and both
    // paths draw the same resamples from the same seed, so their BBC-CV results must be the same
    // bits. Correctness of 12 configurations on 150 rows from a fixed linear congruential
    // sequence (Knuth's MMIX constants).
    let (configs, rows) = (12usize, 150usize);
    let mut state = 7u64;
    let mut next = || {
        state = state
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        state >> 33
    };
    let truth: Vec<u32> = (0..rows).map(|_| (next() % 2) as u32).collect();
    let mut predicted = Vec::with_capacity(configs * rows);
    let mut bits: Vec<Vec<u8>> = Vec::new();
    for c in 0..configs {
        let mut row = Vec::with_capacity(rows);
        for &t in &truth {
            // Configuration c is right with probability about (60 + c) / 100.
            let right = next() % 100 < 60 + c as u64;
            predicted.push(if right { t } else { 1 - t });
            row.push(u8::from(right));
        }
        bits.push(row);
    }
    let slices: Vec<&[u8]> = bits.iter().map(Vec::as_slice).collect();
    let matrix = CorrectnessMatrix::from_rows(&slices).unwrap();
    let micro = ClassMetric::new(&truth, &predicted, 2, ClassKind::F1(F1Average::Micro)).unwrap();
    for threads in [1, 2] {
        let packed = bbc_cv(OofResults::Correctness(&matrix), 500, 0.95, 42, threads).unwrap();
        let weighted = bbc_cv(OofResults::Weighted(&micro), 500, 0.95, 42, threads).unwrap();
        assert_eq!(packed, weighted);
    }
}
