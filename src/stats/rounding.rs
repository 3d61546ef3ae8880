//! Turning real-valued products into integer counts without floating-point off-by-one errors.
//!
//! Owns: [`ceil_product`] (⌈n·x⌉, exact for a score written as a decimal), the crate-internal
//! `robust_ceil` (⌈v⌉ that ignores rounding noise, for computed values such as Cochran's n₀),
//! and [`count_from_proportion`]. Every ceiling in `stats` goes through one of these two.
//!
//! Why: in binary floating point 100 × 0.07 = 7.000000000000001, so a plain `ceil` says 8 rows
//! where the exact answer is 7; 2² × 0.1 × 0.9 / 0.02² = 900.0000000000001 likewise.
//!
//! Must not: panic on any input (NaN, negative and infinite inputs saturate, as documented).

use super::error::{Result, StatsError, check_nonzero, check_unit_closed};

/// ⌈v⌉ that treats v within 1e-9 relative of an integer as that integer, so rounding noise in a
/// computed value does not add one. NaN and v ≤ 0 give 0; values beyond `u64::MAX` saturate. Nine significant digits is far more than any sample-size input
/// (a margin such as 0.02) carries, and far less than the 15–16 digits of an f64.
pub(crate) fn robust_ceil(v: f64) -> u64 {
    if v.is_nan() || v <= 0.0 {
        return 0;
    }
    let nearest = v.round();
    let snapped = if (v - nearest).abs() <= 1e-9 * v {
        nearest
    } else {
        v.ceil()
    };
    // Relative only: a tiny positive v (say 1e-300) is a genuine fraction of a row, ceiling 1.
    // `as` saturates at u64::MAX (and infinities do too), which is the documented behaviour.
    snapped as u64
}

/// x as an exact fraction `numerator / 10^scale`, from its shortest round-trip decimal form
/// (Rust's `Display` for f64, which never uses an exponent). `None` if it does not fit in u128.
fn decimal_fraction(x: f64) -> Option<(u128, u32)> {
    let text = x.to_string();
    let (int_part, frac_part) = text.split_once('.').unwrap_or((text.as_str(), ""));
    let scale = u32::try_from(frac_part.len()).ok()?;
    let mut numerator: u128 = 0;
    for ch in int_part.chars().chain(frac_part.chars()) {
        let digit = u128::from(ch.to_digit(10)?);
        numerator = numerator.checked_mul(10)?.checked_add(digit)?;
    }
    Some((numerator, scale))
}

/// ⌈n·x⌉, exact when x is a decimal such as 0.07 or 0.915.
///
/// Method: x is read as the shortest decimal that round-trips to the same f64 (what a person or a
/// JSON file wrote: 0.07, not 0.07000000000000000666), and n·x is then computed exactly in
/// 128-bit integer arithmetic. So 100 × 0.07 → 7, 100 × 0.29 → 29, 20 × 0.8 → 16. When the
/// decimal is too long for 128 bits (e.g. 1e-300), it falls back to `robust_ceil(n·x)`.
/// Saturating by design, as the signature has no error channel: NaN, zero and negative x give 0,
/// +∞ or a result above `u64::MAX` gives `u64::MAX`. Callers validate scores first.
pub fn ceil_product(n: u64, x: f64) -> u64 {
    if x.is_nan() || x <= 0.0 {
        return 0;
    }
    if x.is_infinite() {
        return u64::MAX;
    }
    let exact = decimal_fraction(x).and_then(|(numerator, scale)| {
        let denominator = 10_u128.checked_pow(scale)?;
        let product = numerator.checked_mul(u128::from(n))?;
        Some(product.div_ceil(denominator))
    });
    match exact {
        Some(count) => u64::try_from(count).unwrap_or(u64::MAX),
        None => robust_ceil(n as f64 * x),
    }
}

