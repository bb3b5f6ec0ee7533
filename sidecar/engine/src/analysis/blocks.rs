//! Conditions compared within blocks: each block's shift is taken out before the
//! conditions are compared, and every interval and test uses the blocked model's error.
//!
//! A trial run in blocks (days, batches, shifts) is analysed with the additive model
//! `value = condition + block + error`. Its least-squares fit is made on the cell
//! summaries (one weighted row per condition and block that holds values), centred on
//! the grand mean, by a singular value decomposition that also tells whether conditions
//! and blocks can be told apart at all (a design where some condition never shares a
//! block with the others cannot). From the fit come:
//!
//! - the block shifts (each block's effect less their average), which are taken off the
//!   values, so the condition means that follow are the least-squares means averaged over
//!   the blocks with equal weight (the usual "adjusted means", common practice);
//! - the covariance of those means over the error variance, which gives every standard
//!   error of a mean, a difference or a contrast (in a balanced trial it is `1/n` on the
//!   diagonal and zero elsewhere, as in the one-way model);
//! - the ANOVA with blocks first and conditions adjusted for blocks (sequential sums of
//!   squares: blocks, then conditions, then error; they add up to the total), and the
//!   error's degrees of freedom `N − k − (b − 1)`.
//!
//! The fit is made on the values' deviations from a centre (typed decimals differenced
//! exactly) divided by a power of two, and every figure is put back in the data's unit,
//! so a trial near 1e300 or 1e-300, or at an offset of 1e9 with a small spread, gives
//! the answers of the same trial at scale one (ratios from the scaled sums; a sum of
//! squares beyond the range of `f64` is itself infinite).
//!
//! The pairwise families (Tukey-Kramer and the others) then work as in the one-way model
//! with these standard errors. In an unbalanced blocked trial the critical values of the
//! Tukey-Kramer family (and the correlations of the comparisons with a control or with
//! the best) are those of the one-way model with the same counts: the same approximation
//! the Tukey-Kramer method makes for unequal counts (common practice).
//!
//! Checked against statsmodels 0.15.0 (`ols("y ~ C(block) + C(condition)")`, `anova_lm`
//! type 1, least-squares means from the fitted parameters and their covariance) and
//! scipy 1.17.1 (`studentized_range.sf`) on a balanced and an unbalanced trial (tests
//! below).

use nalgebra::{DMatrix, DVector};
use serde::Serialize;

use crate::analysis::contrast::Contrast;
use crate::analysis::oneway::{fit_one_way_sharing, AnovaLine, OneWayError, OneWayFit, SharedError};
use crate::stats::accumulate::{
    centre_values, magnitude_exponent, oneway_sums, scale_by_power_of_two, GroupAccumulator,
};
use crate::stats::dist;

/// Singular values below this share of the largest count as zero when deciding whether
/// conditions and blocks can be told apart.
const RANK_TOLERANCE: f64 = 1e-10;

/// The blocks of a trial: which block each value was made in.
#[derive(Debug, Clone, Copy)]
pub struct Blocks<'a> {
    /// The blocking factor's name (several blocking columns joined by the caller).
    pub factor: &'a str,
    /// Block labels.
    pub names: &'a [String],
    /// For each value, an index into `names`.
    pub block_of_value: &'a [u32],
}

/// One block's shift: how far its values sat from the average block.
#[derive(Debug, Clone, Serialize)]
pub struct BlockShift {
    /// The block's label.
    pub block: String,
    /// Its effect less the average of the blocks' effects, in the response's units.
    pub shift: f64,
}

/// How the blocks were taken out of a one-way fit (kept in [`OneWayFit::blocks`]).
#[derive(Debug, Clone, Serialize)]
pub struct BlocksRemoved {
    /// The blocking factor's name.
    pub factor: String,
    /// Degrees of freedom of the blocks (blocks with values less one).
    pub df: f64,
    /// Sum of squares between blocks (before the conditions, sequential).
    pub ss: f64,
    /// Each block's shift, in the order of the block labels.
    pub shifts: Vec<BlockShift>,
    /// Covariance of the conditions' adjusted means over the error variance (`k × k`,
    /// row-major, conditions in the fit's order).
    #[serde(skip)]
    pub mean_covariance: Vec<f64>,
    /// Number of conditions in the fit (the side of `mean_covariance`).
    #[serde(skip)]
    pub n_conditions: usize,
}

