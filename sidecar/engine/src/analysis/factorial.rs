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
//! case) and the first is coded -1. Runs with every treatment factor at its middle level
//! are centre points; they enter the curvature test and the pure error, not the effects.

use std::collections::{BTreeMap, BTreeSet};

use nalgebra::{DMatrix, DVector};
use serde::Serialize;

use crate::analysis::verdict::{p_for_text, round_for_text};
use crate::options::{Direction, DEFAULT_CONFIDENCE};
use crate::stats::accumulate::GroupAccumulator;
use crate::stats::dist::{t_quantile, t_sf};
use crate::stats::linear_model::{
    fit_factorial, CellSummary, Estimability, Estimate, FactorSpec, FactorialFit, ModelSpec,
};
use crate::stats::normality::check_normality;
use crate::stats::two_level::{detect_design, resolution_numeral, DesignKind, DesignSummary, Word, FACTOR_LETTERS};
use crate::stats::two_level_analysis::{analyse_two_level, contrast_effect, AnalysisOptions, TwoLevelAnalysis};

/// Above this many residuals the normality check uses this many, spread evenly through
/// the recorded order (Shapiro-Wilk is published up to 5000; on more values every test
/// rejects for departures too small to matter).
pub const RESIDUAL_CHECK_MAX: usize = 5000;

/// At most this many two-factor tables of model means are kept (largest interactions first).
pub const MAX_TWO_WAY_TABLES: usize = 6;

/// Up to this many combinations of levels, cell sums are accumulated in one pass.
const DIRECT_GRID_MAX: usize = 4096;

/// At most this many combinations of levels are searched for the best settings.
pub const MAX_SETTINGS_SEARCHED: usize = 100_000;

/// Alias chains are written with members of at most this many letters.
pub const ALIAS_DISPLAY_ORDER: usize = 4;

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
    /// Which way the response is better (higher is better when not given).
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

/// How a factor entered the factorial analysis.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FactorInfo {
    /// Header text.
    pub name: String,
    /// Levels that hold usable values, in the order used by every table.
    pub levels: Vec<String>,
    /// True for a block (additive, never in an interaction).
    pub is_block: bool,
    /// Letter in the two-level analysis (`A`, `B`, ...), treatment factors only.
    pub letter: Option<char>,
    /// Coding in the two-level analysis, when there is one.
    pub coding: Option<TwoLevelCoding>,
}

/// How a factor's levels were coded -1 / +1 (and 0 for a centre point).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TwoLevelCoding {
    /// The level coded -1.
    pub low: String,
    /// The level coded +1.
    pub high: String,
    /// The level coded 0 (a centre point), if any.
    pub centre: Option<String>,
    /// Why: "lower number" or "first label in sorted order".
    pub rule: String,
}

/// One observed combination of levels.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CellLine {
    /// Level of every factor (in the order of [`FactorialOutcome::factors`]).
    pub levels: Vec<String>,
    /// Number of usable values.
    pub n: usize,
    /// Observed mean.
    pub mean: f64,
    /// Standard deviation within the cell; `None` for a single value.
    pub sd: Option<f64>,
    /// Mean predicted by the full k-way model.
    pub fitted: Option<f64>,
    /// Standard error of the fitted mean.
    pub fitted_se: Option<f64>,
}

/// What the cells of the trial look like.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CellsSummary {
    /// Combinations possible: the product of the numbers of levels.
    pub n_possible: usize,
    /// Combinations with at least one usable value.
    pub n_present: usize,
    /// Smallest and largest count in a present cell.
    pub count_range: (usize, usize),
    /// Every present cell has the same count and none is missing.
    pub balanced: bool,
    /// Combinations with no usable value, by level names (at most 200 listed).
    pub missing: Vec<Vec<String>>,
    /// Number of missing combinations (all of them, listed or not).
    pub n_missing: usize,
    /// Centre-point runs left out of the k-way model (they enter the two-level analysis).
    pub n_centre_points: usize,
}

/// Whether a model term can be estimated from the cells present.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TermLine {
    /// Factor names joined by `:`.
    pub term: String,
    /// Degrees of freedom with every cell present.
    pub df_full: usize,
    /// Degrees of freedom the data can estimate.
    pub df_estimable: usize,
    /// `full`, `partial` or `not estimable`.
    pub estimability: String,
}

/// One line of an analysis-of-variance table.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct AnovaLine {
    /// Term, or `residual`, `pure error`, `lack of fit`, `total`.
    pub source: String,
    /// Degrees of freedom.
    pub df: usize,
    /// Sum of squares.
    pub sum_sq: f64,
    /// Mean square.
    pub mean_sq: Option<f64>,
    /// F ratio against the residual mean square.
    pub f_value: Option<f64>,
    /// Its upper-tail probability.
    pub p_value: Option<f64>,
}

/// An estimate with its interval.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct IntervalLine {
    /// What is estimated, in the user's words (level names).
    pub label: String,
    /// Level names, one per factor of the term.
    pub levels: Vec<String>,
    /// The estimate; `None` when the data cannot estimate it.
    pub estimate: Option<f64>,
    /// Standard error.
    pub se: Option<f64>,
    /// Lower end of the interval.
    pub low: Option<f64>,
    /// Upper end.
    pub high: Option<f64>,
}

/// Least-squares means of one factor.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LsMeansLine {
    /// Factor name.
    pub factor: String,
    /// One line per level.
    pub means: Vec<IntervalLine>,
}

/// Effects (deviations from the grand mean, summing to zero) of one term.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TermEffectsLine {
    /// Term name.
    pub term: String,
    /// One line per combination of the term's levels.
    pub effects: Vec<IntervalLine>,
}

/// Model means of a two-factor table, for interaction plots.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TwoWayMeans {
    /// Factor along the horizontal axis.
    pub x_factor: String,
    /// Its levels.
    pub x_levels: Vec<String>,
    /// Factor drawn as one line per level.
    pub trace_factor: String,
    /// Its levels.
    pub trace_levels: Vec<String>,
    /// `means[trace][x]`: model mean averaged over all other factors.
    pub means: Vec<Vec<Option<f64>>>,
    /// p-value of the interaction term in the Type III table, if it was in the model.
    pub interaction_p: Option<f64>,
}

/// The k-way model.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct KWayModel {
    /// Highest order of interaction fitted (1 = main effects only).
    pub interaction_order: usize,
    /// Why this order: the setting or what the replication allows.
    pub order_reason: String,
    /// Terms and their estimability.
    pub terms: Vec<TermLine>,
    /// Sequential sums of squares (blocks first, then terms by order).
    pub type_i: Vec<AnovaLine>,
    /// Each term after all terms not containing it.
    pub type_ii: Vec<AnovaLine>,
    /// Each term after all others.
    pub type_iii: Vec<AnovaLine>,
    /// Residual, pure error, lack of fit and total lines.
    pub error_lines: Vec<AnovaLine>,
    /// True when the three types agree (balanced data, or by coincidence).
    pub types_coincide: bool,
    /// A sentence on which type to read.
    pub types_note: String,
    /// Residual SD (root of the residual mean square).
    pub residual_sd: Option<f64>,
    /// Residual degrees of freedom.
    pub residual_df: usize,
    /// Share of the variation the model explains.
    pub r_squared: Option<f64>,
    /// Type III tests depend on the coding because some columns were aliased.
    pub type_iii_depends_on_coding: bool,
    /// Grand mean (unweighted over the full grid of cells).
    pub grand_mean: Option<f64>,
    /// Cell means, observed and fitted.
    pub cells: Vec<CellLine>,
    /// Least-squares means with intervals.
    pub ls_means: Vec<LsMeansLine>,
    /// Effects with intervals.
    pub effects: Vec<TermEffectsLine>,
    /// Two-factor tables of model means.
    pub two_way_means: Vec<TwoWayMeans>,
}

/// The design found among the runs.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DesignLine {
    /// `full factorial`, `regular fraction` or `irregular`.
    pub kind: String,
    /// Number of treatment factors `k`.
    pub n_factors: usize,
    /// `p` of a `2^(k-p)` fraction (0 for a full factorial).
    pub fraction: usize,
    /// A short name such as `2^(7-4) resolution III`.
    pub name: String,
    /// Factorial runs (centre points not counted).
    pub n_runs: usize,
    /// Distinct combinations among them.
    pub n_distinct_runs: usize,
    /// Runs per distinct combination, when equal.
    pub replication: Option<usize>,
    /// Resolution (`None` for a full factorial).
    pub resolution: Option<usize>,
    /// The resolution as a numeral, or `full`.
    pub resolution_numeral: String,
    /// Generators such as `D = ABC`.
    pub generators: Vec<String>,
    /// The defining relation, e.g. `I = ABCD`.
    pub defining_relation: String,
    /// Words of the relation by length, from length 1.
    pub word_length_pattern: Vec<usize>,
}

/// One estimated two-level effect (one alias chain).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TwoLevelEffect {
    /// The leader in letters, e.g. `AB`.
    pub name: String,
    /// The leader in factor names, e.g. `Temperature:Pressure`.
    pub term: String,
    /// The alias chain in letters, e.g. `AB + CD`.
    pub aliases: String,
    /// The alias chain in factor names.
    pub aliases_named: String,
    /// Effect: mean at +1 minus mean at -1 of the leader's column.
    pub effect: f64,
    /// Regression coefficient of the ±1 column, half the effect.
    pub coefficient: f64,
    /// Standard error from pure error (replicates, centre points).
    pub se: Option<f64>,
    /// t ratio on the pure-error df.
    pub t_value: Option<f64>,
    /// Its two-sided p-value.
    pub p_value: Option<f64>,
    /// Interval: effect ± t SE, or ± Lenth's margin of error when unreplicated.
    pub low: Option<f64>,
    /// Upper end.
    pub high: Option<f64>,
    /// Effect / Lenth's pseudo standard error.
    pub lenth_t: Option<f64>,
    /// Beyond Lenth's margin of error.
    pub beyond_margin: bool,
    /// Beyond Lenth's simultaneous margin of error.
    pub beyond_simultaneous_margin: bool,
    /// Judged active (p below alpha, or beyond Lenth's margin when there is no pure error).
    pub active: bool,
}

/// Lenth's method for the unreplicated effects.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LenthLine {
    /// Pseudo standard error.
    pub pse: f64,
    /// Its degrees of freedom (effects / 3).
    pub df: f64,
    /// Margin of error for one effect.
    pub margin_of_error: f64,
    /// Simultaneous margin of error for all effects.
    pub simultaneous_margin_of_error: f64,
    /// Confidence level used.
    pub confidence: f64,
}

/// The centre-point curvature test.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CurvatureLine {
    /// Factorial runs.
    pub n_factorial: usize,
    /// Centre points.
    pub n_centre: usize,
    /// Mean of the factorial runs.
    pub factorial_mean: f64,
    /// Mean of the centre points.
    pub centre_mean: f64,
    /// Factorial mean minus centre mean.
    pub difference: f64,
    /// Its standard error, from the centre points' spread.
    pub se: Option<f64>,
    /// t ratio.
    pub t_value: Option<f64>,
    /// Two-sided p-value.
    pub p_value: Option<f64>,
}

/// One point of a normal or half-normal plot of effects.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct EffectPlotPoint {
    /// Effect name (letters).
    pub name: String,
    /// Plotted value (the effect, or its size for the half-normal plot).
    pub value: f64,
    /// Normal quantile it is plotted against.
    pub quantile: f64,
}

