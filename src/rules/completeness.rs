//! Reporting completeness: the manifest carries the fields the policy requires.

use schemars::JsonSchema;
use serde::Deserialize;

use super::{Context, Outcome, RuleInfo, RuleSettings, Subject, rule_settings};
use crate::finding::{Evidence, Severity};
use crate::manifest::Model;

/// An optional manifest field a policy can require.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize, JsonSchema)]
pub enum Field {
    #[serde(rename = "run_id")]
    RunId,
    #[serde(rename = "commit")]
    Commit,
    #[serde(rename = "trained_at")]
    TrainedAt,
    #[serde(rename = "seed")]
    Seed,
    #[serde(rename = "data.class_counts")]
    ClassCounts,
    #[serde(rename = "search")]
    Search,
    #[serde(rename = "search.configurations")]
    Configurations,
    #[serde(rename = "search.cv.folds.class_rows")]
    FoldClassRows,
    #[serde(rename = "holdout")]
    Holdout,
    #[serde(rename = "holdout.time")]
    HoldoutTime,
    #[serde(rename = "claim.text")]
    ClaimText,
    #[serde(rename = "predictions")]
    Predictions,
    #[serde(rename = "data.id_files")]
    IdFiles,
}

impl Field {
    /// The name used in policy files.
    pub fn name(self) -> &'static str {
        match self {
            Field::RunId => "run_id",
            Field::Commit => "commit",
            Field::TrainedAt => "trained_at",
            Field::Seed => "seed",
            Field::ClassCounts => "data.class_counts",
            Field::Search => "search",
            Field::Configurations => "search.configurations",
            Field::FoldClassRows => "search.cv.folds.class_rows",
            Field::Holdout => "holdout",
            Field::HoldoutTime => "holdout.time",
            Field::ClaimText => "claim.text",
            Field::Predictions => "predictions",
            Field::IdFiles => "data.id_files",
        }
    }

    fn present(self, model: &Model) -> bool {
        let search = model.search.as_ref();
        match self {
            Field::RunId => model.run_id.is_some(),
            Field::Commit => model.commit.is_some(),
            Field::TrainedAt => model.trained_at.is_some(),
            Field::Seed => model.seed.is_some(),
            Field::ClassCounts => model.data.class_counts.is_some(),
            Field::Search => search.is_some(),
            Field::Configurations => search.is_some_and(|s| s.configurations.is_some()),
            Field::FoldClassRows => {
                search.is_some_and(|s| s.cv.folds.iter().all(|f| f.class_rows.is_some()))
            }
            Field::Holdout => !model.holdout.is_empty(),
            Field::HoldoutTime => {
                !model.holdout.is_empty() && model.holdout.iter().all(|e| e.time.is_some())
            }
            Field::ClaimText => model.claim.text.is_some(),
            Field::Predictions => model.predictions.is_some(),
            Field::IdFiles => model.leakage.is_some(),
        }
    }
}

impl super::SettingValue for Vec<Field> {
    fn show(&self) -> String {
        let names: Vec<&str> = self.iter().map(|f| f.name()).collect();
        format!("[{}]", names.join(", "))
    }
    fn is_looser(&self, base: &Self, way: super::Looser) -> bool {
        match way {
            super::Looser::Fewer => base.iter().any(|f| !self.contains(f)),
            _ => self != base,
        }
    }
}

rule_settings! {
    /// Settings of the completeness rule.
    severity = Severity::Warn;
    /// Manifest fields every model must carry.
    required: Vec<Field> = vec![Field::Seed, Field::Search, Field::Configurations, Field::Holdout],
        looser: Fewer,
}

pub const RULE: RuleInfo = RuleInfo {
    id: "completeness",
    name: "Reporting completeness",
    explanation: "Checks that each model's manifest entry carries the fields listed in \
`required`, such as the seed, the number of configurations evaluated, the time of every test \
evaluation or the per-class counts of each fold. Several rules can only judge what is reported: \
the holdout budget cannot count evaluations that were not written down, and the selection \
adjustment needs the number of configurations tried. An absent field never counts as evidence \
that all is well; requiring it makes the training job write it. This is common practice in \
reporting guidelines for predictive models (no single source).",
    check,
    severity_from_base: false,
};

pub fn problems(raw: &RawSettings) -> Vec<(String, String)> {
    match &raw.required {
        Some(fields) => {
            let mut seen = Vec::new();
            fields
                .iter()
                .filter_map(|f| {
                    if seen.contains(f) {
                        Some((
                            "required".into(),
                            format!("field {} is listed twice", f.name()),
                        ))
                    } else {
                        seen.push(*f);
                        None
                    }
                })
                .collect()
        }
        None => Vec::new(),
    }
}

fn check(subject: &Subject, _ctx: &Context, settings: &RuleSettings) -> Outcome {
    let required = &settings.completeness.required;
    let missing: Vec<&str> = required
        .iter()
        .filter(|f| !f.present(subject.model))
        .map(|f| f.name())
        .collect();
    let evidence = vec![
        Evidence::count("required", "Required fields", required.len() as u64),
        Evidence::text("missing", "Missing fields", missing.join(", ")),
    ];
    Outcome::judge(
        missing.is_empty(),
        "Every required field is present ({required} required).",
        "Required fields are missing: {missing}.",
        evidence,
    )
}
