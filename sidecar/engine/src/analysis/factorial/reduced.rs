//! The reduced model of the active effects (general or two-level), its coefficients, the
//! best settings found and the prediction there.

use std::collections::{BTreeMap, BTreeSet};

use nalgebra::{DMatrix, DVector};

use crate::analysis::verdict::round_for_text;
use crate::options::Direction;
use crate::stats::accumulate::{binary_exponent, centre_values, scale_by_power_of_two, GroupAccumulator};
use crate::stats::dist::t_sf;
use crate::stats::linear_model::{CellSummary, FactorialFit};
use crate::stats::two_level::Word;

use super::coding::{Coding, UsedFactor};
use super::kway::t_multiplier;
use super::readings::better;
use super::residuals::{residual_check, residual_check_of};
use super::results::{CoefficientLine, Prediction, ReducedModel, TwoLevelOutcome};
use super::screening::word_names;
use super::{FactorialData, MAX_SETTINGS_SEARCHED};

pub(super) struct ReducedInput<'a> {
    pub(super) table: &'a FactorialData<'a>,
    pub(super) used: &'a [UsedFactor],
    pub(super) cells: &'a [CellSummary],
    pub(super) cell_of_record: &'a [u32],
    pub(super) model_records: &'a [usize],
    pub(super) fit: Option<&'a FactorialFit>,
    pub(super) two_level: Option<&'a TwoLevelOutcome>,
    pub(super) coding: Option<&'a Coding>,
    pub(super) treatments: &'a [usize],
    pub(super) centre_records: &'a [usize],
    pub(super) confidence: f64,
    pub(super) direction: Option<Direction>,
}

/// A column of the reduced model: a term (factor positions in `used`) in sum-to-zero
/// coding, or a two-level word on the coded runs, or the centre-point indicator.
#[derive(Clone)]
pub(super) enum Column {
    Intercept,
    /// term factors (positions in `used`) and the level combination index within it
    Coded {
        factors: Vec<usize>,
        offset: usize,
    },
    Word(Word),
    Curvature,
}

/// A weighted least-squares fit to rows (one per cell) with `n` weights.
pub(super) struct RowFit {
    pub(super) coefficients: DVector<f64>,
    /// R of the QR of the weighted matrix
    pub(super) r: DMatrix<f64>,
    /// Residual sum of squares divided by `4^scale_exponent`.
    pub(super) residual_ss_scaled: f64,
    pub(super) residual_df: usize,
    /// Corrected total sum of squares divided by `4^scale_exponent`.
    pub(super) total_ss_scaled: f64,
    /// The power of two the deviations were divided by before squaring.
    pub(super) scale_exponent: i32,
}

impl RowFit {
    /// Standard error factor: `|R^-T x|`, so that `se = s |R^-T x|`.
    fn unscaled_se(&self, row: &DVector<f64>) -> Option<f64> {
        let solution = self.r.transpose().solve_lower_triangular(row)?;
        Some(solution.norm())
    }

    /// The residual standard deviation in the data's units, from the scaled sums (right
    /// whenever it is itself a finite number); `None` without residual df.
    pub(super) fn sigma(&self) -> Option<f64> {
        (self.residual_df > 0).then(|| {
            scale_by_power_of_two(
                (self.residual_ss_scaled / self.residual_df as f64).sqrt(),
                i64::from(self.scale_exponent),
            )
        })
    }

    /// `1 - residual / total` from the scaled sums; `None` without spread.
    pub(super) fn r_squared(&self) -> Option<f64> {
        (self.total_ss_scaled > 0.0).then(|| 1.0 - self.residual_ss_scaled / self.total_ss_scaled)
    }
}

