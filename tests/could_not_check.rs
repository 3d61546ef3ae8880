//! Invalid inputs still produce a report: verdict "could not check", every problem with file and
//! line, under the same marker, so the merge-request comment is replaced. The exit code stays 2.

#![allow(clippy::unwrap_used)]

mod common;

use common::{stderr, stdout, vetscore};

const MANY: &str = "tests/bad-input/many-problems/manifest.yaml";

#[test]
fn invalid_inputs_write_a_could_not_check_report_and_exit_2() {
    let dir = tempfile::tempdir().unwrap();
    let (md, json) = (dir.path().join("report.md"), dir.path().join("report.json"));
    let hostile = "runs/[click](https:__x)<img src=x onerror=alert(1)>@everyone.yaml";
    let out = vetscore(&[
        "check",
        "--markdown",
        md.to_str().unwrap(),
        "--json",
        json.to_str().unwrap(),
        MANY,
        hostile,
    ]);
    assert_eq!(out.status.code(), Some(2), "{}", stderr(&out));
    let errors: Vec<String> = stderr(&out)
        .lines()
        .filter(|l| l.starts_with("error: "))
        .map(str::to_owned)
        .collect();
    // The eight problems the bad-input case lists, and the missing file.
    let expected = std::fs::read_to_string("tests/bad-input/many-problems/expected.txt").unwrap();
    assert_eq!(errors.len(), expected.lines().count() + 1);

    let text = std::fs::read_to_string(&md).unwrap();
    assert!(text.starts_with("<!-- vetscore:report -->\n## vetscore: could not check\n"));
    assert!(text.ends_with('\n'));
    // Every problem with its file and line: 3:5 is the empty name, 19:13 the empty fold.
    assert!(text.contains(
        "- tests/bad\\-input/many\\-problems/manifest\\.yaml, line 3, column 5, at \
         models\\[0\\]\\.name: expected a model name, found an empty string"
    ));
    assert!(text.contains("line 19, column 13"));
    assert_eq!(text.matches("\n- ").count(), errors.len());
    // The hostile file name opens no link, tag or mention.
    assert!(!text.contains("[click]("));
    assert!(!text.contains("<img"));
    assert!(!text.contains("@everyone"));

    let report: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&json).unwrap()).unwrap();
    assert_eq!(report["verdict"], "could_not_check");
    assert_eq!(report["report_version"], 2);
    let problems = report["input_problems"].as_array().unwrap();
    assert_eq!(problems.len(), errors.len());
    let name = problems
        .iter()
        .find(|p| p["path"] == "models[0].name")
        .unwrap();
    assert_eq!(
        (name["line"].as_u64(), name["column"].as_u64()),
        (Some(3), Some(5))
    );
    assert_eq!(name["file"], MANY);
    assert!(problems.iter().any(|p| p["file"] == hostile));

    // Both shapes of the report follow `vetscore schema report`.
    let schema: serde_json::Value =
        serde_json::from_str(&stdout(&vetscore(&["schema", "report"]))).unwrap();
    let validator = jsonschema::validator_for(&schema).unwrap();
    assert!(validator.is_valid(&report));
    let checked = dir.path().join("checked.json");
    vetscore(&[
        "check",
        "--json",
        checked.to_str().unwrap(),
        "fixtures/scenarios/supported/manifest.yaml",
    ]);
    let checked: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&checked).unwrap()).unwrap();
    assert!(validator.is_valid(&checked));
    // A could-not-check report is not a base report to compare with.
    let again = vetscore(&[
        "check",
        "--baseline",
        json.to_str().unwrap(),
        "fixtures/scenarios/supported/manifest.yaml",
    ]);
    assert_eq!(again.status.code(), Some(2));
    assert!(stderr(&again).contains("could not check its inputs"));
}

#[test]
fn many_problems_are_cut_to_the_limit_with_a_count() {
    let dir = tempfile::tempdir().unwrap();
    // 400 missing files, each a problem with a long name.
    let names: Vec<String> = (0..400)
        .map(|i| format!("runs/{}-{i:03}.yaml", "a-long-missing-run-name".repeat(3)))
        .collect();
    let md = dir.path().join("report.md");
    let mut args = vec![
        "check",
        "--max-chars",
        "5000",
        "--markdown",
        md.to_str().unwrap(),
    ];
    args.extend(names.iter().map(String::as_str));
    let out = vetscore(&args);
    assert_eq!(out.status.code(), Some(2));
    let text = std::fs::read_to_string(&md).unwrap();
    assert!(text.encode_utf16().count() <= 5000);
    let shown = text.matches("\n- runs/").count();
    assert!(shown > 10 && shown < 400, "{shown}");
    assert!(text.contains(&format!(
        "To fit in 5000 characters, {} of 400 problems are left out",
        400 - shown
    )));
}
