//! Standard normal and Student-t tails and quantiles.
//!
//! Owns: [`z_two_sided`], [`normal_sf`], [`t_quantile`], [`t_sf`] and the crate-internal
//! `normal_quantile` / `ln_normal_cdf`. Built on `statrs::function::erf` (never
//! `Normal::inverse_cdf`, which panics outside [0, 1]) and on this module's own incomplete beta.
//!
//! Must not: pass an unvalidated value to statrs, or call `StudentsT::inverse_cdf` at all (it is
//! inaccurate from df ≈ 2e4, wrong by 0.6 at df ≈ 8e6, hangs from df ≈ 1.45e7, and also hangs for
//! extreme p at moderate df, e.g. p = 1e-100 with df = 999).

use statrs::function::erf::{erfc, erfc_inv};
use std::f64::consts::{PI, SQRT_2};

use super::error::{Result, StatsError, check_positive, check_unit_open};
use super::special::{Tail, beta_quantile, beta_tails};

/// Φ⁻¹(p) for p in (0, 1), as −√2·erfc⁻¹(2p) (statrs' erfc_inv, rational approximations of
/// Boost's erf_inv; ~1e-16 relative).
pub(crate) fn normal_quantile(p: f64) -> Result<f64> {
    check_unit_open("p", p)?;
    Ok(-SQRT_2 * erfc_inv(2.0 * p))
}

/// z such that P(|Z| ≤ z) = `confidence` for Z ~ N(0, 1): Φ⁻¹(1 − α/2), α = 1 − confidence.
///
/// Computed as √2·erfc⁻¹(α), which keeps full relative precision as the confidence nears 1
/// (no 1 − tiny rounding). Errors: confidence not strictly between 0 and 1.
pub fn z_two_sided(confidence: f64) -> Result<f64> {
    check_unit_open("confidence", confidence)?;
    Ok(SQRT_2 * erfc_inv(1.0 - confidence))
}

/// z such that P(|Z| > z) = `alpha`: Φ⁻¹(1 − α/2) from α itself, for levels such as a
/// Bonferroni α/k where 1 − α/k would round to 1 (k = 10¹⁸ at α = 0.05).
/// Errors: alpha not strictly between 0 and 1.
pub fn z_two_sided_alpha(alpha: f64) -> Result<f64> {
    check_unit_open("alpha", alpha)?;
    Ok(SQRT_2 * erfc_inv(alpha))
}

/// Upper tail P(Z > z) of the standard normal, as ½·erfc(z/√2) (statrs erfc, about 1e-10
/// relative in the far tail). ±∞ give 0 and 1. Errors: z is NaN.
pub fn normal_sf(z: f64) -> Result<f64> {
    if z.is_nan() {
        return Err(StatsError::NotFinite {
            name: "z",
            value: z,
        });
    }
    Ok(0.5 * erfc(z / SQRT_2))
}

/// ln Φ(x) without underflow to −∞ for moderately negative x and without 1 − tiny rounding for
/// positive x (there it is ln1p(−Φ(−x))). Returns −∞ only where Φ(x) itself underflows.
pub(crate) fn ln_normal_cdf(x: f64) -> f64 {
    if x < 0.0 {
        (0.5 * erfc(-x / SQRT_2)).ln()
    } else {
        (-0.5 * erfc(x / SQRT_2)).ln_1p()
    }
}

/// `df` must be > 0 (finite or +∞).
fn check_df(df: f64) -> Result<f64> {
    if df == f64::INFINITY {
        Ok(df)
    } else {
        check_positive("df", df)
    }
}

