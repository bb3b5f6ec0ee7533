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

mod blocks;
mod cells;
mod choose;
mod formulas;
mod header;
mod long;
mod roles;
#[cfg(test)]
mod tests;
mod ties;
mod types;
mod wide;

pub use choose::{choose_table, trial_score};
pub use types::*;

use crate::cell::{CellPos, CellRect, CellValue};
use crate::read::SheetGrid;

use cells::{hidden_findings, number_list};
use header::{column_finding, count_columns, empty_column_findings, find_header_row, header_names, row_spans};
use long::{build_long, label_factor_columns, measured_columns};
/// A noun in the singular for one, in the plural (with "s") otherwise.
pub(crate) fn noun(count: usize, singular: &str) -> String {
    if count == 1 {
        singular.to_string()
    } else {
        format!("{singular}s")
    }
}

/// "1 record", "3 records".
pub(crate) fn counted(count: usize, singular: &str) -> String {
    format!("{count} {}", noun(count, singular))
}

use roles::{
    context_reason, design_columns, design_pattern, is_notes_column, is_summary_word, short_reason, HIDDEN_REASON,
};
use wide::build_wide;

/// Finds the trial table in a sheet's cells: the table that looks most like trial data
/// when the sheet holds several (side by side or stacked), the choice said in the
/// table's `choices` and as a finding naming the other tables.
///
/// # Errors
///
/// [`LayoutError::NoTable`] when the sheet holds nothing analysable,
/// [`LayoutError::UnknownColumn`] when a requested column is missing.
pub fn detect_table(grid: &SheetGrid, request: &TableRequest) -> Result<TrialTable, LayoutError> {
    let mut table = match (request.range, blocks::split_blocks(&grid.cells)) {
        (None, Some(blocks)) => choose::best_block(grid, request, &blocks)?,
        _ => detect_table_cells(grid, request, None)?,
    };
    let hidden = hidden_findings(grid, &table);
    // Hidden cells whose values were used are a choice too (hidden helper columns
    // left out are said in the columns' line).
    for finding in &hidden {
        table.choices.push(finding.message.clone());
    }
    table.findings.extend(hidden);
    Ok(table)
}

/// A column set aside from detection, with the reason, for the choice line.
struct SetAside {
    name: String,
    reason: String,
}

/// Reports a column kept as context (a finding at its header) and lists it among the
/// columns set aside in the choice line, with `reason` in a few words.
fn set_column_aside(
    (findings, set_aside): (&mut Findings, &mut Vec<SetAside>),
    (sheet, header_row, column): (&str, u32, &header::HeaderColumn),
    action: &str,
    message: String,
    reason: &str,
) {
    findings.push(column_finding(
        FindingKind::IdentifierColumn,
        sheet,
        header_row,
        column,
        action,
        message,
    ));
    set_aside.push(SetAside {
        name: column.name.clone(),
        reason: reason.into(),
    });
}

