//! The parser and the published JSON Schema agree on quoted numbers and booleans (issue 12,
//! item 15): the documents `check` refuses with exit 2 (the bad-input cases `quoted-number`,
//! `quoted-boolean` and `yaml11-boolean`, whose messages `tests/bad_input.rs` checks) are the
//! ones `vetscore schema manifest` / `schema policy` reject, and text that only looks like a
//! number or a boolean stays a string where the schema expects a string.

#![allow(clippy::unwrap_used)]

mod common;

use common::{stdout, vetscore};

/// Text replacements: (what is in the file, what replaces it).
type Edits = &'static [(&'static str, &'static str)];

/// The documents of the bad-input cases on this subject, the schema each is checked by, and the
/// edits that write its values as the schema wants them.
const CASES: [(&str, &str, Edits); 7] = [
    (
        "quoted-number/manifest.yaml",
        "manifest",
        &[("\"100\"", "100"), ("'0.8'", "0.8")],
    ),
    (
        "quoted-number/manifest.json",
        "manifest",
        &[("\"50\"", "50")],
    ),
    (
        "quoted-number/policy.yaml",
        "policy",
        &[("\"0.95\"", "0.95")],
    ),
    (
        "quoted-boolean/manifest.yaml",
        "manifest",
        &[("\"true\"", "true")],
    ),
    (
        "quoted-boolean/policy.yaml",
        "policy",
        &[("'false'", "false")],
    ),
    (
        "yaml11-boolean/manifest.yaml",
        "manifest",
        &[(": yes", ": true")],
    ),
    (
        "yaml11-boolean/policy.yaml",
        "policy",
        &[(": on", ": true")],
    ),
];

/// `text` as a YAML 1.2 reader sees it (the Core schema: quoted scalars are strings, and so are
/// `yes`, `no`, `on`, `off`), which is the reading the JSON Schema validates.
fn yaml_1_2(text: &str) -> serde_json::Value {
    let options = serde_saphyr::options! { strict_booleans: true };
    serde_saphyr::from_str_with_options(text, options).unwrap()
}

fn validator(kind: &str) -> jsonschema::Validator {
    let schema: serde_json::Value =
        serde_json::from_str(&stdout(&vetscore(&["schema", kind]))).unwrap();
    jsonschema::validator_for(&schema).unwrap()
}

fn schema_errors(kind: &str, text: &str) -> Vec<String> {
    validator(kind)
        .iter_errors(&yaml_1_2(text))
        .map(|e| e.to_string())
        .collect()
}

#[test]
fn the_json_schema_rejects_every_document_the_parser_refuses() {
    let root = common::root().join("tests/bad-input");
    for (file, kind, edits) in CASES {
        let text = std::fs::read_to_string(root.join(file)).unwrap();
        assert!(
            !schema_errors(kind, &text).is_empty(),
            "{file}: the {kind} schema accepts it"
        );
        // With only the refused values rewritten, the schema accepts it: it was refused for
        // those values and nothing else.
        let mut fixed = text.clone();
        for (from, to) in edits {
            assert!(fixed.contains(from), "{file}: no {from}");
            fixed = fixed.replace(from, to);
        }
        let errors = schema_errors(kind, &fixed);
        assert!(errors.is_empty(), "{file} rewritten: {errors:#?}");
    }
}

