//! Planning the next trial: the service entry points behind `trialyst plan`
//! and `trialyst size` (and the protocol's plan and size requests).
//!
//! - `engine::design` makes the plan (runs, fraction, blocks, centre points,
//!   run order from a seed);
//! - [`book`] writes the plan workbook and reads back the plan kept in it;
//! - [`check`] compares the runs of a filled plan with that plan;
//! - [`file`] reads a plan request from a small TOML file;
//! - [`size`] answers power and sample size questions, with the SD of the
//!   last trial read from one of our results workbooks.
//!
//! Front ends call the functions re-exported here and nothing below them.

pub mod book;
pub mod check;
pub mod file;
pub mod next;
#[cfg(test)]
mod shown_tests;
pub mod size;
pub mod size_surface;
pub mod surface_choice;

use std::path::Path;

use serde::Serialize;
use workbook_io::layout::{Finding, FindingKind, TrialTable};
use workbook_io::Workbook;

pub use engine::design::{make_plan, FactorSpec, Plan, PlanError, PlanRequest};
pub use size::{size_answer, size_answer_until, size_book, write_size, SizeAnswer, SizeError, SizeRequest};
pub use surface_choice::{make_any_plan, SurfaceChoice, SURFACE_CENTRE_POINTS};

use crate::settings::Settings;
use engine::stats::two_level::resolution_numeral;

/// What a plan request produced, for a person or a client.
#[derive(Debug, Clone, Serialize)]
pub struct PlanSummary {
    /// The plan id.
    pub id: String,
    /// The seed of the run order.
    pub seed: u64,
    /// True when the seed was drawn from the clock.
    pub seed_from_clock: bool,
    /// The kind of plan.
    pub kind: String,
    /// Number of runs.
    pub runs: usize,
    /// Blocks.
    pub blocks: usize,
    /// Generators of a fraction, as equations.
    pub generators: Vec<String>,
    /// Resolution of a fraction, as a numeral (`full` when there is no fraction).
    pub resolution: String,
    /// The file written, if any.
    pub file: Option<String>,
}

/// Summarises a plan.
pub fn summarise(plan: &Plan, file: Option<&Path>) -> PlanSummary {
    let relation = plan.fraction.as_ref().map(|fraction| &fraction.relation);
    PlanSummary {
        id: plan.id.clone(),
        seed: plan.seed,
        seed_from_clock: plan.seed_from_clock,
        kind: plan.kind.to_string(),
        runs: plan.runs.len(),
        blocks: plan.n_blocks,
        generators: relation
            .map(|relation| relation.generator_equations_text())
            .unwrap_or_default(),
        resolution: resolution_numeral(relation.and_then(|relation| relation.resolution())),
        file: file.map(|path| path.display().to_string()),
    }
}

/// The plan workbook as bytes; the same plan always gives the same bytes.
///
/// # Errors
///
/// [`workbook_io::write::WriteError`] when the workbook cannot be built.
pub fn plan_bytes(plan: &Plan, destination: &Path) -> Result<Vec<u8>, workbook_io::write::WriteError> {
    workbook_io::write::to_bytes_with(&book::plan_book(plan), &book::write_options(plan), destination)
}

/// Writes the plan workbook atomically.
///
/// # Errors
///
/// [`workbook_io::write::WriteError`].
pub fn write_plan(plan: &Plan, destination: &Path) -> Result<(), workbook_io::write::WriteError> {
    write_plan_replacing(plan, destination, workbook_io::write::ReplaceRule::Never)
}

/// Writes the plan workbook atomically; `replace` says which existing file
/// may be replaced (`plan --force`: any writable file; else none).
///
/// # Errors
///
/// [`workbook_io::write::WriteError`]; `WouldReplace` when the destination
/// exists and `replace` keeps it.
pub fn write_plan_replacing(
    plan: &Plan,
    destination: &Path,
    replace: workbook_io::write::ReplaceRule,
) -> Result<(), workbook_io::write::WriteError> {
    workbook_io::write::check_replaceable(destination, replace)?;
    let bytes = plan_bytes(plan, destination)?;
    workbook_io::write::write_atomically(&bytes, destination)
}

/// Makes a plan and writes its workbook: what `trialyst plan` and the
/// protocol's plan request do.
///
/// # Errors
///
/// [`PlanServiceError`] when the plan cannot be made or written.
pub fn plan_to_file(request: &PlanRequest, destination: &Path) -> Result<PlanSummary, PlanServiceError> {
    let plan = make_plan(request)?;
    write_plan(&plan, destination)?;
    Ok(summarise(&plan, Some(destination)))
}

/// Which response-surface plan `trialyst plan --design` asks for.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum SurfaceDesign {
    /// A central composite plan with this axial distance rule.
    CentralComposite(engine::design::surface::AxialDistance),
    /// A Box-Behnken plan.
    BoxBehnken,
}

/// The limits of one factor: the lowest and highest settings the process can reach.
#[derive(Debug, Clone, PartialEq)]
pub struct FactorLimits {
    /// The factor's name.
    pub factor: String,
    /// The lowest setting, if limited.
    pub lower: Option<f64>,
    /// The highest setting, if limited.
    pub upper: Option<f64>,
}