/// Weighted least squares by Householder QR: rows `x_c` (the first column the
/// intercept), weights `n_c`, cell means as deviations from `centre` (exactly
/// accumulated, see `stats::accumulate::centre_values`) and centred sums held as
/// `(sum / 4^e, e)`. The fit runs on the deviations, so a large offset costs no digits;
/// they are divided by a power of two near the largest mean or within-cell spread before
/// squaring, so no square overflows or underflows at any magnitude; `centre` is added
/// back through the intercept. `None` when the columns are dependent or there are too
/// few cells.
pub(super) fn fit_rows(
    rows: &[Vec<f64>],
    counts: &[usize],
    centred_means: &[f64],
    centred: &[(f64, i32)],
    centre: f64,
) -> Option<RowFit> {
    let n_columns = rows.first()?.len();
    if rows.len() < n_columns {
        return None;
    }
    let exponent = centred_means
        .iter()
        .map(|mean| (mean.abs(), 0))
        .chain(centred.iter().map(|&(ss, e)| (ss.sqrt(), e)))
        .filter(|(value, _)| *value > 0.0 && value.is_finite())
        .map(|(value, shift)| binary_exponent(value) + shift)
        .max()
        .unwrap_or(0)
        .clamp(-1000, 1000);
    let down = |value: f64| scale_by_power_of_two(value, -i64::from(exponent));
    let means: Vec<f64> = centred_means.iter().map(|&mean| down(mean)).collect();
    let mut matrix = DMatrix::<f64>::zeros(rows.len(), n_columns);
    let mut response = DVector::<f64>::zeros(rows.len());
    for (index, row) in rows.iter().enumerate() {
        let weight = (counts[index] as f64).sqrt();
        for (column, value) in row.iter().enumerate() {
            matrix[(index, column)] = weight * value;
        }
        response[index] = weight * means[index];
    }
    let column_norms: Vec<f64> = (0..n_columns).map(|column| matrix.column(column).norm()).collect();
    let qr = matrix.clone().qr();
    let r = qr.r();
    for column in 0..n_columns {
        let diagonal = r[(column, column)].abs();
        if diagonal.is_nan() || diagonal <= 1e-9 * column_norms[column].max(f64::MIN_POSITIVE) {
            return None;
        }
    }
    let q_transpose_y = qr.q().transpose() * &response;
    let scaled_coefficients = r.solve_upper_triangular(&q_transpose_y)?;
    let fitted = &matrix * &scaled_coefficients;
    let mut coefficients = scaled_coefficients.map(|value| scale_by_power_of_two(value, i64::from(exponent)));
    coefficients[0] += centre;
    let within: f64 = centred
        .iter()
        .map(|&(ss, e)| scale_by_power_of_two(ss, 2 * (i64::from(e) - i64::from(exponent))))
        .sum();
    let lack: f64 = (&response - fitted).norm_squared();
    let n_total: usize = counts.iter().sum();
    let grand = counts.iter().zip(&means).map(|(&n, &m)| n as f64 * m).sum::<f64>() / n_total as f64;
    let between: f64 = counts
        .iter()
        .zip(&means)
        .map(|(&n, &m)| n as f64 * (m - grand).powi(2))
        .sum();
    Some(RowFit {
        coefficients,
        r,
        residual_ss_scaled: within + lack,
        residual_df: n_total.saturating_sub(n_columns),
        total_ss_scaled: within + between,
        scale_exponent: exponent,
    })
}

pub(super) fn coding_value(n_levels: usize, level: usize, column: usize) -> f64 {
    if level == n_levels - 1 {
        -1.0
    } else if level == column {
        1.0
    } else {
        0.0
    }
}

/// Value of a sum-to-zero column of a term at a combination of levels.
pub(super) fn coded_value(used: &[UsedFactor], factors: &[usize], offset: usize, levels: &[usize]) -> f64 {
    // offset enumerates the term's columns, last factor fastest.
    let mut rest = offset;
    let mut value = 1.0;
    for &factor in factors.iter().rev() {
        let width = used[factor].level_names.len() - 1;
        let column = rest % width;
        rest /= width;
        value *= coding_value(used[factor].level_names.len(), levels[factor], column);
    }
    value
}

pub(super) fn subsets(factors: &[usize]) -> Vec<Vec<usize>> {
    let mut out = Vec::new();
    for mask in 1u32..(1u32 << factors.len()) {
        out.push(
            factors
                .iter()
                .enumerate()
                .filter(|(position, _)| mask & (1 << position) != 0)
                .map(|(_, &f)| f)
                .collect(),
        );
    }
    out
}

