//! Factorial (k-way) analysis of variance with interactions, fitted on cell summaries.
//!
//! The data arrive as one summary per observed combination of factor levels (count, mean
//! and centred sum of squares), never as one row per observation. The model is a
//! weighted least-squares fit to the cell means (weight = cell count) in sum-to-zero
//! (effect) coding; the residual sum of squares is the pure within-cell part plus the lack
//! of fit of the cell means. Block factors enter additively. The fit gives sequential
//! (Type I), Type II and Type III sums of squares, estimability of each term when cells
//! are missing, least-squares means, effects with standard errors and a balance flag.

mod qr;
#[cfg(test)]
// The tests print the accuracy they measured.
#[allow(clippy::print_stdout)]
mod tests;

use std::collections::{BTreeMap, BTreeSet};

use nalgebra::{DMatrix, DVector};

use crate::stats::accumulate::{binary_exponent, scale_by_power_of_two};
use crate::stats::StatsError;
use qr::{sequential_qr, upper_triangular_inverse, SequentialQr};

/// Largest number of model columns (intercept included) that [`fit_factorial`] accepts.
pub const MAX_MODEL_COLUMNS: usize = 2048;

/// Largest number of level combinations (the product of all factors' level counts).
pub const MAX_LEVEL_COMBINATIONS: usize = 1_000_000;

/// Summary of the observations in one combination of factor levels.
#[derive(Debug, Clone, PartialEq)]
pub struct CellSummary {
    /// Level index (0-based) of every factor, in the order of the factor list.
    pub levels: Vec<usize>,
    /// Number of observations in the cell (at least 1).
    pub n: usize,
    /// Mean of the observations in the cell.
    pub mean: f64,
    /// Mean minus the centre shared by every cell of the fit (see
    /// [`crate::stats::accumulate::centre_values`]): the digits that `mean` loses at a large
    /// offset. Equal to `mean` when no centre was taken.
    pub centred_mean: f64,
    /// Sum of squared deviations from the cell mean, `Σ (y - mean)²`, divided by
    /// `4^scale_exponent`: finite and with full precision at any magnitude of the data
    /// (at 1e160 the sum itself is beyond the largest `f64`, at 1e-170 below the smallest).
    pub centred_ss_scaled: f64,
    /// The power of two the deviations were divided by before squaring (0 when they
    /// were not).
    pub scale_exponent: i32,
}

impl CellSummary {
    /// The centred sum of squares in the data's units: infinite when beyond the largest
    /// `f64`, NaN when a positive sum is below the smallest normal one.
    pub fn centred_ss(&self) -> f64 {
        unscale_square(self.centred_ss_scaled, self.scale_exponent)
    }

    /// The cell's standard deviation (divisor `n - 1`) from the scaled sum, so it is right
    /// whenever it is itself a finite number; `None` with one value.
    pub fn sd(&self) -> Option<f64> {
        (self.n > 1).then(|| {
            scale_by_power_of_two(
                (self.centred_ss_scaled / (self.n - 1) as f64).sqrt(),
                i64::from(self.scale_exponent),
            )
        })
    }
}

/// `scaled * 4^exponent`, a sum of squares put back in the data's units: infinite beyond
/// the largest `f64`, NaN where a positive sum falls below the smallest normal `f64` (a
/// zero there would read as "no spread").
pub fn unscale_square(scaled: f64, exponent: i32) -> f64 {
    let value = scale_by_power_of_two(scaled, 2 * i64::from(exponent));
    if scaled != 0.0 && scaled.is_finite() && value.abs() < f64::MIN_POSITIVE {
        f64::NAN
    } else {
        value
    }
}

/// One factor of the design.
#[derive(Debug, Clone, PartialEq)]
pub struct FactorSpec {
    /// Name used for the factor's terms (interactions join names with `:`).
    pub name: String,
    /// Number of levels (at least 2); cell levels run from 0 to `n_levels - 1`.
    pub n_levels: usize,
    /// A block factor enters as a main effect only, never in an interaction.
    pub is_block: bool,
}

/// Which terms the model holds.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct ModelSpec {
    /// Highest order of interaction among the treatment (non-block) factors; 1 means
    /// main effects only. `None` takes the highest order that still leaves at least one
    /// residual degree of freedom (all of them when the cells are replicated). A value
    /// above the number of treatment factors is treated as that number.
    pub max_order: Option<usize>,
}

/// How much of a term the data can estimate.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Estimability {
    /// All of the term's degrees of freedom are estimable.
    Full,
    /// Some of the term's columns are aliased with earlier columns (missing cells).
    Partial,
    /// None of the term's columns can be estimated; the term is dropped from the tables.
    NotEstimable,
}

/// One term of the fitted model.
#[derive(Debug, Clone, PartialEq)]
pub struct TermInfo {
    /// Factor names joined by `:`.
    pub name: String,
    /// Indices of the term's factors in the factor list, increasing.
    pub factors: Vec<usize>,
    /// Degrees of freedom with all cells present: the product of `n_levels - 1`.
    pub df_full: usize,
    /// Degrees of freedom left after aliased columns are dropped (sequential order).
    pub df_estimable: usize,
    /// Summary of `df_estimable` against `df_full`.
    pub estimability: Estimability,
}

