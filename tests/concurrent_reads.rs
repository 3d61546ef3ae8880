//! A model's predictions, its baseline's predictions and its id lists are read concurrently
//! (`manifest::Readers::Concurrent`, the default); the models and every diagnostic, in order,
//! must be those of reading them one after another on one thread (`Readers::OneThread`). Every
//! combination of a good, broken or missing file for each of the four inputs is tried.

#![allow(clippy::unwrap_used)]

use vetscore::manifest::{self, Readers};

/// The versions of a predictions file: good, a label outside the classes on line 3, an id
/// written twice, or no file.
const PREDICTIONS: [Option<&str>; 4] = [
    Some("id,label,prediction\na,no,no\nb,yes,no\nc,no,yes\n"),
    Some("id,label,prediction\na,no,no\nb,maybe,no\nc,no,yes\n"),
    Some("id,label,prediction\na,no,no\nb,yes,no\na,no,yes\n"),
    None,
];

/// The versions of an id list: good, a tab inside an id on line 2, no ids at all, or no file.
const IDS: [Option<&str>; 4] = [Some("a\nx\ny\n"), Some("a\nb\tc\n"), Some(""), None];

fn write(dir: &std::path::Path, name: &str, text: Option<&str>) {
    let path = dir.join(name);
    match text {
        Some(text) => std::fs::write(path, text).unwrap(),
        None => {
            let _ = std::fs::remove_file(path);
        }
    }
}

/// A model of the manifest, reading the files named.
fn model(name: &str, train: &str, test: &str, predictions: &str, baseline: &str) -> String {
    format!(
        "  - name: {name}
    task: binary
    metric: accuracy
    data:
      train_rows: 3
      test_rows: 3
      test_fingerprint: \"fp\"
      train_ids_file: {train}
      test_ids_file: {test}
    holdout:
      - {{time: 2026-11-01T10:00:00Z, score: 0.5}}
    predictions: {{file: {predictions}, classes: [\"no\", \"yes\"], positive_class: \"yes\"}}
    baseline: {{name: previous, predictions_file: {baseline}}}
    claim: {{value: 0.5, basis: test, beats_baseline: true}}
"
    )
}

#[test]
fn concurrent_reads_give_what_one_thread_gives() {
    let dir = tempfile::tempdir().unwrap();
    let manifest = dir.path().join("manifest.yaml");
    // Two models, the second reading the files of the first the other way round.
    let text = format!(
        "format_version: 1\nmodels:\n{}{}",
        model(
            "first",
            "train.txt",
            "test.txt",
            "model.csv",
            "baseline.csv"
        ),
        model(
            "second",
            "test.txt",
            "train.txt",
            "baseline.csv",
            "model.csv"
        ),
    );
    std::fs::write(&manifest, text).unwrap();
    let mut failures_first_naming_ids = 0;
    for model in PREDICTIONS {
        for baseline in PREDICTIONS {
            for test in IDS {
                for train in IDS {
                    write(dir.path(), "model.csv", model);
                    write(dir.path(), "baseline.csv", baseline);
                    write(dir.path(), "test.txt", test);
                    write(dir.path(), "train.txt", train);
                    let one = manifest::load_with(&manifest, dir.path(), Readers::OneThread);
                    let concurrent =
                        manifest::load_with(&manifest, dir.path(), Readers::Concurrent);
                    assert_eq!(
                        concurrent, one,
                        "model {model:?}, baseline {baseline:?}, test {test:?}, train {train:?}"
                    );
                    // The id lists come first in validation's order: a broken test list is the
                    // first problem reported, whatever else is broken.
                    if test == IDS[1] {
                        let first = &one.as_ref().unwrap_err()[0];
                        assert!(format!("{first:?}").contains("test.txt"), "{first:?}");
                        failures_first_naming_ids += 1;
                    }
                }
            }
        }
    }
    assert_eq!(failures_first_naming_ids, 4 * 4 * 4);
}
