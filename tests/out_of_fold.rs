//! The out-of-fold file (`search.out_of_fold`) written from a real scikit-learn 1.9.1 grid search
//! (`tests/sklearn/generate_oof.py`: every configuration's `cross_val_predict` on the search's
//! folds, rows shuffled) is read into the table with each configuration's accuracy as
//! `sklearn.metrics.accuracy_score` computed it, and a manifest naming it checks end to end.

#![allow(clippy::unwrap_used)]

mod common;

use vetscore::evidence::oof::{OofExpect, matching_folds, read_out_of_fold};
use vetscore::manifest::{Metric, Task};
use vetscore::stats::OofTruth;

fn expected() -> serde_json::Value {
    serde_json::from_str(
        &std::fs::read_to_string(common::root().join("tests/sklearn/knn_oof.expected.json"))
            .unwrap(),
    )
    .unwrap()
}

#[test]
fn a_scikit_learn_search_gives_each_configurations_accuracy() {
    let expected = expected();
    let expect = OofExpect {
        task: Task::Binary,
        metric: Metric::Accuracy,
        classes: None,
        fold_rows: Some(&[50, 50, 50, 50]),
        named_by: "the test",
    };
    let path = common::root().join("tests/sklearn/knn_oof.csv");
    let table = read_out_of_fold(&path, expect).unwrap();
    assert_eq!(table.rows, 200);
    assert_eq!(table.configurations, ["0", "1", "2", "3", "4"]);
    let OofTruth::Classes { names, .. } = &table.truth else {
        panic!("classification truth expected");
    };
    assert_eq!(names, &["0", "1"]);
    let correctness = table.correctness().unwrap();
    for (c, id) in table.configurations.iter().enumerate() {
        let correct = (0..table.rows).filter(|&i| correctness.get(c, i)).count();
        let want = expected["accuracy"][id].as_f64().unwrap();
        common::assert_close(id, correct as f64 / table.rows as f64, want, 1e-12);
        for (k, want) in expected["fold_correct"][id]
            .as_array()
            .unwrap()
            .iter()
            .enumerate()
        {
            let in_fold = (0..table.rows)
                .filter(|&i| table.folds[i] as usize == k && correctness.get(c, i))
                .count();
            assert_eq!(in_fold as u64, want.as_u64().unwrap(), "{id} fold {k}");
        }
    }
    // The score column is predict_proba's positive-class column.
    assert!(
        table
            .scores
            .as_ref()
            .unwrap()
            .iter()
            .all(|s| (0.0..=1.0).contains(s))
    );
    // The configuration whose fold counts are the manifest's is scikit-learn's best_index_.
    let best: Vec<u64> = expected["fold_correct"]["2"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v.as_u64().unwrap())
        .collect();
    assert_eq!(
        matching_folds(&table, &best),
        Some(expected["best_index"].as_u64().unwrap() as usize)
    );
}

#[test]
fn a_manifest_with_an_out_of_fold_file_checks_end_to_end() {
    // The manifest claims the best CV mean with no test scoring, so `cv_test_gap` does not
    // support it: exit 1 (a verdict), not 2 (an input error).
    let output = common::vetscore(&[
        "check",
        "--today",
        "2026-12-01",
        "tests/sklearn/knn_oof.manifest.json",
    ]);
    assert_eq!(output.status.code(), Some(1), "{}", common::stderr(&output));
    assert!(common::stderr(&output).is_empty() || !common::stderr(&output).contains("error:"));
}

#[test]
fn bbc_cv_on_regression_errors_heads_the_selection_optimism_finding() {
    // Two configurations on six rows in three folds: `a` predicts every target 0.25 too high,
    // `b` 1.0 too high. `a` has the smaller error on every row, so it wins every resample and its
    // out-of-bag MAE, and RMSE √(0.25²), is 0.25 in every resample (arithmetic): the BBC-CV
    // estimate and both ends of its interval are 0.25 exactly. Both configurations' errors are
    // constant over the rows, so they count as one effective configuration together (the
    // documented rule for constants). MAE is a per-row mean; RMSE goes through the weighted path.
    for metric in ["mae", "rmse"] {
        regression_case(metric);
    }
}

