//! Holdout budget: the test split, identified by its fingerprint, was scored at most k times.

use super::{Context, Outcome, RuleInfo, RuleSettings, Subject, rule_settings};
use crate::finding::{Evidence, Quantity, Severity};
use crate::stats;

rule_settings! {
    /// Settings of the holdout budget.
    severity = Severity::Error;
    /// Most scorings of one test split allowed across the check (and the ledger).
    max_evaluations: u64 = 3, looser: Larger,
}

pub const RULE: RuleInfo = RuleInfo {
    id: "holdout_budget",
    name: "Holdout budget",
    explanation: "Counts how many times the test split was scored, across every manifest in the \
check, keyed on the split's fingerprint (so two models sharing one split share one budget), and \
fails when the count exceeds `max_evaluations`. Every look at a test split that informs a decision \
makes its score less of an independent check: choosing among k looks is a multiple comparison. \
The finding reports the test interval widened for k looks with the Bonferroni correction \
(confidence 1 − α/k; Dunn 1961) and the distribution-free margin from Hoeffding's inequality with \
a union bound over the k looks, ε = √(ln(2k/α) / 2n) (Hoeffding 1963). If a fresh split is not \
available, report the widened interval rather than the plain one.",
    check,
    severity_from_base: false,
};

pub fn problems(raw: &RawSettings) -> Vec<(String, String)> {
    match raw.max_evaluations {
        Some(0) => vec![(
            "max_evaluations".into(),
            "expected at least 1 evaluation, found 0".into(),
        )],
        _ => Vec::new(),
    }
}

fn check(subject: &Subject, ctx: &Context, settings: &RuleSettings) -> Outcome {
    let settings = &settings.holdout_budget;
    let model = subject.model;
    let uses = ctx
        .holdout_uses
        .get(&model.data.test_fingerprint)
        .map_or(&[][..], Vec::as_slice);
    let looks = uses.len() as u64;
    let sharing = ctx
        .models_sharing
        .get(&model.data.test_fingerprint)
        .copied()
        .unwrap_or(0);
    let mut evidence = vec![
        Evidence::count("looks", "Scorings of this test split", looks),
        Evidence::count("max_evaluations", "Budget", settings.max_evaluations),
        Evidence::count("models_sharing", "Models scored on this split", sharing),
    ];
    if looks == 0 {
        return Outcome::new(
            crate::finding::Status::Pass,
            "The test split was never scored, so no budget was spent.",
            evidence,
        );
    }
    let alpha = 1.0 - ctx.intervals.confidence;
    if let Some(test) = &subject.test {
        if let Ok(margin) = stats::hoeffding_margin(test.rows, alpha, looks) {
            evidence.push(Evidence::number(
                "hoeffding_margin",
                "Hoeffding margin over all looks",
                margin,
                Quantity::Score,
            ));
        }
        if let (Some(correct), Some(_)) = (test.correct, test.interval) {
            let adjusted = 1.0 - alpha / looks as f64;
            if let Ok(interval) =
                stats::proportion_interval(correct, test.rows, adjusted, ctx.intervals.method)
            {
                evidence.push(Evidence::interval(
                    "adjusted_interval",
                    "Test interval, Bonferroni-adjusted for all looks",
                    interval,
                    adjusted,
                ));
            }
        }
    }
    if looks <= settings.max_evaluations {
        return Outcome::pass(
            "Looks at this test split in the check: {looks}, within the budget of {max_evaluations}.",
            evidence,
        );
    }
    let has = |key: &str| evidence.iter().any(|e| e.key == key);
    let sentence = if has("adjusted_interval") {
        "Looks at this test split in the check: {looks}, over the budget of {max_evaluations}; \
         its score has informed choices and is no longer an independent check (interval widened \
         for all looks: {adjusted_interval})."
    } else if has("hoeffding_margin") {
        "Looks at this test split in the check: {looks}, over the budget of {max_evaluations}; \
         its score has informed choices and is no longer an independent check (margin over all \
         looks: ±{hoeffding_margin})."
    } else {
        "Looks at this test split in the check: {looks}, over the budget of {max_evaluations}; \
         its score has informed choices and is no longer an independent check."
    };
    Outcome::fail(sentence, evidence)
}
