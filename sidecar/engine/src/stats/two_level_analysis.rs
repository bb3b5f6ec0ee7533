//! Analysis of two-level factorial and regular fractional factorial
//! experiments: standard order, Yates's algorithm, effect standard errors
//! from replicates, the centre-point curvature test, Lenth's method for
//! unreplicated designs and normal / half-normal plot positions.
//!
//! Effects are differences of averages (mean response at the high level of a
//! contrast column minus mean at the low level); the regression coefficient
//! of a ±1 coded column is half the effect.

use crate::stats::accumulate::{magnitude_exponent, scale_by_power_of_two};
use crate::stats::dist;
use crate::stats::linear_model::unscale_square;
use crate::stats::two_level::{detect_design, runs_to_masks, AliasChain, DesignKind, DesignSummary, Word};
use crate::stats::StatsError;

/// Tolerance used to recognise a centre point (all coded levels 0).
const CENTRE_TOLERANCE: f64 = 1e-9;

fn check_finite(values: &[f64], name: &'static str) -> Result<(), StatsError> {
    if let Some(&bad) = values.iter().find(|v| !v.is_finite()) {
        return Err(StatsError::InvalidParameter {
            name,
            rule: "finite",
            value: bad,
        });
    }
    Ok(())
}

/// Point of Student's t with upper-tail probability `tail` in (0, 1).
fn upper_t_quantile(tail: f64, df: f64) -> Result<f64, StatsError> {
    if !(tail > 0.0 && tail < 1.0) {
        return Err(StatsError::InvalidParameter {
            name: "probability",
            rule: "strictly between 0 and 1",
            value: tail,
        });
    }
    dist::t_isf(tail, df)
}

/// Two-sided p-value of a t statistic.
fn t_two_sided_p(t: f64, df: f64) -> Result<f64, StatsError> {
    Ok((2.0 * dist::t_sf(t.abs(), df)?).min(1.0))
}

fn median(sorted: &[f64]) -> f64 {
    let n = sorted.len();
    if n == 0 {
        return f64::NAN;
    }
    if n % 2 == 1 {
        sorted[n / 2]
    } else {
        0.5 * (sorted[n / 2 - 1] + sorted[n / 2])
    }
}

/// Yates's algorithm: the contrast totals of a `2^n` factorial from values in
/// standard order.
///
/// Entry `j` of the result is the contrast `sum_i x_j(i) values[i]`, where
/// `x_j` is the ±1 column of the interaction whose factors are the set bits
/// of `j` (bit 0 is the first factor); entry 0 is the total.
///
/// # Remarks
/// Algorithm: `n` passes, each replacing the vector by the sums of adjacent
/// pairs followed by their differences (second minus first) (Yates 1937,
/// "The design and analysis of factorial experiments", Imperial Bureau of
/// Soil Science). `n 2^n` additions; rounding error is that of summing `2^n`
/// terms. Checked against direct contrast sums in the tests.
///
/// # Errors
/// `InvalidParameter` if the length is not a power of two of at least 2 or a
/// value is not finite.
pub fn yates_transform(values: &[f64]) -> Result<Vec<f64>, StatsError> {
    let n_values = values.len();
    if n_values < 2 || !n_values.is_power_of_two() {
        return Err(StatsError::InvalidParameter {
            name: "number of values for Yates's algorithm",
            rule: "a power of two, at least 2",
            value: n_values as f64,
        });
    }
    check_finite(values, "value")?;
    let half = n_values / 2;
    let mut current = values.to_vec();
    let mut next = vec![0.0; n_values];
    let n_passes = n_values.trailing_zeros();
    for _ in 0..n_passes {
        for i in 0..half {
            let first = current[2 * i];
            let second = current[2 * i + 1];
            next[i] = first + second;
            next[half + i] = second - first;
        }
        std::mem::swap(&mut current, &mut next);
    }
    Ok(current)
}

/// The grand mean and effects of a `2^n` factorial from cell means in
/// standard order, by Yates's algorithm: result `[0]` is the grand mean and
/// `[j]` (for `j >= 1`) the effect of the interaction with the set bits of `j`,
/// i.e. contrast / `2^(n-1)`.
///
/// # Errors
/// As [`yates_transform`].
pub fn yates_effects(cell_means: &[f64]) -> Result<Vec<f64>, StatsError> {
    let contrasts = yates_transform(cell_means)?;
    let n_cells = cell_means.len() as f64;
    Ok(contrasts
        .iter()
        .enumerate()
        .map(|(j, &c)| if j == 0 { c / n_cells } else { 2.0 * c / n_cells })
        .collect())
}

/// The effect of `word` computed directly: the mean response of the runs on
/// which the product of the word's coded columns is +1 minus the mean of
/// those on which it is -1. Works for any two-level design (regular or not).
///
/// # Errors
/// `InvalidParameter` if responses and runs differ in number, a level is not
/// ±1, the word uses a factor beyond the design, or the column is constant;
/// `TooFewValues` with no runs.
pub fn contrast_effect(runs: &[Vec<f64>], responses: &[f64], word: Word) -> Result<f64, StatsError> {
    if runs.len() != responses.len() {
        return Err(StatsError::InvalidParameter {
            name: "number of responses",
            rule: "equal to the number of runs",
            value: responses.len() as f64,
        });
    }
    check_finite(responses, "response")?;
    let (n_factors, masks) = runs_to_masks(runs)?;
    if word.n_factors_spanned() > n_factors {
        return Err(StatsError::InvalidParameter {
            name: "word",
            rule: "made of the design's factors",
            value: word.n_factors_spanned() as f64,
        });
    }
    let (mut sum_high, mut n_high, mut sum_low, mut n_low) = (0.0, 0usize, 0.0, 0usize);
    for (&mask, &y) in masks.iter().zip(responses) {
        // Column product is +1 when an even number of the word's factors are
        // low.
        let n_low_factors = (word.0 & !mask).count_ones();
        if n_low_factors.is_multiple_of(2) {
            sum_high += y;
            n_high += 1;
        } else {
            sum_low += y;
            n_low += 1;
        }
    }
    if n_high == 0 || n_low == 0 {
        return Err(StatsError::InvalidParameter {
            name: "contrast column",
            rule: "not constant over the runs",
            value: if n_high == 0 { -1.0 } else { 1.0 },
        });
    }
    Ok(sum_high / n_high as f64 - sum_low / n_low as f64)
}

/// Runs arranged in standard order of a set of basic factors.
#[derive(Debug, Clone, PartialEq)]
pub struct StandardOrder {
    /// The basic factors, in the order that defines the cell index (the
    /// first alternates fastest).
    pub basic_factors: Vec<usize>,
    /// For each run (in the order given), its cell: bit `j` set when basic
    /// factor `j` is at +1.
    pub cell_of_run: Vec<usize>,
    /// Run indices in standard order; replicates of a cell keep their
    /// recorded order.
    pub order: Vec<usize>,
    /// Number of runs in each of the `2^n` cells.
    pub cell_counts: Vec<usize>,
}

/// Puts runs (any recorded order, possibly replicated) into standard order
/// of the given basic factors: cell `(1)`, `a`, `b`, `ab`, `c`, ...
///
/// # Errors
/// As [`runs_to_masks`]; `InvalidParameter` if a basic factor index is out
/// of range or repeated.
pub fn standard_order(runs: &[Vec<f64>], basic_factors: &[usize]) -> Result<StandardOrder, StatsError> {
    let (n_factors, masks) = runs_to_masks(runs)?;
    let mut used = 0u32;
    for &factor in basic_factors {
        if factor >= n_factors || used & (1 << factor) != 0 {
            return Err(StatsError::InvalidParameter {
                name: "basic factor",
                rule: "a distinct factor index of the design",
                value: factor as f64,
            });
        }
        used |= 1 << factor;
    }
    let cell_of_run: Vec<usize> = masks
        .iter()
        .map(|&mask| {
            basic_factors
                .iter()
                .enumerate()
                .filter(|(_, &factor)| mask & (1 << factor) != 0)
                .map(|(position, _)| 1usize << position)
                .sum()
        })
        .collect();
    let mut order: Vec<usize> = (0..runs.len()).collect();
    order.sort_by_key(|&i| cell_of_run[i]);
    let mut cell_counts = vec![0usize; 1 << basic_factors.len()];
    for &cell in &cell_of_run {
        cell_counts[cell] += 1;
    }
    Ok(StandardOrder {
        basic_factors: basic_factors.to_vec(),
        cell_of_run,
        order,
        cell_counts,
    })
}

