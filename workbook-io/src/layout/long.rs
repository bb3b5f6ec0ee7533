//! The long layout: label columns (factors) and numeric columns (responses), one record per row.

use std::collections::HashMap;

use crate::cell::{CellPos, CellRect, CellValue};
use crate::read::SheetGrid;

use super::cells::{label_key, label_text, merged_label_findings, number_in_text, unusable_number, value_text};
use super::header::{column_finding, row_spans, ColumnIndex, HeaderColumn};
use super::{Factor, Finding, FindingKind, Findings, Layout, Response, TrialTable};

#[allow(clippy::too_many_arguments)]
pub(super) fn build_long(
    grid: &SheetGrid,
    sheet: &str,
    header_row: u32,
    last_row: u32,
    data_cells: &[(CellPos, CellValue)],
    columns: &[HeaderColumn],
    factor_columns: &[(usize, bool)],
    response_columns: &[usize],
    mut findings: Findings,
) -> TrialTable {
    let mut factors: Vec<Factor> = factor_columns
        .iter()
        .map(|&(index, is_block)| Factor {
            name: columns[index].name.clone(),
            column: Some(columns[index].col),
            levels: Vec::new(),
            level_of_record: Vec::new(),
            is_block,
        })
        .collect();
    // Levels by their key (case, spacing and accents folded), with the spellings met.
    let mut level_maps: Vec<HashMap<String, u32>> = vec![HashMap::new(); factors.len()];
    let mut spellings: Vec<Vec<Vec<String>>> = vec![Vec::new(); factors.len()];
    // How many records carry each spelling (beside `spellings`): a merged condition is
    // named by its most used spelling.
    let mut spelling_uses: Vec<Vec<Vec<usize>>> = vec![Vec::new(); factors.len()];
    // Each factor's level by text index, found once per distinct text
    // (`NO_LEVEL`: not looked up yet, `BLANK`: the text is blank).
    const NO_LEVEL: u32 = u32::MAX;
    const BLANK: u32 = u32::MAX - 1;
    let mut level_of_text: Vec<Vec<u32>> = vec![vec![NO_LEVEL; grid.strings.len()]; factors.len()];
    let mut responses: Vec<Response> = response_columns
        .iter()
        .map(|&index| Response {
            name: columns[index].name.clone(),
            column: Some(columns[index].col),
            values: Vec::new(),
        })
        .collect();
    let factor_cols: Vec<u32> = factors.iter().filter_map(|factor| factor.column).collect();
    let response_cols: Vec<u32> = responses.iter().filter_map(|response| response.column).collect();
    let mut record_rows = Vec::new();
    let factor_of_col = ColumnIndex::new(&factor_cols);
    let response_of_col = ColumnIndex::new(&response_cols);

    let rows = row_spans(data_cells);
    let mut row_labels: Vec<Option<CellValue>> = vec![None; factor_cols.len()];
    let mut row_values: Vec<Option<CellValue>> = vec![None; response_cols.len()];
    for span in rows {
        let row = data_cells[span.0].0.row;
        row_labels.iter_mut().for_each(|slot| *slot = None);
        row_values.iter_mut().for_each(|slot| *slot = None);
        for (pos, value) in &data_cells[span.0..span.1] {
            if let Some(index) = factor_of_col.index(pos.col) {
                row_labels[index] = Some(*value);
            }
            if let Some(index) = response_of_col.index(pos.col) {
                row_values[index] = Some(*value);
            }
        }
        if row_labels.iter().all(Option::is_none) && row_values.iter().all(Option::is_none) {
            continue;
        }
        // Every factor needs a label.
        // A label is a known level, or a text whose level is settled once the
        // whole row is known to be kept.
        let mut labels: Vec<(Option<u32>, Option<String>)> = Vec::with_capacity(factor_cols.len());
        let mut blank_label = None;
        for (index, slot) in row_labels.iter().enumerate() {
            let cached = match slot {
                Some(CellValue::Text(text_index)) => level_of_text[index].get(*text_index as usize).copied(),
                _ => None,
            };
            let label = match cached {
                Some(BLANK) => None,
                Some(level) if level != NO_LEVEL => Some((Some(level), None)),
                _ => match slot.and_then(|value| label_text(grid, value)) {
                    Some(text) => Some((None, Some(text))),
                    None => {
                        if let Some(CellValue::Text(text_index)) = slot {
                            if let Some(entry) = level_of_text[index].get_mut(*text_index as usize) {
                                *entry = BLANK;
                            }
                        }
                        None
                    }
                },
            };
            match label {
                Some(label) => labels.push(label),
                None => {
                    blank_label = Some((index, *slot));
                    break;
                }
            }
        }
        if let Some((index, slot)) = blank_label {
            if row_values.iter().any(Option::is_some) {
                let pos = CellPos::new(row, factor_cols[index]);
                let found = slot.map_or_else(|| "a blank".to_string(), |value| value_text(grid, value));
                findings.push(Finding {
                    kind: FindingKind::BlankLabel,
                    sheet: sheet.to_string(),
                    cell: Some(pos.a1()),
                    found: found.clone(),
                    action: "the row was left out".into(),
                    message: format!(
                        "the '{}' label is {} on a row with data; the row was left out",
                        factors[index].name,
                        if slot.is_none() {
                            "blank".to_string()
                        } else {
                            format!("'{found}'")
                        }
                    ),
                });
            }
            continue;
        }
        for (index, (known, text)) in labels.into_iter().enumerate() {
            let level = match (known, text) {
                (Some(level), _) => {
                    if let Some(CellValue::Text(text_index)) = row_labels[index] {
                        let spelling = grid.text(text_index);
                        if let Some(at) = spellings[index][level as usize]
                            .iter()
                            .position(|known| known == spelling)
                        {
                            spelling_uses[index][level as usize][at] += 1;
                        }
                    }
                    level
                }
                (None, text) => {
                    let text = text.unwrap_or_default();
                    let next = level_maps[index].len() as u32;
                    let level = *level_maps[index].entry(label_key(&text)).or_insert_with(|| {
                        factors[index].levels.push(text.clone());
                        spellings[index].push(Vec::new());
                        spelling_uses[index].push(Vec::new());
                        next
                    });
                    let spelling = match row_labels[index] {
                        Some(CellValue::Text(text_index)) => grid.text(text_index).to_string(),
                        _ => text,
                    };
                    let known = &mut spellings[index][level as usize];
                    let uses = &mut spelling_uses[index][level as usize];
                    match known.iter().position(|earlier| *earlier == spelling) {
                        Some(at) => uses[at] += 1,
                        None => {
                            known.push(spelling);
                            uses.push(1);
                        }
                    }
                    if let Some(CellValue::Text(text_index)) = row_labels[index] {
                        if let Some(entry) = level_of_text[index].get_mut(text_index as usize) {
                            *entry = level;
                        }
                    }
                    level
                }
            };
            factors[index].level_of_record.push(level);
        }
        for (index, slot) in row_values.iter().enumerate() {
            let pos = CellPos::new(row, response_cols[index]);
            let value = match slot {
                Some(CellValue::Number(number)) if number.is_finite() => *number,
                Some(other) => match number_in_text(grid, sheet, pos, *other, &responses[index].name) {
                    Some((number, finding)) => {
                        findings.push(finding);
                        number
                    }
                    None => {
                        if let Some(finding) = unusable_number(grid, sheet, pos, *other, &responses[index].name) {
                            findings.push(finding);
                        }
                        f64::NAN
                    }
                },
                None => {
                    findings.push(Finding {
                        kind: FindingKind::BlankValue,
                        sheet: sheet.to_string(),
                        cell: Some(pos.a1()),
                        found: "a blank".into(),
                        action: "left out of this response".into(),
                        message: format!(
                            "no value for '{}' on a row with a condition label; the row was left out of that response",
                            responses[index].name
                        ),
                    });
                    f64::NAN
                }
            };
            responses[index].values.push(value);
        }
        record_rows.push(row);
    }
    for ((factor, variants), uses) in factors.iter_mut().zip(&spellings).zip(&spelling_uses) {
        // A condition written several ways is named by its most used spelling (the
        // first met among equals), as typed less its outer spaces.
        for ((level, variants), uses) in factor.levels.iter_mut().zip(variants).zip(uses) {
            if variants.len() < 2 {
                continue;
            }
            let most = uses.iter().copied().max().unwrap_or(0);
            if let Some(at) = uses.iter().position(|count| *count == most) {
                let chosen = variants[at].trim();
                if !chosen.is_empty() {
                    *level = chosen.to_string();
                }
            }
        }
        merged_label_findings(sheet, factor, variants, &mut findings);
        order_numeric_levels(factor);
    }
    let first_col = columns.first().map_or(0, |column| column.col);
    let last_col = columns.last().map_or(0, |column| column.col);
    TrialTable {
        sheet: sheet.to_string(),
        area: CellRect {
            first: CellPos::new(header_row, first_col),
            last: CellPos::new(last_row, last_col),
        },
        layout: Layout::Long,
        factors,
        responses,
        record_rows,
        level_columns: Vec::new(),
        record_cols: Vec::new(),
        findings: findings.into_vec(),
        choices: Vec::new(),
    }
}