/// The two-level screening analysis.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TwoLevelOutcome {
    /// The design.
    pub design: DesignLine,
    /// Mean of the factorial cell means.
    pub grand_mean: Option<f64>,
    /// Effects, one per alias chain, in standard order of the basic factors.
    pub effects: Vec<TwoLevelEffect>,
    /// Pure-error variance (replicates and centre points) and its df.
    pub pure_error_variance: Option<f64>,
    /// Pure-error degrees of freedom.
    pub pure_error_df: usize,
    /// Lenth's method (used when there is no pure error).
    pub lenth: Option<LenthLine>,
    /// Curvature test with centre points.
    pub curvature: Option<CurvatureLine>,
    /// Normal plot positions, by increasing effect.
    pub normal_plot: Vec<EffectPlotPoint>,
    /// Half-normal plot positions, by increasing size.
    pub half_normal_plot: Vec<EffectPlotPoint>,
    /// Record numbers (0-based, of the table) of the factorial runs in standard order.
    pub standard_order: Vec<usize>,
    /// Sentences on what the aliasing leaves open.
    pub aliasing_notes: Vec<String>,
    /// A follow-up that would separate aliased effects, if one is needed.
    pub follow_up: Option<String>,
}

/// One coefficient of the reduced model.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CoefficientLine {
    /// Column name.
    pub name: String,
    /// Estimate.
    pub estimate: f64,
    /// Standard error.
    pub se: Option<f64>,
    /// t ratio.
    pub t_value: Option<f64>,
    /// Two-sided p-value.
    pub p_value: Option<f64>,
}

/// The residual check of the reduced model.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ResidualCheck {
    /// Residuals checked (all, or an even spread of [`RESIDUAL_CHECK_MAX`]).
    pub n_checked: usize,
    /// Residuals in all.
    pub n_residuals: usize,
    /// Shapiro-Wilk W and p-value.
    pub shapiro_wilk: Option<(f64, f64)>,
    /// Anderson-Darling A² and p-value.
    pub anderson_darling: Option<(f64, f64)>,
    /// The largest residual.
    pub largest: Option<LargestResidual>,
    /// A sentence.
    pub reading: String,
}

/// The largest residual of the reduced model.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LargestResidual {
    /// Its size in residual SDs, with its sign.
    pub in_sds: f64,
    /// Its record (0-based position in the input).
    pub record: usize,
    /// Its cell (`Sheet!D7`), filled in by the caller that knows the cells.
    pub cell: Option<String>,
}

/// A setting of every factor in the reduced model, with its prediction.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Prediction {
    /// `(factor, level)` for each factor in the model.
    pub settings: Vec<(String, String)>,
    /// Predicted mean response.
    pub mean: f64,
    /// Interval for the mean response at these settings.
    pub mean_interval: Option<(f64, f64)>,
    /// Interval for one new run at these settings.
    pub single_run_interval: Option<(f64, f64)>,
    /// Whether this combination was among the runs.
    pub was_run: bool,
}

/// The model of the active effects only.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ReducedModel {
    /// Terms judged active.
    pub active_terms: Vec<String>,
    /// Terms fitted: the active ones, their hierarchy and any blocks.
    pub terms: Vec<String>,
    /// How the active terms were chosen.
    pub rule: String,
    /// Coefficients (two-level: of ±1 columns; otherwise of sum-to-zero columns).
    pub coefficients: Vec<CoefficientLine>,
    /// Residual SD.
    pub residual_sd: Option<f64>,
    /// Residual degrees of freedom.
    pub residual_df: usize,
    /// Share of the variation explained.
    pub r_squared: Option<f64>,
    /// Residual checks.
    pub residual_check: Option<ResidualCheck>,
    /// Prediction at the best settings found.
    pub best: Option<Prediction>,
}

/// Everything the factorial analysis found for one response.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FactorialOutcome {
    /// Confidence level of every interval.
    pub confidence: f64,
    /// The factors used, with their coding.
    pub factors: Vec<FactorInfo>,
    /// Usable values analysed.
    pub n_values: usize,
    /// The cells.
    pub cells: CellsSummary,
    /// The k-way model; `None` when it could not be fitted (see `notes`).
    pub model: Option<KWayModel>,
    /// The two-level screening analysis, when every treatment factor has two levels.
    pub two_level: Option<TwoLevelOutcome>,
    /// The model of the active effects.
    pub reduced: Option<ReducedModel>,
    /// A reading of the largest effects and of interactions that change the best level.
    pub reading: Vec<String>,
    /// Sentences for a manager: what matters, which way, how much, what to set.
    pub summary: Vec<String>,
    /// A record (0-based) with some treatment factors at their middle level and others
    /// not, which stopped the two-level reading; the caller names its cell in a note.
    pub mixed_levels_record: Option<usize>,
    /// Cautions that go with these results.
    pub cautions: Vec<String>,
    /// Remarks on what was left out or could not be done.
    pub notes: Vec<String>,
}

// -------------------------------------------------------------------------------------
// Preparing the data
// -------------------------------------------------------------------------------------

/// A factor as used here: its levels after dropping those without usable values.
struct UsedFactor {
    table_index: usize,
    name: String,
    is_block: bool,
    /// raw level index -> used level index
    remap: Vec<Option<usize>>,
    level_names: Vec<String>,
}

/// How the treatment factors code to ±1.
struct Coding {
    /// for each treatment factor (in `treatments` order): raw level -> coded value
    coded: Vec<Vec<Option<f64>>>,
    info: Vec<TwoLevelCoding>,
}

fn parse_number(label: &str) -> Option<f64> {
    label.trim().parse::<f64>().ok().filter(|value| value.is_finite())
}

/// Codes one factor's present levels to ±1 (and 0), or `None` when it is not two-level.
fn code_factor(levels: &[String], present: &[bool]) -> Option<(Vec<Option<f64>>, TwoLevelCoding)> {
    let present_levels: Vec<usize> = (0..levels.len()).filter(|&level| present[level]).collect();
    let numbers: Option<Vec<f64>> = present_levels
        .iter()
        .map(|&level| parse_number(&levels[level]))
        .collect();
    let mut coded = vec![None; levels.len()];
    match (present_levels.len(), numbers) {
        (2, Some(numbers)) => {
            let (low, high) = if numbers[0] < numbers[1] { (0, 1) } else { (1, 0) };
            if numbers[0] == numbers[1] {
                return None;
            }
            coded[present_levels[low]] = Some(-1.0);
            coded[present_levels[high]] = Some(1.0);
            Some((
                coded,
                TwoLevelCoding {
                    low: levels[present_levels[low]].clone(),
                    high: levels[present_levels[high]].clone(),
                    centre: None,
                    rule: "lower number".into(),
                },
            ))
        }
        (2, None) => {
            let mut order = present_levels.clone();
            order.sort_by_key(|&level| (levels[level].to_lowercase(), levels[level].clone()));
            coded[order[0]] = Some(-1.0);
            coded[order[1]] = Some(1.0);
            Some((
                coded,
                TwoLevelCoding {
                    low: levels[order[0]].clone(),
                    high: levels[order[1]].clone(),
                    centre: None,
                    rule: "first label in sorted order".into(),
                },
            ))
        }
        (3, Some(numbers)) => {
            let mut order: Vec<usize> = (0..3).collect();
            order.sort_by(|&a, &b| numbers[a].total_cmp(&numbers[b]));
            let (low, middle, high) = (numbers[order[0]], numbers[order[1]], numbers[order[2]]);
            let half_way = 0.5 * (low + high);
            if !(low < middle && middle < high) || (middle - half_way).abs() > 1e-9 * (high - low) {
                return None;
            }
            coded[present_levels[order[0]]] = Some(-1.0);
            coded[present_levels[order[1]]] = Some(0.0);
            coded[present_levels[order[2]]] = Some(1.0);
            Some((
                coded,
                TwoLevelCoding {
                    low: levels[present_levels[order[0]]].clone(),
                    high: levels[present_levels[order[2]]].clone(),
                    centre: Some(levels[present_levels[order[1]]].clone()),
                    rule: "lower number; the middle number is a centre point".into(),
                },
            ))
        }
        _ => None,
    }
}

fn present_levels(table: &FactorialData<'_>, factor: usize, records: &[usize]) -> Vec<bool> {
    let mut present = vec![false; table.factors[factor].levels.len()];
    for &record in records {
        if let Some(slot) = present.get_mut(table.factors[factor].level_of_record[record] as usize) {
            *slot = true;
        }
    }
    present
}

/// Levels of a factor in display order: numeric labels by value, others as first seen.
fn used_factor(table: &FactorialData<'_>, factor: usize, records: &[usize]) -> UsedFactor {
    let source = &table.factors[factor];
    let present = present_levels(table, factor, records);
    let mut order: Vec<usize> = (0..source.levels.len()).filter(|&level| present[level]).collect();
    let numbers: Option<Vec<f64>> = order.iter().map(|&level| parse_number(&source.levels[level])).collect();
    if let Some(numbers) = numbers {
        let mut paired: Vec<(f64, usize)> = numbers.into_iter().zip(order.iter().copied()).collect();
        paired.sort_by(|a, b| a.0.total_cmp(&b.0));
        order = paired.into_iter().map(|(_, level)| level).collect();
    }
    let mut remap = vec![None; source.levels.len()];
    for (used, &raw) in order.iter().enumerate() {
        remap[raw] = Some(used);
    }
    UsedFactor {
        table_index: factor,
        name: source.name.to_string(),
        is_block: source.is_block,
        remap,
        level_names: order.iter().map(|&level| source.levels[level].clone()).collect(),
    }
}

// -------------------------------------------------------------------------------------
// Entry point
// -------------------------------------------------------------------------------------

