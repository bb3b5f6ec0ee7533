//! Response-surface plans: central composite plans and Box-Behnken plans,
//! in real units, with centre points, in blocks, randomized within blocks
//! from a seed.
//!
//! # Remarks
//!
//! Coded units: a factor's low and high settings are -1 and +1, its centre 0
//! (real = centre + coded × half-range). A central composite plan (Box and
//! Wilson 1951) is a two-level cube (full, or a fraction of resolution V or
//! more so that every two-factor interaction is clear of main effects and of
//! other two-factor interactions), `2k` axial runs at ±α on each axis and
//! centre runs. The axial distance α is chosen:
//!
//! - for rotatability, α = F^(1/4) with F the cube runs (Box and Hunter
//!   1957, "Multi-factor experimental designs for exploring response
//!   surfaces", Annals of Mathematical Statistics 28): the variance of a
//!   prediction then depends only on its distance from the centre;
//! - for orthogonal blocking, α² = F (2k + n_a) / (2 (F + n_c)), with n_c the
//!   centre runs of all cube blocks and n_a those of the axial block (same
//!   source): the blocks then add no correlation with the model's terms, as
//!   the sum of each x_i² within a block is in proportion to the block's size;
//! - on the faces, α = 1, when a factor cannot go beyond its low and high.
//!
//! The cube may be split into 2, 4 ... blocks by confounding with high-order
//! interactions (the same search as two-level plans); the axial runs are a
//! block of their own when there is more than one block.
//!
//! A Box-Behnken plan (Box and Behnken 1960, "Some new three level designs
//! for the study of quantitative variables", Technometrics 2) combines
//! two-level factorials in small groups of factors with the other factors at
//! their centre: for 3, 4 and 5 factors every pair of factors; for 6 and 7
//! factors the groups of three of a balanced incomplete block arrangement.
//! Its runs never leave the cube. The four-factor plan splits into three
//! orthogonal blocks of two pairs each.
//!
//! Factor limits (the settings the process can reach) are checked for every
//! run; a plan that would go beyond one is refused, naming the factor and
//! the axial distance that fits.

use std::fmt;

use crate::design::random::{seed_from_clock, SplitMix64};
use crate::design::{choose_block_generators, PlanError, MAX_PLAN_RUNS};
use crate::stats::two_level::{minimum_aberration_design, DefiningRelation, Word, DEFAULT_SEARCH_BUDGET};

/// Most factors of a central composite plan.
pub const MAX_COMPOSITE_FACTORS: usize = 10;

/// A quantitative factor of a response-surface plan, in real units.
#[derive(Debug, Clone, PartialEq)]
pub struct SurfaceFactor {
    /// The factor's name (its column header).
    pub name: String,
    /// The low setting (coded -1).
    pub low: f64,
    /// The high setting (coded +1).
    pub high: f64,
    /// The lowest setting the process can reach, if there is a limit.
    pub lower_limit: Option<f64>,
    /// The highest setting the process can reach, if there is a limit.
    pub upper_limit: Option<f64>,
}

impl SurfaceFactor {
    /// A factor with low and high settings and no limits.
    pub fn new(name: &str, low: f64, high: f64) -> Self {
        Self {
            name: name.trim().to_string(),
            low,
            high,
            lower_limit: None,
            upper_limit: None,
        }
    }

    /// The same factor with limits.
    #[must_use]
    pub fn with_limits(mut self, lower: Option<f64>, upper: Option<f64>) -> Self {
        self.lower_limit = lower;
        self.upper_limit = upper;
        self
    }

    /// The centre (coded 0).
    pub fn centre(&self) -> f64 {
        (self.low + self.high) / 2.0
    }

    /// Half the distance from low to high (one coded unit).
    pub fn half_range(&self) -> f64 {
        (self.high - self.low) / 2.0
    }

    /// A coded setting in real units.
    pub fn to_real(&self, coded: f64) -> f64 {
        self.centre() + coded * self.half_range()
    }

