//! Tibshirani & Tibshirani (2009) estimate of the optimism of the best cross-validated score.
//!
//! Owns: [`SelectionBias`] (a streaming accumulator, one trial at a time, memory O(folds)) and
//! [`BiasEstimate`]. Scores are "higher is better" (accuracy, AUC); for an error rate pass its
//! negation or 1 − error.
//!
//! Method (Tibshirani, R. J. & Tibshirani, R. (2009), Ann. Appl. Stat. 3(2):822–829, stated for
//! scores): with s_k(θ) the score of trial θ on fold k, θ̂ = argmax_θ mean_k s_k(θ) (the first
//! trial wins ties), the bias estimate is B̂ = (1/K) Σ_k [max_θ s_k(θ) − s_k(θ̂)] ≥ 0 and the
//! corrected score is mean_k s_k(θ̂) − B̂. When the search's own choice θ̂ is known (a manifest
//! names it, or it is the trial whose folds are the reported ones), [`SelectionBias::finish_for`]
//! takes it instead of the argmax: the bias must describe the configuration that was reported.
//!
//! Must not: keep every trial's scores (memory must not grow with the number of trials).

use serde::Serialize;

use super::error::{Result, StatsError};

/// Streaming accumulator for the Tibshirani & Tibshirani (2009) bias estimate.
#[derive(Debug, Clone, PartialEq)]
pub struct SelectionBias {
    folds: usize,
    /// max over trials seen so far of the score on each fold.
    fold_max: Vec<f64>,
    /// Per-fold scores of the trial with the best mean so far.
    best_scores: Vec<f64>,
    best_mean: f64,
    best_index: usize,
    trials: u64,
}

/// The selected trial, its naive score, the estimated bias and the corrected score.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct BiasEstimate {
    /// 0-based index (in push order) of the trial with the best mean fold score.
    pub selected_index: usize,
    /// Mean fold score of that trial: the naive (optimistic) best CV score.
    pub naive_best: f64,
    /// B̂ = (1/K) Σ_k [max_θ s_k(θ) − s_k(θ̂)], never negative.
    pub bias: f64,
    /// naive_best − bias.
    pub corrected: f64,
    /// Number of trials pushed.
    pub trials: u64,
}

impl SelectionBias {
    /// An empty accumulator for trials scored on `folds` folds. A `folds` of 0 is reported as an
    /// error by [`push`](Self::push) and [`finish`](Self::finish).
    pub fn new(folds: usize) -> Self {
        Self {
            folds,
            fold_max: Vec::with_capacity(folds),
            best_scores: Vec::with_capacity(folds),
            best_mean: f64::NEG_INFINITY,
            best_index: 0,
            trials: 0,
        }
    }

    fn check_folds(&self) -> Result<()> {
        if self.folds == 0 {
            return Err(StatsError::TooFewValues { needed: 1, got: 0 });
        }
        Ok(())
    }

    /// Add one trial's per-fold scores (in fold order). On error nothing is changed.
    /// Errors: `folds` is 0; wrong number of scores; a score is NaN or infinite.
    pub fn push(&mut self, fold_scores: &[f64]) -> Result<()> {
        self.check_folds()?;
        if fold_scores.len() != self.folds {
            return Err(StatsError::LengthMismatch {
                name: "fold_scores",
                expected: self.folds,
                got: fold_scores.len(),
            });
        }
        if let Some(&value) = fold_scores.iter().find(|v| !v.is_finite()) {
            return Err(StatsError::NotFinite {
                name: "fold_scores",
                value,
            });
        }
        let mean = fold_scores.iter().sum::<f64>() / self.folds as f64;
        if self.trials == 0 {
            self.fold_max = fold_scores.to_vec();
        } else {
            // Strictly greater: the first of equal maxima stays (0.0 and -0.0 are equal), so
            // that trials summed in runs and joined ([`absorb`](Self::absorb)) give the same
            // bits as trials pushed one by one.
            for (max, &s) in self.fold_max.iter_mut().zip(fold_scores) {
                if s > *max {
                    *max = s;
                }
            }
        }
        // Strictly greater: the first trial wins ties.
        if self.trials == 0 || mean > self.best_mean {
            self.best_mean = mean;
            self.best_scores = fold_scores.to_vec();
            self.best_index = usize::try_from(self.trials).unwrap_or(usize::MAX);
        }
        self.trials += 1;
        Ok(())
    }

