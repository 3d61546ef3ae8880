//! The calibrated gate, the selection-optimism rule's default: a bound the truth exceeds no more
//! often than the policy's confidence allows, a headline estimate with no systematic error, and
//! "cannot judge" where no gate can.
//!
//! Owns: [`judge`]. Chosen by measurement on the calibration corpus (`tests/calibration/`, 216
//! real scikit-learn searches whose truth is known to ±0.0036; the numbers are in its README and
//! `tests/calibration.rs` keeps them):
//! - **Bound** ("best score the evidence supports"): the most favourable of the CV interval's
//!   bound (Wilson for accuracy), the Student-t interval of the fold scores (t with K − 1 degrees
//!   of freedom, for accuracy; other metrics' CV interval is that interval already) and, with
//!   out-of-fold results, BBC-CV's percentile bound. The truth is above it in few enough
//!   searches (≤ 3% overall, ≤ 6% in every cell); each alone, or any bound shifted down by an
//!   estimate of the optimism, left more above it.
//! - **Headline** (the least biased estimate): BBC-CV (Tsamardinos, Greasidou & Borboudakis
//!   2018) when out-of-fold results are given; otherwise the CV score less E[max of M normals] ×
//!   its standard error, M the stated `effective_configurations`, else min(N, 2). With M = N the
//!   estimate was far too low (it assumes independent configurations; real grids behave like
//!   two to four), with M = min(N, 2) its mean error was within ±0.001 for 40 rows and more.
//! - **Cannot judge**: when the CV standard error exceeds `max_std_error` (0.04 by default, about
//!   80 validation rows at accuracy 0.8), sampling noise alone exceeds the difference between "within
//!   0.01 of the truth" and "0.03 over", and when every fold is perfect after more than one
//!   configuration, how much of a perfect score is luck cannot be estimated. The rule is then
//!   inconclusive, which fails under the default `inconclusive: fail`.
//! - **Tolerance** (optional): a stricter team states how far a claim may exceed the headline.

use super::{Facts, Settings};
use crate::finding::{Evidence, Quantity, Status};
use crate::manifest::Basis;
use crate::rules::Outcome;
use crate::rules::threshold::{at_least, at_most};
use crate::stats::{self, Interval};

/// The calibrated gate's outcome for one model (see the module docs).
pub(super) fn judge(
    facts: &Facts<'_>,
    settings: &Settings,
    mut evidence: Vec<Evidence>,
) -> Outcome {
    let (headline, method) = headline(facts);
    evidence.push(Evidence::number(
        "headline",
        "Least biased estimate",
        headline,
        Quantity::Score,
    ));
    evidence.push(Evidence::text("headline_method", "Estimated by", method));
    let bound = bound(facts, &mut evidence);
    evidence.push(Evidence::number(
        "bound",
        "Best score the evidence supports",
        bound,
        Quantity::Score,
    ));
    if facts.oof.is_none() {
        evidence.push(Evidence::text(
            "out_of_fold_hint",
            "With out-of-fold results",
            "an out-of-fold file (search.out_of_fold) would give BBC-CV, which estimates the \
             selection's performance from every configuration's own results, and the effective \
             number of configurations",
        ));
    }
    if facts.claim_basis == Basis::Test {
        return Outcome::pass(
            "The claim rests on the test split, not on the search; for reference the least \
             biased estimate of the selected configuration's CV score is {headline} \
             ({headline_method}).",
            evidence,
        );
    }
    if facts.censored {
        return Outcome::new(
            Status::Inconclusive,
            "The selected configuration scores the metric's best value on every fold after a \
             search of {configurations} configurations: how much of a perfect score is luck \
             cannot be estimated from the folds, so the rule does not judge the claim. Validate \
             on more rows, or claim the score of an untouched test split.",
            evidence,
        );
    }
    // Only metrics whose best value is 1 (accuracy, balanced accuracy, F1, ROC AUC, R²) share
    // the scale the limit is stated on; RMSE, MAE and log loss are in the data's own units.
    let unit_scale = facts.range.1 == 1.0;
    evidence.push(Evidence::number(
        "max_std_error",
        "Largest CV standard error judged",
        settings.max_std_error,
        Quantity::Score,
    ));
    if unit_scale && !at_most(facts.se, settings.max_std_error) {
        return Outcome::new(
            Status::Inconclusive,
            "The CV standard error {cv_se} exceeds {max_std_error}: with this few validation rows \
             sampling noise is larger than the difference between a claim close to the truth and \
             one well above it, so the rule does not judge the claim. Validate on more rows, or \
             claim the score of an untouched test split.",
            evidence,
        );
    }
    let claim = facts.claim;
    let within_bound = if facts.higher {
        at_most(claim, bound)
    } else {
        at_least(claim, bound)
    };
    if !within_bound {
        return Outcome::fail(
            "After a search of {configurations} configurations the evidence supports only up to \
             {bound}; the claimed {claim} is beyond it (least biased estimate {headline}). Use a \
             larger validation set, nested cross-validation or fewer configurations, or claim \
             the score of an untouched test split.",
            evidence,
        );
    }
    if let Some(tolerance) = settings.tolerance {
        evidence.push(Evidence::number(
            "tolerance",
            "Tolerance on the estimate",
            tolerance,
            Quantity::Score,
        ));
        let limit = headline - facts.toward_worse * tolerance;
        let within = if facts.higher {
            at_most(claim, limit)
        } else {
            at_least(claim, limit)
        };
        if !within {
            return Outcome::fail(
                "The claimed {claim} exceeds the least biased estimate {headline} \
                 ({headline_method}) by more than the policy's tolerance {tolerance}, although \
                 the evidence supports up to {bound}.",
                evidence,
            );
        }
    }
    Outcome::pass(
        "After a search of {configurations} configurations the least biased estimate is \
         {headline} ({headline_method}) and the evidence supports up to {bound}; the claimed \
         {claim} is within it.",
        evidence,
    )
}