/// One line of an analysis-of-variance table.
#[derive(Debug, Clone, PartialEq)]
pub struct AnovaRow {
    /// Term name (factor names joined by `:`).
    pub term: String,
    /// Degrees of freedom of the hypothesis.
    pub df: usize,
    /// Sum of squares (infinite beyond the largest `f64`, NaN below the smallest normal
    /// one; see [`FactorialFit::scale_exponent`]).
    pub sum_sq: f64,
    /// The sum of squares divided by `4^scale_exponent` of the fit: finite whenever the
    /// data have spread, for ratios (shares of the total, F).
    pub sum_sq_scaled: f64,
    /// Mean square, `sum_sq / df`.
    pub mean_sq: f64,
    /// F ratio against the residual mean square; `None` without residual information.
    pub f_value: Option<f64>,
    /// Upper-tail probability of the F ratio; `None` when `f_value` is `None`.
    pub p_value: Option<f64>,
}

/// Analysis-of-variance table of one type of sums of squares (terms with `df > 0` only).
#[derive(Debug, Clone, PartialEq, Default)]
pub struct AnovaTable {
    /// One row per term, in model order.
    pub rows: Vec<AnovaRow>,
}

impl AnovaTable {
    /// The row of the named term, if the table has one.
    pub fn row(&self, term: &str) -> Option<&AnovaRow> {
        self.rows.iter().find(|row| row.term == term)
    }
}

/// A sum of squares with its degrees of freedom.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SumOfSquaresLine {
    /// Degrees of freedom.
    pub df: usize,
    /// Sum of squares.
    pub sum_sq: f64,
}

/// Residual line of the fit.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ResidualLine {
    /// Residual degrees of freedom: observations minus estimable parameters.
    pub df: usize,
    /// Residual sum of squares: within cells plus lack of fit of the cell means.
    pub sum_sq: f64,
    /// `sum_sq / df`; `None` when `df` is 0.
    pub mean_sq: Option<f64>,
}

/// An estimated linear function of the model parameters.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Estimate {
    /// The estimate; `None` when the function is not estimable (missing cells).
    pub value: Option<f64>,
    /// Its standard error, `sqrt(σ² l'(X'WX)⁻¹l)`; `None` when not estimable or when
    /// there are no residual degrees of freedom.
    pub standard_error: Option<f64>,
}

/// A fitted cell: an observed combination of levels.
#[derive(Debug, Clone, PartialEq)]
pub struct CellFit {
    /// Level index of every factor.
    pub levels: Vec<usize>,
    /// Number of observations.
    pub n: usize,
    /// Observed cell mean.
    pub observed_mean: f64,
    /// Cell mean predicted by the fitted model, with its standard error.
    pub fitted: Estimate,
}

/// Least-squares (population marginal) means of one factor.
#[derive(Debug, Clone, PartialEq)]
pub struct FactorLsMeans {
    /// Factor name.
    pub factor: String,
    /// Index of the factor in the factor list.
    pub factor_index: usize,
    /// One estimate per level: the model's cell means averaged with equal weight over
    /// every level of all other factors.
    pub means: Vec<Estimate>,
}

/// Effect of one combination of levels of a term.
#[derive(Debug, Clone, PartialEq)]
pub struct LevelEffect {
    /// Level index of each of the term's factors (in the term's factor order).
    pub levels: Vec<usize>,
    /// Effect in sum-to-zero coding (the last level's is minus the sum of the others).
    pub estimate: Estimate,
}

/// Effects of every level combination of one term.
#[derive(Debug, Clone, PartialEq)]
pub struct TermEffects {
    /// Term name.
    pub term: String,
    /// Indices of the term's factors.
    pub factors: Vec<usize>,
    /// All level combinations, last factor varying fastest.
    pub effects: Vec<LevelEffect>,
}

/// Result of [`fit_factorial`].
#[derive(Debug, Clone, PartialEq)]
pub struct FactorialFit {
    /// Order of interaction among treatment factors that was fitted.
    pub max_order: usize,
    /// Terms of the model in fitting order: blocks, then treatment terms by order.
    pub terms: Vec<TermInfo>,
    /// Sequential sums of squares in the order of `terms`.
    pub type_i: AnovaTable,
    /// Each term adjusted for all terms that do not contain it.
    pub type_ii: AnovaTable,
    /// Each term adjusted for all other terms (sum-to-zero coding).
    pub type_iii: AnovaTable,
    /// Residual line.
    pub residual: ResidualLine,
    /// Residual standard deviation `sqrt(residual mean square)` from the scaled sums, so
    /// it is right whenever it is itself a finite number; `None` without residual df.
    pub residual_sd: Option<f64>,
    /// Within-cell (pure error) part of the residual.
    pub pure_error: SumOfSquaresLine,
    /// Lack of fit of the cell means (zero when the model is saturated on the cells).
    pub lack_of_fit: SumOfSquaresLine,
    /// F ratio of the lack of fit against the pure error and its upper-tail probability,
    /// formed from the scaled sums (`None` without degrees of freedom for either, or
    /// without spread within cells).
    pub lack_of_fit_test: Option<(f64, Option<f64>)>,
    /// The power of two the response was divided by before squaring: every sum of squares
    /// was formed divided by `4^scale_exponent` (F, p and R² come from those), and the
    /// reported sums are infinite where beyond the largest `f64` and NaN where below the
    /// smallest normal one.
    pub scale_exponent: i32,
    /// Corrected total: `df = N - 1`, `Σ (y - grand mean)²`.
    pub total: SumOfSquaresLine,
    /// The corrected total sum of squares divided by `4^scale_exponent`.
    pub total_ss_scaled: f64,
    /// `1 - residual / total`; `None` when the total sum of squares is zero.
    pub r_squared: Option<f64>,
    /// Number of observations.
    pub n_observations: usize,
    /// Number of estimable parameters (intercept included).
    pub rank: usize,
    /// All cells present with equal counts; then Types I, II and III coincide.
    pub is_balanced: bool,
    /// Combinations of levels (over all factors) with no observations, in increasing order.
    pub missing_cells: Vec<Vec<usize>>,
    /// True when some model column was aliased: Type III hypotheses then depend on the
    /// coding and on which columns were dropped.
    pub type_iii_depends_on_coding: bool,
    /// Fitted value of each observed cell, in the order the cells were given.
    pub cells: Vec<CellFit>,
    /// Intercept: the unweighted average of the model's cell means over the full grid.
    pub grand_mean: Estimate,
    /// Least-squares means of every factor (blocks included).
    pub ls_means: Vec<FactorLsMeans>,
    /// Effects of every term, in the order of `terms`.
    pub effects: Vec<TermEffects>,
}