impl BlocksRemoved {
    /// The variance of the difference of two adjusted means over the error variance.
    pub fn difference_variance_factor(&self, first: usize, second: usize) -> f64 {
        let at = |row: usize, column: usize| self.mean_covariance[row * self.n_conditions + column];
        at(first, first) + at(second, second) - 2.0 * at(first, second)
    }
}

/// Why the conditions could not be compared within blocks.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum BlockedFitError {
    /// Fewer than two blocks hold values: there is nothing to take out.
    #[error("only {} of '{factor}' {} values, so there are no block differences to take out", crate::analysis::verdict::count_of(*.found, "block"), if *.found == 1 { "holds" } else { "hold" })]
    OneBlock {
        /// The blocking factor.
        factor: String,
        /// Blocks with values.
        found: usize,
    },
    /// Some conditions never share a block with the others, so their differences
    /// cannot be told apart from the blocks' differences.
    #[error("the blocks of '{factor}' cannot be told apart from the conditions: some conditions were run only in blocks that hold no other condition, so a difference between them could be a difference between the blocks")]
    Confounded {
        /// The blocking factor.
        factor: String,
    },
    /// Nothing is left to estimate the error once blocks and conditions are fitted.
    #[error(
        "no degrees of freedom are left for the error once the blocks of '{factor}' and the conditions are fitted"
    )]
    NoErrorLeft {
        /// The blocking factor.
        factor: String,
    },
    /// The one-way fit itself failed.
    #[error(transparent)]
    OneWay(#[from] OneWayError),
}

/// Fits the one-way model to a trial run in blocks: the blocks' shifts are taken out,
/// the error is the blocked model's, and every interval and test follows it.
///
/// `group_of_value[i]` and `blocks.block_of_value[i]` are the condition and block of
/// `values[i]`; non-finite values are skipped.
///
/// # Errors
///
/// [`BlockedFitError`] when fewer than two blocks hold values, when conditions and
/// blocks cannot be told apart, when no error degrees of freedom remain, or when the
/// one-way fit fails (fewer than two conditions with values).
pub fn fit_one_way_in_blocks(
    condition_names: &[String],
    group_of_value: &[u32],
    blocks: &Blocks<'_>,
    values: &[f64],
    confidence: f64,
    contrasts: &[Contrast],
) -> Result<OneWayFit, BlockedFitError> {
    // The fit is made on deviations from a centre (a value of the data; typed decimals
    // are subtracted exactly) divided by a power of two, so that a trial near 1e300 or
    // 1e-300, or at an offset of 1e9 with a small spread, gives the answers of the same
    // trial at scale one: squares of the scaled deviations neither overflow nor
    // underflow, and no digit of the spread is lost to the offset.
    let n_conditions = condition_names.len();
    let n_blocks = blocks.names.len();
    let n_values = values.len().min(group_of_value.len());
    let masked: Vec<f64> = (0..values.len())
        .map(|index| {
            let usable = index < n_values
                && (group_of_value[index] as usize) < n_conditions
                && blocks
                    .block_of_value
                    .get(index)
                    .is_some_and(|&block| (block as usize) < n_blocks);
            if usable {
                values[index]
            } else {
                f64::NAN
            }
        })
        .collect();
    let centred = centre_values(&masked);
    let exponent = magnitude_exponent(centred.deviations.iter());
    let scaled: Vec<f64> = centred
        .deviations
        .iter()
        .map(|&deviation| scale_by_power_of_two(deviation, -i64::from(exponent)))
        .collect();
    let layout = Layout {
        condition_names,
        group_of_value,
        blocks,
    };
    let mut fit = fit_scaled(&layout, &scaled, confidence, contrasts)?;
    let unit = Unit {
        centre: centred.centre,
        exponent: i64::from(exponent),
    };
    unit.restore(&mut fit);
    fit.exact_decimal = fit.exact_decimal && centred.exact_decimal && exponent == 0;
    Ok(fit)
}

