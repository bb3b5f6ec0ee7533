//! What to run next, decided from a two-level screen or a second-order
//! analysis: a fold-over that separates aliased active effects, the path of
//! steepest ascent (or descent), axial and centre runs that complete a
//! central composite plan, more replicates sized by power, or confirmation
//! runs with the interval they should fall in.
//!
//! # Remarks
//!
//! The order of the decision (common practice of sequential experimentation,
//! Box, Hunter and Hunter, "Statistics for Experimenters", 2nd ed., ch. 6
//! and 12): ambiguity first (active effects aliased with other main effects
//! or two-factor interactions), then curvature, then a climb when first-order
//! effects are clear, then more replicates when nothing can be told from the
//! noise.
//!
//! Fold-overs: every full fold-over (all signs reversed), fold on one factor
//! (that factor's signs reversed) and half fold-over (the runs of a one-factor
//! fold-over with another factor at one level; Mee and Peralta 2000,
//! "Semifolding 2^(k-p) designs", Technometrics 42) is tried; the joined
//! design, with the new runs as a block of their own, must estimate the block,
//! every main effect and each active effect beside each effect of two letters
//! or fewer in its alias chain (one partner at a time, as a fold-over of a
//! resolution III fraction frees main effects from two-factor interactions
//! while those stay joined among themselves). The one with the fewest runs wins (ties: the
//! first found, full fold-over before one factor before halves). Which alias
//! pairs are broken is recomputed from the joined runs.
//!
//! Steepest ascent (Box and Wilson 1951): the path moves along the fitted
//! first-order coefficients b in coded units, one coded unit per step for the
//! factor with the largest |b|, until the next step would pass a factor's
//! limit or [`MAX_PATH_STEPS`]. The spread of directions the data allow is
//! the confidence cone of Box and Draper ("Empirical Model-Building and
//! Response Surfaces", 1987, §6.4): directions within the angle θ of b with
//! sin²θ = (k-1) s_b² F(1-α; k-1, ν) / |b|².

use serde::Serialize;

use crate::analysis::surface::SurfaceOutcome;
use crate::design::surface::{orthogonal_blocking_alpha, round_setting, SurfaceFactor};
use crate::options::Direction;
use crate::stats::dist::{f_isf, f_test_power, t_isf};
use crate::stats::two_level::{DefiningRelation, Word};

/// Most steps along a path of steepest ascent.
pub const MAX_PATH_STEPS: usize = 10;
/// Power asked of the replicates recommendation.
pub const TARGET_POWER: f64 = 0.8;
/// Most replicates of the whole design the replicates recommendation offers.
pub const MAX_REPLICATES: usize = 16;
/// Confirmation runs recommended at the settled settings.
pub const CONFIRMATION_RUNS: usize = 3;

/// One effect of a two-level screen as the recommendation reads it.
#[derive(Debug, Clone, PartialEq)]
pub struct ScreenEffect {
    /// The effect's word (the leader of its alias chain).
    pub word: Word,
    /// The effect: mean at high minus mean at low.
    pub effect: f64,
    /// True when judged active.
    pub active: bool,
}

/// A two-level screen, in the recommendation's terms.
#[derive(Debug, Clone, PartialEq)]
pub struct ScreenSummary {
    /// The factors (numeric settings, low = coded -1, high = +1, with limits).
    pub factors: Vec<SurfaceFactor>,
    /// The fraction run (an empty relation for a full factorial).
    pub relation: DefiningRelation,
    /// The estimated effects.
    pub effects: Vec<ScreenEffect>,
    /// The standard error of one effect, when there is an error estimate.
    pub effect_se: Option<f64>,
    /// Its degrees of freedom.
    pub error_df: f64,
    /// The p-value of the curvature test, when centre runs were made.
    pub curvature_p: Option<f64>,
    /// Factorial (cube) runs made, over all replicates and blocks.
    pub cube_runs: usize,
    /// Centre runs made.
    pub centre_runs: usize,
    /// Blocks already in the trial.
    pub blocks: usize,
    /// Which way the response is better.
    pub direction: Option<Direction>,
    /// Significance level of the tests (1 - confidence).
    pub alpha: f64,
}

