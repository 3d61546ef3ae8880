//! Confidence intervals and a test for binomial proportions (accuracy-like scores on n rows).
//!
//! Owns: [`Interval`], [`ProportionMethod`], [`proportion_interval`] (Wilson, Clopper–Pearson,
//! Agresti–Coull, Jeffreys), [`newcombe_difference`] for p₁ − p₂, and
//! [`two_proportion_z_test`].
//!
//! Boundary conventions (documented because references differ):
//! - Wilson: L = 0 exactly at x = 0 and U = 1 exactly at x = n (the raw formula leaves ~1e-17).
//! - Clopper–Pearson: L = 0 at x = 0, U = 1 at x = n; the other bound in closed form there.
//! - Agresti–Coull: clipped to [0, 1], as `statsmodels.stats.proportion.proportion_confint`.
//! - Jeffreys: **L = 0 at x = 0 and U = 1 at x = n**, the modification recommended by Brown, Cai &
//!   DasGupta (2001, Stat. Sci. 16:101–133). statsmodels 0.15 instead returns the raw Beta
//!   quantiles there (e.g. 0/20 → L = 2.4e-5). A gate must not exclude a perfect score that the
//!   data cannot rule out, so the modified form is used; the other bound is the plain quantile.
//!
//! Must not: panic, or call a `statrs` inverse that can hang (Beta quantiles go through
//! `special::beta_quantile`).

use serde::{Deserialize, Serialize};

use super::error::{Result, check_counts, check_unit_open};
use super::normal_t::{normal_sf, z_two_sided};
use super::special::{Tail, beta_quantile};

/// A closed interval [lower, upper].
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Interval {
    pub lower: f64,
    pub upper: f64,
}

impl Interval {
    /// upper − lower.
    pub fn width(&self) -> f64 {
        self.upper - self.lower
    }

    /// Whether lower ≤ x ≤ upper (closed at both ends; NaN is never contained).
    pub fn contains(&self, x: f64) -> bool {
        self.lower <= x && x <= self.upper
    }

    /// The interval clipped to [lo, hi] (a metric's range); NaN bounds stay NaN.
    pub fn clamp_to(&self, (lo, hi): (f64, f64)) -> Interval {
        Interval {
            lower: self.lower.max(lo).min(hi),
            upper: self.upper.min(hi).max(lo),
        }
    }

    /// Whether clipping to [lo, hi] would change the interval.
    pub fn leaves(&self, (lo, hi): (f64, f64)) -> bool {
        self.lower < lo || self.upper > hi
    }

    /// Whether the two closed intervals share at least one point.
    pub fn overlaps(&self, other: &Interval) -> bool {
        self.lower <= other.upper && other.lower <= self.upper
    }
}

/// How to build a two-sided interval for a binomial proportion.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, schemars::JsonSchema)]
#[serde(rename_all = "snake_case")]
pub enum ProportionMethod {
    /// Wilson (1927) score interval.
    Wilson,
    /// Clopper & Pearson (1934) exact (Beta-quantile) interval.
    ClopperPearson,
    /// Agresti & Coull (1998) adjusted Wald interval.
    AgrestiCoull,
    /// Jeffreys equal-tailed Beta(x + ½, n − x + ½) interval (Brown, Cai & DasGupta 2001).
    Jeffreys,
}

/// Wilson (1927) score limits, with exact 0 / 1 at the boundaries (see module docs).
fn wilson(x: f64, n: f64, z: f64) -> Interval {
    let p = x / n;
    let z2n = z * z / n;
    let denom = 1.0 + z2n;
    let centre = (p + 0.5 * z2n) / denom;
    let half = z * (p * (1.0 - p) / n + 0.25 * z2n / n).sqrt() / denom;
    Interval {
        lower: if x == 0.0 {
            0.0
        } else {
            (centre - half).max(0.0)
        },
        upper: if x == n {
            1.0
        } else {
            (centre + half).min(1.0)
        },
    }
}

/// Checks a possibly fractional count of successes: finite and in [0, trials], trials ≥ 1.
fn check_mean_count(successes: f64, trials: u64) -> Result<()> {
    super::error::check_nonzero("trials", trials)?;
    if !(successes.is_finite() && (0.0..=trials as f64).contains(&successes)) {
        return Err(super::error::StatsError::OutOfRange {
            name: "successes",
            value: successes,
            expected: "a count between 0 and the trials",
        });
    }
    Ok(())
}