/// Summarises raw observations into cells (count, mean, centred sum of squares).
///
/// `levels[i]` holds the level indices of observation `i`, `values[i]` its response.
/// Cells come out sorted by their level vectors.
///
/// # Remarks
/// Two passes per cell: the mean, then the sum of squared deviations from it, each
/// deviation divided by a power of two near the largest first (so no square overflows or
/// underflows), which is accurate to rounding (no cancellation).
///
/// # Errors
/// [`StatsError::InvalidParameter`] when the two slices differ in length, level vectors
/// differ in length or a value is not finite; [`StatsError::TooFewValues`] when there are
/// no observations.
pub fn summarise_cells(levels: &[Vec<usize>], values: &[f64]) -> Result<Vec<CellSummary>, StatsError> {
    if levels.len() != values.len() {
        return Err(StatsError::InvalidParameter {
            name: "number of level vectors",
            rule: "equal to the number of values",
            value: levels.len() as f64,
        });
    }
    let Some(first) = levels.first() else {
        return Err(StatsError::TooFewValues {
            what: "observations",
            needed: 1,
            got: 0,
        });
    };
    let mut groups: BTreeMap<&[usize], Vec<f64>> = BTreeMap::new();
    for (key, &value) in levels.iter().zip(values) {
        if key.len() != first.len() {
            return Err(StatsError::InvalidParameter {
                name: "level vector length",
                rule: "the same for every observation",
                value: key.len() as f64,
            });
        }
        if !value.is_finite() {
            return Err(StatsError::InvalidParameter {
                name: "value",
                rule: "finite",
                value,
            });
        }
        groups.entry(key.as_slice()).or_default().push(value);
    }
    Ok(groups
        .into_iter()
        .map(|(key, group)| {
            let mean = group.iter().sum::<f64>() / group.len() as f64;
            // Deviations divided by a power of two near the largest before squaring.
            let largest = group
                .iter()
                .fold(0.0_f64, |largest, value| largest.max((value - mean).abs()));
            let exponent = if largest > 0.0 { binary_exponent(largest) } else { 0 };
            let centred_ss_scaled = group
                .iter()
                .map(|value| scale_by_power_of_two(value - mean, -i64::from(exponent)).powi(2))
                .sum();
            CellSummary {
                levels: key.to_vec(),
                n: group.len(),
                mean,
                centred_mean: mean,
                centred_ss_scaled,
                scale_exponent: exponent,
            }
        })
        .collect())
}

/// A model term with its place among the design columns.
#[derive(Debug, Clone)]
struct ModelTerm {
    name: String,
    factors: Vec<usize>,
    columns: std::ops::Range<usize>,
}

/// Weighted design on the cell means.
struct Design {
    terms: Vec<ModelTerm>,
    /// rows scaled by sqrt(n)
    matrix: DMatrix<f64>,
    /// sqrt(n) * cell mean
    response: DVector<f64>,
}

/// Sum-to-zero coding of one level: `n_levels - 1` entries.
fn coding_row(n_levels: usize, level: usize) -> Vec<f64> {
    (0..n_levels - 1)
        .map(|column| {
            if level == n_levels - 1 {
                -1.0
            } else if level == column {
                1.0
            } else {
                0.0
            }
        })
        .collect()
}

/// Kronecker product of the codings of a term's factors (first factor varies slowest).
fn term_row(factors: &[FactorSpec], term_factors: &[usize], levels: &[usize]) -> Vec<f64> {
    let mut row = vec![1.0];
    for (&factor, &level) in term_factors.iter().zip(levels) {
        let coding = coding_row(factors[factor].n_levels, level);
        let mut next = Vec::with_capacity(row.len() * coding.len());
        for &left in &row {
            for &right in &coding {
                next.push(left * right);
            }
        }
        row = next;
    }
    row
}

