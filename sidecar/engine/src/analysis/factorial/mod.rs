//! Factorial trials: several treatment factors (and blocks) analysed together.
//!
//! [`analyse_factorial`] takes one response of a trial table and returns a
//! [`FactorialOutcome`]: the cells (present, counts, missing combinations, what can
//! still be estimated), the k-way model with interactions (Type I, II and III sums of
//! squares, cell means, least-squares means and effects with intervals), a two-level
//! screening analysis when every treatment factor has two levels (Yates's effects,
//! alias chains, Lenth's method, curvature from centre points, plot positions), a
//! reduced model of the active effects with residual checks and a prediction at the
//! best settings found, and sentences for a manager.
//!
//! The numerical work is done by [`crate::stats::linear_model`] (the k-way fit on cell
//! summaries), [`crate::stats::two_level`] and [`crate::stats::two_level_analysis`]
//! (design mathematics and Yates/Lenth), [`crate::stats::accumulate`] (cell sums) and
//! [`crate::stats::normality`] (residual checks). This module chooses what to fit,
//! names everything in the user's words and reads the numbers out. No I/O.
//!
//! Coding of two-level factors: a numeric factor's lower number is coded -1 and its
//! higher number +1; a numeric factor with three levels whose middle level lies
//! half-way between the others counts as two-level with centre points (the middle level
//! is coded 0). A factor with text labels has its labels sorted (as text, ignoring
//! case) and the first is coded -1. Runs with every numeric treatment factor at its
//! middle level are centre points (a text factor, which has no middle level, may stand at
//! either label, so centre runs repeated at each label count); they enter the curvature
//! test and the pure error, not the effects.
//!
//! Blocks: the two-level analysis takes its pure error within blocks and compares corners
//! with centre points within blocks; an effect whose column is constant within every
//! block is named as confounded with blocks and is never read as an effect or used for
//! settings. The error the effects are judged by is said in words
//! ([`TwoLevelOutcome::error`]): pure error from replicates and centre points, else the
//! pooled interactions of three or more factors, else Lenth's method.
//!
//! Settings: with a direction, the best settings are chosen among the combinations run,
//! and a better combination not run is given apart as a prediction outside the trial;
//! with no direction nothing is called best, and the outcome names the combinations run
//! with the highest and the lowest mean.

mod cells;
mod coding;
mod kway;
mod readings;
mod reduced;
mod residuals;
mod results;
mod screening;
#[cfg(test)]
mod tests;

pub use results::*;

use std::collections::BTreeSet;

use crate::options::{Direction, DEFAULT_CONFIDENCE};

use cells::{cells_summary, summarise, too_many_cells_summary};
use coding::{coding_and_centre_points, factor_infos, level_names_of, used_factors};
use kway::{fit_kway, kway_cautions, kway_model};
use readings::{manager_summary, read_model, SummaryInput};
use reduced::{reduced_cautions, reduced_model, ReducedInput};
use screening::{two_level_cautions, two_level_outcome, TwoLevelInput};

/// Above this many residuals the normality check uses this many, spread evenly through
/// the recorded order (Shapiro-Wilk is published up to 5000; on more values every test
/// rejects for departures too small to matter).
pub const RESIDUAL_CHECK_MAX: usize = 5000;

/// At most this many two-factor tables of model means are kept (largest interactions first).
pub const MAX_TWO_WAY_TABLES: usize = 6;

/// At most this many combinations of levels are searched for the best settings.
pub const MAX_SETTINGS_SEARCHED: usize = 100_000;

/// Alias chains are written with members of at most this many letters.
pub const ALIAS_DISPLAY_ORDER: usize = 4;

/// At most this many alias chains are listed in the caution of a fraction.
pub const ALIASES_LISTED: usize = 12;

/// One factor column of the input: its levels and the level of each record.
#[derive(Debug, Clone, Copy)]
pub struct FactorData<'a> {
    /// The factor's name.
    pub name: &'a str,
    /// Its level labels, in the order the caller keeps them.
    pub levels: &'a [String],
    /// For each record, an index into `levels`.
    pub level_of_record: &'a [u32],
    /// True for a blocking factor.
    pub is_block: bool,
}

/// The input of the factorial analysis: the factors and one response.
#[derive(Debug, Clone)]
pub struct FactorialData<'a> {
    /// The factors (treatments and blocks), each with a level per record.
    pub factors: Vec<FactorData<'a>>,
    /// The response's name, for sentences.
    pub response_name: &'a str,
    /// The response's value of each record; NaN where unusable.
    pub values: &'a [f64],
}

impl FactorialData<'_> {
    /// The number of records (the shortest of the value and level columns).
    pub fn n_records(&self) -> usize {
        self.factors
            .iter()
            .map(|factor| factor.level_of_record.len())
            .fold(self.values.len(), usize::min)
    }
}

