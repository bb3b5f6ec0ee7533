//! Building a trial plan: the runs of a one-factor plan, a full factorial
//! of any numbers of levels or a regular two-level fraction, with
//! replicates, centre points and blocks, in a randomized run order.
//!
//! Nothing here does I/O; [`make_plan`] turns a [`PlanRequest`] into a
//! [`Plan`], and the same request with the same seed always gives the same
//! plan.

pub mod random;
pub mod sequence;
pub mod surface;

use std::fmt;

use sha2::{Digest, Sha256};

use crate::design::random::{seed_from_clock, SplitMix64};
use crate::stats::two_level::{
    minimum_aberration_design, parse_generator, DefiningRelation, SignedWord, Word, DEFAULT_SEARCH_BUDGET,
    FACTOR_LETTERS,
};
use crate::stats::StatsError;

/// Most factors of a two-level fraction.
pub const MAX_FRACTION_FACTORS: usize = 11;
/// Most runs a plan may have.
pub const MAX_PLAN_RUNS: usize = 10_000;
/// Most levels one factor may have.
pub const MAX_LEVELS: usize = 100;
/// Search nodes allowed when choosing block generators.
pub const BLOCK_SEARCH_BUDGET: u64 = 2_000_000;

/// One level of a factor, as the user wrote it.
#[derive(Debug, Clone, PartialEq)]
pub struct Level {
    /// The level as text.
    pub text: String,
    /// The level as a number, when the text is one.
    pub number: Option<f64>,
}

impl Level {
    /// A level from its text; numbers are recognised.
    pub fn new(text: &str) -> Self {
        let text = text.trim().to_string();
        let number = text.parse::<f64>().ok().filter(|value| value.is_finite());
        Self { text, number }
    }
}

/// A factor and its levels.
#[derive(Debug, Clone, PartialEq)]
pub struct FactorSpec {
    /// The factor's name, used as its column header.
    pub name: String,
    /// Its levels, in the order given.
    pub levels: Vec<Level>,
}

impl FactorSpec {
    /// A factor from a name and level texts.
    pub fn new(name: &str, levels: &[&str]) -> Self {
        Self {
            name: name.trim().to_string(),
            levels: levels.iter().map(|text| Level::new(text)).collect(),
        }
    }

    /// True when every level is a number (a quantitative factor).
    pub fn is_quantitative(&self) -> bool {
        self.levels.iter().all(|level| level.number.is_some())
    }

    /// The centre of a quantitative two-level factor: the midpoint of its levels.
    pub fn centre(&self) -> Option<f64> {
        match self.levels.as_slice() {
            [low, high] => Some((low.number? + high.number?) / 2.0),
            _ => None,
        }
    }
}

/// What the user asks for: factors, responses and the plan's shape.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct PlanRequest {
    /// The factors, in order (the first is `A` in generators).
    pub factors: Vec<FactorSpec>,
    /// Response column headers.
    pub responses: Vec<String>,
    /// Copies of the whole design (for a one-factor plan: runs per condition); 0 means 1.
    pub replicates: usize,
    /// Centre runs in each block (two-level plans with a numeric factor).
    pub centre_points: usize,
    /// Number of blocks; 0 or 1 for none.
    pub blocks: usize,
    /// Runs of one replicate of a two-level fraction (a power of two); `None` for the full design.
    pub fraction_runs: Option<usize>,
    /// Generators given by the user, such as `E = ABC`; empty to search.
    pub generators: Vec<String>,
    /// The seed of the run order; `None` draws one from the clock.
    pub seed: Option<u64>,
    /// The plan's date as `YYYY-MM-DD`, written as the file's creation date.
    pub date: Option<String>,
}

/// Why a plan could not be made.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum PlanError {
    /// A plan needs at least one factor.
    #[error("a plan needs at least one factor (give --factor \"Name=level1,level2\")")]
    NoFactors,
    /// A plan needs at least one response.
    #[error("a plan needs at least one response (give --response \"Name (unit)\")")]
    NoResponse,
    /// Every factor needs two or more distinct levels, and at most [`MAX_LEVELS`].
    #[error("factor '{factor}': {rule}")]
    BadFactor {
        /// The factor.
        factor: String,
        /// What is wrong.
        rule: String,
    },
    /// Factor and response names may not hold commas (the settings sheet
    /// lists them separated by commas).
    #[error("the name '{name}' holds a comma; factor and response names cannot")]
    CommaInName {
        /// The name.
        name: String,
    },
    /// Factor and response names must be distinct and non-empty.
    #[error("the name '{name}' is used twice or is empty; every factor and response needs its own name")]
    DuplicateName {
        /// The name.
        name: String,
    },
    /// The plan has more runs than [`MAX_PLAN_RUNS`].
    #[error("the plan would have {runs} runs; at most {limit} are allowed")]
    TooManyRuns {
        /// Runs asked for.
        runs: usize,
        /// The limit.
        limit: usize,
    },
    /// The fraction asked for cannot be made.
    #[error("cannot make the fraction: {reason}")]
    Fraction {
        /// Why.
        reason: String,
    },
    /// A generator given by the user cannot be used.
    #[error("generator '{text}': {reason}")]
    Generator {
        /// The generator as given.
        text: String,
        /// Why.
        reason: String,
    },
    /// The blocks asked for cannot be made.
    #[error("cannot split the plan into {blocks} blocks: {reason}")]
    Blocks {
        /// Blocks asked for.
        blocks: usize,
        /// Why.
        reason: String,
    },
    /// Centre points cannot be added to this plan.
    #[error("cannot add centre points: {reason}")]
    CentrePoints {
        /// Why.
        reason: String,
    },
    /// The date is not a calendar date written `YYYY-MM-DD`.
    #[error("date '{text}': write it as YYYY-MM-DD, a real calendar date from 1900 on")]
    BadDate {
        /// The date as given.
        text: String,
    },
    /// A design routine refused its input.
    #[error("design mathematics: {0}")]
    Stats(#[from] StatsError),
}

