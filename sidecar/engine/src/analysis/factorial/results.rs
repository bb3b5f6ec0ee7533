//! The result types of the factorial analysis: plain serde-serialisable values.

use serde::Serialize;

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
    /// Pooled into the error (a high-order interaction of an unreplicated design whose
    /// error comes from such interactions): not judged itself.
    pub in_error: bool,
}

/// What the effects are judged against, in words.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ErrorBasis {
    /// `replicates`, `centre points`, `replicates and centre points`, `pooled
    /// high-order interactions`, `Lenth's method` or `none`.
    pub source: String,
    /// Degrees of freedom of the error (Lenth's: effects / 3).
    pub df: f64,
    /// A sentence saying where the error comes from and what it assumes.
    pub sentence: String,
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
    /// Its standard error, from all the pure error of the trial.
    pub se: Option<f64>,
    /// Degrees of freedom of that error (replicated corners and centre points pooled).
    pub df: usize,
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
    /// Effects, one per alias chain, in standard order of the basic factors (chains
    /// confounded with blocks left out).
    pub effects: Vec<TwoLevelEffect>,
    /// Chains confounded with blocks (their column is constant within every block), in
    /// factor names with the letters in brackets: never read as effects.
    pub confounded_with_blocks: Vec<String>,
    /// What the effects are judged against.
    pub error: ErrorBasis,
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
    /// Residuals checked (all, or an even spread of [`RESIDUAL_CHECK_MAX`](super::RESIDUAL_CHECK_MAX)).
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
    /// Prediction at the best settings among the combinations run (`None` when no
    /// direction was given).
    pub best: Option<Prediction>,
    /// A combination not run that the model predicts to be better still: a prediction
    /// outside the trial.
    pub outside_trial: Option<Prediction>,
}

/// A combination of treatment levels that was run, with its observed mean.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ObservedCombination {
    /// `(factor, level)` for each treatment factor.
    pub settings: Vec<(String, String)>,
    /// Mean of its runs.
    pub mean: f64,
    /// Number of runs.
    pub n: usize,
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
    /// The combination run with the highest mean response (blocks pooled).
    pub highest_observed: Option<ObservedCombination>,
    /// The combination run with the lowest mean response.
    pub lowest_observed: Option<ObservedCombination>,
    /// A record (0-based) with some treatment factors at their middle level and others
    /// not, which stopped the two-level reading; the caller names its cell in a note.
    pub mixed_levels_record: Option<usize>,
    /// Cautions that go with these results.
    pub cautions: Vec<String>,
    /// Remarks on what was left out or could not be done.
    pub notes: Vec<String>,
    /// `true` when the cell sums of the model were held exactly (every value had a short
    /// decimal form and was differenced exactly from one centre), `false` when
    /// compensated binary sums were used or no model was fitted. Said on the provenance
    /// sheet; not part of the results document.
    #[serde(skip)]
    pub exact_decimal: bool,
}
