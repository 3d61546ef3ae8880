//! The merge-request pipeline commands: the "since base" comparison, `init` and `plan`.

#![allow(clippy::unwrap_used)]

mod common;

use common::{assert_close, stderr, stdout, vetscore};

const DEMO_POLICY: &str = "fixtures/demo/policy.yaml";

fn check_json(manifests: &str, extra: &[&str], json: &std::path::Path) -> std::process::Output {
    let mut args = vec![
        "check",
        "--policy",
        DEMO_POLICY,
        "--today",
        "2026-12-01",
        "--json",
        json.to_str().unwrap(),
    ];
    args.extend_from_slice(extra);
    args.push(manifests);
    vetscore(&args)
}

#[test]
fn since_base_lists_what_moved_what_resolved_and_what_was_removed() {
    let dir = tempfile::tempdir().unwrap();
    let base = dir.path().join("base.json");
    check_json("fixtures/demo/manifests/*", &[], &base);

    // The merge request: the logit claim is lowered to 0.91, the gbm model's test evaluation
    // reads 871 of 1000 correct, and the 11-28 run (forest-v6) is no longer part of the check.
    let mr = dir.path().join("mr");
    std::fs::create_dir_all(mr.join("manifests")).unwrap();
    std::fs::create_dir_all(mr.join("trials")).unwrap();
    let root = common::root().join("fixtures/demo");
    std::fs::copy(
        root.join("trials/knn-small-trials.csv"),
        mr.join("trials/knn-small-trials.csv"),
    )
    .unwrap();
    let logit = std::fs::read_to_string(root.join("manifests/run-2026-11-30-logit.json"))
        .unwrap()
        .replace("\"value\": 0.93,", "\"value\": 0.91,");
    std::fs::write(mr.join("manifests/run-2026-11-30-logit.json"), logit).unwrap();
    // And the knn model is scored on a new test split.
    let run = std::fs::read_to_string(root.join("manifests/run-2026-11-30.yaml"))
        .unwrap()
        .replace("score: 0.868, correct: 868", "score: 0.871, correct: 871")
        .replace(
            "sha256:b83f0e6a1d4c97e25f0a3b8c6d1e4f79a2c5b0e8d7f3a6c9b1e4d2a7f05c8e31",
            "sha256:5d0c0ffee0000000000000000000000000000000000000000000000000000000",
        );
    std::fs::write(mr.join("manifests/run-2026-11-30.yaml"), run).unwrap();

    let json = dir.path().join("mr.json");
    let pattern = format!("{}/manifests/*", mr.display());
    // The merge request's files live in a temporary directory: let the check read there.
    let out = check_json(
        &pattern,
        &[
            "--baseline",
            base.to_str().unwrap(),
            "--root",
            dir.path().to_str().unwrap(),
        ],
        &json,
    );
    assert_eq!(out.status.code(), Some(1), "{}", stderr(&out));
    let report: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&json).unwrap()).unwrap();
    let since = &report["since_base"];
    assert_eq!(since["base_verdict"], "not_supported");
    assert_eq!(since["removed"], serde_json::json!(["ripeness-forest-v6"]));
    assert_eq!(since["added"], serde_json::json!([]));
    let verdicts = since["verdicts"].as_array().unwrap();
    assert!(verdicts.iter().any(|v| v["model"] == "ripeness-logit-v2"
        && v["before"] == "not_supported"
        && v["after"] == "supported"));
    let moved = since["moved"].as_array().unwrap();
    let gbm = moved
        .iter()
        .find(|m| m["model"] == "ripeness-gbm-v4" && m["estimate"] == "test")
        .unwrap();
    assert_eq!(gbm["before"], 0.868);
    assert_eq!(gbm["after"], 0.871);
    // 871/1000 Wilson 95%: statsmodels 0.15.0 proportion_confint(871, 1000, method='wilson').
    assert_close(
        "gbm after upper",
        gbm["after_upper"].as_f64().unwrap(),
        0.8904,
        5e-5,
    );
    let resolved = since["resolved_findings"].as_array().unwrap();
    assert!(
        resolved
            .iter()
            .any(|f| f["model"] == "ripeness-logit-v2" && f["rule"] == "claim_support")
    );
    let splits = since["split_changes"].as_array().unwrap();
    assert_eq!(splits.len(), 1);
    assert_eq!(splits[0]["model"], "ripeness-knn-small");
    let knn = report["models"]
        .as_array()
        .unwrap()
        .iter()
        .find(|m| m["name"] == "ripeness-knn-small")
        .unwrap();
    let split = knn["findings"]
        .as_array()
        .unwrap()
        .iter()
        .find(|f| f["rule"] == "test_split")
        .unwrap();
    assert_eq!(split["status"], "fail");
    // Without forest-v6's two looks the shared split has four: forest-v7 still fails its budget.
    let open = since["open_findings"].as_array().unwrap();
    assert!(
        open.iter()
            .any(|f| f["model"] == "ripeness-forest-v7" && f["rule"] == "holdout_budget")
    );
}