/// The kind of plan.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum DesignKind {
    /// One factor, several conditions, the same number of runs each.
    OneFactor,
    /// Every combination of the factors' levels.
    FullFactorial,
    /// A regular two-level fraction `2^(k-p)`.
    TwoLevelFraction,
    /// A central composite plan (cube, axial and centre runs).
    CentralComposite,
    /// A Box-Behnken plan.
    BoxBehnken,
    /// A sequence of trials: the runs already made, in their blocks, and the
    /// next trial's runs as a block after them ([`sequence::plan_from_sequence`]).
    Sequence,
}

impl fmt::Display for DesignKind {
    fn fmt(&self, formatter: &mut fmt::Formatter<'_>) -> fmt::Result {
        formatter.write_str(match self {
            DesignKind::OneFactor => "one-factor plan",
            DesignKind::FullFactorial => "full factorial",
            DesignKind::TwoLevelFraction => "two-level fraction",
            DesignKind::CentralComposite => "central composite plan",
            DesignKind::BoxBehnken => "Box-Behnken plan",
            DesignKind::Sequence => "sequence of trials",
        })
    }
}

/// A factor's setting on one run.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Setting {
    /// The level with this index.
    Level(usize),
    /// The centre of a quantitative two-level factor.
    Centre,
}

/// One run of the plan.
#[derive(Debug, Clone, PartialEq)]
pub struct PlannedRun {
    /// Position in the randomized order, from 1.
    pub run_order: usize,
    /// Position in the standard (unrandomized) order, from 1.
    pub standard_order: usize,
    /// The replicate, from 1.
    pub replicate: usize,
    /// The block, from 1 (1 when the plan is not blocked).
    pub block: usize,
    /// Each factor's setting, in factor order.
    pub settings: Vec<Setting>,
    /// True for a centre run.
    pub is_centre: bool,
}

/// How a two-level fraction was chosen.
#[derive(Debug, Clone, PartialEq)]
pub struct FractionDesign {
    /// The defining relation.
    pub relation: DefiningRelation,
    /// True when the generators came from the minimum aberration search.
    pub from_search: bool,
    /// Nodes the search visited (0 for generators given by the user).
    pub nodes_visited: u64,
}

/// How the blocks of a two-level plan were confounded.
#[derive(Debug, Clone, PartialEq)]
pub struct BlockDesign {
    /// Blocks in each replicate.
    pub per_replicate: usize,
    /// The block generators: effects whose signs pick each run's block.
    pub generators: Vec<Word>,
    /// Every effect confounded with blocks (the generators and their
    /// products), with the alias chain each stands for.
    pub confounded: Vec<(Word, String)>,
    /// The fewest letters among the alias-chain leaders confounded with blocks.
    pub lowest_order: usize,
}

/// A complete trial plan.
#[derive(Debug, Clone, PartialEq)]
pub struct Plan {
    /// A short identifier derived from the whole plan definition.
    pub id: String,
    /// The seed of the run order.
    pub seed: u64,
    /// True when the seed was drawn from the clock.
    pub seed_from_clock: bool,
    /// The plan's date `(year, month, day)`, if given.
    pub date: Option<(u16, u8, u8)>,
    /// The kind of plan.
    pub kind: DesignKind,
    /// The factors.
    pub factors: Vec<FactorSpec>,
    /// The responses.
    pub responses: Vec<String>,
    /// Replicates of the design.
    pub replicates: usize,
    /// Centre runs per block.
    pub centre_points: usize,
    /// Blocks in the whole plan (1 when not blocked).
    pub n_blocks: usize,
    /// The fraction, for two-level plans (a full two-level factorial has an empty relation).
    pub fraction: Option<FractionDesign>,
    /// The confounding of blocks within replicates, if any.
    pub blocking: Option<BlockDesign>,
    /// The runs, in run order.
    pub runs: Vec<PlannedRun>,
}

impl Plan {
    /// The text a run's setting of factor `factor` is written as.
    pub fn setting_text(&self, factor: usize, setting: Setting) -> String {
        let spec = &self.factors[factor];
        match setting {
            Setting::Level(index) => spec.levels[index].text.clone(),
            Setting::Centre => spec.centre().map_or_else(String::new, format_number),
        }
    }

    /// The number a run's setting is written as, for a quantitative factor.
    pub fn setting_number(&self, factor: usize, setting: Setting) -> Option<f64> {
        let spec = &self.factors[factor];
        match setting {
            Setting::Level(index) => spec.levels[index].number,
            Setting::Centre => spec.centre(),
        }
    }

    /// True when blocks are part of the plan.
    pub fn is_blocked(&self) -> bool {
        self.n_blocks > 1
    }

