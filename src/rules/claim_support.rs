//! Claim support: the stated score lies inside the interval of the evidence it rests on.

use super::{Context, Outcome, RuleInfo, RuleSettings, Subject, rule_settings};
use crate::finding::{Evidence, Quantity, Severity};
use crate::manifest::Basis;

rule_settings! {
    /// Settings of the claim-support rule.
    severity = Severity::Error;
    /// Whether a claim may rest on cross-validation alone.
    allow_cv_claims: bool = true, looser: True,
    /// Fewest rows the evidence behind a claim may rest on; an interval from fewer rows is too
    /// wide to support anything.
    min_rows: u64 = 30, looser: Smaller,
}

pub const RULE: RuleInfo = RuleInfo {
    id: "claim_support",
    name: "Claim support",
    explanation: "Checks the score the team states against the evidence the claim names as its \
basis. A claim with basis `test` must lie inside the confidence interval of the last test-split \
score (for accuracy a binomial interval on the count of correct rows, by the policy's \
`interval_method`: Wilson 1927 by default, or Clopper–Pearson 1934, Agresti–Coull 1998, \
Jeffreys as in Brown, Cai & DasGupta 2001). A claim above the interval overstates the model and fails; a \
claim below it understates the model: the evidence supports more than is claimed, so it passes \
with a sentence saying so (failing it would make a lower claim less favourable than a higher \
one, and a gate must never reward raising a claim). A claim equal to a bound up to rounding is \
inside. The evidence must also hold at least `min_rows` rows: a claim on a handful of test \
rows lies inside an interval so wide that it says nothing. A claim with basis `cv` must lie inside the cross-validation interval; because it \
rests on the best of many configurations, the selection-optimism rule also judges it after \
adjusting for the search, and the policy may forbid such claims with `allow_cv_claims: false`. \
The CV interval of accuracy is the binomial interval of the pooled count over distinct rows (with \
repeated k-fold the mean count per repeat, not rounded). For other metrics it is a Student-t \
interval over the fold scores; for metrics bounded to [0, 1] (F1, ROC AUC, balanced accuracy) its \
standard error is at least the Agresti–Coull (1998) standard error of a proportion at the same \
value on the same rows, because folds that agree exactly (zero spread, every fold 1.0) would \
otherwise give an interval of zero width; and every t interval is clipped to the metric's range. \
The finding says when either happened (`interval_note`).",
    check,
    severity_from_base: false,
};

pub fn problems(raw: &RawSettings) -> Vec<(String, String)> {
    match raw.min_rows {
        Some(0) => vec![("min_rows".into(), "expected at least 1 row, found 0".into())],
        _ => Vec::new(),
    }
}

fn check(subject: &Subject, ctx: &Context, settings: &RuleSettings) -> Outcome {
    let settings = &settings.claim_support;
    let claim = &subject.model.claim;
    let mut evidence = vec![Evidence::number(
        "claim",
        "Claimed score",
        claim.value,
        Quantity::Score,
    )];
    let (estimate, what) = match claim.basis {
        Basis::Test => (&subject.test, "test"),
        Basis::Cv => {
            if !settings.allow_cv_claims {
                return Outcome::fail(
                    "The claim rests on cross-validation, which this policy does not accept; \
                     state the test-split score instead.",
                    evidence,
                );
            }
            (&subject.cv, "CV")
        }
    };
    let Some(estimate) = estimate else {
        return Outcome::inconclusive(if claim.basis == Basis::Test {
            "The claim rests on the test split, but the manifest records no test evaluation."
        } else {
            "The claim rests on cross-validation, but the manifest records no folds."
        });
    };
    let Some(interval) = estimate.interval else {
        return Outcome::inconclusive(format!(
            "The claim rests on the {what} score, which has no interval for {} without \
             per-example predictions.",
            subject.model.metric.name()
        ));
    };
    evidence.push(Evidence::number(
        "estimate",
        "Estimate",
        estimate.value,
        Quantity::Score,
    ));
    evidence.push(Evidence::interval(
        "interval",
        "Interval",
        interval,
        ctx.intervals.confidence,
    ));
    if let crate::estimate::IntervalBasis::FoldMean {
        floored, clipped, ..
    } = estimate.basis
    {
        let note = match (floored, clipped) {
            (true, true) => Some(
                "fold scores vary less than a proportion on these rows can: the standard error \
                 is floored, and the interval clipped to the metric's range",
            ),
            (true, false) => Some(
                "fold scores vary less than a proportion on these rows can: the standard error \
                 is floored",
            ),
            (false, true) => Some("the t interval is clipped to the metric's range"),
            (false, false) => None,
        };
        if let Some(note) = note {
            evidence.push(Evidence::text("interval_note", "About the interval", note));
        }
    }
    evidence.push(Evidence::count(
        "rows",
        "Rows behind the estimate",
        estimate.rows,
    ));
    evidence.push(Evidence::count(
        "min_rows",
        "Fewest rows accepted",
        settings.min_rows,
    ));
    if estimate.rows < settings.min_rows {
        return Outcome::fail(
            "The claimed {claim} rests on only {rows} rows, fewer than the {min_rows} the policy \
             accepts: so few rows cannot support a claim, whatever their interval {interval} says.",
            evidence,
        );
    }
    let inside = super::threshold::inside(interval, claim.value);
    let higher = !super::threshold::at_most(claim.value, interval.upper);
    let overstates = if subject.model.metric.higher_is_better() {
        higher
    } else {
        !higher
    };
    match (claim.basis, inside, overstates) {
        (Basis::Test, true, _) => Outcome::pass(
            "The claimed {claim} lies inside the test interval {interval}.",
            evidence,
        ),
        (Basis::Cv, true, _) => Outcome::pass(
            "The claimed {claim} is a cross-validation claim inside the CV interval {interval}; \
             whether it survives the optimism of the search is judged by the selection-optimism \
             rule.",
            evidence,
        ),
        (_, false, true) => Outcome::fail(
            "The claimed {claim} is better than the evidence supports: the interval is {interval}.",
            evidence,
        ),
        (_, false, false) => Outcome::pass(
            "The claimed {claim} lies outside the interval {interval} on the worse side: the \
             evidence supports more than is claimed.",
            evidence,
        ),
    }
}
