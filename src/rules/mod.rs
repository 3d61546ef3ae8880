//! The rules: one module per rule, one registry list ([`RULES`]).
//!
//! A rule is pure: it reads a [`Subject`] (the model and its estimates), the shared [`Context`]
//! and its own settings, and returns an [`Outcome`]. It does no I/O, prints nothing, reads no
//! clock and formats no numbers; its sentence names evidence items as `{key}` placeholders and
//! the report formats them. Each rule module owns its settings type, declared with
//! [`rule_settings!`], so the policy file's `rules.<id>` block maps onto it one to one.

use std::collections::BTreeMap;

use schemars::JsonSchema;
use serde::Deserialize;

use crate::estimate::Estimate;
use crate::finding::{Evidence, Severity, Status};
use crate::manifest::Model;
use crate::stats::{IntervalSettings, ProportionMethod};

pub mod baseline_improvement;
pub mod claim_support;
pub mod completeness;
pub mod cv_test_gap;
pub mod fingerprint;
pub mod fold_size;
pub mod holdout_budget;
pub mod interval_overlap;
pub mod leakage;
pub mod policy_change;
pub mod recompute;
pub mod selection_optimism;
pub mod test_split;
pub mod threshold;
pub mod waiver_expiry;

/// Severity as written in a policy file.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize, JsonSchema)]
#[serde(rename_all = "snake_case")]
pub enum SeverityName {
    Error,
    Warn,
    Off,
}

impl From<SeverityName> for Severity {
    fn from(s: SeverityName) -> Self {
        match s {
            SeverityName::Error => Severity::Error,
            SeverityName::Warn => Severity::Warn,
            SeverityName::Off => Severity::Off,
        }
    }
}