/// Lenth's analysis of unreplicated contrasts.
#[derive(Debug, Clone, PartialEq)]
pub struct LenthAnalysis {
    /// Number of contrasts `m`.
    pub n_contrasts: usize,
    /// Initial scale `s0 = 1.5 median |c|`.
    pub initial_scale: f64,
    /// Pseudo standard error `PSE = 1.5 median{|c| : |c| < 2.5 s0}`.
    pub pseudo_standard_error: f64,
    /// Degrees of freedom `d = m / 3`.
    pub df: f64,
    /// Confidence level used (e.g. 0.95).
    pub confidence: f64,
    /// `t((1 + confidence) / 2; d)`.
    pub t_individual: f64,
    /// `gamma = (1 + confidence^(1/m)) / 2`.
    pub gamma: f64,
    /// `t(gamma; d)`.
    pub t_simultaneous: f64,
    /// Margin of error `ME = t_individual PSE`.
    pub margin_of_error: f64,
    /// Simultaneous margin of error `SME = t_simultaneous PSE`.
    pub simultaneous_margin_of_error: f64,
    /// `c / PSE` for each contrast, in input order.
    pub t_ratios: Vec<f64>,
    /// Whether `|c| > ME`, in input order.
    pub exceeds_margin: Vec<bool>,
    /// Whether `|c| > SME`, in input order.
    pub exceeds_simultaneous_margin: Vec<bool>,
}

/// Lenth's method for the contrasts (effects) of an unreplicated design.
///
/// # Remarks
/// Lenth, R. V. (1989), "Quick and easy analysis of unreplicated factorials",
/// Technometrics 31, 469-473: `s0 = 1.5 median|c_j|`,
/// `PSE = 1.5 median{|c_j| : |c_j| < 2.5 s0}`, `d = m/3`,
/// `ME = t(1 - alpha/2; d) PSE`, `SME = t(gamma; d) PSE` with
/// `gamma = (1 + (1 - alpha)^(1/m)) / 2`; here `confidence = 1 - alpha`.
/// Medians of an even count are the mean of the two middle values. The t
/// quantiles (fractional df allowed) come from the engine's Student t inverse survival
/// function ([`crate::stats::dist::t_isf`]), checked against scipy in the tests.
///
/// # Errors
/// `TooFewValues` if fewer than 3 contrasts; `InvalidParameter` if a contrast
/// is not finite, the confidence is not in (0, 1), or the pseudo standard
/// error is zero (most contrasts exactly zero).
pub fn lenth(contrasts: &[f64], confidence: f64) -> Result<LenthAnalysis, StatsError> {
    let m = contrasts.len();
    if m < 3 {
        return Err(StatsError::TooFewValues {
            what: "contrasts for Lenth's method",
            needed: 3,
            got: m,
        });
    }
    check_finite(contrasts, "contrast")?;
    if !(confidence > 0.0 && confidence < 1.0) {
        return Err(StatsError::InvalidParameter {
            name: "confidence",
            rule: "strictly between 0 and 1",
            value: confidence,
        });
    }
    let mut absolute: Vec<f64> = contrasts.iter().map(|c| c.abs()).collect();
    absolute.sort_by(f64::total_cmp);
    let initial_scale = 1.5 * median(&absolute);
    let trimmed: Vec<f64> = absolute.iter().copied().filter(|&a| a < 2.5 * initial_scale).collect();
    let pseudo_standard_error = 1.5 * median(&trimmed);
    if pseudo_standard_error.is_nan() || pseudo_standard_error <= 0.0 {
        return Err(StatsError::InvalidParameter {
            name: "pseudo standard error",
            rule: "positive (most contrasts are exactly zero)",
            value: pseudo_standard_error,
        });
    }
    let df = m as f64 / 3.0;
    // Upper quantiles from the survival side: 1 - gamma = (1 - confidence^(1/m)) / 2
    // is formed with expm1, so it keeps its digits when the confidence is near 1.
    let t_individual = upper_t_quantile(0.5 * (1.0 - confidence), df)?;
    let gamma = 0.5 * (1.0 + confidence.powf(1.0 / m as f64));
    let simultaneous_tail = -0.5 * (confidence.ln() / m as f64).exp_m1();
    let t_simultaneous = upper_t_quantile(simultaneous_tail, df)?;
    let margin_of_error = t_individual * pseudo_standard_error;
    let simultaneous_margin_of_error = t_simultaneous * pseudo_standard_error;
    Ok(LenthAnalysis {
        n_contrasts: m,
        initial_scale,
        pseudo_standard_error,
        df,
        confidence,
        t_individual,
        gamma,
        t_simultaneous,
        margin_of_error,
        simultaneous_margin_of_error,
        t_ratios: contrasts.iter().map(|c| c / pseudo_standard_error).collect(),
        exceeds_margin: contrasts.iter().map(|c| c.abs() > margin_of_error).collect(),
        exceeds_simultaneous_margin: contrasts
            .iter()
            .map(|c| c.abs() > simultaneous_margin_of_error)
            .collect(),
    })
}

/// One point of a normal or half-normal probability plot.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PlotPoint {
    /// Index of the value in the input.
    pub index: usize,
    /// The plotted value (the effect, or its absolute value for the
    /// half-normal plot).
    pub value: f64,
    /// Rank `i` (1-based) in increasing order of the plotted value.
    pub rank: usize,
    /// Plotting probability `(i - 0.5) / m`.
    pub probability: f64,
    /// Theoretical quantile: `Phi^{-1}(p)` (normal plot) or
    /// `Phi^{-1}(0.5 + p/2)` (half-normal plot).
    pub quantile: f64,
}

fn plot_positions(values: &[f64], half_normal: bool) -> Result<Vec<PlotPoint>, StatsError> {
    let m = values.len();
    if m == 0 {
        return Err(StatsError::TooFewValues {
            what: "effects to plot",
            needed: 1,
            got: 0,
        });
    }
    check_finite(values, "effect")?;
    let plotted: Vec<f64> = if half_normal {
        values.iter().map(|v| v.abs()).collect()
    } else {
        values.to_vec()
    };
    let mut order: Vec<usize> = (0..m).collect();
    order.sort_by(|&a, &b| plotted[a].total_cmp(&plotted[b]));
    Ok(order
        .iter()
        .enumerate()
        .map(|(position, &index)| {
            let probability = (position as f64 + 0.5) / m as f64;
            // The half-normal point 0.5 + 0.5 p is taken as the upper quantile at
            // 0.5 (1 - p), which keeps its digits when p is near 1.
            let quantile = if half_normal {
                dist::normal_isf(0.5 - 0.5 * probability).unwrap_or(f64::NAN)
            } else {
                dist::normal_quantile(probability).unwrap_or(f64::NAN)
            };
            PlotPoint {
                index,
                value: plotted[index],
                rank: position + 1,
                probability,
                quantile,
            }
        })
        .collect())
}

/// Normal probability plot positions of effects (Daniel 1959), sorted by
/// value.
///
/// # Remarks
/// The `i`-th smallest of `m` effects is plotted against
/// `Phi^{-1}((i - 0.5) / m)` (Hazen plotting positions, as used by Daniel,
/// C. (1959), "Use of half-normal plots in interpreting factorial two-level
/// experiments", Technometrics 1, 311-341). Ties keep input order. The
/// normal quantile is [`crate::stats::dist::normal_quantile`] (about 1e-15
/// relative).
///
/// # Errors
/// `TooFewValues` if empty; `InvalidParameter` if a value is not finite.
pub fn normal_plot_positions(effects: &[f64]) -> Result<Vec<PlotPoint>, StatsError> {
    plot_positions(effects, false)
}

/// Half-normal plot positions of effects (Daniel 1959), sorted by absolute
/// value.
///
/// # Remarks
/// The `i`-th smallest of `m` absolute effects is plotted against the
/// half-normal quantile `Phi^{-1}(0.5 + 0.5 (i - 0.5) / m)`, i.e. the
/// quantile of `|Z|` at probability `(i - 0.5) / m` (Daniel 1959, see
/// [`normal_plot_positions`]).
///
/// # Errors
/// `TooFewValues` if empty; `InvalidParameter` if a value is not finite.
pub fn half_normal_plot_positions(effects: &[f64]) -> Result<Vec<PlotPoint>, StatsError> {
    plot_positions(effects, true)
}