#[test]
fn a_baseline_that_is_not_a_report_is_invalid_input() {
    let out = vetscore(&[
        "check",
        "--baseline",
        "fixtures/demo/policy.yaml",
        "fixtures/scenarios/supported/manifest.yaml",
    ]);
    assert_eq!(out.status.code(), Some(2));
    assert!(stderr(&out).contains("fixtures/demo/policy.yaml: not a vetscore JSON report"));
}

#[test]
fn init_writes_the_default_policy_and_the_shipped_ci_snippets() {
    let dir = tempfile::tempdir().unwrap();
    let policy = dir.path().join("vetscore-policy.yaml");
    let out = vetscore(&["init", "--policy", policy.to_str().unwrap()]);
    assert_eq!(out.status.code(), Some(0), "{}", stderr(&out));
    assert_eq!(stdout(&out), "", "remarks go to standard error");
    let written = vetscore::policy::Policy::load(&policy).unwrap();
    let defaults = vetscore::policy::Policy::defaults();
    assert_eq!(
        written.settings_for("any").0,
        defaults.settings_for("any").0
    );
    assert_eq!(written.confidence, defaults.confidence);
    for (system, example) in [
        ("github", ".github/examples/vetscore.yml"),
        ("gitlab", ".github/examples/vetscore.gitlab-ci.yml"),
    ] {
        let text = std::fs::read_to_string(common::root().join(example)).unwrap();
        assert!(text.contains("<!-- vetscore:report -->"));
        // To standard output with `-`: exactly the file, nothing else.
        let piped = vetscore(&[
            "init",
            "--policy",
            policy.to_str().unwrap(),
            "--ci",
            system,
            "--ci-output",
            "-",
        ]);
        assert_eq!(piped.status.code(), Some(0), "{}", stderr(&piped));
        assert_eq!(
            stdout(&piped),
            text,
            "init --ci {system} prints {example} alone"
        );
        assert!(stderr(&piped).contains("Kept the existing policy"));
        // To a file, and never over an existing one without --force.
        let file = dir.path().join(format!("ci/{system}.yml"));
        let args = [
            "init",
            "--policy",
            policy.to_str().unwrap(),
            "--ci",
            system,
            "--ci-output",
            file.to_str().unwrap(),
        ];
        assert_eq!(vetscore(&args).status.code(), Some(0));
        assert_eq!(std::fs::read_to_string(&file).unwrap(), text);
        assert_eq!(vetscore(&args).status.code(), Some(2));
    }
    // A second plain run refuses to overwrite the policy.
    let again = vetscore(&["init", "--policy", policy.to_str().unwrap()]);
    assert_eq!(again.status.code(), Some(2));
    assert!(stderr(&again).contains("already exists"));
}

#[test]
fn completions_man_page_and_unknown_rules() {
    let bash = vetscore(&["completions", "bash"]);
    assert_eq!(bash.status.code(), Some(0));
    // clap_complete's bash script registers a completion function for the command.
    assert!(stdout(&bash).contains("complete -F _vetscore"));
    assert!(stdout(&bash).contains("--max-chars"));
    let man = vetscore(&["man"]);
    assert_eq!(man.status.code(), Some(0));
    // roff: the title header and the command's sections (man-pages(7)).
    assert!(stdout(&man).contains(".TH vetscore 1"));
    assert!(stdout(&man).contains(".SH NAME"));
    let unknown = vetscore(&["explain", "holdout_budgets"]);
    assert_eq!(unknown.status.code(), Some(2));
    let listed = stderr(&unknown);
    assert!(listed.contains("did you mean"), "{listed}");
    for rule in vetscore::rules::RULES {
        assert!(listed.contains(rule.id), "{} is not listed", rule.id);
    }
}

