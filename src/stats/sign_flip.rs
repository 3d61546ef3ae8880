//! What a paired comparison can honestly conclude from few or spread-free differences.
//!
//! Owns: the exact sign-flip permutation test on paired differences ([`sign_flip_exact`]), the
//! smallest p-value any paired test on m informative pairs can give ([`swap_floor`]), the two
//! combined into the p-value a report may state ([`floored_p`]), and the test for an interval
//! with no spread left in it ([`no_spread`]).
//!
//! Why: a t statistic divides by the spread of the differences. When every difference is the
//! same (2 folds of 1 row each, a constant gain, or a constant gain plus float noise of 1e-17)
//! the spread is 0 or almost 0, t is ±∞ or 3e14 and p is 0, however few the pairs are. A
//! permutation test shows what the pairs can support: under "no difference" each pair's two
//! results are exchangeable, so each of the 2^m ways of swapping the m pairs whose results
//! differ is equally likely. Swapping none and swapping all give the observed statistic and its
//! mirror image, which are at least as extreme as the observed one, so the two-sided p-value is
//! at least 2/2^m whatever the data: 0.5 on 2 folds, 0.25 on 3, 0.0625 on 5.
//!
//! Must not: enumerate more than 2^[`SIGN_FLIP_EXACT_UP_TO`] sign patterns (the cost is bounded;
//! above the bound only the floor applies), or return a p-value of 0.

use super::error::{Result, StatsError};
use super::proportion::Interval;

/// Most differences [`sign_flip_exact`] enumerates: 2^16 = 65,536 sign patterns (about 1 ms in
/// a debug build). Above 16 pairs its smallest p-value, 2/2^16 ≈ 3e-5, is far below any
/// confidence level a policy uses, so only the floor [`swap_floor`] is applied there.
pub const SIGN_FLIP_EXACT_UP_TO: usize = 16;

/// An interval is taken to have no spread when its width is at most this fraction of its
/// largest bound. Scores read from decimal text carry rounding of about 1e-16 of their size, so
/// a constant gain computed as differences of such scores spreads by about that much (0.83 −
/// 0.82 and 0.82 − 0.81 differ in the 17th digit); 1e-9 leaves room for rounding that went
/// through many operations, and no real set of scores varies that little (common practice, no
/// source).
pub const NO_SPREAD_RELATIVE: f64 = 1e-9;

/// Two-sided p-value of the exact sign-flip permutation test of "the paired differences are
/// symmetric about 0" with the mean difference as the statistic.
///
/// Method: Fisher (1935), *The Design of Experiments*, §21 (the randomisation test on Darwin's
/// paired plants), and Pitman (1937), "Significance tests which may be applied to samples from
/// any populations", Suppl. J. R. Stat. Soc. 4:119–130: every one of the 2^n sign patterns
/// s ∈ {±1}ⁿ is equally likely under H₀, so with T(s) = Σ sᵢdᵢ and the observed T₀ = Σ dᵢ,
/// p = min(1, 2·min(#{T ≤ T₀}, #{T ≥ T₀}) / 2^n) — the convention of
/// `scipy.stats.permutation_test(..., permutation_type='samples', alternative='two-sided')`,
/// which enumerates all patterns when it can. Values within 100·ε·Σ|dᵢ| of T₀ count as equal to
/// it (scipy uses 100·ε·|T₀|; the sum of the absolute values also catches a T₀ of 0 that
/// rounding moved). Zero differences do not change T under a flip, so they change no count.
/// Errors: no differences; more than [`SIGN_FLIP_EXACT_UP_TO`]; a value NaN or infinite.
pub fn sign_flip_exact(diffs: &[f64]) -> Result<f64> {
    if diffs.is_empty() {
        return Err(StatsError::TooFewValues { needed: 1, got: 0 });
    }
    if diffs.len() > SIGN_FLIP_EXACT_UP_TO {
        return Err(StatsError::CountOutOfRange {
            name: "differences",
            value: diffs.len() as u64,
            expected: "at most 16 for the exact sign-flip test",
        });
    }
    if let Some(&value) = diffs.iter().find(|d| !d.is_finite()) {
        return Err(StatsError::NotFinite {
            name: "diffs",
            value,
        });
    }
    let observed: f64 = diffs.iter().sum();
    let slack = 100.0 * f64::EPSILON * diffs.iter().map(|d| d.abs()).sum::<f64>();
    let patterns = 1usize << diffs.len();
    // flipped[mask] = Σ of the differences whose sign the mask flips; T = observed − 2·flipped.
    let mut flipped = vec![0.0; patterns];
    let (mut at_most, mut at_least) = (0u64, 0u64);
    for mask in 0..patterns {
        if mask > 0 {
            let lowest = mask.trailing_zeros() as usize;
            flipped[mask] = flipped[mask & (mask - 1)] + diffs[lowest];
        }
        let t = observed - 2.0 * flipped[mask];
        if t <= observed + slack {
            at_most += 1;
        }
        if t >= observed - slack {
            at_least += 1;
        }
    }
    Ok((2.0 * at_most.min(at_least) as f64 / patterns as f64).min(1.0))
}

