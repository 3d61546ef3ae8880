//! Metrics of every configuration's out-of-fold results on rows counted with weights, the input
//! BBC-CV ([`super::bbc_cv`]) resamples for a metric that is not the mean of a per-row value:
//! each bootstrap resample counts row i mᵢ times in-bag and once out-of-bag when mᵢ = 0.
//!
//! Owns: [`WeightedMetric`], and its forms [`ClassMetric`] (balanced accuracy, F1),
//! [`RankMetric`] (ROC AUC) and [`ErrorMetric`] (RMSE, R²).
//!
//! Every formula is scikit-learn 1.9.1's on the rows repeated by their weights (a row of weight w
//! counts as w copies of it; weight 0 leaves it out, so only classes that occur count), which is
//! what `tests/reference/weighted_metrics.py` checks. A metric that is
//! undefined on the weighted rows (no positive row for ROC AUC, no spread of the target for R²)
//! is NaN, which never wins a resample and is never an out-of-bag score.
//!
//! Cost: one pass over the rows per configuration and call; ROC AUC walks an order of the rows
//! by score that is sorted once per configuration when the metric is built.

use super::error::{Result, StatsError};
use super::metrics::F1Average;

/// A metric computed from every row of one configuration, each counted `weights[i]` times.
pub trait WeightedMetric: Sync {
    fn configurations(&self) -> usize;
    fn rows(&self) -> usize;
    fn higher_is_better(&self) -> bool;
    /// The metric of configuration `configuration` on the rows weighted by `weights`
    /// (`weights.len()` = rows); NaN when it is undefined there.
    fn score(&self, configuration: usize, weights: &[u32]) -> f64;
}

fn check_layout(name: &'static str, values: usize, rows: usize) -> Result<usize> {
    if rows == 0 || !values.is_multiple_of(rows) || values == 0 {
        return Err(StatsError::LengthMismatch {
            name,
            expected: rows.max(1),
            got: values,
        });
    }
    Ok(values / rows)
}

/// Which class metric a [`ClassMetric`] computes.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ClassKind {
    /// Mean recall over the classes that occur among the weighted rows' true classes
    /// (`balanced_accuracy_score`).
    BalancedAccuracy,
    /// `f1_score` with the given averaging.
    F1(F1Average),
}

/// Balanced accuracy or F1 from predicted and true classes.
#[derive(Debug, Clone)]
pub struct ClassMetric<'a> {
    truth: &'a [u32],
    /// Configuration by configuration, `truth.len()` each.
    predicted: &'a [u32],
    classes: usize,
    kind: ClassKind,
}

impl<'a> ClassMetric<'a> {
    /// Errors: a length that is not a whole number of configurations; a class index ≥ `classes`.
    pub fn new(
        truth: &'a [u32],
        predicted: &'a [u32],
        classes: usize,
        kind: ClassKind,
    ) -> Result<Self> {
        check_layout("predicted classes", predicted.len(), truth.len())?;
        if let ClassKind::F1(F1Average::Binary { positive }) = kind
            && positive >= classes
        {
            return Err(StatsError::CountOutOfRange {
                name: "positive class",
                value: positive as u64,
                expected: "below the number of classes",
            });
        }
        if let Some(&c) = truth
            .iter()
            .chain(predicted)
            .find(|&&c| c as usize >= classes)
        {
            return Err(StatsError::CountOutOfRange {
                name: "class index",
                value: u64::from(c),
                expected: "below the number of classes",
            });
        }
        Ok(Self {
            truth,
            predicted,
            classes,
            kind,
        })
    }
}

