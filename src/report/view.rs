//! The one view every output renders: JSON serializes it, the Markdown and terminal renderers
//! read it. Numbers stay raw here; formatted copies (`*_text`) exist only where a sentence or a
//! strip needs them, so the outputs cannot disagree.

use schemars::JsonSchema;
use serde::Serialize;

use super::{escape, format};
use crate::estimate::{Estimate, IntervalBasis};
use crate::evaluate::{Assessment, ModelAssessment};
use crate::finding::{Evidence, EvidenceValue, Finding, Severity, Status, Verdict};
use crate::manifest::{Basis, Metric};
use crate::policy::Policy;
use crate::rules;

/// Version of the JSON report format; bumped on any incompatible change. Version 2 added the
/// report of a run that could not check (`verdict: "could_not_check"`, see `problems.rs`) and the
/// ledger head (`ledger_head`).
pub const REPORT_VERSION: u32 = 2;

#[derive(Debug, Clone, Serialize, JsonSchema)]
pub struct View {
    pub report_version: u32,
    pub tool: Tool,
    pub verdict: Verdict,
    pub verdict_label: &'static str,
    pub counts: Counts,
    pub policy: PolicyView,
    /// Remarks about the policy, such as entries that matched no model.
    pub notes: Vec<String>,
    /// The unified diff from the base branch's policy, when it differs.
    pub policy_diff: Option<PolicyDiff>,
    /// When this change loosens the policy it is judged by: one headline for the whole report,
    /// not one finding per model.
    pub policy_review: Option<PolicyReviewView>,
    /// What changed since the base branch's report, when one was given.
    pub since_base: Option<super::since::SinceBase>,
    /// The holdout ledger the check read (`--ledger`), where it ends: a later check on a merge
    /// request takes this from the base branch's report as the head its ledger must extend.
    pub ledger_head: Option<LedgerView>,
    pub models: Vec<ModelView>,
}

/// The ledger a check read: its file, its head, and the trusted heads it was shown to extend.
#[derive(Debug, Clone, Serialize, JsonSchema)]
pub struct LedgerView {
    pub file: String,
    pub entries: u64,
    /// `hash` of the last entry; the all-zero genesis hash for an empty ledger.
    pub last_hash: String,
    /// The file did not exist, so the ledger counted as empty (a repository adopting vetscore).
    pub file_missing: bool,
    /// Trusted heads the ledger was checked to extend (`--ledger-head`, the base report's).
    pub extends: Vec<LedgerAnchor>,
}

#[derive(Debug, Clone, Serialize, JsonSchema)]
pub struct LedgerAnchor {
    /// `--ledger-head` or `baseline`.
    pub source: &'static str,
    pub entries: u64,
    pub last_hash: String,
}

/// A loosened policy that blocks the merge request until a reviewer accepts it.
#[derive(Debug, Clone, Serialize, JsonSchema)]
pub struct PolicyReviewView {
    /// Each distinct list of loosening changes, as the policy-change findings state them.
    pub loosened: Vec<String>,
    /// Models the change blocks.
    pub models: usize,
    /// The digest a reviewer records on the base branch to accept this policy.
    pub digest: String,
}

#[derive(Debug, Clone, Serialize, JsonSchema)]
pub struct PolicyDiff {
    pub base_file: Option<String>,
    /// The diff in unified format.
    pub text: String,
    /// A code fence longer than any run of backticks in the diff, so the diff cannot close it.
    pub fence: String,
}

#[derive(Debug, Clone, Serialize, JsonSchema)]
pub struct Tool {
    pub name: &'static str,
    pub version: &'static str,
}

#[derive(Debug, Clone, Serialize, JsonSchema)]
pub struct Counts {
    pub models: usize,
    pub supported: usize,
    pub with_warnings: usize,
    pub not_supported: usize,
    /// Models not supported for a reason other than a policy change under review: the claims
    /// their own evidence does not support.
    pub claims_not_supported: usize,
}