/// All subsets of `items` of size `size`, in lexicographic order.
fn combinations(items: &[usize], size: usize) -> Vec<Vec<usize>> {
    let mut out = Vec::new();
    let mut current = Vec::with_capacity(size);
    fn walk(items: &[usize], size: usize, start: usize, current: &mut Vec<usize>, out: &mut Vec<Vec<usize>>) {
        if current.len() == size {
            out.push(current.clone());
            return;
        }
        for index in start..items.len() {
            current.push(items[index]);
            walk(items, size, index + 1, current, out);
            current.pop();
        }
    }
    walk(items, size, 0, &mut current, &mut out);
    out
}

/// Every level combination of the given factors, last one varying fastest.
fn level_grid(n_levels: &[usize]) -> Vec<Vec<usize>> {
    let total: usize = n_levels.iter().product();
    let mut out = Vec::with_capacity(total);
    let mut current = vec![0usize; n_levels.len()];
    for _ in 0..total {
        out.push(current.clone());
        for position in (0..current.len()).rev() {
            current[position] += 1;
            if current[position] < n_levels[position] {
                break;
            }
            current[position] = 0;
        }
    }
    out
}

fn build_terms(factors: &[FactorSpec], order: usize) -> Result<Vec<ModelTerm>, StatsError> {
    let treatments: Vec<usize> = (0..factors.len()).filter(|&index| !factors[index].is_block).collect();
    let mut term_factors: Vec<Vec<usize>> = (0..factors.len())
        .filter(|&index| factors[index].is_block)
        .map(|index| vec![index])
        .collect();
    for size in 1..=order.min(treatments.len()) {
        term_factors.extend(combinations(&treatments, size));
    }
    let mut terms = Vec::with_capacity(term_factors.len());
    let mut next_column = 1usize;
    for members in term_factors {
        let width: usize = members.iter().map(|&factor| factors[factor].n_levels - 1).product();
        let end = next_column + width;
        if end > MAX_MODEL_COLUMNS {
            return Err(StatsError::InvalidParameter {
                name: "number of model columns",
                rule: "at most 2048 (lower max_order)",
                value: end as f64,
            });
        }
        let name = members
            .iter()
            .map(|&factor| factors[factor].name.as_str())
            .collect::<Vec<_>>()
            .join(":");
        terms.push(ModelTerm {
            name,
            factors: members,
            columns: next_column..end,
        });
        next_column = end;
    }
    Ok(terms)
}

/// Exponent of the power of two by which the response is divided before the QR, so that
/// squares neither overflow nor underflow (exact in binary): that of the largest centred
/// cell mean or within-cell spread (the root of a centred sum of squares).
fn response_exponent(cells: &[CellSummary]) -> i32 {
    let mut exponent: Option<i32> = None;
    for cell in cells {
        let mut consider = |value: f64, shift: i32| {
            if value > 0.0 && value.is_finite() {
                let candidate = binary_exponent(value) + shift;
                exponent = Some(exponent.map_or(candidate, |current| current.max(candidate)));
            }
        };
        consider(cell.centred_mean.abs(), 0);
        consider(cell.centred_ss_scaled.sqrt(), cell.scale_exponent);
    }
    exponent.unwrap_or(0).clamp(-1000, 1000)
}

fn build_design(factors: &[FactorSpec], cells: &[CellSummary], order: usize, scale: f64) -> Result<Design, StatsError> {
    let terms = build_terms(factors, order)?;
    let n_columns = terms.last().map_or(1, |term| term.columns.end);
    let mut matrix = DMatrix::<f64>::zeros(cells.len(), n_columns);
    let mut response = DVector::<f64>::zeros(cells.len());
    for (row, cell) in cells.iter().enumerate() {
        let weight = (cell.n as f64).sqrt();
        matrix[(row, 0)] = weight;
        for term in &terms {
            let term_levels: Vec<usize> = term.factors.iter().map(|&f| cell.levels[f]).collect();
            let values = term_row(factors, &term.factors, &term_levels);
            for (offset, value) in values.into_iter().enumerate() {
                matrix[(row, term.columns.start + offset)] = weight * value;
            }
        }
        response[row] = weight * (cell.centred_mean / scale);
    }
    Ok(Design {
        terms,
        matrix,
        response,
    })
}

