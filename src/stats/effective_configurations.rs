//! The effective number of independent configurations in a search, from the correlation of the
//! configurations' per-row out-of-fold results (correctness or losses).
//!
//! Owns: [`effective_configurations`], [`effective_configurations_of_correctness`] and
//! [`EffectiveConfigurations`].
//!
//! Method: the eigenvalues λ₁..λₖ of the k × k correlation matrix of the configurations (columns:
//! rows of the data) measure how many independent directions the k configurations span. Two
//! estimates of the effective number are returned:
//! - Li & Ji (2005), "Adjusting multiple testing in multilocus analyses using the eigenvalues of
//!   a correlation matrix", Heredity 95:221–227: M = Σ f(|λᵢ|), f(x) = I(x ≥ 1) + (x − ⌊x⌋).
//! - Galwey (2009), "A new measure of the effective number of tests, a practical tool for
//!   comparing families of non-independent significance tests", Genetic Epidemiology 33:559–568:
//!   M = (Σ √λᵢ)² / Σ λᵢ, with eigenvalues below zero (round-off) taken as zero.
//!
//! (Both formulas as recalled from the papers, from memory.) When k exceeds the row count n the
//! eigenvalues come from the n × n Gram matrix ZᵀZ/n of the standardised data instead, which has
//! the same non-zero eigenvalues as ZZᵀ/n; the rest are zero and add nothing to either sum.
//!
//! Duplicates and constants: configurations with identical per-row values count once (they are
//! removed before the eigen-decomposition; Li & Ji's f would otherwise turn an eigenvalue of 2 −
//! 10⁻¹⁵ from round-off into 2 instead of 1). Constant configurations (every row the same value)
//! have no correlation with anything; they are left out of the matrix and all of them together
//! count as one configuration, because a constant's score does not vary between resamples and so
//! cannot win by luck more than once.
//!
//! Must not: panic or iterate without bound (the eigen solver is capped at [`MAX_SWEEPS`]
//! iterations and the matrix size at [`MAX_EIGEN_DIMENSION`]).

use std::collections::HashSet;

use nalgebra::{DMatrix, SymmetricEigen};

use super::bbc::CorrectnessMatrix;
use super::error::{Result, StatsError};

/// Largest matrix handed to the eigen solver: a 2000 × 2000 symmetric eigen-decomposition is a few
/// seconds; beyond that ask for fewer configurations or rows.
pub const MAX_EIGEN_DIMENSION: usize = 2000;

/// Iteration cap of nalgebra's symmetric QR iteration (it converges in a few sweeps per
/// eigenvalue; the cap only turns a pathological input into an error instead of a hang).
const MAX_SWEEPS: usize = 100_000;

/// What [`effective_configurations`] returns.
#[derive(Debug, Clone, PartialEq)]
pub struct EffectiveConfigurations {
    /// Li & Ji (2005) effective number, plus one if any configuration is constant.
    pub li_ji: f64,
    /// Galwey (2009) effective number, plus one if any configuration is constant.
    pub galwey: f64,
    /// Configurations given.
    pub configurations: usize,
    /// Distinct non-constant configurations that entered the correlation matrix.
    pub distinct: usize,
    /// Constant configurations (counted as one together).
    pub constant: usize,
}