/// Options of the factorial analysis.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FactorialOptions {
    /// Confidence level of every interval.
    pub confidence: f64,
    /// Which way the response is better; with none, no best or recommended settings
    /// are chosen (the outcome says which combination run is highest and lowest).
    pub direction: Option<Direction>,
    /// Highest order of interaction fitted (1 = main effects only); `None` fits every
    /// order the replication allows.
    pub interaction_order: Option<usize>,
}

impl Default for FactorialOptions {
    fn default() -> Self {
        Self {
            confidence: DEFAULT_CONFIDENCE,
            direction: None,
            interaction_order: None,
        }
    }
}

/// Analyses one response of a trial table as a factorial trial.
///
/// Returns `None` when the table has fewer than two treatment factors and no block
/// (the one-way analysis then says everything), or when the response index is out of
/// range. Problems that stop one part (too many level combinations, no residual degrees
/// of freedom) leave that part out and say so in [`FactorialOutcome::notes`].
///
/// Settings used: `confidence`, `direction` (with none, nothing is called best or
/// recommended) and `interaction order`.
///
/// # Remarks
/// Cells are summarised with the one-way accumulator (exact decimal or compensated
/// sums); the k-way model is
/// [`fit_factorial`](crate::stats::linear_model::fit_factorial); the two-level part is
/// [`analyse_two_level_in_layout`](crate::stats::two_level_analysis::analyse_two_level_in_layout)
/// on the runs coded ±1 with their blocks and centre runs (see the module documentation
/// for the coding); the reduced model (blocks included) is a weighted least-squares fit
/// to the cell means by Householder QR (never the normal equations). Checked end to end against the
/// NIST/SEMATECH e-Handbook eddy-current example and statsmodels 0.15.0 (see the
/// integration tests).
pub fn analyse_factorial(table: &FactorialData<'_>, options: &FactorialOptions) -> Option<FactorialOutcome> {
    let n_treatments = table.factors.iter().filter(|factor| !factor.is_block).count();
    let n_blocks = table.factors.len() - n_treatments;
    if n_treatments == 0 || (n_treatments < 2 && n_blocks == 0) {
        return None;
    }
    analyse_any(table, options)
}

/// As [`analyse_factorial`] without the check on the number of factors (a one-factor
/// table is analysed too); used to check the k-way model against the one-way model.
pub fn analyse_any(table: &FactorialData<'_>, options: &FactorialOptions) -> Option<FactorialOutcome> {
    let response = table;
    let confidence = options.confidence;
    let direction = options.direction;
    let mut notes = Vec::new();
    let mut cautions = Vec::new();
    let n_records = table.n_records();
    let usable: Vec<usize> = (0..n_records)
        .filter(|&record| response.values[record].is_finite())
        .collect();
    let treatments: Vec<usize> = (0..table.factors.len())
        .filter(|&f| !table.factors[f].is_block)
        .collect();
    let blocks: Vec<usize> = (0..table.factors.len())
        .filter(|&f| table.factors[f].is_block)
        .collect();

    // Two-level coding of the treatment factors, and the centre points.
    let (coding, centre_records, mixed_levels_record) = coding_and_centre_points(table, &treatments, &usable);
    let centre_set: BTreeSet<usize> = centre_records.iter().copied().collect();
    let model_records: Vec<usize> = usable.iter().copied().filter(|r| !centre_set.contains(r)).collect();

    // Factors and their used levels (over the records of the k-way model).
    let used = used_factors(table, &treatments, &blocks, &model_records, &mut notes);
    let factor_infos = factor_infos(&used, &treatments, coding.as_ref());
    if !used.iter().any(|factor| !factor.is_block) {
        return None;
    }

    // Cells.
    let radix: Vec<usize> = used.iter().map(|factor| factor.level_names.len()).collect();
    let n_possible = radix
        .iter()
        .try_fold(1usize, |product, &count| product.checked_mul(count));
    let cells_result = summarise(table, &used, &model_records, n_possible);
    let (cells, cell_of_record, exact_decimal) = match cells_result {
        Some(found) => found,
        None => {
            notes.push(format!(
                "the factors have more than {} combinations of levels; the factorial model was not fitted",
                crate::stats::linear_model::MAX_LEVEL_COMBINATIONS
            ));
            return Some(FactorialOutcome {
                confidence,
                factors: factor_infos,
                n_values: usable.len(),
                cells: too_many_cells_summary(n_possible, centre_records.len()),
                model: None,
                two_level: None,
                reduced: None,
                reading: Vec::new(),
                summary: Vec::new(),
                highest_observed: None,
                lowest_observed: None,
                cautions,
                notes,
                mixed_levels_record,
                exact_decimal: false,
            });
        }
    };
    let level_names = |levels: &[usize]| level_names_of(&used, levels);

    // The k-way model.
    let fit = fit_kway(&cells, &used, options.interaction_order, &mut notes);
    let cells_summary = cells_summary(n_possible, &cells, fit.as_ref(), centre_records.len(), &level_names);
    let alpha = 1.0 - confidence;
    let model = fit
        .as_ref()
        .map(|fit| kway_model(fit, &cells, &used, options, confidence, &level_names));
    // Two-level screening.
    let two_level = coding.as_ref().and_then(|coding| {
        two_level_outcome(
            &TwoLevelInput {
                table,
                treatments: &treatments,
                blocks: &blocks,
                coding,
                usable: &usable,
                centre_records: &centre_records,
                confidence,
            },
            &mut notes,
        )
    });
    let regular_design = two_level
        .as_ref()
        .filter(|two| two.grand_mean.is_some() && two.design.kind != "irregular");
    if let Some(fit) = &fit {
        cautions.extend(kway_cautions(fit, &level_names, regular_design.is_some()));
    }
    if let Some(two) = regular_design.filter(|two| two.design.kind == "regular fraction") {
        cautions.push(fraction_sentence(two));
    }
    if let Some(two) = &two_level {
        two_level_cautions(two, !blocks.is_empty(), alpha, &mut cautions);
    }

    // Reduced model.
    let reduced = reduced_model(&ReducedInput {
        table,
        used: &used,
        cells: &cells,
        cell_of_record: &cell_of_record,
        model_records: &model_records,
        fit: fit.as_ref(),
        two_level: two_level.as_ref(),
        coding: coding.as_ref(),
        treatments: &treatments,
        centre_records: &centre_records,
        confidence,
        direction,
    });
    if let Some(reduced) = &reduced {
        cautions.extend(reduced_cautions(reduced));
    }

    let reading = model
        .as_ref()
        .map(|model| {
            read_model(
                model,
                fit.as_ref(),
                &used,
                direction.unwrap_or(Direction::HigherIsBetter),
                alpha,
                response.response_name,
                two_level.as_ref(),
            )
        })
        .unwrap_or_default();
    let (highest_observed, lowest_observed) = observed_extremes(&cells, &used);
    let summary = manager_summary(&SummaryInput {
        response: response.response_name,
        used: &used,
        model: model.as_ref(),
        two_level: two_level.as_ref(),
        reduced: reduced.as_ref(),
        direction,
        confidence,
        reading: &reading,
        highest: highest_observed.as_ref(),
        lowest: lowest_observed.as_ref(),
    });
    Some(FactorialOutcome {
        confidence,
        factors: factor_infos,
        n_values: usable.len(),
        cells: cells_summary,
        model,
        two_level,
        reduced,
        reading,
        summary,
        highest_observed,
        lowest_observed,
        cautions,
        notes,
        mixed_levels_record,
        exact_decimal,
    })
}