/// Analyses one response of a trial table as a factorial trial.
///
/// Returns `None` when the table has fewer than two treatment factors and no block
/// (the one-way analysis then says everything), or when the response index is out of
/// range. Problems that stop one part (too many level combinations, no residual degrees
/// of freedom) leave that part out and say so in [`FactorialOutcome::notes`].
///
/// Settings used: `confidence`, `direction` (higher is better when not given) and
/// `interaction order`.
///
/// # Remarks
/// Cells are summarised with the one-way accumulator (exact decimal or compensated
/// sums); the k-way model is [`fit_factorial`]; the two-level part is
/// [`analyse_two_level`] on the runs coded ±1 (see the module documentation for the
/// coding); the reduced model is a weighted least-squares fit to the cell means by
/// Householder QR (never the normal equations). Checked end to end against the
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
    let direction = options.direction.unwrap_or(Direction::HigherIsBetter);
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

    // Two-level coding of the treatment factors.
    let mut mixed_levels_record = None;
    let coding = two_level_coding(table, &treatments, &usable);
    let (coding, centre_records) = match coding {
        Some(coding) => {
            let mut centre = Vec::new();
            let mut mixed = None;
            for &record in &usable {
                let values: Vec<f64> = treatments
                    .iter()
                    .enumerate()
                    .map(|(position, &factor)| {
                        coding.coded[position][table.factors[factor].level_of_record[record] as usize]
                            .unwrap_or(f64::NAN)
                    })
                    .collect();
                let zeros = values.iter().filter(|value| **value == 0.0).count();
                if zeros == values.len() {
                    centre.push(record);
                } else if zeros > 0 && mixed.is_none() {
                    mixed = Some(record);
                }
            }
            match mixed {
                Some(record) => {
                    mixed_levels_record = Some(record);
                    (None, Vec::new())
                }
                None => (Some(coding), centre),
            }
        }
        None => (None, Vec::new()),
    };
    let centre_set: BTreeSet<usize> = centre_records.iter().copied().collect();
    let model_records: Vec<usize> = usable.iter().copied().filter(|r| !centre_set.contains(r)).collect();

    // Factors and their used levels (over the records of the k-way model).
    let mut used: Vec<UsedFactor> = Vec::new();
    for factor in treatments.iter().chain(&blocks) {
        let candidate = used_factor(table, *factor, &model_records);
        if candidate.level_names.len() < 2 {
            notes.push(format!(
                "'{}' has only {} level with usable values of '{}', so it was left out of the factorial model",
                candidate.name,
                candidate.level_names.len(),
                response.response_name
            ));
            continue;
        }
        used.push(candidate);
    }
    // Keep table order (treatments first as chosen above, then blocks).
    let factor_infos: Vec<FactorInfo> = used
        .iter()
        .map(|factor| {
            let treatment_position = treatments.iter().position(|&t| t == factor.table_index);
            FactorInfo {
                name: factor.name.clone(),
                levels: factor.level_names.clone(),
                is_block: factor.is_block,
                letter: treatment_position.and_then(|position| FACTOR_LETTERS.get(position).copied()),
                coding: match (&coding, treatment_position) {
                    (Some(coding), Some(position)) => Some(coding.info[position].clone()),
                    _ => None,
                },
            }
        })
        .collect();
    if !used.iter().any(|factor| !factor.is_block) {
        return None;
    }

    // Cells.
    let radix: Vec<usize> = used.iter().map(|factor| factor.level_names.len()).collect();
    let n_possible = radix
        .iter()
        .try_fold(1usize, |product, &count| product.checked_mul(count));
    let cells_result = summarise(table, &used, &model_records, n_possible);
    let (cells, cell_of_record) = match cells_result {
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
                cells: CellsSummary {
                    n_possible: n_possible.unwrap_or(usize::MAX),
                    n_present: 0,
                    count_range: (0, 0),
                    balanced: false,
                    missing: Vec::new(),
                    n_missing: 0,
                    n_centre_points: centre_records.len(),
                },
                model: None,
                two_level: None,
                reduced: None,
                reading: Vec::new(),
                summary: Vec::new(),
                cautions,
                notes,
                mixed_levels_record,
            });
        }
    };
    let specs: Vec<FactorSpec> = used
        .iter()
        .map(|factor| FactorSpec {
            name: factor.name.clone(),
            n_levels: factor.level_names.len(),
            is_block: factor.is_block,
        })
        .collect();
    let level_names = |levels: &[usize]| -> Vec<String> {
        levels
            .iter()
            .zip(&used)
            .map(|(&level, factor)| factor.level_names[level].clone())
            .collect()
    };

    // The k-way model.
    let model_spec = ModelSpec {
        max_order: options.interaction_order,
    };
    let fit = match fit_factorial(&cells, &specs, &model_spec) {
        Ok(fit) => Some(fit),
        Err(error) => {
            notes.push(format!("the factorial model could not be fitted: {error}"));
            None
        }
    };
    let counts: Vec<usize> = cells.iter().map(|cell| cell.n).collect();
    let count_range = (
        counts.iter().copied().min().unwrap_or(0),
        counts.iter().copied().max().unwrap_or(0),
    );
    let missing_levels: Vec<Vec<usize>> = fit.as_ref().map(|fit| fit.missing_cells.clone()).unwrap_or_default();
    let cells_summary = CellsSummary {
        n_possible: n_possible.unwrap_or(usize::MAX),
        n_present: cells.len(),
        count_range,
        balanced: fit.as_ref().is_some_and(|fit| fit.is_balanced),
        missing: missing_levels
            .iter()
            .take(200)
            .map(|levels| level_names(levels))
            .collect(),
        n_missing: missing_levels.len(),
        n_centre_points: centre_records.len(),
    };
    let alpha = 1.0 - confidence;
    let model = fit
        .as_ref()
        .map(|fit| kway_model(fit, &cells, &used, options, confidence, &level_names));
    if let Some(fit) = &fit {
        if fit.residual.df == 0 {
            cautions.push("The model uses every degree of freedom: there is no residual left to judge the effects by, so no F tests or intervals are given for it.".into());
        }
        if !missing_levels.is_empty() {
            cautions.push(format!(
                "{} combination(s) of levels were not run (for example {}); effects that need them cannot be estimated, and the Type III tests depend on how the levels were coded.",
                missing_levels.len(),
                level_names(&missing_levels[0]).join(" / ")
            ));
        }
    }

    // Two-level screening.
    let two_level = coding.as_ref().and_then(|_| {
        two_level_outcome(
            table,
            &treatments,
            coding.as_ref()?,
            &usable,
            &used,
            confidence,
            &mut notes,
        )
    });
    if let Some(two) = &two_level {
        if !blocks.is_empty() {
            notes.push("the two-level effects do not adjust for blocks; the k-way model does (blocks additive)".into());
        }
        if two.lenth.is_some() && two.pure_error_df == 0 {
            cautions.push("The runs are not replicated, so the effects are judged by Lenth's method, which assumes that most effects are really zero.".into());
        }
        cautions.extend(two.aliasing_notes.iter().take(3).cloned());
        if let Some(curvature) = &two.curvature {
            if curvature.p_value.is_some_and(|p| p < alpha) {
                cautions.push(format!(
                    "The centre points differ from the average of the corners (p = {}): the response curves between the levels, so predictions between the levels are not reliable from this trial.",
                    p_for_text(curvature.p_value.unwrap_or(f64::NAN))
                ));
            }
        }
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
        if let Some(check) = &reduced.residual_check {
            let p = check.shapiro_wilk.or(check.anderson_darling).map(|(_, p)| p);
            if p.is_some_and(|p| p < 0.01) {
                cautions.push(check.reading.clone());
            }
        }
        if let Some(best) = &reduced.best {
            if !best.was_run {
                cautions.push("The recommended combination of levels was not among the runs; confirm it with a few runs before relying on it.".into());
            }
        }
    }

    let reading = model
        .as_ref()
        .map(|model| read_model(model, fit.as_ref(), &used, direction, alpha, response.response_name))
        .unwrap_or_default();
    let summary = manager_summary(&SummaryInput {
        response: response.response_name,
        used: &used,
        model: model.as_ref(),
        two_level: two_level.as_ref(),
        reduced: reduced.as_ref(),
        direction,
        confidence,
        reading: &reading,
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
        cautions,
        notes,
        mixed_levels_record,
    })
}

fn two_level_coding(table: &FactorialData<'_>, treatments: &[usize], usable: &[usize]) -> Option<Coding> {
    if treatments.len() < 2 || treatments.len() > FACTOR_LETTERS.len() {
        return None;
    }
    if treatments.iter().any(|&factor| table.factors[factor].levels.len() > 3) {
        // Levels without usable values are rare; a factor with more than three labels
        // is not treated as two-level.
        return None;
    }
    let mut coded = Vec::with_capacity(treatments.len());
    let mut info = Vec::with_capacity(treatments.len());
    for &factor in treatments {
        let present = present_levels(table, factor, usable);
        let (levels, coding) = code_factor(table.factors[factor].levels, &present)?;
        coded.push(levels);
        info.push(coding);
    }
    Some(Coding { coded, info })
}

/// Cell summaries over the used factors, and the cell (index into the result) of each
/// model record. `None` when the grid of combinations is too large.
fn summarise(
    table: &FactorialData<'_>,
    used: &[UsedFactor],
    records: &[usize],
    n_possible: Option<usize>,
) -> Option<(Vec<CellSummary>, Vec<u32>)> {
    let n_possible = n_possible.filter(|&n| n <= crate::stats::linear_model::MAX_LEVEL_COMBINATIONS)?;
    let values = table.values;
    type LevelColumn<'t> = (&'t [u32], &'t [Option<usize>], usize);
    let level_columns: Vec<LevelColumn<'_>> = used
        .iter()
        .map(|factor| {
            (
                table.factors[factor.table_index].level_of_record,
                factor.remap.as_slice(),
                factor.level_names.len(),
            )
        })
        .collect();
    // Mixed-radix index of each record, first factor slowest.
    let mut grid_index: Vec<u32> = vec![0; records.len()];
    for (levels, remap, radix) in &level_columns {
        for (slot, &record) in grid_index.iter_mut().zip(records) {
            let level = remap.get(levels[record] as usize).copied().flatten().unwrap_or(0);
            *slot = *slot * (*radix as u32) + level as u32;
        }
    }
    // Small grids accumulate straight into one group per combination (one pass);
    // large ones number the present combinations first.
    let direct = n_possible <= DIRECT_GRID_MAX;
    let mut compact: Vec<u32> = vec![u32::MAX; n_possible];
    let mut present: Vec<u32> = Vec::new();
    let mut accumulator = if direct {
        let mut accumulator = GroupAccumulator::new(n_possible);
        for (&index, &record) in grid_index.iter().zip(records) {
            accumulator.push(index as usize, values[record]).ok()?;
            compact[index as usize] = 0;
        }
        present.extend((0..n_possible as u32).filter(|&index| compact[index as usize] == 0));
        accumulator
    } else {
        for &index in &grid_index {
            if compact[index as usize] == u32::MAX {
                compact[index as usize] = 0;
                present.push(index);
            }
        }
        present.sort_unstable();
        GroupAccumulator::new(present.len())
    };
    for (position, &index) in present.iter().enumerate() {
        compact[index as usize] = position as u32;
    }
    if !direct {
        for (&index, &record) in grid_index.iter().zip(records) {
            accumulator
                .push(compact[index as usize] as usize, values[record])
                .ok()?;
        }
    }
    let all_stats = accumulator.finish();
    let stats: Vec<_> = if direct {
        present.iter().map(|&index| all_stats[index as usize].clone()).collect()
    } else {
        all_stats
    };
    let mut cell_of_record = grid_index;
    for slot in &mut cell_of_record {
        *slot = compact[*slot as usize];
    }
    let radix: Vec<usize> = used.iter().map(|factor| factor.level_names.len()).collect();
    let cells = present
        .iter()
        .zip(&stats)
        .map(|(&index, group)| {
            let mut levels = vec![0usize; radix.len()];
            let mut rest = index as usize;
            for position in (0..radix.len()).rev() {
                levels[position] = rest % radix[position];
                rest /= radix[position];
            }
            CellSummary {
                levels,
                n: group.n as usize,
                mean: group.mean,
                centred_ss: group.centred_ss.max(0.0),
            }
        })
        .collect();
    Some((cells, cell_of_record))
}

// -------------------------------------------------------------------------------------
// The k-way model
// -------------------------------------------------------------------------------------

fn t_multiplier(confidence: f64, df: usize) -> Option<f64> {
    if df == 0 {
        return None;
    }
    t_quantile(0.5 + 0.5 * confidence, df as f64).ok()
}

fn interval(label: String, levels: Vec<String>, estimate: &Estimate, multiplier: Option<f64>) -> IntervalLine {
    let half = match (estimate.standard_error, multiplier) {
        (Some(se), Some(t)) => Some(se * t),
        _ => None,
    };
    IntervalLine {
        label,
        levels,
        estimate: estimate.value,
        se: estimate.standard_error,
        low: estimate.value.zip(half).map(|(value, half)| value - half),
        high: estimate.value.zip(half).map(|(value, half)| value + half),
    }
}

