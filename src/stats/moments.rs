//! Streaming mean and variance (Welford's update) and the Student-t interval built from them.
//!
//! Owns: the crate-internal `Moments` accumulator shared by the per-row metrics (`metrics`) and
//! the paired tests (`paired`). Must not: keep the values it is fed (memory stays three numbers
//! however many rows stream through), or accept a non-finite value silently.

use super::error::{Result, StatsError, check_unit_open};
use super::mean::MeanEstimate;
use super::normal_t::t_quantile;
use super::proportion::Interval;

/// Count, running mean and running sum of squared deviations of a stream of finite values.
///
/// Method: Welford (1962), Technometrics 4:419–420: with δ = x − mean₍ₙ₋₁₎,
/// mean₍ₙ₎ = mean₍ₙ₋₁₎ + δ/n and M₂ += δ·(x − mean₍ₙ₎). Unlike Σx² − (Σx)²/n it does not cancel
/// catastrophically when the mean is large next to the spread.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub(crate) struct Moments {
    n: u64,
    mean: f64,
    m2: f64,
}

impl Moments {
    /// Adds one value; the caller has checked that it is finite.
    pub(crate) fn push(&mut self, x: f64) {
        self.n += 1;
        let delta = x - self.mean;
        self.mean += delta / self.n as f64;
        self.m2 += delta * (x - self.mean);
    }

    pub(crate) fn n(&self) -> u64 {
        self.n
    }

    /// The mean (0 before any value).
    pub(crate) fn mean(&self) -> f64 {
        self.mean
    }

    /// Σ(x − mean)², never negative (round-off clamped).
    pub(crate) fn sum_sq_dev(&self) -> f64 {
        self.m2.max(0.0)
    }

    /// Mean ± t₁₋α/₂,ₙ₋₁ · s/√n, s with divisor n − 1: the one-sample t interval (Student 1908), as
    /// `scipy.stats.ttest_1samp(...).confidence_interval`.
    /// Errors: fewer than two values; confidence not in (0, 1).
    pub(crate) fn t_estimate(&self, confidence: f64) -> Result<MeanEstimate> {
        check_unit_open("confidence", confidence)?;
        if self.n < 2 {
            return Err(StatsError::TooFewValues {
                needed: 2,
                got: usize::try_from(self.n).unwrap_or(usize::MAX),
            });
        }
        let n = self.n as f64;
        let df = n - 1.0;
        let std_error = (self.sum_sq_dev() / df / n).sqrt();
        let t = t_quantile(0.5 + 0.5 * confidence, df)?;
        Ok(MeanEstimate {
            mean: self.mean,
            std_error,
            df,
            interval: Interval {
                lower: self.mean - t * std_error,
                upper: self.mean + t * std_error,
            },
        })
    }
}

#[cfg(test)]
#[allow(clippy::unwrap_used)]
mod tests {
    use super::*;

    #[test]
    fn large_offset_does_not_cancel() {
        // Values 1e9 + {4, 7, 13, 16}: mean 1e9 + 10, sample variance 30 (hand arithmetic).
        let mut m = Moments::default();
        for x in [4.0, 7.0, 13.0, 16.0] {
            m.push(1e9 + x);
        }
        assert_eq!(m.n(), 4);
        assert!((m.mean() - (1e9 + 10.0)).abs() < 1e-6);
        assert!((m.sum_sq_dev() / 3.0 - 30.0).abs() < 1e-6);
        assert!(m.t_estimate(0.95).is_ok());
        assert!(Moments::default().t_estimate(0.95).is_err());
    }
}