#[test]
fn plan_matches_cochran_and_the_hoeffding_bound_worked_by_hand() {
    let out = vetscore(&[
        "plan", "--rows", "1000", "--margin", "0.05", "--looks", "10", "--json",
    ]);
    assert_eq!(out.status.code(), Some(0), "{}", stderr(&out));
    let plan: serde_json::Value = serde_json::from_str(&stdout(&out)).unwrap();
    // Cochran (1977): n0 = 1.96^2 * 0.25 / 0.05^2 = 384.16 -> 385 rows.
    assert_eq!(plan["rows_cochran"], 385);
    // Hoeffding (1963) with a union bound over k = 10 looks: n >= ln(2k/alpha) / (2 E^2)
    // = ln(400) / 0.005 = 5.99146 / 0.005 = 1198.29 -> 1199 rows.
    assert_eq!(plan["rows_hoeffding"], 1199);
    // Margin for n = 1000 over 10 looks: sqrt(ln(400) / 2000) = sqrt(0.0029957) = 0.054733.
    assert_close(
        "hoeffding margin",
        plan["margin_hoeffding"].as_f64().unwrap(),
        0.054733283,
        1e-8,
    );
    // Looks that keep +-0.05 on 1000 rows: 2k exp(-2 n E^2) <= alpha, k <= 0.025 e^5 = 3.71 -> 3.
    assert_eq!(plan["looks_hoeffding"], 3);
    // Bonferroni: z(1 - alpha/2k) * 0.5 / sqrt(1000) <= 0.05 needs z <= 3.16228; scipy 1.17.1
    // norm.isf(0.05/62) = 3.15356 (k = 31 fits), norm.isf(0.05/64) = 3.16282 (k = 32 does not).
    assert_eq!(plan["looks_bonferroni"], 31);
    // One look: 1.959964 * sqrt(0.25 / 1000) = 0.0309898 (z from scipy 1.17.1 norm.isf(0.025)).
    assert_close(
        "normal margin",
        plan["margin_normal"].as_f64().unwrap(),
        0.030989752,
        1e-8,
    );

    let none = vetscore(&["plan"]);
    assert_eq!(none.status.code(), Some(2));
}