/// The kind of fold-over.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum FoldKind {
    /// Every factor's signs reversed.
    Full,
    /// One factor's signs reversed (0-based factor).
    OneFactor {
        /// The factor folded.
        factor: usize,
    },
    /// Half of a one-factor fold-over: the folded runs with `keep_factor` at `keep_level`.
    Half {
        /// The factor folded.
        factor: usize,
        /// The factor that picks the half.
        keep_factor: usize,
        /// Its level in the half kept (-1 or +1).
        keep_level: i8,
    },
}

/// A fold-over plan.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FoldOver {
    /// Which fold-over.
    pub kind: FoldKind,
    /// The new runs in coded units.
    pub coded_runs: Vec<Vec<f64>>,
    /// The new runs in real units.
    pub real_runs: Vec<Vec<f64>>,
    /// Alias pairs (as effect names, such as `A = BD`) that the joined design separates.
    pub broken: Vec<String>,
    /// Alias pairs among the effects of interest still joined.
    pub still_joined: Vec<String>,
    /// Candidates tried.
    pub candidates_tried: usize,
}

/// The path of steepest ascent or descent.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct AscentPath {
    /// True for ascent (higher is better), false for descent.
    pub ascent: bool,
    /// The step in coded units per factor.
    pub coded_step: Vec<f64>,
    /// The step in real units per factor.
    pub real_step: Vec<f64>,
    /// The runs along the path, coded, from the first step on.
    pub coded_runs: Vec<Vec<f64>>,
    /// The same runs in real units.
    pub real_runs: Vec<Vec<f64>>,
    /// Why the path stops where it does.
    pub stop_reason: String,
    /// Half-angle in degrees of the cone of directions the data allow; `None` when no error estimate.
    pub cone_half_angle_degrees: Option<f64>,
    /// Share of all directions excluded by the cone, when known.
    pub share_of_directions_excluded: Option<f64>,
}

/// Axial and centre runs completing a central composite plan.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CompositeCompletion {
    /// Axial distance in coded units.
    pub alpha: f64,
    /// True when the limits forced a shorter distance than orthogonal blocking asks.
    pub shortened_by_limits: bool,
    /// Centre runs added with the axial runs.
    pub centre_runs: usize,
    /// The new runs in coded units.
    pub coded_runs: Vec<Vec<f64>>,
    /// The new runs in real units.
    pub real_runs: Vec<Vec<f64>>,
}

/// Replicates sized by power.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct MoreReplicates {
    /// Copies of the whole design to add.
    pub replicates: usize,
    /// The effect size the sizing aims to detect.
    pub effect_size: f64,
    /// The observed SD used.
    pub sd: f64,
    /// Power reached with the replicates added.
    pub power: f64,
}

/// Confirmation runs at settled settings.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Confirmation {
    /// The settings in real units.
    pub real: Vec<f64>,
    /// Runs to make.
    pub runs: usize,
    /// The predicted mean.
    pub predicted: f64,
    /// The interval the mean of the runs should fall in.
    pub low: f64,
    /// Upper end.
    pub high: f64,
    /// Confidence level.
    pub confidence: f64,
}

/// What to run next.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum NextStep {
    /// A fold-over.
    FoldOver(FoldOver),
    /// The path of steepest ascent or descent.
    SteepestPath(AscentPath),
    /// Axial and centre runs completing a central composite plan.
    CompleteComposite(CompositeCompletion),
    /// More replicates.
    MoreReplicates(MoreReplicates),
    /// Confirmation runs.
    Confirm(Confirmation),
    /// Nothing can be recommended (with the reason).
    Nothing,
}

/// The recommendation with its reason in words.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Recommendation {
    /// What to run.
    pub step: NextStep,
    /// One sentence: what and why.
    pub reason: String,
}

impl Recommendation {
    /// The new runs in real units, in order (empty for none).
    pub fn real_runs(&self) -> Vec<Vec<f64>> {
        match &self.step {
            NextStep::FoldOver(fold) => fold.real_runs.clone(),
            NextStep::SteepestPath(path) => path.real_runs.clone(),
            NextStep::CompleteComposite(completion) => completion.real_runs.clone(),
            NextStep::Confirm(confirm) => vec![confirm.real.clone(); confirm.runs],
            NextStep::MoreReplicates(_) | NextStep::Nothing => Vec::new(),
        }
    }
}