/// Test for curvature from centre points.
#[derive(Debug, Clone, PartialEq)]
pub struct CurvatureTest {
    /// Number of factorial (corner) observations.
    pub n_factorial: usize,
    /// Number of centre-point observations.
    pub n_centre: usize,
    /// Mean of the factorial observations.
    pub factorial_mean: f64,
    /// Mean of the centre observations.
    pub centre_mean: f64,
    /// `factorial_mean - centre_mean`.
    pub difference: f64,
    /// Single-degree-of-freedom curvature sum of squares,
    /// `n_F n_C d^2 / (n_F + n_C)`.
    pub sum_of_squares: f64,
    /// Degrees of freedom of the error the difference is judged by: `n_C - 1` from
    /// [`curvature_test`]; all the pure error of the trial (replicated corners and
    /// centre points, within blocks) from [`analyse_two_level_in_layout`].
    pub pure_error_df: usize,
    /// Standard deviation of the centre points about their own means (`None` if they
    /// give no degree of freedom).
    pub centre_sd: Option<f64>,
    /// Standard error of `difference` (`None` without error degrees of freedom).
    pub standard_error: Option<f64>,
    /// `difference / standard_error`.
    pub t_value: Option<f64>,
    /// Two-sided p-value on `pure_error_df` df.
    pub p_value: Option<f64>,
}

/// Curvature test: difference between the mean of the factorial runs and
/// the mean of the centre points, with its standard error from the centre
/// points' pure error.
///
/// # Remarks
/// Under a first-order model with interactions the two means agree; their
/// difference estimates the sum of the pure quadratic coefficients. The
/// standard error is `s_C sqrt(1/n_F + 1/n_C)` with `s_C` the centre points'
/// standard deviation on `n_C - 1` df (common practice, e.g. Montgomery,
/// "Design and Analysis of Experiments", section on centre points).
/// `t^2` equals the F ratio `SS_curvature / s_C^2`.
///
/// # Errors
/// `TooFewValues` if either group is empty; `InvalidParameter` on non-finite
/// values.
pub fn curvature_test(factorial_responses: &[f64], centre_responses: &[f64]) -> Result<CurvatureTest, StatsError> {
    if factorial_responses.is_empty() {
        return Err(StatsError::TooFewValues {
            what: "factorial observations",
            needed: 1,
            got: 0,
        });
    }
    if centre_responses.is_empty() {
        return Err(StatsError::TooFewValues {
            what: "centre points",
            needed: 1,
            got: 0,
        });
    }
    check_finite(factorial_responses, "response")?;
    check_finite(centre_responses, "response")?;
    let n_factorial = factorial_responses.len();
    let n_centre = centre_responses.len();
    let factorial_mean = factorial_responses.iter().sum::<f64>() / n_factorial as f64;
    let centre_mean = centre_responses.iter().sum::<f64>() / n_centre as f64;
    let difference = factorial_mean - centre_mean;
    let sum_of_squares = (n_factorial * n_centre) as f64 * difference * difference / (n_factorial + n_centre) as f64;
    let pure_error_df = n_centre - 1;
    let (centre_sd, standard_error, t_value, p_value) = if n_centre >= 2 {
        let ss: f64 = centre_responses.iter().map(|y| (y - centre_mean).powi(2)).sum();
        let sd = (ss / pure_error_df as f64).sqrt();
        let se = sd * (1.0 / n_factorial as f64 + 1.0 / n_centre as f64).sqrt();
        if se > 0.0 {
            let t = difference / se;
            (
                Some(sd),
                Some(se),
                Some(t),
                Some(t_two_sided_p(t, pure_error_df as f64)?),
            )
        } else {
            (Some(sd), Some(se), None, None)
        }
    } else {
        (None, None, None, None)
    };
    Ok(CurvatureTest {
        n_factorial,
        n_centre,
        factorial_mean,
        centre_mean,
        difference,
        sum_of_squares,
        pure_error_df,
        centre_sd,
        standard_error,
        t_value,
        p_value,
    })
}

/// Options for [`analyse_two_level`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct AnalysisOptions {
    /// Confidence level for Lenth's margins of error (default 0.95).
    pub lenth_confidence: f64,
}

impl Default for AnalysisOptions {
    fn default() -> Self {
        AnalysisOptions { lenth_confidence: 0.95 }
    }
}

/// One estimated effect (one alias chain).
#[derive(Debug, Clone, PartialEq)]
pub struct EffectEstimate {
    /// The alias chain; the effect is reported for its leader.
    pub chain: AliasChain,
    /// The interaction of basic factors whose Yates row this is.
    pub basic_word: Word,
    /// Effect of the leader (difference of averages); it estimates the
    /// signed sum of the chain's effects.
    pub effect: f64,
    /// Regression coefficient of the leader's ±1 column, `effect / 2`.
    pub coefficient: f64,
    /// Standard error of the effect from pure error (replicates and centre
    /// points), if there is any.
    pub standard_error: Option<f64>,
    /// `effect / standard_error`.
    pub t_value: Option<f64>,
    /// Two-sided p-value on the pure-error df.
    pub p_value: Option<f64>,
}

/// Complete analysis of a two-level experiment.
#[derive(Debug, Clone, PartialEq)]
pub struct TwoLevelAnalysis {
    /// The design detected from the factorial runs.
    pub design: DesignSummary,
    /// The basic factors used for standard order and Yates's algorithm.
    pub basic_factors: Vec<usize>,
    /// Factorial runs (indices into the input) in standard order.
    pub standard_order: Vec<usize>,
    /// Mean of the factorial cell means (the intercept of the coded model).
    pub grand_mean: f64,
    /// One estimate per alias chain, in standard order of the basic factors
    /// (`A`, `B`, `AB`, `C`, ... of the basic factors).
    pub effects: Vec<EffectEstimate>,
    /// Chains whose column is constant within every block: their estimate is a
    /// difference between blocks, so they are not effects (no test, not in
    /// Lenth's method or the plots).
    pub confounded_with_blocks: Vec<EffectEstimate>,
    /// Pure-error variance: variation among runs at the same settings in the
    /// same block (replicated corners and centre points pooled).
    pub pure_error_variance: Option<f64>,
    /// Degrees of freedom of the pooled pure error.
    pub pure_error_df: usize,
    /// Curvature test, when there are centre points (judged by all the pure
    /// error).
    pub curvature: Option<CurvatureTest>,
    /// Lenth's analysis of the effects (when there are at least 3 effects
    /// and the pseudo standard error is positive).
    pub lenth: Option<LenthAnalysis>,
    /// Normal plot positions of the effects (`index` refers to `effects`).
    pub normal_plot: Vec<PlotPoint>,
    /// Half-normal plot positions of the effects.
    pub half_normal_plot: Vec<PlotPoint>,
}

/// How the runs of a two-level trial are grouped beyond their coded levels.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct RunLayout<'a> {
    /// The block of each run (any index per block); empty when the trial has no blocks.
    pub block_of_run: &'a [usize],
    /// Marks the centre runs; empty to take the rows of all zeros as centre runs. A
    /// marked run may hold -1 or +1 for factors that have no middle level (text
    /// factors): it is then a centre run at those factors' levels.
    pub is_centre: &'a [bool],
}

/// Analyses a two-level full factorial or regular fraction, possibly
/// replicated, possibly with centre points (rows of all zeros), runs in any
/// order; as [`analyse_two_level_in_layout`] without blocks.
///
/// # Errors
/// As [`analyse_two_level_in_layout`].
pub fn analyse_two_level(
    runs: &[Vec<f64>],
    responses: &[f64],
    options: &AnalysisOptions,
) -> Result<TwoLevelAnalysis, StatsError> {
    analyse_two_level_in_layout(runs, responses, &RunLayout::default(), options)
}

/// Sums and counts of one group of runs.
#[derive(Debug, Clone, Copy, Default)]
struct GroupSum {
    n: usize,
    sum: f64,
}

