//! Paired comparisons of two models evaluated on the same rows or the same folds.
//!
//! Owns: McNemar's test ([`McNemar`], [`mcnemar_exact`], [`mcnemar_chi2`], [`mcnemar_auto`]), an
//! interval for the difference of two paired accuracies ([`paired_accuracy_difference`]), the
//! paired t-test on per-row differences ([`PairedT`], streaming) and the Nadeau & Bengio corrected
//! resampled t-test on per-fold differences ([`corrected_resampled_t`]), both returning
//! [`PairedTResult`].
//!
//! Must not: keep per-row values (the paired t keeps Welford moments only), or turn a degenerate
//! input into NaN: each function states what it returns when the spread is zero.

use serde::Serialize;

use super::binomial::binomial_sf_ge;
use super::error::{Result, StatsError, check_counts, check_unit_open};
use super::moments::Moments;
use super::normal_t::{normal_sf, t_quantile, t_sf, z_two_sided};
use super::proportion::Interval;

/// Discordant-pair count below which [`mcnemar_auto`] callers are advised to use the exact test:
/// b + c < 25 (common practice, no source: the chi-square approximation is usually trusted from
/// about 25 discordant pairs, i.e. an expected 12.5 per cell under H₀).
pub const MCNEMAR_EXACT_BELOW: u64 = 25;

/// Result of McNemar's test on discordant counts b (A right, B wrong) and c (A wrong, B right).
/// `statistic` is the chi-square statistic (df 1) for the asymptotic test and `None` for the
/// exact binomial test, which has no such statistic.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct McNemar {
    pub b: u64,
    pub c: u64,
    pub statistic: Option<f64>,
    pub p_value: f64,
    pub exact: bool,
}

fn discordant_total(b: u64, c: u64) -> Result<u64> {
    b.checked_add(c).ok_or(StatsError::CountOutOfRange {
        name: "b + c",
        value: u64::MAX,
        expected: "a sum that fits in 64 bits",
    })
}

/// McNemar's exact test (McNemar 1947, Psychometrika 12:153–157, in its exact binomial form):
/// under H₀ the b of the b + c discordant pairs is Binomial(b + c, ½), and the two-sided p-value
/// is 2·P(X ≤ min(b, c)), capped at 1 — the convention of
/// `statsmodels.stats.contingency_tables.mcnemar(table, exact=True)`. P(X ≤ k) is computed as the
/// upper tail P(X ≥ (b + c) − k) by symmetry, through the incomplete beta. No discordant pairs
/// (b = c = 0) gives p = 1. Errors: b + c overflows.
pub fn mcnemar_exact(b: u64, c: u64) -> Result<McNemar> {
    let n = discordant_total(b, c)?;
    let p_value = if n == 0 {
        1.0
    } else {
        (2.0 * binomial_sf_ge(n - b.min(c), n, 0.5)?).min(1.0)
    };
    Ok(McNemar {
        b,
        c,
        statistic: None,
        p_value,
        exact: true,
    })
}

/// McNemar's chi-square test (McNemar 1947): X² = (b − c)²/(b + c), or with Edwards' (1948)
/// continuity correction X² = (|b − c| − 1)²/(b + c), referred to χ² with 1 df; the p-value
/// P(χ²₁ > X²) = 2·P(Z > √X²) exactly. Matches
/// `statsmodels.stats.contingency_tables.mcnemar(table, exact=False, correction=...)` except in
/// two degenerate cases, where statsmodels' literal formula misleads:
/// - b = c = 0 (no discordant pairs): statistic 0, p = 1 (statsmodels gives NaN);
/// - b = c > 0 with the correction: |b − c| − 1 is taken as 0, so statistic 0 and p = 1
///   (statsmodels squares −1 and reports 1/(2b), e.g. p = 0.48 at b = c = 1, although there is
///   no difference at all).
///
/// Errors: b + c overflows.
pub fn mcnemar_chi2(b: u64, c: u64, continuity: bool) -> Result<McNemar> {
    let n = discordant_total(b, c)?;
    let (statistic, p_value) = if n == 0 {
        (0.0, 1.0)
    } else {
        let gap = b.abs_diff(c) as f64;
        let gap = if continuity {
            (gap - 1.0).max(0.0)
        } else {
            gap
        };
        let statistic = gap * gap / n as f64;
        (statistic, (2.0 * normal_sf(statistic.sqrt())?).min(1.0))
    };
    Ok(McNemar {
        b,
        c,
        statistic: Some(statistic),
        p_value,
        exact: false,
    })
}

