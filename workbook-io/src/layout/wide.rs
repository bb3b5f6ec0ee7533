//! The wide layout: one column per condition, the numbers below each.

use crate::cell::{CellPos, CellRect, CellValue};
use crate::read::SheetGrid;

use super::cells::{label_key, number_in_text, unusable_number};
use super::header::{ColumnIndex, HeaderColumn};
use super::{Factor, Finding, FindingKind, Findings, Layout, Response, TrialTable};

#[allow(clippy::too_many_arguments)]
pub(super) fn build_wide(
    grid: &SheetGrid,
    sheet: &str,
    header_row: u32,
    last_row: u32,
    data_cells: &[(CellPos, CellValue)],
    columns: &[HeaderColumn],
    condition_columns: &[usize],
    names: Vec<String>,
    (factor_name, response_name): (String, String),
    mut findings: Findings,
) -> TrialTable {
    let level_columns: Vec<u32> = condition_columns.iter().map(|&index| columns[index].col).collect();
    // Condition names equal but for case, spacing or accent encoding are one condition,
    // named by its first spelling.
    let mut levels: Vec<String> = Vec::new();
    let mut keys: Vec<String> = Vec::new();
    let mut spellings: Vec<Vec<(u32, String)>> = Vec::new();
    let mut level_of_column: Vec<u32> = Vec::with_capacity(names.len());
    for (name, &col) in names.iter().zip(&level_columns) {
        let key = label_key(name);
        let level = match keys.iter().position(|known| *known == key) {
            Some(level) => level,
            None => {
                keys.push(key);
                levels.push(name.clone());
                spellings.push(Vec::new());
                levels.len() - 1
            }
        };
        spellings[level].push((col, name.clone()));
        level_of_column.push(level as u32);
    }
    for (level, variants) in spellings.iter().enumerate() {
        if variants.len() < 2 {
            continue;
        }
        let listed: Vec<String> = variants.iter().map(|(_, name)| format!("'{name}'")).collect();
        let cells: Vec<String> = variants
            .iter()
            .map(|(col, _)| CellPos::new(header_row, *col).a1())
            .collect();
        findings.push(Finding {
            kind: FindingKind::SimilarLabels,
            sheet: sheet.to_string(),
            cell: Some(
                CellRect {
                    first: CellPos::new(header_row, variants[0].0),
                    last: CellPos::new(header_row, variants[variants.len() - 1].0),
                }
                .a1(),
            ),
            found: variants
                .iter()
                .map(|(_, name)| name.as_str())
                .collect::<Vec<_>>()
                .join(" | "),
            action: format!("merged into one condition '{}'", levels[level]),
            message: format!(
                "the condition names {} (header cells {}) differ only in case or spacing, or in how accents are encoded; their columns were read as one condition '{}'; correct the names in the sheet if they are different conditions",
                listed.join(", "),
                cells.join(", "),
                levels[level]
            ),
        });
    }
    let mut level_of_record = Vec::new();
    let mut values = Vec::new();
    let mut record_rows = Vec::new();
    let mut record_cols = Vec::new();
    // Blanks below a column's last value are its natural end; blanks between
    // values are gaps worth reporting.
    // Rows between the header and the first record (units, notes) are not gaps.
    let before_data = data_cells
        .first()
        .map_or(header_row, |(pos, _)| pos.row.saturating_sub(1).max(header_row));
    let mut previous_row: Vec<u32> = vec![before_data; level_columns.len()];
    let level_of_col = ColumnIndex::new(&level_columns);
    for (pos, value) in data_cells {
        let Some(column) = level_of_col.index(pos.col) else {
            continue;
        };
        let level = level_of_column[column] as usize;
        for gap_row in previous_row[column] + 1..pos.row {
            let gap = CellPos::new(gap_row, pos.col);
            findings.push(Finding {
                kind: FindingKind::BlankValue,
                sheet: sheet.to_string(),
                cell: Some(gap.a1()),
                found: "a blank".into(),
                action: "skipped".into(),
                message: format!("a blank between values of '{}'; it was skipped", names[column]),
            });
        }
        previous_row[column] = pos.row;
        match value {
            CellValue::Number(number) if number.is_finite() => {
                level_of_record.push(level as u32);
                values.push(*number);
                record_rows.push(pos.row);
                record_cols.push(pos.col);
            }
            other => match number_in_text(grid, sheet, *pos, *other, &names[column]) {
                Some((number, finding)) => {
                    findings.push(finding);
                    level_of_record.push(level as u32);
                    values.push(number);
                    record_rows.push(pos.row);
                    record_cols.push(pos.col);
                }
                None => {
                    if let Some(finding) = unusable_number(grid, sheet, *pos, *other, &names[column]) {
                        findings.push(finding);
                    }
                }
            },
        }
    }
    let first_col = level_columns.iter().copied().min().unwrap_or(0);
    let last_col = level_columns.iter().copied().max().unwrap_or(0);
    TrialTable {
        sheet: sheet.to_string(),
        area: CellRect {
            first: CellPos::new(header_row, first_col),
            last: CellPos::new(last_row, last_col),
        },
        layout: Layout::Wide,
        factors: vec![Factor {
            name: factor_name,
            column: None,
            levels,
            level_of_record,
            is_block: false,
        }],
        responses: vec![Response {
            name: response_name,
            column: None,
            values,
        }],
        record_rows,
        record_cols,
        level_columns,
        findings: findings.into_vec(),
        choices: Vec::new(),
    }
}