/// Within-group sum of squares and degrees of freedom of responses grouped by key
/// (two passes: the group means, then squared deviations).
fn within_groups<K: Ord + Clone>(keys: &[K], responses: &[f64]) -> (f64, usize) {
    let mut groups: std::collections::BTreeMap<K, GroupSum> = std::collections::BTreeMap::new();
    for (key, &y) in keys.iter().zip(responses) {
        let group = groups.entry(key.clone()).or_default();
        group.n += 1;
        group.sum += y;
    }
    let ss = keys
        .iter()
        .zip(responses)
        .map(|(key, &y)| {
            let group = groups[key];
            (y - group.sum / group.n as f64).powi(2)
        })
        .sum();
    (ss, keys.len() - groups.len())
}

/// Analyses a two-level full factorial or regular fraction, possibly
/// replicated, possibly with centre points and blocks, runs in any order.
///
/// Steps: detect the design from the factorial runs; pick basic factors;
/// average each cell; Yates's algorithm on the cell means in standard order;
/// name each effect by the leader of its alias chain (with the sign that
/// relates the two); set apart the chains whose column is constant within
/// every block (confounded with blocks: their estimate is a difference
/// between blocks, not an effect); standard errors from pure error
/// `Var(effect) = 4 s^2 sum_c (1/r_c) / N_cells^2`; curvature test; Lenth;
/// plot positions.
///
/// # Remarks
/// Pure error is the variation among runs at the same coded settings in the
/// same block (replicated corners and centre points alike), so a shift
/// between blocks never enters it. The curvature test compares the corner
/// runs with the centre runs within each stratum (block, and level of each
/// factor without a middle level), weighting stratum `s` by
/// `w_s = n_Fs n_Cs / (n_Fs + n_Cs)`: the estimate is `sum w_s d_s / sum w_s`
/// with standard error `s_pe / sqrt(sum w_s)` on the pure-error df, and
/// `SS = (sum w_s d_s)^2 / sum w_s` (the least-squares contrast of a
/// centre-point indicator after strata; with one stratum it is the usual
/// `n_F n_C d^2 / (n_F + n_C)`, Montgomery, "Design and Analysis of
/// Experiments", section on centre points). The effects of the chains not
/// confounded with blocks are unaffected by a block shift when every block
/// holds a regular fraction of the design (each such column sums to zero
/// within each block), as block plans make them.
///
/// # Errors
/// `InvalidParameter` if runs and responses differ in number, a row mixes
/// zeros with ±1 or holds other values, a response is not finite, the layout
/// does not match the runs, or the factorial runs are not a regular fraction
/// or full factorial; as [`detect_design`] otherwise.
pub fn analyse_two_level_in_layout(
    runs: &[Vec<f64>],
    responses: &[f64],
    layout: &RunLayout<'_>,
    options: &AnalysisOptions,
) -> Result<TwoLevelAnalysis, StatsError> {
    // Any magnitude: responses beyond 2^±200 are divided by a power of two near the
    // largest (exact) so that no square overflows or underflows; every figure in the
    // response's unit is put back afterwards, t and p are free of the unit.
    let exponent = magnitude_exponent(responses);
    if exponent == 0 {
        return analyse_at_unit_scale(runs, responses, layout, options);
    }
    let scaled: Vec<f64> = responses
        .iter()
        .map(|&y| scale_by_power_of_two(y, -i64::from(exponent)))
        .collect();
    Ok(analyse_at_unit_scale(runs, &scaled, layout, options)?.in_unit_of(exponent))
}

impl TwoLevelAnalysis {
    /// The analysis of responses divided by `2^exponent`, put back in the responses' unit:
    /// levels, effects, standard errors and margins times `2^exponent`, the pure-error
    /// variance and the curvature sum of squares times `4^exponent` (infinite beyond the
    /// largest `f64`, NaN below the smallest normal one); t, p and Lenth's ratios as they
    /// are.
    fn in_unit_of(mut self, exponent: i32) -> Self {
        let level = |value: f64| scale_by_power_of_two(value, i64::from(exponent));
        let square = |value: f64| unscale_square(value, exponent);
        self.grand_mean = level(self.grand_mean);
        for estimate in self.effects.iter_mut().chain(self.confounded_with_blocks.iter_mut()) {
            estimate.effect = level(estimate.effect);
            estimate.coefficient = level(estimate.coefficient);
            estimate.standard_error = estimate.standard_error.map(level);
        }
        self.pure_error_variance = self.pure_error_variance.map(square);
        if let Some(curvature) = self.curvature.as_mut() {
            curvature.factorial_mean = level(curvature.factorial_mean);
            curvature.centre_mean = level(curvature.centre_mean);
            curvature.difference = level(curvature.difference);
            curvature.sum_of_squares = square(curvature.sum_of_squares);
            curvature.centre_sd = curvature.centre_sd.map(level);
            curvature.standard_error = curvature.standard_error.map(level);
        }
        if let Some(lenth) = self.lenth.as_mut() {
            lenth.initial_scale = level(lenth.initial_scale);
            lenth.pseudo_standard_error = level(lenth.pseudo_standard_error);
            lenth.margin_of_error = level(lenth.margin_of_error);
            lenth.simultaneous_margin_of_error = level(lenth.simultaneous_margin_of_error);
        }
        for point in self.normal_plot.iter_mut().chain(self.half_normal_plot.iter_mut()) {
            point.value = level(point.value);
        }
        self
    }
}