fn to_real(factors: &[SurfaceFactor], coded: &[f64]) -> Vec<f64> {
    coded
        .iter()
        .zip(factors)
        .map(|(&value, factor)| round_setting(factor.to_real(value)))
        .collect()
}

fn column(runs: &[Vec<f64>], word: Word) -> Vec<f64> {
    runs.iter()
        .map(|run| word.factors().iter().map(|&factor| run[factor]).product())
        .collect()
}

/// True when the columns are linearly independent (Householder QR, relative tolerance).
fn independent(columns: &[Vec<f64>]) -> bool {
    let Some(first) = columns.first() else {
        return true;
    };
    let n = first.len();
    if columns.len() > n {
        return false;
    }
    let matrix = nalgebra::DMatrix::from_fn(n, columns.len(), |row, col| columns[col][row]);
    let r = matrix.qr().r();
    (0..columns.len()).all(|index| r[(index, index)].abs() > 1e-9 * (n as f64).sqrt())
}

/// Whether two effects are joined in the runs after the block column is
/// allowed for: their columns, adjusted for blocks, are proportional.
fn joined(runs: &[Vec<f64>], blocks: &[f64], first: Word, second: Word) -> bool {
    let mut base = vec![vec![1.0; runs.len()]];
    if blocks.iter().any(|&block| block != blocks[0]) {
        base.push(blocks.to_vec());
    }
    let mut alone = base.clone();
    alone.push(column(runs, first));
    let mut both = alone.clone();
    both.push(column(runs, second));
    independent(&alone) && !independent(&both)
}

/// True when, in the joined runs, every active effect can be estimated
/// beside the block, all main effects and each of its partners in turn.
fn separates(runs: &[Vec<f64>], blocks: &[f64], mains: &[Word], ambiguous: &[(Word, Vec<Word>)]) -> bool {
    let mut base = vec![vec![1.0; runs.len()], blocks.to_vec()];
    base.extend(mains.iter().map(|&word| column(runs, word)));
    ambiguous.iter().all(|(word, partners)| {
        let mut with_word = base.clone();
        if word.order() > 1 {
            with_word.push(column(runs, *word));
        }
        partners.iter().all(|&partner| {
            let mut columns = with_word.clone();
            if !mains.contains(&partner) {
                columns.push(column(runs, partner));
            }
            independent(&columns)
        })
    })
}

/// The words of two letters or fewer that share an alias chain with an active effect.
fn ambiguous_words(summary: &ScreenSummary) -> Vec<(Word, Vec<Word>)> {
    let mut out = Vec::new();
    for effect in summary.effects.iter().filter(|effect| effect.active) {
        let Ok(chain) = summary.relation.alias_chain(effect.word) else {
            continue;
        };
        let partners: Vec<Word> = chain
            .members
            .iter()
            .map(|member| member.word)
            .filter(|&word| word != effect.word && word.order() <= 2)
            .collect();
        if !partners.is_empty() {
            out.push((effect.word, partners));
        }
    }
    out
}

