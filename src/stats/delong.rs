//! ROC AUC with DeLong's variance, for one model and for two models scored on the same rows.
//!
//! Owns: [`AucEstimate`], [`roc_auc_delong`], [`auc_score_interval`], [`PairedAuc`],
//! [`roc_auc_delong_paired`].
//!
//! Method: the AUC is the Mann–Whitney statistic θ = P(X > Y) + ½P(X = Y) for a positive's score
//! X and a negative's Y. DeLong, DeLong & Clarke-Pearson (1988), Biometrics 44:837–845, write it
//! through structural components V₁₀(Xᵢ) = (1/n) Σⱼ ψ(Xᵢ, Yⱼ) and V₀₁(Yⱼ) = (1/m) Σᵢ ψ(Xᵢ, Yⱼ),
//! ψ = 1, ½, 0 as X >, =, < Y, and estimate Var θ̂ = S₁₀/m + S₀₁/n with S the sample variances
//! (divisor m − 1, n − 1) of the components; for two models the covariance of their components
//! gives the variance of the difference. Computing ψ for all m·n pairs is O(mn); Sun & Xu (2014),
//! "Fast implementation of DeLong's algorithm for comparing the areas under correlated receiver
//! operating characteristic curves", IEEE Signal Processing Letters 21:1389–1393, show the same
//! components follow from midranks: with Tz the midrank of a score among all m + n scores, Tx
//! among the positives and Ty among the negatives, V₁₀(Xᵢ) = (Tz(Xᵢ) − Tx(Xᵢ))/n and
//! V₀₁(Yⱼ) = 1 − (Tz(Yⱼ) − Ty(Yⱼ))/m. One sort per model: O(N log N). Ties get midranks, which is
//! exactly the ½ weight of ψ.
//!
//! Memory: the scores of one (or two) models, which the ranking truly needs, plus the rank arrays.
//! Must not: panic (NaN scores, empty classes and length mismatches are errors), or depend on
//! anything but the input order-free values (sorting uses a total order, so the result does not
//! depend on the order rows arrive in beyond round-off of sums).

use std::cmp::Ordering;

use serde::Serialize;

use super::error::{Result, StatsError, check_unit_open};
use super::normal_t::{normal_sf, z_two_sided};
use super::proportion::Interval;

/// One model's ROC AUC, its DeLong variance and its interval.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct AucEstimate {
    pub auc: f64,
    /// DeLong's variance; `None` when a class has a single row (the variance of its structural
    /// components divides by the class size − 1).
    pub variance: Option<f64>,
    /// DeLong's normal interval widened, at either end, to the score-type interval
    /// ([`auc_score_interval`]) where that is wider; the score-type interval alone when the
    /// variance is `None`.
    pub interval: Interval,
    pub positives: u64,
    pub negatives: u64,
}

/// Two models' AUCs on the same rows, the difference A − B and DeLong's paired test of it.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct PairedAuc {
    pub auc_a: f64,
    pub auc_b: f64,
    pub difference: f64,
    pub variance: f64,
    pub interval: Interval,
    pub z: f64,
    pub p_value: f64,
}

/// 1-based midranks of `values`: tied values share the mean of the ranks they occupy.
/// `values` must be free of NaN (checked by the callers).
fn midranks(values: &[f64]) -> Vec<f64> {
    let mut order: Vec<usize> = (0..values.len()).collect();
    // `total_cmp` is a total order, so the sort is deterministic; −0.0 and +0.0 were merged by
    // the caller (adding +0.0), since total_cmp would otherwise rank them apart.
    order.sort_unstable_by(|&a, &b| values[a].total_cmp(&values[b]));
    let mut ranks = vec![0.0; values.len()];
    let mut start = 0;
    while start < order.len() {
        let mut end = start + 1;
        while end < order.len()
            && values[order[end]].total_cmp(&values[order[start]]) == Ordering::Equal
        {
            end += 1;
        }
        // Positions start..end (0-based) hold ranks start+1..=end; their mean is (start+1+end)/2.
        let rank = 0.5 * (start + 1 + end) as f64;
        for &index in &order[start..end] {
            ranks[index] = rank;
        }
        start = end;
    }
    ranks
}