/// [`analyse_two_level_in_layout`] on responses whose squares stay in range.
fn analyse_at_unit_scale(
    runs: &[Vec<f64>],
    responses: &[f64],
    layout: &RunLayout<'_>,
    options: &AnalysisOptions,
) -> Result<TwoLevelAnalysis, StatsError> {
    if runs.len() != responses.len() {
        return Err(StatsError::InvalidParameter {
            name: "number of responses",
            rule: "equal to the number of runs",
            value: responses.len() as f64,
        });
    }
    for (given, name) in [
        (layout.block_of_run.len(), "number of block labels"),
        (layout.is_centre.len(), "number of centre-run marks"),
    ] {
        if given != 0 && given != runs.len() {
            return Err(StatsError::InvalidParameter {
                name,
                rule: "none, or one per run",
                value: given as f64,
            });
        }
    }
    check_finite(responses, "response")?;
    if !(options.lenth_confidence > 0.0 && options.lenth_confidence < 1.0) {
        return Err(StatsError::InvalidParameter {
            name: "Lenth confidence",
            rule: "strictly between 0 and 1",
            value: options.lenth_confidence,
        });
    }
    let block_of = |index: usize| layout.block_of_run.get(index).copied().unwrap_or(0);
    let is_centre = |index: usize| match layout.is_centre.get(index) {
        Some(&marked) => marked,
        None => {
            let row = &runs[index];
            !row.is_empty() && row.iter().all(|v| v.abs() <= CENTRE_TOLERANCE)
        }
    };
    let mut factorial_runs: Vec<Vec<f64>> = Vec::new();
    let mut factorial_index: Vec<usize> = Vec::new();
    let mut centre_index: Vec<usize> = Vec::new();
    for (index, row) in runs.iter().enumerate() {
        if is_centre(index) {
            centre_index.push(index);
        } else {
            factorial_runs.push(row.clone());
            factorial_index.push(index);
        }
    }
    let design = detect_design(&factorial_runs)?;
    if design.kind == DesignKind::Irregular {
        return Err(StatsError::InvalidParameter {
            name: "design",
            rule: "a regular fraction or full factorial (distinct runs shown)",
            value: design.n_distinct_runs as f64,
        });
    }
    let basic_factors = design.relation.basic_factors();
    let order = standard_order(&factorial_runs, &basic_factors)?;
    let (_, masks) = runs_to_masks(&factorial_runs)?;
    let n_cells = order.cell_counts.len();
    let mut sums = vec![0.0; n_cells];
    for (run, &cell) in order.cell_of_run.iter().enumerate() {
        sums[cell] += responses[factorial_index[run]];
    }
    let cell_means: Vec<f64> = sums
        .iter()
        .zip(&order.cell_counts)
        .map(|(s, &r)| s / r as f64)
        .collect();
    // Pure error: runs at the same coded settings in the same block.
    let coded_key = |index: usize| -> (usize, Vec<i8>) {
        (
            block_of(index),
            runs[index].iter().map(|v| v.round().clamp(-1.0, 1.0) as i8).collect(),
        )
    };
    let all_keys: Vec<(usize, Vec<i8>)> = (0..runs.len()).map(coded_key).collect();
    let (within_ss, pure_error_df) = within_groups(&all_keys, responses);
    let pure_error_variance = if pure_error_df > 0 {
        Some(within_ss / pure_error_df as f64)
    } else {
        None
    };
    // With every cell run equally often, Yates's algorithm runs on the cell sums and
    // the one division by the count comes last: sums of short values are exact, so a
    // small effect beside large ones is not built from rounded cell means (each
    // rounding is magnified by the ratio of the largest cell mean to the effect).
    let yates = match order.cell_counts.first() {
        Some(&count) if order.cell_counts.iter().all(|&r| r == count) => yates_effects(&sums)?
            .into_iter()
            .map(|value| value / count as f64)
            .collect(),
        _ => yates_effects(&cell_means)?,
    };
    let inverse_count_sum: f64 = order.cell_counts.iter().map(|&r| 1.0 / r as f64).sum();
    let effect_se = pure_error_variance
        .map(|v| (4.0 * v * inverse_count_sum).sqrt() / n_cells as f64)
        .filter(|se| *se > 0.0);
    let factorial_blocks: Vec<usize> = factorial_index.iter().map(|&i| block_of(i)).collect();
    let n_blocks = factorial_blocks.iter().collect::<std::collections::BTreeSet<_>>().len();
    let mut effects = Vec::with_capacity(n_cells - 1);
    let mut confounded_with_blocks = Vec::new();
    for (cell, &basic_effect) in yates.iter().enumerate().skip(1) {
        let basic_word = Word(
            basic_factors
                .iter()
                .enumerate()
                .filter(|(position, _)| cell & (1 << position) != 0)
                .map(|(_, &factor)| 1u32 << factor)
                .sum(),
        );
        let chain = design.relation.alias_chain(basic_word)?;
        let sign = chain.sign_of(basic_word).unwrap_or(1.0);
        let effect = sign * basic_effect;
        if n_blocks > 1 && constant_within_blocks(&masks, &factorial_blocks, basic_word) {
            confounded_with_blocks.push(EffectEstimate {
                chain,
                basic_word,
                effect,
                coefficient: 0.5 * effect,
                standard_error: None,
                t_value: None,
                p_value: None,
            });
            continue;
        }
        let (t_value, p_value) = match effect_se {
            Some(se) => {
                let t = effect / se;
                (Some(t), Some(t_two_sided_p(t, pure_error_df as f64)?))
            }
            None => (None, None),
        };
        effects.push(EffectEstimate {
            chain,
            basic_word,
            effect,
            coefficient: 0.5 * effect,
            standard_error: effect_se,
            t_value,
            p_value,
        });
    }
    let curvature = if centre_index.is_empty() {
        None
    } else {
        stratified_curvature(
            runs,
            responses,
            &factorial_index,
            &centre_index,
            &block_of,
            pure_error_variance,
            pure_error_df,
        )?
    };
    let effect_values: Vec<f64> = effects.iter().map(|e| e.effect).collect();
    let lenth = if effect_values.len() >= 3 {
        lenth(&effect_values, options.lenth_confidence).ok()
    } else {
        None
    };
    let (normal_plot, half_normal_plot) = if effect_values.is_empty() {
        (Vec::new(), Vec::new())
    } else {
        (
            normal_plot_positions(&effect_values)?,
            half_normal_plot_positions(&effect_values)?,
        )
    };
    let standard_order_runs = order.order.iter().map(|&i| factorial_index[i]).collect();
    Ok(TwoLevelAnalysis {
        design,
        basic_factors,
        standard_order: standard_order_runs,
        grand_mean: yates[0],
        effects,
        confounded_with_blocks,
        pure_error_variance,
        pure_error_df,
        curvature,
        lenth,
        normal_plot,
        half_normal_plot,
    })
}

/// Whether the ±1 column of `word` is constant within every block (it is then a
/// contrast between blocks).
fn constant_within_blocks(masks: &[u32], blocks: &[usize], word: Word) -> bool {
    let mut sign_of_block: std::collections::BTreeMap<usize, bool> = std::collections::BTreeMap::new();
    masks.iter().zip(blocks).all(|(&mask, &block)| {
        let positive = (word.0 & !mask).count_ones().is_multiple_of(2);
        *sign_of_block.entry(block).or_insert(positive) == positive
    })
}