/// Chooses the fold-over that separates the active effects from their
/// aliases of two letters or fewer with the fewest runs.
pub fn choose_fold_over(summary: &ScreenSummary) -> Option<FoldOver> {
    let ambiguous = ambiguous_words(summary);
    if ambiguous.is_empty() {
        return None;
    }
    let k = summary.factors.len();
    let original = summary.relation.runs();
    let mains: Vec<Word> = (0..k).filter_map(|factor| Word::factor(factor).ok()).collect();
    let mut candidates: Vec<(FoldKind, Vec<Vec<f64>>)> = Vec::new();
    let fold = |flip: &dyn Fn(usize) -> bool| -> Vec<Vec<f64>> {
        original
            .iter()
            .map(|run| {
                run.iter()
                    .enumerate()
                    .map(|(factor, &value)| if flip(factor) { -value } else { value })
                    .collect()
            })
            .collect()
    };
    candidates.push((FoldKind::Full, fold(&|_| true)));
    for factor in 0..k {
        candidates.push((FoldKind::OneFactor { factor }, fold(&|f| f == factor)));
    }
    for factor in 0..k {
        let folded = fold(&|f| f == factor);
        for keep_factor in 0..k {
            for keep_level in [-1i8, 1] {
                let half: Vec<Vec<f64>> = folded
                    .iter()
                    .filter(|run| run[keep_factor] == f64::from(keep_level))
                    .cloned()
                    .collect();
                candidates.push((
                    FoldKind::Half {
                        factor,
                        keep_factor,
                        keep_level,
                    },
                    half,
                ));
            }
        }
    }
    let tried = candidates.len();
    let mut best: Option<(FoldKind, Vec<Vec<f64>>)> = None;
    for (kind, new_runs) in candidates {
        if best.as_ref().is_some_and(|(_, runs)| runs.len() <= new_runs.len()) {
            continue;
        }
        let mut joined_runs = original.clone();
        joined_runs.extend(new_runs.iter().cloned());
        let blocks: Vec<f64> = (0..joined_runs.len())
            .map(|index| if index < original.len() { 1.0 } else { -1.0 })
            .collect();
        if separates(&joined_runs, &blocks, &mains, &ambiguous) {
            best = Some((kind, new_runs));
        }
    }
    let (kind, coded_runs) = best?;
    let mut joined_runs = original.clone();
    joined_runs.extend(coded_runs.iter().cloned());
    let blocks: Vec<f64> = (0..joined_runs.len())
        .map(|index| if index < original.len() { 1.0 } else { -1.0 })
        .collect();
    let mut broken = Vec::new();
    let mut still_joined = Vec::new();
    for (word, partners) in &ambiguous {
        for &partner in partners {
            let pair = format!("{word} = {partner}");
            if joined(&joined_runs, &blocks, *word, partner) {
                still_joined.push(pair);
            } else {
                broken.push(pair);
            }
        }
    }
    Some(FoldOver {
        kind,
        real_runs: coded_runs.iter().map(|run| to_real(&summary.factors, run)).collect(),
        coded_runs,
        broken,
        still_joined,
        candidates_tried: tried,
    })
}

/// The path of steepest ascent (or descent) from first-order coefficients in coded units.
///
/// `coefficients` are per coded unit (half the effects); zero for factors left out.
pub fn steepest_path(
    factors: &[SurfaceFactor],
    coefficients: &[f64],
    ascent: bool,
    coefficient_se: Option<f64>,
    error_df: f64,
    alpha: f64,
) -> Option<AscentPath> {
    let largest = coefficients.iter().map(|b| b.abs()).fold(0.0, f64::max);
    if largest <= 0.0 || !largest.is_finite() {
        return None;
    }
    let sign = if ascent { 1.0 } else { -1.0 };
    let coded_step: Vec<f64> = coefficients.iter().map(|b| sign * b / largest).collect();
    let mut coded_runs = Vec::new();
    let mut stop_reason = format!("a path plan holds at most {MAX_PATH_STEPS} steps");
    for step in 1..=MAX_PATH_STEPS {
        let coded: Vec<f64> = coded_step.iter().map(|d| d * step as f64).collect();
        let beyond = factors.iter().zip(&coded).find(|(factor, &x)| {
            let (below, above) = factor.coded_room();
            x > above + 1e-12 || -x > below + 1e-12
        });
        if let Some((factor, _)) = beyond {
            stop_reason = format!("the next step would take {} beyond its limit", factor.name);
            break;
        }
        coded_runs.push(coded);
    }
    let k = coefficients.iter().filter(|b| **b != 0.0).count();
    let norm2: f64 = coefficients.iter().map(|b| b * b).sum();
    let (cone, excluded) = match coefficient_se {
        Some(se) if k >= 2 && error_df > 0.0 => {
            let f = f_isf(alpha, (k - 1) as f64, error_df).ok();
            f.map_or((None, None), |f| {
                let sin2 = (k - 1) as f64 * se * se * f / norm2;
                if sin2 >= 1.0 {
                    (Some(90.0), Some(0.0))
                } else {
                    let angle = sin2.sqrt().asin();
                    (Some(angle.to_degrees()), Some(1.0 - cap_fraction(angle, k)))
                }
            })
        }
        Some(_) if k == 1 => (Some(0.0), Some(1.0)),
        _ => (None, None),
    };
    Some(AscentPath {
        ascent,
        real_step: coded_step
            .iter()
            .zip(factors)
            .map(|(d, factor)| round_setting(d * factor.half_range()))
            .collect(),
        real_runs: coded_runs.iter().map(|run| to_real(factors, run)).collect(),
        coded_step,
        coded_runs,
        stop_reason,
        cone_half_angle_degrees: cone,
        share_of_directions_excluded: excluded,
    })
}