/// DeLong structural components of one model (Sun & Xu 2014 midrank form).
struct Components {
    auc: f64,
    /// V₁₀ for each positive, in input order.
    v10: Vec<f64>,
    /// V₀₁ for each negative, in input order.
    v01: Vec<f64>,
}

/// Checks lengths, finiteness and class counts (at least `per_class` of each); returns
/// (positives, negatives).
fn check_inputs(scores: &[&[f64]], labels: &[bool], per_class: usize) -> Result<(usize, usize)> {
    for (s, name) in scores.iter().zip(["scores_a", "scores_b"]) {
        if s.len() != labels.len() {
            return Err(StatsError::LengthMismatch {
                name,
                expected: labels.len(),
                got: s.len(),
            });
        }
        if let Some(&value) = s.iter().find(|v| !v.is_finite()) {
            return Err(StatsError::NotFinite { name, value });
        }
    }
    let positives = labels.iter().filter(|&&l| l).count();
    let negatives = labels.len() - positives;
    for (got, class) in [(positives, "positive"), (negatives, "negative")] {
        if got < per_class {
            return Err(StatsError::TooFewInClass {
                class,
                needed: per_class,
                got,
            });
        }
    }
    Ok((positives, negatives))
}

fn components(scores: &[f64], labels: &[bool], m: usize, n: usize) -> Components {
    // Positives first, then negatives, each in input order; +0.0 merges the two zeros.
    let mut combined = Vec::with_capacity(m + n);
    combined.extend(
        scores
            .iter()
            .zip(labels)
            .filter(|(_, l)| **l)
            .map(|(s, _)| s + 0.0),
    );
    combined.extend(
        scores
            .iter()
            .zip(labels)
            .filter(|(_, l)| !**l)
            .map(|(s, _)| s + 0.0),
    );
    let tz = midranks(&combined);
    let tx = midranks(&combined[..m]);
    let ty = midranks(&combined[m..]);
    let (mf, nf) = (m as f64, n as f64);
    let v10: Vec<f64> = (0..m).map(|i| (tz[i] - tx[i]) / nf).collect();
    let v01: Vec<f64> = (0..n).map(|j| 1.0 - (tz[m + j] - ty[j]) / mf).collect();
    let rank_sum: f64 = tz[..m].iter().sum();
    let auc = (rank_sum - 0.5 * mf * (mf + 1.0)) / (mf * nf);
    Components { auc, v10, v01 }
}

/// Sample variance (divisor len − 1) of the element-wise difference a − b (b = None: of a).
fn component_variance(a: &[f64], b: Option<&[f64]>) -> f64 {
    let len = a.len() as f64;
    let value = |i: usize| a[i] - b.map_or(0.0, |b| b[i]);
    let mean = (0..a.len()).map(value).sum::<f64>() / len;
    (0..a.len()).map(|i| (value(i) - mean).powi(2)).sum::<f64>() / (len - 1.0)
}