    /// The plan definition as canonical text: the same text for the same plan.
    /// Response-surface plans add their kind (a face-centred plan and a
    /// three-level factorial can share their levels); other plans' text is as it
    /// always was, so their ids do not change.
    pub fn definition_text(&self) -> String {
        let kind = match self.kind {
            DesignKind::CentralComposite | DesignKind::BoxBehnken => format!("\ndesign {}", self.kind),
            // The runs of a sequence are not derived from its definition: they are part of it.
            DesignKind::Sequence => {
                let mut text = format!("\ndesign {}", self.kind);
                for run in &self.runs {
                    let settings: Vec<String> = (0..self.factors.len())
                        .map(|factor| self.setting_text(factor, run.settings[factor]))
                        .collect();
                    text.push_str(&format!(
                        "\nrun {} block {} = {}",
                        run.run_order,
                        run.block,
                        settings.join(" | ")
                    ));
                }
                text
            }
            _ => String::new(),
        };
        definition_text(
            &self.factors,
            &self.responses,
            self.replicates,
            self.centre_points,
            self.n_blocks,
            self.fraction
                .as_ref()
                .map(|fraction| fraction.relation.generator_equations_text())
                .unwrap_or_default()
                .as_slice(),
            self.seed,
            self.date,
        ) + &kind
    }
}

/// Writes a number the shortest way that reads back as the same number.
pub fn format_number(value: f64) -> String {
    format!("{value}")
}

#[allow(clippy::too_many_arguments)]
fn definition_text(
    factors: &[FactorSpec],
    responses: &[String],
    replicates: usize,
    centre_points: usize,
    n_blocks: usize,
    generators: &[String],
    seed: u64,
    date: Option<(u16, u8, u8)>,
) -> String {
    let mut lines = Vec::new();
    for factor in factors {
        let levels: Vec<&str> = factor.levels.iter().map(|level| level.text.as_str()).collect();
        lines.push(format!("factor {} = {}", factor.name, levels.join(" | ")));
    }
    for response in responses {
        lines.push(format!("response {response}"));
    }
    lines.push(format!("replicates {replicates}"));
    lines.push(format!("centre points {centre_points}"));
    lines.push(format!("blocks {n_blocks}"));
    for generator in generators {
        lines.push(format!("generator {generator}"));
    }
    lines.push(format!("seed {seed}"));
    if let Some((year, month, day)) = date {
        lines.push(format!("date {year:04}-{month:02}-{day:02}"));
    }
    lines.join("\n")
}

/// Reads `YYYY-MM-DD` into a checked calendar date.
///
/// # Errors
///
/// [`PlanError::BadDate`].
pub fn parse_date(text: &str) -> Result<(u16, u8, u8), PlanError> {
    let bad = || PlanError::BadDate { text: text.to_string() };
    let parts: Vec<&str> = text.trim().split('-').collect();
    let [year, month, day] = parts.as_slice() else {
        return Err(bad());
    };
    let year: u16 = year.parse().map_err(|_| bad())?;
    let month: u8 = month.parse().map_err(|_| bad())?;
    let day: u8 = day.parse().map_err(|_| bad())?;
    let leap = (year.is_multiple_of(4) && !year.is_multiple_of(100)) || year.is_multiple_of(400);
    let days_in_month = match month {
        1 | 3 | 5 | 7 | 8 | 10 | 12 => 31,
        4 | 6 | 9 | 11 => 30,
        2 if leap => 29,
        2 => 28,
        _ => return Err(bad()),
    };
    if !(1900..=9999).contains(&year) || day == 0 || day > days_in_month {
        return Err(bad());
    }
    Ok((year, month, day))
}

fn check_request(request: &PlanRequest) -> Result<(), PlanError> {
    if request.factors.is_empty() {
        return Err(PlanError::NoFactors);
    }
    if request.responses.is_empty() {
        return Err(PlanError::NoResponse);
    }
    let mut names: Vec<String> = Vec::new();
    for name in request
        .factors
        .iter()
        .map(|factor| &factor.name)
        .chain(&request.responses)
        .map(|name| name.trim().to_lowercase())
    {
        if name.contains(',') {
            return Err(PlanError::CommaInName { name });
        }
        if name.is_empty() || names.contains(&name) || is_reserved_header(&name) {
            return Err(PlanError::DuplicateName { name });
        }
        names.push(name);
    }
    for factor in &request.factors {
        let bad = |rule: String| PlanError::BadFactor {
            factor: factor.name.clone(),
            rule,
        };
        if factor.levels.len() < 2 {
            return Err(bad("give at least two levels, separated by commas".into()));
        }
        if factor.levels.len() > MAX_LEVELS {
            return Err(bad(format!("at most {MAX_LEVELS} levels are allowed")));
        }
        for (index, level) in factor.levels.iter().enumerate() {
            if level.text.is_empty() {
                return Err(bad(format!("level {} is blank", index + 1)));
            }
            let same = |other: &Level| match (other.number, level.number) {
                (Some(a), Some(b)) => a == b,
                _ => other.text.eq_ignore_ascii_case(&level.text),
            };
            if factor.levels[..index].iter().any(same) {
                return Err(bad(format!("the level '{}' is given twice", level.text)));
            }
        }
    }
    Ok(())
}

/// Headers of the run sheet's own columns, which factors and responses may not take.
pub fn is_reserved_header(name_lower: &str) -> bool {
    matches!(name_lower, "run order" | "standard order" | "block" | "notes")
}

/// Coded base runs of a two-level design: `-1 -> level 0`, `+1 -> level 1`.
fn two_level_runs(relation: &DefiningRelation) -> Vec<Vec<Setting>> {
    relation
        .runs()
        .into_iter()
        .map(|row| {
            row.into_iter()
                .map(|coded| Setting::Level(usize::from(coded > 0.0)))
                .collect()
        })
        .collect()
}

