//! Metrics recomputed from per-example predictions, streamed one row at a time.
//!
//! Owns: [`ConfusionMatrix`] (accuracy, balanced accuracy, F1), [`F1Average`],
//! [`RegressionErrors`] (RMSE, MAE, R², t intervals for MAE and MSE) and [`LogLoss`] (value and a
//! t interval). Each follows scikit-learn's definition of the metric of the same name, including
//! its edge-case conventions, which are stated on each method.
//!
//! Memory is bounded by sufficient statistics: k² counts for a confusion matrix, a handful of
//! running moments for the others; no accumulator keeps rows.
//!
//! Must not: panic on any input (a bad row is an `Err` and leaves the accumulator unchanged),
//! read files, or decide what a value means for a claim (that is the rules' job).

use super::error::{Result, StatsError, check_unit_open};
use super::moments::Moments;
use super::proportion::Interval;

/// Largest class count a [`ConfusionMatrix`] accepts: 4096² cells are 128 MiB of counts, already
/// far beyond any classification report a gate reads; the cap keeps a corrupt manifest from
/// requesting an allocation that aborts the process.
pub const MAX_CLASSES: usize = 4096;

/// Error for an accumulator that has seen no rows.
fn empty() -> StatsError {
    StatsError::TooFewValues { needed: 1, got: 0 }
}

/// How [`ConfusionMatrix::f1`] combines per-class F1 scores.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum F1Average {
    /// F1 of one class against the rest.
    Binary { positive: usize },
    /// Unweighted mean of per-class F1 over the classes that occur as actual or predicted.
    Macro,
    /// F1 of the pooled counts; for single-label data this equals accuracy.
    Micro,
}

/// Streaming confusion matrix for classes indexed 0..k; row = actual class, column = predicted.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct ConfusionMatrix {
    classes: usize,
    counts: Vec<u64>,
    total: u64,
}

impl ConfusionMatrix {
    /// An empty k × k matrix. Errors: `classes` = 0 or above [`MAX_CLASSES`].
    pub fn new(classes: usize) -> Result<Self> {
        check_classes(classes)?;
        Ok(Self {
            classes,
            counts: vec![0; classes * classes],
            total: 0,
        })
    }

    /// A matrix from row-major counts (row = actual). Errors: `classes` as in [`Self::new`];
    /// `counts.len()` ≠ classes²; the total overflows u64.
    pub fn from_counts(classes: usize, counts: Vec<u64>) -> Result<Self> {
        check_classes(classes)?;
        if counts.len() != classes * classes {
            return Err(StatsError::LengthMismatch {
                name: "counts",
                expected: classes * classes,
                got: counts.len(),
            });
        }
        let total = counts
            .iter()
            .try_fold(0u64, |acc, &c| acc.checked_add(c))
            .ok_or(StatsError::CountOutOfRange {
                name: "counts",
                value: u64::MAX,
                expected: "a total that fits in 64 bits",
            })?;
        Ok(Self {
            classes,
            counts,
            total,
        })
    }

    /// Counts one row. Errors: either index ≥ `classes` (the matrix is left unchanged).
    pub fn push(&mut self, actual: usize, predicted: usize) -> Result<()> {
        for (name, index) in [("actual", actual), ("predicted", predicted)] {
            if index >= self.classes {
                return Err(StatsError::CountOutOfRange {
                    name,
                    value: index as u64,
                    expected: "a class index below the number of classes",
                });
            }
        }
        // The total bounds every cell, so checking it is enough.
        self.total = self
            .total
            .checked_add(1)
            .ok_or(StatsError::CountOutOfRange {
                name: "rows",
                value: u64::MAX,
                expected: "fewer than 2^64 rows",
            })?;
        self.counts[actual * self.classes + predicted] += 1;
        Ok(())
    }

    /// Row-major k × k counts, row = actual class.
    pub fn counts(&self) -> &[u64] {
        &self.counts
    }

    /// Number of rows counted.
    pub fn total(&self) -> u64 {
        self.total
    }

    /// Number of classes k.
    pub fn classes(&self) -> usize {
        self.classes
    }

    /// Replaces the counts with `counts` of the same shape (bootstrap reuse, no allocation).
    pub(crate) fn set_counts(&mut self, counts: &[u64]) {
        self.counts.copy_from_slice(counts);
        self.total = counts.iter().sum();
    }

    fn cell(&self, actual: usize, predicted: usize) -> u64 {
        self.counts[actual * self.classes + predicted]
    }

    fn row_sum(&self, class: usize) -> u64 {
        self.counts[class * self.classes..(class + 1) * self.classes]
            .iter()
            .sum()
    }