/// Declares a rule's settings: the resolved type with its defaults, and the raw policy-file type
/// where every field is optional so that overrides can change one field at a time.
macro_rules! rule_settings {
    (
        $(#[$meta:meta])*
        severity = $severity:expr;
        $( $(#[$fmeta:meta])* $field:ident : $ty:ty = $default:expr, looser: $way:ident ),* $(,)?
    ) => {
        $(#[$meta])*
        #[derive(Debug, Clone, PartialEq)]
        pub struct Settings {
            /// What a failure of this rule does.
            pub severity: $crate::finding::Severity,
            $( $(#[$fmeta])* pub $field: $ty, )*
        }

        impl Default for Settings {
            fn default() -> Self {
                Settings {
                    severity: $severity,
                    $( $field: $default, )*
                }
            }
        }

        /// The rule's block in a policy file; absent fields keep their current value.
        #[derive(Debug, Clone, Default, serde::Deserialize, schemars::JsonSchema)]
        #[serde(deny_unknown_fields)]
        pub struct RawSettings {
            /// `error` fails the run, `warn` reports only, `off` skips the rule.
            #[serde(default)]
            pub severity: Option<$crate::rules::SeverityName>,
            $( $(#[$fmeta])* #[serde(default)] pub $field: Option<$ty>, )*
        }

        impl Settings {
            /// Applies the fields present in `raw`.
            pub fn apply(&mut self, raw: &RawSettings) {
                if let Some(severity) = raw.severity {
                    self.severity = severity.into();
                }
                $( if let Some(value) = &raw.$field { self.$field = value.clone(); } )*
            }

            /// The settings that differ from `base`, and whether each change loosens the rule.
            pub fn changes(&self, base: &Self, rule: &str) -> Vec<$crate::rules::SettingChange> {
                #[allow(unused_imports)]
                use $crate::rules::SettingValue as _;
                let mut out = Vec::new();
                if self.severity != base.severity {
                    out.push($crate::rules::SettingChange {
                        setting: format!("rules.{rule}.severity"),
                        from: base.severity.name().to_owned(),
                        to: self.severity.name().to_owned(),
                        looser: self.severity < base.severity,
                    });
                }
                $( if self.$field != base.$field {
                    out.push($crate::rules::SettingChange {
                        setting: format!("rules.{rule}.{}", stringify!($field)),
                        from: base.$field.show(),
                        to: self.$field.show(),
                        looser: self.$field.is_looser(&base.$field, $crate::rules::Looser::$way),
                    });
                } )*
                out
            }
        }
    };
}

/// Which way a setting moves when a policy gets looser.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Looser {
    /// A larger value lets more through (a bound, a budget).
    Larger,
    /// A smaller value lets more through (a minimum).
    Smaller,
    /// Turning it on lets more through.
    True,
    /// Turning it off lets more through.
    False,
    /// Removing items lets more through (required fields).
    Fewer,
    /// No direction is known, so any change is treated as loosening until reviewed.
    Any,
}

/// One setting that differs between the base branch's policy and this one.
#[derive(Debug, Clone, PartialEq)]
pub struct SettingChange {
    pub setting: String,
    pub from: String,
    pub to: String,
    pub looser: bool,
}

/// A rule setting's value, as the policy-change review compares and shows it.
pub trait SettingValue {
    fn show(&self) -> String;
    fn is_looser(&self, base: &Self, way: Looser) -> bool;
}

/// Numbers compare by size; without a direction any change counts.
macro_rules! numeric_setting {
    ($($t:ty),*) => {$(
        impl SettingValue for $t {
            fn show(&self) -> String {
                self.to_string()
            }
            fn is_looser(&self, base: &Self, way: Looser) -> bool {
                match way {
                    Looser::Larger => self > base,
                    Looser::Smaller => self < base,
                    _ => self != base,
                }
            }
        }
    )*};
}
numeric_setting!(f64, u64);

/// An optional bound: absent is the loosest value when a larger one lets more through.
impl SettingValue for Option<f64> {
    fn show(&self) -> String {
        self.map_or_else(|| "none".to_owned(), |v| v.to_string())
    }
    fn is_looser(&self, base: &Self, way: Looser) -> bool {
        match (way, self, base) {
            (Looser::Larger, None, Some(_)) => true,
            (Looser::Larger, Some(_), None) => false,
            (Looser::Larger, Some(a), Some(b)) => a > b,
            _ => self != base,
        }
    }
}

impl SettingValue for bool {
    fn show(&self) -> String {
        self.to_string()
    }
    fn is_looser(&self, base: &Self, way: Looser) -> bool {
        match way {
            Looser::True => *self && !base,
            Looser::False => !*self && *base,
            _ => self != base,
        }
    }
}
pub(crate) use rule_settings;

/// A rule's block as written, with where it is in the policy file, so each finding can name its
/// own rule's line. Deserializes like the block itself and has the block's JSON Schema.
#[derive(Debug, Clone)]
pub struct Located<T> {
    pub value: T,
    pub line: Option<u64>,
}

impl<'de, T: Deserialize<'de>> Deserialize<'de> for Located<T> {
    fn deserialize<D: serde::Deserializer<'de>>(deserializer: D) -> Result<Self, D::Error> {
        let spanned = serde_saphyr::Spanned::<T>::deserialize(deserializer)?;
        Ok(Located {
            line: crate::diag::Place::of(&spanned.referenced).line,
            value: spanned.value,
        })
    }
}

impl<T: JsonSchema> JsonSchema for Located<T> {
    fn inline_schema() -> bool {
        T::inline_schema()
    }
    fn schema_name() -> std::borrow::Cow<'static, str> {
        T::schema_name()
    }
    fn schema_id() -> std::borrow::Cow<'static, str> {
        T::schema_id()
    }
    fn json_schema(generator: &mut schemars::SchemaGenerator) -> schemars::Schema {
        T::json_schema(generator)
    }
}

/// Declares the per-rule settings containers from the list of rule modules, so that a rule added
/// to the list is added to the policy format in the same place.
macro_rules! all_settings {
    ($($id:ident),* $(,)?) => {
        /// The settings of every rule for one model.
        #[derive(Debug, Clone, Default, PartialEq)]
        pub struct RuleSettings {
            $( pub $id: $id::Settings, )*
        }

        /// The `rules` block of a policy file.
        #[derive(Debug, Clone, Default, Deserialize, JsonSchema)]
        #[serde(deny_unknown_fields)]
        pub struct RawRuleSettings {
            $(
                #[serde(default)]
                pub $id: Option<Located<$id::RawSettings>>,
            )*
        }

        impl RuleSettings {
            /// Applies a policy block; returns the ids of the rules it touched.
            pub fn apply(&mut self, raw: &RawRuleSettings) -> Vec<&'static str> {
                let mut touched = Vec::new();
                $( if let Some(r) = &raw.$id { self.$id.apply(&r.value); touched.push(stringify!($id)); } )*
                touched
            }

            /// Every setting that differs from `base`, rule by rule.
            pub fn changes(&self, base: &RuleSettings) -> Vec<SettingChange> {
                let mut out = Vec::new();
                $( out.extend(self.$id.changes(&base.$id, stringify!($id))); )*
                out
            }

            /// The severity of rule `id` (`Off` for an unknown id).
            pub fn severity(&self, id: &str) -> Severity {
                match id {
                    $( stringify!($id) => self.$id.severity, )*
                    _ => Severity::Off,
                }
            }
        }

        impl RawRuleSettings {
            /// The line of rule `id`'s own block (`rules.<id>:`) in the policy file, when the
            /// block is present and the parser knew where it was.
            pub fn line(&self, id: &str) -> Option<u64> {
                match id {
                    $( stringify!($id) => self.$id.as_ref().and_then(|r| r.line), )*
                    _ => None,
                }
            }

            /// Moves each block's line with `key_line(id, line)` (from the line of the block's
            /// value to the line of its key, which the parser does not record).
            pub fn relocate(&mut self, key_line: impl Fn(&str, u64) -> Option<u64>) {
                $( if let Some(r) = &mut self.$id
                    && let Some(line) = r.line
                {
                    r.line = key_line(stringify!($id), line).or(Some(line));
                } )*
            }

            /// Problems with the values in this block, as (key path, message).
            pub fn problems(&self) -> Vec<(String, String)> {
                let mut out = Vec::new();
                $( if let Some(r) = &self.$id {
                    out.extend($id::problems(&r.value).into_iter().map(|(k, m)| (format!("{}.{k}", stringify!($id)), m)));
                } )*
                out
            }
        }

        /// Every rule, in report order.
        pub const RULES: &[RuleInfo] = &[$( $id::RULE, )*];
    };
}

all_settings!(
    claim_support,
    cv_test_gap,
    interval_overlap,
    selection_optimism,
    holdout_budget,
    fold_size,
    recompute,
    fingerprint,
    leakage,
    test_split,
    baseline_improvement,
    completeness,
    waiver_expiry,
    policy_change,
);

/// A registered rule.
#[derive(Debug, Clone, Copy)]
pub struct RuleInfo {
    /// Stable id used in policies, findings and `vetscore explain`.
    pub id: &'static str,
    /// Plain name for reports.
    pub name: &'static str,
    /// One paragraph: what the rule checks, how, and the published source of the method.
    pub explanation: &'static str,
    pub check: fn(&Subject, &Context, &RuleSettings) -> Outcome,
    /// Whether the rule's severity comes from the base branch's policy when one is given.
    pub severity_from_base: bool,
}

/// Looks up a rule by id.
pub fn rule(id: &str) -> Option<&'static RuleInfo> {
    RULES.iter().find(|r| r.id == id)
}

/// One model and the estimates computed from its manifest entry.
#[derive(Debug, Clone)]
pub struct Subject<'a> {
    pub model: &'a Model,
    pub cv: Option<Estimate>,
    pub test: Option<Estimate>,
    /// The metric recomputed from the predictions, when the manifest points at them.
    pub recomputed: Option<crate::estimate::Recomputation>,
}

