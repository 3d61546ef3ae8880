//! Every case under `tests/bad-input/` is an invalid input. vetscore must exit with code 2, list
//! the exact error lines in the case's `expected.txt` (file, line, column, key path, message and
//! help), and check nothing. A case runs `vetscore check` on its manifests (and `policy.yaml`),
//! or on the arguments in its `args.txt`.

#![allow(clippy::unwrap_used)]

mod common;

use common::{stderr, vetscore};

fn case_args(dir: &std::path::Path, name: &str) -> Vec<String> {
    let args = dir.join("args.txt");
    if args.exists() {
        return std::fs::read_to_string(args)
            .unwrap()
            .lines()
            .map(str::to_owned)
            .collect();
    }
    let mut files: Vec<String> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .filter(|f| (f.ends_with(".yaml") || f.ends_with(".json")) && f != "policy.yaml")
        .map(|f| format!("tests/bad-input/{name}/{f}"))
        .collect();
    files.sort();
    let mut args = vec![
        "check".to_owned(),
        "--today".to_owned(),
        "2026-12-01".to_owned(),
    ];
    args.extend(files);
    if dir.join("policy.yaml").exists() {
        args.push("--policy".to_owned());
        args.push(format!("tests/bad-input/{name}/policy.yaml"));
    }
    args
}

#[test]
fn every_bad_input_is_rejected_with_its_expected_messages() {
    let root = common::root().join("tests/bad-input");
    let mut cases: Vec<_> = std::fs::read_dir(&root)
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.is_dir())
        .collect();
    cases.sort();
    assert!(
        cases.len() >= 50,
        "the corpus shrank to {} cases",
        cases.len()
    );
    let mut failures = Vec::new();
    for dir in &cases {
        let name = dir.file_name().unwrap().to_string_lossy().into_owned();
        let expected = std::fs::read_to_string(dir.join("expected.txt"))
            .unwrap_or_else(|_| panic!("{name}: missing expected.txt"));
        let args = case_args(dir, &name);
        let argv: Vec<&str> = args.iter().map(String::as_str).collect();
        let output = vetscore(&argv);
        let got = stderr(&output);
        if output.status.code() != Some(2) {
            failures.push(format!(
                "{name}: exit {:?}, expected 2\n{got}",
                output.status.code()
            ));
        }
        if !output.stdout.is_empty() {
            failures.push(format!("{name}: wrote to stdout on invalid input"));
        }
        let lines: Vec<&str> = got.lines().collect();
        for want in expected.lines().filter(|l| !l.trim().is_empty()) {
            if !lines.contains(&want) {
                failures.push(format!("{name}: missing line\n  {want}\ngot:\n{got}"));
            }
        }
    }
    assert!(failures.is_empty(), "{}", failures.join("\n\n"));
}