/// Every combination of levels, the first factor changing fastest.
fn mixed_level_runs(factors: &[FactorSpec]) -> Vec<Vec<Setting>> {
    let total: usize = factors.iter().map(|factor| factor.levels.len()).product();
    (0..total)
        .map(|mut index| {
            factors
                .iter()
                .map(|factor| {
                    let level = index % factor.levels.len();
                    index /= factor.levels.len();
                    Setting::Level(level)
                })
                .collect()
        })
        .collect()
}

fn choose_fraction(request: &PlanRequest) -> Result<Option<FractionDesign>, PlanError> {
    let n_factors = request.factors.len();
    let all_two_level = request.factors.iter().all(|factor| factor.levels.len() == 2);
    let wants_fraction = request.fraction_runs.is_some() || !request.generators.is_empty();
    if wants_fraction {
        if let Some(factor) = request.factors.iter().find(|factor| factor.levels.len() != 2) {
            return Err(PlanError::Fraction {
                reason: format!(
                    "two-level fractions need every factor at two levels; '{}' has {}",
                    factor.name,
                    factor.levels.len()
                ),
            });
        }
        if n_factors > MAX_FRACTION_FACTORS {
            return Err(PlanError::Fraction {
                reason: format!("at most {MAX_FRACTION_FACTORS} factors are handled, {n_factors} were given"),
            });
        }
    }
    if !all_two_level || n_factors < 2 {
        return Ok(None);
    }
    if !request.generators.is_empty() {
        let mut parsed: Vec<SignedWord> = Vec::new();
        for text in &request.generators {
            let word = parse_generator(text, n_factors).map_err(|error| PlanError::Generator {
                text: text.clone(),
                reason: format!(
                    "{error}; write it as E = ABC with the letters {} for the factors in the order given",
                    FACTOR_LETTERS[..n_factors].iter().collect::<String>()
                ),
            })?;
            parsed.push(word);
        }
        let relation = DefiningRelation::new(n_factors, &parsed).map_err(|error| PlanError::Fraction {
            reason: format!("the generators {}: {error}", request.generators.join(", ")),
        })?;
        if let Some(runs) = request.fraction_runs {
            if runs != relation.n_runs() {
                return Err(PlanError::Fraction {
                    reason: format!(
                        "{} for {n_factors} factors give {} runs, not the {runs} asked for",
                        crate::analysis::verdict::count_of(parsed.len(), "generator"),
                        relation.n_runs()
                    ),
                });
            }
        }
        return Ok(Some(FractionDesign {
            relation,
            from_search: false,
            nodes_visited: 0,
        }));
    }
    let full_runs = 1usize << n_factors;
    let runs = request.fraction_runs.unwrap_or(full_runs);
    if !runs.is_power_of_two() || runs > full_runs || runs < 2 {
        return Err(PlanError::Fraction {
            reason: format!(
                "the runs of a two-level fraction must be a power of two from 2 to {full_runs}, not {runs}"
            ),
        });
    }
    let n_generators = n_factors - runs.trailing_zeros() as usize;
    if n_generators == 0 {
        return Ok(Some(FractionDesign {
            relation: DefiningRelation::full_factorial(n_factors)?,
            from_search: false,
            nodes_visited: 0,
        }));
    }
    if n_factors >= runs {
        return Err(PlanError::Fraction {
            reason: format!("{runs} runs can carry at most {} two-level factors", runs - 1),
        });
    }
    let found = minimum_aberration_design(n_factors, n_generators, DEFAULT_SEARCH_BUDGET)?;
    Ok(Some(FractionDesign {
        relation: found.relation,
        from_search: true,
        nodes_visited: found.nodes_visited,
    }))
}

/// The number of letters of the shortest effect in `word`'s alias chain.
fn chain_order(relation: &DefiningRelation, word: Word) -> Result<usize, StatsError> {
    Ok(relation.alias_chain(word)?.leader().order())
}

struct BlockSearch<'a> {
    orders: &'a [usize],
    n_generators: usize,
    chosen: Vec<usize>,
    group: Vec<u32>,
    best: Option<(Vec<usize>, Vec<u32>)>,
    nodes: u64,
}

impl BlockSearch<'_> {
    /// Counts of confounded chains by order, for the group so far.
    fn pattern(&self) -> Vec<usize> {
        let mut counts = vec![0usize; self.orders.iter().copied().max().unwrap_or(0) + 1];
        for &element in &self.group[1..] {
            counts[self.orders[element as usize - 1]] += 1;
        }
        counts
    }

    fn visit(&mut self, candidates: &[u32], start: usize) {
        if self.nodes >= BLOCK_SEARCH_BUDGET {
            return;
        }
        for position in start..candidates.len() {
            let mask = candidates[position];
            if self.group.contains(&mask) {
                continue;
            }
            self.nodes += 1;
            let existing = self.group.len();
            for index in 0..existing {
                let product = self.group[index] ^ mask;
                self.group.push(product);
            }
            self.chosen.push(position);
            let pattern = self.pattern();
            let complete = self.chosen.len() == self.n_generators;
            // A complete choice must beat the best; a partial one that is
            // already no better cannot become better, as more generators
            // only add confounded chains.
            let worse = self.best.as_ref().is_some_and(|(best, _)| pattern >= *best);
            if !worse {
                if complete {
                    let generators = self.chosen.iter().map(|&index| candidates[index]).collect();
                    self.best = Some((pattern, generators));
                } else {
                    self.visit(candidates, position + 1);
                }
            }
            self.chosen.pop();
            self.group.truncate(existing);
            if self.nodes >= BLOCK_SEARCH_BUDGET {
                return;
            }
        }
    }
}

