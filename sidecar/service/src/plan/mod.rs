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
pub mod size;

use std::path::Path;

use serde::Serialize;
use workbook_io::layout::{Finding, FindingKind, TrialTable};
use workbook_io::Workbook;

pub use engine::design::{make_plan, FactorSpec, Plan, PlanError, PlanRequest};
pub use size::{size_answer, size_book, write_size, SizeAnswer, SizeError, SizeRequest};

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