    /// A real setting in coded units.
    pub fn to_coded(&self, real: f64) -> f64 {
        (real - self.centre()) / self.half_range()
    }

    /// The largest coded distance from the centre the limits allow on each
    /// side, `(below, above)` (infinite where there is no limit).
    pub fn coded_room(&self) -> (f64, f64) {
        let below = self
            .lower_limit
            .map_or(f64::INFINITY, |limit| (self.centre() - limit) / self.half_range());
        let above = self
            .upper_limit
            .map_or(f64::INFINITY, |limit| (limit - self.centre()) / self.half_range());
        (below, above)
    }
}

/// How far out the axial runs of a central composite plan go.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum AxialDistance {
    /// α = F^(1/4): rotatable.
    Rotatable,
    /// α chosen so that the blocks are orthogonal to the model.
    OrthogonalBlocking,
    /// α = 1: axial runs on the faces of the cube.
    FaceCentred,
    /// A distance given by the user, in coded units.
    Given(f64),
}

impl fmt::Display for AxialDistance {
    fn fmt(&self, formatter: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            AxialDistance::Rotatable => formatter.write_str("rotatable"),
            AxialDistance::OrthogonalBlocking => formatter.write_str("orthogonal blocks"),
            AxialDistance::FaceCentred => formatter.write_str("on the faces"),
            AxialDistance::Given(alpha) => write!(formatter, "given ({alpha})"),
        }
    }
}

/// The cube part of a central composite plan.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum CubePart {
    /// Every combination of low and high.
    Full,
    /// The smallest regular fraction of resolution V or more.
    ResolutionFive,
}

/// What a central composite plan is asked to be.
#[derive(Debug, Clone, PartialEq)]
pub struct CompositeRequest {
    /// The factors (two or more).
    pub factors: Vec<SurfaceFactor>,
    /// The axial distance rule.
    pub axial: AxialDistance,
    /// The cube part.
    pub cube: CubePart,
    /// Blocks the cube is split into (1, 2, 4 ...); with more than one
    /// block overall the axial runs form a block of their own.
    pub cube_blocks: usize,
    /// True to put the axial runs in a block of their own even with the cube in one block.
    pub axial_block: bool,
    /// Centre runs in each cube block.
    pub cube_centre_points: usize,
    /// Centre runs in the axial block (or with the axial runs when not blocked).
    pub axial_centre_points: usize,
    /// The seed of the run order; `None` draws one from the clock.
    pub seed: Option<u64>,
}

/// What a Box-Behnken plan is asked to be.
#[derive(Debug, Clone, PartialEq)]
pub struct BoxBehnkenRequest {
    /// The factors (3 to 7).
    pub factors: Vec<SurfaceFactor>,
    /// Blocks: 1, or 3 for four factors.
    pub blocks: usize,
    /// Centre runs in each block.
    pub centre_points: usize,
    /// The seed of the run order; `None` draws one from the clock.
    pub seed: Option<u64>,
}

/// The kind of a response-surface plan.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum SurfaceKind {
    /// A central composite plan.
    CentralComposite,
    /// A Box-Behnken plan.
    BoxBehnken,
}

impl fmt::Display for SurfaceKind {
    fn fmt(&self, formatter: &mut fmt::Formatter<'_>) -> fmt::Result {
        formatter.write_str(match self {
            SurfaceKind::CentralComposite => "central composite plan",
            SurfaceKind::BoxBehnken => "Box-Behnken plan",
        })
    }
}

/// What part of the plan a run belongs to.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum PointKind {
    /// A corner of the cube (central composite).
    Cube,
    /// An axial run (central composite).
    Axial,
    /// A run at the middle of an edge of the cube (Box-Behnken).
    Edge,
    /// A centre run.
    Centre,
}

impl fmt::Display for PointKind {
    fn fmt(&self, formatter: &mut fmt::Formatter<'_>) -> fmt::Result {
        formatter.write_str(match self {
            PointKind::Cube => "cube",
            PointKind::Axial => "axial",
            PointKind::Edge => "edge",
            PointKind::Centre => "centre",
        })
    }
}