fn validate(cells: &[CellSummary], factors: &[FactorSpec], model: &ModelSpec) -> Result<usize, StatsError> {
    if factors.is_empty() {
        return Err(StatsError::TooFewValues {
            what: "factors",
            needed: 1,
            got: 0,
        });
    }
    let mut combinations_count = 1usize;
    for factor in factors {
        if factor.n_levels < 2 {
            return Err(StatsError::InvalidParameter {
                name: "n_levels",
                rule: "at least 2",
                value: factor.n_levels as f64,
            });
        }
        combinations_count = combinations_count
            .checked_mul(factor.n_levels)
            .filter(|&count| count <= MAX_LEVEL_COMBINATIONS)
            .ok_or(StatsError::InvalidParameter {
                name: "number of level combinations",
                rule: "at most 1000000",
                value: f64::INFINITY,
            })?;
    }
    if model.max_order == Some(0) {
        return Err(StatsError::InvalidParameter {
            name: "max_order",
            rule: "at least 1",
            value: 0.0,
        });
    }
    if cells.is_empty() {
        return Err(StatsError::TooFewValues {
            what: "cells",
            needed: 1,
            got: 0,
        });
    }
    let mut seen: BTreeSet<&[usize]> = BTreeSet::new();
    let mut n_observations = 0usize;
    for (index, cell) in cells.iter().enumerate() {
        if cell.levels.len() != factors.len() {
            return Err(StatsError::InvalidParameter {
                name: "cell levels length",
                rule: "equal to the number of factors",
                value: cell.levels.len() as f64,
            });
        }
        for (&level, factor) in cell.levels.iter().zip(factors) {
            if level >= factor.n_levels {
                return Err(StatsError::InvalidParameter {
                    name: "cell level",
                    rule: "less than the factor's n_levels",
                    value: level as f64,
                });
            }
        }
        if cell.n == 0 {
            return Err(StatsError::InvalidParameter {
                name: "cell n",
                rule: "at least 1",
                value: 0.0,
            });
        }
        if !(cell.mean.is_finite() && cell.centred_mean.is_finite()) {
            return Err(StatsError::InvalidParameter {
                name: "cell mean",
                rule: "finite",
                value: cell.mean,
            });
        }
        if !(cell.centred_ss_scaled.is_finite() && cell.centred_ss_scaled >= 0.0) {
            return Err(StatsError::InvalidParameter {
                name: "cell centred_ss_scaled",
                rule: "finite and non-negative",
                value: cell.centred_ss_scaled,
            });
        }
        if !seen.insert(cell.levels.as_slice()) {
            return Err(StatsError::InvalidParameter {
                name: "cells",
                rule: "one per combination of levels (value: index of a repeated one)",
                value: index as f64,
            });
        }
        n_observations = n_observations.checked_add(cell.n).ok_or(StatsError::InvalidParameter {
            name: "total count",
            rule: "representable as an integer",
            value: f64::INFINITY,
        })?;
    }
    if n_observations < 2 {
        return Err(StatsError::TooFewValues {
            what: "observations",
            needed: 2,
            got: n_observations,
        });
    }
    Ok(n_observations)
}

/// F ratio and its upper-tail probability.
///
/// `P(F > f)` from the engine's F survival function ([`crate::stats::dist::f_sf`]),
/// evaluated directly so small p-values keep their relative accuracy.
fn f_test(mean_sq: f64, df: usize, residual: &ResidualLine) -> (Option<f64>, Option<f64>) {
    let Some(residual_mean_sq) = residual.mean_sq else {
        return (None, None);
    };
    if residual_mean_sq <= 0.0 || df == 0 {
        return (None, None);
    }
    let f_value = mean_sq / residual_mean_sq;
    if !f_value.is_finite() {
        return (None, None);
    }
    let p_value = crate::stats::dist::f_sf(f_value, df as f64, residual.df as f64).ok();
    (Some(f_value), p_value)
}

/// A line of the table from a sum of squares in scaled units (`sum_sq * 4^exponent` in
/// the data's units): the F ratio is formed from the scaled sums, so it stays finite where
/// the sums themselves overflow.
fn anova_row(term: &str, df: usize, sum_sq: f64, residual: &ResidualLine, exponent: i32) -> AnovaRow {
    let mean_sq = sum_sq / df as f64;
    let (f_value, p_value) = f_test(mean_sq, df, residual);
    AnovaRow {
        term: term.to_string(),
        df,
        sum_sq: unscale_square(sum_sq, exponent),
        sum_sq_scaled: sum_sq,
        mean_sq: unscale_square(mean_sq, exponent),
        f_value,
        p_value,
    }
}

/// Sum of squares for `test` columns after `before` columns: `(ss, df)`.
fn sum_sq_after(design: &Design, before: &[usize], test: &[usize]) -> (f64, usize) {
    let order: Vec<usize> = before.iter().chain(test).copied().collect();
    let mut sub = DMatrix::<f64>::zeros(design.matrix.nrows(), order.len());
    for (position, &column) in order.iter().enumerate() {
        sub.set_column(position, &design.matrix.column(column));
    }
    let fit = sequential_qr(&sub, &design.response);
    let mut sum_sq = 0.0;
    let mut df = 0usize;
    for (position, &column) in fit.kept.iter().enumerate() {
        if column >= before.len() {
            sum_sq += fit.effects[position].powi(2);
            df += 1;
        }
    }
    (sum_sq, df)
}

/// Sum of squares for the hypothesis that the kept coefficients at `positions` are zero.
///
/// With `W` the rows of `R⁻¹` at `positions`, the covariance block is `W W'`; a QR of
/// `W' = Q T` gives `W W' = T'T`, so the sum of squares `b'(W W')⁻¹b` is `|T⁻ᵀ b|²`,
/// computed without forming or inverting `W W'`. Returns `(ss, df)`.
fn wald_sum_sq(r_inverse: &DMatrix<f64>, coefficients: &DVector<f64>, positions: &[usize]) -> (f64, usize) {
    let rank = r_inverse.nrows();
    let mut w_transpose = DMatrix::<f64>::zeros(rank, positions.len());
    for (column, &position) in positions.iter().enumerate() {
        for row in 0..rank {
            w_transpose[(row, column)] = r_inverse[(position, row)];
        }
    }
    let factor = sequential_qr(&w_transpose, &DVector::zeros(rank));
    // forward substitution T' z = b over the kept columns of W'
    let size = factor.rank();
    let mut solution = vec![0.0; size];
    for row in 0..size {
        let mut sum = coefficients[positions[factor.kept[row]]];
        for (earlier, value) in solution.iter().enumerate().take(row) {
            sum -= factor.r[(earlier, row)] * value;
        }
        solution[row] = sum / factor.r[(row, row)];
    }
    (solution.iter().map(|value| value * value).sum(), size)
}

