//! The wide layout: one column per condition, the numbers below each.

use crate::cell::{CellPos, CellRect, CellValue};
use crate::read::SheetGrid;

use super::cells::unusable_number;
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
    response_name: String,
    mut findings: Findings,
) -> TrialTable {
    let level_columns: Vec<u32> = condition_columns.iter().map(|&index| columns[index].col).collect();
    let levels: Vec<String> = condition_columns
        .iter()
        .map(|&index| columns[index].name.clone())
        .collect();
    let mut level_of_record = Vec::new();
    let mut values = Vec::new();
    let mut record_rows = Vec::new();
    // Blanks below a column's last value are its natural end; blanks between
    // values are gaps worth reporting.
    let mut previous_row: Vec<u32> = vec![header_row; level_columns.len()];
    let level_of_col = ColumnIndex::new(&level_columns);
    for (pos, value) in data_cells {
        let Some(level) = level_of_col.index(pos.col) else {
            continue;
        };
        for gap_row in previous_row[level] + 1..pos.row {
            let gap = CellPos::new(gap_row, pos.col);
            findings.push(Finding {
                kind: FindingKind::BlankValue,
                sheet: sheet.to_string(),
                cell: Some(gap.a1()),
                found: "a blank".into(),
                action: "skipped".into(),
                message: format!("a blank between values of '{}'; it was skipped", levels[level]),
            });
        }
        previous_row[level] = pos.row;
        match value {
            CellValue::Number(number) if number.is_finite() => {
                level_of_record.push(level as u32);
                values.push(*number);
                record_rows.push(pos.row);
            }
            other => {
                if let Some(finding) = unusable_number(grid, sheet, *pos, *other, &levels[level]) {
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
        level_columns,
        findings: findings.into_vec(),
        choices: Vec::new(),
    }
}