    /// Adds the trials of `later`, pushed after this accumulator's own: the state is the one
    /// pushing them here one by one would give, so runs of trials can be summed apart (on other
    /// threads) and joined in order. On error nothing is changed.
    /// Errors: `folds` is 0; `later` counts another number of folds.
    pub fn absorb(&mut self, later: &SelectionBias) -> Result<()> {
        self.check_folds()?;
        if later.folds != self.folds {
            return Err(StatsError::LengthMismatch {
                name: "fold_scores",
                expected: self.folds,
                got: later.folds,
            });
        }
        if later.trials == 0 {
            return Ok(());
        }
        if self.trials == 0 {
            self.clone_from(later);
            return Ok(());
        }
        for (max, &s) in self.fold_max.iter_mut().zip(&later.fold_max) {
            if s > *max {
                *max = s;
            }
        }
        if later.best_mean > self.best_mean {
            self.best_mean = later.best_mean;
            self.best_scores.clone_from(&later.best_scores);
            let before = usize::try_from(self.trials).unwrap_or(usize::MAX);
            self.best_index = before.saturating_add(later.best_index);
        }
        self.trials += later.trials;
        Ok(())
    }

    /// The estimate over all trials pushed so far (the accumulator can keep going afterwards).
    /// Errors: `folds` is 0; no trial was pushed.
    pub fn finish(&self) -> Result<BiasEstimate> {
        self.check_folds()?;
        if self.trials == 0 {
            return Err(StatsError::TooFewValues { needed: 1, got: 0 });
        }
        let gap: f64 = self
            .fold_max
            .iter()
            .zip(&self.best_scores)
            .map(|(max, s)| max - s)
            .sum();
        let bias = gap / self.folds as f64;
        Ok(BiasEstimate {
            selected_index: self.best_index,
            naive_best: self.best_mean,
            bias,
            corrected: self.best_mean - bias,
            trials: self.trials,
        })
    }
}

impl SelectionBias {
    /// The estimate for a selected trial given by its push index and fold scores (which must be
    /// the scores pushed at that index), instead of the best mean.
    /// Errors: `folds` is 0; no trial was pushed; the index or the number of scores is wrong.
    pub fn finish_for(&self, index: usize, scores: &[f64]) -> Result<BiasEstimate> {
        self.check_folds()?;
        if self.trials == 0 {
            return Err(StatsError::TooFewValues { needed: 1, got: 0 });
        }
        if scores.len() != self.folds || index as u64 >= self.trials {
            return Err(StatsError::LengthMismatch {
                name: "selected fold_scores",
                expected: self.folds,
                got: scores.len(),
            });
        }
        let mean = scores.iter().sum::<f64>() / self.folds as f64;
        // Every pushed trial, the selected one included, is at most its fold's maximum, so each
        // term is ≥ 0; `max(0.0)` only absorbs the rounding of equal values.
        let gap: f64 = self
            .fold_max
            .iter()
            .zip(scores)
            .map(|(max, s)| (max - s).max(0.0))
            .sum();
        let bias = gap / self.folds as f64;
        Ok(BiasEstimate {
            selected_index: index,
            naive_best: mean,
            bias,
            corrected: mean - bias,
            trials: self.trials,
        })
    }
}

#[cfg(test)]
#[allow(clippy::unwrap_used)]
mod tests {
    use super::*;