/// The caution of a regular fraction: the combinations it leaves out are left out by
/// design, and which effects it cannot separate.
fn fraction_sentence(two: &TwoLevelOutcome) -> String {
    let chains: Vec<&str> = two
        .effects
        .iter()
        .filter(|effect| effect.aliases.contains(['+', '-']))
        .map(|effect| effect.aliases.as_str())
        .collect();
    let shown = chains.len().min(ALIASES_LISTED);
    let more = if chains.len() > shown { "; …" } else { "" };
    format!(
        "The trial is a {} with generators {}: the combinations of levels it leaves out are left out by design. Each estimate mixes the effects of its alias chain, which this trial cannot separate: {}{more}.",
        two.design.name,
        two.design.generators.join(", "),
        chains[..shown].join("; ")
    )
}

/// The treatment combinations run with the highest and the lowest mean (blocks pooled).
fn observed_extremes(
    cells: &[crate::stats::linear_model::CellSummary],
    used: &[coding::UsedFactor],
) -> (Option<ObservedCombination>, Option<ObservedCombination>) {
    let treatments: Vec<usize> = (0..used.len()).filter(|&f| !used[f].is_block).collect();
    let mut combinations: std::collections::BTreeMap<Vec<usize>, (usize, f64)> = std::collections::BTreeMap::new();
    for cell in cells {
        let key: Vec<usize> = treatments.iter().map(|&f| cell.levels[f]).collect();
        let entry = combinations.entry(key).or_insert((0, 0.0));
        entry.0 += cell.n;
        entry.1 += cell.n as f64 * cell.mean;
    }
    let observed: Vec<ObservedCombination> = combinations
        .into_iter()
        .filter(|(_, (n, _))| *n > 0)
        .map(|(key, (n, sum))| ObservedCombination {
            settings: treatments
                .iter()
                .zip(&key)
                .map(|(&f, &level)| (used[f].name.clone(), used[f].level_names[level].clone()))
                .collect(),
            mean: sum / n as f64,
            n,
        })
        .collect();
    let highest = observed.iter().max_by(|a, b| a.mean.total_cmp(&b.mean)).cloned();
    let lowest = observed.iter().min_by(|a, b| a.mean.total_cmp(&b.mean)).cloned();
    (highest, lowest)
}