pub(super) fn reduced_model(input: &ReducedInput<'_>) -> Option<ReducedModel> {
    let alpha = 1.0 - input.confidence;
    match input.two_level.filter(|two| two.grand_mean.is_some()) {
        Some(two) => reduced_two_level(input, two, alpha),
        None => reduced_general(input, alpha),
    }
}

/// Columns and names for a set of hierarchical terms in sum-to-zero coding.
pub(super) fn general_columns(used: &[UsedFactor], terms: &[Vec<usize>]) -> (Vec<Column>, Vec<String>) {
    let mut columns = vec![Column::Intercept];
    let mut names = vec!["intercept".to_string()];
    for term in terms {
        let widths: Vec<usize> = term.iter().map(|&f| used[f].level_names.len() - 1).collect();
        let total: usize = widths.iter().product();
        for offset in 0..total {
            columns.push(Column::Coded {
                factors: term.clone(),
                offset,
            });
            // Name by the levels of each factor's column.
            let mut rest = offset;
            let mut parts = Vec::new();
            for (position, &factor) in term.iter().enumerate().rev() {
                let column = rest % widths[position];
                rest /= widths[position];
                parts.push(format!("{}[{}]", used[factor].name, used[factor].level_names[column]));
            }
            parts.reverse();
            names.push(parts.join(":"));
        }
    }
    (columns, names)
}

pub(super) fn reduced_general(input: &ReducedInput<'_>, alpha: f64) -> Option<ReducedModel> {
    let fit = input.fit?;
    let used = input.used;
    let index_of = |name: &str| -> Option<Vec<usize>> {
        fit.terms
            .iter()
            .find(|term| term.name == name)
            .map(|term| term.factors.clone())
    };
    let mut active: Vec<Vec<usize>> = Vec::new();
    let mut active_names = Vec::new();
    for row in &fit.type_iii.rows {
        let Some(factors) = index_of(&row.term) else { continue };
        if factors.iter().all(|&f| !used[f].is_block) && row.p_value.is_some_and(|p| p < alpha) {
            active_names.push(row.term.clone());
            active.push(factors);
        }
    }
    let mut terms: BTreeSet<(usize, Vec<usize>)> = BTreeSet::new();
    for (position, factor) in used.iter().enumerate() {
        if factor.is_block {
            terms.insert((0, vec![position]));
        }
    }
    for term in &active {
        for subset in subsets(term) {
            terms.insert((subset.len(), subset));
        }
    }
    let terms: Vec<Vec<usize>> = terms.into_iter().map(|(_, term)| term).collect();
    let (columns, names) = general_columns(used, &terms);
    let rows: Vec<Vec<f64>> = input
        .cells
        .iter()
        .map(|cell| column_row(&columns, used, &cell.levels, None, false))
        .collect();
    let counts: Vec<usize> = input.cells.iter().map(|c| c.n).collect();
    let means: Vec<f64> = input.cells.iter().map(|c| c.centred_mean).collect();
    let centred: Vec<(f64, i32)> = input
        .cells
        .iter()
        .map(|c| (c.centred_ss_scaled, c.scale_exponent))
        .collect();
    // The cells hold means about one centre (`cells::summarise`); the centre is recovered
    // from the first cell to within half a unit in the last place of the data.
    let centre = input.cells.first().map_or(0.0, |cell| cell.mean - cell.centred_mean);
    let row_fit = fit_rows(&rows, &counts, &means, &centred, centre)?;
    let sigma = row_fit.sigma();
    let fitted_cells: Vec<f64> = rows.iter().map(|row| dot(row, &row_fit.coefficients)).collect();
    let residual_check = residual_check(input, &fitted_cells, sigma);
    // Best settings over the treatment factors in the model (blocks averaged out).
    let model_factors: Vec<usize> = {
        let set: BTreeSet<usize> = terms.iter().flatten().copied().filter(|&f| !used[f].is_block).collect();
        set.into_iter().collect()
    };
    let observed: BTreeSet<Vec<usize>> = input
        .cells
        .iter()
        .map(|cell| model_factors.iter().map(|&f| cell.levels[f]).collect())
        .collect();
    let settings_of = |choice: &[usize]| -> Vec<(String, String)> {
        model_factors
            .iter()
            .zip(choice)
            .map(|(&f, &level)| (used[f].name.clone(), used[f].level_names[level].clone()))
            .collect()
    };
    let found = input.direction.and_then(|direction| {
        best_setting(
            &model_factors
                .iter()
                .map(|&f| used[f].level_names.len())
                .collect::<Vec<_>>(),
            direction,
            |choice| {
                let mut levels = vec![usize::MAX; used.len()];
                for (&factor, &level) in model_factors.iter().zip(choice) {
                    levels[factor] = level;
                }
                column_row(&columns, used, &levels, None, false)
            },
            |choice| observed.contains(choice),
            &row_fit,
        )
    });
    let predict = |(choice, row, mean): (Vec<usize>, Vec<f64>, f64), was_run: bool| {
        prediction(
            settings_of(&choice),
            mean,
            &row,
            &row_fit,
            sigma,
            input.confidence,
            was_run,
        )
    };
    let (best, outside_trial) = best_and_outside(found, predict);
    Some(ReducedModel {
        active_terms: active_names,
        terms: terms
            .iter()
            .map(|term| term.iter().map(|&f| used[f].name.clone()).collect::<Vec<_>>().join(":"))
            .collect(),
        rule: format!(
            "terms with p below {} in the Type III table, with every term they contain; blocks always kept",
            round_for_text(alpha, 3)
        ),
        coefficients: coefficient_lines(&names, &row_fit, sigma),
        residual_sd: sigma,
        residual_df: row_fit.residual_df,
        r_squared: row_fit.r_squared(),
        residual_check,
        best,
        outside_trial,
    })
}