/// Puts the levels of a factor whose every level is a number in the order of their
/// values; text levels keep the order in which they were first met.
fn order_numeric_levels(factor: &mut Factor) {
    let values: Option<Vec<f64>> = factor
        .levels
        .iter()
        .map(|level| level.parse::<f64>().ok().filter(|value| value.is_finite()))
        .collect();
    let Some(values) = values else {
        return;
    };
    let mut order: Vec<usize> = (0..values.len()).collect();
    order.sort_by(|&a, &b| values[a].total_cmp(&values[b]));
    if order.iter().enumerate().all(|(position, &index)| position == index) {
        return;
    }
    let mut new_index = vec![0u32; order.len()];
    for (position, &index) in order.iter().enumerate() {
        new_index[index] = position as u32;
    }
    factor.levels = order.iter().map(|&index| factor.levels[index].clone()).collect();
    for level in &mut factor.level_of_record {
        *level = new_index[*level as usize];
    }
}

/// The label columns that are factors when none is named: of the `candidates`, the
/// columns mostly not numbers, leaving out notes (filled on fewer than half the rows) and
/// identifiers (a different label on almost every row of eight or more), each reported.
pub(super) fn label_factor_columns(
    sheet: &str,
    header_row: u32,
    columns: &[HeaderColumn],
    candidates: &[usize],
    n_data_rows: usize,
    findings: &mut Findings,
) -> Vec<usize> {
    let label_candidates: Vec<usize> = candidates
        .iter()
        .copied()
        .filter(|&index| !columns[index].counts.is_numeric() && columns[index].counts.non_empty() > 0)
        .collect();
    let mut factors_found = Vec::new();
    for index in label_candidates {
        let column = &columns[index];
        let looks_like_identifier = n_data_rows >= 8 && column.distinct_labels * 10 > n_data_rows * 8;
        let looks_like_notes = column.counts.non_empty() * 2 < n_data_rows;
        let reason = if looks_like_notes {
            Some("is filled on fewer than half of the rows, so it was read as notes")
        } else if looks_like_identifier {
            Some("has a different label on almost every row, so it was read as an identifier")
        } else {
            None
        };
        match reason {
            Some(reason) => findings.push(column_finding(
                FindingKind::IdentifierColumn,
                sheet,
                header_row,
                column,
                "not used as a factor",
                format!(
                    "the column '{}' {reason}, not a condition; name it as a factor to use it",
                    column.name
                ),
            )),
            None => factors_found.push(index),
        }
    }
    factors_found
}

