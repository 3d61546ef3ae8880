//! Pure numerical functions for judging model-score claims. No manifest, policy or report types
//! live here, and nothing here does I/O, prints, panics or can loop without bound.
//!
//! Owns: confidence intervals for proportions and their differences (`proportion`), normal and
//! Student-t tails and quantiles (`normal_t`), the incomplete beta function and Beta quantiles
//! (`special`), binomial tails and the best-of-N tail (`binomial`), sample-size bounds
//! (`sample_size`), expected maxima of normals (`extremes`), a streaming histogram (`histogram`), the Tibshirani & Tibshirani
//! selection bias (`selection`), the mean with a t interval (`mean`) and robust integer rounding
//! (`rounding`). Per-example evidence: metrics recomputed from streamed predictions with sklearn's
//! conventions (`metrics`, on Welford moments in `moments`), ROC AUC with DeLong's variance
//! (`delong`), paired tests — McNemar, paired accuracy difference, paired and corrected resampled
//! t (`paired`), the exact sign-flip test and the floor it puts under any paired p-value
//! (`sign_flip`), RMSE and R² differences in their own units (`loss_difference`) — and seeded
//! bootstraps (`bootstrap`, on the portable generator in `rng`). Selection on out-of-fold
//! results: bootstrap bias-corrected CV (`bbc`, the one place here that uses both cores, with
//! results identical for any thread count) and the effective number of configurations
//! (`effective_configurations`), both reading every configuration's out-of-fold table (`oof`).
//!
//! Every public function validates its arguments and returns [`Result`]; the `statrs` calls that
//! panic on NaN or loop forever on huge shapes are only reached with checked arguments, and the
//! ones that are inaccurate for large n (incomplete beta, Beta and t quantiles) are replaced by
//! this module's own implementations there. Reference values for all of it live in
//! `tests/stats_reference.rs` (published examples) and `tests/reference/stats_values.json`
//! (scipy / statsmodels, written by `tests/reference/generate.py`).

mod bbc;
mod binomial;
mod bootstrap;
mod delong;
mod effective_configurations;
mod error;
mod extremes;
mod histogram;
mod loss_difference;
mod mean;
mod metrics;
mod moments;
mod normal_t;
mod oof;
mod paired;
mod proportion;
mod rng;
mod rounding;
mod sample_size;
mod selection;
mod sign_flip;
mod special;
mod weighted;

pub use bbc::{
    BbcEstimate, CorrectnessMatrix, Direction, MAX_WORK, OofResults, RowValueMatrix, bbc_cv,
};
pub use binomial::{best_of_n_tail, best_of_n_tail_count, binomial_sf_ge};
pub use bootstrap::{
    DEFAULT_RESAMPLES, PairedBootstrap, RegressionStatistic, bootstrap_confusion,
    bootstrap_paired_confusion, bootstrap_rows,
};
pub use delong::{
    AucEstimate, AucPieces, PairedAuc, auc_score_interval, roc_auc_delong, roc_auc_delong_paired,
    roc_auc_delong_paired_with, roc_auc_delong_with_pieces,
};
pub use effective_configurations::{
    EffectiveConfigurations, MAX_EIGEN_DIMENSION, effective_configurations,
    effective_configurations_of_correctness,
};
pub use error::{Result, StatsError};
pub use extremes::{blom_expected_max, expected_max_normal};
pub use histogram::{Bin, Histogram};
pub use loss_difference::{DifferenceEstimate, RegressionDifference};
pub use mean::{MeanEstimate, mean_t_interval};
pub use metrics::{
    ConfusionMatrix, F1Average, LogLoss, MAX_CLASSES, RegressionErrors, log_loss_of,
};
pub use normal_t::{normal_sf, t_quantile, t_sf, z_two_sided, z_two_sided_alpha};
pub use oof::{OofTable, OofTruth};
pub use paired::{
    MCNEMAR_EXACT_BELOW, McNemar, PairedT, PairedTResult, corrected_resampled_t, mcnemar_auto,
    mcnemar_chi2, mcnemar_exact, paired_accuracy_difference,
};
pub use proportion::{
    Interval, ProportionMethod, ZTest, agresti_coull_std_error, newcombe_difference,
    newcombe_difference_mean, proportion_interval, proportion_interval_mean, two_proportion_z_test,
    two_proportion_z_test_mean,
};
pub use rounding::{ceil_product, count_from_proportion};
pub use sample_size::{
    cochran_rows, cochran_rows_ceil, hoeffding_margin, hoeffding_rows, hoeffding_rows_ceil,
};
pub use selection::{BiasEstimate, SelectionBias};
pub use sign_flip::{
    NO_SPREAD_RELATIVE, SIGN_FLIP_EXACT_UP_TO, floored_p, no_spread, sign_flip_exact, swap_floor,
};
pub use special::incomplete_beta;
pub use weighted::{ClassKind, ClassMetric, ErrorKind, ErrorMetric, RankMetric, WeightedMetric};

/// How every interval of a check is formed: the confidence level, the method for proportions,
/// and the resample count and seed of the bootstraps (so a result can be reproduced).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct IntervalSettings {
    pub confidence: f64,
    pub method: ProportionMethod,
    pub resamples: u32,
    pub seed: u64,
}