/// One run of a response-surface plan.
#[derive(Debug, Clone, PartialEq)]
pub struct SurfaceRun {
    /// Position in the randomized order, from 1.
    pub run_order: usize,
    /// Position in the standard order, from 1.
    pub standard_order: usize,
    /// The block, from 1.
    pub block: usize,
    /// The settings in coded units, in factor order.
    pub coded: Vec<f64>,
    /// The settings in real units, in factor order.
    pub real: Vec<f64>,
    /// What part of the plan the run belongs to.
    pub point: PointKind,
}

/// A response-surface plan.
#[derive(Debug, Clone, PartialEq)]
pub struct SurfacePlan {
    /// The kind.
    pub kind: SurfaceKind,
    /// The factors.
    pub factors: Vec<SurfaceFactor>,
    /// The axial distance in coded units (1 for Box-Behnken, where no run is axial).
    pub alpha: f64,
    /// How the axial distance was chosen (central composite).
    pub axial: Option<AxialDistance>,
    /// The cube's generators as text, such as `F = ABCDE` (empty for a full cube).
    pub cube_generators: Vec<String>,
    /// Blocks in the whole plan.
    pub n_blocks: usize,
    /// The seed of the run order.
    pub seed: u64,
    /// True when the seed was drawn from the clock.
    pub seed_from_clock: bool,
    /// The runs, in run order.
    pub runs: Vec<SurfaceRun>,
}

impl SurfacePlan {
    /// The runs' coded settings, in run order.
    pub fn coded_rows(&self) -> Vec<Vec<f64>> {
        self.runs.iter().map(|run| run.coded.clone()).collect()
    }

    /// A short description, such as "central composite plan, 3 factors, 20 runs, α = 1.682 (rotatable)".
    pub fn description(&self) -> String {
        let mut text = format!(
            "{}, {} factors, {} runs",
            self.kind,
            self.factors.len(),
            self.runs.len()
        );
        if let Some(axial) = self.axial {
            text.push_str(&format!(", axial distance {:.4} ({axial})", self.alpha));
        }
        if !self.cube_generators.is_empty() {
            text.push_str(&format!(", cube {}", self.cube_generators.join(", ")));
        }
        if self.n_blocks > 1 {
            text.push_str(&format!(", {} blocks", self.n_blocks));
        }
        text
    }
}

fn check_factors(factors: &[SurfaceFactor], min: usize, max: usize) -> Result<(), PlanError> {
    if factors.len() < min || factors.len() > max {
        return Err(PlanError::BadFactor {
            factor: factors.first().map_or_else(String::new, |factor| factor.name.clone()),
            rule: format!("this plan takes {min} to {max} factors, not {}", factors.len()),
        });
    }
    for (index, factor) in factors.iter().enumerate() {
        if factor.name.is_empty() || factors[..index].iter().any(|other| other.name == factor.name) {
            return Err(PlanError::DuplicateName {
                name: factor.name.clone(),
            });
        }
        if factor.name.contains(',') {
            return Err(PlanError::CommaInName {
                name: factor.name.clone(),
            });
        }
        if !(factor.low.is_finite() && factor.high.is_finite()) || factor.low >= factor.high {
            return Err(PlanError::BadFactor {
                factor: factor.name.clone(),
                rule: "give a numeric low setting below a numeric high setting".into(),
            });
        }
        let (below, above) = factor.coded_room();
        if below < 1.0 - 1e-12 || above < 1.0 - 1e-12 {
            return Err(PlanError::BadFactor {
                factor: factor.name.clone(),
                rule: format!(
                    "its low and high settings ({} and {}) go beyond its limits",
                    factor.low, factor.high
                ),
            });
        }
    }
    Ok(())
}

