//! How many evaluation rows a claimed precision needs: Cochran's normal-approximation formula and
//! Hoeffding's distribution-free bound (with a union bound over repeated looks at one test set).
//!
//! Owns: [`cochran_rows`], [`cochran_rows_ceil`], [`hoeffding_rows`], [`hoeffding_margin`].
//! Must not: round up with a bare `ceil` (see `rounding`).

use super::error::{Result, check_nonzero, check_positive, check_unit_closed, check_unit_open};
use super::normal_t::z_two_sided;
use super::rounding::robust_ceil;

/// Cochran (1977, *Sampling Techniques*, 3rd ed.) sample size n₀ = z² p(1 − p) / E², unrounded,
/// with z = Φ⁻¹(1 − α/2) for the given two-sided confidence and no finite-population correction.
/// Errors: p not in [0, 1]; margin not finite and > 0; confidence not in (0, 1).
pub fn cochran_rows(p: f64, margin: f64, confidence: f64) -> Result<f64> {
    check_unit_closed("p", p)?;
    check_positive("margin", margin)?;
    let z = z_two_sided(confidence)?;
    Ok(z * z * p * (1.0 - p) / (margin * margin))
}

/// ⌈n₀⌉ of [`cochran_rows`], ignoring floating-point noise of order 1e-9 relative (so an exact
/// integer such as 900 is not turned into 901).
pub fn cochran_rows_ceil(p: f64, margin: f64, confidence: f64) -> Result<u64> {
    Ok(robust_ceil(cochran_rows(p, margin, confidence)?))
}

/// ln(2k/δ), validating δ in (0, 1) and k ≥ 1.
fn ln_two_k_over_delta(delta: f64, looks: u64) -> Result<f64> {
    check_unit_open("delta", delta)?;
    check_nonzero("looks", looks)?;
    Ok((2.0 * looks as f64).ln() - delta.ln())
}

/// Rows needed so that, with probability ≥ 1 − δ, every one of `looks` evaluations of a [0, 1]
/// score on the same rows is within ±margin of its expectation.
///
/// Hoeffding (1963) JASA 58:13–30 gives P(|p̂ − p| ≥ ε) ≤ 2·exp(−2nε²); a union bound over k looks
/// requires 2k·exp(−2nε²) ≤ δ, i.e. n ≥ ln(2k/δ) / (2ε²). Unrounded.
/// Errors: margin not finite and > 0; δ not in (0, 1); looks = 0.
pub fn hoeffding_rows(margin: f64, delta: f64, looks: u64) -> Result<f64> {
    check_positive("margin", margin)?;
    Ok(ln_two_k_over_delta(delta, looks)? / (2.0 * margin * margin))
}

/// [`hoeffding_rows`] rounded up, without adding one for floating-point noise.
pub fn hoeffding_rows_ceil(margin: f64, delta: f64, looks: u64) -> Result<u64> {
    Ok(robust_ceil(hoeffding_rows(margin, delta, looks)?))
}

/// The inverse of [`hoeffding_rows`]: the margin ε = √(ln(2k/δ) / (2n)) guaranteed by n rows.
/// Errors: rows = 0; δ not in (0, 1); looks = 0.
pub fn hoeffding_margin(rows: u64, delta: f64, looks: u64) -> Result<f64> {
    check_nonzero("rows", rows)?;
    Ok((ln_two_k_over_delta(delta, looks)? / (2.0 * rows as f64)).sqrt())
}