/// Effective number of configurations from `values`, laid out configuration by configuration with
/// `rows` values each (e.g. per-row correctness as 0/1, or per-row losses).
///
/// Errors: `rows` < 2 or a length that is not a multiple of it; no configuration; a non-finite
/// value; min(distinct configurations, rows) above [`MAX_EIGEN_DIMENSION`]; the eigen solver not
/// converging.
pub fn effective_configurations(values: &[f64], rows: usize) -> Result<EffectiveConfigurations> {
    if rows < 2 {
        return Err(StatsError::TooFewValues {
            needed: 2,
            got: rows,
        });
    }
    if values.is_empty() || !values.len().is_multiple_of(rows) {
        return Err(StatsError::LengthMismatch {
            name: "per-row values",
            expected: rows * (values.len() / rows).max(1),
            got: values.len(),
        });
    }
    if let Some(&value) = values.iter().find(|v| !v.is_finite()) {
        return Err(StatsError::NotFinite {
            name: "per-row value",
            value,
        });
    }
    let configurations = values.len() / rows;
    let columns: Vec<&[f64]> = values.chunks(rows).collect();

    // Keep the first of each group of identical, non-constant configurations.
    let mut constant = 0;
    let mut seen: HashSet<Vec<u64>> = HashSet::new();
    let mut kept: Vec<&[f64]> = Vec::new();
    for column in columns {
        if column.iter().all(|&v| v == column[0]) {
            constant += 1;
            continue;
        }
        // + 0.0 maps −0.0 to 0.0, so equal values have equal keys.
        let key: Vec<u64> = column.iter().map(|v| (v + 0.0).to_bits()).collect();
        if seen.insert(key) {
            kept.push(column);
        }
    }
    let distinct = kept.len();
    let constant_term = if constant > 0 { 1.0 } else { 0.0 };
    if distinct == 0 {
        return Ok(EffectiveConfigurations {
            li_ji: constant_term,
            galwey: constant_term,
            configurations,
            distinct,
            constant,
        });
    }
    let dimension = distinct.min(rows);
    if dimension > MAX_EIGEN_DIMENSION {
        return Err(StatsError::CountOutOfRange {
            name: "min(distinct configurations, rows)",
            value: dimension as u64,
            expected: "at most 2000",
        });
    }

    // Standardise each configuration: mean 0, population variance 1, so ZZᵀ/n has a unit diagonal.
    let n = rows as f64;
    let standardised: Vec<Vec<f64>> = kept
        .iter()
        .map(|column| {
            let mean = column.iter().sum::<f64>() / n;
            let sd = (column.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / n).sqrt();
            column.iter().map(|v| (v - mean) / sd).collect()
        })
        .collect();

    let matrix = if distinct <= rows {
        DMatrix::from_fn(distinct, distinct, |a, b| {
            dot(&standardised[a], &standardised[b]) / n
        })
    } else {
        DMatrix::from_fn(rows, rows, |i, j| {
            standardised.iter().map(|z| z[i] * z[j]).sum::<f64>() / n
        })
    };
    let eigen = SymmetricEigen::try_new(matrix, f64::EPSILON, MAX_SWEEPS).ok_or(
        StatsError::NoConvergence {
            what: "symmetric eigen-decomposition of the correlation matrix",
        },
    )?;
    // Round-off eigenvalues of a rank-deficient matrix (about 1e-15) would add their square roots
    // (3e-8 each) to Galwey's sum: below numpy.linalg.matrix_rank's tolerance, λ_max·dim·ε, they
    // are zero.
    let largest = eigen.eigenvalues.iter().copied().fold(0.0, f64::max);
    let tolerance = largest * dimension as f64 * f64::EPSILON;
    let eigenvalues: Vec<f64> = eigen
        .eigenvalues
        .iter()
        .map(|&l| if l.abs() <= tolerance { 0.0 } else { l })
        .collect();
    Ok(EffectiveConfigurations {
        li_ji: li_ji(&eigenvalues) + constant_term,
        galwey: galwey(&eigenvalues) + constant_term,
        configurations,
        distinct,
        constant,
    })
}

/// [`effective_configurations`] of per-row correctness (1 correct, 0 wrong).
pub fn effective_configurations_of_correctness(
    matrix: &CorrectnessMatrix,
) -> Result<EffectiveConfigurations> {
    let rows = matrix.rows();
    let mut values = Vec::with_capacity(matrix.configurations() * rows);
    for c in 0..matrix.configurations() {
        values.extend((0..rows).map(|i| if matrix.get(c, i) { 1.0 } else { 0.0 }));
    }
    effective_configurations(&values, rows)
}