/// The smallest two-sided p-value a paired test can honestly give when `informative` pairs
/// differ: 2/2^m (module docs), 1 when no pair differs. Below 2^−1021 the value is held at the
/// smallest normal double, so a reported p-value is never 0.
pub fn swap_floor(informative: u64) -> f64 {
    if informative == 0 {
        return 1.0;
    }
    let exponent = i32::try_from(informative)
        .unwrap_or(i32::MAX)
        .saturating_sub(1);
    (0.5f64).powi(exponent).max(f64::MIN_POSITIVE)
}

/// The p-value to report for a paired comparison whose own test gave `test_p`: the larger of
/// `test_p` and the sign-flip bound — the exact sign-flip p-value when the per-pair
/// differences are given and number at most [`SIGN_FLIP_EXACT_UP_TO`], else [`swap_floor`] of
/// the count of pairs that differ. Taking the larger of two valid p-values is valid (both tests
/// must reject); it keeps the named test's allowance (such as Nadeau & Bengio's for overlapping
/// training sets) and adds the permutation test's limit on what few pairs can show.
/// Returns (reported p, the sign-flip bound). Errors: a difference NaN or infinite.
pub fn floored_p(test_p: f64, diffs: Option<&[f64]>, informative: u64) -> Result<(f64, f64)> {
    let bound = match diffs {
        Some(d) if !d.is_empty() && d.len() <= SIGN_FLIP_EXACT_UP_TO => sign_flip_exact(d)?,
        _ => swap_floor(informative),
    };
    Ok((test_p.max(bound), bound))
}

/// Whether `interval` has no spread left: its width is at most [`NO_SPREAD_RELATIVE`] of its
/// largest bound (a point interval always counts). A test whose interval has no spread has
/// estimated no uncertainty, which a handful of identical differences cannot justify.
pub fn no_spread(interval: Interval) -> bool {
    let scale = interval.lower.abs().max(interval.upper.abs());
    interval.upper - interval.lower <= NO_SPREAD_RELATIVE * scale
}

#[cfg(test)]
#[allow(clippy::unwrap_used)]
mod tests {
    use super::*;

    #[test]
    fn constant_differences_by_hand() {
        // All n differences positive: only the identity pattern reaches T₀ from above and only
        // the all-flipped one from below, so p = 2·1/2^n (hand enumeration).
        assert_eq!(sign_flip_exact(&[1.0, 1.0]).unwrap(), 0.5);
        assert_eq!(sign_flip_exact(&[0.5; 3]).unwrap(), 0.25);
        assert_eq!(sign_flip_exact(&[0.02; 10]).unwrap(), 2.0 / 1024.0);
        // Differences of 0.01 that float rounding spread apart still give 2/2^3.
        let d = [0.83 - 0.82, 0.82 - 0.81, 0.85 - 0.84];
        assert_ne!(d[0], d[1]);
        assert_eq!(sign_flip_exact(&d).unwrap(), 0.25);
        // All zero: every pattern gives T = 0 = T₀, p = 1.
        assert_eq!(sign_flip_exact(&[0.0, 0.0, 0.0]).unwrap(), 1.0);
    }

    #[test]
    fn mixed_signs_by_hand() {
        // d = [3, 1, −1]: T₀ = 3. The 8 patterns give T = ±3 ± 1 ± 1 (with the third sign
        // reversed): 3, 5, 1, 3, −3, −1, −5, −3 → #{T ≥ 3} = 3 (3, 5, 3), #{T ≤ 3} = 7,
        // p = 2·3/8 = 0.75 (hand enumeration).
        assert_eq!(sign_flip_exact(&[3.0, 1.0, -1.0]).unwrap(), 0.75);
    }

    #[test]
    fn floor_and_bounds() {
        assert_eq!(swap_floor(0), 1.0);
        assert_eq!(swap_floor(1), 1.0);
        assert_eq!(swap_floor(2), 0.5);
        assert_eq!(swap_floor(11), 2.0 / 2048.0);
        assert!(swap_floor(u64::MAX) > 0.0);
        assert!(sign_flip_exact(&[]).is_err());
        assert!(sign_flip_exact(&[1.0; 17]).is_err());
        assert!(sign_flip_exact(&[1.0, f64::NAN]).is_err());
        // Many pairs: only the floor, not an enumeration.
        let (p, bound) = floored_p(0.0, Some(&[1.0; 20]), 20).unwrap();
        assert_eq!((p, bound), (swap_floor(20), swap_floor(20)));
        let (p, _) = floored_p(0.3, Some(&[1.0; 3]), 3).unwrap();
        assert_eq!(p, 0.3);
    }

    #[test]
    fn spread() {
        let i = |lower, upper| Interval { lower, upper };
        assert!(no_spread(i(0.01, 0.01)));
        assert!(no_spread(i(0.0, 0.0)));
        assert!(no_spread(i(0.01 - 1e-17, 0.01 + 1e-17)));
        assert!(!no_spread(i(0.009, 0.011)));
        assert!(!no_spread(i(-1e-20, 1e-20)));
    }
}
