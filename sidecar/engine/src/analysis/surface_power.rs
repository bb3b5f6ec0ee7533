//! Power of the second-order tests of a response-surface plan: the t test of each
//! square term and the F test of the square terms together, for a curvature of a given
//! size, from the plan's own model matrix.
//!
//! # Remarks
//!
//! Model: the full second-order model in coded units with an intercept and, when the
//! plan has blocks, block effects (sum-to-zero contrasts, as the second-order analysis
//! fits them). For a test of the terms S (one square, or all k squares) with
//! coefficients β_S, the F statistic with q = |S| and n − p degrees of freedom has
//! noncentrality λ = β_Sᵀ [(XᵀX)⁻¹]_SS⁻¹ β_S / σ² (the general linear hypothesis;
//! Searle, Linear Models, 1971, ch. 5), and the power is P(F'(q, n − p, λ) > F_crit).
//! For one square term this is λ = β² / (σ² [(XᵀX)⁻¹]_jj), the two-sided t test. The
//! squares' sum of squares is what the second-order analysis tests on its 'Square'
//! line: the squares come last in the model, so their sequential sum of squares is the
//! extra sum of squares given every other term.
//!
//! The curvature `c` is a square term's coefficient in coded units: the rise (or fall)
//! of the response one coded unit from the centre along that factor, beyond the straight
//! line. For the group test every square term is `c`.
//!
//! Checked against scipy 1.17.1 `stats.ncf.sf` with the noncentrality computed by
//! numpy 2.4.6 from the same model matrices (`testdata/make_surface_power_reference.py`).

use serde::Serialize;

use crate::design::surface::quadratic_terms;
use crate::stats::dist::f_test_power;
use crate::stats::StatsError;

/// The power of the second-order tests of one plan.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SecondOrderPower {
    /// Runs in the plan.
    pub runs: usize,
    /// Residual degrees of freedom of the full second-order model.
    pub residual_df: usize,
    /// Noncentrality of the test of each factor's square term.
    pub square_noncentrality: Vec<f64>,
    /// Power of the test of each factor's square term.
    pub square_power: Vec<f64>,
    /// Noncentrality of the test of all square terms together.
    pub group_noncentrality: f64,
    /// Power of the test of all square terms together.
    pub group_power: f64,
}

impl SecondOrderPower {
    /// The least power among the square terms' tests.
    pub fn least_square_power(&self) -> f64 {
        self.square_power.iter().copied().fold(f64::INFINITY, f64::min)
    }
}

/// Power of the second-order tests of a plan with runs at `coded` settings (one row of
/// k coded settings per run) in `blocks` (one label per run, or empty for one block),
/// for square terms of size `curvature` (coded units), an SD `sd` of a single run and a
/// test level `alpha`.
///
/// # Errors
///
/// `InvalidParameter` for a curvature or SD that is not positive and finite, or alpha
/// outside (0, 1); `TooFewValues` when the plan has no residual degrees of freedom or
/// fewer than two factors; `Singular` when the plan cannot estimate the full model.
pub fn second_order_power(
    coded: &[Vec<f64>],
    blocks: &[usize],
    curvature: f64,
    sd: f64,
    alpha: f64,
) -> Result<SecondOrderPower, StatsError> {
    for (name, value) in [("curvature", curvature), ("SD", sd)] {
        if !(value.is_finite() && value > 0.0) {
            return Err(StatsError::InvalidParameter {
                name,
                rule: "a finite number above 0",
                value,
            });
        }
    }
    let k = coded.first().map_or(0, Vec::len);
    if k < 2 || coded.iter().any(|run| run.len() != k) {
        return Err(StatsError::TooFewValues {
            what: "factors of a second-order plan (each run with a setting of each)",
            needed: 2,
            got: k,
        });
    }
    let mut labels: Vec<usize> = blocks.to_vec();
    labels.sort_unstable();
    labels.dedup();
    let n_blocks = labels.len().max(1);
    let terms = 2 * k + k * (k - 1) / 2;
    let p = n_blocks + terms;
    let n = coded.len();
    if n <= p {
        return Err(StatsError::TooFewValues {
            what: "runs beyond the terms of the second-order model (residual degrees of freedom)",
            needed: p + 1,
            got: n,
        });
    }
    let mut x = nalgebra::DMatrix::<f64>::zeros(n, p);
    for (row, run) in coded.iter().enumerate() {
        x[(row, 0)] = 1.0;
        if !blocks.is_empty() {
            let block = labels.binary_search(&blocks[row]).unwrap_or(0);
            for column in 0..n_blocks - 1 {
                x[(row, 1 + column)] = if block == column {
                    1.0
                } else if block == n_blocks - 1 {
                    -1.0
                } else {
                    0.0
                };
            }
        }
        for (offset, value) in quadratic_terms(run).into_iter().enumerate() {
            x[(row, n_blocks + offset)] = value;
        }
    }
    let information = x.transpose() * &x;
    let singular = || StatsError::Singular {
        what: "the plan's information matrix (the plan cannot estimate every second-order term)",
    };
    let inverse = information.cholesky().ok_or_else(singular)?.inverse();
    let residual_df = n - p;
    let first_square = n_blocks + k + k * (k - 1) / 2;
    let variance = sd * sd;
    let mut square_noncentrality = Vec::with_capacity(k);
    let mut square_power = Vec::with_capacity(k);
    for factor in 0..k {
        let j = first_square + factor;
        let lambda = curvature * curvature / (variance * inverse[(j, j)]);
        square_noncentrality.push(lambda);
        square_power.push(f_test_power(alpha, 1.0, residual_df as f64, lambda)?);
    }
    let block = inverse.view((first_square, first_square), (k, k)).into_owned();
    let block_inverse = block.cholesky().ok_or_else(singular)?.inverse();
    let beta = nalgebra::DVector::from_element(k, curvature);
    let group_noncentrality = (beta.transpose() * block_inverse * &beta)[(0, 0)] / variance;
    let group_power = f_test_power(alpha, k as f64, residual_df as f64, group_noncentrality)?;
    Ok(SecondOrderPower {
        runs: n,
        residual_df,
        square_noncentrality,
        square_power,
        group_noncentrality,
        group_power,
    })
}

#[cfg(test)]
mod tests;