/// Coefficients and unscaled covariance of the kept columns, plus aliasing information.
struct Solution {
    qr: SequentialQr,
    /// coefficient of each kept column (in kept order)
    coefficients: DVector<f64>,
    /// (X'WX)⁻¹ restricted to kept columns
    unscaled_covariance: DMatrix<f64>,
    /// σ² divided by `scale²`, `None` without residual df
    scaled_sigma_sq: Option<f64>,
    /// The power of two the response was divided by.
    scale: f64,
    /// The centre taken off the cell means, added back to every estimate through the
    /// intercept.
    centre: f64,
}

impl Solution {
    /// Estimate of `l'β` for a full-length contrast `l` over all design columns.
    fn estimate(&self, contrast: &[f64]) -> Estimate {
        let kept = &self.qr.kept;
        // non-zero entries of the contrast on kept columns: (kept position, value)
        let active: Vec<(usize, f64)> = kept
            .iter()
            .enumerate()
            .filter(|(_, &column)| contrast[column] != 0.0)
            .map(|(position, &column)| (position, contrast[column]))
            .collect();
        for (column, alias) in self.qr.alias_coefficients.iter().enumerate() {
            let Some(alias) = alias else { continue };
            let mut implied = 0.0;
            let mut scale = 1.0 + contrast[column].abs();
            for &(position, value) in &active {
                implied += value * alias[position];
                scale += (value * alias[position]).abs();
            }
            if (contrast[column] - implied).abs() > 1e-6 * scale {
                return Estimate {
                    value: None,
                    standard_error: None,
                };
            }
        }
        let value: f64 = active
            .iter()
            .map(|&(position, weight)| weight * self.coefficients[position])
            .sum::<f64>()
            + contrast[0] * self.centre;
        let covariance = self.unscaled_covariance.as_slice();
        let rank = kept.len();
        let mut variance = 0.0;
        for &(column, left) in &active {
            let column_values = &covariance[column * rank..(column + 1) * rank];
            let inner: f64 = active.iter().map(|&(row, right)| column_values[row] * right).sum();
            variance += left * inner;
        }
        Estimate {
            value: Some(value),
            standard_error: self
                .scaled_sigma_sq
                .map(|sigma_sq| (sigma_sq * variance.max(0.0)).sqrt() * self.scale),
        }
    }
}