#[derive(Debug, Clone, Serialize, JsonSchema)]
pub struct PolicyView {
    pub file: Option<String>,
    pub digest: String,
    pub confidence: f64,
    pub confidence_text: String,
    pub interval_method: crate::stats::ProportionMethod,
    pub interval_method_label: &'static str,
}

#[derive(Debug, Clone, Serialize, JsonSchema)]
pub struct ModelView {
    pub name: String,
    pub file: String,
    pub line: Option<u64>,
    pub metric: Metric,
    pub higher_is_better: bool,
    /// The identity of the test split the model was scored on.
    pub test_fingerprint: String,
    pub claim: ClaimView,
    pub cv: Option<EstimateView>,
    pub test: Option<EstimateView>,
    /// CV estimate minus test score.
    pub gap: Option<f64>,
    pub verdict: Verdict,
    pub verdict_label: &'static str,
    pub findings: Vec<FindingView>,
    /// The interval strip: monospace lines showing the CV and test intervals and the claim.
    pub strip: Vec<String>,
    /// A text histogram of every trial's mean CV score, when the trials are listed.
    pub trials_histogram: Vec<String>,
}

#[derive(Debug, Clone, Serialize, JsonSchema)]
pub struct ClaimView {
    pub value: f64,
    pub basis: Basis,
    pub text: Option<String>,
}

#[derive(Debug, Clone, Serialize, JsonSchema)]
pub struct EstimateView {
    pub value: f64,
    pub lower: Option<f64>,
    pub upper: Option<f64>,
    pub rows: u64,
    pub correct: Option<u64>,
    pub basis: IntervalBasis,
}

#[derive(Debug, Clone, Serialize, JsonSchema)]
pub struct FindingView {
    pub rule: &'static str,
    pub rule_name: &'static str,
    pub severity: Severity,
    pub status: Status,
    /// What the finding does to its model's verdict.
    pub effect: Effect,
    /// The finding's sentence with its numbers filled in, as plain text.
    pub message: String,
    /// The same sentence, safe to place in Markdown.
    pub message_markdown: String,
    pub evidence: Vec<EvidenceView>,
    pub policy: crate::finding::PolicySource,
    pub waiver: Option<crate::finding::WaiverNote>,
}

/// What a finding does to its model's verdict.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, serde::Deserialize, JsonSchema)]
#[serde(rename_all = "snake_case")]
pub enum Effect {
    /// It makes the model unsupported.
    Blocks,
    /// It is reported as a warning.
    Warns,
    /// It changes nothing (passed, skipped or waived).
    None,
}

#[derive(Debug, Clone, Serialize, JsonSchema)]
pub struct EvidenceView {
    pub key: &'static str,
    pub label: &'static str,
    #[serde(flatten)]
    pub value: EvidenceValue,
    /// The value as the report shows it.
    pub text: String,
}

/// Builds the view of an assessment; `base_policy` is the base branch's policy, when given.
pub fn build(assessment: &Assessment, policy: &Policy, base_policy: Option<&Policy>) -> View {
    let mut models: Vec<ModelView> = assessment.models.iter().map(model_view).collect();
    // Failing models first, then those with warnings: every output lists what needs attention
    // first, and the comment budget (budget.rs) cuts from the end. The sort is stable, so models
    // keep the manifests' order within a verdict.
    models.sort_by_key(|m| m.verdict);
    let count = |v: Verdict| models.iter().filter(|m| m.verdict == v).count();
    View {
        report_version: REPORT_VERSION,
        tool: Tool {
            name: env!("CARGO_PKG_NAME"),
            version: env!("CARGO_PKG_VERSION"),
        },
        verdict: assessment.verdict,
        verdict_label: assessment.verdict.label(),
        counts: Counts {
            models: models.len(),
            supported: count(Verdict::Supported),
            with_warnings: count(Verdict::SupportedWithWarnings),
            not_supported: count(Verdict::NotSupported),
            claims_not_supported: models
                .iter()
                .filter(|m| {
                    m.findings
                        .iter()
                        .any(|f| f.effect == Effect::Blocks && f.rule != POLICY_CHANGE)
                })
                .count(),
        },
        policy: PolicyView {
            file: policy.file.clone(),
            digest: policy.digest.clone(),
            confidence: policy.confidence,
            confidence_text: format::confidence(policy.confidence),
            interval_method: policy.interval_method,
            interval_method_label: method_label(policy.interval_method),
        },
        notes: assessment.notes.clone(),
        policy_diff: base_policy.and_then(|base| policy_diff(base, policy)),
        policy_review: policy_review(&models, &policy.digest),
        since_base: None,
        ledger_head: None,
        models,
    }
}

