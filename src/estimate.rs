//! The CV and test estimates of a model, with intervals, shared by the rules and the report.
//!
//! Proportion metrics (accuracy) use a binomial interval on counts of correct rows: for CV the
//! pooled count over the folds, with every training row counted once however many times the
//! split was repeated; for the test split the count of its last evaluation. Other metrics get a
//! Student-t interval over the fold scores for CV, and no test interval until per-example
//! predictions are read (the report says so instead of inventing one).

use schemars::JsonSchema;
use serde::Serialize;

use crate::manifest::{CrossValidation, Evaluation, Metric, Model};
pub use crate::stats::IntervalSettings;
use crate::stats::{self, Interval, ProportionMethod};

/// How an estimate's interval was obtained.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, JsonSchema)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum IntervalBasis {
    /// A binomial interval on a count of correct rows.
    Proportion { method: ProportionMethod },
    /// A Student-t interval over per-fold scores.
    FoldMean {
        folds: usize,
        /// The standard error was raised to the floor for metrics bounded to [0, 1] (the fold
        /// scores barely vary, or not at all).
        floored: bool,
        /// The t interval reached past the metric's range and was clipped to it.
        clipped: bool,
    },
    /// Recomputed from the per-example predictions.
    Predictions {
        method: crate::evidence::metric::Method,
    },
    /// No interval: the evidence needed is not in the manifest.
    Unavailable,
}

/// A point estimate with its interval and the rows behind it.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Estimate {
    pub value: f64,
    pub interval: Option<Interval>,
    pub basis: IntervalBasis,
    /// Distinct rows the estimate rests on.
    pub rows: u64,
    /// Correct rows, for proportion metrics, when they are a whole count of `rows` (not for
    /// repeated k-fold, whose pooled count is spread over the repeats).
    pub correct: Option<u64>,
    /// The count behind a proportion over `rows`: `correct`, or with R repeats of k-fold the
    /// correct validations divided by R, which need not be whole (801 of 1000 validations over
    /// 2 repeats is 400.5 of 500 rows). Intervals and tests use it unrounded.
    pub successes: Option<f64>,
    /// Standard error of the estimate. For a proportion the Agresti–Coull form
    /// √(p̃(1−p̃)/(n + z²)), which stays positive at 0/n and n/n (see
    /// [`stats::agresti_coull_std_error`]); s/√k over k folds otherwise, floored for metrics
    /// bounded to [0, 1] (see [`fold_mean`]).
    pub std_error: Option<f64>,
}

/// The CV estimate of the selected configuration, if the manifest has a search.
pub fn cv_estimate(model: &Model, settings: IntervalSettings) -> Option<Estimate> {
    let cv = &model.search.as_ref()?.cv;
    Some(if model.metric.is_proportion() {
        pooled_proportion(cv, settings)
    } else {
        fold_mean(cv, model.metric, settings.confidence)
    })
}

fn pooled_proportion(cv: &CrossValidation, settings: IntervalSettings) -> Estimate {
    let correct: u64 = cv.folds.iter().filter_map(|f| f.correct).sum();
    let validated: u64 = cv.folds.iter().map(|f| f.rows).sum();
    let value = correct as f64 / validated as f64;
    // With repeats, each row is validated `repeats` times; the interval counts it once, with
    // the mean count per repeat (never rounded to a whole count).
    let rows = cv.distinct_rows();
    let repeats = cv.repeats.max(1);
    let successes = if repeats == 1 {
        correct as f64
    } else {
        correct as f64 / f64::from(repeats)
    };
    Estimate {
        value,
        interval: stats::proportion_interval_mean(
            successes,
            rows,
            settings.confidence,
            settings.method,
        )
        .ok(),
        basis: IntervalBasis::Proportion {
            method: settings.method,
        },
        rows,
        correct: (repeats == 1).then_some(correct),
        successes: Some(successes),
        std_error: stats::agresti_coull_std_error(successes, rows, settings.confidence).ok(),
    }
}