pub(super) fn dot(row: &[f64], coefficients: &DVector<f64>) -> f64 {
    row.iter().zip(coefficients.iter()).map(|(a, b)| a * b).sum()
}

/// One design row. `levels[f] == usize::MAX` means "averaged over" (a block, or a factor
/// outside the model): its sum-to-zero columns are then 0. `coded` holds ±1/0 values of
/// the treatment factors for word columns.
pub(super) fn column_row(
    columns: &[Column],
    used: &[UsedFactor],
    levels: &[usize],
    coded: Option<&[f64]>,
    centre: bool,
) -> Vec<f64> {
    columns
        .iter()
        .map(|column| match column {
            Column::Intercept => 1.0,
            Column::Coded { factors, offset } => {
                if factors.iter().any(|&f| levels.get(f).is_none_or(|&l| l == usize::MAX)) {
                    0.0
                } else {
                    coded_value(used, factors, *offset, levels)
                }
            }
            Column::Word(word) => match coded {
                Some(values) => word
                    .factors()
                    .iter()
                    .map(|&f| values.get(f).copied().unwrap_or(0.0))
                    .product(),
                None => 0.0,
            },
            Column::Curvature => {
                if centre {
                    1.0
                } else {
                    0.0
                }
            }
        })
        .collect()
}

pub(super) fn coefficient_lines(names: &[String], fit: &RowFit, sigma: Option<f64>) -> Vec<CoefficientLine> {
    names
        .iter()
        .enumerate()
        .map(|(index, name)| {
            let mut unit = DVector::<f64>::zeros(names.len());
            unit[index] = 1.0;
            let se = sigma.zip(fit.unscaled_se(&unit)).map(|(s, u)| s * u);
            let estimate = fit.coefficients[index];
            let t_value = se.filter(|se| *se > 0.0).map(|se| estimate / se);
            let p_value = t_value.and_then(|t| {
                t_sf(t.abs(), fit.residual_df as f64)
                    .ok()
                    .map(|tail| (2.0 * tail).min(1.0))
            });
            CoefficientLine {
                name: name.clone(),
                estimate,
                se,
                t_value,
                p_value,
            }
        })
        .collect()
}

/// The best prediction among the combinations run, and the best over every combination
/// when that one was not run.
pub(super) struct BestFound {
    pub(super) within: Option<(Vec<usize>, Vec<f64>, f64)>,
    pub(super) outside: Option<(Vec<usize>, Vec<f64>, f64)>,
}

