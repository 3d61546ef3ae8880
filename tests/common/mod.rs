//! Shared helpers for the integration tests: run the built binary, and read its JSON report
//! with test-side types that are independent of the crate's own (so renaming a field in the
//! report breaks a test).

#![allow(dead_code, clippy::unwrap_used)]

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

use serde::Deserialize;

pub fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

/// Runs `vetscore` with `args` from the repository root, with a clean environment for the
/// variables vetscore reads.
pub fn vetscore(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_vetscore"))
        .args(args)
        .current_dir(root())
        .env_remove("GITHUB_STEP_SUMMARY")
        .env_remove("GITHUB_ACTIONS")
        .env_remove("NO_COLOR")
        .output()
        .unwrap()
}

/// How a run under [`run_bounded`] ended.
#[derive(Debug)]
pub struct Bounded {
    /// `None` when the run was killed at the time limit (or died by a signal).
    pub code: Option<i32>,
    pub stdout: String,
    pub stderr: String,
    /// Peak resident memory in KiB (VmHWM from /proc, polled every 10 ms; 0 where /proc is
    /// missing). A lower bound: growth in the last few milliseconds before exit can be missed.
    pub peak_kib: u64,
    pub elapsed: std::time::Duration,
}

/// Runs `vetscore` in `dir` with `args` and `stdin` (nothing when `None`), killing it after
/// `limit`. The limit is a hang detector, never a timing assertion: it is far above any
/// expected run time.
pub fn run_bounded(
    dir: &Path,
    args: &[&str],
    stdin: Option<std::process::Stdio>,
    envs: &[(&str, &str)],
    limit: std::time::Duration,
) -> Bounded {
    use std::io::Read as _;
    let mut command = Command::new(env!("CARGO_BIN_EXE_vetscore"));
    command
        .args(args)
        .current_dir(dir)
        .env_remove("GITHUB_STEP_SUMMARY")
        .env_remove("GITHUB_ACTIONS")
        .env_remove("NO_COLOR")
        .stdin(stdin.unwrap_or_else(std::process::Stdio::null))
        .stdout(std::process::Stdio::piped())
        .stderr(std::process::Stdio::piped());
    for (k, v) in envs {
        command.env(k, v);
    }
    let start = std::time::Instant::now();
    let mut child = command.spawn().unwrap();
    let mut out_pipe = child.stdout.take().unwrap();
    let mut err_pipe = child.stderr.take().unwrap();
    let out_thread = std::thread::spawn(move || {
        let mut s = Vec::new();
        let _ = out_pipe.read_to_end(&mut s);
        s
    });
    let err_thread = std::thread::spawn(move || {
        let mut s = Vec::new();
        let _ = err_pipe.read_to_end(&mut s);
        s
    });
    let status_file = format!("/proc/{}/status", child.id());
    let mut peak_kib = 0;
    let status = loop {
        if let Some(status) = child.try_wait().unwrap() {
            break Some(status);
        }
        if let Ok(text) = std::fs::read_to_string(&status_file)
            && let Some(line) = text.lines().find(|l| l.starts_with("VmHWM:"))
        {
            let kib: u64 = line
                .split_whitespace()
                .nth(1)
                .and_then(|v| v.parse().ok())
                .unwrap_or(0);
            peak_kib = peak_kib.max(kib);
        }
        if start.elapsed() > limit {
            let _ = child.kill();
            let _ = child.wait();
            break None;
        }
        std::thread::sleep(std::time::Duration::from_millis(10));
    };
    let elapsed = start.elapsed();
    Bounded {
        code: status.and_then(|s| s.code()),
        stdout: String::from_utf8_lossy(&out_thread.join().unwrap()).into_owned(),
        stderr: String::from_utf8_lossy(&err_thread.join().unwrap()).into_owned(),
        peak_kib,
        elapsed,
    }
}

/// Whether a CI runner would read `line` as a workflow command: GitHub's `::` after leading
/// whitespace (its runner trims with .NET `TrimStart`, Unicode whitespace), or `##[` / Azure's
/// `##vso[` anywhere in the line (both runners' documented logging-command syntax).
pub fn is_workflow_command(line: &str) -> bool {
    line.trim_start().starts_with("::")
        || line.contains("##[")
        || line.to_ascii_lowercase().contains("##vso[")
}

pub fn stderr(output: &Output) -> String {
    String::from_utf8_lossy(&output.stderr).into_owned()
}