/// Block generators and the counts of confounded chains by leader length.
pub type BlockChoice = (Vec<Word>, Vec<usize>);

/// Chooses `n_generators` block generators for a two-level design so that
/// the effects confounded with blocks are of the highest order possible.
///
/// # Remarks
///
/// Each effect confounded with blocks stands for its whole alias chain, so a
/// chain is judged by its leader (its shortest member). The block effects
/// form a group: the generators and all their products. The search picks the
/// group whose counts of confounded chains by leader length, read from one
/// letter upward, are smallest (the blocking analogue of minimum aberration,
/// as in Sun, Wu and Chen 1997, "Optimal blocking schemes for 2^n and
/// 2^(n-p) designs", Technometrics 39): no main effect and no two-factor
/// interaction is confounded with blocks whenever some choice avoids it.
/// Depth-first over chains sorted by decreasing order, with branch and bound
/// (adding a generator only adds confounded chains), cut off after
/// [`BLOCK_SEARCH_BUDGET`] nodes; the best choice found so far is then kept.
///
/// # Errors
///
/// [`StatsError`] from the alias chains (not expected for a valid relation).
pub fn choose_block_generators(
    relation: &DefiningRelation,
    n_generators: usize,
) -> Result<Option<BlockChoice>, StatsError> {
    let basic = relation.basic_factors();
    let n_basic = basic.len();
    let to_word = |mask: u32| -> Word {
        Word(
            basic
                .iter()
                .enumerate()
                .filter(|(bit, _)| mask & (1 << bit) != 0)
                .map(|(_, &factor)| 1u32 << factor)
                .sum(),
        )
    };
    let size = 1u32 << n_basic;
    let mut orders = Vec::with_capacity(size as usize - 1);
    for mask in 1..size {
        orders.push(chain_order(relation, to_word(mask))?);
    }
    let mut candidates: Vec<u32> = (1..size).collect();
    candidates.sort_by(|a, b| {
        orders[*b as usize - 1]
            .cmp(&orders[*a as usize - 1])
            .then_with(|| to_word(*a).cmp(&to_word(*b)))
    });
    let mut search = BlockSearch {
        orders: &orders,
        n_generators,
        chosen: Vec::new(),
        group: vec![0],
        best: None,
        nodes: 0,
    };
    search.visit(&candidates, 0);
    Ok(search.best.map(|(pattern, masks)| {
        let mut words: Vec<Word> = masks.into_iter().map(to_word).collect();
        words.sort();
        (words, pattern)
    }))
}

fn block_design(relation: &DefiningRelation, per_replicate: usize, blocks: usize) -> Result<BlockDesign, PlanError> {
    let n_generators = per_replicate.trailing_zeros() as usize;
    let runs = relation.n_runs();
    if per_replicate >= runs {
        return Err(PlanError::Blocks {
            blocks,
            reason: format!(
                "each replicate has {runs} runs, so it can make at most {} blocks",
                runs / 2
            ),
        });
    }
    let Some((generators, _)) = choose_block_generators(relation, n_generators)? else {
        return Err(PlanError::Blocks {
            blocks,
            reason: "no set of block generators was found".into(),
        });
    };
    let mut group: Vec<Word> = vec![Word(0)];
    for generator in &generators {
        let existing = group.len();
        for index in 0..existing {
            group.push(group[index].product(*generator));
        }
    }
    let mut confounded = Vec::new();
    let mut lowest_order = usize::MAX;
    for word in group.into_iter().skip(1) {
        let chain = relation.alias_chain(word)?;
        lowest_order = lowest_order.min(chain.leader().order());
        confounded.push((chain.leader(), chain.display_up_to(3)));
    }
    confounded.sort();
    Ok(BlockDesign {
        per_replicate,
        generators,
        confounded,
        lowest_order,
    })
}

/// The block (within its replicate, from 0) of a coded two-level run.
fn block_of(settings: &[Setting], generators: &[Word]) -> usize {
    let mut block = 0;
    for (bit, generator) in generators.iter().enumerate() {
        let plus = generator
            .factors()
            .iter()
            .filter(|&&factor| settings[factor] == Setting::Level(0))
            .count()
            % 2
            == 0;
        if plus {
            block |= 1 << bit;
        }
    }
    block
}