/// Score-type interval for an AUC of `auc` from `m` positives and `n` negatives: the θ with
/// (AUC − θ)² = z²·V(θ), V the Hanley & McNeil (1982) variance of the Mann–Whitney AUC written
/// as a function of θ,
/// V(θ) = θ(1 − θ)/(mn) · [1 + (N* − 1)·((1 − θ)/(2 − θ) + θ/(1 + θ))], N* = (m + n)/2,
/// where Hanley & McNeil's Q₁ = θ/(2 − θ) and Q₂ = 2θ²/(1 + θ) are substituted and their m − 1
/// and n − 1 replaced by N* − 1, as in Newcombe (2006), "Confidence intervals for an effect size
/// measure based on the Mann–Whitney statistic. Part 2: asymptotic methods and evaluation",
/// Stat. Med. 25:559–573 (the N* form from memory).
///
/// Why: like Wilson's interval for a proportion (which it equals at m = n = 1), it evaluates the
/// variance at the candidate θ rather than at the estimate, so it keeps its width where every
/// plug-in variance is 0: at AUC = 1 (perfect separation), AUC = 0, and with one row per class.
/// Solved by bisection on [0, AUC] and [AUC, 1] (V vanishes at 0 and 1, so each side has a
/// crossing); 200 halvings reach the last bit.
/// Errors: m or n is 0; `auc` not in [0, 1]; confidence not in (0, 1).
pub fn auc_score_interval(auc: f64, m: u64, n: u64, confidence: f64) -> Result<Interval> {
    check_unit_open("confidence", confidence)?;
    if !(0.0..=1.0).contains(&auc) {
        return Err(StatsError::OutOfRange {
            name: "auc",
            value: auc,
            expected: "in [0, 1]",
        });
    }
    for (got, class) in [(m, "positive"), (n, "negative")] {
        if got == 0 {
            return Err(StatsError::TooFewInClass {
                class,
                needed: 1,
                got: 0,
            });
        }
    }
    let z = z_two_sided(confidence)?;
    let (mf, nf) = (m as f64, n as f64);
    let star = 0.5 * (mf + nf);
    let variance = |t: f64| {
        t * (1.0 - t) / (mf * nf) * (1.0 + (star - 1.0) * ((1.0 - t) / (2.0 - t) + t / (1.0 + t)))
    };
    // g < 0 inside the interval, > 0 outside; `inside` is a point where g ≤ 0 (the estimate).
    let g = |t: f64| (auc - t) * (auc - t) - z * z * variance(t);
    let bisect = |mut inside: f64, mut outside: f64| {
        for _ in 0..200 {
            let mid = 0.5 * (inside + outside);
            if mid == inside || mid == outside {
                break;
            }
            if g(mid) <= 0.0 {
                inside = mid;
            } else {
                outside = mid;
            }
        }
        inside
    };
    let lower = if g(0.0) > 0.0 { bisect(auc, 0.0) } else { 0.0 };
    let upper = if g(1.0) > 0.0 { bisect(auc, 1.0) } else { 1.0 };
    Ok(Interval { lower, upper })
}

/// ROC AUC of `scores` for `labels` (true = positive) with DeLong's variance and an interval
/// that stays inside [0, 1] and keeps its width at the boundaries.
///
/// Method: DeLong, DeLong & Clarke-Pearson (1988) variance via the midrank algorithm of Sun & Xu
/// (2014), see the module docs; the normal interval AUC ± z·√Var, clipped to [0, 1]. The AUC
/// equals `sklearn.metrics.roc_auc_score` (ties count ½). DeLong's variance is 0 when the
/// structural components do not vary — perfect separation (AUC = 1 or 0) and all scores tied
/// (AUC = ½) — and undefined with one row in a class; a point interval there would claim
/// certainty that two rows cannot give. So each end of the interval is the wider of DeLong's
/// and the score-type interval's ([`auc_score_interval`]), and with a single positive or
/// negative the score-type interval alone is used (`variance` is then `None`). On ordinary data
/// DeLong's interval is usually the wider one at both ends.
/// Errors: lengths differ; a score NaN or infinite; no positive or no negative row;
/// confidence not in (0, 1).
pub fn roc_auc_delong(scores: &[f64], labels: &[bool], confidence: f64) -> Result<AucEstimate> {
    check_unit_open("confidence", confidence)?;
    let (m, n) = check_inputs(&[scores], labels, 1)?;
    let z = z_two_sided(confidence)?;
    let c = components(scores, labels, m, n);
    let score = auc_score_interval(c.auc, m as u64, n as u64, confidence)?;
    let (variance, interval) = if m >= 2 && n >= 2 {
        let variance = component_variance(&c.v10, None) / m as f64
            + component_variance(&c.v01, None) / n as f64;
        let half = z * variance.sqrt();
        let interval = Interval {
            lower: (c.auc - half).max(0.0).min(score.lower),
            upper: (c.auc + half).min(1.0).max(score.upper),
        };
        (Some(variance), interval)
    } else {
        (None, score)
    };
    Ok(AucEstimate {
        auc: c.auc,
        variance,
        interval,
        positives: m as u64,
        negatives: n as u64,
    })
}

