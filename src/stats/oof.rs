//! Every configuration's out-of-fold results on the training rows: the table that BBC-CV
//! ([`super::bbc_cv`]) and the effective number of configurations
//! ([`super::effective_configurations`]) read.
//!
//! Owns: [`OofTable`], [`OofTruth`] and the conversion to bit-packed correctness.
//!
//! Pure data. The file reader (`evidence::oof`) fills it and checks what a file can get wrong
//! (every configuration covers the same rows once each, one fold per row, known classes); this
//! module relies on those checks and states them as invariants. Rows are in one canonical order
//! (the reader's, the same for every configuration), so row `i` of one configuration is row `i`
//! of every other.

use super::bbc::CorrectnessMatrix;

/// The true target of every row.
#[derive(Debug, Clone, PartialEq)]
pub enum OofTruth {
    /// Classification: class names (sorted, as the reader found them) and each row's class index.
    Classes {
        names: Vec<String>,
        labels: Vec<u32>,
    },
    /// Regression: each row's true value.
    Values(Vec<f64>),
}

/// Out-of-fold results of `configurations.len()` configurations on `rows` rows. Per-configuration
/// columns are laid out configuration by configuration: entry `c * rows + i` is configuration `c`
/// on row `i`.
#[derive(Debug, Clone, PartialEq)]
pub struct OofTable {
    /// Configuration ids in the order the file first names them.
    pub configurations: Vec<String>,
    /// Rows every configuration was validated on.
    pub rows: usize,
    /// The fold each row was validated in (0-based, as the file numbers them less its smallest).
    pub folds: Vec<u32>,
    /// Each row's true target.
    pub truth: OofTruth,
    /// Predicted class index per configuration and row (classification).
    pub predicted: Option<Vec<u32>>,
    /// Score per configuration and row: the positive class's probability or decision value
    /// (binary classification) or the predicted value (regression).
    pub scores: Option<Vec<f64>>,
}

impl OofTable {
    /// Bit-packed correctness (predicted class = true class), when the table has both.
    pub fn correctness(&self) -> Option<CorrectnessMatrix> {
        let (OofTruth::Classes { labels, .. }, Some(predicted)) = (&self.truth, &self.predicted)
        else {
            return None;
        };
        let mut matrix = CorrectnessMatrix::new(self.configurations.len(), self.rows);
        for (c, row) in predicted.chunks_exact(self.rows.max(1)).enumerate() {
            for (i, (p, l)) in row.iter().zip(labels).enumerate() {
                if p == l {
                    matrix.set(c, i);
                }
            }
        }
        Some(matrix)
    }

    /// Index of the configuration with this id.
    pub fn position(&self, id: &str) -> Option<usize> {
        self.configurations.iter().position(|c| c == id)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn correctness_marks_rows_whose_prediction_is_the_label() {
        // Two configurations on three rows; labels [0, 1, 1].
        let table = OofTable {
            configurations: vec!["a".into(), "b".into()],
            rows: 3,
            folds: vec![0, 1, 2],
            truth: OofTruth::Classes {
                names: vec!["neg".into(), "pos".into()],
                labels: vec![0, 1, 1],
            },
            predicted: Some(vec![0, 1, 0, 1, 1, 1]),
            scores: None,
        };
        let m = table.correctness().expect("classes and predictions");
        assert_eq!(
            (0..3).map(|i| m.get(0, i)).collect::<Vec<_>>(),
            [true, true, false]
        );
        assert_eq!(
            (0..3).map(|i| m.get(1, i)).collect::<Vec<_>>(),
            [false, true, true]
        );
        assert_eq!(table.position("b"), Some(1));
    }
}