    fn column_sum(&self, class: usize) -> u64 {
        (0..self.classes).map(|row| self.cell(row, class)).sum()
    }

    fn trace(&self) -> u64 {
        (0..self.classes).map(|c| self.cell(c, c)).sum()
    }

    /// One-vs-rest F1 of `class` = 2TP / (2TP + FP + FN), and whether the class occurs at all.
    fn class_f1(&self, class: usize) -> (f64, bool) {
        let tp = self.cell(class, class);
        let fp = self.column_sum(class) - tp;
        let fn_ = self.row_sum(class) - tp;
        // u128: 2·TP + FP + FN can reach 2·total, which may not fit in u64.
        let denominator = 2 * u128::from(tp) + u128::from(fp) + u128::from(fn_);
        if denominator == 0 {
            (0.0, false)
        } else {
            ((2 * u128::from(tp)) as f64 / denominator as f64, true)
        }
    }

    /// Fraction of rows on the diagonal, as `sklearn.metrics.accuracy_score`.
    /// Errors: no rows.
    pub fn accuracy(&self) -> Result<f64> {
        if self.total == 0 {
            return Err(empty());
        }
        Ok(self.trace() as f64 / self.total as f64)
    }

    /// Mean per-class recall over the classes that occur as an actual class, as
    /// `sklearn.metrics.balanced_accuracy_score` (adjusted = False; Brodersen et al. 2010,
    /// "The balanced accuracy and its posterior distribution", ICPR). A class that is only ever
    /// predicted has no recall and is left out, as sklearn does (it warns there).
    /// Errors: no rows.
    pub fn balanced_accuracy(&self) -> Result<f64> {
        let mut sum = 0.0;
        let mut present = 0u64;
        for class in 0..self.classes {
            let row = self.row_sum(class);
            if row > 0 {
                sum += self.cell(class, class) as f64 / row as f64;
                present += 1;
            }
        }
        if present == 0 {
            return Err(empty());
        }
        Ok(sum / present as f64)
    }

    /// F1 score with scikit-learn's conventions (`sklearn.metrics.f1_score`, zero_division = 0):
    /// per class F1 = 2TP / (2TP + FP + FN) (van Rijsbergen 1979, F with β = 1);
    /// - `Binary { positive }`: that class against the rest; 0 when it never occurs as actual or
    ///   predicted (sklearn's zero_division = 0). With k > 2 this is sklearn's per-class value
    ///   `f1_score(average=None)[positive]`.
    /// - `Macro`: the unweighted mean over classes that occur as actual or predicted (sklearn's
    ///   default label set is the union of both); a class only predicted contributes 0.
    /// - `Micro`: pooled counts, 2·trace / (2·trace + 2·(n − trace)) = accuracy.
    ///
    /// Errors: no rows; `positive` ≥ `classes`.
    pub fn f1(&self, average: F1Average) -> Result<f64> {
        if self.total == 0 {
            return Err(empty());
        }
        match average {
            F1Average::Binary { positive } => {
                if positive >= self.classes {
                    return Err(StatsError::CountOutOfRange {
                        name: "positive",
                        value: positive as u64,
                        expected: "a class index below the number of classes",
                    });
                }
                Ok(self.class_f1(positive).0)
            }
            F1Average::Macro => {
                let (sum, present) = (0..self.classes)
                    .map(|c| self.class_f1(c))
                    .filter(|(_, occurs)| *occurs)
                    .fold((0.0, 0u64), |(s, n), (f, _)| (s + f, n + 1));
                // total > 0 means some class occurs, so `present` ≥ 1.
                Ok(sum / present.max(1) as f64)
            }
            F1Average::Micro => self.accuracy(),
        }
    }
}

fn check_classes(classes: usize) -> Result<()> {
    if classes == 0 || classes > MAX_CLASSES {
        return Err(StatsError::CountOutOfRange {
            name: "classes",
            value: classes as u64,
            expected: "between 1 and 4096",
        });
    }
    Ok(())
}

/// Streaming regression errors: RMSE, MAE, R² and t intervals for the mean absolute and squared
/// error. Memory: three running moments (targets, |error|, error²), whatever the row count.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct RegressionErrors {
    targets: Moments,
    abs_errors: Moments,
    sq_errors: Moments,
}

impl RegressionErrors {
    /// An empty accumulator.
    pub fn new() -> Self {
        Self::default()
    }

    /// Adds one (target, prediction) row. Errors: either value NaN or infinite, or an error whose
    /// square overflows (the accumulator is left unchanged).
    pub fn push(&mut self, target: f64, prediction: f64) -> Result<()> {
        check_finite_named("target", target)?;
        check_finite_named("prediction", prediction)?;
        let error = target - prediction;
        check_finite_named("target - prediction", error * error)?;
        self.targets.push(target);
        self.abs_errors.push(error.abs());
        self.sq_errors.push(error * error);
        Ok(())
    }