/// The least biased estimate available and how it was made.
fn headline(facts: &Facts<'_>) -> (f64, String) {
    if let Some(Ok(bbc)) = facts.oof.as_ref().map(|o| &o.bbc) {
        return (
            bbc.estimate,
            format!(
                "BBC-CV, {} resamples of the out-of-fold results",
                bbc.resamples_used
            ),
        );
    }
    let (m, why) = match facts.stated_effective {
        Some(e) => (e, "the stated effective configurations"),
        None => ((facts.counted as f64).min(2.0), "min(N, 2)"),
    };
    let m = m.round().max(1.0) as u64;
    match stats::expected_max_normal(m) {
        Ok(e) => (
            facts.cv_value + facts.toward_worse * e * facts.se,
            format!("the CV score less E[max of {m} normals] × its standard error, M = {why}"),
        ),
        Err(_) => (facts.cv_value, "the CV score, unadjusted".to_owned()),
    }
}

/// The most favourable of the valid bounds (see the module docs), clipped to the metric's range.
fn bound(facts: &Facts<'_>, evidence: &mut Vec<Evidence>) -> f64 {
    let favourable = |i: Interval| if facts.higher { i.upper } else { i.lower };
    let mut candidates = vec![favourable(facts.interval)];
    if facts.proportion
        && facts.repeats <= 1
        && let Ok(t) = stats::mean_t_interval(facts.fold_scores, facts.confidence)
    {
        evidence.push(Evidence::interval(
            "fold_interval",
            "Student-t interval of the fold scores",
            t.interval.clamp_to(facts.range),
            facts.confidence,
        ));
        candidates.push(favourable(t.interval));
    }
    if let Some(Ok(bbc)) = facts.oof.as_ref().map(|o| &o.bbc) {
        candidates.push(favourable(bbc.interval));
    }
    let most = if facts.higher {
        candidates.into_iter().fold(f64::NEG_INFINITY, f64::max)
    } else {
        candidates.into_iter().fold(f64::INFINITY, f64::min)
    };
    // Not capped by the test interval when luck explains the CV score, as the single-estimate
    // gates are: the smaller of two valid bounds is not a valid bound (on the corpus the cap
    // left the truth above it in 4.2% of searches, 11% at N = 1). A CV score far above the test
    // split is the CV-to-test gap rule's finding.
    most.clamp(facts.range.0, facts.range.1)
}
