//! Errors of the probability engine.

use thiserror::Error;

/// What went wrong in a computation of the engine. Every variant says what is wrong and,
/// where it helps, how to fix it.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum ProbError {
    /// An input number is NaN or infinite where a finite number is required.
    #[error("{what} is not a finite number ({value}); give a finite value")]
    NonFinite { what: String, value: f64 },
    /// Sizes of vectors or matrices do not fit together.
    #[error("size mismatch in {what}: expected {expected}, found {found}")]
    DimensionMismatch {
        what: String,
        expected: usize,
        found: usize,
    },
    /// The covariance matrix is not symmetric.
    #[error("covariance is not symmetric at ({row}, {col}): {a} vs {b}")]
    NotSymmetric {
        row: usize,
        col: usize,
        a: f64,
        b: f64,
    },
    /// The covariance matrix is not positive semi-definite.
    #[error("covariance is not positive semi-definite: {detail}")]
    NotPositiveSemiDefinite { detail: String },
    /// A lower bound exceeds its upper bound.
    #[error("bounds of constraint {row} are inverted: lower {lower} > upper {upper}")]
    InvertedBounds { row: usize, lower: f64, upper: f64 },
    /// A problem is larger than the engine accepts.
    #[error("{what} is {found}, more than the limit of {limit}")]
    TooLarge {
        what: String,
        limit: usize,
        found: usize,
    },
    /// An argument is outside its allowed range.
    #[error("invalid argument: {0}")]
    InvalidArgument(String),
    /// The point budget ran out before the requested tolerance was met.
    #[error(
        "tolerance not met: error estimate {achieved:.3e} after {points} points, \
         requested {requested:.3e}; raise the point budget or loosen the tolerance"
    )]
    BudgetExhausted {
        achieved: f64,
        requested: f64,
        points: usize,
    },
}