/// Student-t quantile for finite df by inverting the incomplete beta (bisection), never through
/// `statrs` `StudentsT::inverse_cdf`: that one loops forever for extreme p even at moderate df
/// (found here: p = 1e-100 with df = 999), and loses relative precision for p near ½.
///
/// With q = min(p, 1 − p): P(|T| > t) = I_x(ν/2, ½) = 2q for x = ν/(ν + t²), and
/// P(|T| ≤ t) = I_y(½, ν/2) = 1 − 2q for y = t²/(ν + t²) (A&S 26.7.1 with 26.5.27). Whichever of
/// x, y is below ½ at the answer is solved for, so that t = √(ν(1 − x)/x) or √(νy/(1 − y)) keeps
/// full precision both in the far tail and near the centre; the target is matched in its smaller
/// tail (2q, or 1 − 2q formed exactly as |2p − 1|).
fn t_quantile_by_bisection(p: f64, df: f64) -> Result<f64> {
    if p == 0.5 {
        return Ok(0.0);
    }
    let upper = p > 0.5;
    let two_q = if upper { 2.0 * (1.0 - p) } else { 2.0 * p };
    let centre_mass = (2.0 * p - 1.0).abs();
    let half_df = 0.5 * df;
    // P(|T| > √ν) = I_½(ν/2, ½): the split between the two forms.
    let (split, _) = beta_tails(half_df, 0.5, 0.5, 0.5)?;
    let t = if two_q < split {
        let x = beta_quantile(half_df, 0.5, Tail::Lower, two_q)?;
        (df * (1.0 - x) / x).sqrt()
    } else {
        // Match whichever of 2q and 1 − 2q is smaller, so neither rounds to 1.
        let y = if two_q < 0.5 {
            beta_quantile(0.5, half_df, Tail::Upper, two_q)?
        } else {
            beta_quantile(0.5, half_df, Tail::Lower, centre_mass)?
        };
        (df * y / (1.0 - y)).sqrt()
    };
    Ok(if upper { t } else { -t })
}

/// Quantile of Student's t with `df` degrees of freedom: the t with P(T ≤ t) = p.
///
/// Method by range:
/// - df ≤ 1000, or z² > df/100 with z = Φ⁻¹(p): inversion of the incomplete-beta form of the t
///   distribution by bisection (A&S 26.7.1 with 26.5.27), on this module's incomplete beta; see
///   `t_quantile_by_bisection` for why not statrs' `StudentsT::inverse_cdf`.
/// - otherwise (df > 1000 and z² ≤ df/100): Cornish–Fisher expansion of t in z, four terms,
///   Abramowitz & Stegun (1964) 26.7.5. Its terms shrink like (z²/ν)^k, so the truncation error is
///   below ~1e-13 relative in that range; far in the tail (p = 1e-300 at df 1001, z² ≈ 1.4ν) the
///   series would be off by 10%, hence the bisection there, which only happens for df < 1.5e5.
/// - df = +∞: the normal quantile.
///
/// Extreme p with a tiny df can overflow to ±∞, which is returned as is.
/// Errors: p not strictly between 0 and 1; df NaN or ≤ 0.
pub fn t_quantile(p: f64, df: f64) -> Result<f64> {
    check_unit_open("p", p)?;
    check_df(df)?;
    if df <= 1000.0 {
        return t_quantile_by_bisection(p, df);
    }
    let z = normal_quantile(p)?;
    if df == f64::INFINITY {
        return Ok(z);
    }
    if z * z > 0.01 * df {
        return t_quantile_by_bisection(p, df);
    }
    let z2 = z * z;
    // Coefficients g1..g4 of A&S 26.7.5, as polynomials in z (Horner in z²).
    let g1 = z * (z2 + 1.0) / 4.0;
    let g2 = z * ((5.0 * z2 + 16.0) * z2 + 3.0) / 96.0;
    let g3 = z * (((3.0 * z2 + 19.0) * z2 + 17.0) * z2 - 15.0) / 384.0;
    let g4 = z * ((((79.0 * z2 + 776.0) * z2 + 1482.0) * z2 - 1920.0) * z2 - 945.0) / 92_160.0;
    Ok(z + (g1 + (g2 + (g3 + g4 / df) / df) / df) / df)
}

