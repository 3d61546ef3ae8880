//! What a search's out-of-fold file adds to the selection-optimism rule: BBC-CV (the
//! bias-corrected estimate of the selection's performance) and the effective number of
//! independent configurations.
//!
//! Owns: [`OofFacts`] and [`analyse`]. Pure computation on the table the reader checked; every
//! failure of a statistic becomes a sentence for the report, never a panic or a silent zero.

use crate::finding::{Evidence, Quantity};
use crate::manifest::{Metric, OutOfFold};
use crate::stats::{self, BbcEstimate, IntervalSettings, OofResults};

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
    let correctness = match metric {
        Metric::Accuracy => table.correctness(),
        _ => None,
    };
    let (bbc, effective) = match &correctness {
        Some(matrix) => {
            // BBC-CV needs at least 100 resamples; the policy's bootstrap count (default 2000)
            // is used as it is when larger.
            let resamples = intervals.resamples.max(100);
            let bbc = stats::bbc_cv(
                OofResults::Correctness(matrix),
                resamples,
                intervals.confidence,
                intervals.seed,
                threads.max(1),
            )
            .map_err(|e| format!("BBC-CV could not be computed: {e}"));
            let effective = stats::effective_configurations_of_correctness(matrix)
                .map(|e| e.galwey)
                .map_err(|e| format!("the effective number could not be computed: {e}"));
            (bbc, effective)
        }
        None => {
            let why = format!(
                "the out-of-fold file is used for accuracy only; for {} it is read and checked \
                 but BBC-CV is not computed",
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