/// Makes the plan: its runs in standard order, then in a randomized order
/// drawn from the seed (within blocks, which keep their order).
///
/// # Errors
///
/// [`PlanError`] naming what cannot be made and why.
pub fn make_plan(request: &PlanRequest) -> Result<Plan, PlanError> {
    check_request(request)?;
    let date = request.date.as_deref().map(parse_date).transpose()?;
    let replicates = request.replicates.max(1);
    let n_blocks = request.blocks.max(1);
    let fraction = choose_fraction(request)?;
    let kind = match &fraction {
        Some(design) if design.relation.n_generators() > 0 => DesignKind::TwoLevelFraction,
        _ if request.factors.len() == 1 => DesignKind::OneFactor,
        _ => DesignKind::FullFactorial,
    };
    let base: Vec<Vec<Setting>> = match &fraction {
        Some(design) => two_level_runs(&design.relation),
        None => {
            let total = request
                .factors
                .iter()
                .try_fold(1usize, |product, factor| product.checked_mul(factor.levels.len()));
            match total {
                Some(total) if total.saturating_mul(replicates) <= MAX_PLAN_RUNS => mixed_level_runs(&request.factors),
                _ => {
                    return Err(PlanError::TooManyRuns {
                        runs: total.unwrap_or(usize::MAX).saturating_mul(replicates),
                        limit: MAX_PLAN_RUNS,
                    })
                }
            }
        }
    };

    // Blocks: whole replicates, or confounded splits of each replicate.
    if n_blocks > 1 && !n_blocks.is_multiple_of(replicates) {
        return Err(PlanError::Blocks {
            blocks: n_blocks,
            reason: format!(
                "the number of blocks must be a multiple of the number of replicates ({replicates}): one block per replicate, or each replicate split in 2, 4, 8 ... blocks"
            ),
        });
    }
    let per_replicate = if n_blocks > 1 { n_blocks / replicates } else { 1 };
    let blocking = if per_replicate > 1 {
        let Some(design) = &fraction else {
            return Err(PlanError::Blocks {
                blocks: n_blocks,
                reason: "splitting a replicate into blocks needs a two-level plan (every factor at two levels); otherwise give one block per replicate".into(),
            });
        };
        if !per_replicate.is_power_of_two() {
            return Err(PlanError::Blocks {
                blocks: n_blocks,
                reason: format!("a replicate splits into 2, 4, 8 ... blocks, not {per_replicate}"),
            });
        }
        Some(block_design(&design.relation, per_replicate, n_blocks)?)
    } else {
        None
    };

    // Centre points.
    if request.centre_points > 0 {
        if fraction.is_none() {
            return Err(PlanError::CentrePoints {
                reason: "centre points go with two-level plans (every factor at two levels)".into(),
            });
        }
        if !request.factors.iter().any(FactorSpec::is_quantitative) {
            return Err(PlanError::CentrePoints {
                reason: "no factor has numeric levels, so there is no centre to run".into(),
            });
        }
    }
    let qualitative: Vec<usize> = (0..request.factors.len())
        .filter(|&factor| !request.factors[factor].is_quantitative())
        .collect();

    let total_runs = base.len() * replicates + request.centre_points * n_blocks;
    if total_runs > MAX_PLAN_RUNS {
        return Err(PlanError::TooManyRuns {
            runs: total_runs,
            limit: MAX_PLAN_RUNS,
        });
    }

    let mut runs: Vec<PlannedRun> = Vec::with_capacity(total_runs);
    for replicate in 0..replicates {
        for (index, settings) in base.iter().enumerate() {
            let within = blocking
                .as_ref()
                .map_or(0, |design| block_of(settings, &design.generators));
            let block = if n_blocks > 1 {
                replicate * per_replicate + within + 1
            } else {
                1
            };
            runs.push(PlannedRun {
                run_order: 0,
                standard_order: replicate * base.len() + index + 1,
                replicate: replicate + 1,
                block,
                settings: settings.clone(),
                is_centre: false,
            });
        }
    }
    // Centre runs: quantitative factors at their centre; qualitative factors
    // (which have no centre) take their levels in turn, so that each level
    // gets its share of the centre runs.
    let mut next_standard = runs.len() + 1;
    for block in 1..=n_blocks {
        for centre_index in 0..request.centre_points {
            let settings = (0..request.factors.len())
                .map(|factor| match qualitative.iter().position(|&q| q == factor) {
                    Some(position) => Setting::Level((centre_index >> position) & 1),
                    None => Setting::Centre,
                })
                .collect();
            runs.push(PlannedRun {
                run_order: 0,
                standard_order: next_standard,
                replicate: if n_blocks > 1 {
                    (block - 1) / per_replicate + 1
                } else {
                    1
                },
                block,
                settings,
                is_centre: true,
            });
            next_standard += 1;
        }
    }

    // Run order: shuffle within each block; blocks keep their order.
    let (seed, seed_from_clock) = match request.seed {
        Some(seed) => (seed, false),
        None => (seed_from_clock(), true),
    };
    let mut generator = SplitMix64::new(seed);
    runs.sort_by_key(|run| (run.block, run.standard_order));
    let mut ordered = Vec::with_capacity(runs.len());
    for block in 1..=n_blocks {
        let mut in_block: Vec<PlannedRun> = runs.iter().filter(|run| run.block == block).cloned().collect();
        generator.shuffle(&mut in_block);
        ordered.append(&mut in_block);
    }
    for (position, run) in ordered.iter_mut().enumerate() {
        run.run_order = position + 1;
    }

    let mut plan = Plan {
        id: String::new(),
        seed,
        seed_from_clock,
        date,
        kind,
        factors: request.factors.clone(),
        responses: request.responses.iter().map(|name| name.trim().to_string()).collect(),
        replicates,
        centre_points: request.centre_points,
        n_blocks,
        fraction,
        blocking,
        runs: ordered,
    };
    plan.id = plan_id(&plan);
    Ok(plan)
}

/// A plan's id: `TP-` and the first five bytes of the SHA-256 of its definition text.
pub(crate) fn plan_id(plan: &Plan) -> String {
    let digest = Sha256::digest(plan.definition_text().as_bytes());
    format!(
        "TP-{}",
        digest[..5].iter().map(|byte| format!("{byte:02X}")).collect::<String>()
    )
}