    /// Rows seen.
    pub fn n(&self) -> u64 {
        self.targets.n()
    }

    /// √(mean squared error), as `sqrt(sklearn.metrics.mean_squared_error)` (sklearn's
    /// `root_mean_squared_error`). Errors: no rows.
    pub fn rmse(&self) -> Result<f64> {
        Ok(self.mse()?.sqrt())
    }

    /// Mean squared error, as `sklearn.metrics.mean_squared_error`. Errors: no rows.
    pub fn mse(&self) -> Result<f64> {
        if self.n() == 0 {
            return Err(empty());
        }
        Ok(self.sq_errors.mean())
    }

    /// Mean absolute error, as `sklearn.metrics.mean_absolute_error`. Errors: no rows.
    pub fn mae(&self) -> Result<f64> {
        if self.n() == 0 {
            return Err(empty());
        }
        Ok(self.abs_errors.mean())
    }

    /// Coefficient of determination R² = 1 − SS_res / SS_tot with SS_tot = Σ(y − ȳ)², as
    /// `sklearn.metrics.r2_score` with its default force_finite = True: when SS_tot = 0 (constant
    /// targets) the result is 1 if SS_res = 0 and 0 otherwise. Errors: fewer than two rows
    /// (sklearn returns NaN with a warning there).
    pub fn r2(&self) -> Result<f64> {
        let n = self.n();
        if n < 2 {
            return Err(StatsError::TooFewValues {
                needed: 2,
                got: usize::try_from(n).unwrap_or(usize::MAX),
            });
        }
        let ss_res = self.sq_errors.mean() * n as f64;
        let ss_tot = self.targets.sum_sq_dev();
        Ok(if ss_tot == 0.0 {
            if ss_res == 0.0 { 1.0 } else { 0.0 }
        } else {
            1.0 - ss_res / ss_tot
        })
    }

    /// Student-t interval for the mean absolute error, treating rows' |errors| as independent
    /// draws: MAE ± t₁₋α/₂,ₙ₋₁ · s/√n (Student 1908; the CLT makes it valid for large n whatever
    /// the error distribution). Errors: fewer than two rows; confidence not in (0, 1).
    pub fn mean_abs_error_interval(&self, confidence: f64) -> Result<Interval> {
        Ok(self.abs_errors.t_estimate(confidence)?.interval)
    }

    /// Student-t interval for the MSE from the rows' squared errors, as
    /// [`Self::mean_abs_error_interval`]. For an RMSE interval take square roots of the bounds
    /// (the square root is monotone; a negative lower bound means 0).
    /// Errors: fewer than two rows; confidence not in (0, 1).
    pub fn mse_interval(&self, confidence: f64) -> Result<Interval> {
        Ok(self.sq_errors.t_estimate(confidence)?.interval)
    }
}

fn check_finite_named(name: &'static str, value: f64) -> Result<()> {
    if value.is_finite() {
        Ok(())
    } else {
        Err(StatsError::NotFinite { name, value })
    }
}

/// One row's log loss −ln p̂ of the probability given to its true class, clipped as
/// [`LogLoss`] documents (no range check: callers pass a probability they have checked).
pub fn log_loss_of(prob_of_true_class: f64) -> f64 {
    -prob_of_true_class
        .clamp(f64::EPSILON, 1.0 - f64::EPSILON)
        .ln()
}

/// Streaming log loss (cross-entropy) with scikit-learn's clipping: each probability is clipped
/// to [ε, 1 − ε] with ε = `f64::EPSILON` (2⁻⁵², `numpy.finfo(float64).eps`) before the log, as
/// `sklearn.metrics.log_loss` does in scikit-learn 1.9.1 (ε is the machine epsilon of the input's
/// dtype; there is no `eps` argument). So a confident wrong answer costs −ln ε ≈ 36.04, not
/// infinity. Rows are not renormalised (sklearn only warns when a row does not sum to 1).
/// Memory: one running moment.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct LogLoss {
    losses: Moments,
}

impl LogLoss {
    /// An empty accumulator.
    pub fn new() -> Self {
        Self::default()
    }

