//! The error type of the `stats` module and the argument checks shared by its functions.
//!
//! Owns: [`StatsError`], the [`Result`] alias, and small `check_*` helpers that turn an invalid
//! argument into an `Err` naming the argument and its value. Every public function in `stats`
//! validates its arguments with these helpers *before* touching `statrs`, because `statrs` 0.19.1
//! panics (or loops forever) on NaN and out-of-range inputs instead of returning an error.
//!
//! Must not: format messages for end users beyond a plain `Display`, or depend on anything
//! outside the standard library.

use std::fmt;

/// Why a `stats` function refused its arguments (or could not produce a value).
#[derive(Debug, Clone, PartialEq)]
pub enum StatsError {
    /// A floating-point argument was NaN or infinite where a finite value is required.
    NotFinite { name: &'static str, value: f64 },
    /// A floating-point argument lies outside its allowed range (`expected` says which).
    OutOfRange {
        name: &'static str,
        value: f64,
        expected: &'static str,
    },
    /// An integer argument lies outside its allowed range (e.g. `trials` = 0).
    CountOutOfRange {
        name: &'static str,
        value: u64,
        expected: &'static str,
    },
    /// A count exceeds its total, e.g. `successes` > `trials`.
    CountExceedsTotal {
        count_name: &'static str,
        count: u64,
        total_name: &'static str,
        total: u64,
    },
    /// Too few values were given (e.g. a t interval from fewer than two values).
    TooFewValues { needed: usize, got: usize },
    /// Too few rows of one class (e.g. DeLong's paired variance with one positive row).
    TooFewInClass {
        class: &'static str,
        needed: usize,
        got: usize,
    },
    /// A slice had the wrong length (e.g. a trial with a different number of folds).
    LengthMismatch {
        name: &'static str,
        expected: usize,
        got: usize,
    },
    /// A score that should be `k / n` for some integer `k` is not, within the documented tolerance.
    NotAProportion { score: f64, rows: u64 },
    /// An iterative computation did not converge (a bug or an extreme argument, never a hang).
    NoConvergence { what: &'static str },
}

impl fmt::Display for StatsError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Self::NotFinite { name, value } => write!(f, "`{name}` must be finite, got {value}"),
            Self::OutOfRange {
                name,
                value,
                expected,
            } => write!(f, "`{name}` must be {expected}, got {value}"),
            Self::CountOutOfRange {
                name,
                value,
                expected,
            } => write!(f, "`{name}` must be {expected}, got {value}"),
            Self::CountExceedsTotal {
                count_name,
                count,
                total_name,
                total,
            } => write!(
                f,
                "`{count_name}` ({count}) must not exceed `{total_name}` ({total})"
            ),
            Self::TooFewValues { needed, got } => {
                write!(f, "need at least {needed} finite values, got {got}")
            }
            Self::TooFewInClass { class, needed, got } => {
                write!(f, "need at least {needed} {class} rows, got {got}")
            }
            Self::LengthMismatch {
                name,
                expected,
                got,
            } => write!(f, "`{name}` must have {expected} entries, got {got}"),
            Self::NotAProportion { score, rows } => write!(
                f,
                "score {score} is not k/{rows} for any integer k (tolerance 1e-6 or half a step)"
            ),
            Self::NoConvergence { what } => write!(f, "{what} did not converge"),
        }
    }
}

impl std::error::Error for StatsError {}

/// Result alias used by every fallible function in `stats`.
pub type Result<T> = std::result::Result<T, StatsError>;

/// `value` must be finite.
pub(crate) fn check_finite(name: &'static str, value: f64) -> Result<f64> {
    if value.is_finite() {
        Ok(value)
    } else {
        Err(StatsError::NotFinite { name, value })
    }
}

/// `value` must be finite and in the closed interval [0, 1].
pub(crate) fn check_unit_closed(name: &'static str, value: f64) -> Result<f64> {
    check_finite(name, value)?;
    if (0.0..=1.0).contains(&value) {
        Ok(value)
    } else {
        Err(StatsError::OutOfRange {
            name,
            value,
            expected: "in [0, 1]",
        })
    }
}

/// `value` must be finite and in the open interval (0, 1).
pub(crate) fn check_unit_open(name: &'static str, value: f64) -> Result<f64> {
    check_finite(name, value)?;
    if value > 0.0 && value < 1.0 {
        Ok(value)
    } else {
        Err(StatsError::OutOfRange {
            name,
            value,
            expected: "strictly between 0 and 1",
        })
    }
}

/// `value` must be finite and strictly positive.
pub(crate) fn check_positive(name: &'static str, value: f64) -> Result<f64> {
    check_finite(name, value)?;
    if value > 0.0 {
        Ok(value)
    } else {
        Err(StatsError::OutOfRange {
            name,
            value,
            expected: "greater than 0",
        })
    }
}

/// `value` must be at least 1.
pub(crate) fn check_nonzero(name: &'static str, value: u64) -> Result<u64> {
    if value >= 1 {
        Ok(value)
    } else {
        Err(StatsError::CountOutOfRange {
            name,
            value,
            expected: "at least 1",
        })
    }
}

/// `successes` must be at most `trials`, and `trials` at least 1.
pub(crate) fn check_counts(
    count_name: &'static str,
    count: u64,
    total_name: &'static str,
    total: u64,
) -> Result<()> {
    check_nonzero(total_name, total)?;
    if count > total {
        return Err(StatsError::CountExceedsTotal {
            count_name,
            count,
            total_name,
            total,
        });
    }
    Ok(())
}
