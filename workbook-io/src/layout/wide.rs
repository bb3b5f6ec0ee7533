//! The wide layout: one column per condition, the numbers below each.

use crate::cell::{CellPos, CellRect, CellValue};
use crate::read::SheetGrid;

use super::cells::{label_key, unusable_number};
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
    response_name: String,
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
    let mut previous_row: Vec<u32> = vec![header_row; level_columns.len()];
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
            other => {
                if let Some(finding) = unusable_number(grid, sheet, *pos, *other, &names[column]) {
                    findings.push(finding);
                }
            }
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
            name: "condition".into(),
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
