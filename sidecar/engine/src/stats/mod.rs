//! The statistics engine's numerical routines: distributions, exact
//! accumulation of sums, special distributions for multiple comparisons,
//! model checks and linear models.
//!
//! Nothing here does I/O or knows about workbooks or protocols; every routine
//! validates its input and returns a [`StatsError`] rather than panicking.

pub mod accumulate;
pub mod dist;
pub mod dunnett;
pub mod linear_model;
pub mod normal_tail;
pub mod normality;
pub mod ranks;
pub mod sort;
pub mod spread;
pub mod studentized_range;
pub mod two_level;
pub mod two_level_analysis;

/// A refused value for a message: in words when it is not a number or beyond the range
/// of the arithmetic, never as a symbol.
fn shown(value: f64) -> String {
    if value.is_nan() {
        "a figure that is not defined".into()
    } else if value.is_infinite() {
        "a figure beyond the range of the arithmetic".into()
    } else {
        format!("{value}")
    }
}

/// Why a statistical routine refused its input or could not finish.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum StatsError {
    /// A parameter was outside the range the routine accepts.
    #[error("{name} must be {rule}, got {}", shown(*.value))]
    InvalidParameter {
        /// The parameter's name.
        name: &'static str,
        /// The rule it broke.
        rule: &'static str,
        /// The value given.
        value: f64,
    },
    /// Too little data for the computation.
    #[error("{what}: need at least {needed}, got {got}")]
    TooFewValues {
        /// What was being computed.
        what: &'static str,
        /// How many values are needed.
        needed: usize,
        /// How many there were.
        got: usize,
    },
    /// A matrix that must be inverted is singular.
    #[error("{what} is singular")]
    Singular {
        /// What the matrix is.
        what: &'static str,
    },
    /// An iteration did not reach its tolerance.
    #[error("{what} did not converge after {iterations} iterations")]
    NoConvergence {
        /// What was being computed.
        what: &'static str,
        /// Iterations spent.
        iterations: usize,
    },
}