    #[test]
    fn the_named_trial_carries_the_bias_of_the_others() {
        // Selected folds at 0.70 beside a trial at 0.90 on every fold: per-fold maxima 0.90, so
        // B̂ = mean(0.90 − 0.70) = 0.20 and the corrected score 0.50 (hand arithmetic,
        // Tibshirani & Tibshirani 2009 with θ̂ the reported configuration).
        let mut acc = SelectionBias::new(2);
        acc.push(&[0.9, 0.9]).unwrap();
        acc.push(&[0.7, 0.7]).unwrap();
        let e = acc.finish_for(1, &[0.7, 0.7]).unwrap();
        assert!((e.bias - 0.2).abs() < 1e-12);
        assert!((e.corrected - 0.5).abs() < 1e-12);
        assert_eq!(e.selected_index, 1);
        // The argmax would describe the other trial, with no bias at all.
        assert_eq!(acc.finish().unwrap().bias, 0.0);
        assert!(acc.finish_for(2, &[0.7, 0.7]).is_err());
        assert!(acc.finish_for(0, &[0.7]).is_err());
    }

    #[test]
    fn single_trial_has_no_bias() {
        let mut acc = SelectionBias::new(3);
        acc.push(&[0.7, 0.8, 0.9]).unwrap();
        let e = acc.finish().unwrap();
        assert_eq!(e.bias, 0.0);
        assert_eq!(e.selected_index, 0);
        assert_eq!(e.trials, 1);
        assert!((e.naive_best - 0.8).abs() < 1e-15);
    }

    #[test]
    fn first_trial_wins_ties() {
        let mut acc = SelectionBias::new(2);
        acc.push(&[0.5, 0.7]).unwrap();
        acc.push(&[0.7, 0.5]).unwrap();
        let e = acc.finish().unwrap();
        assert_eq!(e.selected_index, 0);
        // Per-fold maxima 0.7, 0.7; selected 0.5, 0.7; B̂ = (0.2 + 0)/2 = 0.1 (hand arithmetic).
        assert!((e.bias - 0.1).abs() < 1e-15);
    }

    /// A score from a small set with ties, both zeros among them, so that which of equal
    /// maxima is kept shows in the bits.
    fn tied_score() -> impl proptest::strategy::Strategy<Value = f64> {
        proptest::sample::select(vec![0.0, -0.0, 0.25, 0.5, -0.5, 1.0])
    }

    proptest::proptest! {
        /// Trials cut into runs, each run summed alone and the runs absorbed in order, give the
        /// state pushing every trial in order gives, to the bit.
        #[test]
        fn runs_absorbed_in_order_are_trials_pushed_in_order(
            trials in proptest::collection::vec(proptest::collection::vec(tied_score(), 3), 1..40),
            cuts in proptest::collection::vec(0usize..40, 0..5),
        ) {
            let mut one = SelectionBias::new(3);
            for t in &trials {
                one.push(t).unwrap();
            }
            let mut cuts: Vec<usize> = cuts.into_iter().map(|c| c % (trials.len() + 1)).collect();
            cuts.extend([0, trials.len()]);
            cuts.sort_unstable();
            let mut joined = SelectionBias::new(3);
            for run in cuts.windows(2) {
                let mut part = SelectionBias::new(3);
                for t in &trials[run[0]..run[1]] {
                    part.push(t).unwrap();
                }
                joined.absorb(&part).unwrap();
            }
            proptest::prop_assert_eq!(format!("{joined:?}"), format!("{one:?}"));
            proptest::prop_assert_eq!(
                format!("{:?}", joined.finish_for(0, &trials[0])),
                format!("{:?}", one.finish_for(0, &trials[0]))
            );
        }
    }

    #[test]
    fn absorbing_another_number_of_folds_changes_nothing() {
        let mut acc = SelectionBias::new(2);
        acc.push(&[0.5, 0.6]).unwrap();
        let before = acc.clone();
        let mut other = SelectionBias::new(3);
        other.push(&[0.9, 0.9, 0.9]).unwrap();
        assert!(acc.absorb(&other).is_err());
        assert_eq!(acc, before);
    }

    #[test]
    fn errors_leave_state_unchanged() {
        let mut acc = SelectionBias::new(2);
        assert!(acc.finish().is_err());
        acc.push(&[0.5, 0.6]).unwrap();
        let before = acc.clone();
        assert!(acc.push(&[0.5]).is_err());
        assert!(acc.push(&[0.5, f64::NAN]).is_err());
        assert_eq!(acc, before);
        let mut none = SelectionBias::new(0);
        assert!(none.push(&[]).is_err());
        assert!(none.finish().is_err());
    }
}