/// The cube of a central composite plan: the smallest regular fraction of
/// resolution V or more (the full cube for up to 4 factors).
fn resolution_five_cube(n_factors: usize) -> Result<DefiningRelation, PlanError> {
    for n_generators in (1..n_factors).rev() {
        let n_basic = n_factors - n_generators;
        if n_factors > (1usize << n_basic) - 1 {
            continue;
        }
        if let Ok(design) = minimum_aberration_design(n_factors, n_generators, DEFAULT_SEARCH_BUDGET) {
            if design.relation.resolution().is_some_and(|resolution| resolution >= 5) {
                return Ok(design.relation);
            }
        }
    }
    Ok(DefiningRelation::full_factorial(n_factors)?)
}

/// The axial distance for orthogonal blocking: α² = F (2k + n_a) / (2 (F + n_c)).
pub fn orthogonal_blocking_alpha(cube_runs: usize, n_factors: usize, cube_centres: usize, axial_centres: usize) -> f64 {
    let cube = cube_runs as f64;
    (cube * (2.0 * n_factors as f64 + axial_centres as f64) / (2.0 * (cube + cube_centres as f64))).sqrt()
}

fn block_of_coded(coded: &[f64], generators: &[Word]) -> usize {
    let mut block = 0;
    for (bit, word) in generators.iter().enumerate() {
        let sign: f64 = word.factors().iter().map(|&factor| coded[factor]).product();
        if sign > 0.0 {
            block |= 1 << bit;
        }
    }
    block
}

/// Makes a central composite plan.
///
/// # Errors
///
/// [`PlanError`] naming what cannot be made: too few or too many factors, a
/// factor whose settings or axial runs go beyond its limits, blocks that
/// cannot be made.
pub fn make_central_composite(request: &CompositeRequest) -> Result<SurfacePlan, PlanError> {
    let factors = &request.factors;
    check_factors(factors, 2, MAX_COMPOSITE_FACTORS)?;
    let n_factors = factors.len();
    let relation = match request.cube {
        CubePart::Full => DefiningRelation::full_factorial(n_factors)?,
        CubePart::ResolutionFive => resolution_five_cube(n_factors)?,
    };
    let cube_rows = relation.runs();
    let cube_runs = cube_rows.len();
    let cube_blocks = request.cube_blocks.max(1);
    if !cube_blocks.is_power_of_two() || cube_blocks >= cube_runs {
        return Err(PlanError::Blocks {
            blocks: cube_blocks,
            reason: format!("the cube of {cube_runs} runs splits into 2, 4 ... blocks, fewer than its runs"),
        });
    }
    let generators = if cube_blocks > 1 {
        let Some((words, pattern)) = choose_block_generators(&relation, cube_blocks.trailing_zeros() as usize)? else {
            return Err(PlanError::Blocks {
                blocks: cube_blocks,
                reason: "no way to confound the blocks was found".into(),
            });
        };
        // Blocks confounded with a main effect or a two-factor interaction
        // would spoil the second-order model.
        if pattern.iter().take(2).any(|&count| count > 0) {
            return Err(PlanError::Blocks {
                blocks: cube_blocks,
                reason: "so many cube blocks would confound a main effect or a two-factor interaction with blocks"
                    .into(),
            });
        }
        words
    } else {
        Vec::new()
    };
    let separate_axial = cube_blocks > 1 || request.axial_block;
    let n_blocks = if separate_axial { cube_blocks + 1 } else { 1 };
    let cube_centres_total = request.cube_centre_points * cube_blocks;
    let alpha = match request.axial {
        AxialDistance::Rotatable => (cube_runs as f64).powf(0.25),
        AxialDistance::OrthogonalBlocking => {
            orthogonal_blocking_alpha(cube_runs, n_factors, cube_centres_total, request.axial_centre_points)
        }
        AxialDistance::FaceCentred => 1.0,
        AxialDistance::Given(alpha) => {
            if !(alpha.is_finite() && alpha > 0.0) {
                return Err(PlanError::BadFactor {
                    factor: factors[0].name.clone(),
                    rule: format!("the axial distance must be a positive number, not {alpha}"),
                });
            }
            alpha
        }
    };
    for factor in factors {
        let (below, above) = factor.coded_room();
        if alpha > below.min(above) + 1e-12 {
            let room = below.min(above);
            return Err(PlanError::BadFactor {
                factor: factor.name.clone(),
                rule: format!(
                    "axial runs at {alpha:.4} coded units ({} to {}) go beyond its limits; it allows {room:.4} (choose axial runs on the faces, or narrow its low and high settings)",
                    crate::design::format_number(round_setting(factor.to_real(-alpha))),
                    crate::design::format_number(round_setting(factor.to_real(alpha))),
                ),
            });
        }
    }
    let total = cube_runs + cube_centres_total + 2 * n_factors + request.axial_centre_points;
    if total > MAX_PLAN_RUNS {
        return Err(PlanError::TooManyRuns {
            runs: total,
            limit: MAX_PLAN_RUNS,
        });
    }
    let axial_block = if separate_axial { cube_blocks + 1 } else { 1 };
    let mut standard: Vec<(usize, Vec<f64>, PointKind)> = Vec::with_capacity(total);
    for row in &cube_rows {
        let block = if cube_blocks > 1 {
            block_of_coded(row, &generators) + 1
        } else {
            1
        };
        standard.push((block, row.clone(), PointKind::Cube));
    }
    for block in 1..=cube_blocks {
        for _ in 0..request.cube_centre_points {
            standard.push((block, vec![0.0; n_factors], PointKind::Centre));
        }
    }
    for factor in 0..n_factors {
        for sign in [-1.0, 1.0] {
            let mut row = vec![0.0; n_factors];
            row[factor] = sign * alpha;
            standard.push((axial_block, row, PointKind::Axial));
        }
    }
    for _ in 0..request.axial_centre_points {
        standard.push((axial_block, vec![0.0; n_factors], PointKind::Centre));
    }
    let cube_generators = relation.generator_equations_text();
    Ok(finish(
        SurfaceKind::CentralComposite,
        factors,
        alpha,
        Some(request.axial),
        cube_generators,
        n_blocks,
        request.seed,
        standard,
    ))
}