/// The share of the sphere in `k` dimensions within angle `angle` of a
/// direction (a spherical cap), by the regularized incomplete beta function:
/// I_{sin²θ}((k-1)/2, 1/2) / 2 for θ ≤ 90°.
fn cap_fraction(angle: f64, k: usize) -> f64 {
    let sin2 = angle.sin().powi(2);
    crate::stats::dist::beta_reg((k as f64 - 1.0) / 2.0, 0.5, sin2).map_or(0.0, |value| value / 2.0)
}

/// Axial runs at ±α and centre runs completing a central composite plan,
/// as a new block, with α for orthogonal blocking shortened to the limits.
pub fn complete_composite(
    factors: &[SurfaceFactor],
    cube_runs: usize,
    cube_centres: usize,
    new_centres: usize,
) -> CompositeCompletion {
    let k = factors.len();
    let wanted = orthogonal_blocking_alpha(cube_runs, k, cube_centres, new_centres);
    let room = factors
        .iter()
        .map(|factor| {
            let (below, above) = factor.coded_room();
            below.min(above)
        })
        .fold(f64::INFINITY, f64::min);
    let alpha = wanted.min(room).max(1.0);
    let mut coded_runs = Vec::new();
    for factor in 0..k {
        for sign in [-1.0, 1.0] {
            let mut run = vec![0.0; k];
            run[factor] = sign * alpha;
            coded_runs.push(run);
        }
    }
    coded_runs.extend(std::iter::repeat_n(vec![0.0; k], new_centres));
    CompositeCompletion {
        alpha,
        shortened_by_limits: alpha < wanted,
        centre_runs: new_centres,
        real_runs: coded_runs.iter().map(|run| to_real(factors, run)).collect(),
        coded_runs,
    }
}

/// The fewest copies of a two-level design of `runs_per_copy` runs to add so
/// that an effect of `effect_size` is found with [`TARGET_POWER`] at level
/// `alpha`, given the SD `sd` and the runs already made.
pub fn replicates_for_power(
    runs_made: usize,
    runs_per_copy: usize,
    model_terms: usize,
    effect_size: f64,
    sd: f64,
    alpha: f64,
) -> Option<MoreReplicates> {
    if !(sd > 0.0 && effect_size > 0.0) || runs_per_copy == 0 {
        return None;
    }
    for added in 1..=MAX_REPLICATES {
        let total = runs_made + added * runs_per_copy;
        let df = total.checked_sub(model_terms)?;
        if df == 0 {
            continue;
        }
        // Effect = difference of two means of total/2 runs each: λ = N δ² / (4 σ²).
        let lambda = total as f64 * effect_size * effect_size / (4.0 * sd * sd);
        let power = f_test_power(alpha, 1.0, df as f64, lambda).ok()?;
        if power >= TARGET_POWER {
            return Some(MoreReplicates {
                replicates: added,
                effect_size,
                sd,
                power,
            });
        }
    }
    None
}

/// Confirmation runs at the recommended settings of a second-order
/// analysis: the interval the mean of `runs` new runs should fall in.
pub fn confirmation(outcome: &SurfaceOutcome, runs: usize) -> Option<Confirmation> {
    confirmation_at(outcome, &outcome.recommended.as_ref()?.real, runs)
}

/// Confirmation runs at the given settings (real units) of a second-order
/// analysis, such as the compromise of several responses: the interval the
/// mean of `runs` new runs should fall in, t · sqrt(s²/m + se(mean)²).
pub fn confirmation_at(outcome: &SurfaceOutcome, real: &[f64], runs: usize) -> Option<Confirmation> {
    let recommended = outcome.predict(real)?;
    let recommended = &recommended;
    let sd = outcome.residual_sd?;
    let t = t_isf((1.0 - recommended.confidence) / 2.0, outcome.residual_df as f64).ok()?;
    let half = t * (sd * sd / runs as f64 + recommended.se_mean * recommended.se_mean).sqrt();
    Some(Confirmation {
        real: recommended.real.clone(),
        runs,
        predicted: recommended.predicted,
        low: recommended.predicted - half,
        high: recommended.predicted + half,
        confidence: recommended.confidence,
    })
}