    /// Adds one row given the predicted probability of the row's true class (binary: p for a
    /// positive row, 1 − p for a negative one — see [`Self::push_binary`]; multiclass: the
    /// true class's entry of a probability vector that sums to 1, which sklearn would check).
    /// Errors: NaN, or outside [0, 1] (sklearn rejects those too).
    pub fn push(&mut self, prob_of_true_class: f64) -> Result<()> {
        if !(0.0..=1.0).contains(&prob_of_true_class) {
            return Err(StatsError::OutOfRange {
                name: "prob_of_true_class",
                value: prob_of_true_class,
                expected: "a probability in [0, 1]",
            });
        }
        self.losses.push(log_loss_of(prob_of_true_class));
        Ok(())
    }

    /// Adds one binary row from the predicted probability of the positive class, forming
    /// 1 − p for a negative row *before* clipping, as sklearn does with a 1-D `y_proba`.
    /// Errors: as [`Self::push`].
    pub fn push_binary(&mut self, prob_positive: f64, positive: bool) -> Result<()> {
        if !(0.0..=1.0).contains(&prob_positive) {
            return Err(StatsError::OutOfRange {
                name: "prob_positive",
                value: prob_positive,
                expected: "a probability in [0, 1]",
            });
        }
        self.push(if positive {
            prob_positive
        } else {
            1.0 - prob_positive
        })
    }

    /// Rows seen.
    pub fn n(&self) -> u64 {
        self.losses.n()
    }

    /// Mean per-row loss −(1/n) Σ ln p̂(true class). Errors: no rows.
    pub fn value(&self) -> Result<f64> {
        if self.n() == 0 {
            return Err(empty());
        }
        Ok(self.losses.mean())
    }

    /// Student-t interval on the per-row losses, mean ± t₁₋α/₂,ₙ₋₁ · s/√n (rows independent).
    /// Errors: fewer than two rows; confidence not in (0, 1).
    pub fn interval(&self, confidence: f64) -> Result<Interval> {
        check_unit_open("confidence", confidence)?;
        Ok(self.losses.t_estimate(confidence)?.interval)
    }
}

#[cfg(test)]
#[allow(clippy::unwrap_used)]
mod tests {
    use super::*;

    #[test]
    fn binary_counts_by_hand() {
        // TP = 40, FN = 10, FP = 5, TN = 45 (positive = 1): F1 = 80/95, accuracy 0.85,
        // balanced accuracy (45/50 + 40/50)/2 = 0.85 (hand arithmetic).
        let m = ConfusionMatrix::from_counts(2, vec![45, 5, 10, 40]).unwrap();
        assert_eq!(m.total(), 100);
        assert!((m.f1(F1Average::Binary { positive: 1 }).unwrap() - 80.0 / 95.0).abs() < 1e-15);
        assert!((m.accuracy().unwrap() - 0.85).abs() < 1e-15);
        assert!((m.balanced_accuracy().unwrap() - 0.85).abs() < 1e-15);
    }

    #[test]
    fn empty_and_bad_shapes_are_errors() {
        assert!(ConfusionMatrix::new(0).is_err());
        assert!(ConfusionMatrix::new(MAX_CLASSES + 1).is_err());
        let mut m = ConfusionMatrix::new(3).unwrap();
        assert!(m.accuracy().is_err());
        assert!(m.balanced_accuracy().is_err());
        assert!(m.f1(F1Average::Macro).is_err());
        assert!(m.push(3, 0).is_err());
        assert!(m.push(0, 3).is_err());
        assert_eq!(m.total(), 0);
        m.push(0, 0).unwrap();
        assert!(m.f1(F1Average::Binary { positive: 3 }).is_err());
        assert!(ConfusionMatrix::from_counts(2, vec![1, 2, 3]).is_err());
        assert!(ConfusionMatrix::from_counts(2, vec![u64::MAX, 1, 0, 0]).is_err());
    }

    #[test]
    fn regression_rejects_non_finite_rows() {
        let mut r = RegressionErrors::new();
        assert!(r.rmse().is_err());
        assert!(r.push(f64::NAN, 1.0).is_err());
        assert!(r.push(1.0, f64::INFINITY).is_err());
        assert!(r.push(1e300, -1e300).is_err());
        assert_eq!(r.n(), 0);
        r.push(1.0, 1.0).unwrap();
        assert!(r.r2().is_err());
        assert!(r.mse_interval(0.95).is_err());
    }

    #[test]
    fn log_loss_clips_like_sklearn() {
        // −ln(2⁻⁵²) = 52 ln 2 (common practice, no source: the clip value).
        let mut l = LogLoss::new();
        l.push(0.0).unwrap();
        assert!((l.value().unwrap() - 52.0 * std::f64::consts::LN_2).abs() < 1e-12);
        assert!(l.push(1.5).is_err());
        assert!(l.push(f64::NAN).is_err());
        assert!(l.push_binary(-0.1, true).is_err());
        assert!(LogLoss::new().value().is_err());
    }
}