const POLICY_CHANGE: &str = "policy_change";

fn policy_review(models: &[ModelView], digest: &str) -> Option<PolicyReviewView> {
    let mut loosened: Vec<String> = Vec::new();
    let mut blocked = 0;
    for m in models {
        let Some(f) = m
            .findings
            .iter()
            .find(|f| f.rule == POLICY_CHANGE && f.effect == Effect::Blocks)
        else {
            continue;
        };
        blocked += 1;
        if let Some(EvidenceValue::Text { value }) = f
            .evidence
            .iter()
            .find(|e| e.key == "loosened_list")
            .map(|e| &e.value)
            && !loosened.contains(value)
        {
            loosened.push(value.clone());
        }
    }
    (blocked > 0).then(|| PolicyReviewView {
        loosened,
        models: blocked,
        digest: digest.to_owned(),
    })
}

fn policy_diff(base: &Policy, policy: &Policy) -> Option<PolicyDiff> {
    let old = base.text.as_deref().unwrap_or("");
    let new = policy.text.as_deref().unwrap_or("");
    if old == new {
        return None;
    }
    let text = similar::TextDiff::from_lines(old, new)
        .unified_diff()
        .context_radius(3)
        .header(
            base.file.as_deref().unwrap_or("(defaults)"),
            policy.file.as_deref().unwrap_or("(defaults)"),
        )
        .to_string();
    let longest = text.split(|c| c != '`').map(str::len).max().unwrap_or(0);
    Some(PolicyDiff {
        base_file: base.file.clone(),
        fence: "`".repeat(longest.max(2) + 1),
        text,
    })
}

fn method_label(method: crate::stats::ProportionMethod) -> &'static str {
    use crate::stats::ProportionMethod as M;
    match method {
        M::Wilson => "Wilson",
        M::ClopperPearson => "Clopper–Pearson",
        M::AgrestiCoull => "Agresti–Coull",
        M::Jeffreys => "Jeffreys",
    }
}

fn model_view(m: &ModelAssessment) -> ModelView {
    let estimate = |e: &Estimate| EstimateView {
        value: e.value,
        lower: e.interval.map(|i| i.lower),
        upper: e.interval.map(|i| i.upper),
        rows: e.rows,
        correct: e.correct,
        basis: e.basis,
    };
    let cv = m.cv.as_ref().map(estimate);
    let test = m.test.as_ref().map(estimate);
    ModelView {
        name: m.model.name.clone(),
        file: m.model.origin.file.clone(),
        line: m.model.origin.line,
        metric: m.model.metric,
        higher_is_better: m.model.metric.higher_is_better(),
        test_fingerprint: m.model.data.test_fingerprint.clone(),
        claim: ClaimView {
            value: m.model.claim.value,
            basis: m.model.claim.basis,
            text: m.model.claim.text.clone(),
        },
        gap: match (&cv, &test) {
            (Some(c), Some(t)) => Some(c.value - t.value),
            _ => None,
        },
        strip: super::strip::draw(
            m.model.metric,
            cv.as_ref(),
            adjusted_cv(m).as_ref(),
            test.as_ref(),
            m.model.claim.value,
        ),
        trials_histogram: m
            .model
            .search
            .as_ref()
            .and_then(|s| s.trials.as_ref())
            .map(super::strip::histogram)
            .unwrap_or_default(),
        cv,
        test,
        verdict: m.verdict,
        verdict_label: m.verdict.label(),
        findings: m.findings.iter().map(finding_view).collect(),
    }
}

