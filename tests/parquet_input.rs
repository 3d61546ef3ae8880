//! Parquet predictions files as pandas and polars write them give the same report as the CSV
//! files holding the same rows (`fixtures/parquet/make_parquet.py` wrote them from the CSVs of
//! two scenarios, whose expected numbers are sourced in their `expect.yaml`). Two input formats
//! agreeing is the check; no number here is vetscore's own.

#![allow(clippy::unwrap_used)]

mod common;

use common::{root, vetscore};

/// Runs `check` on `manifest` in `dir` with `policy`, and returns the JSON report with the
/// predictions files' names replaced by `<file>` (they differ between the formats).
fn report(dir: &std::path::Path, names: &[&str]) -> serde_json::Value {
    let json = dir.join("report.json");
    let (policy, manifest) = (dir.join("policy.yaml"), dir.join("manifest.yaml"));
    let argv = [
        "check",
        "--json",
        json.to_str().unwrap(),
        "--policy",
        policy.to_str().unwrap(),
        "--root",
        dir.to_str().unwrap(),
        "--today",
        "2026-12-01",
        manifest.to_str().unwrap(),
    ];
    let output = vetscore(&argv);
    assert!(
        matches!(output.status.code(), Some(0 | 1)),
        "{}",
        String::from_utf8_lossy(&output.stderr)
    );
    let mut text = std::fs::read_to_string(&json).unwrap();
    for name in names {
        text = text.replace(name, "<file>");
    }
    text = text.replace(dir.to_str().unwrap(), "<dir>");
    serde_json::from_str(&text).unwrap()
}

/// Copies `scenario` to a fresh folder; with `library`, its CSV files are replaced by that
/// library's Parquet files and the manifest names those.
fn scenario(scenario: &str, files: &[(&str, &str)], library: Option<&str>) -> tempfile::TempDir {
    let from = root().join("fixtures/scenarios").join(scenario);
    let dir = tempfile::tempdir().unwrap();
    for entry in std::fs::read_dir(&from).unwrap() {
        let path = entry.unwrap().path();
        std::fs::copy(&path, dir.path().join(path.file_name().unwrap())).unwrap();
    }
    if let Some(library) = library {
        let manifest = dir.path().join("manifest.yaml");
        let mut text = std::fs::read_to_string(&manifest).unwrap();
        for (csv, parquet) in files {
            let name = format!("{parquet}.{library}.parquet");
            std::fs::copy(
                root().join("fixtures/parquet").join(&name),
                dir.path().join(&name),
            )
            .unwrap();
            std::fs::remove_file(dir.path().join(csv)).unwrap();
            text = text.replace(csv, &name);
        }
        std::fs::write(&manifest, text).unwrap();
    }
    dir
}

fn same_report(name: &str, files: &[(&str, &str)], libraries: &[&str]) {
    let csv = scenario(name, files, None);
    let names: Vec<String> = files.iter().map(|(c, _)| (*c).to_owned()).collect();
    let csv_names: Vec<&str> = names.iter().map(String::as_str).collect();
    let expected = report(csv.path(), &csv_names);
    for library in libraries {
        let dir = scenario(name, files, Some(library));
        let parquet: Vec<String> = files
            .iter()
            .map(|(_, p)| format!("{p}.{library}.parquet"))
            .collect();
        let parquet_names: Vec<&str> = parquet.iter().map(String::as_str).collect();
        assert_eq!(
            report(dir.path(), &parquet_names),
            expected,
            "{name} from {library}'s Parquet"
        );
    }
}

#[test]
fn string_and_dictionary_classes_give_the_csv_report() {
    // pandas: string dtype classes, the baseline's as categoricals; polars: Categorical.
    same_report(
        "evidence-accuracy",
        &[
            ("predictions.csv", "accuracy-predictions"),
            ("baseline.csv", "accuracy-baseline"),
        ],
        &["pandas", "polars"],
    );
}

#[test]
fn integer_boolean_and_float_columns_give_the_csv_report() {
    // pandas: int64 labels, float64 scores; polars: Boolean labels with Float32 scores, and
    // Int32 labels; regression targets and predictions float64 in both.
    let files = [
        ("auc-predictions.csv", "auc-predictions"),
        ("reg-predictions.csv", "reg-predictions"),
        ("reg-baseline.csv", "reg-baseline"),
    ];
    same_report("evidence-auc-regression", &files, &["pandas", "polars"]);
    same_report(
        "evidence-auc-regression",
        &[("auc-predictions.csv", "auc-predictions-int32")],
        &["polars"],
    );
}

#[test]
fn a_parquet_file_named_csv_is_read_by_its_magic_bytes() {
    let dir = scenario("evidence-auc-regression", &[], None);
    std::fs::copy(
        root().join("fixtures/parquet/auc-predictions.pandas.parquet"),
        dir.path().join("auc-predictions.csv"),
    )
    .unwrap();
    let csv = scenario("evidence-auc-regression", &[], None);
    assert_eq!(
        report(dir.path(), &["auc-predictions.csv"]),
        report(csv.path(), &["auc-predictions.csv"])
    );
}
