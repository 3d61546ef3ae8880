//! Recomputation: the metric recomputed from the predictions equals the reported test score.

use super::{Context, Outcome, RuleInfo, RuleSettings, Subject, rule_settings};
use crate::finding::{Evidence, Quantity, Severity, Status};

rule_settings! {
    /// Settings of the recomputation rule.
    severity = Severity::Error;
    /// Largest allowed |recomputed − reported|, in the metric's units.
    tolerance: f64 = 1e-4, looser: Larger,
}

pub const RULE: RuleInfo = RuleInfo {
    id: "recompute",
    name: "Recomputation",
    explanation: "When the manifest points at the model's per-example predictions on the test \
split, this rule recomputes the metric from them (accuracy, balanced accuracy and F1 from the \
confusion matrix, ROC AUC, log loss, RMSE, MAE and R², each with scikit-learn's definition) and \
fails when it differs from the reported test score by more than `tolerance` (a difference equal \
to `tolerance` as written passes, whatever the binary rounding), or when the file \
holds a different number of rows than the evaluation reports. A summary number can be mistyped, \
computed on another split or cherry-picked; the predictions settle it. The recomputed value and \
its interval then serve as the test estimate of every other rule: a binomial interval for \
accuracy, DeLong's interval for ROC AUC (DeLong, DeLong & Clarke-Pearson 1988, by the fast \
algorithm of Sun & Xu 2014), a t interval over per-row losses for log loss, MAE and RMSE, and a \
seeded bootstrap for F1, balanced accuracy (resampling confusion-matrix counts) and R² \
(resampling rows). Every such interval is clipped to the metric's range (a loss's t interval \
can reach below 0 when a few large losses make the spread). At the boundaries of ROC AUC, \
DeLong's variance is 0 (perfect separation, AUC = 1 or 0; every score tied, AUC = 0.5) or \
undefined (one positive or one negative row), and its interval would be a point; so each end \
of the AUC interval is the wider of DeLong's and a score-type interval's, which solves \
(AUC − θ)² = z²·V(θ) with the Hanley & McNeil (1982) variance evaluated at θ (in the form of \
Newcombe 2006) and keeps its width there: 2 + 2 perfectly separated rows give [0.386, 1], one \
row of each class [0.207, 1], the same as Wilson's interval for 1 of 1. A file with no positive \
or no negative row has no AUC. Without a predictions file the rule is skipped.",
    check,
    severity_from_base: false,
};

pub fn problems(raw: &RawSettings) -> Vec<(String, String)> {
    match raw.tolerance {
        Some(t) if !(t.is_finite() && t >= 0.0) => vec![(
            "tolerance".into(),
            format!("expected a non-negative number, found {t}"),
        )],
        _ => Vec::new(),
    }
}

fn check(subject: &Subject, _ctx: &Context, settings: &RuleSettings) -> Outcome {
    let tolerance = settings.recompute.tolerance;
    let Some(recomputed) = &subject.recomputed else {
        return Outcome::new(
            Status::Skipped,
            "The manifest points at no predictions file, so nothing was recomputed.",
            Vec::new(),
        );
    };
    let r = match recomputed {
        Ok(r) => r,
        Err(why) => {
            return Outcome::inconclusive(format!(
                "The metric could not be recomputed from the predictions: {why}."
            ));
        }
    };
    let Some(reported) = subject.model.test_evaluation() else {
        return Outcome::inconclusive(
            "The predictions were read, but the manifest reports no test score to compare them with.",
        );
    };
    let evidence = vec![
        Evidence::number(
            "reported",
            "Reported test score",
            reported.score,
            Quantity::Score,
        ),
        Evidence::number(
            "recomputed",
            "Recomputed from predictions",
            r.value,
            Quantity::Score,
        ),
        Evidence::number(
            "difference",
            "Recomputed − reported",
            r.value - reported.score,
            Quantity::Score,
        ),
        Evidence::number("tolerance", "Tolerance", tolerance, Quantity::Score),
        Evidence::count("rows", "Rows in the predictions file", r.rows),
        Evidence::count(
            "reported_rows",
            "Rows the evaluation reports",
            reported.rows,
        ),
    ];
    if r.rows != reported.rows {
        return Outcome::fail(
            "The predictions file holds {rows} rows, but the reported evaluation scored \
             {reported_rows}: the number was not computed on these predictions.",
            evidence,
        );
    }
    Outcome::judge(
        super::threshold::at_most((r.value - reported.score).abs(), tolerance),
        "Recomputed from {rows} predictions, the score is {recomputed}, matching the reported \
         {reported}.",
        "Recomputed from {rows} predictions, the score is {recomputed}, not the reported \
         {reported} (difference {difference}, tolerance {tolerance}).",
        evidence,
    )
}