/// Upper tail P(T > t) of Student's t with `df` degrees of freedom.
///
/// Method by range:
/// - df ≤ 1e7, or t⁸/(32ν²) > 1e-10: the identity P(T > t) = ½·I_{ν/(ν+t²)}(ν/2, ½) for t > 0
///   (Abramowitz & Stegun 1964, 26.7.1 with 26.5.27) on this module's incomplete beta, with the
///   complementary argument t²/(ν + t²) passed exactly (statrs' `StudentsT::sf` drifts to 4e-8
///   relative at df = 1e7).
/// - df > 1e7 and t⁸/(32ν²) ≤ 1e-10 (|t| ≤ 5.8 at df = 2e7, every representable tail at
///   df = 1e9): the normal tail plus its first-order correction in 1/ν,
///   Q(t) + φ(t)(t³ + t)/(4ν), obtained by inverting the first Cornish–Fisher term of A&S 26.7.5;
///   t⁸/(32ν²) is the relative order of the neglected terms. The continued fraction is avoided
///   there because at shapes ≥ 5e7 it drifts to a few 1e-9 relative (measured against scipy at
///   df = 1e9), while the plain normal tail would be off by ~(t² + 1)/(4ν) relative.
/// - df = +∞: the normal tail.
///
/// Errors: t NaN; df NaN or ≤ 0.
pub fn t_sf(t: f64, df: f64) -> Result<f64> {
    if t.is_nan() {
        return Err(StatsError::NotFinite {
            name: "t",
            value: t,
        });
    }
    check_df(df)?;
    if df == f64::INFINITY {
        return normal_sf(t);
    }
    // t⁸/(32ν²) ≤ 1e-10 ⇔ t⁴ ≤ √(3.2e-9)·ν ≈ 5.6e-5·ν.
    let t2 = t * t;
    if df > 1e7 && t2 * t2 <= 5.6e-5 * df {
        let correction = (-0.5 * t2).exp() / (2.0 * PI).sqrt() * (t * t * t + t) / (4.0 * df);
        return Ok(normal_sf(t)? + correction);
    }
    if t == 0.0 {
        return Ok(0.5);
    }
    // u = t²/ν may overflow to ∞ for huge |t|; both forms below then give x = 0, y = 1.
    let u = t2 / df;
    let x = 1.0 / (1.0 + u);
    let y = 1.0 / (1.0 + 1.0 / u);
    let (lower, _) = beta_tails(0.5 * df, 0.5, x, y)?;
    let tail = 0.5 * lower;
    Ok(if t > 0.0 { tail } else { 1.0 - tail })
}

#[cfg(test)]
#[allow(clippy::unwrap_used)]
mod tests {
    use super::*;

    #[test]
    fn symmetric_values() {
        // Symmetry of both distributions about 0 (common practice, no source).
        assert_eq!(normal_sf(0.0).unwrap(), 0.5);
        assert_eq!(t_sf(0.0, 3.0).unwrap(), 0.5);
        let q = t_quantile(0.975, 7.0).unwrap();
        assert!((t_quantile(0.025, 7.0).unwrap() + q).abs() < 1e-12);
        assert!((t_sf(q, 7.0).unwrap() - 0.025).abs() < 1e-12);
        assert_eq!(t_sf(f64::INFINITY, 5.0).unwrap(), 0.0);
        assert_eq!(t_sf(f64::NEG_INFINITY, 5.0).unwrap(), 1.0);
    }

    #[test]
    fn cauchy_case_is_closed_form() {
        // t with 1 df is Cauchy: quantile tan(π(p − ½)), tail ½ − atan(t)/π (common practice).
        let p = 0.9_f64;
        let expected = (std::f64::consts::PI * (p - 0.5)).tan();
        assert!((t_quantile(p, 1.0).unwrap() - expected).abs() < 1e-10);
        let sf = 0.5 - 3.0_f64.atan() / std::f64::consts::PI;
        assert!((t_sf(3.0, 1.0).unwrap() - sf).abs() < 1e-14);
    }

    #[test]
    fn rejects_bad_arguments() {
        assert!(t_quantile(0.5, 0.0).is_err());
        assert!(t_quantile(0.5, -1.0).is_err());
        assert!(t_quantile(0.5, f64::NAN).is_err());
        assert!(t_quantile(f64::NAN, 5.0).is_err());
        assert!(t_quantile(1.0, 5.0).is_err());
        assert!(t_sf(f64::NAN, 5.0).is_err());
        assert!(t_sf(1.0, 0.0).is_err());
        assert!(normal_sf(f64::NAN).is_err());
        assert!(z_two_sided(0.0).is_err());
        assert!(z_two_sided(1.0).is_err());
        assert!(z_two_sided(f64::NAN).is_err());
    }
}