fn dot(a: &[f64], b: &[f64]) -> f64 {
    a.iter().zip(b).map(|(x, y)| x * y).sum()
}

/// Li & Ji (2005): Σ f(|λ|), f(x) = I(x ≥ 1) + (x − ⌊x⌋).
fn li_ji(eigenvalues: &[f64]) -> f64 {
    eigenvalues
        .iter()
        .map(|l| {
            let x = l.abs();
            f64::from(u8::from(x >= 1.0)) + (x - x.floor())
        })
        .sum()
}

/// Galwey (2009): (Σ √λ)² / Σ λ over the eigenvalues clamped at zero.
fn galwey(eigenvalues: &[f64]) -> f64 {
    let clamped: Vec<f64> = eigenvalues.iter().map(|l| l.max(0.0)).collect();
    let total: f64 = clamped.iter().sum();
    let roots: f64 = clamped.iter().map(|l| l.sqrt()).sum();
    roots * roots / total
}

#[cfg(test)]
#[allow(clippy::unwrap_used)]
mod tests {
    use super::*;

    /// Rows 1..8 of the 8 × 8 Sylvester–Hadamard matrix: ±1 vectors with mean 0 that are mutually
    /// orthogonal, so their correlation matrix is the identity (all eigenvalues 1).
    fn hadamard_rows() -> Vec<f64> {
        (1..8usize)
            .flat_map(|r| {
                (0..8usize).map(move |c| {
                    if (r & c).count_ones() % 2 == 0 {
                        1.0
                    } else {
                        -1.0
                    }
                })
            })
            .collect()
    }

    #[test]
    fn uncorrelated_configurations_count_fully() {
        // Identity correlation: Li & Ji Σ f(1) = 7 and Galwey (Σ 1)² / Σ 1 = 7, from the formulas.
        let got = effective_configurations(&hadamard_rows(), 8).unwrap();
        assert!((got.li_ji - 7.0).abs() < 1e-9, "{got:?}");
        assert!((got.galwey - 7.0).abs() < 1e-9, "{got:?}");
        // Negated copies are not duplicates but have correlation −1: each pair has eigenvalues
        // 2 and 0, and f(2) + f(0) = 1, (√2 + 0)² / 2 = 1, so the count stays 7 (14 > 8 rows,
        // so this also takes the n × n Gram path).
        let mut values = hadamard_rows();
        values.extend(hadamard_rows().iter().map(|v| -v));
        let got = effective_configurations(&values, 8).unwrap();
        assert_eq!(got.distinct, 14);
        assert!((got.li_ji - 7.0).abs() < 1e-9, "{got:?}");
        assert!((got.galwey - 7.0).abs() < 1e-9, "{got:?}");
    }

    #[test]
    fn duplicates_count_once_and_constants_once_together() {
        let row: Vec<f64> = (0..10).map(|i| f64::from(i % 3)).collect();
        let mut values: Vec<f64> = row.iter().cycle().take(50).copied().collect();
        values.extend([1.0; 10]);
        values.extend([0.0; 10]);
        let got = effective_configurations(&values, 10).unwrap();
        assert_eq!((got.configurations, got.distinct, got.constant), (7, 1, 2));
        assert!((got.li_ji - 2.0).abs() < 1e-12 && (got.galwey - 2.0).abs() < 1e-12);
        let constants = effective_configurations(&[0.5; 30], 10).unwrap();
        assert_eq!(
            (constants.li_ji, constants.galwey, constants.distinct),
            (1.0, 1.0, 0)
        );
    }

    #[test]
    fn bad_input_is_refused() {
        assert!(effective_configurations(&[1.0, 2.0, 3.0], 2).is_err());
        assert!(effective_configurations(&[1.0], 1).is_err());
        assert!(effective_configurations(&[], 4).is_err());
        assert!(effective_configurations(&[1.0, f64::INFINITY], 2).is_err());
    }
}
