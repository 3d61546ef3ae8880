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
        .env_remove("NO_COLOR")
        .output()
        .unwrap()
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
    pub models: Vec<ModelReport>,
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