/// Whether confirmation runs came back inside their interval, in words.
pub fn judge_confirmation(plan: &Confirmation, values: &[f64]) -> (bool, String) {
    let usable: Vec<f64> = values.iter().copied().filter(|v| v.is_finite()).collect();
    if usable.is_empty() {
        return (false, "no confirmation run has a value yet".into());
    }
    let mean = usable.iter().sum::<f64>() / usable.len() as f64;
    let inside = mean >= plan.low && mean <= plan.high;
    let words = format!(
        "the confirmation runs average {mean:.4}, {} the interval {:.4} to {:.4} predicted for them",
        if inside { "inside" } else { "outside" },
        plan.low,
        plan.high
    );
    (inside, words)
}

/// The recommendation after a two-level screen.
pub fn recommend_after_screen(summary: &ScreenSummary) -> Recommendation {
    if let Some(fold) = choose_fold_over(summary) {
        let what = match fold.kind {
            FoldKind::Full => "a full fold-over (every sign reversed)".to_string(),
            FoldKind::OneFactor { factor } => format!("a fold-over on {}", summary.factors[factor].name),
            FoldKind::Half {
                factor,
                keep_factor,
                keep_level,
            } => format!(
                "half of a fold-over on {} (the runs with {} at its {} setting)",
                summary.factors[factor].name,
                summary.factors[keep_factor].name,
                if keep_level > 0 { "high" } else { "low" }
            ),
        };
        let reason = format!(
            "Active effects share their estimates with other effects ({}); run {what}, {} runs as a new block, to tell them apart.",
            fold.broken.join(", "),
            fold.coded_runs.len()
        );
        return Recommendation {
            step: NextStep::FoldOver(fold),
            reason,
        };
    }
    let curved = summary.curvature_p.is_some_and(|p| p < summary.alpha);
    let resolution_five = summary.relation.resolution().is_none_or(|resolution| resolution >= 5);
    if curved && resolution_five {
        let completion = complete_composite(
            &summary.factors,
            summary.cube_runs,
            summary.centre_runs,
            summary.centre_runs.clamp(2, 4),
        );
        let reason = format!(
            "The response curves between the settings (curvature test p = {:.3}); run {} axial runs at {:.3} coded units and {} centre runs as a new block to complete a central composite plan and fit the curve.",
            summary.curvature_p.unwrap_or(f64::NAN),
            2 * summary.factors.len(),
            completion.alpha,
            completion.centre_runs
        );
        return Recommendation {
            step: NextStep::CompleteComposite(completion),
            reason,
        };
    }
    let main: Vec<f64> = (0..summary.factors.len())
        .map(|factor| {
            summary
                .effects
                .iter()
                .find(|effect| effect.active && Word::factor(factor).is_ok_and(|word| word == effect.word))
                .map_or(0.0, |effect| effect.effect / 2.0)
        })
        .collect();
    if main.iter().any(|b| *b != 0.0) && !curved {
        let ascent = !matches!(summary.direction, Some(Direction::LowerIsBetter));
        if let Some(path) = steepest_path(
            &summary.factors,
            &main,
            ascent,
            summary.effect_se.map(|se| se / 2.0),
            summary.error_df,
            summary.alpha,
        ) {
            let reason = format!(
                "Clear first-order effects and no curvature: follow the path of steepest {} from the centre of the trial, {} runs, each one step further ({}); it stops there because {}.{}",
                if ascent { "ascent" } else { "descent" },
                path.real_runs.len(),
                summary
                    .factors
                    .iter()
                    .zip(&path.real_step)
                    .filter(|(_, step)| **step != 0.0)
                    .map(|(factor, step)| format!("{} {}{}", factor.name, if *step >= 0.0 { "+" } else { "" }, setting_in_words(*step)))
                    .collect::<Vec<_>>()
                    .join(", "),
                path.stop_reason,
                if summary.direction.is_none() {
                    " No direction was given, so the path climbs; give direction = lower to descend."
                } else {
                    ""
                }
            );
            return Recommendation {
                step: NextStep::SteepestPath(path),
                reason,
            };
        }
    }
    if let Some(se) = summary.effect_se {
        let runs_made = summary.cube_runs + summary.centre_runs;
        let sd = se * (summary.cube_runs as f64).sqrt() / 2.0;
        let size = summary
            .effects
            .iter()
            .map(|effect| effect.effect.abs())
            .fold(0.0, f64::max);
        let terms = runs_made.saturating_sub(summary.error_df as usize);
        let per_copy = summary.relation.n_runs();
        if let Some(more) = replicates_for_power(runs_made, per_copy, terms, size, sd, summary.alpha) {
            let reason = format!(
                "No effect stands out from the noise (SD {:.4}); {} more cop{} of the design ({} runs) would find an effect as large as the largest seen ({:.4}) with power {:.2}.",
                sd,
                more.replicates,
                if more.replicates == 1 { "y" } else { "ies" },
                more.replicates * per_copy,
                size,
                more.power
            );
            return Recommendation {
                step: NextStep::MoreReplicates(more),
                reason,
            };
        }
    }
    Recommendation {
        step: NextStep::Nothing,
        reason: "No next trial can be sized from this screen: no effect is active and the noise cannot be estimated."
            .into(),
    }
}