fn anova_lines(table: &crate::stats::linear_model::AnovaTable) -> Vec<AnovaLine> {
    table
        .rows
        .iter()
        .map(|row| AnovaLine {
            source: row.term.clone(),
            df: row.df,
            sum_sq: row.sum_sq,
            mean_sq: Some(row.mean_sq),
            f_value: row.f_value,
            p_value: row.p_value,
        })
        .collect()
}

fn tables_agree(first: &[AnovaLine], second: &[AnovaLine], scale: f64) -> bool {
    first.len() == second.len()
        && first.iter().zip(second).all(|(a, b)| {
            a.source == b.source && a.df == b.df && (a.sum_sq - b.sum_sq).abs() <= 1e-9 * (scale + a.sum_sq.abs())
        })
}

fn kway_model(
    fit: &FactorialFit,
    cells: &[CellSummary],
    used: &[UsedFactor],
    options: &FactorialOptions,
    confidence: f64,
    level_names: &dyn Fn(&[usize]) -> Vec<String>,
) -> KWayModel {
    let multiplier = t_multiplier(confidence, fit.residual.df);
    let type_i = anova_lines(&fit.type_i);
    let type_ii = anova_lines(&fit.type_ii);
    let type_iii = anova_lines(&fit.type_iii);
    let scale = fit.total.sum_sq.abs();
    let types_coincide = tables_agree(&type_i, &type_ii, scale) && tables_agree(&type_ii, &type_iii, scale);
    let types_note = if fit.is_balanced {
        "Every combination of levels has the same number of values (balanced data), so the Type I, II and III sums of squares are the same; read any of them.".to_string()
    } else if types_coincide {
        "The data are not balanced, but the Type I, II and III sums of squares happen to agree here.".to_string()
    } else {
        "The data are not balanced, so the three types differ. Type I adds terms in the order listed (blocks first); Type II tests each term after every term that does not contain it, the better test of main effects when their interactions are small; Type III tests each term after all the others, the usual choice when interactions matter.".to_string()
    };
    let order_reason = match options.interaction_order {
        Some(order) => format!("the setting 'interaction order' is {order}"),
        None if fit.max_order < used.iter().filter(|factor| !factor.is_block).count() => format!(
            "interactions of more than {} factors would leave no residual degrees of freedom, so they were pooled into the residual",
            fit.max_order
        ),
        None => "every order of interaction the data allow".to_string(),
    };
    let mut error_lines = vec![AnovaLine {
        source: "residual".into(),
        df: fit.residual.df,
        sum_sq: fit.residual.sum_sq,
        mean_sq: fit.residual.mean_sq,
        f_value: None,
        p_value: None,
    }];
    if fit.lack_of_fit.df > 0 && fit.pure_error.df > 0 {
        let pure_ms = fit.pure_error.sum_sq / fit.pure_error.df as f64;
        let lack_ms = fit.lack_of_fit.sum_sq / fit.lack_of_fit.df as f64;
        let f_value = (pure_ms > 0.0).then(|| lack_ms / pure_ms);
        let p_value =
            f_value.and_then(|f| crate::stats::dist::f_sf(f, fit.lack_of_fit.df as f64, fit.pure_error.df as f64).ok());
        error_lines.push(AnovaLine {
            source: "lack of fit".into(),
            df: fit.lack_of_fit.df,
            sum_sq: fit.lack_of_fit.sum_sq,
            mean_sq: Some(lack_ms),
            f_value,
            p_value,
        });
        error_lines.push(AnovaLine {
            source: "pure error".into(),
            df: fit.pure_error.df,
            sum_sq: fit.pure_error.sum_sq,
            mean_sq: Some(pure_ms),
            f_value: None,
            p_value: None,
        });
    }
    error_lines.push(AnovaLine {
        source: "total".into(),
        df: fit.total.df,
        sum_sq: fit.total.sum_sq,
        mean_sq: None,
        f_value: None,
        p_value: None,
    });
    let cell_lines = fit
        .cells
        .iter()
        .zip(cells)
        .map(|(cell_fit, cell)| CellLine {
            levels: level_names(&cell_fit.levels),
            n: cell_fit.n,
            mean: cell_fit.observed_mean,
            sd: (cell.n > 1).then(|| (cell.centred_ss / (cell.n - 1) as f64).sqrt()),
            fitted: cell_fit.fitted.value,
            fitted_se: cell_fit.fitted.standard_error,
        })
        .collect();
    let ls_means = fit
        .ls_means
        .iter()
        .map(|factor_means| LsMeansLine {
            factor: factor_means.factor.clone(),
            means: factor_means
                .means
                .iter()
                .enumerate()
                .map(|(level, estimate)| {
                    let name = used[factor_means.factor_index].level_names[level].clone();
                    interval(name.clone(), vec![name], estimate, multiplier)
                })
                .collect(),
        })
        .collect();
    let effects = fit
        .effects
        .iter()
        .map(|term| TermEffectsLine {
            term: term.term.clone(),
            effects: term
                .effects
                .iter()
                .map(|effect| {
                    let names: Vec<String> = term
                        .factors
                        .iter()
                        .zip(&effect.levels)
                        .map(|(&factor, &level)| used[factor].level_names[level].clone())
                        .collect();
                    interval(names.join(" / "), names, &effect.estimate, multiplier)
                })
                .collect(),
        })
        .collect();
    KWayModel {
        interaction_order: fit.max_order,
        order_reason,
        terms: fit
            .terms
            .iter()
            .map(|term| TermLine {
                term: term.name.clone(),
                df_full: term.df_full,
                df_estimable: term.df_estimable,
                estimability: match term.estimability {
                    Estimability::Full => "full",
                    Estimability::Partial => "partial",
                    Estimability::NotEstimable => "not estimable",
                }
                .into(),
            })
            .collect(),
        type_i,
        type_ii,
        type_iii,
        error_lines,
        types_coincide,
        types_note,
        residual_sd: fit.residual.mean_sq.map(f64::sqrt),
        residual_df: fit.residual.df,
        r_squared: fit.r_squared,
        type_iii_depends_on_coding: fit.type_iii_depends_on_coding,
        grand_mean: fit.grand_mean.value,
        cells: cell_lines,
        ls_means,
        effects,
        two_way_means: two_way_means(fit, used),
    }
}

/// Model means of every pair of treatment factors: grand mean plus the two main effects
/// plus their interaction (every other term averages to zero in sum-to-zero coding).
fn two_way_means(fit: &FactorialFit, used: &[UsedFactor]) -> Vec<TwoWayMeans> {
    let Some(grand) = fit.grand_mean.value else {
        return Vec::new();
    };
    let effect_of = |factors: &[usize], levels: &[usize]| -> Option<Option<f64>> {
        let term = fit.effects.iter().find(|term| term.factors == factors)?;
        let effect = term.effects.iter().find(|effect| effect.levels == levels)?;
        Some(effect.estimate.value)
    };
    let treatments: Vec<usize> = (0..used.len()).filter(|&f| !used[f].is_block).collect();
    let mut tables = Vec::new();
    for (position, &first) in treatments.iter().enumerate() {
        for &second in &treatments[position + 1..] {
            let interaction_name = format!("{}:{}", used[first].name, used[second].name);
            let interaction_p = fit.type_iii.row(&interaction_name).and_then(|row| row.p_value);
            let in_model = fit.effects.iter().any(|term| term.factors == [first, second]);
            // Trace the factor with fewer levels, along the one with more.
            let (x_factor, trace_factor) = if used[first].level_names.len() >= used[second].level_names.len() {
                (first, second)
            } else {
                (second, first)
            };
            let means = (0..used[trace_factor].level_names.len())
                .map(|trace_level| {
                    (0..used[x_factor].level_names.len())
                        .map(|x_level| {
                            let (first_level, second_level) = if x_factor == first {
                                (x_level, trace_level)
                            } else {
                                (trace_level, x_level)
                            };
                            let main_first = effect_of(&[first], &[first_level]).flatten()?;
                            let main_second = effect_of(&[second], &[second_level]).flatten()?;
                            let joint = if in_model {
                                effect_of(&[first, second], &[first_level, second_level]).flatten()?
                            } else {
                                0.0
                            };
                            Some(grand + main_first + main_second + joint)
                        })
                        .collect()
                })
                .collect();
            tables.push(TwoWayMeans {
                x_factor: used[x_factor].name.clone(),
                x_levels: used[x_factor].level_names.clone(),
                trace_factor: used[trace_factor].name.clone(),
                trace_levels: used[trace_factor].level_names.clone(),
                means,
                interaction_p,
            });
        }
    }
    tables.sort_by(|a, b| {
        a.interaction_p
            .unwrap_or(2.0)
            .total_cmp(&b.interaction_p.unwrap_or(2.0))
    });
    tables.truncate(MAX_TWO_WAY_TABLES);
    tables
}

fn better(direction: Direction, candidate: f64, incumbent: f64) -> bool {
    match direction {
        Direction::HigherIsBetter => candidate > incumbent,
        Direction::LowerIsBetter => candidate < incumbent,
        Direction::Target(target) => (candidate - target).abs() < (incumbent - target).abs(),
    }
}

fn best_index(values: &[Option<f64>], direction: Direction) -> Option<usize> {
    let mut best: Option<(usize, f64)> = None;
    for (index, value) in values.iter().enumerate() {
        if let Some(value) = value {
            if best.is_none_or(|(_, incumbent)| better(direction, *value, incumbent)) {
                best = Some((index, *value));
            }
        }
    }
    best.map(|(index, _)| index)
}

fn direction_words(direction: Direction) -> String {
    match direction {
        Direction::HigherIsBetter => "highest".into(),
        Direction::LowerIsBetter => "lowest".into(),
        Direction::Target(target) => format!("nearest the target {}", round_for_text(target, 4)),
    }
}