impl WeightedMetric for ClassMetric<'_> {
    fn configurations(&self) -> usize {
        self.predicted.len() / self.truth.len()
    }
    fn rows(&self) -> usize {
        self.truth.len()
    }
    fn higher_is_better(&self) -> bool {
        true
    }
    fn score(&self, configuration: usize, weights: &[u32]) -> f64 {
        let rows = self.truth.len();
        let predicted = &self.predicted[configuration * rows..(configuration + 1) * rows];
        // Per class: weighted true positives, actual count, predicted count.
        let k = self.classes;
        let mut counts = vec![0u64; 3 * k];
        for ((&t, &p), &w) in self.truth.iter().zip(predicted).zip(weights) {
            if w == 0 {
                continue;
            }
            let w = u64::from(w);
            let (t, p) = (t as usize, p as usize);
            counts[k + t] += w;
            counts[2 * k + p] += w;
            if t == p {
                counts[t] += w;
            }
        }
        let (hits, actual, predicted) = (&counts[..k], &counts[k..2 * k], &counts[2 * k..]);
        let f1 = |c: usize| {
            let denominator = actual[c] + predicted[c];
            // sklearn's zero_division default gives 0 where precision and recall are both 0/0.
            if denominator == 0 {
                0.0
            } else {
                2.0 * hits[c] as f64 / denominator as f64
            }
        };
        match self.kind {
            ClassKind::BalancedAccuracy => {
                let (sum, present) = (0..k)
                    .filter(|&c| actual[c] > 0)
                    .fold((0.0, 0u32), |(s, n), c| {
                        (s + hits[c] as f64 / actual[c] as f64, n + 1)
                    });
                if present == 0 {
                    f64::NAN
                } else {
                    sum / f64::from(present)
                }
            }
            ClassKind::F1(F1Average::Binary { positive }) => f1(positive),
            ClassKind::F1(F1Average::Macro) => {
                let labels: Vec<usize> = (0..k).filter(|&c| actual[c] + predicted[c] > 0).collect();
                if labels.is_empty() {
                    f64::NAN
                } else {
                    labels.iter().map(|&c| f1(c)).sum::<f64>() / labels.len() as f64
                }
            }
            ClassKind::F1(F1Average::Micro) => {
                let total: u64 = actual.iter().sum();
                if total == 0 {
                    f64::NAN
                } else {
                    hits.iter().sum::<u64>() as f64 / total as f64
                }
            }
        }
    }
}

/// ROC AUC from each row's score of the positive class (`roc_auc_score` with `sample_weight`:
/// the weighted Mann–Whitney statistic, a tie between a positive and a negative counting half).
#[derive(Debug, Clone)]
pub struct RankMetric<'a> {
    /// Whether each row's true class is the positive one.
    positive: Vec<bool>,
    /// Configuration by configuration, `positive.len()` each.
    scores: &'a [f64],
    /// Per configuration, the rows in ascending order of score.
    order: Vec<Vec<u32>>,
}

impl<'a> RankMetric<'a> {
    /// Errors: a length that is not a whole number of configurations; a non-finite score; more
    /// than 2³² rows.
    pub fn new(positive: Vec<bool>, scores: &'a [f64]) -> Result<Self> {
        let configurations = check_layout("scores", scores.len(), positive.len())?;
        if let Some(&value) = scores.iter().find(|s| !s.is_finite()) {
            return Err(StatsError::NotFinite {
                name: "score",
                value,
            });
        }
        let rows = positive.len();
        if u32::try_from(rows).is_err() {
            return Err(StatsError::CountOutOfRange {
                name: "rows",
                value: rows as u64,
                expected: "at most 4,294,967,295",
            });
        }
        let order = (0..configurations)
            .map(|c| {
                let s = &scores[c * rows..(c + 1) * rows];
                let mut rows: Vec<u32> = (0..rows as u32).collect();
                rows.sort_by(|&a, &b| s[a as usize].total_cmp(&s[b as usize]));
                rows
            })
            .collect();
        Ok(Self {
            positive,
            scores,
            order,
        })
    }
}