/// The CV estimate after the selection-optimism adjustment, from that rule's evidence.
fn adjusted_cv(m: &ModelAssessment) -> Option<EstimateView> {
    let finding = m.findings.iter().find(|f| f.rule == "selection_optimism")?;
    let value = match finding.evidence("adjusted")? {
        EvidenceValue::Number { value, .. } => *value,
        _ => return None,
    };
    let EvidenceValue::Interval { lower, upper, .. } = finding.evidence("adjusted_interval")?
    else {
        return None;
    };
    Some(EstimateView {
        value,
        lower: Some(*lower),
        upper: Some(*upper),
        rows: 0,
        correct: None,
        basis: IntervalBasis::Unavailable,
    })
}

fn finding_view(f: &Finding) -> FindingView {
    FindingView {
        rule: f.rule,
        rule_name: rules::rule(f.rule).map_or(f.rule, |r| r.name),
        severity: f.severity,
        status: f.status,
        effect: if f.blocks() {
            Effect::Blocks
        } else if f.warns() {
            Effect::Warns
        } else {
            Effect::None
        },
        message: fill(&f.sentence, &f.evidence, |s| s.to_owned()),
        message_markdown: fill(&f.sentence, &f.evidence, escape::markdown),
        evidence: f
            .evidence
            .iter()
            .map(|e| EvidenceView {
                key: e.key,
                label: e.label,
                value: e.value.clone(),
                text: format::evidence(&e.value),
            })
            .collect(),
        policy: f.policy.clone(),
        waiver: f.waiver.clone(),
    }
}

/// Replaces each `{key}` in a sentence with its formatted evidence value. Text values pass through
/// `text`, so the Markdown copy escapes them; numbers never need escaping.
fn fill(sentence: &str, evidence: &[Evidence], text: impl Fn(&str) -> String) -> String {
    let mut out = String::with_capacity(sentence.len() + 32);
    let mut rest = sentence;
    while let Some(open) = rest.find('{') {
        out.push_str(&rest[..open]);
        let after = &rest[open + 1..];
        match after.find('}') {
            Some(close) => {
                let key = &after[..close];
                match evidence.iter().find(|e| e.key == key) {
                    Some(e) => match &e.value {
                        EvidenceValue::Text { value } => out.push_str(&text(value)),
                        other => {
                            let shown = format::evidence(other);
                            // "p = {p}" with p shown as "< 0.0001" reads "p < 0.0001".
                            if shown.starts_with('<') && out.ends_with(" = ") {
                                out.truncate(out.len() - 2);
                            }
                            out.push_str(&shown);
                        }
                    },
                    // A sentence naming absent evidence is a bug in the rule; show it plainly.
                    None => out.push_str(&format!("(missing {key})")),
                }
                rest = &after[close + 1..];
            }
            None => {
                out.push_str(&rest[open..]);
                rest = "";
            }
        }
    }
    out.push_str(rest);
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::finding::Quantity;

    #[test]
    fn fill_formats_numbers_and_escapes_text() {
        let evidence = vec![
            Evidence::number("gap", "Gap", 0.1834, Quantity::Score),
            Evidence::text("missing", "Missing", "seed <b>"),
        ];
        assert_eq!(
            fill("gap {gap}; missing {missing}.", &evidence, escape::markdown),
            "gap 0.1834; missing seed &lt;b&gt;."
        );
        assert_eq!(
            fill("{nothing}", &evidence, |s| s.to_owned()),
            "(missing nothing)"
        );
        // Issue 9, item 12: never "(p = < 0.0001)".
        let tiny = vec![Evidence::number("p", "p", 3e-9, Quantity::Probability)];
        assert_eq!(fill("(p = {p})", &tiny, |s| s.to_owned()), "(p < 0.0001)");
    }
}