/// Fits a k-way factorial model with interactions to cell summaries.
///
/// Terms: every block factor as a main effect (in list order), then all subsets of the
/// treatment factors up to `max_order`, by order and, within an order, lexicographically
/// by factor position (`a, b, c, a:b, a:c, b:c, a:b:c`). Type I sums of squares follow
/// this order.
///
/// # Remarks
/// Algorithm: weighted least squares on the cell means, one design row per observed cell
/// scaled by `sqrt(n)`, sum-to-zero coding with interaction columns formed as Kronecker
/// products of main-effect codings (Searle, *Linear Models for Unbalanced Data*, 1987,
/// ch. 4 and 6). Because the cell mean is sufficient for the cell's contribution to
/// every linear fit, the residual SS is `Σ centred_ss` (pure error) plus the weighted
/// residual SS of the cell-mean fit (lack of fit), exactly as a fit to the raw rows would
/// give. A Householder QR with sequential aliasing checks (see the private `qr` module)
/// gives the rank; Type I SS are the squared QR effects grouped by term; Type II SS of a
/// term are its squared effects when its columns follow those of all terms not containing
/// it (one extra QR per term); Type III SS of a term are the Wald form `b'(V_tt)⁻¹b` of
/// its kept coefficients, which equals its squared effects when its kept columns follow
/// all other kept columns, and is evaluated through a QR of the term's rows of `R⁻¹`
/// (see `wald_sum_sq`). None of these is a difference of residual sums, so no accuracy is
/// lost to cancellation; expect about 1e-12 relative error on well-conditioned designs.
/// Standard errors use `σ² (X'WX)⁻¹ = σ² R⁻¹R⁻ᵀ`. A linear function is reported as
/// estimable when it is consistent with every aliasing relation found by the QR.
/// p-values come from the F survival function of `stats::dist`, never `1 - cdf`.
/// The response is each cell's `centred_mean` divided by a power of two near the largest
/// of them or of the within-cell spreads (the cells' sums of squares arrive divided by
/// their own power of two), so squares neither overflow nor underflow at any magnitude;
/// F ratios, p-values, R², standard errors and the residual SD are formed from the scaled
/// sums, the sums of squares are scaled back for the tables (infinite beyond the largest
/// `f64`, NaN below the smallest normal one, see [`unscale_square`]), and the cells'
/// common centre is added back to every estimate through the intercept (grand mean,
/// least-squares means, fitted cell means).
/// Checked against statsmodels 0.15.0 (`ols` with `C(x, Sum)` coding and `anova_lm`
/// typ 1, 2, 3, `t_test`) on unbalanced two- and three-factor data, a block design and a
/// design with an empty cell, and against scipy 1.17.1 `f_oneway` for one factor.
///
/// # Errors
/// [`StatsError::InvalidParameter`] for factors with fewer than 2 levels, cells whose
/// level vector does not fit the factors, zero counts, non-finite means, negative or
/// non-finite centred SS, repeated cells, `max_order = Some(0)`, more than
/// [`MAX_LEVEL_COMBINATIONS`] level combinations or more than [`MAX_MODEL_COLUMNS`]
/// columns; [`StatsError::TooFewValues`] with no factors, no cells or fewer than two
/// observations.
pub fn fit_factorial(
    cells: &[CellSummary],
    factors: &[FactorSpec],
    model: &ModelSpec,
) -> Result<FactorialFit, StatsError> {
    let n_observations = validate(cells, factors, model)?;
    let n_treatments = factors.iter().filter(|factor| !factor.is_block).count();
    // Centre and scale: the response is the centred cell mean over a power of two, the
    // sums of squares are formed in those units and scaled back only for display.
    let exponent = response_exponent(cells);
    let scale = scale_by_power_of_two(1.0, i64::from(exponent));
    let centre = cells.first().map_or(0.0, |cell| cell.mean - cell.centred_mean);

    // choose the order and fit the full model
    let (order, design, full) = match model.max_order {
        Some(order) => {
            let order = order.min(n_treatments);
            let design = build_design(factors, cells, order, scale)?;
            let full = sequential_qr(&design.matrix, &design.response);
            (order, design, full)
        }
        None => {
            let mut order = n_treatments;
            loop {
                let design = build_design(factors, cells, order, scale)?;
                let full = sequential_qr(&design.matrix, &design.response);
                if full.rank() < n_observations || order <= 1 {
                    break (order, design, full);
                }
                order -= 1;
            }
        }
    };
    let n_columns = design.matrix.ncols();
    let rank = full.rank();
    let kept_set: Vec<bool> = {
        let mut flags = vec![false; n_columns];
        for &column in &full.kept {
            flags[column] = true;
        }
        flags
    };

    // residual, pure error, lack of fit, total; `scaled_*` in units of scale^2
    let scaled_within: f64 = cells
        .iter()
        .map(|cell| {
            scale_by_power_of_two(
                cell.centred_ss_scaled,
                2 * (i64::from(cell.scale_exponent) - i64::from(exponent)),
            )
        })
        .sum();
    let scaled_lack_of_fit = full.residual_sum_sq();
    let pure_error = SumOfSquaresLine {
        df: n_observations - cells.len(),
        sum_sq: unscale_square(scaled_within, exponent),
    };
    let lack_of_fit = SumOfSquaresLine {
        df: cells.len() - rank,
        sum_sq: unscale_square(scaled_lack_of_fit, exponent),
    };
    // Lack of fit against pure error, from the scaled sums.
    let lack_of_fit_test = (lack_of_fit.df > 0 && pure_error.df > 0 && scaled_within > 0.0)
        .then(|| {
            let f_value = (scaled_lack_of_fit / lack_of_fit.df as f64) / (scaled_within / pure_error.df as f64);
            let p_value = crate::stats::dist::f_sf(f_value, lack_of_fit.df as f64, pure_error.df as f64).ok();
            (f_value, p_value)
        })
        .filter(|(f_value, _)| f_value.is_finite());
    let residual_df = n_observations - rank;
    let scaled_residual_ss = scaled_within + scaled_lack_of_fit;
    let scaled_residual = ResidualLine {
        df: residual_df,
        sum_sq: scaled_residual_ss,
        mean_sq: (residual_df > 0).then(|| scaled_residual_ss / residual_df as f64),
    };
    let residual = ResidualLine {
        df: residual_df,
        sum_sq: unscale_square(scaled_residual_ss, exponent),
        mean_sq: scaled_residual.mean_sq.map(|mean_sq| unscale_square(mean_sq, exponent)),
    };
    let scaled_means: Vec<f64> = cells.iter().map(|cell| cell.centred_mean / scale).collect();
    let grand_weighted_mean = cells
        .iter()
        .zip(&scaled_means)
        .map(|(cell, mean)| cell.n as f64 * mean)
        .sum::<f64>()
        / n_observations as f64;
    let scaled_total_ss = scaled_within
        + cells
            .iter()
            .zip(&scaled_means)
            .map(|(cell, mean)| cell.n as f64 * (mean - grand_weighted_mean).powi(2))
            .sum::<f64>();
    let total = SumOfSquaresLine {
        df: n_observations - 1,
        sum_sq: unscale_square(scaled_total_ss, exponent),
    };
    let r_squared = (scaled_total_ss > 0.0).then(|| 1.0 - scaled_residual_ss / scaled_total_ss);

    // term information and Type I
    let mut terms = Vec::with_capacity(design.terms.len());
    let mut type_i = AnovaTable::default();
    for term in &design.terms {
        let mut sum_sq = 0.0;
        let mut df = 0usize;
        for (position, &column) in full.kept.iter().enumerate() {
            if term.columns.contains(&column) {
                sum_sq += full.effects[position].powi(2);
                df += 1;
            }
        }
        let df_full = term.columns.len();
        terms.push(TermInfo {
            name: term.name.clone(),
            factors: term.factors.clone(),
            df_full,
            df_estimable: df,
            estimability: if df == df_full {
                Estimability::Full
            } else if df == 0 {
                Estimability::NotEstimable
            } else {
                Estimability::Partial
            },
        });
        if df > 0 {
            type_i
                .rows
                .push(anova_row(&term.name, df, sum_sq, &scaled_residual, exponent));
        }
    }

    // Type II: after all terms not containing this one
    let mut type_ii = AnovaTable::default();
    for term in &design.terms {
        let mut before = vec![0usize];
        for other in &design.terms {
            let contains = term.factors.iter().all(|f| other.factors.contains(f));
            if !contains {
                before.extend(other.columns.clone());
            }
        }
        let test: Vec<usize> = term.columns.clone().collect();
        let (sum_sq, df) = sum_sq_after(&design, &before, &test);
        if df > 0 {
            type_ii
                .rows
                .push(anova_row(&term.name, df, sum_sq, &scaled_residual, exponent));
        }
    }

    // coefficients and covariance
    let r_inverse = upper_triangular_inverse(&full.r);
    let scaled_coefficients = &r_inverse * full.effects.rows_range(..rank);
    let unscaled_covariance = &r_inverse * r_inverse.transpose();

    // Type III: each term after all other kept columns, from the full fit
    let mut type_iii = AnovaTable::default();
    for term in &design.terms {
        let positions: Vec<usize> = full
            .kept
            .iter()
            .enumerate()
            .filter(|(_, column)| term.columns.contains(column))
            .map(|(position, _)| position)
            .collect();
        if positions.is_empty() {
            continue;
        }
        let (sum_sq, df) = wald_sum_sq(&r_inverse, &scaled_coefficients, &positions);
        if df > 0 {
            type_iii
                .rows
                .push(anova_row(&term.name, df, sum_sq, &scaled_residual, exponent));
        }
    }

    let solution = Solution {
        qr: full,
        coefficients: scaled_coefficients * scale,
        unscaled_covariance,
        scaled_sigma_sq: scaled_residual.mean_sq,
        scale,
        centre,
    };

    // cells, missing cells, balance
    let cell_fits: Vec<CellFit> = cells
        .iter()
        .map(|cell| {
            let mut contrast = vec![0.0; n_columns];
            contrast[0] = 1.0;
            for term in &design.terms {
                let term_levels: Vec<usize> = term.factors.iter().map(|&f| cell.levels[f]).collect();
                let values = term_row(factors, &term.factors, &term_levels);
                contrast[term.columns.clone()].copy_from_slice(&values);
            }
            CellFit {
                levels: cell.levels.clone(),
                n: cell.n,
                observed_mean: cell.mean,
                fitted: solution.estimate(&contrast),
            }
        })
        .collect();
    let observed: BTreeSet<&[usize]> = cells.iter().map(|cell| cell.levels.as_slice()).collect();
    let all_levels: Vec<usize> = factors.iter().map(|factor| factor.n_levels).collect();
    let missing_cells: Vec<Vec<usize>> = level_grid(&all_levels)
        .into_iter()
        .filter(|levels| !observed.contains(levels.as_slice()))
        .collect();
    let is_balanced = missing_cells.is_empty() && cells.iter().all(|cell| cell.n == cells[0].n);

    // grand mean, least-squares means, effects
    let mut intercept = vec![0.0; n_columns];
    intercept[0] = 1.0;
    let grand_mean = solution.estimate(&intercept);
    let mut ls_means = Vec::with_capacity(factors.len());
    for (factor_index, factor) in factors.iter().enumerate() {
        let Some(main) = design.terms.iter().find(|term| term.factors == [factor_index]) else {
            continue;
        };
        let means = (0..factor.n_levels)
            .map(|level| {
                let mut contrast = intercept.clone();
                contrast[main.columns.clone()].copy_from_slice(&coding_row(factor.n_levels, level));
                solution.estimate(&contrast)
            })
            .collect();
        ls_means.push(FactorLsMeans {
            factor: factor.name.clone(),
            factor_index,
            means,
        });
    }
    let effects = design
        .terms
        .iter()
        .map(|term| {
            let term_levels: Vec<usize> = term.factors.iter().map(|&f| factors[f].n_levels).collect();
            let effects = level_grid(&term_levels)
                .into_iter()
                .map(|levels| {
                    let mut contrast = vec![0.0; n_columns];
                    contrast[term.columns.clone()].copy_from_slice(&term_row(factors, &term.factors, &levels));
                    LevelEffect {
                        estimate: solution.estimate(&contrast),
                        levels,
                    }
                })
                .collect();
            TermEffects {
                term: term.name.clone(),
                factors: term.factors.clone(),
                effects,
            }
        })
        .collect();

    Ok(FactorialFit {
        max_order: order,
        terms,
        type_i,
        type_ii,
        type_iii,
        residual,
        residual_sd: scaled_residual
            .mean_sq
            .map(|mean_sq| scale_by_power_of_two(mean_sq.sqrt(), i64::from(exponent))),
        pure_error,
        lack_of_fit,
        lack_of_fit_test,
        scale_exponent: exponent,
        total,
        total_ss_scaled: scaled_total_ss,
        r_squared,
        n_observations,
        rank,
        is_balanced,
        missing_cells,
        type_iii_depends_on_coding: kept_set.iter().any(|kept| !kept),
        cells: cell_fits,
        grand_mean,
        ls_means,
        effects,
    })
}
