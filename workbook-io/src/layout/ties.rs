//! Context columns that change with a factor.
//!
//! A shift, day, operator or lot column kept as context does not enter the
//! analysis; if it changes exactly as a factor does (every run at one setting
//! on the early shift, every run at the other on the late one), a difference
//! between shifts cannot be told apart from the factor's effect, and the
//! engineer must hear so. Only a complete tie is reported: every run at the
//! factor's extreme settings (its labels, for a label factor) has one context
//! value, and they differ. A blocked plan done right never ties a block to a
//! factor's setting (common practice: blocks are confounded with a high-order
//! interaction, not with a main effect).

use std::collections::HashMap;

use super::cells::{label_key, label_text};
use super::header::column_finding;
use super::header::HeaderColumn;
use super::types::{Factor, Finding, FindingKind, TrialTable};
use crate::cell::{CellPos, CellValue};
use crate::read::SheetGrid;

/// The smallest number of runs at each tied setting: one run per setting shows
/// no tie, only where it happened to be made.
const RUNS_PER_SIDE: usize = 2;

/// Settings spelled out in a finding; more are counted.
const SIDES_SAID: usize = 4;

/// Findings for each context column (by index into `columns`) that changes
/// with one of the table's factors; at most one finding per column, for the
/// first factor it is tied to.
pub(super) fn context_ties(
    grid: &SheetGrid,
    sheet: &str,
    header_row: u32,
    columns: &[HeaderColumn],
    context: &[usize],
    data_cells: &[(CellPos, CellValue)],
    table: &TrialTable,
) -> Vec<Finding> {
    if context.is_empty() || table.factors.is_empty() {
        return Vec::new();
    }
    let record_of_row: HashMap<u32, usize> = table
        .record_rows
        .iter()
        .enumerate()
        .map(|(record, &row)| (row, record))
        .collect();
    let mut findings = Vec::new();
    for &index in context {
        let column = &columns[index];
        // Each record's context value (label key and its first spelling).
        let mut spelling: Vec<String> = Vec::new();
        let mut key_index: HashMap<String, usize> = HashMap::new();
        let mut value_of_record: Vec<Option<usize>> = vec![None; table.n_records()];
        for (pos, value) in data_cells {
            if pos.col != column.col {
                continue;
            }
            let (Some(&record), Some(text)) = (record_of_row.get(&pos.row), label_text(grid, *value)) else {
                continue;
            };
            let next = key_index.len();
            let slot = *key_index.entry(label_key(&text)).or_insert_with(|| {
                spelling.push(text);
                next
            });
            value_of_record[record] = Some(slot);
        }
        if spelling.len() < 2 {
            continue;
        }
        for factor in table.factors.iter().filter(|factor| !factor.is_block) {
            if let Some(tie) = tie_with(factor, &value_of_record) {
                let sides: Vec<String> = tie
                    .iter()
                    .take(SIDES_SAID)
                    .map(|(level, value)| {
                        format!(
                            "every run at {} {} has {} {}",
                            factor.name, factor.levels[*level], column.name, spelling[*value]
                        )
                    })
                    .collect();
                let more = if tie.len() > SIDES_SAID {
                    format!(" and so on for its {} settings", tie.len())
                } else {
                    String::new()
                };
                let mut values: Vec<&str> = Vec::new();
                for (_, value) in &tie {
                    if !values.contains(&spelling[*value].as_str()) {
                        values.push(&spelling[*value]);
                    }
                }
                let values = match values.as_slice() {
                    [first, second] => format!("{first} and {second}"),
                    _ => format!("one {} and another", column.name),
                };
                findings.push(column_finding(
                    FindingKind::ContextWithFactor,
                    sheet,
                    header_row,
                    column,
                    "changes with a factor",
                    format!(
                        "the context column '{}' changes with the factor '{}': {}{more}; so a difference between {values} ({}) cannot be told apart from the effect of {}: read that effect with this in mind, and in the next trial run each setting of {} under every {}, in random order",
                        column.name,
                        factor.name,
                        sides.join(" and "),
                        column.name,
                        factor.name,
                        factor.name,
                        column.name
                    ),
                ));
                break;
            }
        }
    }
    findings
}

/// The factor's settings compared with a context column: its two extreme
/// numeric settings, or every label of a label factor. `Some` pairs (level,
/// context value) when each such setting has at least [`RUNS_PER_SIDE`] runs
/// with one context value each, and not all the same value.
fn tie_with(factor: &Factor, value_of_record: &[Option<usize>]) -> Option<Vec<(usize, usize)>> {
    let numbers: Option<Vec<f64>> = factor
        .levels
        .iter()
        .map(|level| level.trim().parse::<f64>().ok().filter(|number| number.is_finite()))
        .collect();
    let compared: Vec<usize> = match numbers {
        Some(numbers) if numbers.len() >= 2 => {
            let lowest = (0..numbers.len()).min_by(|a, b| numbers[*a].total_cmp(&numbers[*b]))?;
            let highest = (0..numbers.len()).max_by(|a, b| numbers[*a].total_cmp(&numbers[*b]))?;
            vec![lowest, highest]
        }
        _ if factor.levels.len() >= 2 => (0..factor.levels.len()).collect(),
        _ => return None,
    };
    let mut tie = Vec::with_capacity(compared.len());
    for &level in &compared {
        let mut only: Option<usize> = None;
        let mut runs = 0;
        for (record, &record_level) in factor.level_of_record.iter().enumerate() {
            if record_level as usize != level {
                continue;
            }
            let value = value_of_record.get(record).copied().flatten()?;
            match only {
                Some(earlier) if earlier != value => return None,
                _ => only = Some(value),
            }
            runs += 1;
        }
        if runs < RUNS_PER_SIDE {
            return None;
        }
        tie.push((level, only?));
    }
    let first = tie.first()?.1;
    if tie.iter().all(|(_, value)| *value == first) {
        return None;
    }
    Some(tie)
}