/// The recommendation after a second-order analysis.
pub fn recommend_after_surface(outcome: &SurfaceOutcome) -> Recommendation {
    let settled = outcome.stationary.as_ref().is_some_and(|point| {
        point.inside_region
            && matches!(
                point.kind,
                crate::analysis::surface::StationaryKind::Maximum | crate::analysis::surface::StationaryKind::Minimum
            )
    });
    if let Some(confirm) = confirmation(outcome, CONFIRMATION_RUNS) {
        let reason = format!(
            "{}: confirm it with {} runs at {}; their average should fall between {:.4} and {:.4} ({:.0}% interval).",
            if settled {
                "The fitted surface has its best point inside the region"
            } else {
                "The best predicted settings lie on the edge of the region"
            },
            confirm.runs,
            settings_in_words(&outcome.factor_names, &confirm.real),
            confirm.low,
            confirm.high,
            100.0 * confirm.confidence
        );
        return Recommendation {
            step: NextStep::Confirm(confirm),
            reason,
        };
    }
    Recommendation {
        step: NextStep::Nothing,
        reason: "Give a direction (higher or lower is better) so that the best settings can be chosen and confirmed."
            .into(),
    }
}

#[cfg(test)]
mod loop_tests;
#[cfg(test)]
mod tests;

/// The recommendation when several responses' goals are weighed together: the
/// confirmation runs go at the compromise settings (real units), and this
/// response's average there should fall in the interval its own fit predicts.
/// `None` when the fit has no error estimate.
pub fn recommend_confirming_compromise(
    outcome: &SurfaceOutcome,
    real: &[f64],
    response: &str,
) -> Option<Recommendation> {
    let confirm = confirmation_at(outcome, real, CONFIRMATION_RUNS)?;
    let reason = format!(
        "The goals of the responses are weighed together (the compromise at the top of the Summary): confirm it with {} runs at {}; their average {} should fall between {:.4} and {:.4} ({:.0}% interval).",
        confirm.runs,
        outcome
            .factor_names
            .iter()
            .zip(&confirm.real)
            .map(|(name, value)| format!("{name} {}", setting_in_words(*value)))
            .collect::<Vec<_>>()
            .join(", "),
        response,
        confirm.low,
        confirm.high,
        100.0 * confirm.confidence
    );
    Some(Recommendation {
        step: NextStep::Confirm(confirm),
        reason,
    })
}

/// Named settings in a sentence: "Temperature 158.06, Time 50".
fn settings_in_words(names: &[String], values: &[f64]) -> String {
    names
        .iter()
        .zip(values)
        .map(|(name, value)| format!("{name} {}", setting_in_words(*value)))
        .collect::<Vec<_>>()
        .join(", ")
}

/// A setting in a sentence: five significant figures, as a person would dial it in (the
/// plan workbooks keep the full value).
fn setting_in_words(value: f64) -> String {
    if value == 0.0 || !value.is_finite() {
        return format!("{value}");
    }
    let digits = 5 - (value.abs().log10().floor() as i32) - 1;
    let scale = 10f64.powi(digits);
    format!("{}", (value * scale).round() / scale)
}