fn regression_case(metric: &str) {
    let dir = tempfile::tempdir().unwrap();
    let targets = [1.0, 2.0, 3.5, -0.5, 4.0, 0.0];
    let mut csv = String::from("configuration,row,fold,label,prediction\n");
    for (config, offset) in [("a", 0.25), ("b", 1.0)] {
        for (i, y) in targets.iter().enumerate() {
            csv.push_str(&format!("{config},r{i},{},{y},{}\n", i % 3, y + offset));
        }
    }
    std::fs::write(dir.path().join("oof.csv"), csv).unwrap();
    let manifest = serde_json::json!({
        "format_version": 1,
        "models": [{
            "name": "tide-depth",
            "task": "regression",
            "metric": metric,
            "seed": 5,
            "data": {"train_rows": 6, "test_rows": 40, "test_fingerprint": "fp-tide"},
            "search": {
                "method": "grid",
                "configurations": 2,
                "out_of_fold": "oof.csv",
                "cv": {"scheme": "k_fold", "folds": [
                    {"rows": 2, "score": 0.25}, {"rows": 2, "score": 0.25}, {"rows": 2, "score": 0.25}
                ]},
            },
            "holdout": [{"time": "2026-11-30T08:00:00Z", "score": 0.3}],
            "claim": {"value": 0.25, "basis": "cv"},
        }],
    });
    std::fs::write(dir.path().join("m.json"), manifest.to_string()).unwrap();
    let report = dir.path().join("r.json");
    let output = std::process::Command::new(env!("CARGO_BIN_EXE_vetscore"))
        .args(["check", "--today", "2026-12-01", "--json"])
        .arg(&report)
        .arg("m.json")
        .current_dir(dir.path())
        .output()
        .unwrap();
    assert!(
        matches!(output.status.code(), Some(0 | 1)),
        "{}",
        String::from_utf8_lossy(&output.stderr)
    );
    let report: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(report).unwrap()).unwrap();
    let finding = report["models"][0]["findings"]
        .as_array()
        .unwrap()
        .iter()
        .find(|f| f["rule"] == "selection_optimism")
        .unwrap()
        .clone();
    let evidence = |key: &str| {
        finding["evidence"]
            .as_array()
            .unwrap()
            .iter()
            .find(|e| e["key"] == key)
            .unwrap_or_else(|| panic!("no {key} in {finding}"))
            .clone()
    };
    assert_eq!(evidence("headline")["value"].as_f64(), Some(0.25));
    assert!(
        evidence("headline_method")["value"]
            .as_str()
            .unwrap()
            .starts_with("BBC-CV")
    );
    let interval = evidence("bbc_interval");
    assert_eq!(interval["lower"].as_f64(), Some(0.25));
    assert_eq!(interval["upper"].as_f64(), Some(0.25));
    assert_eq!(
        evidence("effective_configurations")["value"].as_f64(),
        Some(1.0)
    );
    assert_eq!(evidence("oof_configurations")["value"].as_f64(), Some(2.0));
}

fn knn_expect() -> OofExpect<'static> {
    OofExpect {
        task: Task::Binary,
        metric: Metric::Accuracy,
        classes: None,
        fold_rows: Some(&[50, 50, 50, 50]),
        named_by: "the test",
    }
}

#[test]
fn a_parquet_out_of_fold_file_reads_as_its_csv() {
    // fixtures/parquet/make_parquet.py wrote the CSV's rows with pandas 3.1.1 and pyarrow 26.0.1
    // (ids as strings, configurations, folds and classes as int64, scores as float64).
    let csv = read_out_of_fold(
        &common::root().join("tests/sklearn/knn_oof.csv"),
        knn_expect(),
    )
    .unwrap();
    let parquet = read_out_of_fold(
        &common::root().join("fixtures/parquet/knn-oof.pandas.parquet"),
        knn_expect(),
    )
    .unwrap();
    assert_eq!(parquet, csv);
}

#[test]
fn a_blank_parquet_cell_is_refused_with_its_row_and_column() {
    // The third data row's label is null (pandas' NA), which a CSV would hold as a blank cell.
    let problems = read_out_of_fold(
        &common::root().join("fixtures/parquet/knn-oof-null-label.pandas.parquet"),
        knn_expect(),
    )
    .unwrap_err();
    let text: Vec<String> = problems.iter().map(ToString::to_string).collect();
    assert!(
        text.iter().any(|t| t.contains("row 3, column label")),
        "{text:#?}"
    );
}