/// The mean of the fold scores with a Student-t interval, kept inside the metric's range.
///
/// For metrics bounded to [0, 1] (F1, ROC AUC, balanced accuracy) the standard error is at least
/// the Agresti–Coull standard error of a proportion at the same value on the same distinct rows
/// ([`stats::agresti_coull_std_error`]): folds that agree exactly (every fold AUC 1.0) give
/// s = 0, and an interval of zero width would call a score on a few hundred rows exact. The
/// floor is the sampling error of a row-level proportion at that value — the order of these
/// metrics' own sampling error on the same rows (common practice, no source) — and is stated in
/// the estimate's basis (`floored`). The interval is then clipped to the metric's range
/// (`clipped`): a t interval is symmetric and can reach past 1 or below 0.
fn fold_mean(cv: &CrossValidation, metric: Metric, confidence: f64) -> Estimate {
    let scores: Vec<f64> = cv.folds.iter().map(|f| f.score).collect();
    let rows = cv.distinct_rows();
    let range = metric.range();
    let m = stats::mean_t_interval(&scores, confidence).and_then(|m| {
        if range != (0.0, 1.0) {
            return Ok((m, false));
        }
        let floor =
            stats::agresti_coull_std_error(m.mean.clamp(0.0, 1.0) * rows as f64, rows, confidence)?;
        if m.std_error >= floor {
            return Ok((m, false));
        }
        let t = stats::t_quantile(0.5 + 0.5 * confidence, m.df)?;
        let floored = stats::MeanEstimate {
            std_error: floor,
            interval: Interval {
                lower: m.mean - t * floor,
                upper: m.mean + t * floor,
            },
            ..m
        };
        Ok((floored, true))
    });
    match m {
        Ok((m, floored)) => Estimate {
            value: m.mean,
            interval: Some(m.interval.clamp_to(range)),
            basis: IntervalBasis::FoldMean {
                folds: scores.len(),
                floored,
                clipped: m.interval.leaves(range),
            },
            rows,
            correct: None,
            successes: None,
            std_error: Some(m.std_error),
        },
        Err(_) => Estimate {
            value: scores.iter().sum::<f64>() / scores.len().max(1) as f64,
            interval: None,
            basis: IntervalBasis::Unavailable,
            rows,
            correct: None,
            successes: None,
            std_error: None,
        },
    }
}

/// The metric recomputed from predictions, or why it could not be.
pub type Recomputation = Result<crate::evidence::metric::Recomputed, String>;

/// Recomputes the model's metric from its predictions, when it has them.
pub fn recompute(model: &Model, settings: IntervalSettings) -> Option<Recomputation> {
    model
        .predictions
        .as_ref()
        .map(|p| crate::evidence::metric::recompute(&p.set, model.metric, p.f1, settings))
}

/// The test estimate: recomputed from the predictions when the manifest has them (the
/// recomputation rule checks it against the reported score), else from the last holdout
/// evaluation.
pub fn test_estimate(
    model: &Model,
    settings: IntervalSettings,
    recomputed: Option<&Recomputation>,
) -> Option<Estimate> {
    if let Some(Ok(r)) = recomputed {
        return Some(Estimate {
            value: r.value,
            interval: Some(r.interval),
            basis: IntervalBasis::Predictions { method: r.method },
            rows: r.rows,
            correct: r.correct,
            successes: r.correct.map(|c| c as f64),
            std_error: None,
        });
    }
    model
        .test_evaluation()
        .map(|e| evaluation_estimate(e, settings))
}

/// An estimate from one holdout evaluation at the given settings.
pub fn evaluation_estimate(evaluation: &Evaluation, settings: IntervalSettings) -> Estimate {
    match evaluation.correct {
        // The count is exact; the reported score may be rounded.
        Some(correct) => Estimate {
            value: correct as f64 / evaluation.rows as f64,
            interval: stats::proportion_interval(
                correct,
                evaluation.rows,
                settings.confidence,
                settings.method,
            )
            .ok(),
            basis: IntervalBasis::Proportion {
                method: settings.method,
            },
            rows: evaluation.rows,
            correct: Some(correct),
            successes: Some(correct as f64),
            std_error: stats::agresti_coull_std_error(
                correct as f64,
                evaluation.rows,
                settings.confidence,
            )
            .ok(),
        },
        None => Estimate {
            value: evaluation.score,
            interval: None,
            basis: IntervalBasis::Unavailable,
            rows: evaluation.rows,
            correct: None,
            successes: None,
            std_error: None,
        },
    }
}
