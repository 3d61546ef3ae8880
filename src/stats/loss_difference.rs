//! The difference between two regression models scored on the same rows, in the units of RMSE
//! and R² rather than of squared error.
//!
//! Owns: [`RegressionDifference`] (streaming: the moments of both models' squared errors, their
//! co-moment and the targets' moments) and [`DifferenceEstimate`].
//!
//! Why: a paired t-test on per-row squared-error differences tests "equal MSE", which is the
//! same hypothesis as "equal RMSE" or "equal R²" on the same targets, so its p-value serves all
//! three; but its mean and interval are in squared-error units (an improvement of 11.77 where
//! the RMSEs differ by 1.29), and a policy's `min_improvement` is written in the metric's units.
//!
//! Must not: keep per-row values (five numbers of state), or divide by a zero MSE or a zero
//! target variance (each case is handled or an error, as documented).

use super::error::{Result, StatsError, check_unit_open};
use super::moments::Moments;
use super::normal_t::z_two_sided;
use super::proportion::Interval;

/// A difference between two models with its standard error and interval.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DifferenceEstimate {
    pub difference: f64,
    pub std_error: f64,
    pub interval: Interval,
}

/// Streaming accumulator over rows (target, model's prediction, baseline's prediction).
#[derive(Debug, Clone, Default, PartialEq)]
pub struct RegressionDifference {
    model: Moments,
    baseline: Moments,
    /// Σ (u − ū)(v − v̄) of the two squared errors, by Welford's bivariate update.
    co_moment: f64,
    targets: Moments,
    bad_value: Option<f64>,
}

impl RegressionDifference {
    pub fn new() -> Self {
        Self::default()
    }

    /// Adds one row. A NaN or infinite value (or squared error) is remembered and reported by
    /// the finishing calls, so the caller's loop stays infallible.
    pub fn push(&mut self, target: f64, model: f64, baseline: f64) {
        let v = (target - model) * (target - model);
        let u = (target - baseline) * (target - baseline);
        if let Some(&bad) = [target, u, v].iter().find(|x| !x.is_finite()) {
            self.bad_value.get_or_insert(bad);
            return;
        }
        // Welford (1962) for two variables: C += (u − ū_old)(v − v̄_new).
        let du = u - self.baseline.mean();
        self.baseline.push(u);
        self.model.push(v);
        self.co_moment += du * (v - self.model.mean());
        self.targets.push(target);
    }

    fn check(&self) -> Result<f64> {
        if let Some(value) = self.bad_value {
            return Err(StatsError::NotFinite {
                name: "squared error",
                value,
            });
        }
        let n = self.model.n();
        if n < 2 {
            return Err(StatsError::TooFewValues {
                needed: 2,
                got: usize::try_from(n).unwrap_or(usize::MAX),
            });
        }
        Ok(n as f64)
    }

    /// RMSE(baseline) − RMSE(model) (positive: the model is better) with a first-order delta
    /// method interval.
    ///
    /// Method: with ū, v̄ the baseline's and the model's mean squared errors, the difference is
    /// g(ū, v̄) = √ū − √v̄, and by the delta method (Oehlert 1992, "A note on the delta method",
    /// The American Statistician 46:27–29, from memory)
    /// Var ≈ [s_u²/(4ū) + s_v²/(4v̄) − 2·s_uv/(4√(ū v̄))]/n, s the sample (co)variances of the
    /// per-row squared errors (divisor n − 1); interval difference ± z₁₋α/₂·SE. A model whose
    /// squared errors are all 0 has v̄ = s_v = s_uv = 0 and its terms are dropped (they are 0 in
    /// every resample too), likewise for the baseline.
    /// Errors: a non-finite value; fewer than two rows; confidence not in (0, 1).
    pub fn rmse(&self, confidence: f64) -> Result<DifferenceEstimate> {
        check_unit_open("confidence", confidence)?;
        let n = self.check()?;
        let z = z_two_sided(confidence)?;
        let (u, v) = (self.baseline.mean().max(0.0), self.model.mean().max(0.0));
        let var_u = self.baseline.sum_sq_dev() / (n - 1.0);
        let var_v = self.model.sum_sq_dev() / (n - 1.0);
        let cov = self.co_moment / (n - 1.0);
        let mut variance = 0.0;
        if u > 0.0 {
            variance += var_u / (4.0 * u);
        }
        if v > 0.0 {
            variance += var_v / (4.0 * v);
        }
        if u > 0.0 && v > 0.0 {
            variance -= 2.0 * cov / (4.0 * (u * v).sqrt());
        }
        let std_error = (variance.max(0.0) / n).sqrt();
        let difference = u.sqrt() - v.sqrt();
        Ok(DifferenceEstimate {
            difference,
            std_error,
            interval: Interval {
                lower: difference - z * std_error,
                upper: difference + z * std_error,
            },
        })
    }

