//! What a search's out-of-fold file adds to the selection-optimism rule: BBC-CV (the
//! bias-corrected estimate of the selection's performance) and the effective number of
//! independent configurations.
//!
//! Owns: [`OofFacts`] and [`analyse`]. Pure computation on the table the reader checked; every
//! failure of a statistic becomes a sentence for the report, never a panic or a silent zero.

use crate::finding::{Evidence, Quantity};
use crate::manifest::raw::F1Mode;
use crate::manifest::{Metric, OutOfFold};
use crate::stats::{
    self, BbcEstimate, ClassKind, ClassMetric, CorrectnessMatrix, Direction, ErrorKind,
    ErrorMetric, F1Average, IntervalSettings, OofResults, OofTable, OofTruth, RankMetric,
    RowValueMatrix, WeightedMetric,
};

/// What the out-of-fold file told, for one search.
#[derive(Debug, Clone)]
pub(super) struct OofFacts {
    /// Configurations in the file (a writer may keep only the top ones).
    pub configurations: usize,
    /// Rows every configuration was validated on.
    pub rows: usize,
    /// BBC-CV of the search, or why it could not be computed.
    pub bbc: Result<BbcEstimate, String>,
    /// Galwey's (2009) effective number of configurations, or why it could not be computed.
    pub effective: Result<f64, String>,
}

/// What the model says about its classes, for the metrics that need it.
#[derive(Debug, Clone, Copy)]
pub(super) struct ClassHints<'a> {
    /// The positive class's name (from the predictions' `positive_class`), if named.
    pub positive: Option<&'a str>,
    /// The F1 averaging the model's predictions use (binary for two classes, else macro).
    pub f1: Option<F1Mode>,
}

/// BBC-CV's input for one metric, and the per-row values whose correlation gives the effective
/// number of configurations.
enum Input<'a> {
    Correctness(CorrectnessMatrix),
    RowValues(RowValueMatrix),
    Weighted(Box<dyn WeightedMetric + 'a>, Vec<f64>),
}

/// BBC-CV and the effective number of configurations from the table, with the policy's
/// confidence, resample count and seed; `threads` only changes how fast (results are
/// bit-identical for any count).
pub(super) fn analyse(
    oof: &OutOfFold,
    metric: Metric,
    hints: ClassHints<'_>,
    intervals: &IntervalSettings,
    threads: usize,
) -> OofFacts {
    let table = &oof.table;
    // BBC-CV needs at least 100 resamples; the policy's bootstrap count (default 2000) is used
    // as it is when larger.
    let resamples = intervals.resamples.max(100);
    let bbc_of = |results: OofResults<'_>| {
        stats::bbc_cv(
            results,
            resamples,
            intervals.confidence,
            intervals.seed,
            threads.max(1),
        )
        .map_err(|e| format!("BBC-CV could not be computed: {e}"))
    };
    let effective_of = |e: stats::Result<stats::EffectiveConfigurations>| {
        e.map(|e| e.galwey)
            .map_err(|e| format!("the effective number could not be computed: {e}"))
    };
    let (bbc, effective) = match input(table, metric, hints) {
        Ok(Input::Correctness(matrix)) => (
            bbc_of(OofResults::Correctness(&matrix)),
            effective_of(stats::effective_configurations_of_correctness(&matrix)),
        ),
        Ok(Input::RowValues(values)) => (
            bbc_of(OofResults::RowValues(&values)),
            effective_of(stats::effective_configurations(values.values(), table.rows)),
        ),
        Ok(Input::Weighted(m, per_row)) => (
            bbc_of(OofResults::Weighted(m.as_ref())),
            effective_of(stats::effective_configurations(&per_row, table.rows)),
        ),
        Err(why) => (Err(why.clone()), Err(why)),
    };
    OofFacts {
        configurations: table.configurations.len(),
        rows: table.rows,
        bbc,
        effective,
    }
}