#[test]
fn the_readme_merge_request_story_holds() {
    let dir = tempfile::tempdir().unwrap();
    let base = dir.path().join("base.json");
    let ledger = dir.path().join("vetscore-ledger.jsonl");
    check_json("fixtures/demo/manifests/*", &[], &base);
    let append = vetscore(&[
        "ledger",
        "append",
        "--ledger",
        ledger.to_str().unwrap(),
        "fixtures/demo/manifests/*",
    ]);
    assert!(stdout(&append).contains("9 new entries"));
    let json = dir.path().join("report.json");
    let junit = dir.path().join("junit.xml");
    let comment = dir.path().join("comment.md");
    let out = vetscore(&[
        "check",
        "--markdown",
        comment.to_str().unwrap(),
        "--policy",
        "fixtures/demo/merge-request/policy.yaml",
        "--base-policy",
        DEMO_POLICY,
        "--baseline",
        base.to_str().unwrap(),
        "--ledger",
        ledger.to_str().unwrap(),
        "--today",
        "2026-12-01",
        "--json",
        json.to_str().unwrap(),
        "--junit",
        junit.to_str().unwrap(),
        "fixtures/demo/merge-request/manifests/*",
    ]);
    assert_eq!(out.status.code(), Some(1), "{}", stderr(&out));
    let report: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&json).unwrap()).unwrap();
    let since = &report["since_base"];
    assert_eq!(since["added"], serde_json::json!(["ripeness-gbm-v5"]));
    let resolved = since["resolved_findings"].as_array().unwrap();
    for (model, rule) in [
        ("ripeness-logit-v2", "claim_support"),
        ("ripeness-forest-v7", "holdout_budget"),
    ] {
        assert!(
            resolved
                .iter()
                .any(|f| f["model"] == model && f["rule"] == rule)
        );
    }
    let forest = report["models"]
        .as_array()
        .unwrap()
        .iter()
        .find(|m| m["name"] == "ripeness-forest-v7")
        .unwrap();
    let change = forest["findings"]
        .as_array()
        .unwrap()
        .iter()
        .find(|f| f["rule"] == "policy_change")
        .unwrap();
    assert_eq!(change["status"], "fail");
    assert_eq!(change["severity"], "error");
    assert!(
        change["message"]
            .as_str()
            .unwrap()
            .contains("rules.holdout_budget.max_evaluations: 3 → 6")
    );
    assert!(
        report["policy_diff"]["text"]
            .as_str()
            .unwrap()
            .contains("+    max_evaluations: 6")
    );
    assert!(junit.exists());

    // The headline tells the truth: the policy change once, and the one model its own evidence
    // does not support (knn-small, whose claim fails under either policy).
    let markdown = std::fs::read_to_string(&comment).unwrap();
    assert_eq!(
        markdown
            .matches("**Blocked until the policy change is reviewed.**")
            .count(),
        1
    );
    assert!(markdown.contains("**1 of 6 model claims are not supported by their own evidence**"));
    assert!(
        !markdown.contains("- **Policy change**"),
        "no per-model bullet"
    );
    assert!(!markdown.contains("Tightened: "), "no empty list");
    assert_eq!(report["counts"]["claims_not_supported"], 1);
    assert_eq!(report["policy_review"]["models"], 6);
    // sha256sum fixtures/demo/merge-request/policy.yaml (GNU coreutils).
    let digest = "f76ac5e35d76f8f81c8a72a79dd80a1b4ee5c2a5626adb2639b56ebced2113b5";
    assert_eq!(report["policy_review"]["digest"], digest);
    readme_excerpt_is_in(&markdown);

    // A reviewer accepts the change on the base branch: the same merge request now fails only
    // for knn-small.
    let reviewed = dir.path().join("vetscore-reviewed-policies.txt");
    std::fs::write(
        &reviewed,
        format!("# reviewed\nsha256:{digest}  # budget 3 -> 6\n"),
    )
    .unwrap();
    let accepted = vetscore(&[
        "check",
        "--json",
        json.to_str().unwrap(),
        "--policy",
        "fixtures/demo/merge-request/policy.yaml",
        "--base-policy",
        DEMO_POLICY,
        "--reviewed-policies",
        reviewed.to_str().unwrap(),
        "--ledger",
        ledger.to_str().unwrap(),
        "--today",
        "2026-12-01",
        "fixtures/demo/merge-request/manifests/*",
    ]);
    assert_eq!(accepted.status.code(), Some(1), "{}", stderr(&accepted));
    let report: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&json).unwrap()).unwrap();
    assert!(report["policy_review"].is_null());
    assert_eq!(report["counts"]["not_supported"], 1);
    let knn = report["models"].as_array().unwrap()[0].clone();
    assert_eq!(knn["name"], "ripeness-knn-small", "failing models first");
    for m in report["models"].as_array().unwrap() {
        let change = m["findings"]
            .as_array()
            .unwrap()
            .iter()
            .find(|f| f["rule"] == "policy_change")
            .unwrap();
        assert_eq!(change["status"], "pass");
        assert!(change["message"].as_str().unwrap().contains("accepted"));
    }
    // A malformed list is an input problem naming its line.
    std::fs::write(&reviewed, "sha256:5ee7\n").unwrap();
    let bad = vetscore(&[
        "check",
        "--reviewed-policies",
        reviewed.to_str().unwrap(),
        "fixtures/scenarios/supported/manifest.yaml",
    ]);
    assert_eq!(bad.status.code(), Some(2));
    assert!(stderr(&bad).contains("vetscore-reviewed-policies.txt:1: expected a SHA-256 digest"));
}

/// Every line of the README's merge-request excerpt is a line of the real comment, in order.
fn readme_excerpt_is_in(markdown: &str) {
    let readme = std::fs::read_to_string(common::root().join("README.md")).unwrap();
    let section = &readme[readme.find("## A merge request, end to end").unwrap()..];
    let start = section.find("```markdown\n").unwrap() + "```markdown\n".len();
    let excerpt = &section[start..start + section[start..].find("```\n").unwrap()];
    let mut lines = markdown.lines();
    for wanted in excerpt.lines().filter(|l| !l.is_empty()) {
        assert!(
            lines.any(|l| l == wanted),
            "README excerpt line not in the real output (or out of order): {wanted}"
        );
    }
}