    /// The factor that turns a mean squared-error difference into an R² difference:
    /// R²(model) − R²(baseline) = (SSE_baseline − SSE_model)/SST = mean(u − v) · n/SST, exactly,
    /// because both models are scored against the same targets (sklearn's `r2_score`, SST =
    /// Σ(y − ȳ)²). Conditional on the targets, a t interval for mean(u − v) times this factor
    /// is the interval for the R² difference, and the paired t's p-value applies unchanged.
    /// Errors: a non-finite value; fewer than two rows; targets that do not vary (R² is then
    /// not defined by its formula).
    pub fn r2_per_squared_error(&self) -> Result<f64> {
        let n = self.check()?;
        let sst = self.targets.sum_sq_dev();
        if sst <= 0.0 {
            return Err(StatsError::OutOfRange {
                name: "variance of the targets",
                value: sst,
                expected: "above 0 for an R² difference",
            });
        }
        Ok(n / sst)
    }
}

#[cfg(test)]
#[allow(clippy::unwrap_used)]
mod tests {
    use super::*;

    #[test]
    fn by_hand() {
        // Targets 0, 0; model errors 1, 1 (v = 1, 1); baseline errors 2, 2 (u = 4, 4):
        // RMSEs 2 and 1, difference 1, no spread anywhere, so SE 0 (hand arithmetic).
        let mut d = RegressionDifference::new();
        d.push(0.0, 1.0, 2.0);
        d.push(0.0, -1.0, -2.0);
        let e = d.rmse(0.95).unwrap();
        assert_eq!((e.difference, e.std_error), (1.0, 0.0));
        // Targets that do not vary: no R² difference.
        assert!(d.r2_per_squared_error().is_err());
        // A perfect model (v = 0 everywhere) drops its terms instead of dividing by 0.
        let mut d = RegressionDifference::new();
        d.push(1.0, 1.0, 2.0);
        d.push(3.0, 3.0, 6.0);
        let e = d.rmse(0.95).unwrap();
        // u = 1, 9: ū = 5, s_u² = 32; Var = 32/(4·5)/2 = 0.8 (hand arithmetic).
        assert!((e.difference - 5f64.sqrt()).abs() < 1e-15);
        assert!((e.std_error - 0.8f64.sqrt()).abs() < 1e-15);
        // SST = (1 − 2)² + (3 − 2)² = 2, so n/SST = 1.
        assert_eq!(d.r2_per_squared_error().unwrap(), 1.0);
    }

    #[test]
    fn bad_input() {
        let mut d = RegressionDifference::new();
        d.push(1.0, f64::NAN, 2.0);
        d.push(1.0, 1.5, 2.0);
        d.push(2.0, 1.5, 2.0);
        assert!(d.rmse(0.95).is_err());
        let mut d = RegressionDifference::new();
        d.push(1.0, 1.5, 2.0);
        assert!(d.rmse(0.95).is_err());
        assert!(d.rmse(1.0).is_err());
    }
}