/// The title of a wide table: the lone text cell on the nearest filled row above
/// the header (up to three rows up, over the table's columns or the one before).
pub(super) fn title_above(
    grid: &SheetGrid,
    header_row: u32,
    first_col: u32,
    last_col: u32,
) -> Option<(CellPos, String)> {
    let lowest = header_row.saturating_sub(3);
    let start = grid.cells.partition_point(|(pos, _)| pos.row < lowest);
    let end = grid.cells.partition_point(|(pos, _)| pos.row < header_row);
    let near: Vec<&(CellPos, CellValue)> = grid.cells[start..end]
        .iter()
        .filter(|(pos, _)| pos.col + 1 >= first_col && pos.col <= last_col)
        .collect();
    let row = near.last()?.0.row;
    match near
        .iter()
        .filter(|(pos, _)| pos.row == row)
        .collect::<Vec<_>>()
        .as_slice()
    {
        [(pos, CellValue::Text(index))] => {
            let text = grid.text(*index).trim();
            (!text.is_empty()).then(|| (*pos, text.to_string()))
        }
        _ => None,
    }
}

/// What a wide table's title names: the measured value ("Wall thickness by die, mm":
/// the value "Wall thickness (mm)", the factor "Die"), or, over numbers naming the
/// conditions, the factor they are settings of ("Press force (kN)").
#[derive(Debug, Default, PartialEq)]
pub(super) struct TitleReading {
    pub measure: Option<String>,
    pub factor: Option<String>,
}

pub(super) fn read_title(title: &str, names: &[String], numbers_as_names: bool) -> TitleReading {
    let title = title.trim();
    let (body, unit) = split_unit(title);
    let lower = body.to_lowercase();
    if let Some(at) = lower.find(" by ") {
        let measure = body[..at].trim();
        let factor = body[at + 4..].trim();
        // "Yield by weight" is not a table by weight: the factor must be what the
        // condition names are (numbers, or names that start with it: "Die 1").
        let names_it = numbers_as_names
            || names
                .iter()
                .all(|name| name.to_lowercase().starts_with(&factor.to_lowercase()))
            || abbreviates(factor, names);
        if !measure.is_empty() && !factor.is_empty() && factor.chars().count() <= 40 && names_it {
            let mut chars = factor.chars();
            let factor = match chars.next() {
                Some(first) => first.to_uppercase().collect::<String>() + chars.as_str(),
                None => String::new(),
            };
            let measure = match unit {
                Some(unit) => format!("{measure} ({unit})"),
                None => measure.to_string(),
            };
            return TitleReading {
                measure: Some(measure),
                factor: Some(factor),
            };
        }
    }
    // Over numbers, a short title or one with a unit names their factor; a longer
    // description ("Line 4 trial, week 49") is left alone.
    if numbers_as_names && (unit.is_some() || body.split_whitespace().count() <= 3) {
        return TitleReading {
            measure: None,
            factor: Some(title.to_string()),
        };
    }
    TitleReading::default()
}

/// Whether every condition name is a short form of `factor` followed by a number:
/// "N1", "N2" or "Noz 3" under "... by nozzle" (the letters before the number start
/// the factor's name), as plants often shorten die, line or nozzle names.
fn abbreviates(factor: &str, names: &[String]) -> bool {
    let factor = factor.to_lowercase();
    !names.is_empty()
        && names.iter().all(|name| {
            let letters: String = name.chars().take_while(|c| c.is_alphabetic()).collect();
            let rest = name[letters.len()..].trim_start_matches([' ', '-', '_', '.', '#']);
            !letters.is_empty()
                && rest.starts_with(|c: char| c.is_ascii_digit())
                && factor.starts_with(&letters.to_lowercase())
        })
}

/// A unit at the end of a title: in brackets, or a short word after a comma.
fn split_unit(title: &str) -> (&str, Option<&str>) {
    for (open, close) in [('(', ')'), ('[', ']')] {
        if title.ends_with(close) {
            if let Some(at) = title.rfind(open) {
                let unit = title[at + 1..title.len() - 1].trim();
                if !unit.is_empty() && at > 0 {
                    return (title[..at].trim_end(), Some(unit));
                }
            }
        }
    }
    if let Some(at) = title.rfind(',') {
        let unit = title[at + 1..].trim();
        if !unit.is_empty() && unit.chars().count() <= 10 && !unit.contains(' ') {
            return (title[..at].trim_end(), Some(unit));
        }
    }
    (title, None)
}