/// The curvature test within strata (block, and the levels of the factors that the
/// centre runs hold away from zero), judged by all the trial's pure error; see
/// [`analyse_two_level_in_layout`]. `None` when no stratum holds both corner runs and
/// centre runs (centre points in a block of their own say nothing about curvature).
fn stratified_curvature(
    runs: &[Vec<f64>],
    responses: &[f64],
    factorial_index: &[usize],
    centre_index: &[usize],
    block_of: &dyn Fn(usize) -> usize,
    pure_error_variance: Option<f64>,
    pure_error_df: usize,
) -> Result<Option<CurvatureTest>, StatsError> {
    let n_factors = runs.first().map_or(0, Vec::len);
    // Factors without a middle level: those some centre run holds away from zero.
    let no_middle: Vec<usize> = (0..n_factors)
        .filter(|&f| centre_index.iter().any(|&i| runs[i][f].abs() > CENTRE_TOLERANCE))
        .collect();
    let stratum = |index: usize| -> (usize, Vec<i8>) {
        (
            block_of(index),
            no_middle
                .iter()
                .map(|&f| if runs[index][f] > 0.0 { 1 } else { -1 })
                .collect(),
        )
    };
    let mut strata: std::collections::BTreeMap<(usize, Vec<i8>), (GroupSum, GroupSum)> =
        std::collections::BTreeMap::new();
    for &index in factorial_index {
        let entry = strata.entry(stratum(index)).or_default();
        entry.0.n += 1;
        entry.0.sum += responses[index];
    }
    for &index in centre_index {
        let entry = strata.entry(stratum(index)).or_default();
        entry.1.n += 1;
        entry.1.sum += responses[index];
    }
    let (mut weight_sum, mut weighted_difference) = (0.0, 0.0);
    for (factorial, centre) in strata.values() {
        if factorial.n == 0 || centre.n == 0 {
            continue;
        }
        let weight = (factorial.n * centre.n) as f64 / (factorial.n + centre.n) as f64;
        let difference = factorial.sum / factorial.n as f64 - centre.sum / centre.n as f64;
        weight_sum += weight;
        weighted_difference += weight * difference;
    }
    if weight_sum <= 0.0 {
        return Ok(None);
    }
    let centre_keys: Vec<(usize, Vec<i8>)> = centre_index.iter().map(|&i| stratum(i)).collect();
    let centre_values: Vec<f64> = centre_index.iter().map(|&i| responses[i]).collect();
    let (centre_ss, centre_df) = within_groups(&centre_keys, &centre_values);
    let n_factorial = factorial_index.len();
    let n_centre = centre_index.len();
    let factorial_mean = factorial_index.iter().map(|&i| responses[i]).sum::<f64>() / n_factorial.max(1) as f64;
    let centre_mean = centre_values.iter().sum::<f64>() / n_centre as f64;
    let difference = weighted_difference / weight_sum;
    let standard_error = pure_error_variance.map(|v| (v / weight_sum).sqrt());
    let (t_value, p_value) = match standard_error.filter(|se| *se > 0.0) {
        Some(se) => {
            let t = difference / se;
            (Some(t), Some(t_two_sided_p(t, pure_error_df as f64)?))
        }
        None => (None, None),
    };
    Ok(Some(CurvatureTest {
        n_factorial,
        n_centre,
        factorial_mean,
        centre_mean,
        difference,
        sum_of_squares: weighted_difference * weighted_difference / weight_sum,
        pure_error_df,
        centre_sd: (centre_df > 0).then(|| (centre_ss / centre_df as f64).sqrt()),
        standard_error,
        t_value,
        p_value,
    }))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::stats::two_level::{DefiningRelation, SignedWord};

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

    fn close(a: f64, b: f64, tolerance: f64) -> bool {
        (a - b).abs() <= tolerance * (1.0 + b.abs())
    }

    fn word(text: &str) -> Word {
        Word::parse(text).unwrap()
    }

    /// NIST/SEMATECH e-Handbook of Statistical Methods, section 5.5.9
    /// (eddy current probe sensitivity, 2^3 full factorial): responses in
    /// standard order of X1 (number of turns), X2 (winding distance), X3
    /// (wire gauge), from memory.
    const EDDY_RESPONSES: [f64; 8] = [1.70, 4.57, 0.55, 3.39, 1.51, 4.59, 0.67, 4.29];

    #[test]
    fn nist_eddy_current_effects() {
        let runs = DefiningRelation::full_factorial(3).unwrap().runs();
        // Shuffle the recorded order: the analysis must not depend on it.
        let permutation = [5usize, 2, 7, 0, 3, 6, 1, 4];
        let shuffled_runs: Vec<Vec<f64>> = permutation.iter().map(|&i| runs[i].clone()).collect();
        let shuffled_y: Vec<f64> = permutation.iter().map(|&i| EDDY_RESPONSES[i]).collect();
        let analysis = analyse_two_level(&shuffled_runs, &shuffled_y, &AnalysisOptions::default()).unwrap();
        // NIST e-Handbook 5.5.9, effect estimates (from memory): mean
        // 2.65875; X1 3.1025, X2 -0.8675, X2*X3 0.2975, X1*X3 0.2475,
        // X3 0.2125, X1*X2*X3 0.1425, X1*X2 0.1275.
        assert!(close(analysis.grand_mean, 2.65875, 1e-12));
        let expected = [
            ("A", 3.1025),
            ("B", -0.8675),
            ("AB", 0.1275),
            ("C", 0.2125),
            ("AC", 0.2475),
            ("BC", 0.2975),
            ("ABC", 0.1425),
        ];
        assert_eq!(analysis.effects.len(), 7);
        for (estimate, (name, value)) in analysis.effects.iter().zip(expected) {
            assert_eq!(estimate.chain.leader(), word(name));
            assert!(close(estimate.effect, value, 1e-12), "{name}");
            assert!(close(estimate.coefficient, value / 2.0, 1e-12), "{name}");
            assert_eq!(estimate.standard_error, None);
        }
        assert_eq!(analysis.design.kind, DesignKind::FullFactorial);
        assert_eq!(analysis.standard_order, [3, 6, 1, 4, 7, 0, 5, 2]);
        assert_eq!(analysis.pure_error_df, 0);
        assert!(analysis.curvature.is_none());
        // Half-normal plot: largest absolute effect is X1.
        let last = analysis.half_normal_plot.last().unwrap();
        assert_eq!(last.index, 0);
        assert_eq!(last.rank, 7);
    }

    #[test]
    fn yates_equals_direct_contrasts_on_random_data() {
        let mut rng = Rng(0x1234_5678_9ABC_DEF1);
        for trial in 0..60 {
            let n_factors = 2 + rng.below(6);
            let n_basic = 2 + rng.below(n_factors - 1);
            let n_generators = n_factors - n_basic;
            if n_factors > (1 << n_basic) - 1 {
                continue;
            }
            let mut columns: Vec<u32> = Vec::new();
            while columns.len() < n_generators {
                let column = (rng.next() as u32) & ((1 << n_basic) - 1);
                if column.count_ones() >= 2 && !columns.contains(&column) {
                    columns.push(column);
                }
            }
            let generators: Vec<SignedWord> = columns
                .iter()
                .enumerate()
                .map(|(j, &c)| SignedWord {
                    word: Word(c | 1 << (n_basic + j)),
                    negative: rng.below(2) == 1,
                })
                .collect();
            let relation = DefiningRelation::new(n_factors, &generators).unwrap();
            let replicates = 1 + rng.below(3);
            let mut runs = Vec::new();
            for _ in 0..replicates {
                runs.extend(relation.runs());
            }
            for i in (1..runs.len()).rev() {
                runs.swap(i, rng.below(i + 1));
            }
            let responses: Vec<f64> = runs.iter().map(|_| 10.0 * rng.uniform() - 3.0).collect();
            let analysis = analyse_two_level(&runs, &responses, &AnalysisOptions::default()).unwrap();
            let mean = responses.iter().sum::<f64>() / responses.len() as f64;
            assert!(close(analysis.grand_mean, mean, 1e-12), "trial {trial}");
            for estimate in &analysis.effects {
                let direct = contrast_effect(&runs, &responses, estimate.chain.leader()).unwrap();
                assert!(close(estimate.effect, direct, 1e-12), "trial {trial}");
            }
            assert_eq!(analysis.pure_error_df, runs.len() - (1 << n_basic));
        }
    }

    #[test]
    fn yates_transform_small_case() {
        // 2^2 with y = (1), a, b, ab = 1, 2, 4, 8: total 15, A = -1+2-4+8 = 5,
        // B = -1-2+4+8 = 9, AB = 1-2-4+8 = 3 (hand arithmetic).
        assert_eq!(yates_transform(&[1.0, 2.0, 4.0, 8.0]).unwrap(), [15.0, 5.0, 9.0, 3.0]);
        assert_eq!(yates_effects(&[1.0, 2.0, 4.0, 8.0]).unwrap(), [3.75, 2.5, 4.5, 1.5]);
        assert!(yates_transform(&[1.0, 2.0, 3.0]).is_err());
        assert!(yates_transform(&[1.0]).is_err());
        assert!(yates_transform(&[1.0, f64::NAN]).is_err());
    }

    fn replicated_two_squared() -> (Vec<Vec<f64>>, Vec<f64>) {
        let cells = [
            ([-1.0, -1.0], [12.1, 13.4, 11.8]),
            ([1.0, -1.0], [15.2, 16.9, 15.5]),
            ([-1.0, 1.0], [10.3, 9.8, 11.1]),
            ([1.0, 1.0], [18.6, 17.9, 19.4]),
        ];
        let mut runs = Vec::new();
        let mut responses = Vec::new();
        for (levels, values) in cells {
            for v in values {
                runs.push(levels.to_vec());
                responses.push(v);
            }
        }
        (runs, responses)
    }

    #[test]
    fn replicated_effects_match_least_squares() {
        let (runs, responses) = replicated_two_squared();
        let analysis = analyse_two_level(&runs, &responses, &AnalysisOptions::default()).unwrap();
        // statsmodels 0.15.0: OLS(y, [1, x1, x2, x1*x2]).fit(): params
        // 14.333333333333337, 2.9166666666666643, 0.18333333333333135,
        // 1.200000000000003; bse 0.2300362290307043 (all); pvalues for x1,
        // x2, x1x2 1.4077765213346404e-06, 0.4484696280225969,
        // 0.0008059473207595412; scale 0.635 on 8 df. Effect = 2 * param.
        assert!(close(analysis.grand_mean, 14.333333333333337, 1e-12));
        let coefficients = [2.9166666666666643, 0.18333333333333135, 1.200000000000003];
        let p_values = [1.4077765213346404e-06, 0.4484696280225969, 0.0008059473207595412];
        for (i, estimate) in analysis.effects.iter().enumerate() {
            assert!(close(estimate.coefficient, coefficients[i], 1e-12));
            let se = estimate.standard_error.unwrap();
            assert!(close(se, 2.0 * 0.2300362290307043, 1e-12));
            assert!(close(estimate.p_value.unwrap(), p_values[i], 1e-7));
        }
        assert_eq!(analysis.pure_error_df, 8);
        assert!(close(analysis.pure_error_variance.unwrap(), 0.635, 1e-12));
        assert_eq!(analysis.design.replication, Some(3));
        // Unequal replication: drop the last observation. statsmodels 0.15.0
        // OLS on the 11 rows: params 14.237499999999997, 2.8208333333333337,
        // 0.08750000000000036, 1.1041666666666674; bse 0.2371237621400026;
        // pvalues 6.7405264784044775e-06, 0.7230319913425183,
        // 0.002324046622197781.
        let runs = &runs[..11];
        let responses = &responses[..11];
        let analysis = analyse_two_level(runs, responses, &AnalysisOptions::default()).unwrap();
        assert!(close(analysis.grand_mean, 14.237499999999997, 1e-12));
        let coefficients = [2.8208333333333337, 0.08750000000000036, 1.1041666666666674];
        let p_values = [6.7405264784044775e-06, 0.7230319913425183, 0.002324046622197781];
        for (i, estimate) in analysis.effects.iter().enumerate() {
            assert!(close(estimate.coefficient, coefficients[i], 1e-12));
            assert!(close(estimate.standard_error.unwrap(), 2.0 * 0.2371237621400026, 1e-12));
            assert!(close(estimate.p_value.unwrap(), p_values[i], 1e-7));
        }
        assert_eq!(analysis.design.replication, None);
    }

    #[test]
    fn lenth_hand_example() {
        // m = 15 contrasts. Sorted |c|: 0.2 0.3 ... 1.4 (13 values, step 0.1),
        // 8, 10. median = 8th = 0.9, s0 = 1.35, 2.5 s0 = 3.375, so 8 and 10
        // are trimmed; median of the 13 others = 7th = 0.8, PSE = 1.2.
        // d = 5. scipy 1.17.1: t.ppf(0.975, 5) = 2.5705818356363146, so
        // ME = 3.0846982027635775; gamma = (1 + 0.95^(1/15))/2 =
        // 0.9982931435267048, t.ppf(gamma, 5) = 5.218651262019963, so
        // SME = 6.262381514423956. Only 10 and -8 exceed ME and SME.
        let contrasts = [
            10.0, -8.0, 1.0, -0.5, 0.8, 1.2, -1.1, 0.3, -0.9, 0.6, 1.4, -0.2, 0.7, -1.3, 0.4,
        ];
        let result = lenth(&contrasts, 0.95).unwrap();
        assert!(close(result.initial_scale, 1.35, 1e-14));
        assert!(close(result.pseudo_standard_error, 1.2, 1e-14));
        assert!(close(result.df, 5.0, 1e-15));
        assert!(close(result.gamma, 0.9982931435267048, 1e-14));
        assert!(close(result.t_individual, 2.5705818356363146, 1e-9));
        assert!(close(result.t_simultaneous, 5.218651262019963, 1e-9));
        assert!(close(result.margin_of_error, 3.0846982027635775, 1e-9));
        assert!(close(result.simultaneous_margin_of_error, 6.262381514423956, 1e-9));
        let flagged: Vec<usize> = (0..15).filter(|&i| result.exceeds_margin[i]).collect();
        assert_eq!(flagged, [0, 1]);
        assert!(result.exceeds_simultaneous_margin[0] && result.exceeds_simultaneous_margin[1]);
        assert!(close(result.t_ratios[0], 10.0 / 1.2, 1e-14));
        // Even count and fractional df: the NIST eddy current effects (m = 7).
        // Sorted |c|: 0.1275 0.1425 0.2125 0.2475 0.2975 0.8675 3.1025;
        // median 0.2475, s0 = 0.37125, 2.5 s0 = 0.928125 keeps six values,
        // median (0.2125 + 0.2475)/2 = 0.23, PSE = 0.345 (hand arithmetic).
        // scipy 1.17.1: t.ppf(0.975, 7/3) = 3.764123072082586.
        let eddy = [3.1025, -0.8675, 0.1275, 0.2125, 0.2475, 0.2975, 0.1425];
        let result = lenth(&eddy, 0.95).unwrap();
        assert!(close(result.pseudo_standard_error, 0.345, 1e-14));
        assert!(close(result.t_individual, 3.764123072082586, 1e-9));
        assert!(result.exceeds_margin[0] && !result.exceeds_margin[1]);
        // Confidence 0.98 for m = 7: t.ppf(0.99, 7/3) = 5.760171697577094
        // (scipy 1.17.1).
        let result = lenth(&eddy, 0.98).unwrap();
        assert!(close(result.t_individual, 5.760171697577094, 1e-9));
        assert!(lenth(&[1.0, 2.0], 0.95).is_err());
        assert!(lenth(&[0.0, 0.0, 0.0, 5.0], 0.95).is_err());
        assert!(lenth(&eddy, 1.0).is_err());
    }

    #[test]
    fn curvature_from_centre_points() {
        // Hand example; scipy 1.17.1 / numpy 2.4.6: difference
        // 0.6150000000000091, centre sd 0.20736441353327792, se
        // 0.13910427743243603, t 4.421143701341025, p (4 df)
        // 0.01150068587105579, SS = 20 d^2 / 9 = 0.8405000000000249.
        let factorial = [40.9, 41.5, 40.0, 41.9];
        let centre = [40.3, 40.5, 40.7, 40.2, 40.6];
        let test = curvature_test(&factorial, &centre).unwrap();
        assert!(close(test.difference, 0.6150000000000091, 1e-12));
        assert!(close(test.centre_sd.unwrap(), 0.20736441353327792, 1e-12));
        assert!(close(test.standard_error.unwrap(), 0.13910427743243603, 1e-12));
        assert!(close(test.t_value.unwrap(), 4.421143701341025, 1e-12));
        assert!(close(test.p_value.unwrap(), 0.01150068587105579, 1e-8));
        assert!(close(test.sum_of_squares, 0.8405000000000249, 1e-12));
        assert_eq!(test.pure_error_df, 4);
        // The same data as a 2^2 with centre points in the full analysis:
        // the effect SE uses the centre points' pure error; for an
        // unreplicated 2^2, Var(effect) = 4 s^2 * 4 / 16 = s^2 (hand).
        let runs = vec![
            vec![-1.0, -1.0],
            vec![0.0, 0.0],
            vec![1.0, -1.0],
            vec![0.0, 0.0],
            vec![-1.0, 1.0],
            vec![0.0, 0.0],
            vec![1.0, 1.0],
            vec![0.0, 0.0],
            vec![0.0, 0.0],
        ];
        let responses = [40.9, 40.3, 41.5, 40.5, 40.0, 40.7, 41.9, 40.2, 40.6];
        let analysis = analyse_two_level(&runs, &responses, &AnalysisOptions::default()).unwrap();
        let curvature = analysis.curvature.unwrap();
        assert!(close(curvature.t_value.unwrap(), 4.421143701341025, 1e-12));
        assert_eq!(analysis.pure_error_df, 4);
        for estimate in &analysis.effects {
            assert!(close(estimate.standard_error.unwrap(), 0.20736441353327792, 1e-12));
        }
        // A: (41.5 + 41.9 - 40.9 - 40.0) / 2 = 1.25 (hand arithmetic).
        assert!(close(analysis.effects[0].effect, 1.25, 1e-12));
        assert!(curvature_test(&factorial, &[]).is_err());
        let single = curvature_test(&factorial, &[40.0]).unwrap();
        assert_eq!(single.standard_error, None);
    }

    #[test]
    fn plot_positions_match_normal_quantiles() {
        // scipy 1.17.1: norm.ppf((i - 0.5)/7) and norm.ppf(0.5 + 0.5 (i - 0.5)/7).
        let normal = [
            -1.465233792685523,
            -0.7916386077433746,
            -0.36610635680056963,
            0.0,
            0.3661063568005698,
            0.7916386077433746,
            1.465233792685523,
        ];
        let half = [
            0.08964235107576254,
            0.27188000539926077,
            0.4637077514571792,
            0.6744897501960817,
            0.9208229763683788,
            1.2418667918433202,
            1.8027430907391908,
        ];
        let effects = [3.1025, -0.8675, 0.1275, 0.2125, 0.2475, 0.2975, 0.1425];
        let points = normal_plot_positions(&effects).unwrap();
        for (point, q) in points.iter().zip(normal) {
            assert!((point.quantile - q).abs() < 1e-12);
        }
        assert_eq!(points[0].index, 1);
        assert_eq!(points[6].index, 0);
        let points = half_normal_plot_positions(&effects).unwrap();
        for (point, q) in points.iter().zip(half) {
            assert!((point.quantile - q).abs() < 1e-12);
        }
        assert_eq!(points[5].index, 1);
        assert!(close(points[5].value, 0.8675, 1e-15));
        assert!(close(points[0].probability, 0.5 / 7.0, 1e-15));
        assert!(normal_plot_positions(&[]).is_err());
    }

    #[test]
    fn fraction_2_8_3_effects_carry_generator_signs() {
        // 2^(8-3) with F = -ABCD, G = ABCE, H = ABDE. Response built from the
        // F and A columns: y = 5 + 1.5 x_A + x_F, so the effect of A is 3
        // and of F is 2 (effect = twice the coefficient, common practice),
        // every other chain 0.
        let relation = DefiningRelation::from_text(8, &["F = -ABCD", "G = ABCE", "H = ABDE"]).unwrap();
        let runs = relation.runs();
        let responses: Vec<f64> = runs.iter().map(|r| 5.0 + 1.5 * r[0] + r[5]).collect();
        let analysis = analyse_two_level(&runs, &responses, &AnalysisOptions::default()).unwrap();
        assert_eq!(analysis.effects.len(), 31);
        assert_eq!(analysis.design.relation.words(), relation.words());
        for estimate in &analysis.effects {
            let expected = match estimate.chain.leader().to_string().as_str() {
                "A" => 3.0,
                "F" => 2.0,
                _ => 0.0,
            };
            assert!((estimate.effect - expected).abs() < 1e-12);
        }
        let chain_f = analysis.effects.iter().find(|e| e.chain.leader() == word("F")).unwrap();
        // F = -ABCD: the Yates row is the basic word ABCD.
        assert_eq!(chain_f.basic_word, word("ABCD"));
        assert_eq!(chain_f.chain.sign_of(word("ABCD")), Some(-1.0));
        // Lenth cannot scale 29 exact zeros.
        assert!(analysis.lenth.is_none());
    }

    #[test]
    fn analysis_refuses_bad_input() {
        let runs = vec![vec![-1.0, -1.0], vec![1.0, -1.0], vec![-1.0, 1.0], vec![1.0, 1.0]];
        let options = AnalysisOptions::default();
        assert!(analyse_two_level(&runs, &[1.0, 2.0, 3.0], &options).is_err());
        assert!(analyse_two_level(&runs, &[1.0, 2.0, 3.0, f64::INFINITY], &options).is_err());
        let mixed = vec![vec![-1.0, -1.0], vec![1.0, 0.0], vec![-1.0, 1.0], vec![1.0, 1.0]];
        assert!(analyse_two_level(&mixed, &[1.0, 2.0, 3.0, 4.0], &options).is_err());
        let irregular = vec![vec![-1.0, -1.0], vec![1.0, -1.0], vec![-1.0, 1.0]];
        assert!(analyse_two_level(&irregular, &[1.0, 2.0, 3.0], &options).is_err());
        let bad_options = AnalysisOptions { lenth_confidence: 0.0 };
        assert!(analyse_two_level(&runs, &[1.0, 2.0, 3.0, 4.0], &bad_options).is_err());
        assert!(standard_order(&runs, &[0, 0]).is_err());
        assert!(contrast_effect(&runs, &[1.0, 2.0, 3.0, 4.0], word("C")).is_err());
        let order = standard_order(&runs, &[1, 0]).unwrap();
        // With B as the first basic factor the cells are (1), b, a, ab.
        assert_eq!(order.cell_of_run, [0, 2, 1, 3]);
        assert_eq!(order.order, [0, 2, 1, 3]);
    }

    /// A 2^3 run twice, each replicate split into two blocks on ABC (four blocks), with
    /// centre points 3, 1, 2, 2 in the blocks. Model with known effects:
    /// y = 10 + 2 A + B + shift[block] + noise, shifts 0, 5, -3, 8, no curvature; noise
    /// bounded by 0.05.
    #[test]
    fn blocks_keep_shifts_out_of_pure_error_and_curvature() {
        let noise = |i: usize| 0.05 * (((i * 7919) % 13) as f64 - 6.0) / 6.0;
        let shifts = [0.0, 5.0, -3.0, 8.0];
        let full = DefiningRelation::full_factorial(3).unwrap().runs();
        let (mut runs, mut responses, mut blocks) = (Vec::new(), Vec::new(), Vec::new());
        for replicate in 0..2 {
            for run in &full {
                let block = 2 * replicate + usize::from(run[0] * run[1] * run[2] > 0.0);
                blocks.push(block);
                responses.push(10.0 + 2.0 * run[0] + run[1] + shifts[block] + noise(responses.len()));
                runs.push(run.clone());
            }
        }
        let mut centre_by_block: Vec<Vec<f64>> = vec![Vec::new(); 4];
        for (block, count) in [3usize, 1, 2, 2].into_iter().enumerate() {
            for _ in 0..count {
                let y = 10.0 + shifts[block] + noise(responses.len());
                centre_by_block[block].push(y);
                blocks.push(block);
                responses.push(y);
                runs.push(vec![0.0; 3]);
            }
        }
        let layout = RunLayout {
            block_of_run: &blocks,
            is_centre: &[],
        };
        let analysis = analyse_two_level_in_layout(&runs, &responses, &layout, &AnalysisOptions::default()).unwrap();
        // ABC is constant within every block: set apart, not an effect.
        let confounded: Vec<Word> = analysis
            .confounded_with_blocks
            .iter()
            .map(|e| e.chain.leader())
            .collect();
        assert_eq!(confounded, [word("ABC")]);
        assert_eq!(analysis.effects.len(), 6);
        // Pure error by its definition (common practice): centre points about their own
        // block's mean (each corner is run once per block), df 2 + 0 + 1 + 1.
        let ss: f64 = centre_by_block
            .iter()
            .map(|group| {
                let mean = group.iter().sum::<f64>() / group.len() as f64;
                group.iter().map(|y| (y - mean).powi(2)).sum::<f64>()
            })
            .sum();
        assert_eq!(analysis.pure_error_df, 4);
        assert!(close(analysis.pure_error_variance.unwrap(), ss / 4.0, 1e-9));
        let a = analysis.effects.iter().find(|e| e.chain.leader() == word("A")).unwrap();
        assert!((a.effect - 4.0).abs() < 0.11);
        // No curvature in the model: the within-block comparison finds none, while the
        // plain difference of means is pulled by the uneven centre points across shifts.
        let curvature = analysis.curvature.unwrap();
        assert!(curvature.difference.abs() < 0.11, "{}", curvature.difference);
        assert_eq!(curvature.pure_error_df, 4);
        assert!((curvature.factorial_mean - curvature.centre_mean).abs() > 0.5);
        // Without the blocks the shifts fall into the pure error.
        let plain = analyse_two_level(&runs, &responses, &AnalysisOptions::default()).unwrap();
        assert!(plain.pure_error_variance.unwrap() > 10.0);
        assert!(plain.confounded_with_blocks.is_empty());
        // Centre points in a block of their own hold no comparison with the corners: no
        // curvature test, and the rest of the analysis stands.
        let own_block: Vec<usize> = blocks
            .iter()
            .zip(&runs)
            .map(|(&block, run)| if run.iter().all(|v| *v == 0.0) { 9 } else { block })
            .collect();
        let layout = RunLayout {
            block_of_run: &own_block,
            is_centre: &[],
        };
        let analysis = analyse_two_level_in_layout(&runs, &responses, &layout, &AnalysisOptions::default()).unwrap();
        assert!(analysis.curvature.is_none());
        assert_eq!(analysis.effects.len(), 6);
    }

    /// Centre runs repeated at each level of a factor without a middle level (the third
    /// column, a text factor). Model with known effects: y = 5 + A + 3 C - 1.5 [centre],
    /// exact: the strata (C low, C high) compare the corners and centres at the same C.
    #[test]
    fn centre_runs_at_both_levels_of_a_factor_without_a_middle() {
        let full = DefiningRelation::full_factorial(3).unwrap().runs();
        let mut runs = full.clone();
        let mut responses: Vec<f64> = full.iter().map(|r| 5.0 + r[0] + 3.0 * r[2]).collect();
        let mut is_centre = vec![false; full.len()];
        for c in [-1.0, 1.0, 1.0] {
            runs.push(vec![0.0, 0.0, c]);
            responses.push(5.0 + 3.0 * c - 1.5);
            is_centre.push(true);
        }
        let layout = RunLayout {
            block_of_run: &[],
            is_centre: &is_centre,
        };
        let analysis = analyse_two_level_in_layout(&runs, &responses, &layout, &AnalysisOptions::default()).unwrap();
        let curvature = analysis.curvature.unwrap();
        // Corners minus centre within each level of C: 1.5 exactly (hand arithmetic);
        // the unstratified difference would be 1.5 - 3 * (2 - 1) / 3 = 0.5.
        assert!(close(curvature.difference, 1.5, 1e-12));
        assert!(close(curvature.factorial_mean - curvature.centre_mean, 0.5, 1e-12));
        // Pure error: the two centre runs at C high agree exactly (1 df, zero spread).
        assert_eq!(analysis.pure_error_df, 1);
        assert!(close(analysis.effects[0].effect, 2.0, 1e-12));
    }
}
