//! Leakage: no row id is in both the training data and the test split.

use super::{Context, Outcome, RuleInfo, RuleSettings, Subject, rule_settings};
use crate::finding::{Evidence, Severity, Status};

rule_settings! {
    /// Settings of the leakage rule.
    severity = Severity::Error;
}

pub const RULE: RuleInfo = RuleInfo {
    id: "leakage",
    name: "Train/test leakage",
    explanation: "Reads the train and test id lists the manifest names (`data.train_ids_file`, \
`data.test_ids_file`, one id per line) and fails when any id is in both. A test row that was \
also trained on makes the test score an estimate of memorisation rather than of performance on \
new data; even a small overlap biases it upward. The finding gives the count and the first few \
shared ids so the split can be repaired. Ids are compared as exact strings (after dropping line \
ends and surrounding spaces). Without both lists the rule is skipped. This is a standard check \
in the trade (common practice, no single source).",
    check,
    severity_from_base: false,
};

pub fn problems(_raw: &RawSettings) -> Vec<(String, String)> {
    Vec::new()
}

fn check(subject: &Subject, _ctx: &Context, _settings: &RuleSettings) -> Outcome {
    let Some(o) = &subject.model.leakage else {
        return Outcome::new(
            Status::Skipped,
            "The manifest names no train and test id lists, so leakage was not checked.",
            Vec::new(),
        );
    };
    let evidence = vec![
        Evidence::count("shared", "Ids in both", o.shared),
        Evidence::count("train_ids", "Train ids", o.train_ids),
        Evidence::count("test_ids", "Test ids", o.test_ids),
        Evidence::text("examples", "First shared ids", o.examples.join(", ")),
    ];
    Outcome::judge(
        o.shared == 0,
        "None of the {test_ids} test ids is among the {train_ids} train ids.",
        "{shared} ids are in both the training data and the test split (first: {examples}); the \
         test score partly measures rows the model was trained on.",
        evidence,
    )
}