/// McNemar's test choosing its form: exact ([`mcnemar_exact`]) when b + c < `exact_below`, else
/// chi-square with the continuity correction ([`mcnemar_chi2`]). Pass [`MCNEMAR_EXACT_BELOW`]
/// (25) unless the policy says otherwise. Errors: b + c overflows.
pub fn mcnemar_auto(b: u64, c: u64, exact_below: u64) -> Result<McNemar> {
    if discordant_total(b, c)? < exact_below {
        mcnemar_exact(b, c)
    } else {
        mcnemar_chi2(b, c, true)
    }
}

/// Interval for accuracy(A) − accuracy(B) = (b − c)/n from paired predictions on n rows, where b
/// rows have A right and B wrong, c rows the reverse.
///
/// Method: Agresti & Min (2005), "Simple improved confidence intervals for comparing matched
/// proportions", Stat. Med. 24:729–740: the Wald interval for matched proportions after adding ½
/// to each of the four cells of the paired 2×2 table (so b̃ = b + ½, c̃ = c + ½, ñ = n + 2):
/// d̃ ± z·√((b̃ + c̃) − (b̃ − c̃)²/ñ)/ñ, clipped to [−1, 1]. It needs only b, c and n (unlike
/// Newcombe's 1998 method 10, which also needs the split of the concordant rows) and, per Agresti
/// & Min, performs about as well; the plain Wald interval, which it adjusts, collapses to a point
/// when b = c = 0. Note the interval is centred near (b − c)/(n + 2), not exactly the observed
/// difference.
/// Errors: n = 0; b + c > n; confidence not in (0, 1).
pub fn paired_accuracy_difference(b: u64, c: u64, n: u64, confidence: f64) -> Result<Interval> {
    check_unit_open("confidence", confidence)?;
    check_counts("b + c", discordant_total(b, c)?, "n", n)?;
    let z = z_two_sided(confidence)?;
    let (bt, ct, nt) = (b as f64 + 0.5, c as f64 + 0.5, n as f64 + 2.0);
    let centre = (bt - ct) / nt;
    let half = z * ((bt + ct) - (bt - ct) * (bt - ct) / nt).max(0.0).sqrt() / nt;
    Ok(Interval {
        lower: (centre - half).max(-1.0),
        upper: (centre + half).min(1.0),
    })
}

/// A paired t-test result: mean difference, its standard error, degrees of freedom, the two-sided
/// interval for the mean difference, the t statistic and its two-sided p-value.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct PairedTResult {
    pub mean: f64,
    pub std_error: f64,
    pub df: f64,
    pub interval: Interval,
    pub t: f64,
    pub p_value: f64,
}

/// t = mean/se with df, two-sided p and the t interval; zero spread gives (0, 1) for a zero mean,
/// else (±∞, 0). `confidence` already checked.
fn t_test(mean: f64, std_error: f64, df: f64, confidence: f64) -> Result<PairedTResult> {
    let t_crit = t_quantile(0.5 + 0.5 * confidence, df)?;
    let (t, p_value) = if std_error > 0.0 {
        let t = mean / std_error;
        (t, (2.0 * t_sf(t.abs(), df)?).min(1.0))
    } else if mean == 0.0 {
        (0.0, 1.0)
    } else {
        (f64::INFINITY.copysign(mean), 0.0)
    };
    Ok(PairedTResult {
        mean,
        std_error,
        df,
        interval: Interval {
            lower: mean - t_crit * std_error,
            upper: mean + t_crit * std_error,
        },
        t,
        p_value,
    })
}

/// Streaming paired t-test (Student 1908) on per-row differences dᵢ = loss_A,ᵢ − loss_B,ᵢ.
/// Memory: Welford moments only. A non-finite difference is remembered and reported by
/// [`PairedT::finish`] (so `push` stays infallible for the caller's hot loop).
#[derive(Debug, Clone, Default, PartialEq)]
pub struct PairedT {
    moments: Moments,
    bad_value: Option<f64>,
}

impl PairedT {
    /// An empty accumulator.
    pub fn new() -> Self {
        Self::default()
    }

    /// Adds one difference. A NaN or infinite value is not added; `finish` will fail.
    pub fn push(&mut self, d: f64) {
        if d.is_finite() {
            self.moments.push(d);
        } else if self.bad_value.is_none() {
            self.bad_value = Some(d);
        }
    }

    /// Differences accepted so far.
    pub fn n(&self) -> u64 {
        self.moments.n()
    }