/// The data's unit relative to the scaled deviations the fit was made on: a value `x`
/// was fitted as `(x - centre) / 2^exponent`.
struct Unit {
    centre: f64,
    exponent: i64,
}

impl Unit {
    /// A location (a mean, an interval end, a value) back in the data's unit.
    fn level(&self, scaled: f64) -> f64 {
        self.centre + scale_by_power_of_two(scaled, self.exponent)
    }

    /// A difference, an SD or an SE back in the data's unit.
    fn spread(&self, scaled: f64) -> f64 {
        scale_by_power_of_two(scaled, self.exponent)
    }

    /// A sum of squares or a mean square back in the data's unit (beyond the range of
    /// `f64` it is infinite or zero; ratios were formed before, from the scaled sums).
    fn square(&self, scaled: f64) -> f64 {
        scale_by_power_of_two(scaled, 2 * self.exponent)
    }

    /// A linear combination of means with coefficients summing to `total`.
    fn combination(&self, scaled: f64, total: f64) -> f64 {
        if total == 0.0 {
            self.spread(scaled)
        } else {
            self.centre * total + self.spread(scaled)
        }
    }

    /// Every figure of a fit made on scaled deviations, back in the data's unit.
    fn restore(&self, fit: &mut OneWayFit) {
        if self.centre == 0.0 && self.exponent == 0 {
            return;
        }
        for condition in &mut fit.conditions {
            condition.mean = self.level(condition.mean);
            condition.min = self.level(condition.min);
            condition.median = self.level(condition.median);
            condition.max = self.level(condition.max);
            condition.mean_low = self.level(condition.mean_low);
            condition.mean_high = self.level(condition.mean_high);
            condition.sd = self.spread(condition.sd);
            condition.se = self.spread(condition.se);
            condition.mean_half_width = self.spread(condition.mean_half_width);
        }
        fit.grand_mean = self.level(fit.grand_mean);
        fit.pooled_sd = self.spread(fit.pooled_sd);
        for (hi, lo) in &mut fit.mean_gaps {
            (*hi, *lo) = (self.spread(*hi), self.spread(*lo));
        }
        for line in &mut fit.anova {
            line.ss = self.square(line.ss);
            line.ms = line.ms.map(|ms| self.square(ms));
        }
        for pair in &mut fit.pairs {
            pair.difference = self.spread(pair.difference);
            pair.se = self.spread(pair.se);
            pair.low = self.spread(pair.low);
            pair.high = self.spread(pair.high);
        }
        for contrast in &mut fit.contrasts {
            let total: f64 = contrast.coefficients.iter().sum();
            contrast.estimate = self.combination(contrast.estimate, total);
            contrast.low = self.combination(contrast.low, total);
            contrast.high = self.combination(contrast.high, total);
            contrast.se = self.spread(contrast.se);
        }
        for sorted in &mut fit.sorted_values {
            for value in sorted.iter_mut() {
                *value = self.level(*value);
            }
        }
        if let Some(blocks) = fit.blocks.as_mut() {
            blocks.ss = self.square(blocks.ss);
            for shift in &mut blocks.shifts {
                shift.shift = self.spread(shift.shift);
            }
        }
    }
}

/// Which condition and block each value belongs to.
#[derive(Clone, Copy)]
struct Layout<'a> {
    condition_names: &'a [String],
    group_of_value: &'a [u32],
    blocks: &'a Blocks<'a>,
}

