//! Binomial tail probabilities, including the chance that the best of N configurations reaches a
//! score by luck alone.
//!
//! Owns: [`binomial_sf_ge`], [`best_of_n_tail_count`] and [`best_of_n_tail`]. Both go through `special::beta_tails`,
//! never through `statrs::distribution::Binomial` (off by 1.7e-3 at n = 1e6 and 0.15 at n = 1e7).
//! Must not: compute 1 − F^N directly (it rounds to 0 or 1 wrongly for large N).

use super::error::{Result, check_nonzero, check_unit_closed};
use super::rounding::ceil_product;
use super::special::beta_tails;

/// (P(X ≥ k), P(X < k)) for X ~ Bin(n, p); p already validated. The first is computed directly
/// when it is the smaller, the second otherwise, so either keeps full relative precision.
fn binomial_tails(k: u64, n: u64, p: f64) -> Result<(f64, f64)> {
    if k == 0 {
        return Ok((1.0, 0.0));
    }
    if k > n {
        return Ok((0.0, 1.0));
    }
    // P(X ≥ k) = I_p(k, n − k + 1) (Abramowitz & Stegun 1964, 26.5.24).
    beta_tails(k as f64, (n - k + 1) as f64, p, 1.0 - p)
}

/// Upper tail P(X ≥ k) for X ~ Binomial(n, p).
///
/// Method: P(X ≥ k) = I_p(k, n − k + 1) (A&S 26.5.24) with this module's incomplete beta;
/// k = 0 gives 1, k > n gives 0, p = 0 and p = 1 give exact 0/1. Measured against
/// `scipy.stats.binom.sf(k − 1, n, p)` (see `tests/stats_reference.rs`): ≤ 1e-9 relative for
/// n ≤ 1e7, in the centre and out to 6 standard deviations. Larger n works but drifts slowly
/// (see [`incomplete_beta`](super::incomplete_beta)).
/// Errors: n = 0; p not in [0, 1].
pub fn binomial_sf_ge(k: u64, n: u64, p: f64) -> Result<f64> {
    check_nonzero("n", n)?;
    check_unit_closed("p", p)?;
    Ok(binomial_tails(k, n, p)?.0)
}

/// P(max of `configs` iid Bin(n, p)/n ≥ x): the chance that the best of N configurations, each
/// truly at p, scores at least x on n rows, with k = ⌈n·x⌉ (exact for decimal x, see
/// [`ceil_product`]). Prefer [`best_of_n_tail_count`] whenever the count of correct rows is
/// known: a proportion such as 5/7 = 0.714285714285714 is not a short decimal, and ⌈7 × 0.7142…⌉
/// may come out one too high.
/// Errors: configs = 0; n = 0; p or x not in [0, 1].
pub fn best_of_n_tail(configs: u64, n: u64, p: f64, x: f64) -> Result<f64> {
    check_unit_closed("x", x)?;
    best_of_n_tail_count(configs, n, p, ceil_product(n, x))
}

/// P(max of `configs` iid Bin(n, p) ≥ k): the chance that the best of N configurations, each
/// truly at p, gets at least k of n rows right.
///
/// Method: with F = P(X ≤ k − 1), the order-statistic identity P(max < k) = F^N gives 1 − F^N,
/// evaluated as −expm1(N·ln F) with ln F = ln1p(−P(X ≥ k)) when F is near 1 and ln(F) directly
/// when F is small, so the result neither underflows to a wrong 0 nor rounds to a wrong 1.
/// k = 0 gives 1; k > n gives 0.
/// Errors: configs = 0; n = 0; p not in [0, 1].
pub fn best_of_n_tail_count(configs: u64, n: u64, p: f64, k: u64) -> Result<f64> {
    check_nonzero("configs", configs)?;
    check_nonzero("n", n)?;
    check_unit_closed("p", p)?;
    let (at_least, below) = binomial_tails(k, n, p)?;
    let ln_below = if below < 0.5 {
        below.ln()
    } else {
        (-at_least).ln_1p()
    };
    Ok(-(configs as f64 * ln_below).exp_m1())
}

#[cfg(test)]
#[allow(clippy::unwrap_used)]
mod tests {
    use super::*;

    #[test]
    fn closed_forms() {
        // P(X ≥ n) = pⁿ and P(X ≥ 1) = 1 − (1 − p)ⁿ (common practice, no source).
        let v = binomial_sf_ge(10, 10, 0.7).unwrap();
        assert!((v - 0.7_f64.powi(10)).abs() < 1e-15 * v);
        let v = binomial_sf_ge(1, 10, 0.3).unwrap();
        assert!((v - (1.0 - 0.7_f64.powi(10))).abs() < 1e-14);
        assert_eq!(binomial_sf_ge(0, 10, 0.3).unwrap(), 1.0);
        assert_eq!(binomial_sf_ge(11, 10, 0.3).unwrap(), 0.0);
        assert_eq!(binomial_sf_ge(3, 10, 0.0).unwrap(), 0.0);
        assert_eq!(binomial_sf_ge(3, 10, 1.0).unwrap(), 1.0);
        // One configuration: the best-of-1 tail is the plain tail.
        let single = binomial_sf_ge(16, 20, 0.616).unwrap();
        assert!((best_of_n_tail(1, 20, 0.616, 0.8).unwrap() - single).abs() < 1e-15);
        assert_eq!(best_of_n_tail(5, 20, 0.6, 0.0).unwrap(), 1.0);
    }

    #[test]
    fn best_of_n_on_the_count() {
        // scipy 1.17.1: -expm1(N * log1p(-binom.sf(k - 1, n, p))) (tests/reference/edges.py).
        let v = best_of_n_tail_count(900, 49, 0.61, 40).unwrap();
        assert!((v - 0.7720389986).abs() < 1e-9, "{v}");
        let v = best_of_n_tail_count(2, 150, 0.898, 142).unwrap();
        assert!((v - 0.0510311083).abs() < 1e-9, "{v}");
        assert_eq!(best_of_n_tail_count(3, 10, 0.5, 0).unwrap(), 1.0);
        assert_eq!(best_of_n_tail_count(3, 10, 0.5, 11).unwrap(), 0.0);
    }

    #[test]
    fn rejects_bad_arguments() {
        assert!(binomial_sf_ge(1, 0, 0.5).is_err());
        assert!(binomial_sf_ge(1, 5, 1.5).is_err());
        assert!(binomial_sf_ge(1, 5, f64::NAN).is_err());
        assert!(best_of_n_tail(0, 5, 0.5, 0.5).is_err());
        assert!(best_of_n_tail(2, 0, 0.5, 0.5).is_err());
        assert!(best_of_n_tail(2, 5, 0.5, f64::NAN).is_err());
        assert!(best_of_n_tail(2, 5, 0.5, 1.1).is_err());
    }
}