/// A response-surface plan from a plan request: every factor gives two numeric
/// levels (its low and high settings, coded -1 and +1); `limits` bound the
/// settings a central composite plan's axial runs may reach. The request's
/// centre points go in each cube block (and with the axial runs); two or more
/// blocks put the axial runs in a block of their own and split the cube into the
/// rest (central composite), or split a four-factor Box-Behnken plan.
///
/// # Errors
///
/// [`PlanError`]: a factor without two numeric levels, limits naming no
/// factor, or what the engine refuses (too many runs, limits passed, blocks).
pub fn make_surface_plan(
    design: SurfaceDesign,
    request: &PlanRequest,
    limits: &[FactorLimits],
) -> Result<Plan, PlanError> {
    use engine::design::surface::{
        make_box_behnken, make_central_composite, BoxBehnkenRequest, CompositeRequest, CubePart, SurfaceFactor,
    };
    if request.factors.is_empty() {
        return Err(PlanError::NoFactors);
    }
    if request.responses.is_empty() {
        return Err(PlanError::NoResponse);
    }
    for limit in limits {
        if !request.factors.iter().any(|factor| factor.name == limit.factor) {
            return Err(PlanError::BadFactor {
                factor: limit.factor.clone(),
                rule: "limits were given for it, but no factor has this name".into(),
            });
        }
    }
    let factors = request
        .factors
        .iter()
        .map(|spec| {
            let numbers: Vec<f64> = spec.levels.iter().filter_map(|level| level.number).collect();
            match (numbers.as_slice(), spec.levels.len()) {
                ([low, high], 2) if low != high => {
                    let limit = limits.iter().find(|limit| limit.factor == spec.name);
                    Ok(SurfaceFactor::new(&spec.name, low.min(*high), low.max(*high))
                        .with_limits(limit.and_then(|l| l.lower), limit.and_then(|l| l.upper)))
                }
                _ => Err(PlanError::BadFactor {
                    factor: spec.name.clone(),
                    rule: "a response-surface plan needs two different numbers, the low and high settings, e.g. \"Temperature=160,180\"".into(),
                }),
            }
        })
        .collect::<Result<Vec<_>, _>>()?;
    let date = request.date.as_deref().map(engine::design::parse_date).transpose()?;
    let blocks = request.blocks.max(1);
    let surface = match design {
        SurfaceDesign::CentralComposite(axial) => make_central_composite(&CompositeRequest {
            factors,
            axial,
            cube: CubePart::ResolutionFive,
            cube_blocks: if blocks > 1 { blocks - 1 } else { 1 },
            axial_block: blocks > 1,
            cube_centre_points: request.centre_points,
            axial_centre_points: request.centre_points,
            seed: request.seed,
        })?,
        SurfaceDesign::BoxBehnken => make_box_behnken(&BoxBehnkenRequest {
            factors,
            blocks,
            centre_points: request.centre_points,
            seed: request.seed,
        })?,
    };
    Ok(engine::design::plan_from_surface(&surface, &request.responses, date))
}

/// Why `plan_to_file` failed.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum PlanServiceError {
    /// The plan could not be made.
    #[error(transparent)]
    Plan(#[from] PlanError),
    /// The workbook could not be written.
    #[error(transparent)]
    Write(#[from] workbook_io::write::WriteError),
}

/// The findings of checking a workbook's runs against the plan it carries.
///
/// Nothing is checked unless the settings name a plan (`plan id`). A plan
/// sheet that is missing or unreadable is itself a finding; the analysis
/// goes on either way.
pub fn plan_findings(workbook: &mut Workbook, settings: &Settings, table: &TrialTable) -> Vec<Finding> {
    let Some(plan_id) = &settings.plan_id else {
        return Vec::new();
    };
    let problem = |message: String| Finding {
        kind: FindingKind::PlanDeparture,
        sheet: String::new(),
        cell: None,
        found: plan_id.clone(),
        action: "the runs were not checked against the plan".into(),
        message,
    };
    let Some(sheet) = workbook
        .sheets()
        .iter()
        .find(|info| info.name.trim().eq_ignore_ascii_case(book::PLAN_SHEET))
        .map(|info| info.name.clone())
    else {
        return vec![problem(format!(
            "the settings name plan {plan_id}, but the workbook has no sheet '{}'",
            book::PLAN_SHEET
        ))];
    };
    let grid = match workbook.read_sheet(&sheet, None) {
        Ok(grid) => grid,
        Err(error) => return vec![problem(format!("the sheet '{sheet}' could not be read: {error}"))],
    };
    let kept = match book::read_plan_sheet(&grid) {
        Ok(kept) => kept,
        Err(message) => return vec![problem(message)],
    };
    let mut findings = Vec::new();
    if !kept.id.eq_ignore_ascii_case(plan_id.trim()) {
        findings.push(Finding {
            kind: FindingKind::PlanDeparture,
            sheet: sheet.clone(),
            cell: None,
            found: kept.id.clone(),
            action: "checked against the plan sheet".into(),
            message: format!(
                "the settings name plan {plan_id} but the sheet '{sheet}' keeps plan {}; the runs were checked against the sheet",
                kept.id
            ),
        });
    }
    findings.extend(check::check_runs(table, &kept));
    findings
}