/// The integer k with k/n = `score`, for a proportion score (accuracy, recall, ...) on n rows.
///
/// Rounds score·n to the nearest integer k and accepts it only if |score − k/n| ≤ `tolerance`
/// (|score·n − k| ≤ min(tolerance·n, ½)). With 1e-6, a score printed with six or more decimals
/// (or stored as f32) is accepted and one rounded to fewer decimals is rejected when the rounding
/// hides which k it was; with 5e-5, a score printed with four decimals is accepted. Once the grid
/// k/n is finer than twice the tolerance, the nearest k is always taken.
/// Errors: score not in [0, 1]; n = 0; score not within the tolerance of any k/n.
pub fn count_from_proportion(score: f64, n: u64, tolerance: f64) -> Result<u64> {
    check_unit_closed("score", score)?;
    check_nonzero("n", n)?;
    let scaled = score * n as f64;
    let nearest = scaled.round();
    if (scaled - nearest).abs() <= (tolerance * n as f64).min(0.5) {
        // 0 ≤ nearest ≤ n here, so the cast is exact.
        Ok(nearest as u64)
    } else {
        Err(StatsError::NotAProportion { score, rows: n })
    }
}

#[cfg(test)]
#[allow(clippy::unwrap_used)]
mod tests {
    use super::*;

    #[test]
    fn robust_ceil_ignores_rounding_noise() {
        // 900.0000000000001 is 2² × 0.1 × 0.9 / 0.02² in f64; exact value 900 (hand arithmetic).
        assert_eq!(robust_ceil(900.000_000_000_000_1), 900);
        assert_eq!(robust_ceil(2_400.999_999_999_999_5), 2401);
        assert_eq!(robust_ceil(384.16), 385);
        assert_eq!(robust_ceil(0.0), 0);
        assert_eq!(robust_ceil(-3.0), 0);
        assert_eq!(robust_ceil(f64::NAN), 0);
        assert_eq!(robust_ceil(f64::INFINITY), u64::MAX);
    }

    #[test]
    fn ceil_product_edge_inputs_saturate() {
        assert_eq!(ceil_product(10, f64::NAN), 0);
        assert_eq!(ceil_product(10, -0.5), 0);
        assert_eq!(ceil_product(10, f64::INFINITY), u64::MAX);
        assert_eq!(ceil_product(0, 0.5), 0);
        assert_eq!(ceil_product(u64::MAX, 2.0), u64::MAX);
        // Too long for the exact path: 1e-300 × 10 rounds up to one row.
        assert_eq!(ceil_product(10, 1e-300), 1);
        // Whole numbers and values above 1 still work: ⌈7 × 1.5⌉ = 11.
        assert_eq!(ceil_product(7, 1.5), 11);
        assert_eq!(ceil_product(7, 3.0), 21);
    }

    #[test]
    fn count_from_proportion_accepts_printed_scores() {
        // 1220/1980 = 0.616161..., printed to 8 and to 6 decimals (hand arithmetic).
        assert_eq!(count_from_proportion(0.61616162, 1980, 1e-6).unwrap(), 1220);
        assert_eq!(count_from_proportion(0.616162, 1980, 1e-6).unwrap(), 1220);
        assert_eq!(count_from_proportion(0.0, 5, 1e-6).unwrap(), 0);
        assert_eq!(count_from_proportion(1.0, 5, 1e-6).unwrap(), 5);
        // Rounded to 4 decimals, 0.6162 × 1980 = 1220.076: not a count at 1e-6, but 1220 when
        // four-decimal rounding is allowed (|0.6162 − 1220/1980| = 3.8e-5 ≤ 5e-5).
        assert!(count_from_proportion(0.6162, 1980, 1e-6).is_err());
        assert_eq!(count_from_proportion(0.6162, 1980, 5e-5).unwrap(), 1220);
        assert!(count_from_proportion(0.5, 0, 1e-6).is_err());
        assert!(count_from_proportion(1.2, 10, 1e-6).is_err());
        assert!(count_from_proportion(f64::NAN, 10, 1e-6).is_err());
    }
}
