//! Finding the trial table in a sheet's cells.
//!
//! Two shapes are recognised. In the *long* layout a header row names one or
//! more label columns (the factors) and one or more numeric columns (the
//! responses), one record per row. In the *wide* layout the header row names
//! the conditions and the numbers stand below each, columns of unequal length
//! allowed. Detection can be overridden column by column with a
//! [`TableRequest`].
//!
//! Every cell that cannot be used becomes a [`Finding`] naming its sheet and
//! cell, what was found and what was done; a finding never stops the reading
//! while an analysable table remains.

mod cells;
mod header;
mod long;
#[cfg(test)]
mod tests;
mod types;
mod wide;

pub use types::*;

use crate::cell::{CellPos, CellValue};
use crate::read::SheetGrid;

use cells::hidden_findings;
use header::{count_columns, empty_column_findings, find_header_row, header_names, row_spans};
use long::{build_long, label_factor_columns, measured_columns};
use wide::build_wide;

/// Finds the trial table in a sheet's cells.
///
/// # Errors
///
/// [`LayoutError::NoTable`] when the sheet holds nothing analysable,
/// [`LayoutError::UnknownColumn`] when a requested column is missing.
pub fn detect_table(grid: &SheetGrid, request: &TableRequest) -> Result<TrialTable, LayoutError> {
    let mut table = detect_table_cells(grid, request)?;
    table.findings.extend(hidden_findings(grid, &table));
    Ok(table)
}

fn detect_table_cells(grid: &SheetGrid, request: &TableRequest) -> Result<TrialTable, LayoutError> {
    let sheet = grid.name.clone();
    let cells: Vec<(CellPos, CellValue)> = match request.range {
        Some(rect) => grid
            .cells
            .iter()
            .copied()
            .filter(|(pos, _)| rect.contains(*pos))
            .collect(),
        None => Vec::new(),
    };
    let cells: &[(CellPos, CellValue)] = if request.range.is_some() { &cells } else { &grid.cells };
    if cells.is_empty() {
        return Err(LayoutError::NoTable {
            sheet,
            looked_for: match request.range {
                Some(rect) => format!("a header row and numbers in {}, which is empty", rect.a1()),
                None => "a header row and numbers, but the sheet is empty".into(),
            },
        });
    }
    let rows = row_spans(cells);
    let header_index = find_header_row(cells, &rows, request.range.is_some()).ok_or_else(|| LayoutError::NoTable {
        sheet: sheet.clone(),
        looked_for: "a header row of text (column names) with numbers below it".into(),
    })?;
    let header_row = cells[rows[header_index].0].0.row;
    let mut findings = Findings::default();

    let data_cells = &cells[rows.get(header_index + 1).map_or(cells.len(), |span| span.0)..];
    let last_row = data_cells.last().map_or(header_row, |(pos, _)| pos.row);

    // Header names, with merged headers spread, blank headers named and duplicates renamed.
    let headers = header_names(
        grid,
        &sheet,
        cells,
        rows[header_index],
        header_row,
        data_cells,
        &mut findings,
    );

    // Count what each column holds.
    let columns = count_columns(grid, &headers, data_cells);

    let available = || {
        columns
            .iter()
            .map(|column| column.name.clone())
            .collect::<Vec<_>>()
            .join(", ")
    };
    let find_column = |name: &str| -> Result<usize, LayoutError> {
        columns
            .iter()
            .position(|column| column.name.eq_ignore_ascii_case(name.trim()))
            .ok_or_else(|| LayoutError::UnknownColumn {
                sheet: sheet.clone(),
                name: name.to_string(),
                header_row: header_row + 1,
                available: available(),
            })
    };

    let mut factor_columns: Vec<(usize, bool)> = Vec::new();
    for name in &request.factors {
        factor_columns.push((find_column(name)?, false));
    }
    for name in &request.blocks {
        factor_columns.push((find_column(name)?, true));
    }
    let mut response_columns: Vec<usize> = Vec::new();
    for name in &request.responses {
        response_columns.push(find_column(name)?);
    }

    // Empty columns are reported and left out of detection.
    empty_column_findings(&sheet, header_row, &columns, &mut findings);

    let n_data_rows = data_cells
        .iter()
        .map(|(pos, _)| pos.row)
        .collect::<std::collections::BTreeSet<_>>()
        .len();
    let layout = match request.layout {
        Some(layout) => layout,
        None if !factor_columns.is_empty() => Layout::Long,
        None => {
            let factors_found = label_factor_columns(
                &sheet,
                header_row,
                &columns,
                &response_columns,
                n_data_rows,
                &mut findings,
            );
            if factors_found.is_empty() {
                Layout::Wide
            } else {
                factor_columns = factors_found.into_iter().map(|index| (index, false)).collect();
                Layout::Long
            }
        }
    };

    match layout {
        Layout::Long => {
            if response_columns.is_empty() {
                response_columns = measured_columns(&sheet, header_row, &columns, &factor_columns, &mut findings);
            }
            if factor_columns.is_empty() {
                return Err(LayoutError::NoTable {
                    sheet,
                    looked_for: format!(
                        "a label column naming the condition of each row (header row {}: {})",
                        header_row + 1,
                        available()
                    ),
                });
            }
            if response_columns.is_empty() {
                return Err(LayoutError::NoTable {
                    sheet,
                    looked_for: format!(
                        "a column of numbers beside the label columns (header row {}: {})",
                        header_row + 1,
                        available()
                    ),
                });
            }
            Ok(build_long(
                grid,
                &sheet,
                header_row,
                last_row,
                data_cells,
                &columns,
                &factor_columns,
                &response_columns,
                findings,
            ))
        }
        Layout::Wide => {
            let condition_columns: Vec<usize> = if response_columns.is_empty() {
                (0..columns.len())
                    .filter(|index| columns[*index].counts.is_numeric())
                    .collect()
            } else {
                response_columns.clone()
            };
            if condition_columns.is_empty() {
                return Err(LayoutError::NoTable {
                    sheet,
                    looked_for: format!(
                        "columns of numbers under condition names (header row {}: {})",
                        header_row + 1,
                        available()
                    ),
                });
            }
            let response_name = request
                .wide_response_name
                .clone()
                .unwrap_or_else(|| "value".to_string());
            Ok(build_wide(
                grid,
                &sheet,
                header_row,
                last_row,
                data_cells,
                &columns,
                &condition_columns,
                response_name,
                findings,
            ))
        }
    }
}