/// The predictions at the best combination run and at a better one not run.
fn best_and_outside(
    found: Option<BestFound>,
    predict: impl Fn((Vec<usize>, Vec<f64>, f64), bool) -> Prediction,
) -> (Option<Prediction>, Option<Prediction>) {
    match found {
        Some(found) => (
            found.within.map(|best| predict(best, true)),
            found.outside.map(|best| predict(best, false)),
        ),
        None => (None, None),
    }
}

/// Searches every combination of the given level counts for the best prediction, among
/// the combinations `was_run` accepts and over all of them.
pub(super) fn best_setting(
    level_counts: &[usize],
    direction: Direction,
    row_of: impl Fn(&[usize]) -> Vec<f64>,
    was_run: impl Fn(&[usize]) -> bool,
    fit: &RowFit,
) -> Option<BestFound> {
    let total = level_counts
        .iter()
        .try_fold(1usize, |product, &count| product.checked_mul(count))
        .filter(|&total| total <= MAX_SETTINGS_SEARCHED)?;
    let mut within: Option<(Vec<usize>, Vec<f64>, f64)> = None;
    let mut overall: Option<(Vec<usize>, Vec<f64>, f64, bool)> = None;
    let mut choice = vec![0usize; level_counts.len()];
    for _ in 0..total {
        let row = row_of(&choice);
        let mean = dot(&row, &fit.coefficients);
        let run = was_run(&choice);
        if run
            && within
                .as_ref()
                .is_none_or(|(_, _, incumbent)| better(direction, mean, *incumbent))
        {
            within = Some((choice.clone(), row.clone(), mean));
        }
        if overall
            .as_ref()
            .is_none_or(|(_, _, incumbent, _)| better(direction, mean, *incumbent))
        {
            overall = Some((choice.clone(), row, mean, run));
        }
        for position in (0..choice.len()).rev() {
            choice[position] += 1;
            if choice[position] < level_counts[position] {
                break;
            }
            choice[position] = 0;
        }
    }
    let outside = overall
        .filter(|(_, _, _, run)| !run)
        .map(|(choice, row, mean, _)| (choice, row, mean));
    Some(BestFound { within, outside })
}

pub(super) fn prediction(
    settings: Vec<(String, String)>,
    mean: f64,
    row: &[f64],
    fit: &RowFit,
    sigma: Option<f64>,
    confidence: f64,
    was_run: bool,
) -> Prediction {
    let multiplier = t_multiplier(confidence, fit.residual_df);
    let unscaled = fit.unscaled_se(&DVector::from_column_slice(row));
    let (mean_interval, single_run_interval) = match (sigma, multiplier, unscaled) {
        (Some(s), Some(t), Some(u)) => {
            let mean_half = t * s * u;
            let single_half = t * s * (1.0 + u * u).sqrt();
            (
                Some((mean - mean_half, mean + mean_half)),
                Some((mean - single_half, mean + single_half)),
            )
        }
        _ => (None, None),
    };
    Prediction {
        settings,
        mean,
        mean_interval,
        single_run_interval,
        was_run,
    }
}

