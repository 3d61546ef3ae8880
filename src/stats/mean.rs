//! Mean of a small set of values (e.g. per-fold cross-validation scores) with a Student-t interval.
//!
//! Owns: [`MeanEstimate`] and [`mean_t_interval`]. Must not: silently drop non-finite values
//! (they are an error, so a broken fold cannot shrink the sample unnoticed).

use serde::Serialize;

use super::error::{Result, StatsError, check_unit_open};
use super::moments::Moments;
use super::proportion::Interval;

/// Sample mean, its standard error, the t degrees of freedom and the two-sided interval.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct MeanEstimate {
    pub mean: f64,
    pub std_error: f64,
    pub df: f64,
    pub interval: Interval,
}

/// Mean of `values` with the two-sided Student-t interval mean ± t₁₋α/₂,ₙ₋₁ · s/√n.
///
/// Method: the one-sample t interval (Student 1908), s the sample standard deviation with
/// divisor n − 1, from Welford's running moments (shared with the per-row metrics), which avoid
/// the cancellation of the one-pass Σx² formula. Matches scipy's
/// `ttest_1samp(...).confidence_interval`.
/// The values are treated as independent; for cross-validation folds that understates the
/// variance (Nadeau & Bengio 2003), which callers must account for separately.
/// Errors: fewer than two values; any value NaN or infinite; confidence not in (0, 1).
pub fn mean_t_interval(values: &[f64], confidence: f64) -> Result<MeanEstimate> {
    check_unit_open("confidence", confidence)?;
    if values.len() < 2 {
        return Err(StatsError::TooFewValues {
            needed: 2,
            got: values.len(),
        });
    }
    if let Some(&value) = values.iter().find(|v| !v.is_finite()) {
        return Err(StatsError::NotFinite {
            name: "values",
            value,
        });
    }
    let mut moments = Moments::default();
    for &v in values {
        moments.push(v);
    }
    moments.t_estimate(confidence)
}

#[cfg(test)]
#[allow(clippy::unwrap_used)]
mod tests {
    use super::*;

    #[test]
    fn constant_values_give_a_point_interval() {
        let e = mean_t_interval(&[0.75, 0.75, 0.75], 0.95).unwrap();
        assert_eq!(e.std_error, 0.0);
        assert_eq!(e.interval.lower, e.interval.upper);
        assert_eq!(e.df, 2.0);
    }

    #[test]
    fn rejects_bad_input() {
        assert!(mean_t_interval(&[0.5], 0.95).is_err());
        assert!(mean_t_interval(&[], 0.95).is_err());
        assert!(mean_t_interval(&[0.5, f64::NAN], 0.95).is_err());
        assert!(mean_t_interval(&[0.5, f64::INFINITY], 0.95).is_err());
        assert!(mean_t_interval(&[0.5, 0.6], 1.0).is_err());
    }
}
