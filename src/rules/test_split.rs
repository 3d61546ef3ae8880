//! Test split: a model is scored on the same test split as on the base branch.

use super::{Context, Outcome, RuleInfo, RuleSettings, Subject, rule_settings};
use crate::finding::{Evidence, Severity, Status};

rule_settings! {
    /// Settings of the test-split rule.
    severity = Severity::Error;
}

pub const RULE: RuleInfo = RuleInfo {
    id: "test_split",
    name: "Same test split",
    explanation: "With the base branch's report (`--baseline`), checks that each model is scored \
on the same test split as there, by comparing test fingerprints. A score on a different split is \
not comparable with the base branch's, and switching to a split the model happens to do better \
on is a quiet way to improve a number: the change needs a reason a reviewer can see, which a \
waiver with its reason and expiry gives. New models, and runs without a base report, are \
skipped. This is part of the leakage checks of the trade (common practice, no single source).",
    check,
    severity_from_base: false,
};

pub fn problems(_raw: &RawSettings) -> Vec<(String, String)> {
    Vec::new()
}

fn check(subject: &Subject, ctx: &Context, _settings: &RuleSettings) -> Outcome {
    let Some(base) = &ctx.base_split else {
        return Outcome::new(
            Status::Skipped,
            "No base-branch report was given (--baseline), so the test split was not compared.",
            Vec::new(),
        );
    };
    let Some(before) = base else {
        return Outcome::new(
            Status::Skipped,
            "The model is new since the base branch's report.",
            Vec::new(),
        );
    };
    let now = &subject.model.data.test_fingerprint;
    let evidence = vec![
        Evidence::text(
            "before",
            "Test fingerprint on the base branch",
            before.clone(),
        ),
        Evidence::text("now", "Test fingerprint now", now.clone()),
    ];
    Outcome::judge(
        before == now,
        "The model is scored on the same test split as on the base branch.",
        "The model is now scored on a different test split than on the base branch ({before} → \
         {now}); its scores are not comparable, and the change needs a stated reason.",
        evidence,
    )
}