#[test]
fn strings_that_look_like_numbers_or_booleans_stay_strings() {
    let dir = tempfile::tempdir().unwrap();
    // A model named 2026 and one named yes, classes yes and no, a severity written `off`: all
    // are strings in the schema, so none is refused whether quoted or not.
    std::fs::write(
        dir.path().join("manifest.yaml"),
        "format_version: 1\n\
         models:\n\
         \x20 - name: \"2026\"\n\
         \x20   task: binary\n\
         \x20   metric: accuracy\n\
         \x20   data: {train_rows: 100, test_rows: 4, test_fingerprint: \"2026\"}\n\
         \x20   holdout:\n\
         \x20     - {score: 0.75, correct: 3}\n\
         \x20   predictions: {file: predictions.csv, classes: [yes, no], positive_class: yes}\n\
         \x20   claim: {value: 0.75, basis: test}\n\
         \x20 - name: yes\n\
         \x20   task: binary\n\
         \x20   metric: accuracy\n\
         \x20   data: {train_rows: 100, test_rows: 4, test_fingerprint: \"true\"}\n\
         \x20   holdout:\n\
         \x20     - {score: 0.75}\n\
         \x20   claim: {value: 0.75, basis: test}\n",
    )
    .unwrap();
    std::fs::write(
        dir.path().join("predictions.csv"),
        "id,label,prediction\na,yes,yes\nb,no,no\nc,yes,no\nd,no,no\n",
    )
    .unwrap();
    std::fs::write(
        dir.path().join("policy.yaml"),
        "format_version: 1\nrules:\n  interval_overlap: {severity: off}\n  fold_size:\n    severity: 'off'\n",
    )
    .unwrap();
    let json = dir.path().join("report.json");
    let output = std::process::Command::new(env!("CARGO_BIN_EXE_vetscore"))
        .args(["check", "--today", "2026-12-01", "manifest.yaml"])
        .args(["--policy", "policy.yaml", "--json"])
        .arg(&json)
        .current_dir(dir.path())
        .output()
        .unwrap();
    let code = output.status.code();
    assert!(
        matches!(code, Some(0 | 1)),
        "exit {code:?}: {}",
        String::from_utf8_lossy(&output.stderr)
    );
    let report: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&json).unwrap()).unwrap();
    let names: Vec<&str> = report["models"]
        .as_array()
        .unwrap()
        .iter()
        .map(|m| m["name"].as_str().unwrap())
        .collect();
    assert_eq!(names, ["2026", "yes"]);
    // The same documents pass the published schemas, read as YAML 1.2.
    for (file, kind) in [("manifest.yaml", "manifest"), ("policy.yaml", "policy")] {
        let errors = schema_errors(
            kind,
            &std::fs::read_to_string(dir.path().join(file)).unwrap(),
        );
        assert!(errors.is_empty(), "{file}: {errors:#?}");
    }
}

/// A manifest's values: (key path for the message, YAML text, whether the schema wants a string).
/// The texts are what a writer might put there; the quoting is drawn by the property below.
const FIELDS: [(&str, &str, bool); 8] = [
    ("models[0].name", "2026", true),
    ("models[0].data.train_rows", "100", false),
    ("models[0].data.test_rows", "50", false),
    ("models[0].data.test_fingerprint", "1e3", true),
    ("models[0].holdout[0].score", "0.8", false),
    ("models[0].holdout[0].rows", "50", false),
    ("models[0].claim.value", "0.8", false),
    ("models[0].claim.beats_baseline", "false", false),
];

/// The manifest with each field written plain (`None`) or in the quotes given.
fn manifest_with(quotes: &[Option<char>]) -> String {
    let v: Vec<String> = FIELDS
        .iter()
        .zip(quotes)
        .map(|((_, text, _), q)| match q {
            Some(q) => format!("{q}{text}{q}"),
            None => (*text).to_owned(),
        })
        .collect();
    format!(
        "format_version: 1\nmodels:\n  - name: {}\n    task: binary\n    metric: accuracy\n    \
         data: {{train_rows: {}, test_rows: {}, test_fingerprint: {}}}\n    holdout:\n      \
         - {{score: {}, rows: {}}}\n    claim: {{value: {}, basis: test, beats_baseline: {}}}\n",
        v[0], v[1], v[2], v[3], v[4], v[5], v[6], v[7]
    )
}

proptest::proptest! {
    #![proptest_config(proptest::prelude::ProptestConfig::with_cases(64))]

    /// Whatever the quoting, the parser refuses exactly the fields the jsonschema crate
    /// (0.61) finds of the wrong type in the YAML 1.2 reading, and names each one. String
    /// fields are always quoted here: written plain, `2026` or `1e3` is a number to a YAML 1.2
    /// reader but stays the string it must be to the parser, the one place it is more lenient
    /// than the schema.
    #[test]
    fn the_parser_refuses_what_the_schema_rejects(
        quotes in proptest::collection::vec(
            proptest::option::of(proptest::sample::select(vec!['"', '\''])),
            FIELDS.len(),
        )
    ) {
        let mut quotes = quotes;
        for (q, (_, _, string)) in quotes.iter_mut().zip(FIELDS) {
            if string && q.is_none() {
                *q = Some('"');
            }
        }
        let text = manifest_with(&quotes);
        let refused: Vec<String> =
            match vetscore::input::parse::<vetscore::manifest::raw::RawManifest>(
                "m.yaml",
                &text,
                vetscore::input::Syntax::Yaml,
            ) {
                Ok(_) => Vec::new(),
                Err(problems) => problems.into_iter().filter_map(|d| d.path).collect(),
            };
        let schema_errors = schema_errors("manifest", &text);
        let wrong: Vec<&str> = FIELDS
            .iter()
            .zip(&quotes)
            .filter(|((_, _, string), q)| q.is_some() && !string)
            .map(|((path, _, _), _)| *path)
            .collect();
        proptest::prop_assert_eq!(&refused, &wrong, "{}", text);
        proptest::prop_assert_eq!(schema_errors.len(), wrong.len(), "{}: {:?}", text, schema_errors);
    }
}