/// The response columns when none is named: the numeric columns that are not factors
/// nor `excluded` (context), leaving out (and reporting) columns that count 1, 2, 3, ...
/// when a measured column remains.
pub(super) fn measured_columns(
    sheet: &str,
    header_row: u32,
    columns: &[HeaderColumn],
    factor_columns: &[(usize, bool)],
    excluded: &[usize],
    findings: &mut Findings,
) -> Vec<usize> {
    let response_columns: Vec<usize> = (0..columns.len())
        .filter(|index| columns[*index].counts.is_numeric())
        .filter(|index| !factor_columns.iter().any(|(factor, _)| factor == index))
        .filter(|index| !excluded.contains(index))
        .collect();
    // A column counting 1, 2, 3, ... is a run or sample number, not a measurement.
    let (counters, measured): (Vec<usize>, Vec<usize>) = response_columns
        .iter()
        .partition(|&&index| columns[index].counts.counts_up && columns[index].counts.numbers >= 8);
    if measured.is_empty() {
        return response_columns;
    }
    for index in counters {
        let column = &columns[index];
        findings.push(column_finding(
            FindingKind::IdentifierColumn,
            sheet,
            header_row,
            column,
            "not analysed as a response",
            format!(
                "the column '{}' counts up by one on every row, so it was read as a run number, not a measurement; name it as a response to analyse it",
                column.name
            ),
        ));
    }
    measured
}