/// DeLong's test of AUC(A) = AUC(B) for two models scored on the same rows, with an interval for
/// the difference A − B.
///
/// Method: DeLong, DeLong & Clarke-Pearson (1988) §3: Var(θ̂_A − θ̂_B) = Var(V₁₀ᴬ − V₁₀ᴮ)/m +
/// Var(V₀₁ᴬ − V₀₁ᴮ)/n (the same as S_AA + S_BB − 2S_AB, written without the cancellation),
/// components by the midrank algorithm of Sun & Xu (2014). z = (θ̂_A − θ̂_B)/√Var,
/// p = 2·P(Z > |z|); interval difference ± z₁₋α/₂·√Var, clipped to [−1, 1].
/// When the variance is 0 (e.g. identical rankings) the test has no spread: z = 0 and p = 1 if
/// the difference is 0, else z = ±∞ and p = 0.
/// Errors: as [`roc_auc_delong`], for either score slice, and fewer than two positive or two
/// negative rows (the paired variance is then undefined).
pub fn roc_auc_delong_paired(
    scores_a: &[f64],
    scores_b: &[f64],
    labels: &[bool],
    confidence: f64,
) -> Result<PairedAuc> {
    check_unit_open("confidence", confidence)?;
    // The variances of the component differences divide by m − 1 and n − 1.
    let (m, n) = check_inputs(&[scores_a, scores_b], labels, 2)?;
    let z_crit = z_two_sided(confidence)?;
    let a = components(scores_a, labels, m, n);
    let b = components(scores_b, labels, m, n);
    let variance = component_variance(&a.v10, Some(&b.v10)) / m as f64
        + component_variance(&a.v01, Some(&b.v01)) / n as f64;
    let difference = a.auc - b.auc;
    let sd = variance.sqrt();
    let (z, p_value) = if variance > 0.0 {
        let z = difference / sd;
        (z, (2.0 * normal_sf(z.abs())?).min(1.0))
    } else if difference == 0.0 {
        (0.0, 1.0)
    } else {
        (f64::INFINITY.copysign(difference), 0.0)
    };
    Ok(PairedAuc {
        auc_a: a.auc,
        auc_b: b.auc,
        difference,
        variance,
        interval: Interval {
            lower: (difference - z_crit * sd).max(-1.0),
            upper: (difference + z_crit * sd).min(1.0),
        },
        z,
        p_value,
    })
}

#[cfg(test)]
#[allow(clippy::unwrap_used)]
mod tests {
    use super::*;

    #[test]
    fn midranks_by_hand() {
        // Ranks of [3, 1, 3, 2, 3]: 1 → 1, 2 → 2, the three 3s share (3+4+5)/3 = 4.
        assert_eq!(
            midranks(&[3.0, 1.0, 3.0, 2.0, 3.0]),
            vec![4.0, 1.0, 4.0, 2.0, 4.0]
        );
    }

    #[test]
    fn signed_zeros_tie() {
        // −0.0 = +0.0 numerically, so a positive at −0 and a negative at +0 tie: AUC ½ each pair.
        let e = roc_auc_delong(&[-0.0, -0.0, 0.0, 0.0], &[true, true, false, false], 0.95).unwrap();
        assert_eq!(e.auc, 0.5);
    }
}