fn detect_table_cells(
    grid: &SheetGrid,
    request: &TableRequest,
    block: Option<&[(CellPos, CellValue)]>,
) -> Result<TrialTable, LayoutError> {
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
    let cells: &[(CellPos, CellValue)] = match (request.range.is_some(), block) {
        (true, _) => &cells,
        (false, Some(block)) => block,
        (false, None) => &grid.cells,
    };
    // Rows made by summary formulas are left out before the table is read.
    let formula_rows = formulas::summary_formula_rows(grid, cells);
    let without_formula_rows: Vec<(CellPos, CellValue)>;
    let cells: &[(CellPos, CellValue)] = if formula_rows.is_empty() {
        cells
    } else {
        without_formula_rows = cells
            .iter()
            .copied()
            .filter(|(pos, _)| formula_rows.binary_search_by_key(&pos.row, |row| row.row).is_err())
            .collect();
        &without_formula_rows
    };
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
    let header_index =
        find_header_row(grid, cells, &rows, request.range.is_some()).ok_or_else(|| LayoutError::NoTable {
            sheet: sheet.clone(),
            looked_for: "a header row of text (column names) with numbers below it".into(),
        })?;
    let header_row = cells[rows[header_index].0].0.row;
    let mut findings = Findings::default();
    let mut choices: Vec<String> = Vec::new();
    let (formula_findings, formula_line) = formulas::summary_formula_findings(&sheet, &formula_rows);
    for finding in formula_findings {
        findings.push(finding);
    }
    choices.extend(formula_line);
    let header_span = rows[header_index];
    let numbers_as_names = cells[header_span.0..header_span.1]
        .iter()
        .all(|(_, value)| matches!(value, CellValue::Number(_)));
    if numbers_as_names {
        let names: Vec<String> = cells[header_span.0..header_span.1]
            .iter()
            .map(|(_, value)| grid.display(*value))
            .collect();
        let title = header_index
            .checked_sub(1)
            .map(|above| &cells[rows[above].0..rows[above].1])
            .filter(|above| above.len() == 1)
            .and_then(|above| match above[0].1 {
                CellValue::Text(index) => Some(format!(" under the title '{}'", grid.text(index).trim())),
                _ => None,
            })
            .unwrap_or_default();
        let area = CellRect {
            first: cells[header_span.0].0,
            last: cells[header_span.1 - 1].0,
        };
        let line = format!(
            "the numbers in row {} ({}){title} were read as the names of the conditions, one column each; set `range` to start the table elsewhere",
            header_row + 1,
            names.join(", ")
        );
        findings.push(choice_finding(&sheet, area, "numbers as condition names", &line));
        choices.push(line);
    }
    let first_header_col = cells[rows[header_index].0].0.col;

    // Rows of text only between the header and the first number (units, notes) belong
    // to the header; summary rows at the foot of the data are left out.
    let mut first_data = header_index + 1;
    let row_has_number = |span: &(usize, usize)| {
        cells[span.0..span.1]
            .iter()
            .any(|(_, value)| matches!(value, CellValue::Number(_)))
    };
    let mut units_rows = Vec::new();
    while first_data < rows.len() && request.range.is_none() {
        let span = rows[first_data];
        let all_text = cells[span.0..span.1]
            .iter()
            .all(|(_, value)| matches!(value, CellValue::Text(_)));
        let label_blank = cells[span.0].0.col != first_header_col;
        // Over a wide table there is no label column: the same unit under every column.
        let repeated_unit = {
            let texts: Vec<&str> = cells[span.0..span.1]
                .iter()
                .filter_map(|(_, value)| match value {
                    CellValue::Text(index) => Some(grid.text(*index).trim()),
                    _ => None,
                })
                .collect();
            texts.len() >= 2
                && looks_like_unit(texts[0])
                && texts.iter().all(|text| text.eq_ignore_ascii_case(texts[0]))
        };
        if row_has_number(&span) || !all_text || !(label_blank || repeated_unit) {
            break;
        }
        units_rows.push(cells[span.0].0.row);
        first_data += 1;
    }
    // A single units row under the header gives each column its unit ("Fill weight"
    // over "g" is "Fill weight (g)"); the name as typed still finds the column.
    let header_cells = &cells[rows[header_index].0..rows[header_index].1];
    let units_of_columns: Vec<(u32, String, String)> = match units_rows.as_slice() {
        [_] => {
            let units = rows[header_index + 1];
            cells[units.0..units.1]
                .iter()
                .filter_map(|(pos, value)| {
                    let CellValue::Text(index) = value else { return None };
                    let unit = grid.text(*index).trim();
                    let (_, header) = header_cells.iter().find(|(header, _)| header.col == pos.col)?;
                    let name = cells::value_text(grid, *header).trim().to_string();
                    (looks_like_unit(unit) && !name.is_empty() && !name.ends_with([')', ']']))
                        .then(|| (pos.col, name, unit.to_string()))
                })
                .collect()
        }
        _ => Vec::new(),
    };
    if let (Some(&first), Some(&last)) = (units_rows.first(), units_rows.last()) {
        let area = CellRect {
            first: CellPos::new(first, first_header_col),
            last: CellPos::new(last, cells[rows[header_index].1 - 1].0.col),
        };
        let attached: Vec<String> = units_of_columns
            .iter()
            .map(|(_, name, unit)| format!("{name} in {unit}"))
            .collect();
        let line = format!(
            "{} {} under the header {} text only (units or notes); {} read as part of the header{}, not as records; set `range` to start the table elsewhere",
            noun(units_rows.len(), "row"),
            number_list(&units_rows),
            if units_rows.len() == 1 { "holds" } else { "hold" },
            if units_rows.len() == 1 { "it was" } else { "they were" },
            if attached.is_empty() { String::new() } else { format!(" (units: {})", attached.join(", ")) }
        );
        findings.push(choice_finding(&sheet, area, "text under the header", &line));
        choices.push(line);
    }
    let mut last_data = rows.len();
    let mut summary_rows: Vec<(u32, String)> = Vec::new();
    while last_data > first_data {
        let span = rows[last_data - 1];
        let label = cells[span.0..span.1].iter().find_map(|(_, value)| match value {
            CellValue::Text(index) => Some(grid.text(*index)),
            _ => None,
        });
        match label {
            // Summary rows carry different labels; a label met twice is a level (Min, Max).
            Some(label)
                if is_summary_word(label)
                    && !summary_rows
                        .iter()
                        .any(|(_, seen)| seen.eq_ignore_ascii_case(label.trim())) =>
            {
                summary_rows.push((cells[span.0].0.row, label.trim().to_string()));
                last_data -= 1;
            }
            Some(label) if is_summary_word(label) => {
                summary_rows.clear();
                last_data = rows.len();
                break;
            }
            _ => break,
        }
    }
    // A summary label that also names records above is a level, not a summary.
    if !summary_rows.is_empty() {
        let used_above = last_data <= first_data
            || cells[rows[first_data].0..rows[last_data - 1].1]
                .iter()
                .any(|(_, value)| match value {
                    CellValue::Text(index) => summary_rows
                        .iter()
                        .any(|(_, label)| grid.text(*index).trim().eq_ignore_ascii_case(label)),
                    _ => false,
                });
        if used_above {
            summary_rows.clear();
            last_data = rows.len();
        }
    }
    let data_cells = if first_data < last_data {
        &cells[rows[first_data].0..rows[last_data - 1].1]
    } else {
        &cells[0..0]
    };
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

    let mut typed_names: Vec<(u32, String)> = Vec::new();
    let headers: Vec<(u32, String)> = headers
        .into_iter()
        .map(
            |(col, name)| match units_of_columns.iter().find(|(unit_col, _, _)| *unit_col == col) {
                Some((_, _, unit)) => {
                    typed_names.push((col, name.clone()));
                    (col, format!("{name} ({unit})"))
                }
                None => (col, name),
            },
        )
        .collect();

    // Count what each column holds.
    let columns = count_columns(grid, &headers, data_cells);
    let first_col = columns.first().map_or(0, |column| column.col);
    let last_col = columns.last().map_or(0, |column| column.col);

    summary_rows.reverse();
    for (row, label) in &summary_rows {
        let area = CellRect {
            first: CellPos::new(*row, first_col),
            last: CellPos::new(*row, last_col.max(first_col)),
        };
        findings.push(Finding {
            kind: FindingKind::SummaryRow,
            sheet: sheet.clone(),
            cell: Some(area.a1()),
            found: label.clone(),
            action: "the row was left out".into(),
            message: format!(
                "row {} is a summary row ('{label}') under the data, not a measurement; it was left out",
                row + 1
            ),
        });
    }
    if !summary_rows.is_empty() {
        let rows_listed: Vec<u32> = summary_rows.iter().map(|(row, _)| *row).collect();
        let labels: Vec<&str> = summary_rows.iter().map(|(_, label)| label.as_str()).collect();
        choices.push(format!(
            "summary {} {} ({}) under the data {} left out; set `range` to include {}",
            noun(rows_listed.len(), "row"),
            number_list(&rows_listed),
            labels.join(", "),
            if rows_listed.len() == 1 { "was" } else { "were" },
            if rows_listed.len() == 1 { "it" } else { "them" }
        ));
    }

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
            .or_else(|| {
                let typed = typed_names
                    .iter()
                    .find(|(_, typed)| typed.eq_ignore_ascii_case(name.trim()))?;
                columns.iter().position(|column| column.col == typed.0)
            })
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
    let named =
        |index: usize| factor_columns.iter().any(|(named, _)| *named == index) || response_columns.contains(&index);

    // Empty columns are reported and left out of detection.
    empty_column_findings(&sheet, header_row, &columns, &mut findings);

    // Context columns (dates, operators, run numbers, notes...) are set aside unless named.
    let n_data_rows = data_cells
        .iter()
        .map(|(pos, _)| pos.row)
        .collect::<std::collections::BTreeSet<_>>()
        .len();
    let context: Vec<Option<&'static str>> = (0..columns.len())
        .map(|index| {
            if named(index) || columns[index].counts.non_empty() == 0 {
                None
            } else if grid.hidden_cols.binary_search(&columns[index].col).is_ok() {
                Some(HIDDEN_REASON)
            } else {
                context_reason(&columns[index], n_data_rows)
            }
        })
        .collect();
    let mut set_aside: Vec<SetAside> = Vec::new();
    for (index, reason) in context.iter().enumerate() {
        if let Some(reason) = reason {
            let column = &columns[index];
            // A text column only competes for a role when detection picks the factors; a
            // numeric one unless the settings name both the factors and the responses (a
            // filled plan's run numbers are then plainly context, nothing to report).
            let both_named = !request.factors.is_empty() && !request.responses.is_empty();
            let competes =
                (column.counts.is_numeric() && !both_named) || (request.factors.is_empty() && request.layout.is_none());
            if !competes {
                continue;
            }
            findings.push(column_finding(
                FindingKind::IdentifierColumn,
                &sheet,
                header_row,
                column,
                "kept as context, not analysed",
                format!(
                    "the column '{}' {reason}, so it was kept as context, neither a condition nor a measurement; name it as a factor, block or response to use it",
                    column.name
                ),
            ));
            set_aside.push(SetAside {
                name: column.name.clone(),
                reason: short_reason(reason).to_string(),
            });
        }
    }
    let is_context = |index: usize| context[index].is_some();

    let factors_named = !request.factors.is_empty();
    let mut design_found: Vec<usize> = Vec::new();
    let mut context_fallback = false;
    // Settings columns kept as context because they form no design beside label factors.
    let mut not_design: Vec<usize> = Vec::new();
    let layout = match request.layout {
        Some(layout) => layout,
        None if factors_named => Layout::Long,
        None => {
            let not_context: Vec<usize> = (0..columns.len()).filter(|index| !is_context(*index)).collect();
            let label_columns: Vec<usize> = not_context.iter().copied().filter(|index| !named(*index)).collect();
            let mut factors_found =
                label_factor_columns(&sheet, header_row, &columns, &label_columns, n_data_rows, &mut findings);
            let numeric_free: Vec<usize> = not_context
                .iter()
                .copied()
                .filter(|index| columns[*index].counts.is_numeric() && !named(*index))
                .collect();
            design_found = design_columns(&columns, &numeric_free);
            if let Err(missing) = design_pattern(&columns, &design_found, data_cells) {
                let names: Vec<&str> = design_found.iter().map(|index| columns[*index].name.as_str()).collect();
                // Beside label factors they are kept as context; alone, they stay the
                // factors (a trial varying one setting at a time), said either way.
                let line = if factors_found.is_empty() {
                    format!(
                        "the columns {} hold a few repeated settings each but do not form a factorial or response-surface pattern ({missing}); they were read as factors all the same, and their effects may not be separable; set `factor` and `response` to choose other columns",
                        names.join(", ")
                    )
                } else {
                    format!(
                        "the columns {} hold a few repeated settings each but do not form a factorial or response-surface pattern ({missing}), so they were kept as context, neither factors nor measurements; set `factor` to read them as factors",
                        names.join(", ")
                    )
                };
                let area = CellRect {
                    first: CellPos::new(header_row, first_col),
                    last: CellPos::new(header_row, last_col),
                };
                findings.push(choice_finding(&sheet, area, "settings without a design", &line));
                choices.push(line);
                if !factors_found.is_empty() {
                    for &index in &design_found {
                        set_aside.push(SetAside {
                            name: columns[index].name.clone(),
                            reason: "settings without a design".into(),
                        });
                    }
                    not_design = std::mem::take(&mut design_found);
                }
            }
            factors_found.extend(design_found.iter().copied());
            // A label column with the same label on every row ("N" under "Leak (Y/N)")
            // cannot separate conditions: beside other factors it is context.
            let constant: Vec<usize> = factors_found
                .iter()
                .copied()
                .filter(|index| !columns[*index].counts.is_numeric() && columns[*index].distinct_labels <= 1)
                .collect();
            if !constant.is_empty() && constant.len() < factors_found.len() && n_data_rows >= 2 {
                for &index in &constant {
                    let column = &columns[index];
                    set_column_aside(
                        (&mut findings, &mut set_aside),
                        (&sheet, header_row, column),
                        "not used as a factor",
                        format!(
                            "the column '{}' has the same label on every row, so it cannot separate conditions and was kept as context; name it as a factor to use it",
                            column.name
                        ),
                        "the same on every row",
                    );
                }
                factors_found.retain(|index| !constant.contains(index));
            }
            if factors_found.is_empty() {
                // Only context labels: the best of them stand as the factors.
                let context_labels: Vec<usize> = (0..columns.len())
                    .filter(|index| is_context(*index) && columns[*index].counts.texts > 0)
                    .filter(|index| !is_notes_column(&columns[*index]))
                    .filter(|index| !named(*index))
                    .collect();
                let mut quiet = Findings::default();
                factors_found =
                    label_factor_columns(&sheet, header_row, &columns, &context_labels, n_data_rows, &mut quiet);
                context_fallback = !factors_found.is_empty();
                set_aside.retain(|aside| !factors_found.iter().any(|index| columns[*index].name == aside.name));
            }
            factors_found.sort_unstable_by_key(|index| columns[*index].col);
            if factors_found.is_empty() && factor_columns.is_empty() {
                Layout::Wide
            } else {
                // Named blocks stay, after the factors found.
                let blocks = std::mem::take(&mut factor_columns);
                factor_columns = factors_found.into_iter().map(|index| (index, false)).collect();
                factor_columns.extend(blocks);
                Layout::Long
            }
        }
    };
    let header_area = CellRect {
        first: CellPos::new(header_row, first_col),
        last: CellPos::new(header_row, last_col),
    };

    let mut table = match layout {
        Layout::Long => {
            if response_columns.is_empty() {
                let excluded: Vec<usize> = (0..columns.len())
                    .filter(|index| is_context(*index) || not_design.contains(index))
                    .collect();
                response_columns =
                    measured_columns(&sheet, header_row, &columns, &factor_columns, &excluded, &mut findings);
                if factors_named {
                    // Settings columns beside the named factors are not measurements.
                    let settings = design_columns(&columns, &response_columns);
                    if !settings.is_empty() && settings.len() < response_columns.len() {
                        for &index in &settings {
                            let column = &columns[index];
                            set_column_aside(
                                (&mut findings, &mut set_aside),
                                (&sheet, header_row, column),
                                "not analysed as a response",
                                format!(
                                    "the column '{}' holds a few repeated settings, like a factor of the design, so it was not analysed as a response; name it as a factor or response to use it",
                                    column.name
                                ),
                                "settings of the design",
                            );
                        }
                        response_columns.retain(|index| !settings.contains(index));
                    }
                }
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
            if !factors_named
                && request.layout.is_none()
                && (!set_aside.is_empty() || !design_found.is_empty() || context_fallback)
            {
                let factor_names: Vec<String> = factor_columns
                    .iter()
                    .map(|(index, _)| {
                        let name = &columns[*index].name;
                        if design_found.contains(index) {
                            format!("{name} (numeric settings)")
                        } else if context_fallback {
                            format!("{name} (the only label column)")
                        } else {
                            name.clone()
                        }
                    })
                    .collect();
                let response_names: Vec<&str> = response_columns
                    .iter()
                    .map(|index| columns[*index].name.as_str())
                    .collect();
                let mut line = format!(
                    "factors: {}; responses: {}",
                    factor_names.join(", "),
                    response_names.join(", ")
                );
                if !set_aside.is_empty() {
                    let listed: Vec<String> = set_aside
                        .iter()
                        .map(|aside| format!("{} ({})", aside.name, aside.reason))
                        .collect();
                    line.push_str(&format!("; kept as context: {}", listed.join(", ")));
                }
                line.push_str("; set `factor` and `response` to choose other columns");
                findings.push(choice_finding(&sheet, header_area, "the columns", &line));
                choices.push(line);
            }
            let mut table = build_long(
                grid,
                &sheet,
                header_row,
                last_row,
                data_cells,
                &columns,
                &factor_columns,
                &response_columns,
                findings,
            );
            if !factors_named && request.blocks.is_empty() {
                if let Some(line) = roles::batches_as_blocks(&mut table) {
                    let area = table
                        .factors
                        .iter()
                        .find(|factor| factor.is_block)
                        .and_then(|factor| factor.column)
                        .map_or(header_area, |col| CellRect {
                            first: CellPos::new(header_row, col),
                            last: CellPos::new(header_row, col),
                        });
                    table.findings.push(choice_finding(&sheet, area, "the blocks", &line));
                    choices.push(line);
                }
            }
            // Context columns (not hidden helpers, not factors) that change with a factor.
            let context_kept: Vec<usize> = (0..columns.len())
                .filter(|index| context[*index].is_some_and(|reason| reason != HIDDEN_REASON))
                .filter(|index| !factor_columns.iter().any(|(factor, _)| factor == index))
                .filter(|index| !response_columns.contains(index))
                .collect();
            let ties = ties::context_ties(grid, &sheet, header_row, &columns, &context_kept, data_cells, &table);
            table.findings.extend(ties);
            table
        }
        Layout::Wide => {
            let condition_columns: Vec<usize> = if response_columns.is_empty() {
                let numeric: Vec<usize> = (0..columns.len())
                    .filter(|index| columns[*index].counts.is_numeric())
                    .collect();
                let mut kept = Vec::new();
                for index in numeric {
                    if is_context(index) {
                        continue;
                    }
                    if is_summary_word(&columns[index].name) {
                        findings.push(column_finding(
                            FindingKind::SummaryRow,
                            &sheet,
                            header_row,
                            &columns[index],
                            "the column was left out",
                            format!(
                                "the column '{}' summarises the others, not a condition; it was left out",
                                columns[index].name
                            ),
                        ));
                        set_aside.push(SetAside {
                            name: columns[index].name.clone(),
                            reason: "a summary column".into(),
                        });
                        continue;
                    }
                    kept.push(index);
                }
                // Comments and other text columns beside a wide table are reported.
                for (index, column) in columns.iter().enumerate() {
                    let counts = &column.counts;
                    if !counts.is_numeric() && counts.non_empty() > 0 && !is_context(index) {
                        set_aside.push(SetAside {
                            name: column.name.clone(),
                            reason: "text".into(),
                        });
                    }
                }
                kept
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
            if !set_aside.is_empty() && request.layout.is_none() {
                let names: Vec<&str> = condition_columns
                    .iter()
                    .map(|index| columns[*index].name.as_str())
                    .collect();
                let listed: Vec<String> = set_aside
                    .iter()
                    .map(|aside| format!("{} ({})", aside.name, aside.reason))
                    .collect();
                let line = format!(
                    "one column per condition: {}; left out: {}; set `response` to name the condition columns",
                    names.join(", "),
                    listed.join(", ")
                );
                findings.push(choice_finding(&sheet, header_area, "the columns", &line));
                choices.push(line);
            }
            // A condition name told apart from an earlier one by case alone was renamed as
            // a duplicate header; it is one condition with the earlier one, under its own
            // spelling (the merge is said by the wide reading).
            let mut names: Vec<String> = Vec::with_capacity(condition_columns.len());
            let mut restored: Vec<String> = Vec::new();
            for &index in &condition_columns {
                let column = &columns[index];
                let cell = CellPos::new(header_row, column.col);
                let original = grid
                    .get(cell)
                    .map(|value| cells::value_text(grid, value).trim().to_string())
                    .filter(|original| {
                        *original != column.name
                            && names.iter().any(|earlier| {
                                earlier != original && cells::label_key(earlier) == cells::label_key(original)
                            })
                    });
                match original {
                    Some(original) => {
                        restored.push(cell.a1());
                        names.push(original);
                    }
                    // A unit from a units row belongs to the values, not to the
                    // condition's name.
                    None => names.push(
                        typed_names
                            .iter()
                            .find(|(col, _)| *col == column.col)
                            .map_or_else(|| column.name.clone(), |(_, typed)| typed.clone()),
                    ),
                }
            }
            if !restored.is_empty() {
                findings.retain(|finding| {
                    finding.kind != FindingKind::DuplicateHeader
                        || !finding.cell.as_ref().is_some_and(|cell| restored.contains(cell))
                });
            }
            // A title over the table may name the measured value and the factor.
            let first_col = columns.iter().map(|column| column.col).min().unwrap_or(0);
            let last_col = columns.iter().map(|column| column.col).max().unwrap_or(0);
            let reading = wide::title_above(grid, header_row, first_col, last_col)
                .map(|(cell, title)| (cell, wide::read_title(&title, &names, numbers_as_names), title));
            let mut factor_name = "condition".to_string();
            let mut response_name = request.wide_response_name.clone();
            if let Some((cell, reading, title)) = reading {
                let mut named = Vec::new();
                if response_name.is_none() {
                    if let Some(measure) = reading.measure {
                        named.push(format!("the measured value '{measure}'"));
                        response_name = Some(measure);
                    }
                }
                if let Some(factor) = reading.factor {
                    named.push(format!("the factor '{factor}'"));
                    factor_name = factor;
                }
                if !named.is_empty() {
                    let line = format!(
                        "the title '{title}' at {} named {}; set `value name` to name the values otherwise",
                        cell.a1(),
                        named.join(" and ")
                    );
                    findings.push(choice_finding(
                        &sheet,
                        CellRect {
                            first: cell,
                            last: cell,
                        },
                        "the title",
                        &line,
                    ));
                    choices.push(line);
                }
            }
            let mut response_name = response_name.unwrap_or_else(|| "value".to_string());
            // One unit under every condition column is the values' unit.
            let condition_units: Vec<&str> = condition_columns
                .iter()
                .filter_map(|&index| {
                    units_of_columns
                        .iter()
                        .find(|(col, _, _)| *col == columns[index].col)
                        .map(|(_, _, unit)| unit.as_str())
                })
                .collect();
            if condition_units.len() == condition_columns.len()
                && condition_units.windows(2).all(|pair| pair[0] == pair[1])
                && !response_name.trim_end().ends_with([')', ']'])
            {
                if let Some(unit) = condition_units.first() {
                    response_name = format!("{response_name} ({unit})");
                }
            }
            build_wide(
                grid,
                &sheet,
                header_row,
                last_row,
                data_cells,
                &columns,
                &condition_columns,
                names,
                (factor_name, response_name),
                findings,
            )
        }
    };
    // Labels merged across spellings are a choice too.
    let merged_labels: Vec<String> = table
        .findings
        .iter()
        .filter(|finding| finding.kind == FindingKind::SimilarLabels)
        .map(|finding| finding.found.clone())
        .collect();
    if !merged_labels.is_empty() {
        choices.push(format!(
            "labels that differ only in case, spacing or accents were read as one condition: {}; correct the labels in the sheet to keep them apart",
            merged_labels.join("; ")
        ));
    }
    table.choices = choices;
    Ok(table)
}

/// A finding that says what detection chose, placed on the area it concerns.
/// Whether the text in a units row under a header is a unit: short, at most two
/// words ("g", "mm", "N/mm2", "deg C", "%").
fn looks_like_unit(text: &str) -> bool {
    !text.is_empty() && text.chars().count() <= 12 && text.split_whitespace().count() <= 2
}

fn choice_finding(sheet: &str, area: CellRect, found: &str, line: &str) -> Finding {
    Finding {
        kind: FindingKind::Choice,
        sheet: sheet.to_string(),
        cell: Some(area.a1()),
        found: found.to_string(),
        action: "chosen by detection".into(),
        message: line.to_string(),
    }
}