/// The groups of factors (0-based) whose two-level factorials make a
/// Box-Behnken plan, with the other factors at their centre (Box and Behnken 1960).
pub fn box_behnken_groups(n_factors: usize) -> Option<Vec<Vec<usize>>> {
    let pairs = |k: usize| -> Vec<Vec<usize>> {
        let mut groups = Vec::new();
        for first in 0..k {
            for second in first + 1..k {
                groups.push(vec![first, second]);
            }
        }
        groups
    };
    match n_factors {
        3 | 5 => Some(pairs(n_factors)),
        // Ordered so that the pairs {AB, CD}, {AD, BC}, {AC, BD} form the three orthogonal blocks.
        4 => Some(vec![
            vec![0, 1],
            vec![2, 3],
            vec![0, 3],
            vec![1, 2],
            vec![0, 2],
            vec![1, 3],
        ]),
        6 => Some(vec![
            vec![0, 1, 3],
            vec![1, 2, 4],
            vec![2, 3, 5],
            vec![0, 3, 4],
            vec![1, 4, 5],
            vec![0, 2, 5],
        ]),
        7 => Some(vec![
            vec![3, 4, 5],
            vec![0, 5, 6],
            vec![1, 4, 6],
            vec![0, 1, 3],
            vec![2, 3, 6],
            vec![0, 2, 4],
            vec![1, 2, 5],
        ]),
        _ => None,
    }
}