/// Reading of the largest effects and of interactions that change which level is best.
fn read_model(
    model: &KWayModel,
    fit: Option<&FactorialFit>,
    used: &[UsedFactor],
    direction: Direction,
    alpha: f64,
    response: &str,
) -> Vec<String> {
    let mut reading = Vec::new();
    let Some(fit) = fit else {
        return reading;
    };
    let table = if fit.is_balanced {
        &model.type_i
    } else {
        &model.type_iii
    };
    let mut terms: Vec<&AnovaLine> = table.iter().collect();
    terms.sort_by(|a, b| b.sum_sq.total_cmp(&a.sum_sq));
    let blocks: BTreeSet<&str> = used
        .iter()
        .filter(|factor| factor.is_block)
        .map(|factor| factor.name.as_str())
        .collect();
    let total = fit.total.sum_sq;
    for line in terms
        .iter()
        .filter(|line| !blocks.contains(line.source.as_str()))
        .take(3)
    {
        let share = if total > 0.0 {
            line.sum_sq / total * 100.0
        } else {
            f64::NAN
        };
        let shown = match line.p_value {
            Some(p) if p < alpha => "clearly",
            Some(_) => "not clearly",
            None => "without a test",
        };
        let mut sentence = format!(
            "{} accounts for {}% of the variation in {response} ({shown} beyond chance, p = {}).",
            line.source.replace(':', " × "),
            round_for_text(share, 2),
            p_for_text(line.p_value.unwrap_or(f64::NAN))
        );
        if !line.source.contains(':') {
            if let Some(means) = model.ls_means.iter().find(|means| means.factor == line.source) {
                let values: Vec<Option<f64>> = means.means.iter().map(|m| m.estimate).collect();
                let high = best_index(&values, Direction::HigherIsBetter);
                let low = best_index(&values, Direction::LowerIsBetter);
                if let (Some(high), Some(low)) = (high, low) {
                    sentence.push_str(&format!(
                        " Its averages run from {} at {} to {} at {}.",
                        round_for_text(values[low].unwrap_or(f64::NAN), 4),
                        means.means[low].label,
                        round_for_text(values[high].unwrap_or(f64::NAN), 4),
                        means.means[high].label
                    ));
                }
            }
        }
        reading.push(sentence);
    }
    for table in &model.two_way_means {
        if !table.interaction_p.is_some_and(|p| p < alpha) {
            continue;
        }
        // Best x level for each trace level, and best trace level for each x level.
        let mut best_x: Vec<Option<usize>> = Vec::new();
        for row in &table.means {
            best_x.push(best_index(row, direction));
        }
        let distinct_x: BTreeSet<usize> = best_x.iter().flatten().copied().collect();
        if distinct_x.len() > 1 {
            let parts: Vec<String> = best_x
                .iter()
                .enumerate()
                .filter_map(|(trace, best)| {
                    best.map(|x| {
                        format!(
                            "at {} {} it is {}",
                            table.trace_factor, table.trace_levels[trace], table.x_levels[x]
                        )
                    })
                })
                .collect();
            reading.push(format!(
                "The {} level of {} depends on {} ({} × {} interaction, p = {}): {}.",
                direction_words(direction),
                table.x_factor,
                table.trace_factor,
                table.x_factor,
                table.trace_factor,
                p_for_text(table.interaction_p.unwrap_or(f64::NAN)),
                parts.join("; ")
            ));
            continue;
        }
        let columns = table.x_levels.len();
        let best_trace: Vec<Option<usize>> = (0..columns)
            .map(|x| {
                let column: Vec<Option<f64>> = table.means.iter().map(|row| row[x]).collect();
                best_index(&column, direction)
            })
            .collect();
        let distinct_trace: BTreeSet<usize> = best_trace.iter().flatten().copied().collect();
        if distinct_trace.len() > 1 {
            let parts: Vec<String> = best_trace
                .iter()
                .enumerate()
                .filter_map(|(x, best)| {
                    best.map(|trace| {
                        format!(
                            "at {} {} it is {}",
                            table.x_factor, table.x_levels[x], table.trace_levels[trace]
                        )
                    })
                })
                .collect();
            reading.push(format!(
                "The {} level of {} depends on {} ({} × {} interaction, p = {}): {}.",
                direction_words(direction),
                table.trace_factor,
                table.x_factor,
                table.trace_factor,
                table.x_factor,
                p_for_text(table.interaction_p.unwrap_or(f64::NAN)),
                parts.join("; ")
            ));
        } else {
            reading.push(format!(
                "{} and {} interact (p = {}), but the {} level of each is the same whatever the other is set to.",
                table.x_factor,
                table.trace_factor,
                p_for_text(table.interaction_p.unwrap_or(f64::NAN)),
                direction_words(direction)
            ));
        }
    }
    reading
}

// -------------------------------------------------------------------------------------
// Two-level screening
// -------------------------------------------------------------------------------------

fn word_names(word: Word, names: &[String]) -> String {
    word.factors()
        .iter()
        .map(|&factor| names.get(factor).cloned().unwrap_or_else(|| "?".into()))
        .collect::<Vec<_>>()
        .join(":")
}

fn chain_named(chain: &crate::stats::two_level::AliasChain, names: &[String], max_order: usize) -> String {
    let mut text = String::new();
    let mut omitted = false;
    for (position, member) in chain.members.iter().enumerate() {
        if member.word.order() > max_order && position > 0 {
            omitted = true;
            continue;
        }
        if position > 0 {
            text.push_str(if member.negative { " - " } else { " + " });
        }
        text.push_str(&word_names(member.word, names));
    }
    if omitted {
        text.push_str(" + ...");
    }
    text
}

fn design_line(design: &DesignSummary) -> DesignLine {
    let relation = &design.relation;
    let fraction = relation.n_generators();
    let kind = match design.kind {
        DesignKind::FullFactorial => "full factorial",
        DesignKind::RegularFraction => "regular fraction",
        DesignKind::Irregular => "irregular",
    };
    let resolution = relation.resolution();
    let name = match design.kind {
        DesignKind::FullFactorial => format!("2^{} full factorial", design.n_factors),
        DesignKind::RegularFraction => format!(
            "2^({}-{}) resolution {}",
            design.n_factors,
            fraction,
            resolution_numeral(resolution)
        ),
        DesignKind::Irregular => format!(
            "{} runs of a 2^{} design, not a regular fraction",
            design.n_distinct_runs, design.n_factors
        ),
    };
    let words = relation.words();
    let defining_relation = if words.is_empty() {
        "I (no words: every effect has its own column)".to_string()
    } else {
        let mut text = "I".to_string();
        for word in &words {
            text.push_str(" = ");
            text.push_str(&word.to_string());
        }
        text
    };
    DesignLine {
        kind: kind.into(),
        n_factors: design.n_factors,
        fraction,
        name,
        n_runs: design.n_runs,
        n_distinct_runs: design.n_distinct_runs,
        replication: design.replication,
        resolution,
        resolution_numeral: resolution_numeral(resolution),
        generators: if design.kind == DesignKind::RegularFraction {
            relation.generator_equations_text()
        } else {
            Vec::new()
        },
        defining_relation,
        word_length_pattern: relation.word_length_pattern().counts().to_vec(),
    }
}

#[allow(clippy::too_many_arguments)]
fn two_level_outcome(
    table: &FactorialData<'_>,
    treatments: &[usize],
    coding: &Coding,
    usable: &[usize],
    used: &[UsedFactor],
    confidence: f64,
    notes: &mut Vec<String>,
) -> Option<TwoLevelOutcome> {
    let values = table.values;
    let runs: Vec<Vec<f64>> = usable
        .iter()
        .map(|&record| {
            treatments
                .iter()
                .enumerate()
                .map(|(position, &factor)| {
                    coding.coded[position][table.factors[factor].level_of_record[record] as usize].unwrap_or(0.0)
                })
                .collect()
        })
        .collect();
    let responses: Vec<f64> = usable.iter().map(|&record| values[record]).collect();
    let names: Vec<String> = treatments.iter().map(|&f| table.factors[f].name.to_string()).collect();
    let _ = used;
    let alpha = 1.0 - confidence;
    let options = AnalysisOptions {
        lenth_confidence: confidence,
    };
    match analyse_two_level(&runs, &responses, &options) {
        Ok(analysis) => Some(two_level_from_analysis(&analysis, &names, usable, confidence, alpha)),
        Err(error) => {
            // Irregular designs: the design, and main effects by direct contrasts.
            let factorial: Vec<(Vec<f64>, f64)> = runs
                .iter()
                .zip(&responses)
                .filter(|(run, _)| run.iter().any(|value| *value != 0.0))
                .map(|(run, &y)| (run.clone(), y))
                .collect();
            let factorial_runs: Vec<Vec<f64>> = factorial.iter().map(|(run, _)| run.clone()).collect();
            let factorial_y: Vec<f64> = factorial.iter().map(|(_, y)| *y).collect();
            let design = match detect_design(&factorial_runs) {
                Ok(design) => design,
                Err(_) => {
                    notes.push(format!("the two-level analysis was not done: {error}"));
                    return None;
                }
            };
            notes.push(
                "the runs are not a full factorial or a regular fraction, so Yates's algorithm and alias chains do not apply; main effects are shown as differences of averages, and the k-way model carries the tests".into(),
            );
            let effects = (0..names.len())
                .filter_map(|factor| {
                    let word = Word(1 << factor);
                    let effect = contrast_effect(&factorial_runs, &factorial_y, word).ok()?;
                    Some(TwoLevelEffect {
                        name: word.to_string(),
                        term: names[factor].clone(),
                        aliases: word.to_string(),
                        aliases_named: names[factor].clone(),
                        effect,
                        coefficient: 0.5 * effect,
                        se: None,
                        t_value: None,
                        p_value: None,
                        low: None,
                        high: None,
                        lenth_t: None,
                        beyond_margin: false,
                        beyond_simultaneous_margin: false,
                        active: false,
                    })
                })
                .collect();
            Some(TwoLevelOutcome {
                design: design_line(&design),
                grand_mean: None,
                effects,
                pure_error_variance: None,
                pure_error_df: 0,
                lenth: None,
                curvature: None,
                normal_plot: Vec::new(),
                half_normal_plot: Vec::new(),
                standard_order: Vec::new(),
                aliasing_notes: vec!["The runs do not form a regular design: main effects may be partly mixed with interactions in ways no alias chain describes.".into()],
                follow_up: None,
            })
        }
    }
}

fn two_level_from_analysis(
    analysis: &TwoLevelAnalysis,
    names: &[String],
    usable: &[usize],
    confidence: f64,
    alpha: f64,
) -> TwoLevelOutcome {
    let display_order = ALIAS_DISPLAY_ORDER.min(names.len()).max(2);
    let multiplier = t_multiplier(confidence, analysis.pure_error_df);
    let effects: Vec<TwoLevelEffect> = analysis
        .effects
        .iter()
        .enumerate()
        .map(|(index, estimate)| {
            let leader = estimate.chain.leader();
            let lenth = analysis.lenth.as_ref();
            let half = match (estimate.standard_error, multiplier, lenth) {
                (Some(se), Some(t), _) => Some(se * t),
                (None, _, Some(lenth)) => Some(lenth.margin_of_error),
                _ => None,
            };
            let beyond_margin = lenth.is_some_and(|l| l.exceeds_margin.get(index).copied().unwrap_or(false));
            let active = match estimate.p_value {
                Some(p) => p < alpha,
                None => beyond_margin,
            };
            TwoLevelEffect {
                name: leader.to_string(),
                term: word_names(leader, names),
                aliases: estimate.chain.display_up_to(display_order),
                aliases_named: chain_named(&estimate.chain, names, display_order),
                effect: estimate.effect,
                coefficient: estimate.coefficient,
                se: estimate.standard_error,
                t_value: estimate.t_value,
                p_value: estimate.p_value,
                low: half.map(|half| estimate.effect - half),
                high: half.map(|half| estimate.effect + half),
                lenth_t: lenth.and_then(|l| l.t_ratios.get(index).copied()),
                beyond_margin,
                beyond_simultaneous_margin: lenth
                    .is_some_and(|l| l.exceeds_simultaneous_margin.get(index).copied().unwrap_or(false)),
                active,
            }
        })
        .collect();
    let plot = |points: &[crate::stats::two_level_analysis::PlotPoint]| -> Vec<EffectPlotPoint> {
        points
            .iter()
            .map(|point| EffectPlotPoint {
                name: effects.get(point.index).map(|e| e.name.clone()).unwrap_or_default(),
                value: point.value,
                quantile: point.quantile,
            })
            .collect()
    };
    let normal_plot = plot(&analysis.normal_plot);
    let half_normal_plot = plot(&analysis.half_normal_plot);
    let (aliasing_notes, follow_up) = aliasing_advice(analysis, &effects, names);
    TwoLevelOutcome {
        design: design_line(&analysis.design),
        grand_mean: Some(analysis.grand_mean),
        pure_error_variance: analysis.pure_error_variance,
        pure_error_df: analysis.pure_error_df,
        lenth: analysis.lenth.as_ref().map(|lenth| LenthLine {
            pse: lenth.pseudo_standard_error,
            df: lenth.df,
            margin_of_error: lenth.margin_of_error,
            simultaneous_margin_of_error: lenth.simultaneous_margin_of_error,
            confidence: lenth.confidence,
        }),
        curvature: analysis.curvature.as_ref().map(|curvature| CurvatureLine {
            n_factorial: curvature.n_factorial,
            n_centre: curvature.n_centre,
            factorial_mean: curvature.factorial_mean,
            centre_mean: curvature.centre_mean,
            difference: curvature.difference,
            se: curvature.standard_error,
            t_value: curvature.t_value,
            p_value: curvature.p_value,
        }),
        normal_plot,
        half_normal_plot,
        standard_order: analysis
            .standard_order
            .iter()
            .filter_map(|&run| usable.get(run).copied())
            .collect(),
        effects,
        aliasing_notes,
        follow_up,
    }
}