/// A response-surface plan as a [`Plan`], so it is written, kept and checked like
/// every other plan: each factor's levels are the distinct real settings its runs
/// use (in increasing order, written the shortest way), each run names its level;
/// centre runs are marked; `centre_points` is the number of centre runs in the
/// whole plan.
pub fn plan_from_surface(surface: &surface::SurfacePlan, responses: &[String], date: Option<(u16, u8, u8)>) -> Plan {
    let settings_of = |factor: usize| {
        let mut values: Vec<f64> = surface.runs.iter().map(|run| run.real[factor]).collect();
        values.sort_by(f64::total_cmp);
        values.dedup();
        values
    };
    let levels: Vec<Vec<f64>> = (0..surface.factors.len()).map(settings_of).collect();
    let factors = surface
        .factors
        .iter()
        .zip(&levels)
        .map(|(factor, values)| {
            let texts: Vec<String> = values.iter().map(|value| format_number(*value)).collect();
            let texts: Vec<&str> = texts.iter().map(String::as_str).collect();
            FactorSpec::new(&factor.name, &texts)
        })
        .collect();
    let runs: Vec<PlannedRun> = surface
        .runs
        .iter()
        .map(|run| PlannedRun {
            run_order: run.run_order,
            standard_order: run.standard_order,
            replicate: 1,
            block: run.block,
            settings: run
                .real
                .iter()
                .zip(&levels)
                .map(|(value, values)| Setting::Level(values.iter().position(|level| level == value).unwrap_or(0)))
                .collect(),
            is_centre: run.point == surface::PointKind::Centre,
        })
        .collect();
    let mut plan = Plan {
        id: String::new(),
        seed: surface.seed,
        seed_from_clock: surface.seed_from_clock,
        date,
        kind: match surface.kind {
            surface::SurfaceKind::CentralComposite => DesignKind::CentralComposite,
            surface::SurfaceKind::BoxBehnken => DesignKind::BoxBehnken,
        },
        factors,
        responses: responses.iter().map(|name| name.trim().to_string()).collect(),
        replicates: 1,
        centre_points: runs.iter().filter(|run| run.is_centre).count(),
        n_blocks: surface.n_blocks,
        fraction: None,
        blocking: None,
        runs,
    };
    plan.id = plan_id(&plan);
    plan
}

#[cfg(test)]
mod tests {
    use super::*;

    fn two_level(names: &[&str]) -> Vec<FactorSpec> {
        names.iter().map(|name| FactorSpec::new(name, &["10", "20"])).collect()
    }

    fn request(factors: Vec<FactorSpec>) -> PlanRequest {
        PlanRequest {
            factors,
            responses: vec!["Yield (%)".into()],
            seed: Some(7),
            ..PlanRequest::default()
        }
    }

    #[test]
    fn one_factor_plan_has_n_runs_per_condition() {
        let mut asked = request(vec![FactorSpec::new("Supplier", &["North", "South", "East"])]);
        asked.replicates = 4;
        let plan = make_plan(&asked).expect("plan");
        assert_eq!(plan.kind, DesignKind::OneFactor);
        assert_eq!(plan.runs.len(), 12);
        for level in 0..3 {
            let count = plan
                .runs
                .iter()
                .filter(|run| run.settings[0] == Setting::Level(level))
                .count();
            assert_eq!(count, 4);
        }
        let mut orders: Vec<usize> = plan.runs.iter().map(|run| run.standard_order).collect();
        orders.sort_unstable();
        assert_eq!(orders, (1..=12).collect::<Vec<_>>());
    }

    #[test]
    fn mixed_levels_give_every_combination() {
        let plan = make_plan(&request(vec![
            FactorSpec::new("Temperature", &["160", "180"]),
            FactorSpec::new("Supplier", &["North", "South", "East"]),
        ]))
        .expect("plan");
        assert_eq!(plan.kind, DesignKind::FullFactorial);
        let mut combinations: Vec<Vec<Setting>> = plan.runs.iter().map(|run| run.settings.clone()).collect();
        combinations.sort_by_key(|settings| format!("{settings:?}"));
        combinations.dedup();
        assert_eq!(combinations.len(), 6);
    }

    #[test]
    fn same_seed_same_plan_other_seed_other_order() {
        let asked = request(two_level(&["A", "B", "C", "D"]));
        let first = make_plan(&asked).expect("plan");
        let again = make_plan(&asked).expect("plan");
        assert_eq!(first, again);
        let mut other_seed = asked.clone();
        other_seed.seed = Some(8);
        let other = make_plan(&other_seed).expect("plan");
        assert_ne!(first.id, other.id);
        let order = |plan: &Plan| plan.runs.iter().map(|run| run.standard_order).collect::<Vec<_>>();
        assert_ne!(order(&first), order(&other));
    }

    #[test]
    fn searched_fraction_is_minimum_aberration() {
        // 2^(6-2) minimum aberration: resolution IV with word length pattern
        // (A3, A4) = (0, 3), e.g. E = ABC, F = BCD (Box, Hunter and Hunter,
        // Statistics for Experimenters, 2nd ed., table 6.14; from memory).
        let mut asked = request(two_level(&["A", "B", "C", "D", "E", "F"]));
        asked.fraction_runs = Some(16);
        let plan = make_plan(&asked).expect("plan");
        let fraction = plan.fraction.as_ref().expect("fraction");
        assert_eq!(plan.kind, DesignKind::TwoLevelFraction);
        assert_eq!(fraction.relation.resolution(), Some(4));
        assert_eq!(fraction.relation.word_length_pattern().count(4), 3);
        assert_eq!(plan.runs.len(), 16);
    }