/// [`proportion_interval`] for a mean count of successes that need not be whole, such as the
/// correct validations per repeat of a repeated k-fold split (801 of 1000 validations over 2
/// repeats is 400.5 of 500 distinct rows, not 401). Every method's formula is defined for a
/// real x in [0, n] (the Beta quantiles take real shapes); at whole x it equals
/// [`proportion_interval`].
/// Errors: confidence not strictly in (0, 1); trials = 0; successes not finite or outside
/// [0, trials].
pub fn proportion_interval_mean(
    successes: f64,
    trials: u64,
    confidence: f64,
    method: ProportionMethod,
) -> Result<Interval> {
    check_mean_count(successes, trials)?;
    interval_at(successes, trials as f64, confidence, method)
}

/// Two-sided interval for a binomial proportion `successes / trials` at the given confidence.
///
/// Methods and sources:
/// - `Wilson`: Wilson (1927) JASA 22:209–212, the score interval
///   (p̂ + z²/2n ± z√(p̂(1−p̂)/n + z²/4n²)) / (1 + z²/n).
/// - `ClopperPearson`: Clopper & Pearson (1934) Biometrika 26:404–413; L solves
///   P(X ≥ x | L) = α/2, i.e. I_L(x, n−x+1) = α/2, and U solves P(X ≤ x | U) = α/2. At x = 0,
///   U = 1 − (α/2)^(1/n); at x = n, L = (α/2)^(1/n) (computed with expm1/exp of ln(α/2)/n).
/// - `AgrestiCoull`: Agresti & Coull (1998) Am. Stat. 52:119–126, in the statsmodels form
///   ñ = n + z², p̃ = (x + z²/2)/ñ, p̃ ± z√(p̃(1−p̃)/ñ), clipped to [0, 1].
/// - `Jeffreys`: Brown, Cai & DasGupta (2001), Beta(x+½, n−x+½) quantiles at α/2 and 1−α/2,
///   with their boundary modification (module docs).
///
/// Beta quantiles come from bisection on this module's incomplete beta at every n, so bounds
/// for n up to 1e7 and beyond are accurate and never hang.
/// Errors: confidence not strictly in (0, 1); trials = 0; successes > trials.
pub fn proportion_interval(
    successes: u64,
    trials: u64,
    confidence: f64,
    method: ProportionMethod,
) -> Result<Interval> {
    check_counts("successes", successes, "trials", trials)?;
    interval_at(successes as f64, trials as f64, confidence, method)
}

/// The interval of x successes in n trials, arguments checked by the caller.
fn interval_at(x: f64, n: f64, confidence: f64, method: ProportionMethod) -> Result<Interval> {
    check_unit_open("confidence", confidence)?;
    let z = z_two_sided(confidence)?;
    let half_alpha = 0.5 * (1.0 - confidence);
    let (at_zero, at_all) = (x == 0.0, x == n);
    match method {
        ProportionMethod::Wilson => Ok(wilson(x, n, z)),
        ProportionMethod::ClopperPearson => {
            let lower = if at_zero {
                0.0
            } else if at_all {
                (half_alpha.ln() / n).exp()
            } else {
                beta_quantile(x, n - x + 1.0, Tail::Lower, half_alpha)?
            };
            let upper = if at_all {
                1.0
            } else if at_zero {
                -(half_alpha.ln() / n).exp_m1()
            } else {
                beta_quantile(x + 1.0, n - x, Tail::Upper, half_alpha)?
            };
            Ok(Interval { lower, upper })
        }
        ProportionMethod::AgrestiCoull => {
            let n_tilde = n + z * z;
            let p_tilde = (x + 0.5 * z * z) / n_tilde;
            let half = z * (p_tilde * (1.0 - p_tilde) / n_tilde).sqrt();
            Ok(Interval {
                lower: (p_tilde - half).max(0.0),
                upper: (p_tilde + half).min(1.0),
            })
        }
        ProportionMethod::Jeffreys => {
            let (a, b) = (x + 0.5, n - x + 0.5);
            let lower = if at_zero {
                0.0
            } else {
                beta_quantile(a, b, Tail::Lower, half_alpha)?
            };
            let upper = if at_all {
                1.0
            } else {
                beta_quantile(a, b, Tail::Upper, half_alpha)?
            };
            Ok(Interval { lower, upper })
        }
    }
}