/// Sentences on what the aliasing leaves open among the active effects, and a fold-over
/// that would separate them.
///
/// # Remarks
/// Two members `u`, `v` of a chain are aliased through the word `uv` of the defining
/// relation. Repeating the runs with every factor reversed (a full fold-over) removes
/// every word of odd length from the combined design's relation; reversing one factor
/// `f` removes every word containing `f` (Box, Hunter and Hunter, *Statistics for
/// Experimenters*, 2nd ed., 2005, section 6.7). So the pair is separated by a full
/// fold-over when `uv` has odd length and by folding on `f` when `f` is in `uv`.
fn aliasing_advice(
    analysis: &TwoLevelAnalysis,
    effects: &[TwoLevelEffect],
    names: &[String],
) -> (Vec<String>, Option<String>) {
    let mut notes = Vec::new();
    if analysis.design.relation.n_generators() == 0 {
        return (notes, None);
    }
    let resolution = analysis.design.relation.resolution();
    notes.push(format!(
        "This is a fraction of resolution {}: {}.",
        resolution_numeral(resolution),
        match resolution {
            Some(r) if r <= 3 => "main effects are mixed with two-factor interactions",
            Some(4) => "main effects are clear of two-factor interactions, but two-factor interactions are mixed with each other",
            Some(_) => "main effects and two-factor interactions are clear of each other, mixed only with higher-order interactions",
            None => "no effect is mixed with another",
        }
    ));
    // Ambiguous pairs among active chains: members of order <= 2 beyond the leader, or
    // a main-effect leader aliased with a two-factor interaction.
    let mut pairs: Vec<(Word, Word)> = Vec::new();
    for (estimate, effect) in analysis.effects.iter().zip(effects) {
        if !effect.active {
            continue;
        }
        let low_order: Vec<Word> = estimate
            .chain
            .members
            .iter()
            .map(|member| member.word)
            .filter(|word| word.order() <= 2)
            .collect();
        if low_order.len() > 1 {
            let named: Vec<String> = low_order
                .iter()
                .map(|w| word_names(*w, names).replace(':', " × "))
                .collect();
            notes.push(format!(
                "The estimate {} ({}) could come from any of {}: the trial cannot tell them apart.",
                effect.name,
                round_for_text(effect.effect, 4),
                named.join(", ")
            ));
            for (position, &first) in low_order.iter().enumerate() {
                for &second in &low_order[position + 1..] {
                    pairs.push((first, second));
                }
            }
        } else if estimate.chain.members.len() > 1 {
            notes.push(format!(
                "The estimate {} is read as {} on the assumption that the interactions it is mixed with ({}) are negligible.",
                effect.name,
                effect.term.replace(':', " × "),
                effect.aliases
            ));
        }
    }
    if pairs.is_empty() {
        return (notes, None);
    }
    let n_factors = names.len();
    let full_separates = pairs.iter().filter(|(a, b)| a.product(*b).order() % 2 == 1).count();
    let mut best_single: Option<(usize, usize)> = None;
    for factor in 0..n_factors {
        let separated = pairs.iter().filter(|(a, b)| a.product(*b).contains(factor)).count();
        if best_single.is_none_or(|(_, count)| separated > count) {
            best_single = Some((factor, separated));
        }
    }
    let n_runs = analysis.design.n_distinct_runs;
    let follow_up = match best_single {
        Some((factor, count)) if count >= full_separates && count > 0 => Some(format!(
            "To separate them, run the {n_runs} runs again with only {} ({}) reversed (a fold-over on that factor); this separates {count} of the {} mixed pair(s) among the active effects, and {} itself from every interaction.",
            names[factor],
            FACTOR_LETTERS[factor],
            pairs.len(),
            names[factor]
        )),
        _ if full_separates > 0 => Some(format!(
            "To separate them, run the {n_runs} runs again with every factor reversed (a full fold-over); this clears every main effect of two-factor interactions and separates {full_separates} of the {} mixed pair(s).",
            pairs.len()
        )),
        _ => Some(format!(
            "No simple fold-over separates these; adding runs that complete a larger fraction (for example the other half of the {}) would.",
            analysis.design.n_factors
        )),
    };
    (notes, follow_up)
}

// -------------------------------------------------------------------------------------
// Reduced model
// -------------------------------------------------------------------------------------

struct ReducedInput<'a> {
    table: &'a FactorialData<'a>,
    used: &'a [UsedFactor],
    cells: &'a [CellSummary],
    cell_of_record: &'a [u32],
    model_records: &'a [usize],
    fit: Option<&'a FactorialFit>,
    two_level: Option<&'a TwoLevelOutcome>,
    coding: Option<&'a Coding>,
    treatments: &'a [usize],
    centre_records: &'a [usize],
    confidence: f64,
    direction: Direction,
}