    #[test]
    fn user_generators_are_used() {
        let mut asked = request(two_level(&["A", "B", "C", "D", "E"]));
        asked.generators = vec!["E=ABCD".into()];
        let plan = make_plan(&asked).expect("plan");
        let relation = &plan.fraction.as_ref().expect("fraction").relation;
        // 2^(5-1) with I = ABCDE is resolution V (Montgomery, Design and
        // Analysis of Experiments, table 8.14; from memory).
        assert_eq!(relation.resolution(), Some(5));
        for run in &plan.runs {
            let highs = run
                .settings
                .iter()
                .filter(|setting| **setting == Setting::Level(1))
                .count();
            // I = +ABCDE: the product of the five coded columns is +1, so the
            // number of low settings is even.
            assert_eq!((5 - highs) % 2, 0);
        }
        let mut bad = asked.clone();
        bad.generators = vec!["E=ABZ".into()];
        let error = make_plan(&bad).expect_err("bad letter");
        assert!(error.to_string().contains("E=ABZ"), "{error}");
    }

    #[test]
    fn blocks_avoid_low_order_effects() {
        // 2^5 in four blocks: the best choice confounds two three-factor
        // interactions and their four-factor product, e.g. ABC, CDE and ABDE
        // (Montgomery, Design and Analysis of Experiments, table 7.8; from
        // memory).
        let mut asked = request(two_level(&["A", "B", "C", "D", "E"]));
        asked.blocks = 4;
        let plan = make_plan(&asked).expect("plan");
        let blocking = plan.blocking.as_ref().expect("blocks");
        let mut orders: Vec<usize> = blocking.confounded.iter().map(|(word, _)| word.order()).collect();
        orders.sort_unstable();
        assert_eq!(orders, vec![3, 3, 4]);
        assert_eq!(blocking.lowest_order, 3);
        for block in 1..=4 {
            assert_eq!(plan.runs.iter().filter(|run| run.block == block).count(), 8);
        }
        // Runs are in block order: each block's runs together.
        let blocks: Vec<usize> = plan.runs.iter().map(|run| run.block).collect();
        let mut sorted = blocks.clone();
        sorted.sort_unstable();
        assert_eq!(blocks, sorted);
        // Within a block, every confounded effect has one sign on all runs.
        for (word, _) in &blocking.confounded {
            for block in 1..=4 {
                let signs: Vec<bool> = plan
                    .runs
                    .iter()
                    .filter(|run| run.block == block)
                    .map(|run| {
                        word.factors()
                            .iter()
                            .filter(|&&factor| run.settings[factor] == Setting::Level(0))
                            .count()
                            % 2
                            == 0
                    })
                    .collect();
                assert!(signs.iter().all(|sign| *sign == signs[0]));
            }
        }
    }

    #[test]
    fn centre_points_and_replicate_blocks() {
        let mut asked = request(vec![
            FactorSpec::new("Temperature", &["160", "180"]),
            FactorSpec::new("Time (min)", &["10", "20"]),
            FactorSpec::new("Catalyst", &["X", "Y"]),
        ]);
        asked.replicates = 2;
        asked.blocks = 2;
        asked.centre_points = 2;
        let plan = make_plan(&asked).expect("plan");
        assert_eq!(plan.runs.len(), 2 * 8 + 2 * 2);
        let centres: Vec<&PlannedRun> = plan.runs.iter().filter(|run| run.is_centre).collect();
        assert_eq!(centres.len(), 4);
        assert_eq!(plan.setting_text(0, Setting::Centre), "170");
        // The qualitative factor takes both levels among each block's centre runs.
        for block in 1..=2 {
            let levels: Vec<Setting> = centres
                .iter()
                .filter(|run| run.block == block)
                .map(|run| run.settings[2])
                .collect();
            assert!(levels.contains(&Setting::Level(0)) && levels.contains(&Setting::Level(1)));
        }
        // A block is a replicate here.
        assert!(plan
            .runs
            .iter()
            .filter(|run| !run.is_centre)
            .all(|run| run.block == run.replicate));
    }

    #[test]
    fn refusals_name_the_problem() {
        let mut asked = request(vec![FactorSpec::new("Supplier", &["North", "South", "East"])]);
        asked.centre_points = 2;
        assert!(matches!(make_plan(&asked), Err(PlanError::CentrePoints { .. })));
        let mut asked = request(vec![FactorSpec::new("Supplier", &["North", "North"])]);
        assert!(make_plan(&asked).expect_err("twice").to_string().contains("twice"));
        asked.factors = vec![FactorSpec::new("Supplier", &["North"])];
        assert!(matches!(make_plan(&asked), Err(PlanError::BadFactor { .. })));
        let mut asked = request(two_level(&["A", "B", "C"]));
        asked.fraction_runs = Some(2);
        assert!(matches!(make_plan(&asked), Err(PlanError::Fraction { .. })));
        asked.fraction_runs = None;
        asked.blocks = 3;
        assert!(matches!(make_plan(&asked), Err(PlanError::Blocks { .. })));
        assert!(parse_date("2026-02-29").is_err());
        assert_eq!(parse_date("2024-02-29").ok(), Some((2024, 2, 29)));
    }
}