impl WeightedMetric for RankMetric<'_> {
    fn configurations(&self) -> usize {
        self.order.len()
    }
    fn rows(&self) -> usize {
        self.positive.len()
    }
    fn higher_is_better(&self) -> bool {
        true
    }
    fn score(&self, configuration: usize, weights: &[u32]) -> f64 {
        let rows = self.positive.len();
        let scores = &self.scores[configuration * rows..(configuration + 1) * rows];
        let order = &self.order[configuration];
        // Walk groups of equal scores upward: each positive is above every negative seen before
        // its group and ties half of the negatives in it.
        let (mut negatives_below, mut pairs_won, mut positives) = (0u64, 0.0f64, 0u64);
        let mut i = 0;
        while i < order.len() {
            let value = scores[order[i] as usize];
            let (mut group_pos, mut group_neg) = (0u64, 0u64);
            while i < order.len() && scores[order[i] as usize] == value {
                let row = order[i] as usize;
                let w = u64::from(weights[row]);
                if self.positive[row] {
                    group_pos += w;
                } else {
                    group_neg += w;
                }
                i += 1;
            }
            pairs_won +=
                group_pos as f64 * negatives_below as f64 + 0.5 * (group_pos * group_neg) as f64;
            negatives_below += group_neg;
            positives += group_pos;
        }
        if positives == 0 || negatives_below == 0 {
            return f64::NAN;
        }
        pairs_won / (positives as f64 * negatives_below as f64)
    }
}

/// Which regression metric an [`ErrorMetric`] computes.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ErrorKind {
    /// √(Σw(y − ŷ)² / Σw) (`root_mean_squared_error`).
    Rmse,
    /// 1 − Σw(y − ŷ)² / Σw(y − ȳ_w)² (`r2_score`; NaN when the target has no spread).
    R2,
}

/// RMSE or R² from each row's target and prediction.
#[derive(Debug, Clone)]
pub struct ErrorMetric<'a> {
    truth: &'a [f64],
    /// Configuration by configuration, `truth.len()` each.
    predicted: &'a [f64],
    kind: ErrorKind,
}

impl<'a> ErrorMetric<'a> {
    /// Errors: a length that is not a whole number of configurations; a non-finite value.
    pub fn new(truth: &'a [f64], predicted: &'a [f64], kind: ErrorKind) -> Result<Self> {
        check_layout("predictions", predicted.len(), truth.len())?;
        if let Some(&value) = truth.iter().chain(predicted).find(|v| !v.is_finite()) {
            return Err(StatsError::NotFinite {
                name: "target or prediction",
                value,
            });
        }
        Ok(Self {
            truth,
            predicted,
            kind,
        })
    }
}

impl WeightedMetric for ErrorMetric<'_> {
    fn configurations(&self) -> usize {
        self.predicted.len() / self.truth.len()
    }
    fn rows(&self) -> usize {
        self.truth.len()
    }
    fn higher_is_better(&self) -> bool {
        self.kind == ErrorKind::R2
    }
    fn score(&self, configuration: usize, weights: &[u32]) -> f64 {
        let rows = self.truth.len();
        let predicted = &self.predicted[configuration * rows..(configuration + 1) * rows];
        let (mut total, mut squared, mut sum_y) = (0.0f64, 0.0f64, 0.0f64);
        for ((&y, &p), &w) in self.truth.iter().zip(predicted).zip(weights) {
            if w == 0 {
                continue;
            }
            let w = f64::from(w);
            total += w;
            squared += w * (y - p) * (y - p);
            sum_y += w * y;
        }
        if total == 0.0 {
            return f64::NAN;
        }
        match self.kind {
            ErrorKind::Rmse => (squared / total).sqrt(),
            ErrorKind::R2 => {
                let mean = sum_y / total;
                let spread: f64 = self
                    .truth
                    .iter()
                    .zip(weights)
                    .filter(|&(_, &w)| w > 0)
                    .map(|(&y, &w)| f64::from(w) * (y - mean) * (y - mean))
                    .sum();
                if spread == 0.0 {
                    f64::NAN
                } else {
                    1.0 - squared / spread
                }
            }
        }
    }
}