/// Makes a Box-Behnken plan.
///
/// # Errors
///
/// [`PlanError`] for fewer than 3 or more than 7 factors, settings beyond
/// limits, or blocks other than 1 (or 3 with four factors).
pub fn make_box_behnken(request: &BoxBehnkenRequest) -> Result<SurfacePlan, PlanError> {
    let factors = &request.factors;
    check_factors(factors, 3, 7)?;
    let n_factors = factors.len();
    let blocks = request.blocks.max(1);
    if blocks != 1 && !(n_factors == 4 && blocks == 3) {
        return Err(PlanError::Blocks {
            blocks,
            reason: "a Box-Behnken plan is made in one block, or in three blocks with four factors".into(),
        });
    }
    let groups = box_behnken_groups(n_factors).unwrap_or_default();
    let mut standard: Vec<(usize, Vec<f64>, PointKind)> = Vec::new();
    for (index, group) in groups.iter().enumerate() {
        let block = if blocks == 3 { index / 2 + 1 } else { 1 };
        for corner in 0..(1usize << group.len()) {
            let mut row = vec![0.0; n_factors];
            for (bit, &factor) in group.iter().enumerate() {
                row[factor] = if corner & (1 << bit) != 0 { 1.0 } else { -1.0 };
            }
            standard.push((block, row, PointKind::Edge));
        }
    }
    for block in 1..=blocks {
        for _ in 0..request.centre_points {
            standard.push((block, vec![0.0; n_factors], PointKind::Centre));
        }
    }
    Ok(finish(
        SurfaceKind::BoxBehnken,
        factors,
        1.0,
        None,
        Vec::new(),
        blocks,
        request.seed,
        standard,
    ))
}

/// Rounds a real setting to 12 significant digits, so that settings such as
/// 150 + 1.6818 × 25 are written without floating-point noise.
pub fn round_setting(value: f64) -> f64 {
    if value == 0.0 || !value.is_finite() {
        return value;
    }
    let digits = 12 - (value.abs().log10().floor() as i32) - 1;
    let scale = 10f64.powi(digits);
    (value * scale).round() / scale
}

/// The terms of the full second-order model at a coded point, after the
/// intercept: the k linear terms x_i, then the k(k-1)/2 interactions x_i x_j
/// (i < j, in order), then the k squares x_i².
pub fn quadratic_terms(coded: &[f64]) -> Vec<f64> {
    let k = coded.len();
    let mut terms = Vec::with_capacity(2 * k + k * k.saturating_sub(1) / 2);
    terms.extend_from_slice(coded);
    for (i, &first) in coded.iter().enumerate() {
        for &second in &coded[i + 1..] {
            terms.push(first * second);
        }
    }
    terms.extend(coded.iter().map(|value| value * value));
    terms
}

#[allow(clippy::too_many_arguments)]
fn finish(
    kind: SurfaceKind,
    factors: &[SurfaceFactor],
    alpha: f64,
    axial: Option<AxialDistance>,
    cube_generators: Vec<String>,
    n_blocks: usize,
    seed: Option<u64>,
    standard: Vec<(usize, Vec<f64>, PointKind)>,
) -> SurfacePlan {
    let (seed, seed_from_clock) = match seed {
        Some(seed) => (seed, false),
        None => (seed_from_clock(), true),
    };
    let mut runs: Vec<SurfaceRun> = standard
        .into_iter()
        .enumerate()
        .map(|(index, (block, coded, point))| SurfaceRun {
            run_order: 0,
            standard_order: index + 1,
            block,
            real: coded
                .iter()
                .zip(factors)
                .map(|(&value, factor)| round_setting(factor.to_real(value)))
                .collect(),
            coded,
            point,
        })
        .collect();
    runs.sort_by_key(|run| (run.block, run.standard_order));
    let mut generator = SplitMix64::new(seed);
    let mut ordered = Vec::with_capacity(runs.len());
    for block in 1..=n_blocks {
        let mut in_block: Vec<SurfaceRun> = runs.iter().filter(|run| run.block == block).cloned().collect();
        generator.shuffle(&mut in_block);
        ordered.append(&mut in_block);
    }
    for (index, run) in ordered.iter_mut().enumerate() {
        run.run_order = index + 1;
    }
    SurfacePlan {
        kind,
        factors: factors.to_vec(),
        alpha,
        axial,
        cube_generators,
        n_blocks,
        seed,
        seed_from_clock,
        runs: ordered,
    }
}

#[cfg(test)]
mod tests;
