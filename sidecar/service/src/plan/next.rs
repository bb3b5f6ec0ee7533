//! The next trial written as a plan workbook: the runs already made (with their
//! results and blocks) followed by the recommended runs as a new block, so that
//! the whole sequence lives in one workbook and `run` analyses it as one.
//!
//! What `trialyst next` and the protocol's next-plan request do: analyse the
//! workbook, take the recommendation of one response (the first that has one,
//! or the one named), turn it into runs, and write the plan with
//! [`engine::design::sequence::plan_from_sequence`]. Confirmation runs get the
//! setting `confirmation block`, which tells the analysis of the filled plan to
//! leave that block out of the second-order fit and to say whether the runs'
//! average fell in the interval predicted for them.

use std::path::{Path, PathBuf};

use serde::Serialize;
use workbook_io::layout::TrialTable;
use workbook_io::write::{Look, ReplaceRule, Value};

use engine::analysis::next_trial::{NextStep, Recommendation};
use engine::design::sequence::{next_block, plan_from_sequence, SequenceRequest};
use engine::design::PlanError;

use super::book::{plan_book, write_options, DESIGN_SHEET, RUN_HEADER_ROW, RUN_SHEET};
use super::{summarise, PlanSummary};
use crate::failure::ServiceError;
use crate::AnalysisRequest;

/// The settings key that marks the block of confirmation runs.
pub const CONFIRMATION_BLOCK_KEY: &str = "confirmation block";

/// The runs of a recommended next trial, as the service keeps them beside the sentence.
#[derive(Debug, Clone, PartialEq)]
pub struct NextRuns {
    /// What kind of step, in plain words (`fold-over`, `steepest path`, ...).
    pub step: &'static str,
    /// The recommendation's sentence.
    pub reason: String,
    /// The factors the runs' settings are given for, in order.
    pub factors: Vec<String>,
    /// The new runs in real units (empty for more replicates: see `copies`).
    pub runs: Vec<Vec<f64>>,
    /// Copies of the design's factorial runs to add (more replicates), else 0.
    pub copies: usize,
    /// True for confirmation runs.
    pub confirmation: bool,
}

impl NextRuns {
    /// The runs of an engine recommendation.
    pub fn new(factors: Vec<String>, recommendation: &Recommendation) -> Self {
        let (step, copies, confirmation) = match &recommendation.step {
            NextStep::FoldOver(_) => ("fold-over", 0, false),
            NextStep::SteepestPath(path) if path.ascent => ("path of steepest ascent", 0, false),
            NextStep::SteepestPath(_) => ("path of steepest descent", 0, false),
            NextStep::CompleteComposite(_) => ("axial and centre runs completing a central composite plan", 0, false),
            NextStep::MoreReplicates(more) => ("more replicates", more.replicates, false),
            NextStep::Confirm(_) => ("confirmation runs", 0, true),
            NextStep::Nothing => ("nothing", 0, false),
        };
        Self {
            step,
            reason: recommendation.reason.clone(),
            factors,
            runs: recommendation.real_runs(),
            copies,
            confirmation,
        }
    }

    /// True when there are runs to plan.
    pub fn has_runs(&self) -> bool {
        !self.runs.is_empty() || self.copies > 0
    }
}

/// What the next plan is asked with, beyond the analysis request.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct NextPlanRequest {
    /// The response whose recommendation is planned; `None` takes the first that has one.
    pub response: Option<String>,
    /// The seed of the new runs' order; `None` draws one from the clock.
    pub seed: Option<u64>,
    /// The plan's date as `YYYY-MM-DD`.
    pub date: Option<String>,
    /// Which existing file may be replaced.
    pub replace: ReplaceRule,
}

/// What was written, for a person or a client.
#[derive(Debug, Clone, Serialize)]
pub struct NextPlanSummary {
    /// The plan written.
    pub plan: PlanSummary,
    /// The response whose recommendation it follows.
    pub response: String,
    /// The kind of step, in words.
    pub step: String,
    /// The recommendation's sentence.
    pub reason: String,
    /// Runs already made, kept as the earlier blocks.
    pub earlier_runs: usize,
    /// New runs to make.
    pub new_runs: usize,
    /// The block the new runs form.
    pub block: usize,
    /// True when the new runs are confirmation runs (their block is named by the
    /// `confirmation block` setting).
    pub confirmation: bool,
}