/// Standard error of a proportion that stays positive at x = 0 and x = n: the Agresti–Coull
/// (1998, Am. Stat. 52:119–126) form √(p̃(1 − p̃)/ñ) with ñ = n + z², p̃ = (x + z²/2)/ñ, z the
/// two-sided normal quantile at `confidence` (half the width of their adjusted Wald interval,
/// before clipping, divided by z).
///
/// Why: the plug-in √(p̂(1 − p̂)/n) is 0 at p̂ = 0 or 1, so anything scaled by it (the expected
/// optimism of a search, the rows a margin needs) would claim perfect precision exactly where
/// the data say least: 20/20 and 2000/2000 would look equally certain. The Agresti–Coull centre
/// p̃ is the Wilson interval's midpoint, so this standard error agrees with the score interval's
/// width; for 0 < p̂ < 1 and large n it tends to the plug-in value. `successes` may be
/// fractional (an average count over repeated cross-validation).
/// Errors: trials = 0; successes outside [0, trials] or not finite; confidence not in (0, 1).
pub fn agresti_coull_std_error(successes: f64, trials: u64, confidence: f64) -> Result<f64> {
    check_unit_open("confidence", confidence)?;
    check_mean_count(successes, trials)?;
    let n = trials as f64;
    let z = z_two_sided(confidence)?;
    let n_tilde = n + z * z;
    let p_tilde = (successes + 0.5 * z * z) / n_tilde;
    Ok((p_tilde * (1.0 - p_tilde) / n_tilde).sqrt())
}

/// Newcombe (1998b) hybrid score interval for p₁ − p₂ (his method 10), Stat. Med. 17:873–890.
///
/// With Wilson limits (l₁, u₁) for p̂₁ and (l₂, u₂) for p̂₂ at the same confidence:
/// L = (p̂₁ − p̂₂) − √((p̂₁ − l₁)² + (u₂ − p̂₂)²), U = (p̂₁ − p̂₂) + √((u₁ − p̂₁)² + (p̂₂ − l₂)²).
/// Matches `statsmodels.stats.proportion.confint_proportions_2indep(method='newcomb')`.
/// Errors: as [`proportion_interval`] for either sample.
pub fn newcombe_difference(
    x1: u64,
    n1: u64,
    x2: u64,
    n2: u64,
    confidence: f64,
) -> Result<Interval> {
    check_counts("x1", x1, "n1", n1)?;
    check_counts("x2", x2, "n2", n2)?;
    newcombe_difference_mean(x1 as f64, n1, x2 as f64, n2, confidence)
}

/// [`newcombe_difference`] for mean counts that need not be whole (see
/// [`proportion_interval_mean`]).
/// Errors: as [`proportion_interval_mean`] for either sample.
pub fn newcombe_difference_mean(
    x1: f64,
    n1: u64,
    x2: f64,
    n2: u64,
    confidence: f64,
) -> Result<Interval> {
    let w1 = proportion_interval_mean(x1, n1, confidence, ProportionMethod::Wilson)?;
    let w2 = proportion_interval_mean(x2, n2, confidence, ProportionMethod::Wilson)?;
    let p1 = x1 / n1 as f64;
    let p2 = x2 / n2 as f64;
    let diff = p1 - p2;
    Ok(Interval {
        lower: diff - (p1 - w1.lower).hypot(w2.upper - p2),
        upper: diff + (w1.upper - p1).hypot(p2 - w2.lower),
    })
}

/// Result of a z-test: the statistic and its two-sided p-value.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct ZTest {
    pub statistic: f64,
    pub p_value: f64,
}

/// Two-sided two-proportion z-test of H₀: p₁ = p₂ with the pooled variance estimate.
///
/// z = (p̂₁ − p̂₂) / √(p̄(1 − p̄)(1/n₁ + 1/n₂)), p̄ = (x₁ + x₂)/(n₁ + n₂), p = 2·P(Z > |z|): the
/// convention of `statsmodels.stats.proportion.proportions_ztest` (value 0, two-sided, pooled).
/// When p̄ is 0 or 1 both samples are identical (all failures or all successes) and the
/// statistic is 0/0; this function returns statistic 0 and p-value 1 there (statsmodels gives NaN).
/// Errors: n₁ or n₂ = 0; x₁ > n₁ or x₂ > n₂.
pub fn two_proportion_z_test(x1: u64, n1: u64, x2: u64, n2: u64) -> Result<ZTest> {
    check_counts("x1", x1, "n1", n1)?;
    check_counts("x2", x2, "n2", n2)?;
    two_proportion_z_test_mean(x1 as f64, n1, x2 as f64, n2)
}