/// The table as BBC-CV reads it for `metric`, or why it cannot.
fn input<'a>(
    table: &'a OofTable,
    metric: Metric,
    hints: ClassHints<'_>,
) -> Result<Input<'a>, String> {
    let rows = table.rows.max(1);
    let unavailable = |what: &str| {
        format!(
            "BBC-CV for {} needs {what}; the out-of-fold file is read and checked only",
            metric.name()
        )
    };
    let stats_error = |e: stats::StatsError| format!("BBC-CV's input could not be formed: {e}");
    match (&table.truth, metric) {
        (OofTruth::Classes { names, labels }, _) => {
            let positive = crate::evidence::read::positive_class(names, hints.positive);
            let correctness_values = || -> Option<Vec<f64>> {
                let predicted = table.predicted.as_ref()?;
                Some(
                    predicted
                        .chunks_exact(rows)
                        .flat_map(|row| {
                            row.iter()
                                .zip(labels)
                                .map(|(p, l)| f64::from(u8::from(p == l)))
                        })
                        .collect(),
                )
            };
            match metric {
                Metric::Accuracy => table
                    .correctness()
                    .map(Input::Correctness)
                    .ok_or_else(|| unavailable("predicted classes")),
                Metric::BalancedAccuracy | Metric::F1 => {
                    let predicted = table
                        .predicted
                        .as_deref()
                        .ok_or_else(|| unavailable("predicted classes"))?;
                    let kind = if metric == Metric::BalancedAccuracy {
                        ClassKind::BalancedAccuracy
                    } else {
                        ClassKind::F1(
                            match hints.f1.unwrap_or(if names.len() <= 2 {
                                F1Mode::Binary
                            } else {
                                F1Mode::Macro
                            }) {
                                F1Mode::Binary => F1Average::Binary {
                                    positive: positive.ok_or_else(|| {
                                        unavailable("a positive class (predictions.positive_class)")
                                    })? as usize,
                                },
                                F1Mode::Macro => F1Average::Macro,
                                F1Mode::Micro => F1Average::Micro,
                            },
                        )
                    };
                    let m = ClassMetric::new(labels, predicted, names.len(), kind)
                        .map_err(stats_error)?;
                    Ok(Input::Weighted(
                        Box::new(m),
                        correctness_values().unwrap_or_default(),
                    ))
                }
                Metric::RocAuc | Metric::LogLoss => {
                    let scores = table
                        .scores
                        .as_deref()
                        .ok_or_else(|| unavailable("a score per row"))?;
                    let positive = positive.ok_or_else(|| {
                        unavailable("a positive class (predictions.positive_class)")
                    })?;
                    let is_positive: Vec<bool> = labels.iter().map(|&l| l == positive).collect();
                    if metric == Metric::LogLoss {
                        // Per-row log loss as scikit-learn 1.9.1 clips it (the reader checked
                        // that every score is a probability).
                        let losses: Vec<f64> = scores
                            .chunks_exact(rows)
                            .flat_map(|row| {
                                row.iter()
                                    .zip(&is_positive)
                                    .map(|(&p, &y)| stats::log_loss_of(if y { p } else { 1.0 - p }))
                            })
                            .collect();
                        return RowValueMatrix::new(losses, table.rows, Direction::LowerIsBetter)
                            .map(Input::RowValues)
                            .map_err(stats_error);
                    }
                    // The ranks are what ROC AUC reads; the scores' correlation stands in for it.
                    let m = RankMetric::new(is_positive, scores).map_err(stats_error)?;
                    Ok(Input::Weighted(Box::new(m), scores.to_vec()))
                }
                _ => Err(unavailable("a classification metric")),
            }
        }
        (OofTruth::Values(truth), Metric::Mae | Metric::Rmse | Metric::R2) => {
            let predicted = table
                .scores
                .as_deref()
                .ok_or_else(|| unavailable("a predicted value per row"))?;
            let errors = |f: fn(f64) -> f64| -> Vec<f64> {
                predicted
                    .chunks_exact(rows)
                    .flat_map(|row| row.iter().zip(truth).map(move |(p, y)| f(y - p)))
                    .collect()
            };
            if metric == Metric::Mae {
                return RowValueMatrix::new(errors(f64::abs), table.rows, Direction::LowerIsBetter)
                    .map(Input::RowValues)
                    .map_err(stats_error);
            }
            let kind = if metric == Metric::Rmse {
                ErrorKind::Rmse
            } else {
                ErrorKind::R2
            };
            let m = ErrorMetric::new(truth, predicted, kind).map_err(stats_error)?;
            Ok(Input::Weighted(Box::new(m), errors(|e| e * e)))
        }
        (OofTruth::Values(_), _) => Err(unavailable("a regression metric")),
    }
}

impl OofFacts {
    /// The report's evidence items for the file's results.
    pub fn evidence(&self, confidence: f64, into: &mut Vec<Evidence>) {
        into.push(Evidence::count(
            "oof_configurations",
            "Configurations in the out-of-fold file",
            self.configurations as u64,
        ));
        into.push(Evidence::count(
            "oof_rows",
            "Rows in the out-of-fold file",
            self.rows as u64,
        ));
        match &self.effective {
            Ok(e) => into.push(Evidence::number(
                "effective_configurations",
                "Effective number of configurations (Galwey 2009)",
                *e,
                Quantity::Score,
            )),
            Err(why) => into.push(Evidence::text(
                "effective_configurations",
                "Effective number of configurations",
                why.clone(),
            )),
        }
        match &self.bbc {
            Ok(b) => {
                into.push(Evidence::number(
                    "bbc_estimate",
                    "BBC-CV estimate",
                    b.estimate,
                    Quantity::Score,
                ));
                into.push(Evidence::interval(
                    "bbc_interval",
                    "BBC-CV percentile interval",
                    b.interval,
                    confidence,
                ));
                into.push(Evidence::count(
                    "bbc_resamples",
                    "BBC-CV resamples used",
                    u64::from(b.resamples_used),
                ));
            }
            Err(why) => into.push(Evidence::text("bbc_estimate", "BBC-CV", why.clone())),
        }
    }
}
