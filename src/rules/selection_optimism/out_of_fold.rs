//! What a search's out-of-fold file adds to the selection-optimism rule: BBC-CV (the
//! bias-corrected estimate of the selection's performance) and the effective number of
//! independent configurations.
//!
//! Owns: [`OofFacts`] and [`analyse`]. Pure computation on the table the reader checked; every
//! failure of a statistic becomes a sentence for the report, never a panic or a silent zero.

use crate::finding::{Evidence, Quantity};
use crate::manifest::{Metric, OutOfFold};
use crate::stats::{
    self, BbcEstimate, Direction, IntervalSettings, OofResults, OofTruth, RowValueMatrix,
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

/// BBC-CV and the effective number of configurations from the table, with the policy's
/// confidence, resample count and seed; `threads` only changes how fast (results are
/// bit-identical for any count).
pub(super) fn analyse(
    oof: &OutOfFold,
    metric: Metric,
    intervals: &IntervalSettings,
    threads: usize,
) -> OofFacts {
    let table = &oof.table;
    // BBC-CV's input: bit-packed correctness for accuracy, per-row absolute errors for MAE.
    let correctness = match metric {
        Metric::Accuracy => table.correctness(),
        _ => None,
    };
    let absolute_errors = match (metric, &table.truth, &table.scores) {
        (Metric::Mae, OofTruth::Values(truth), Some(predicted)) => {
            let errors: Vec<f64> = predicted
                .chunks_exact(table.rows.max(1))
                .flat_map(|row| row.iter().zip(truth).map(|(p, y)| (y - p).abs()))
                .collect();
            Some(RowValueMatrix::new(
                errors,
                table.rows,
                Direction::LowerIsBetter,
            ))
        }
        _ => None,
    };
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
    let (bbc, effective) = match (&correctness, absolute_errors) {
        (Some(matrix), _) => (
            bbc_of(OofResults::Correctness(matrix)),
            effective_of(stats::effective_configurations_of_correctness(matrix)),
        ),
        (None, Some(Ok(errors))) => (
            bbc_of(OofResults::RowValues(&errors)),
            effective_of(stats::effective_configurations(errors.values(), table.rows)),
        ),
        (None, Some(Err(e))) => {
            let why = format!("the out-of-fold errors could not be formed: {e}");
            (Err(why.clone()), Err(why))
        }
        (None, None) => {
            let why = format!(
                "BBC-CV is computed for accuracy and MAE; for {} the out-of-fold file is read \
                 and checked only",
                metric.name()
            );
            (Err(why.clone()), Err(why))
        }
    };
    OofFacts {
        configurations: table.configurations.len(),
        rows: table.rows,
        bbc,
        effective,
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