/// One scoring of a test split, as counted by the holdout budget.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct HoldoutUse {
    pub model: String,
    pub file: String,
}

/// A waiver as a rule sees it.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct WaiverView {
    pub rule: String,
    /// The waiver's model pattern.
    pub pattern: String,
    pub reason: String,
    pub expires: jiff::civil::Date,
    /// Where the waiver is in the policy, e.g. `waivers[2]`.
    pub path: String,
}

/// What every rule may read besides its subject.
#[derive(Debug, Clone)]
pub struct Context {
    /// Confidence, proportion method and bootstrap settings of every interval and test.
    pub intervals: IntervalSettings,
    /// Every scoring of each test split (by fingerprint) in the whole check.
    pub holdout_uses: BTreeMap<String, Vec<HoldoutUse>>,
    /// How many distinct models scored each test split (by fingerprint), counted once for the
    /// check so a rule never sorts the names again per model.
    pub models_sharing: BTreeMap<String, u64>,
    /// The date waivers are judged against.
    pub today: jiff::civil::Date,
    /// The waivers whose model pattern matches the model being checked.
    pub waivers: Vec<WaiverView>,
    /// Whether an inconclusive rule fails at its severity (the policy's `inconclusive: fail`).
    pub inconclusive_fails: bool,
    /// The base branch's policy as it applies to the model being checked, when given.
    pub base: Option<BasePolicy>,
    /// With a base report: the model's test fingerprint there (`None` inside when the model is
    /// new since the base branch).
    pub base_split: Option<Option<String>>,
    /// What the base branch says about reviewing this change's policy.
    pub review: PolicyReview,
    /// Threads a rule may use for a large computation (BBC-CV); results do not depend on it.
    pub threads: usize,
}

