//! Options shared by several analyses: the confidence level and which way a
//! response is better. The service layers the user's settings and hands the
//! engine these typed values.

use serde::{Deserialize, Serialize};

/// Default confidence level for every interval.
pub const DEFAULT_CONFIDENCE: f64 = 0.95;

/// Which way the response is better.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case", tag = "kind", content = "value")]
pub enum Direction {
    /// Larger values are better.
    HigherIsBetter,
    /// Smaller values are better.
    LowerIsBetter,
    /// Values near this target are better.
    Target(f64),
}