pub fn stdout(output: &Output) -> String {
    String::from_utf8_lossy(&output.stdout).into_owned()
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Report {
    pub report_version: u32,
    pub tool: Tool,
    pub verdict: String,
    pub verdict_label: String,
    pub counts: Counts,
    pub policy: PolicyInfo,
    pub notes: Vec<String>,
    pub policy_diff: Option<serde_json::Value>,
    pub policy_review: Option<serde_json::Value>,
    pub since_base: Option<serde_json::Value>,
    pub ledger_head: Option<LedgerHead>,
    pub models: Vec<ModelReport>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct LedgerHead {
    pub file: String,
    pub entries: u64,
    pub last_hash: String,
    pub file_missing: bool,
    pub extends: Vec<serde_json::Value>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Tool {
    pub name: String,
    pub version: String,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Counts {
    pub models: usize,
    pub supported: usize,
    pub with_warnings: usize,
    pub not_supported: usize,
    pub claims_not_supported: usize,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct PolicyInfo {
    pub file: Option<String>,
    pub digest: String,
    pub confidence: f64,
    pub confidence_text: String,
    pub interval_method: String,
    pub interval_method_label: String,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ModelReport {
    pub name: String,
    pub file: String,
    pub line: Option<u64>,
    pub metric: String,
    pub higher_is_better: bool,
    pub test_fingerprint: String,
    pub claim: ClaimReport,
    pub cv: Option<EstimateReport>,
    pub test: Option<EstimateReport>,
    pub gap: Option<f64>,
    pub verdict: String,
    pub verdict_label: String,
    pub findings: Vec<FindingReport>,
    pub strip: Vec<String>,
    pub trials_histogram: Vec<String>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ClaimReport {
    pub value: f64,
    pub basis: String,
    pub text: Option<String>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct EstimateReport {
    pub value: f64,
    pub lower: Option<f64>,
    pub upper: Option<f64>,
    pub rows: u64,
    pub correct: Option<u64>,
    pub basis: serde_json::Value,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct FindingReport {
    pub rule: String,
    pub rule_name: String,
    pub severity: String,
    pub status: String,
    pub effect: String,
    pub message: String,
    pub message_markdown: String,
    pub evidence: Vec<EvidenceReport>,
    pub policy: serde_json::Value,
    pub waiver: Option<serde_json::Value>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct EvidenceReport {
    pub key: String,
    pub label: String,
    #[serde(rename = "type")]
    pub kind: String,
    pub value: Option<serde_json::Value>,
    pub lower: Option<f64>,
    pub upper: Option<f64>,
    pub confidence: Option<f64>,
    pub quantity: Option<String>,
    pub text: String,
}

impl Report {
    pub fn read(path: &Path) -> Report {
        serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap()
    }

    pub fn model(&self, name: &str) -> &ModelReport {
        self.models
            .iter()
            .find(|m| m.name == name)
            .unwrap_or_else(|| panic!("no model {name} in the report"))
    }
}

impl ModelReport {
    pub fn finding(&self, rule: &str) -> &FindingReport {
        self.findings
            .iter()
            .find(|f| f.rule == rule)
            .unwrap_or_else(|| panic!("no finding for rule {rule} on {}", self.name))
    }
}

impl FindingReport {
    pub fn evidence(&self, key: &str) -> &EvidenceReport {
        self.evidence
            .iter()
            .find(|e| e.key == key)
            .unwrap_or_else(|| panic!("no evidence {key} in finding {}", self.rule))
    }
}

/// Asserts |actual − expected| ≤ tolerance, naming what was compared.
pub fn assert_close(what: &str, actual: f64, expected: f64, tolerance: f64) {
    assert!(
        (actual - expected).abs() <= tolerance,
        "{what}: expected {expected} ± {tolerance}, got {actual}"
    );
}

/// One model of a manifest's `models:` list in the shape of the `supported` scenario: 1,052
/// training rows in four folds of 263 at 81 correct, and one test look at 81 of 263 (Newcombe
/// 1998a's example, Wilson interval [0.2553, 0.3662]), on its own test split `fp-{split}`. A claim
/// of 0.31 lies inside that interval and is supported; 0.40 lies far above it and is not.
pub fn quince_model(name: &str, split: &str, claim: &str) -> String {
    format!(
        r#"  - name: {name}
    task: binary
    metric: accuracy
    seed: 3
    data: {{train_rows: 1052, test_rows: 263, test_fingerprint: "fp-{split}"}}
    search:
      method: grid
      configurations: 12
      cv:
        scheme: k_fold
        folds:
          - {{rows: 263, score: 0.3080, correct: 81}}
          - {{rows: 263, score: 0.3080}}
          - {{rows: 263, score: 0.3080}}
          - {{rows: 263, score: 0.3080}}
    holdout:
      - {{time: 2026-11-01T10:00:00Z, score: 0.3080, correct: 81}}
    claim: {{value: {claim}, basis: test}}
"#
    )
}
