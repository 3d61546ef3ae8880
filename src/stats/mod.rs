//! Pure numerical functions for judging model-score claims. No manifest, policy or report types
//! live here, and nothing here does I/O, prints, panics or can loop without bound.
//!
//! Owns: confidence intervals for proportions and their differences (`proportion`), normal and
//! Student-t tails and quantiles (`normal_t`), the incomplete beta function and Beta quantiles
//! (`special`), binomial tails and the best-of-N tail (`binomial`), sample-size bounds
//! (`sample_size`), expected maxima of normals (`extremes`), a streaming histogram (`histogram`), the Tibshirani & Tibshirani
//! selection bias (`selection`), the mean with a t interval (`mean`) and robust integer rounding
//! (`rounding`).
//!
//! Every public function validates its arguments and returns [`Result`]; the `statrs` calls that
//! panic on NaN or loop forever on huge shapes are only reached with checked arguments, and the
//! ones that are inaccurate for large n (incomplete beta, Beta and t quantiles) are replaced by
//! this module's own implementations there. Reference values for all of it live in
//! `tests/stats_reference.rs` (published examples) and `tests/reference/stats_values.json`
//! (scipy / statsmodels, written by `tests/reference/generate.py`).

mod binomial;
mod error;
mod extremes;
mod histogram;
mod mean;
mod normal_t;
mod proportion;
mod rounding;
mod sample_size;
mod selection;
mod special;

pub use binomial::{best_of_n_tail, binomial_sf_ge};
pub use error::{Result, StatsError};
pub use extremes::{blom_expected_max, expected_max_normal};
pub use histogram::{Bin, Histogram};
pub use mean::{MeanEstimate, mean_t_interval};
pub use normal_t::{normal_sf, t_quantile, t_sf, z_two_sided};
pub use proportion::{
    Interval, ProportionMethod, ZTest, newcombe_difference, proportion_interval,
    two_proportion_z_test,
};
pub use rounding::{ceil_product, count_from_proportion};
pub use sample_size::{
    cochran_rows, cochran_rows_ceil, hoeffding_margin, hoeffding_rows, hoeffding_rows_ceil,
};
pub use selection::{BiasEstimate, SelectionBias};
pub use special::incomplete_beta;