/// What the base branch says about the policy under review, besides its own policy.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct PolicyReview {
    /// The base branch has no policy yet (`--no-base-policy`): this change adopts vetscore.
    pub adopting: bool,
    /// This change's policy digest is listed as reviewed on the base branch
    /// (`--reviewed-policies`).
    pub accepted: bool,
}

/// The base branch's policy for one model, for the policy-change review.
#[derive(Debug, Clone)]
pub struct BasePolicy {
    pub settings: RuleSettings,
    pub confidence: f64,
    pub interval_method: ProportionMethod,
    pub inconclusive_fails: bool,
    pub waivers: Vec<WaiverView>,
}

/// A rule's conclusion before the engine adds model, severity, policy source and waivers.
#[derive(Debug, Clone, PartialEq)]
pub struct Outcome {
    pub status: Status,
    pub sentence: String,
    pub evidence: Vec<Evidence>,
}

impl Outcome {
    pub fn new(status: Status, sentence: impl Into<String>, evidence: Vec<Evidence>) -> Self {
        Outcome {
            status,
            sentence: sentence.into(),
            evidence,
        }
    }

    /// The rule lacks evidence it needs; `why` says which.
    pub fn inconclusive(why: impl Into<String>) -> Self {
        Outcome::new(Status::Inconclusive, why, Vec::new())
    }

    pub fn pass(sentence: &str, evidence: Vec<Evidence>) -> Self {
        Outcome::new(Status::Pass, sentence, evidence)
    }

    pub fn fail(sentence: &str, evidence: Vec<Evidence>) -> Self {
        Outcome::new(Status::Fail, sentence, evidence)
    }

    /// Pass when `ok`, fail otherwise, with a sentence for each case.
    pub fn judge(ok: bool, pass: &str, fail: &str, evidence: Vec<Evidence>) -> Self {
        if ok {
            Outcome::new(Status::Pass, pass, evidence)
        } else {
            Outcome::new(Status::Fail, fail, evidence)
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::collections::BTreeSet;

    #[test]
    fn rule_ids_are_unique_snake_case_and_documented() {
        let mut seen = BTreeSet::new();
        for rule in RULES {
            assert!(seen.insert(rule.id), "duplicate rule id {}", rule.id);
            assert!(
                rule.id.chars().all(|c| c.is_ascii_lowercase() || c == '_'),
                "rule id {} is not snake_case",
                rule.id
            );
            assert!(!rule.name.is_empty());
            assert!(
                rule.explanation.len() > 200,
                "rule {} needs a real explanation",
                rule.id
            );
        }
    }

    #[test]
    fn every_rule_has_settings_and_a_default_severity() {
        let defaults = RuleSettings::default();
        for rule in RULES {
            // An unknown id would report Off; every registered rule must be wired to its settings.
            let raw: RawRuleSettings =
                serde_json::from_value(serde_json::json!({ rule.id: { "severity": "warn" } }))
                    .unwrap();
            let mut settings = defaults.clone();
            assert_eq!(settings.apply(&raw), vec![rule.id]);
            assert_eq!(settings.severity(rule.id), Severity::Warn);
        }
    }
}
