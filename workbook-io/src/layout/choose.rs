//! Choosing the trial among several tables: each table found gets a score for how much
//! it looks like trial data, and the best is analysed; the others are named in a
//! finding and in the table's choices.

use crate::cell::{CellPos, CellValue};
use crate::read::SheetGrid;

use super::roles::is_summary_word;
use super::Finding;
use super::{detect_table_cells, FindingKind, Layout, LayoutError, TableRequest, TrialTable};

/// Sheet-name words of sheets that hold something else than the trial's records.
const OTHER_SHEET_WORDS: &[&str] = &[
    "cover",
    "spec",
    "specs",
    "specification",
    "summary",
    "chart",
    "charts",
    "read me",
    "readme",
    "info",
    "lookup",
    "list",
    "lists",
    "contents",
    "instructions",
    "notes",
    "index",
];

/// How much a table looks like trial data: its usable measurements, counted down when
/// each condition holds a single row (a summary or a specification table), when every
/// response is headed like a summary or a limit (Mean, SD, Target, Maximum), and when
/// the sheet's name says it holds something else (cover, specification, summary, chart).
pub fn trial_score(table: &TrialTable) -> f64 {
    let values: usize = table
        .responses
        .iter()
        .map(|response| response.values.iter().filter(|value| value.is_finite()).count())
        .sum();
    let mut score = values as f64;
    let replicated = table.factors.iter().any(|factor| {
        let levels = factor.levels.len().max(1);
        factor.level_of_record.len() >= 2 * levels
    });
    if !replicated {
        score *= 0.2;
    }
    let summary_like = |name: &str| {
        let lower = name.to_lowercase();
        is_summary_word(name)
            || ["target", "limit", "nominal", "tolerance", "spec", "n"]
                .iter()
                .any(|word| lower.split_whitespace().any(|part| part == *word))
    };
    if table.layout == Layout::Long && table.responses.iter().all(|response| summary_like(&response.name)) {
        score *= 0.2;
    }
    let sheet = table.sheet.to_lowercase();
    if OTHER_SHEET_WORDS.iter().any(|word| sheet.contains(word)) {
        score *= 0.5;
    }
    score
}

/// Detects a table in each block and keeps the one that looks most like trial data.
pub(super) fn best_block(
    grid: &SheetGrid,
    request: &TableRequest,
    blocks: &[Vec<(CellPos, CellValue)>],
) -> Result<TrialTable, LayoutError> {
    let mut tables: Vec<TrialTable> = Vec::new();
    let mut first_error: Option<LayoutError> = None;
    for block in blocks {
        match detect_table_cells(grid, request, Some(block)) {
            Ok(table) => tables.push(table),
            Err(error) => {
                let replace = matches!(
                    (&first_error, &error),
                    (None, _) | (Some(LayoutError::NoTable { .. }), LayoutError::UnknownColumn { .. })
                );
                if replace {
                    first_error = Some(error);
                }
            }
        }
    }
    choose_table(tables, |table| table.area.a1(), "on the sheet", "`range`").ok_or_else(|| {
        first_error.unwrap_or_else(|| LayoutError::NoTable {
            sheet: grid.name.clone(),
            looked_for: "a header row of text (column names) with numbers below it".into(),
        })
    })
}

/// Of several tables found, the one that looks most like trial data (the first of
/// equal scores), with the choice said first in its choices and as a finding naming
/// the others' places (`place` gives a table's place as the finding should name it;
/// `scope` says where the tables were found and `setting` which setting picks another).
/// `None` when there are no tables.
pub fn choose_table(
    mut tables: Vec<TrialTable>,
    place: impl Fn(&TrialTable) -> String,
    scope: &str,
    setting: &str,
) -> Option<TrialTable> {
    let scores: Vec<f64> = tables.iter().map(trial_score).collect();
    let mut best = 0;
    for (index, score) in scores.iter().enumerate() {
        if *score > scores.get(best).copied().unwrap_or(f64::NEG_INFINITY) {
            best = index;
        }
    }
    if tables.is_empty() {
        return None;
    }
    let others: Vec<String> = tables
        .iter()
        .enumerate()
        .filter(|(index, _)| *index != best)
        .map(|(_, table)| format!("{} ({})", place(table), super::counted(table.n_records(), "record")))
        .collect();
    let mut chosen = tables.swap_remove(best);
    if !others.is_empty() {
        let line = format!(
            "of {} tables {scope}, the one at {} ({}) looks most like trial data and was analysed; the others: {}; set {setting} to analyse another",
            others.len() + 1,
            place(&chosen),
            super::counted(chosen.n_records(), "record"),
            others.join(", ")
        );
        chosen.findings.push(Finding {
            kind: FindingKind::Choice,
            sheet: chosen.sheet.clone(),
            cell: Some(chosen.area.a1()),
            found: others.join(", "),
            action: "chosen by detection".into(),
            message: line.clone(),
        });
        chosen.choices.insert(0, line);
    }
    Some(chosen)
}
