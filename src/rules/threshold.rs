//! Comparisons of computed values with thresholds, robust to binary floating-point rounding.
//!
//! Why: a policy bound is written in decimal (`max_gap: 0.05`), but the value compared with it
//! is computed in binary: 0.40 − 0.35 = 0.05000000000000004 and 0.45 − 0.40 =
//! 0.04999999999999999, so a plain `<=` fails one gap of exactly 0.05 and passes the other. Every
//! threshold comparison in the rules goes through this module, which treats two numbers within
//! nine significant digits of each other as equal (the tolerance `robust_ceil` in
//! `stats::rounding` uses for counts). A value equal to its bound as written is on the bound:
//! it passes an "at most" and an "at least" test alike. Nine digits is far more than any score or
//! policy number carries, and far coarser than the ~1e-16 relative error of one subtraction.

use crate::stats::Interval;

/// Relative tolerance under which two numbers count as equal.
const RELATIVE: f64 = 1e-9;

fn slack(a: f64, b: f64) -> f64 {
    RELATIVE * a.abs().max(b.abs()).max(1.0)
}

/// `value ≤ bound`, with a value equal to the bound up to rounding counted as equal.
/// NaN is never within a bound.
pub fn at_most(value: f64, bound: f64) -> bool {
    value <= bound + slack(value, bound)
}

/// `value ≥ bound`, with a value equal to the bound up to rounding counted as equal.
/// NaN never reaches a bound.
pub fn at_least(value: f64, bound: f64) -> bool {
    value >= bound - slack(value, bound)
}

/// Whether `x` lies in the closed interval, a bound equal to `x` up to rounding counting as in.
pub fn inside(interval: Interval, x: f64) -> bool {
    at_least(x, interval.lower) && at_most(x, interval.upper)
}

/// Whether two closed intervals share a point, touching up to rounding counting as sharing.
pub fn overlap(a: Interval, b: Interval) -> bool {
    at_most(a.lower, b.upper) && at_most(b.lower, a.upper)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_gap_equal_to_the_bound_as_written_is_on_the_bound() {
        // 0.40 − 0.35 and 0.45 − 0.40 are both 0.05 in decimal (arithmetic); in binary the first
        // is 0.05000000000000004 and the second 0.04999999999999999.
        let (a, b) = (
            std::hint::black_box(0.40_f64) - 0.35,
            std::hint::black_box(0.45_f64) - 0.40,
        );
        assert!(a > 0.05 && b < 0.05);
        assert!(at_most(a, 0.05) && at_most(b, 0.05));
        assert!(at_least(a, 0.05) && at_least(b, 0.05));
        // One digit in the fourth decimal is a real difference.
        assert!(!at_most(0.0501, 0.05));
        assert!(!at_least(0.0499, 0.05));
        assert!(!at_most(f64::NAN, 0.05) && !at_least(f64::NAN, 0.05));
    }

    #[test]
    fn intervals() {
        let i = Interval {
            lower: 0.1 + 0.2,
            upper: 0.7,
        };
        // 0.1 + 0.2 = 0.30000000000000004 (IEEE 754 arithmetic): 0.3 is on the bound.
        assert!(inside(i, 0.3) && inside(i, 0.7) && !inside(i, 0.71));
        let j = Interval {
            lower: 0.7,
            upper: 0.9,
        };
        assert!(overlap(i, j));
    }
}
