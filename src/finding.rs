//! The data every rule returns: a [`Finding`] with its [`Status`], [`Severity`] and the
//! [`Evidence`] behind it.
//!
//! Findings are plain data. They hold raw numbers, never formatted ones: the report layer decides
//! how many decimals a score gets. A finding's sentence is a template whose `{name}` placeholders
//! refer to evidence items, so the JSON keeps the numbers and the Markdown shows them formatted.

use schemars::JsonSchema;
use serde::Serialize;

use crate::stats::Interval;

/// How much a rule's failure matters, as the policy declares it.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Serialize, JsonSchema)]
#[serde(rename_all = "snake_case")]
pub enum Severity {
    /// The rule is not evaluated.
    Off,
    /// A failure is reported but does not fail the run.
    Warn,
    /// A failure fails the run (exit code 1).
    Error,
}

/// What a rule concluded about one model.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, JsonSchema)]
#[serde(rename_all = "snake_case")]
pub enum Status {
    /// The evidence supports the model on this rule.
    Pass,
    /// The evidence contradicts the model on this rule.
    Fail,
    /// The manifest lacks what the rule needs; never counted as a pass.
    Inconclusive,
    /// The rule failed or was inconclusive, but a current waiver covers it.
    Waived,
    /// The rule is switched off for this model by the policy.
    Skipped,
}

/// The verdict on one model or on the whole run, worst first when ordered.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Serialize, JsonSchema)]
#[serde(rename_all = "snake_case")]
pub enum Verdict {
    /// At least one error-severity rule failed (or was inconclusive under a strict policy).
    NotSupported,
    /// Only warn-severity rules failed.
    SupportedWithWarnings,
    /// Every evaluated rule passed.
    Supported,
}

impl Severity {
    /// The name used in policy files and reports.
    pub fn name(self) -> &'static str {
        match self {
            Severity::Off => "off",
            Severity::Warn => "warn",
            Severity::Error => "error",
        }
    }
}

impl Verdict {
    /// The plain words used in reports.
    pub fn label(self) -> &'static str {
        match self {
            Verdict::NotSupported => "not supported",
            Verdict::SupportedWithWarnings => "supported, with warnings",
            Verdict::Supported => "supported",
        }
    }
}

/// What kind of number an evidence value is; decides how a report formats it.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, JsonSchema)]
#[serde(rename_all = "snake_case")]
pub enum Quantity {
    /// A metric value (accuracy, RMSE, ...), or a difference of two.
    Score,
    /// A p-value or another probability.
    Probability,
    /// A count of rows, evaluations or configurations.
    Count,
    /// A confidence level, such as 0.95.
    Confidence,
}

/// One named value a finding rests on.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Evidence {
    /// Stable key, also the placeholder name in the finding's sentence.
    pub key: &'static str,
    /// Human label for detail tables.
    pub label: &'static str,
    #[serde(flatten)]
    pub value: EvidenceValue,
}

/// The value of an evidence item.
#[derive(Debug, Clone, PartialEq, Serialize, JsonSchema)]
#[serde(tag = "type", rename_all = "snake_case")]
pub enum EvidenceValue {
    /// A single number of the given kind.
    Number { value: f64, quantity: Quantity },
    /// A two-sided interval at the given confidence.
    Interval {
        lower: f64,
        upper: f64,
        confidence: f64,
        quantity: Quantity,
    },
    /// Free text from the policy or the manifest (escaped when rendered).
    Text { value: String },
}

impl Evidence {
    /// A number of the given kind.
    pub fn number(key: &'static str, label: &'static str, value: f64, quantity: Quantity) -> Self {
        Evidence {
            key,
            label,
            value: EvidenceValue::Number { value, quantity },
        }
    }

    /// A count; counts above 2^53 lose precision, far beyond any row count this tool sees.
    pub fn count(key: &'static str, label: &'static str, value: u64) -> Self {
        Self::number(key, label, value as f64, Quantity::Count)
    }

    /// A score interval at `confidence`.
    pub fn interval(
        key: &'static str,
        label: &'static str,
        interval: Interval,
        confidence: f64,
    ) -> Self {
        Evidence {
            key,
            label,
            value: EvidenceValue::Interval {
                lower: interval.lower,
                upper: interval.upper,
                confidence,
                quantity: Quantity::Score,
            },
        }
    }

    /// Free text.
    pub fn text(key: &'static str, label: &'static str, value: impl Into<String>) -> Self {
        Evidence {
            key,
            label,
            value: EvidenceValue::Text {
                value: value.into(),
            },
        }
    }
}

/// Where the settings a rule ran with came from.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, JsonSchema)]
pub struct PolicySource {
    /// `rules.<id>` or `overrides[<i>].rules.<id>`, or `defaults`.
    pub path: String,
    /// Line in the policy file, when the setting came from the file.
    pub line: Option<u64>,
}

/// A waiver that covered a finding.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, JsonSchema)]
pub struct WaiverNote {
    pub reason: String,
    pub expires: String,
}

/// One rule's conclusion about one model.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Finding {
    pub rule: &'static str,
    pub model: String,
    pub severity: Severity,
    pub status: Status,
    /// One plain sentence with `{key}` placeholders naming evidence items.
    pub sentence: String,
    pub evidence: Vec<Evidence>,
    pub policy: PolicySource,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub waiver: Option<WaiverNote>,
}

impl Finding {
    /// Whether this finding makes its model unsupported. An inconclusive error-severity rule
    /// blocks: missing evidence is never a pass (the policy may lower it to a warning).
    pub fn blocks(&self) -> bool {
        self.severity == Severity::Error && self.is_adverse()
    }

    /// Whether this finding is reported as a warning.
    pub fn warns(&self) -> bool {
        self.severity == Severity::Warn && self.is_adverse()
    }

    fn is_adverse(&self) -> bool {
        matches!(self.status, Status::Fail | Status::Inconclusive)
    }

    /// Looks up an evidence item by key.
    pub fn evidence(&self, key: &str) -> Option<&EvidenceValue> {
        self.evidence
            .iter()
            .find(|e| e.key == key)
            .map(|e| &e.value)
    }
}

/// The verdict implied by a set of findings.
pub fn verdict_of<'a>(findings: impl IntoIterator<Item = &'a Finding>) -> Verdict {
    findings
        .into_iter()
        .map(|f| {
            if f.blocks() {
                Verdict::NotSupported
            } else if f.warns() {
                Verdict::SupportedWithWarnings
            } else {
                Verdict::Supported
            }
        })
        .min()
        .unwrap_or(Verdict::Supported)
}