/// [`fit_one_way_in_blocks`] on values already centred and scaled (squares of them are
/// finite and normal), every figure in their unit; a value without a valid condition or
/// block is NaN.
fn fit_scaled(
    layout: &Layout<'_>,
    values: &[f64],
    confidence: f64,
    contrasts: &[Contrast],
) -> Result<OneWayFit, BlockedFitError> {
    let Layout {
        condition_names,
        group_of_value,
        blocks,
    } = *layout;
    let n_conditions = condition_names.len();
    let n_blocks = blocks.names.len();
    let factor = blocks.factor.to_string();
    // The caller has made NaN every value without a valid condition and block.
    let usable = |index: usize| values[index].is_finite();
    let n_values = values.len().min(group_of_value.len());

    // Cell and block summaries (exact decimal or compensated sums).
    let mut cells = GroupAccumulator::new(n_conditions * n_blocks);
    let mut by_block = GroupAccumulator::new(n_blocks);
    for index in (0..n_values).filter(|&index| usable(index)) {
        let (condition, block) = (group_of_value[index] as usize, blocks.block_of_value[index] as usize);
        cells
            .push(condition * n_blocks + block, values[index])
            .map_err(OneWayError::from)?;
        by_block.push(block, values[index]).map_err(OneWayError::from)?;
    }
    let cells = cells.finish();
    let block_stats = by_block.finish();
    let kept_blocks: Vec<usize> = (0..n_blocks).filter(|&block| block_stats[block].n > 0).collect();
    if kept_blocks.len() < 2 {
        return Err(BlockedFitError::OneBlock {
            factor,
            found: kept_blocks.len(),
        });
    }
    let kept_conditions: Vec<usize> = (0..n_conditions)
        .filter(|&condition| (0..n_blocks).any(|block| cells[condition * n_blocks + block].n > 0))
        .collect();
    if kept_conditions.len() < 2 {
        return Err(OneWayError::TooFewConditions {
            found: kept_conditions.len(),
        }
        .into());
    }
    let block_sums = oneway_sums(&block_stats).map_err(OneWayError::from)?;
    let grand_mean = block_sums.grand_mean;
    let (k, b) = (kept_conditions.len(), kept_blocks.len());
    let n_parameters = k + b - 1;
    let error_df = block_sums.n_total as f64 - n_parameters as f64;
    if error_df <= 0.0 {
        return Err(BlockedFitError::NoErrorLeft { factor });
    }

    // Weighted least squares on the cell means: intercept, conditions and blocks
    // coded against their first kept level.
    let filled: Vec<(usize, usize, f64, f64)> = kept_conditions
        .iter()
        .enumerate()
        .flat_map(|(condition_position, &condition)| {
            let cells = &cells;
            kept_blocks
                .iter()
                .enumerate()
                .filter_map(move |(block_position, &block)| {
                    let cell = &cells[condition * n_blocks + block];
                    (cell.n > 0).then_some((
                        condition_position,
                        block_position,
                        cell.n as f64,
                        cell.mean - grand_mean,
                    ))
                })
        })
        .collect();
    let coded_row = |condition_position: usize, block_position: usize| {
        let mut row = vec![0.0; n_parameters];
        row[0] = 1.0;
        if condition_position > 0 {
            row[condition_position] = 1.0;
        }
        if block_position > 0 {
            row[k - 1 + block_position] = 1.0;
        }
        row
    };
    let mut design = DMatrix::<f64>::zeros(filled.len(), n_parameters);
    let mut response = DVector::<f64>::zeros(filled.len());
    for (row, &(condition_position, block_position, count, centred_mean)) in filled.iter().enumerate() {
        let weight = count.sqrt();
        for (column, value) in coded_row(condition_position, block_position).into_iter().enumerate() {
            design[(row, column)] = weight * value;
        }
        response[row] = weight * centred_mean;
    }
    let svd = design.clone().svd(true, true);
    let largest = svd.singular_values.max();
    let rank = svd
        .singular_values
        .iter()
        .filter(|&&value| value > largest * RANK_TOLERANCE)
        .count();
    if rank < n_parameters {
        return Err(BlockedFitError::Confounded { factor });
    }
    let (Some(u), Some(v_t)) = (svd.u.as_ref(), svd.v_t.as_ref()) else {
        return Err(BlockedFitError::Confounded { factor });
    };
    // θ = V Σ⁻¹ Uᵀ y and (XᵀWX)⁻¹ = V Σ⁻² Vᵀ.
    let projected = u.transpose() * &response;
    let mut coefficients = DVector::<f64>::zeros(n_parameters);
    let mut inverse = DMatrix::<f64>::zeros(n_parameters, n_parameters);
    for (index, &singular) in svd.singular_values.iter().enumerate() {
        let direction = v_t.row(index).transpose();
        coefficients += &direction * (projected[index] / singular);
        inverse += &direction * direction.transpose() / (singular * singular);
    }

    // Block shifts about their average (the first kept block's effect is zero).
    let block_effects: Vec<f64> = (0..b)
        .map(|position| {
            if position == 0 {
                0.0
            } else {
                coefficients[k - 1 + position]
            }
        })
        .collect();
    let average_effect = block_effects.iter().sum::<f64>() / b as f64;
    let mut shift_of_block = vec![f64::NAN; n_blocks];
    for (position, &block) in kept_blocks.iter().enumerate() {
        shift_of_block[block] = block_effects[position] - average_effect;
    }

    // Covariance of the adjusted means: L_c = [1, e_c, 1/b for each block column].
    let mean_vector = |condition_position: usize| {
        let mut vector = DVector::<f64>::zeros(n_parameters);
        vector[0] = 1.0;
        if condition_position > 0 {
            vector[condition_position] = 1.0;
        }
        for position in 1..b {
            vector[k - 1 + position] = 1.0 / b as f64;
        }
        vector
    };
    let vectors: Vec<DVector<f64>> = (0..k).map(mean_vector).collect();
    let mut mean_covariance = vec![0.0; k * k];
    for first in 0..k {
        let product = &inverse * &vectors[first];
        for second in 0..k {
            mean_covariance[first * k + second] = vectors[second].dot(&product);
        }
    }

    // The one-way fit of the values with their block shifts taken off.
    let adjusted: Vec<f64> = (0..values.len())
        .map(|index| {
            if index < n_values && usable(index) {
                values[index] - shift_of_block[blocks.block_of_value[index] as usize]
            } else {
                f64::NAN
            }
        })
        .collect();
    let shared = SharedError {
        removed_df: (b - 1) as f64,
        mean_covariance: mean_covariance.clone(),
    };
    let mut fit = fit_one_way_sharing(
        condition_names,
        group_of_value,
        &adjusted,
        confidence,
        contrasts,
        Some(&shared),
    )?;

    // The ANOVA: blocks first, conditions adjusted for blocks, error, total.
    let ss_total = block_sums.ss_total;
    let ss_blocks = block_sums.ss_between;
    let ss_error = fit.anova[1].ss;
    let ss_conditions = (ss_total - ss_blocks - ss_error).max(0.0);
    let df_conditions = (k - 1) as f64;
    let ms_error = ss_error / error_df;
    let ms_conditions = ss_conditions / df_conditions;
    let (f, p) = if ms_error > 0.0 {
        let f = ms_conditions / ms_error;
        (f, dist::f_sf(f, df_conditions, error_df).map_err(OneWayError::from)?)
    } else {
        (f64::NAN, f64::NAN)
    };
    fit.anova = vec![
        AnovaLine {
            source: "between conditions (blocks taken out)".into(),
            df: df_conditions,
            ss: ss_conditions,
            ms: Some(ms_conditions),
            f: Some(f),
            p: Some(p),
        },
        AnovaLine {
            source: format!("between blocks ({})", blocks.factor),
            df: (b - 1) as f64,
            ss: ss_blocks,
            ms: Some(ss_blocks / (b - 1) as f64),
            f: None,
            p: None,
        },
        AnovaLine {
            source: "within conditions and blocks".into(),
            df: error_df,
            ss: ss_error,
            ms: Some(ms_error),
            f: None,
            p: None,
        },
        AnovaLine {
            source: "total".into(),
            df: block_sums.n_total as f64 - 1.0,
            ss: ss_total,
            ms: None,
            f: None,
            p: None,
        },
    ];
    // Shares of the variation left once the blocks are out (partial eta² and omega²).
    let partial = ss_conditions + ss_error;
    fit.r_squared = if partial > 0.0 {
        ss_conditions / partial
    } else {
        f64::NAN
    };
    fit.eta_squared = fit.r_squared;
    fit.omega_squared = if partial > 0.0 && ms_error.is_finite() {
        (ss_conditions - df_conditions * ms_error)
            / (ss_conditions + (block_sums.n_total as f64 - df_conditions) * ms_error)
    } else {
        f64::NAN
    };
    fit.grand_mean = grand_mean;
    fit.blocks = Some(BlocksRemoved {
        factor: blocks.factor.to_string(),
        df: (b - 1) as f64,
        ss: ss_blocks,
        shifts: kept_blocks
            .iter()
            .map(|&block| BlockShift {
                block: blocks.names[block].clone(),
                shift: shift_of_block[block],
            })
            .collect(),
        mean_covariance,
        n_conditions: k,
    });
    Ok(fit)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::analysis::comparisons::{pooled_pairs, PairMethod};

    /// Invented trial: cure time (min) of four recipes, each run once on each of five days.
    const TRIAL: [(&str, &str, f64); 20] = [
        ("R1", "D1", 41.2),
        ("R2", "D1", 43.9),
        ("R3", "D1", 40.1),
        ("R4", "D1", 45.3),
        ("R1", "D2", 42.8),
        ("R2", "D2", 45.1),
        ("R3", "D2", 41.7),
        ("R4", "D2", 46.0),
        ("R1", "D3", 39.9),
        ("R2", "D3", 42.6),
        ("R3", "D3", 39.0),
        ("R4", "D3", 44.1),
        ("R1", "D4", 43.5),
        ("R2", "D4", 46.3),
        ("R3", "D4", 42.2),
        ("R4", "D4", 47.4),
        ("R1", "D5", 40.6),
        ("R2", "D5", 43.0),
        ("R3", "D5", 40.4),
        ("R4", "D5", 44.8),
    ];

    struct Laid {
        conditions: Vec<String>,
        days: Vec<String>,
        groups: Vec<u32>,
        day_of: Vec<u32>,
        values: Vec<f64>,
    }

    fn lay_out(left_out: &[(&str, &str)]) -> Laid {
        let conditions: Vec<String> = ["R1", "R2", "R3", "R4"].iter().map(|name| name.to_string()).collect();
        let days: Vec<String> = ["D1", "D2", "D3", "D4", "D5"]
            .iter()
            .map(|name| name.to_string())
            .collect();
        let mut laid = Laid {
            conditions,
            days,
            groups: Vec::new(),
            day_of: Vec::new(),
            values: Vec::new(),
        };
        for (recipe, day, value) in TRIAL {
            if left_out.contains(&(recipe, day)) {
                continue;
            }
            laid.groups
                .push(laid.conditions.iter().position(|name| name == recipe).unwrap() as u32);
            laid.day_of
                .push(laid.days.iter().position(|name| name == day).unwrap() as u32);
            laid.values.push(value);
        }
        laid
    }

    fn fit(laid: &Laid) -> OneWayFit {
        let blocks = Blocks {
            factor: "Day",
            names: &laid.days,
            block_of_value: &laid.day_of,
        };
        fit_one_way_in_blocks(&laid.conditions, &laid.groups, &blocks, &laid.values, 0.95, &[]).expect("fits")
    }

    fn log_relative_error(got: f64, want: f64) -> f64 {
        if got == want {
            16.0
        } else {
            -((got - want).abs() / want.abs()).log10()
        }
    }

    fn check(what: &str, got: f64, want: f64, digits: f64) {
        let lre = log_relative_error(got, want);
        assert!(lre >= digits, "{what}: got {got}, want {want} (LRE {lre:.1})");
    }

    /// Balanced: statsmodels 0.15.0 `anova_lm(ols("y ~ C(b) + C(c)"), typ=1)`: SS blocks
    /// 30.29199999999987, SS recipes 75.42549999999981, SS residual 1.051999999999992 on
    /// 12 df, F 286.78897338403186, p 1.9750225182681443e-11; least-squares means 41.6,
    /// 44.18, 40.68, 45.52; SE of every difference 0.1872609587358411; scipy 1.17.1
    /// `studentized_range.sf(|d|/se·√2, 4, 12)` for R1-R3 0.0017537499739570528 and
    /// R2-R4 5.932120283613784e-05.
    #[test]
    fn balanced_blocks_match_reference_library() {
        let fit = fit(&lay_out(&[]));
        check("SS blocks", fit.anova[1].ss, 30.29199999999987, 12.0);
        check("SS recipes", fit.anova[0].ss, 75.42549999999981, 12.0);
        check("SS error", fit.anova[2].ss, 1.051999999999992, 12.0);
        assert_eq!(fit.anova[2].df, 12.0);
        assert_eq!(fit.pooled_df, 12.0);
        check("F", fit.anova[0].f.unwrap(), 286.78897338403186, 11.0);
        check("p", fit.anova[0].p.unwrap(), 1.9750225182681443e-11, 10.0);
        for (condition, want) in fit.conditions.iter().zip([41.6, 44.18, 40.68, 45.52]) {
            check("least-squares mean", condition.mean, want, 12.0);
        }
        for pair in &fit.pairs {
            check("SE of a difference", pair.se, 0.1872609587358411, 12.0);
        }
        let family = pooled_pairs(&fit, PairMethod::TukeyKramer, 0.95).expect("family");
        // Away from the far tail (where scipy's numerical integration and ours part after
        // a few digits, a matter of the studentized-range kernel, not of the blocks).
        check(
            "Tukey-Kramer p R1-R3",
            family.pairs[1].p_adjusted,
            0.0017537499739570528,
            8.0,
        );
        check(
            "Tukey-Kramer p R2-R4",
            family.pairs[4].p_adjusted,
            5.932120283613784e-05,
            7.0,
        );
        let blocks = fit.blocks.as_ref().expect("blocks recorded");
        let shifts: f64 = blocks.shifts.iter().map(|shift| shift.shift).sum();
        assert!(shifts.abs() < 1e-12, "shifts sum to zero, got {shifts}");
    }

    /// Unbalanced (R1 on D1, R2 on D3 and R4 on D5 missing): statsmodels 0.15.0 as above:
    /// SS blocks 37.288039215686226, SS recipes (adjusted for blocks) 61.796471861471915,
    /// SS residual 1.0401948051947978 on 9 df, F 178.22566951744946, p
    /// 2.4824182576518324e-08; least-squares means 41.61246753246753, 44.176103896103896,
    /// 40.679999999999986, 45.49428571428571; SE of R1-R2 0.2510818778919445, R1-R3
    /// 0.23245664924099996; scipy 1.17.1 Tukey-Kramer p R1-R3 0.013348762572367057.
    #[test]
    fn unbalanced_blocks_match_reference_library() {
        let fit = fit(&lay_out(&[("R1", "D1"), ("R2", "D3"), ("R4", "D5")]));
        check("SS blocks", fit.anova[1].ss, 37.288039215686226, 11.0);
        check("SS recipes", fit.anova[0].ss, 61.796471861471915, 11.0);
        check("SS error", fit.anova[2].ss, 1.0401948051947978, 11.0);
        assert_eq!(fit.pooled_df, 9.0);
        check("F", fit.anova[0].f.unwrap(), 178.22566951744946, 10.0);
        check("p", fit.anova[0].p.unwrap(), 2.4824182576518324e-08, 9.0);
        let want_means = [
            41.61246753246753,
            44.176103896103896,
            40.679999999999986,
            45.49428571428571,
        ];
        for (condition, want) in fit.conditions.iter().zip(want_means) {
            check("least-squares mean", condition.mean, want, 12.0);
        }
        check("SE R1-R2", fit.pairs[0].se, 0.2510818778919445, 11.0);
        check("SE R1-R3", fit.pairs[1].se, 0.23245664924099996, 11.0);
        let family = pooled_pairs(&fit, PairMethod::TukeyKramer, 0.95).expect("family");
        check(
            "Tukey-Kramer p R1-R3",
            family.pairs[1].p_adjusted,
            0.013348762572367057,
            8.0,
        );
    }

    /// A design where two conditions were each run only in a block of their own cannot
    /// separate them from their blocks (common practice: a disconnected design).
    #[test]
    fn conditions_alone_in_their_blocks_are_refused() {
        let conditions: Vec<String> = vec!["A".into(), "B".into()];
        let days: Vec<String> = vec!["D1".into(), "D2".into()];
        let groups = [0, 0, 0, 1, 1, 1];
        let day_of = [0, 0, 0, 1, 1, 1];
        let values = [1.0, 1.2, 0.9, 2.0, 2.1, 1.8];
        let blocks = Blocks {
            factor: "Day",
            names: &days,
            block_of_value: &day_of,
        };
        let error = fit_one_way_in_blocks(&conditions, &groups, &blocks, &values, 0.95, &[]).unwrap_err();
        assert!(matches!(error, BlockedFitError::Confounded { .. }), "{error}");
    }
}