/// Why no next plan was written.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum NextPlanError {
    /// The workbook could not be analysed.
    #[error(transparent)]
    Service(#[from] ServiceError),
    /// The response named is not in the table.
    #[error("'{workbook}': no response is named '{name}'; the responses are {known}")]
    UnknownResponse {
        /// The workbook.
        workbook: String,
        /// The name asked for.
        name: String,
        /// The responses of the table.
        known: String,
    },
    /// No response has a next trial with runs.
    #[error("'{workbook}': no next trial to plan: {reasons}")]
    NothingToPlan {
        /// The workbook.
        workbook: String,
        /// Each response's reason.
        reasons: String,
    },
    /// The plan could not be made.
    #[error(transparent)]
    Plan(#[from] PlanError),
    /// The workbook could not be written.
    #[error(transparent)]
    Write(#[from] workbook_io::write::WriteError),
}

/// The default name of the next plan: `<stem> next trial.xlsx` beside the workbook.
pub fn next_plan_path_for(workbook: &Path) -> PathBuf {
    let stem = workbook
        .file_stem()
        .map_or_else(|| "trial".into(), |stem| stem.to_string_lossy());
    workbook.with_file_name(format!("{stem} next trial.xlsx"))
}

/// The settings of each record of the table for the factors named, in real
/// units; `None` when a factor is missing or a setting is not a number.
fn record_settings(table: &TrialTable, factors: &[String]) -> Option<Vec<Vec<f64>>> {
    let columns: Vec<_> = factors
        .iter()
        .map(|name| {
            table
                .factors
                .iter()
                .find(|factor| !factor.is_block && &factor.name == name)
        })
        .collect::<Option<_>>()?;
    let numbers: Vec<Vec<f64>> = columns
        .iter()
        .map(|factor| {
            factor
                .levels
                .iter()
                .map(|label| label.trim().parse::<f64>().ok().filter(|value| value.is_finite()))
                .collect::<Option<_>>()
        })
        .collect::<Option<_>>()?;
    (0..table.n_records())
        .map(|record| {
            columns
                .iter()
                .zip(&numbers)
                .map(|(factor, levels)| levels.get(*factor.level_of_record.get(record)? as usize).copied())
                .collect()
        })
        .collect()
}

/// The block of each record, from 1: the labels themselves when every one is a
/// whole number from 1, else the order of the labels; all 1 without a block column.
pub(crate) fn record_blocks(table: &TrialTable) -> Vec<usize> {
    let Some(block) = table.factors.iter().find(|factor| factor.is_block) else {
        return vec![1; table.n_records()];
    };
    let numbers: Option<Vec<usize>> = block
        .levels
        .iter()
        .map(|label| label.trim().parse::<usize>().ok().filter(|&number| number >= 1))
        .collect();
    block
        .level_of_record
        .iter()
        .map(|&level| match &numbers {
            Some(numbers) => numbers[level as usize],
            None => level as usize + 1,
        })
        .collect()
}

/// The factorial runs of the design (every distinct setting but the centre), in
/// the order first made, repeated `copies` times.
fn copies_of_design(made: &[Vec<f64>], copies: usize) -> Vec<Vec<f64>> {
    let k = made.first().map_or(0, Vec::len);
    let middle: Vec<f64> = (0..k)
        .map(|factor| {
            let low = made.iter().map(|run| run[factor]).fold(f64::INFINITY, f64::min);
            let high = made.iter().map(|run| run[factor]).fold(f64::NEG_INFINITY, f64::max);
            (low + high) / 2.0
        })
        .collect();
    let mut distinct: Vec<Vec<f64>> = Vec::new();
    for run in made {
        if run != &middle && !distinct.contains(run) {
            distinct.push(run.clone());
        }
    }
    (0..copies).flat_map(|_| distinct.iter().cloned()).collect()
}

/// Analyses the workbook and writes the plan of the recommended next trial to
/// `destination`.
///
/// # Errors
///
/// [`NextPlanError`]: the workbook could not be analysed, the response named is not
/// in it, no response has a next trial with runs, or the plan could not be made or written.
pub fn write_next_plan(
    workbook: &Path,
    analysis: &AnalysisRequest,
    request: &NextPlanRequest,
    destination: &Path,
) -> Result<NextPlanSummary, NextPlanError> {
    let loaded = crate::load::load(workbook, analysis)?;
    let table = loaded.table.clone();
    let results = crate::orchestrate::analyse_loaded(workbook, loaded, &analysis.cancel)?;
    let shown = workbook.display().to_string();
    if let Some(name) = &request.response {
        if !results
            .responses
            .iter()
            .any(|response| response.name.eq_ignore_ascii_case(name.trim()))
        {
            return Err(NextPlanError::UnknownResponse {
                workbook: shown,
                name: name.clone(),
                known: results
                    .responses
                    .iter()
                    .map(|response| format!("'{}'", response.name))
                    .collect::<Vec<_>>()
                    .join(", "),
            });
        }
    }
    let chosen = results
        .responses
        .iter()
        .filter(|response| {
            request
                .response
                .as_ref()
                .is_none_or(|name| response.name.eq_ignore_ascii_case(name.trim()))
        })
        .find_map(|response| {
            let next = response.next_runs.as_ref().filter(|next| next.has_runs())?;
            Some((response, next))
        });
    let Some((response, next)) = chosen else {
        let reasons = results
            .responses
            .iter()
            .map(|response| {
                format!(
                    "'{}': {}",
                    response.name,
                    response.next_trial.as_deref().unwrap_or(
                        "no recommendation (a next trial follows a two-level screen or a response-surface trial whose settings are numbers)"
                    )
                )
            })
            .collect::<Vec<_>>()
            .join("; ");
        return Err(NextPlanError::NothingToPlan {
            workbook: shown,
            reasons,
        });
    };
    let made = record_settings(&table, &next.factors).ok_or_else(|| NextPlanError::NothingToPlan {
        workbook: shown.clone(),
        reasons: "the factors of the recommendation are not all numeric columns of the table".into(),
    })?;
    let made_blocks = record_blocks(&table);
    let new_runs = if next.copies > 0 {
        copies_of_design(&made, next.copies)
    } else {
        next.runs.clone()
    };
    let date = request.date.as_deref().map(engine::design::parse_date).transpose()?;
    let plan = plan_from_sequence(&SequenceRequest {
        factors: next.factors.clone(),
        responses: table.responses.iter().map(|response| response.name.clone()).collect(),
        made: made.clone(),
        made_blocks: made_blocks.clone(),
        next: new_runs.clone(),
        seed: request.seed,
        date,
    })?;
    let block = next_block(&made_blocks);
    let mut book = plan_book(&plan);
    // The results already made, in their rows of the runs sheet.
    if let Some(sheet) = book.sheets.iter_mut().find(|sheet| sheet.name == RUN_SHEET) {
        let first_response_col = 3 + next.factors.len() as u16;
        for (record, _) in made.iter().enumerate() {
            let row = RUN_HEADER_ROW + 1 + record as u32;
            for (offset, response) in table.responses.iter().enumerate() {
                let value = response.values.get(record).copied().unwrap_or(f64::NAN);
                if value.is_finite() {
                    sheet.put(
                        row,
                        first_response_col + offset as u16,
                        Value::number(value),
                        Look::Plain,
                    );
                }
            }
        }
    }
    if let Some(sheet) = book.sheets.iter_mut().find(|sheet| sheet.name == DESIGN_SHEET) {
        let first_row = sheet.cells.iter().map(|cell| cell.row).max().unwrap_or(0) + 2;
        let lines = [
            (
                "runs already made".to_string(),
                format!("{} (blocks before {block}; their results are filled in)", made.len()),
            ),
            (
                "next trial".to_string(),
                format!("{}: {} runs as block {block}", next.step, new_runs.len()),
            ),
            ("why".to_string(), next.reason.clone()),
            ("followed response".to_string(), response.name.clone()),
        ];
        for (row, (key, value)) in (first_row..).zip(lines) {
            sheet.put(row, 0, Value::text(key), Look::Plain);
            sheet.put(row, 1, Value::text(value), Look::Plain);
        }
    }
    if next.confirmation {
        if let Some(sheet) = book
            .sheets
            .iter_mut()
            .find(|sheet| sheet.name == workbook_io::settings::SETTINGS_SHEET)
        {
            let row = sheet.cells.iter().map(|cell| cell.row).max().unwrap_or(0) + 1;
            sheet.put(row, 0, Value::text(CONFIRMATION_BLOCK_KEY), Look::Plain);
            sheet.put(row, 1, Value::text(block.to_string()), Look::Plain);
        }
    }
    workbook_io::write::check_replaceable(destination, request.replace)?;
    let bytes = workbook_io::write::to_bytes_with(&book, &write_options(&plan), destination)?;
    workbook_io::write::write_atomically(&bytes, destination)?;
    Ok(NextPlanSummary {
        plan: summarise(&plan, Some(destination)),
        response: response.name.clone(),
        step: next.step.to_string(),
        reason: next.reason.clone(),
        earlier_runs: made.len(),
        new_runs: new_runs.len(),
        block,
        confirmation: next.confirmation,
    })
}