    /// Mean difference d̄, SE = s/√n, df = n − 1, t = d̄/SE, two-sided p = 2·P(T > |t|), and
    /// d̄ ± t₁₋α/₂,ₙ₋₁·SE — `scipy.stats.ttest_rel(a, b)`. With zero spread: t = 0, p = 1 when
    /// d̄ = 0, else t = ±∞, p = 0 (scipy gives NaN).
    /// Errors: a non-finite difference was pushed; fewer than two; confidence not in (0, 1).
    pub fn finish(&self, confidence: f64) -> Result<PairedTResult> {
        if let Some(value) = self.bad_value {
            return Err(StatsError::NotFinite { name: "d", value });
        }
        let e = self.moments.t_estimate(confidence)?;
        t_test(e.mean, e.std_error, e.df, confidence)
    }
}

/// Nadeau & Bengio (2003) corrected resampled t-test, Machine Learning 52:239–281, on J per-fold
/// (or per-split) score differences: t = d̄ / √((1/J + n₂/n₁)·s²), s² the sample variance
/// (divisor J − 1), df = J − 1, two-sided p = 2·P(T > |t|), interval d̄ ± t₁₋α/₂,J₋₁·SE.
/// `test_train_ratio` is n₂/n₁ (test rows over training rows per split: 1/(k − 1) for k-fold CV).
/// The correction inflates the variance for the overlap between training sets, which the plain
/// paired t ignores (ratio 0 gives the plain paired t). Zero spread as [`PairedT::finish`].
/// Errors: fewer than two differences; any non-finite; ratio negative or non-finite;
/// confidence not in (0, 1).
pub fn corrected_resampled_t(
    diffs: &[f64],
    test_train_ratio: f64,
    confidence: f64,
) -> Result<PairedTResult> {
    check_unit_open("confidence", confidence)?;
    if !test_train_ratio.is_finite() || test_train_ratio < 0.0 {
        return Err(StatsError::OutOfRange {
            name: "test_train_ratio",
            value: test_train_ratio,
            expected: "finite and at least 0",
        });
    }
    let mut moments = Moments::default();
    for &d in diffs {
        if !d.is_finite() {
            return Err(StatsError::NotFinite {
                name: "diffs",
                value: d,
            });
        }
        moments.push(d);
    }
    let e = moments.t_estimate(confidence)?;
    let j = e.df + 1.0;
    let variance = e.std_error * e.std_error * j; // s² back from s²/J
    let std_error = ((1.0 / j + test_train_ratio) * variance).sqrt();
    t_test(e.mean, std_error, e.df, confidence)
}

#[cfg(test)]
#[allow(clippy::unwrap_used)]
mod tests {
    use super::*;

    #[test]
    fn degenerate_counts() {
        assert_eq!(mcnemar_exact(0, 0).unwrap().p_value, 1.0);
        let m = mcnemar_chi2(0, 0, true).unwrap();
        assert_eq!((m.statistic, m.p_value), (Some(0.0), 1.0));
        let m = mcnemar_chi2(3, 3, true).unwrap();
        assert_eq!((m.statistic, m.p_value), (Some(0.0), 1.0));
        // Exact test, b = 0, c = 1: 2·P(X ≤ 0) = 2·½ = 1 (hand arithmetic).
        assert!((mcnemar_exact(0, 1).unwrap().p_value - 1.0).abs() < 1e-14);
        assert!(mcnemar_exact(u64::MAX, 1).is_err());
        assert!(mcnemar_auto(5, 3, MCNEMAR_EXACT_BELOW).unwrap().exact);
        assert!(!mcnemar_auto(15, 10, MCNEMAR_EXACT_BELOW).unwrap().exact);
    }

    #[test]
    fn paired_t_reports_bad_values_at_finish() {
        let mut p = PairedT::new();
        p.push(0.1);
        p.push(f64::NAN);
        p.push(0.2);
        assert_eq!(p.n(), 2);
        assert!(p.finish(0.95).is_err());
        let mut p = PairedT::new();
        p.push(0.1);
        assert!(p.finish(0.95).is_err());
        p.push(0.1);
        let r = p.finish(0.95).unwrap();
        assert_eq!((r.t, r.p_value), (f64::INFINITY, 0.0));
    }

    #[test]
    fn argument_checks() {
        assert!(paired_accuracy_difference(5, 6, 10, 0.95).is_err());
        assert!(paired_accuracy_difference(0, 0, 0, 0.95).is_err());
        assert!(paired_accuracy_difference(1, 0, 10, 1.0).is_err());
        assert!(corrected_resampled_t(&[0.1], 0.1, 0.95).is_err());
        assert!(corrected_resampled_t(&[0.1, 0.2], -0.1, 0.95).is_err());
        assert!(corrected_resampled_t(&[0.1, f64::NAN], 0.1, 0.95).is_err());
        assert!(corrected_resampled_t(&[0.1, 0.2], f64::NAN, 0.95).is_err());
    }
}
