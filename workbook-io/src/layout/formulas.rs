//! Rows made by summary formulas (`=AVERAGE(B2:B9)`, `=STDEV(...)`, `=SUM(...)`), found by
//! the formulas the reader noted, wherever they stand in the table and whatever their
//! label: they summarise the records and are not records themselves.

use crate::cell::{CellPos, CellRect, CellValue};
use crate::read::SheetGrid;

use super::cells::number_list;
use super::header::row_spans;
use super::{Finding, FindingKind};

/// A row whose numbers are all summary formulas: its row and the functions with their cells.
pub(super) struct SummaryFormulaRow {
    pub(super) row: u32,
    pub(super) first_col: u32,
    pub(super) last_col: u32,
    pub(super) functions: Vec<(CellPos, &'static str)>,
}

/// Whether the cell at `pos` holds a summary formula.
pub(super) fn summary_formula_at(grid: &SheetGrid, pos: CellPos) -> Option<&'static str> {
    grid.summary_formulas
        .binary_search_by_key(&(pos.row, pos.col), |(cell, _)| (cell.row, cell.col))
        .ok()
        .map(|index| grid.summary_formulas[index].1)
}

/// The rows of `cells` whose numbers are all summary formulas (one or more). Costs
/// nothing when the sheet has no summary formulas, else a look-up per number.
pub(super) fn summary_formula_rows(grid: &SheetGrid, cells: &[(CellPos, CellValue)]) -> Vec<SummaryFormulaRow> {
    if grid.summary_formulas.is_empty() {
        return Vec::new();
    }
    let mut found = Vec::new();
    for (start, end) in row_spans(cells) {
        let row_cells = &cells[start..end];
        let mut functions = Vec::new();
        let mut numbers = 0;
        for (pos, value) in row_cells {
            if matches!(value, CellValue::Number(_) | CellValue::Error(_)) {
                numbers += 1;
                if let Some(function) = summary_formula_at(grid, *pos) {
                    functions.push((*pos, function));
                }
            }
        }
        if numbers > 0 && functions.len() == numbers {
            found.push(SummaryFormulaRow {
                row: row_cells[0].0.row,
                first_col: row_cells[0].0.col,
                last_col: row_cells[row_cells.len() - 1].0.col,
                functions,
            });
        }
    }
    found
}

/// A finding for each row of summary formulas, and the one choice line.
pub(super) fn summary_formula_findings(sheet: &str, rows: &[SummaryFormulaRow]) -> (Vec<Finding>, Option<String>) {
    let mut findings = Vec::new();
    for row in rows {
        let listed: Vec<String> = row
            .functions
            .iter()
            .take(6)
            .map(|(pos, function)| format!("{function} in {}", pos.a1()))
            .collect();
        let more = if row.functions.len() > 6 { ", ..." } else { "" };
        findings.push(Finding {
            kind: FindingKind::SummaryRow,
            sheet: sheet.to_string(),
            cell: Some(
                CellRect {
                    first: CellPos::new(row.row, row.first_col),
                    last: CellPos::new(row.row, row.last_col),
                }
                .a1(),
            ),
            found: format!("formulas: {}{more}", listed.join(", ")),
            action: "the row was left out".into(),
            message: format!(
                "row {} is made of formulas that summarise other cells ({}{more}), not measurements; it was left out",
                row.row + 1,
                listed.join(", ")
            ),
        });
    }
    if rows.is_empty() {
        return (findings, None);
    }
    let mut functions: Vec<&str> = rows
        .iter()
        .flat_map(|row| row.functions.iter().map(|(_, function)| *function))
        .collect();
    functions.sort_unstable();
    functions.dedup();
    let row_numbers: Vec<u32> = rows.iter().map(|row| row.row).collect();
    let line = format!(
        "{} {} {} summary formulas ({}), not records; {} left out; set `range` to choose the table's rows yourself",
        super::noun(row_numbers.len(), "row"),
        number_list(&row_numbers),
        if row_numbers.len() == 1 { "holds" } else { "hold" },
        functions.join(", "),
        if row_numbers.len() == 1 { "it was" } else { "they were" }
    );
    (findings, Some(line))
}