pub(super) fn reduced_two_level(input: &ReducedInput<'_>, two: &TwoLevelOutcome, alpha: f64) -> Option<ReducedModel> {
    let coding = input.coding?;
    let table = input.table;
    let n_treatments = input.treatments.len();
    let names: Vec<String> = input
        .treatments
        .iter()
        .map(|&f| table.factors[f].name.to_string())
        .collect();
    let active: Vec<Word> = two
        .effects
        .iter()
        .filter(|effect| effect.active)
        .filter_map(|effect| Word::parse(&effect.name).ok())
        .collect();
    // Hierarchy: every sub-word of an active word, each alias chain once.
    let mut words: BTreeSet<Word> = BTreeSet::new();
    for word in &active {
        let factors = word.factors();
        for subset in subsets(&factors) {
            if let Ok(sub) = Word::from_factors(&subset) {
                words.insert(sub);
            }
        }
    }
    let curvature_active = two
        .curvature
        .as_ref()
        .is_some_and(|c| c.p_value.is_some_and(|p| p < alpha));
    let mut columns = vec![Column::Intercept];
    let mut column_names = vec!["intercept".to_string()];
    for word in &words {
        columns.push(Column::Word(*word));
        column_names.push(format!("{} ({})", word, word_names(*word, &names)));
    }
    if curvature_active {
        columns.push(Column::Curvature);
        column_names.push("centre points (curvature)".into());
    }
    // Blocks enter as sum-to-zero columns, so a shift between blocks is not error.
    let block_positions: Vec<usize> = (0..input.used.len()).filter(|&f| input.used[f].is_block).collect();
    let block_terms: Vec<Vec<usize>> = block_positions.iter().map(|&f| vec![f]).collect();
    let (block_columns, block_names) = general_columns(input.used, &block_terms);
    columns.extend(block_columns.into_iter().skip(1));
    column_names.extend(block_names.into_iter().skip(1));
    let block_levels_of = |record: usize| -> Vec<usize> {
        let mut levels = vec![usize::MAX; input.used.len()];
        for &f in &block_positions {
            let factor = &input.used[f];
            levels[f] = factor
                .remap
                .get(table.factors[factor.table_index].level_of_record[record] as usize)
                .copied()
                .flatten()
                .unwrap_or(usize::MAX);
        }
        levels
    };
    // Cells keyed by the coded run (centre points included).
    let values = table.values;
    let records: Vec<usize> = {
        let mut all: Vec<usize> = input.model_records.to_vec();
        all.extend_from_slice(input.centre_records);
        all.sort_unstable();
        all
    };
    let coded_of = |record: usize| -> Vec<f64> {
        input
            .treatments
            .iter()
            .enumerate()
            .map(|(position, &factor)| {
                coding.coded[position][table.factors[factor].level_of_record[record] as usize].unwrap_or(0.0)
            })
            .collect()
    };
    let centre_set: BTreeSet<usize> = input.centre_records.iter().copied().collect();
    let mut cell_index: BTreeMap<(Vec<i8>, Vec<usize>, bool), usize> = BTreeMap::new();
    let mut cell_values: Vec<Vec<f64>> = Vec::new();
    let mut cell_coded: Vec<Vec<f64>> = Vec::new();
    let mut cell_blocks: Vec<Vec<usize>> = Vec::new();
    let mut cell_centre: Vec<bool> = Vec::new();
    let mut cell_of: Vec<usize> = Vec::with_capacity(records.len());
    for &record in &records {
        let coded = coded_of(record);
        let blocks = block_levels_of(record);
        let is_centre = centre_set.contains(&record);
        let key = (
            coded.iter().map(|v| *v as i8).collect::<Vec<i8>>(),
            blocks.clone(),
            is_centre,
        );
        let next = cell_index.len();
        let index = *cell_index.entry(key).or_insert(next);
        if index == cell_values.len() {
            cell_values.push(Vec::new());
            cell_coded.push(coded);
            cell_blocks.push(blocks);
            cell_centre.push(is_centre);
        }
        cell_values[index].push(values[record]);
        cell_of.push(index);
    }
    // Accumulate, centre, solve: the cells hold sums of deviations from one centre, typed
    // decimals differenced exactly, so a large offset costs no digits of the effects.
    let all_values: Vec<f64> = cell_values.iter().flatten().copied().collect();
    let centring = centre_values(&all_values);
    let mut deviations = centring.deviations.iter();
    let mut counts = Vec::new();
    let mut means = Vec::new();
    let mut centred = Vec::new();
    let mut rows = Vec::new();
    for (cell, group) in cell_values.iter().enumerate() {
        let mut accumulator = GroupAccumulator::new(1);
        for &deviation in deviations.by_ref().take(group.len()) {
            accumulator.push(0, deviation).ok()?;
        }
        let stats = accumulator.finish();
        counts.push(group.len());
        means.push(stats[0].mean);
        centred.push((stats[0].centred_ss_scaled.max(0.0), stats[0].scale_exponent));
        rows.push(column_row(
            &columns,
            input.used,
            &cell_blocks[cell],
            Some(&cell_coded[cell]),
            cell_centre[cell],
        ));
    }
    let row_fit = fit_rows(&rows, &counts, &means, &centred, centring.centre)?;
    let sigma = row_fit.sigma();
    let fitted_cells: Vec<f64> = rows.iter().map(|row| dot(row, &row_fit.coefficients)).collect();
    let residuals: Vec<f64> = records
        .iter()
        .zip(&cell_of)
        .map(|(&record, &cell)| values[record] - fitted_cells[cell])
        .collect();
    let residual_check = residual_check_of(&residuals, &records, sigma);
    // Best corner over the factors in the model.
    let model_factors: Vec<usize> = {
        let set: BTreeSet<usize> = words.iter().flat_map(|word| word.factors()).collect();
        set.into_iter().collect()
    };
    let observed: BTreeSet<Vec<i8>> = cell_coded
        .iter()
        .zip(&cell_centre)
        .filter(|(_, centre)| !**centre)
        .map(|(coded, _)| model_factors.iter().map(|&f| coded[f] as i8).collect())
        .collect();
    let key_of =
        |choice: &[usize]| -> Vec<i8> { choice.iter().map(|&level| if level == 0 { -1 } else { 1 }).collect() };
    let found = input
        .direction
        .filter(|_| !model_factors.is_empty())
        .and_then(|direction| {
            best_setting(
                &vec![2; model_factors.len()],
                direction,
                |choice| {
                    let mut coded = vec![0.0; n_treatments];
                    for (&factor, &level) in model_factors.iter().zip(choice) {
                        coded[factor] = if level == 0 { -1.0 } else { 1.0 };
                    }
                    column_row(&columns, input.used, &[], Some(&coded), false)
                },
                |choice| observed.contains(&key_of(choice)),
                &row_fit,
            )
        });
    let predict = |(choice, row, mean): (Vec<usize>, Vec<f64>, f64), was_run: bool| {
        prediction(
            model_factors
                .iter()
                .zip(&choice)
                .map(|(&f, &level)| {
                    let info = &coding.info[f];
                    (
                        names[f].clone(),
                        if level == 0 {
                            info.low.clone()
                        } else {
                            info.high.clone()
                        },
                    )
                })
                .collect(),
            mean,
            &row,
            &row_fit,
            sigma,
            input.confidence,
            was_run,
        )
    };
    let (best, outside_trial) = best_and_outside(found, predict);
    let rule = if two.pure_error_df > 0 {
        format!(
            "effects with p below {} against pure error, with every effect they contain",
            round_for_text(alpha, 3)
        )
    } else {
        "effects beyond Lenth's margin of error, with every effect they contain".to_string()
    };
    Some(ReducedModel {
        active_terms: active.iter().map(|w| word_names(*w, &names)).collect(),
        terms: words
            .iter()
            .map(|w| word_names(*w, &names))
            .chain(block_positions.iter().map(|&f| input.used[f].name.clone()))
            .collect(),
        rule,
        coefficients: coefficient_lines(&column_names, &row_fit, sigma),
        residual_sd: sigma,
        residual_df: row_fit.residual_df,
        r_squared: row_fit.r_squared(),
        residual_check,
        best,
        outside_trial,
    })
}

/// Cautions on the reduced model: residuals far from normal (p below 0.01), a best
/// setting that was not among the runs.
pub(super) fn reduced_cautions(reduced: &ReducedModel) -> Vec<String> {
    let mut cautions = Vec::new();
    if let Some(check) = &reduced.residual_check {
        let p = check.shapiro_wilk.or(check.anderson_darling).map(|(_, p)| p);
        if p.is_some_and(|p| p < 0.01) {
            cautions.push(check.reading.clone());
        }
    }
    if let Some(outside) = &reduced.outside_trial {
        let settings: Vec<String> = outside
            .settings
            .iter()
            .map(|(factor, level)| format!("{factor} {level}"))
            .collect();
        cautions.push(format!(
            "The model predicts {} at {}, a combination that was not run: that is a prediction outside the trial, not a finding; confirm it with runs before relying on it.",
            round_for_text(outside.mean, 4),
            settings.join(", ")
        ));
    }
    cautions
}