/// A column of the reduced model: a term (factor positions in `used`) in sum-to-zero
/// coding, or a two-level word on the coded runs, or the centre-point indicator.
#[derive(Clone)]
enum Column {
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
struct RowFit {
    coefficients: DVector<f64>,
    /// R of the QR of the weighted matrix
    r: DMatrix<f64>,
    residual_ss: f64,
    residual_df: usize,
    total_ss: f64,
}

impl RowFit {
    /// Standard error factor: `|R^-T x|`, so that `se = s |R^-T x|`.
    fn unscaled_se(&self, row: &DVector<f64>) -> Option<f64> {
        let solution = self.r.transpose().solve_lower_triangular(row)?;
        Some(solution.norm())
    }
}

/// Weighted least squares by Householder QR: rows `x_c`, weights `n_c`, cell means and
/// centred sums. `None` when the columns are dependent or there are too few cells.
fn fit_rows(rows: &[Vec<f64>], counts: &[usize], means: &[f64], centred: &[f64]) -> Option<RowFit> {
    let n_columns = rows.first()?.len();
    if rows.len() < n_columns {
        return None;
    }
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
    let coefficients = r.solve_upper_triangular(&q_transpose_y)?;
    let fitted = &matrix * &coefficients;
    let within: f64 = centred.iter().sum();
    let lack: f64 = (&response - fitted).norm_squared();
    let n_total: usize = counts.iter().sum();
    let grand = counts.iter().zip(means).map(|(&n, &m)| n as f64 * m).sum::<f64>() / n_total as f64;
    let between: f64 = counts
        .iter()
        .zip(means)
        .map(|(&n, &m)| n as f64 * (m - grand).powi(2))
        .sum();
    Some(RowFit {
        coefficients,
        r,
        residual_ss: within + lack,
        residual_df: n_total.saturating_sub(n_columns),
        total_ss: within + between,
    })
}

fn coding_value(n_levels: usize, level: usize, column: usize) -> f64 {
    if level == n_levels - 1 {
        -1.0
    } else if level == column {
        1.0
    } else {
        0.0
    }
}

/// Value of a sum-to-zero column of a term at a combination of levels.
fn coded_value(used: &[UsedFactor], factors: &[usize], offset: usize, levels: &[usize]) -> f64 {
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

fn subsets(factors: &[usize]) -> Vec<Vec<usize>> {
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

fn reduced_model(input: &ReducedInput<'_>) -> Option<ReducedModel> {
    let alpha = 1.0 - input.confidence;
    match input.two_level.filter(|two| two.grand_mean.is_some()) {
        Some(two) => reduced_two_level(input, two, alpha),
        None => reduced_general(input, alpha),
    }
}

/// Columns and names for a set of hierarchical terms in sum-to-zero coding.
fn general_columns(used: &[UsedFactor], terms: &[Vec<usize>]) -> (Vec<Column>, Vec<String>) {
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

fn reduced_general(input: &ReducedInput<'_>, alpha: f64) -> Option<ReducedModel> {
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
    let means: Vec<f64> = input.cells.iter().map(|c| c.mean).collect();
    let centred: Vec<f64> = input.cells.iter().map(|c| c.centred_ss).collect();
    let row_fit = fit_rows(&rows, &counts, &means, &centred)?;
    let sigma = (row_fit.residual_df > 0).then(|| (row_fit.residual_ss / row_fit.residual_df as f64).sqrt());
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
    let best = best_setting(
        &model_factors
            .iter()
            .map(|&f| used[f].level_names.len())
            .collect::<Vec<_>>(),
        input.direction,
        |choice| {
            let mut levels = vec![usize::MAX; used.len()];
            for (&factor, &level) in model_factors.iter().zip(choice) {
                levels[factor] = level;
            }
            column_row(&columns, used, &levels, None, false)
        },
        &row_fit,
    )
    .map(|(choice, row, mean)| {
        prediction(
            model_factors
                .iter()
                .zip(&choice)
                .map(|(&f, &level)| (used[f].name.clone(), used[f].level_names[level].clone()))
                .collect(),
            mean,
            &row,
            &row_fit,
            sigma,
            input.confidence,
            observed.contains(&choice),
        )
    });
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
        r_squared: (row_fit.total_ss > 0.0).then(|| 1.0 - row_fit.residual_ss / row_fit.total_ss),
        residual_check,
        best,
    })
}

fn dot(row: &[f64], coefficients: &DVector<f64>) -> f64 {
    row.iter().zip(coefficients.iter()).map(|(a, b)| a * b).sum()
}

/// One design row. `levels[f] == usize::MAX` means "averaged over" (a block, or a factor
/// outside the model): its sum-to-zero columns are then 0. `coded` holds ±1/0 values of
/// the treatment factors for word columns.
fn column_row(
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

fn coefficient_lines(names: &[String], fit: &RowFit, sigma: Option<f64>) -> Vec<CoefficientLine> {
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

/// Searches every combination of the given level counts for the best prediction.
fn best_setting(
    level_counts: &[usize],
    direction: Direction,
    row_of: impl Fn(&[usize]) -> Vec<f64>,
    fit: &RowFit,
) -> Option<(Vec<usize>, Vec<f64>, f64)> {
    let total = level_counts
        .iter()
        .try_fold(1usize, |product, &count| product.checked_mul(count))
        .filter(|&total| total <= MAX_SETTINGS_SEARCHED)?;
    let mut best: Option<(Vec<usize>, Vec<f64>, f64)> = None;
    let mut choice = vec![0usize; level_counts.len()];
    for _ in 0..total {
        let row = row_of(&choice);
        let mean = dot(&row, &fit.coefficients);
        if best
            .as_ref()
            .is_none_or(|(_, _, incumbent)| better(direction, mean, *incumbent))
        {
            best = Some((choice.clone(), row, mean));
        }
        for position in (0..choice.len()).rev() {
            choice[position] += 1;
            if choice[position] < level_counts[position] {
                break;
            }
            choice[position] = 0;
        }
    }
    best
}

fn prediction(
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

fn residual_check(input: &ReducedInput<'_>, fitted_cells: &[f64], sigma: Option<f64>) -> Option<ResidualCheck> {
    let values = input.table.values;
    residual_check_with(input.model_records.len(), sigma, |position| {
        let record = input.model_records[position];
        (
            values[record] - fitted_cells[input.cell_of_record[position] as usize],
            record,
        )
    })
}

fn residual_check_of(residuals: &[f64], records: &[usize], sigma: Option<f64>) -> Option<ResidualCheck> {
    residual_check_with(residuals.len(), sigma, |position| {
        (residuals[position], records[position])
    })
}

/// The residual check over `n_residuals` residuals given one at a time (residual and
/// its record), without holding them all: an even spread of at most
/// [`RESIDUAL_CHECK_MAX`] goes to the normality tests, and the largest is kept.
fn residual_check_with(
    n_residuals: usize,
    sigma: Option<f64>,
    residual_at: impl Fn(usize) -> (f64, usize),
) -> Option<ResidualCheck> {
    if n_residuals == 0 {
        return None;
    }
    let n_checked = n_residuals.min(RESIDUAL_CHECK_MAX);
    let mut checked = Vec::with_capacity(n_checked);
    let mut next_sample = 0usize;
    let mut largest: Option<(f64, usize)> = None;
    for position in 0..n_residuals {
        let (residual, record) = residual_at(position);
        if checked.len() < n_checked && position == next_sample {
            checked.push(residual);
            next_sample = (checked.len() * n_residuals) / n_checked;
        }
        if largest.is_none_or(|(size, _)| residual.abs() > size.abs()) {
            largest = Some((residual, record));
        }
    }
    let largest = sigma
        .filter(|s| *s > 0.0)
        .zip(largest)
        .map(|(s, (residual, record))| LargestResidual {
            in_sds: residual / s,
            record,
            cell: None,
        });
    let (shapiro_wilk, anderson_darling, reading) = match check_normality(&checked) {
        Ok(check) => {
            let p = check.preferred_p_value();
            let test = if check.shapiro_wilk.is_some() {
                "Shapiro-Wilk"
            } else {
                "Anderson-Darling"
            };
            let reading = if p < 0.01 {
                format!("The residuals of the reduced model do not look normal ({test} p = {}); intervals and p-values may be off, look at the largest residuals and consider a transformation.", p_for_text(p))
            } else {
                format!(
                    "The residuals of the reduced model are consistent with a normal distribution ({test} p = {}).",
                    p_for_text(p)
                )
            };
            (
                check.shapiro_wilk.as_ref().map(|sw| (sw.w, sw.p_value)),
                Some((check.anderson_darling.a_squared, check.anderson_darling.p_value)),
                reading,
            )
        }
        Err(error) => (None, None, format!("The residuals could not be checked: {error}.")),
    };
    Some(ResidualCheck {
        n_checked: checked.len(),
        n_residuals,
        shapiro_wilk,
        anderson_darling,
        largest,
        reading,
    })
}

fn reduced_two_level(input: &ReducedInput<'_>, two: &TwoLevelOutcome, alpha: f64) -> Option<ReducedModel> {
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
    let mut cell_index: BTreeMap<Vec<i8>, usize> = BTreeMap::new();
    let mut cell_values: Vec<Vec<f64>> = Vec::new();
    let mut cell_coded: Vec<Vec<f64>> = Vec::new();
    let mut cell_of: Vec<usize> = Vec::with_capacity(records.len());
    for &record in &records {
        let coded = coded_of(record);
        let key: Vec<i8> = coded.iter().map(|v| *v as i8).collect();
        let next = cell_index.len();
        let index = *cell_index.entry(key).or_insert(next);
        if index == cell_values.len() {
            cell_values.push(Vec::new());
            cell_coded.push(coded);
        }
        cell_values[index].push(values[record]);
        cell_of.push(index);
    }
    let mut counts = Vec::new();
    let mut means = Vec::new();
    let mut centred = Vec::new();
    let mut rows = Vec::new();
    for (cell, group) in cell_values.iter().enumerate() {
        let mut accumulator = GroupAccumulator::new(1);
        for &value in group {
            accumulator.push(0, value).ok()?;
        }
        let stats = accumulator.finish();
        counts.push(group.len());
        means.push(stats[0].mean);
        centred.push(stats[0].centred_ss.max(0.0));
        let is_centre = cell_coded[cell].iter().all(|v| *v == 0.0);
        rows.push(column_row(
            &columns,
            input.used,
            &[],
            Some(&cell_coded[cell]),
            is_centre,
        ));
    }
    let row_fit = fit_rows(&rows, &counts, &means, &centred)?;
    let sigma = (row_fit.residual_df > 0).then(|| (row_fit.residual_ss / row_fit.residual_df as f64).sqrt());
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
        .map(|coded| model_factors.iter().map(|&f| coded[f] as i8).collect())
        .collect();
    let best = if model_factors.is_empty() {
        None
    } else {
        best_setting(
            &vec![2; model_factors.len()],
            input.direction,
            |choice| {
                let mut coded = vec![0.0; n_treatments];
                for (&factor, &level) in model_factors.iter().zip(choice) {
                    coded[factor] = if level == 0 { -1.0 } else { 1.0 };
                }
                column_row(&columns, input.used, &[], Some(&coded), false)
            },
            &row_fit,
        )
        .map(|(choice, row, mean)| {
            let key: Vec<i8> = choice.iter().map(|&level| if level == 0 { -1 } else { 1 }).collect();
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
                observed.contains(&key),
            )
        })
    };
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
        terms: words.iter().map(|w| word_names(*w, &names)).collect(),
        rule,
        coefficients: coefficient_lines(&column_names, &row_fit, sigma),
        residual_sd: sigma,
        residual_df: row_fit.residual_df,
        r_squared: (row_fit.total_ss > 0.0).then(|| 1.0 - row_fit.residual_ss / row_fit.total_ss),
        residual_check,
        best,
    })
}

// -------------------------------------------------------------------------------------
// Manager's summary
// -------------------------------------------------------------------------------------

struct SummaryInput<'a> {
    response: &'a str,
    used: &'a [UsedFactor],
    model: Option<&'a KWayModel>,
    two_level: Option<&'a TwoLevelOutcome>,
    reduced: Option<&'a ReducedModel>,
    direction: Direction,
    confidence: f64,
    reading: &'a [String],
}

fn manager_summary(input: &SummaryInput<'_>) -> Vec<String> {
    let mut lines = Vec::new();
    let treatments: Vec<&UsedFactor> = input.used.iter().filter(|f| !f.is_block).collect();
    let percent = round_for_text(input.confidence * 100.0, 3);
    let mut matter: Vec<String> = Vec::new();
    let mut effect_sentences = Vec::new();
    if let Some(two) = input.two_level.filter(|two| two.grand_mean.is_some()) {
        let mut active: Vec<&TwoLevelEffect> = two.effects.iter().filter(|e| e.active).collect();
        active.sort_by(|a, b| b.effect.abs().total_cmp(&a.effect.abs()));
        for effect in &active {
            matter.push(effect.term.replace(':', " × "));
            let letters = effect.name.chars().count();
            if letters == 1 {
                let change = if effect.effect >= 0.0 { "raises" } else { "lowers" };
                let interval = match (effect.low, effect.high) {
                    (Some(low), Some(high)) => format!(
                        " ({percent}% interval {} to {})",
                        round_for_text(low, 3),
                        round_for_text(high, 3)
                    ),
                    _ => String::new(),
                };
                effect_sentences.push(format!(
                    "Moving {} from its low to its high level {change} {} by {} on average{interval}.",
                    effect.term,
                    input.response,
                    round_for_text(effect.effect.abs(), 3)
                ));
            } else {
                effect_sentences.push(format!(
                    "The interaction {} changes {} by {} (effect); the effect of each of these factors depends on the others' settings.",
                    effect.term.replace(':', " × "),
                    input.response,
                    round_for_text(effect.effect, 3)
                ));
            }
        }
    } else if let Some(model) = input.model {
        let alpha = 1.0 - input.confidence;
        let table = &model.type_iii;
        for line in table {
            let is_block = input.used.iter().any(|f| f.is_block && f.name == line.source);
            if !is_block && line.p_value.is_some_and(|p| p < alpha) {
                matter.push(line.source.replace(':', " × "));
            }
        }
        for means in &model.ls_means {
            if !matter.contains(&means.factor) {
                continue;
            }
            let values: Vec<Option<f64>> = means.means.iter().map(|m| m.estimate).collect();
            if let (Some(best), Some(worst)) = (
                best_index(&values, input.direction),
                worst_index(&values, input.direction),
            ) {
                effect_sentences.push(format!(
                    "{}: {} is best (average {}), {} worst (average {}), a difference of {}.",
                    means.factor,
                    means.means[best].label,
                    round_for_text(values[best].unwrap_or(f64::NAN), 4),
                    means.means[worst].label,
                    round_for_text(values[worst].unwrap_or(f64::NAN), 4),
                    round_for_text((values[best].unwrap_or(0.0) - values[worst].unwrap_or(0.0)).abs(), 3)
                ));
            }
        }
    }
    let quiet: Vec<String> = treatments
        .iter()
        .filter(|factor| !matter.iter().any(|m| m.split(" × ").any(|part| part == factor.name)))
        .map(|factor| factor.name.clone())
        .collect();
    if matter.is_empty() {
        lines.push(format!(
            "None of the {} factors shows a clear effect on {} at {percent}% confidence; differences this size could be chance.",
            treatments.len(),
            input.response
        ));
    } else {
        let mut sentence = format!("What matters for {}: {}.", input.response, matter.join(", "));
        if !quiet.is_empty() {
            sentence.push_str(&format!(" No clear effect from {}.", quiet.join(", ")));
        }
        lines.push(sentence);
    }
    lines.extend(effect_sentences);
    lines.extend(input.reading.iter().filter(|line| line.contains("depends on")).cloned());
    if let Some(best) = input.reduced.and_then(|reduced| reduced.best.as_ref()) {
        let settings: Vec<String> = best
            .settings
            .iter()
            .map(|(factor, level)| format!("{factor} {level}"))
            .collect();
        let mut sentence = format!(
            "Recommended settings ({} {}): {}; predicted {} {}",
            direction_words(input.direction),
            input.response,
            settings.join(", "),
            input.response,
            round_for_text(best.mean, 4)
        );
        if let (Some(mean), Some(single)) = (best.mean_interval, best.single_run_interval) {
            sentence.push_str(&format!(
                " ({percent}% interval for the average {} to {}; a single run {} to {})",
                round_for_text(mean.0, 4),
                round_for_text(mean.1, 4),
                round_for_text(single.0, 4),
                round_for_text(single.1, 4)
            ));
        }
        sentence.push('.');
        if !quiet.is_empty() {
            sentence.push_str(" Set the other factors for cost or convenience.");
        }
        lines.push(sentence);
    }
    lines
}

/// The worst of the values: lowest, highest, or furthest from the target.
fn worst_index(values: &[Option<f64>], direction: Direction) -> Option<usize> {
    match direction {
        Direction::HigherIsBetter => best_index(values, Direction::LowerIsBetter),
        Direction::LowerIsBetter => best_index(values, Direction::HigherIsBetter),
        Direction::Target(target) => {
            let distances: Vec<Option<f64>> = values.iter().map(|v| v.map(|v| (v - target).abs())).collect();
            best_index(&distances, Direction::HigherIsBetter)
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::analysis::oneway::fit_one_way;

    /// Small deterministic generator (xorshift64*) for property tests.
    struct Rng(u64);
    impl Rng {
        fn next(&mut self) -> u64 {
            self.0 ^= self.0 >> 12;
            self.0 ^= self.0 << 25;
            self.0 ^= self.0 >> 27;
            self.0.wrapping_mul(0x2545_F491_4F6C_DD1D)
        }
        fn below(&mut self, n: usize) -> usize {
            (self.next() % n as u64) as usize
        }
        fn uniform(&mut self) -> f64 {
            (self.next() >> 11) as f64 / (1u64 << 53) as f64
        }
    }

    /// A long-layout table: one label column per factor, one response column.
    struct Table {
        factors: Vec<(String, Vec<String>, Vec<u32>, bool)>,
        values: Vec<f64>,
    }

    impl Table {
        fn data(&self) -> FactorialData<'_> {
            FactorialData {
                factors: self
                    .factors
                    .iter()
                    .map(|(name, levels, level_of_record, is_block)| FactorData {
                        name,
                        levels,
                        level_of_record,
                        is_block: *is_block,
                    })
                    .collect(),
                response_name: "y",
                values: &self.values,
            }
        }
    }

    fn table(factors: &[(&str, Vec<String>, bool)], values: Vec<f64>) -> Table {
        let mut built = Vec::new();
        for (name, labels, is_block) in factors {
            let mut levels: Vec<String> = Vec::new();
            let mut level_of_record = Vec::new();
            for label in labels {
                let index = match levels.iter().position(|level| level == label) {
                    Some(index) => index,
                    None => {
                        levels.push(label.clone());
                        levels.len() - 1
                    }
                };
                level_of_record.push(index as u32);
            }
            built.push((name.to_string(), levels, level_of_record, *is_block));
        }
        Table { factors: built, values }
    }

    fn close(a: f64, b: f64, tolerance: f64) -> bool {
        (a - b).abs() <= tolerance * (1.0 + b.abs())
    }

    #[test]
    fn balanced_data_give_equal_types_of_sums_of_squares() {
        // Property: with every combination run equally often, Types I, II and III agree
        // (Searle 1987, ch. 4; common practice).
        let mut rng = Rng(0x5EED_1234_ABCD_0001);
        for trial in 0..20 {
            let n_a = 2 + rng.below(3);
            let n_b = 2 + rng.below(3);
            let n_c = 1 + rng.below(2);
            let replicates = 2 + rng.below(2);
            let mut a = Vec::new();
            let mut b = Vec::new();
            let mut c = Vec::new();
            let mut values = Vec::new();
            for i in 0..n_a {
                for j in 0..n_b {
                    for k in 0..n_c {
                        for _ in 0..replicates {
                            a.push(format!("a{i}"));
                            b.push(format!("b{j}"));
                            c.push(format!("c{k}"));
                            values.push(10.0 + i as f64 - 0.5 * j as f64 + 3.0 * rng.uniform());
                        }
                    }
                }
            }
            let mut factors = vec![("A", a, false), ("B", b, false)];
            if n_c > 1 {
                factors.push(("C", c, false));
            }
            let table = table(&factors, values);
            let outcome = analyse_factorial(&table.data(), &FactorialOptions::default()).expect("outcome");
            let model = outcome.model.expect("model");
            assert!(outcome.cells.balanced, "trial {trial}");
            assert!(model.types_coincide, "trial {trial}");
            for (first, third) in model.type_i.iter().zip(&model.type_iii) {
                assert!(
                    close(first.sum_sq, third.sum_sq, 1e-9),
                    "trial {trial} {}",
                    first.source
                );
            }
            assert!(model.types_note.contains("balanced"));
        }
    }

    #[test]
    fn one_factor_reproduces_the_one_way_model() {
        // Property: a k-way model with one factor is the one-way model: same between and
        // within sums of squares, F, p, and least-squares means equal to the condition
        // means with the same intervals (compared with `fit_one_way`).
        let mut rng = Rng(0x0DD_BA11_2024);
        for trial in 0..20 {
            let n_levels = 2 + rng.below(5);
            let mut labels = Vec::new();
            let mut values = Vec::new();
            for level in 0..n_levels {
                for _ in 0..(2 + rng.below(5)) {
                    labels.push(format!("condition {level}"));
                    values.push(50.0 + 2.0 * level as f64 + 5.0 * rng.uniform());
                }
            }
            let table = table(&[("Condition", labels.clone(), false)], values.clone());
            assert!(analyse_factorial(&table.data(), &FactorialOptions::default()).is_none());
            let outcome = analyse_any(&table.data(), &FactorialOptions::default()).expect("outcome");
            let model = outcome.model.expect("model");
            let names: Vec<String> = table.factors[0].1.clone();
            let groups = &table.factors[0].2;
            let one_way = fit_one_way(&names, groups, &values, 0.95, &[]).expect("one-way");
            let between = &model.type_i[0];
            assert!(close(between.sum_sq, one_way.anova[0].ss, 1e-12), "trial {trial}");
            assert_eq!(between.df as f64, one_way.anova[0].df);
            assert!(close(
                between.f_value.expect("F"),
                one_way.anova[0].f.expect("F"),
                1e-10
            ));
            assert!(close(between.p_value.expect("p"), one_way.anova[0].p.expect("p"), 1e-9));
            let residual = &model.error_lines[0];
            assert!(close(residual.sum_sq, one_way.anova[1].ss, 1e-12));
            assert!(close(model.residual_sd.expect("sd"), one_way.pooled_sd, 1e-12));
            for (line, condition) in model.ls_means[0].means.iter().zip(&one_way.conditions) {
                assert_eq!(line.label, condition.name);
                assert!(close(line.estimate.expect("mean"), condition.mean, 1e-12));
                assert!(close(line.low.expect("low"), condition.mean_low, 1e-10));
                assert!(close(line.high.expect("high"), condition.mean_high, 1e-10));
            }
        }
    }

    #[test]
    fn coding_rules_and_centre_points() {
        // Text labels: first in sorted order is -1; numbers: the lower is -1; three
        // numbers with the middle half-way: a centre point (the module's rule).
        let present = [true, true];
        let (coded, info) = code_factor(&["wet".into(), "dry".into()], &present).expect("two labels");
        assert_eq!(coded, [Some(1.0), Some(-1.0)]);
        assert_eq!(info.low, "dry");
        let (coded, _) = code_factor(&["10".into(), "-5".into()], &present).expect("numbers");
        assert_eq!(coded, [Some(1.0), Some(-1.0)]);
        let (coded, info) =
            code_factor(&["160".into(), "200".into(), "180".into()], &[true, true, true]).expect("centre");
        assert_eq!(coded, [Some(-1.0), Some(1.0), Some(0.0)]);
        assert_eq!(info.centre.as_deref(), Some("180"));
        assert!(code_factor(&["1".into(), "2".into(), "4".into()], &[true, true, true]).is_none());
        assert!(code_factor(&["a".into(), "b".into(), "c".into()], &[true, true, true]).is_none());

        // A 2^2 with five centre points (hand example of the two-level unit tests:
        // scipy 1.17.1 / numpy 2.4.6 give the curvature p-value 0.01150068587105579).
        let temperature = ["160", "180", "200", "180", "160", "180", "200", "180", "180"];
        let time = ["10", "15", "10", "15", "20", "15", "20", "15", "15"];
        let values = vec![40.9, 40.3, 41.5, 40.5, 40.0, 40.7, 41.9, 40.2, 40.6];
        let table = table(
            &[
                (
                    "Temperature",
                    temperature.iter().map(|s| s.to_string()).collect(),
                    false,
                ),
                ("Time", time.iter().map(|s| s.to_string()).collect(), false),
            ],
            values,
        );
        let outcome = analyse_factorial(&table.data(), &FactorialOptions::default()).expect("outcome");
        assert_eq!(outcome.cells.n_centre_points, 5);
        assert_eq!(outcome.cells.n_present, 4);
        let two = outcome.two_level.expect("two-level");
        let curvature = two.curvature.expect("curvature");
        assert!(close(curvature.p_value.expect("p"), 0.01150068587105579, 1e-8));
        assert_eq!(two.pure_error_df, 4);
        assert!(outcome.cautions.iter().any(|c| c.contains("curves")));
        // The reduced model keeps the curvature column.
        let reduced = outcome.reduced.expect("reduced");
        assert!(
            reduced.coefficients.iter().any(|c| c.name.contains("curvature")),
            "{:?}",
            reduced.coefficients
        );
    }

    #[test]
    fn interaction_that_changes_the_best_level_is_read_out() {
        // Catalyst X is best at low temperature, Y at high temperature: a crossing
        // interaction built into the data (hand-made example).
        let mut catalyst = Vec::new();
        let mut temperature = Vec::new();
        let mut values = Vec::new();
        let means = [
            (("X", "low"), 30.0),
            (("X", "high"), 22.0),
            (("Y", "low"), 24.0),
            (("Y", "high"), 31.0),
        ];
        for ((c, t), mean) in means {
            for offset in [-0.4, 0.1, 0.3] {
                catalyst.push(c.to_string());
                temperature.push(t.to_string());
                values.push(mean + offset);
            }
        }
        let table = table(
            &[("Catalyst", catalyst, false), ("Temperature", temperature, false)],
            values,
        );
        let outcome = analyse_factorial(&table.data(), &FactorialOptions::default()).expect("outcome");
        assert!(
            outcome.reading.iter().any(|line| line.contains("depends on")),
            "{:?}",
            outcome.reading
        );
        let best = outcome.reduced.expect("reduced").best.expect("best");
        let chosen: Vec<&str> = best.settings.iter().map(|(_, level)| level.as_str()).collect();
        assert_eq!(chosen, ["Y", "high"]);
        assert!(close(best.mean, 31.0, 1e-12));
    }

    #[test]
    fn missing_combination_is_listed_by_name() {
        let a = ["p", "p", "p", "p", "q", "q", "r", "r", "r", "r"];
        let b = ["u", "u", "v", "v", "u", "u", "u", "u", "v", "v"];
        let values = vec![1.0, 1.2, 2.0, 2.1, 3.0, 3.3, 4.0, 4.1, 5.2, 5.0];
        let table = table(
            &[
                ("A", a.iter().map(|s| s.to_string()).collect(), false),
                ("B", b.iter().map(|s| s.to_string()).collect(), false),
            ],
            values,
        );
        let outcome = analyse_factorial(&table.data(), &FactorialOptions::default()).expect("outcome");
        assert_eq!(outcome.cells.missing, [vec!["q".to_string(), "v".to_string()]]);
        let model = outcome.model.expect("model");
        let interaction = model.terms.iter().find(|t| t.term == "A:B").expect("A:B");
        assert_eq!(interaction.estimability, "partial");
        assert!(model.type_iii_depends_on_coding);
    }
}