#[test]
fn the_adopting_change_has_no_policy_change_to_review() {
    let dir = tempfile::tempdir().unwrap();
    let json = dir.path().join("report.json");
    let md = dir.path().join("report.md");
    let out = vetscore(&[
        "check",
        "--no-base-policy",
        "--policy",
        DEMO_POLICY,
        "--json",
        json.to_str().unwrap(),
        "--markdown",
        md.to_str().unwrap(),
        "fixtures/scenarios/supported/manifest.yaml",
    ]);
    assert_eq!(out.status.code(), Some(0), "{}", stderr(&out));
    let report: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&json).unwrap()).unwrap();
    let change = report["models"][0]["findings"]
        .as_array()
        .unwrap()
        .iter()
        .find(|f| f["rule"] == "policy_change")
        .unwrap()
        .clone();
    assert_eq!(change["status"], "pass");
    assert!(
        std::fs::read_to_string(&md)
            .unwrap()
            .contains("no policy change to review")
    );
    // Stating both is a usage error.
    let both = vetscore(&[
        "check",
        "--no-base-policy",
        "--base-policy",
        DEMO_POLICY,
        "fixtures/scenarios/supported/manifest.yaml",
    ]);
    assert_eq!(both.status.code(), Some(2));
}

/// Issue 9, item 11: each finding names the line of its own rule's block, in a block-style YAML
/// policy, a JSON policy and an override, not the line of the first block under `rules:`.
#[test]
fn each_finding_names_its_own_rules_policy_line() {
    let dir = tempfile::tempdir().unwrap();
    let yaml = dir.path().join("policy.yaml");
    std::fs::write(
        &yaml,
        "format_version: 1\nrules:\n  holdout_budget:\n    max_evaluations: 3\n  cv_test_gap:\n    max_gap: 0.05\n  fold_size: {min_rows: 30}\noverrides:\n  - models: [\"*\"]\n    rules:\n      claim_support:\n        min_rows: 30\n",
    )
    .unwrap();
    let json = dir.path().join("policy.json");
    std::fs::write(
        &json,
        "{\n  \"format_version\": 1,\n  \"rules\": {\n    \"holdout_budget\": {\"max_evaluations\": 3},\n    \"cv_test_gap\": {\n      \"max_gap\": 0.05\n    }\n  }\n}\n",
    )
    .unwrap();
    let manifest = "fixtures/scenarios/gap-over-bound/manifest.yaml";
    let lines = |policy: &std::path::Path| {
        let out = dir.path().join("report.json");
        vetscore(&[
            "check",
            "--policy",
            policy.to_str().unwrap(),
            "--today",
            "2026-12-01",
            "--json",
            out.to_str().unwrap(),
            manifest,
        ]);
        let report = common::Report::read(&out);
        let model = &report.models[0];
        let line = |rule: &str| {
            let p = &model.finding(rule).policy;
            (p["path"].as_str().unwrap().to_owned(), p["line"].as_u64())
        };
        (
            line("holdout_budget"),
            line("cv_test_gap"),
            line("fold_size"),
            line("claim_support"),
        )
    };
    // Counted in the texts above: the key of each block.
    let (budget, gap, fold, claim) = lines(&yaml);
    assert_eq!(budget, ("rules.holdout_budget".to_owned(), Some(3)));
    assert_eq!(gap, ("rules.cv_test_gap".to_owned(), Some(5)));
    assert_eq!(fold, ("rules.fold_size".to_owned(), Some(7)));
    assert_eq!(
        claim,
        ("overrides[0].rules.claim_support".to_owned(), Some(11))
    );
    let (budget, gap, _, _) = lines(&json);
    assert_eq!(budget, ("rules.holdout_budget".to_owned(), Some(4)));
    assert_eq!(gap, ("rules.cv_test_gap".to_owned(), Some(5)));
}

/// Issue 9, item 12: 1 − α/k rounding to 1 is not an error ("confidence ... got 1"), and a looks
/// answer that reaches the most searched says so.
#[test]
fn plan_handles_looks_beyond_float_confidence_and_says_when_it_stops_searching() {
    let plan_args = [
        "plan",
        "--rows",
        "100000000000000",
        "--margin",
        "0.01",
        "--looks",
        "1000000000000000000",
    ];
    let out = vetscore(&[&plan_args[..], &["--json"]].concat());
    assert_eq!(out.status.code(), Some(0), "{}", stderr(&out));
    let plan: serde_json::Value = serde_json::from_str(&stdout(&out)).unwrap();
    // scipy 1.17.1: norm.isf(0.05 / 1e18 / 2) * sqrt(0.25 / 1e14) (tests/reference/edges.py).
    assert_close(
        "margin_bonferroni",
        plan["margin_bonferroni"].as_f64().unwrap(),
        4.5820091331e-7,
        1e-16,
    );
    assert_eq!(plan["looks_capped"], true);
    assert_eq!(plan["looks_bonferroni"], 1_000_000_000u64);
    let text = vetscore(&plan_args);
    assert!(stdout(&text).contains("at least 1000000000 (the most searched)"));
}