/// [`two_proportion_z_test`] for mean counts that need not be whole (see
/// [`proportion_interval_mean`]).
/// Errors: n₁ or n₂ = 0; a count not finite or outside [0, its n].
pub fn two_proportion_z_test_mean(x1: f64, n1: u64, x2: f64, n2: u64) -> Result<ZTest> {
    check_mean_count(x1, n1)?;
    check_mean_count(x2, n2)?;
    let (n1f, n2f) = (n1 as f64, n2 as f64);
    let pooled = (x1 + x2) / (n1f + n2f);
    let variance = pooled * (1.0 - pooled) * (1.0 / n1f + 1.0 / n2f);
    if variance <= 0.0 {
        return Ok(ZTest {
            statistic: 0.0,
            p_value: 1.0,
        });
    }
    let statistic = (x1 / n1f - x2 / n2f) / variance.sqrt();
    let p_value = (2.0 * normal_sf(statistic.abs())?).min(1.0);
    Ok(ZTest { statistic, p_value })
}

#[cfg(test)]
#[allow(clippy::unwrap_used)]
mod tests {
    use super::*;

    #[test]
    fn interval_helpers() {
        let a = Interval {
            lower: 0.2,
            upper: 0.5,
        };
        let b = Interval {
            lower: 0.5,
            upper: 0.9,
        };
        let c = Interval {
            lower: 0.6,
            upper: 0.7,
        };
        assert!((a.width() - 0.3).abs() < 1e-15);
        assert!(a.contains(0.2) && a.contains(0.5) && !a.contains(0.51));
        assert!(!a.contains(f64::NAN));
        assert!(a.overlaps(&b) && b.overlaps(&a));
        assert!(!a.overlaps(&c) && !c.overlaps(&a));
        assert!(b.overlaps(&c));
    }

    #[test]
    fn method_names_serialize_in_snake_case() {
        let json = serde_json::to_string(&ProportionMethod::ClopperPearson).unwrap();
        assert_eq!(json, "\"clopper_pearson\"");
        let back: ProportionMethod = serde_json::from_str("\"agresti_coull\"").unwrap();
        assert_eq!(back, ProportionMethod::AgrestiCoull);
    }

    #[test]
    fn agresti_coull_standard_error_stays_positive_at_the_boundary() {
        // statsmodels 0.15.0 proportion_confint(x, n, method='agresti_coull'): the unclipped
        // half-width over z (tests/reference/edges.py).
        for (x, n, se) in [
            (60.0, 60, 0.0213794693),
            (20.0, 20, 0.0557392801),
            (200.0, 200, 0.0067668222),
            (16.0, 20, 0.0884842979),
            (344.0, 400, 0.0174417056),
        ] {
            let got = agresti_coull_std_error(x, n, 0.95).unwrap();
            assert!((got - se).abs() < 1e-9, "{x}/{n}: {got}");
        }
        // Symmetric in x and n − x (Agresti & Coull 1998, the interval is symmetric).
        let a = agresti_coull_std_error(0.0, 20, 0.95).unwrap();
        assert!((a - 0.0557392801).abs() < 1e-9);
        assert!(agresti_coull_std_error(21.0, 20, 0.95).is_err());
        assert!(agresti_coull_std_error(f64::NAN, 20, 0.95).is_err());
        assert!(agresti_coull_std_error(1.0, 0, 0.95).is_err());
    }

    #[test]
    fn mean_counts_are_not_rounded() {
        // statsmodels 0.15.0 proportion_confint(400.5, 500, method='wilson')
        // (tests/reference/edges.py).
        let i = proportion_interval_mean(400.5, 500, 0.95, ProportionMethod::Wilson).unwrap();
        assert!((i.lower - 0.7637682887).abs() < 1e-9 && (i.upper - 0.8336418583).abs() < 1e-9);
        // At a whole count the two entry points agree, for every method and at the boundaries.
        for m in [
            ProportionMethod::Wilson,
            ProportionMethod::ClopperPearson,
            ProportionMethod::AgrestiCoull,
            ProportionMethod::Jeffreys,
        ] {
            for x in [0, 7, 20] {
                let a = proportion_interval(x, 20, 0.95, m).unwrap();
                let b = proportion_interval_mean(x as f64, 20, 0.95, m).unwrap();
                assert_eq!(a, b, "{m:?} {x}/20");
            }
        }
        assert!(proportion_interval_mean(20.5, 20, 0.95, ProportionMethod::Wilson).is_err());
    }

    #[test]
    fn identical_degenerate_samples_give_no_evidence() {
        let t = two_proportion_z_test(0, 10, 0, 20).unwrap();
        assert_eq!((t.statistic, t.p_value), (0.0, 1.0));
        let t = two_proportion_z_test(10, 10, 20, 20).unwrap();
        assert_eq!((t.statistic, t.p_value), (0.0, 1.0));
    }
}
