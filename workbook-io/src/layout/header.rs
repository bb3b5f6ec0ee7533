//! Finding the header row and the columns under it: rows of the region, the header row,
//! the header names (merged, blank and duplicated headers) and what each column holds.

use std::collections::HashMap;

use crate::cell::{column_letters, CellPos, CellValue};
use crate::read::SheetGrid;

use super::cells::value_text;
use super::{Finding, FindingKind, Findings};

#[derive(Default, Clone, Copy)]
pub(super) struct ColumnCounts {
    /// True while every number so far is one more than the one above it.
    pub(super) counts_up: bool,
    pub(super) last_number: Option<f64>,
    pub(super) numbers: usize,
    pub(super) texts: usize,
    pub(super) booleans: usize,
    pub(super) dates: usize,
    pub(super) errors: usize,
    /// The first distinct numbers, up to [`MAX_SETTINGS`].
    pub(super) settings: [f64; MAX_SETTINGS],
    /// How many of `settings` are filled.
    pub(super) n_settings: usize,
    /// True when the column holds more distinct numbers than `settings` keeps.
    pub(super) many_numbers: bool,
    /// Numbers made by formulas that summarise other cells (AVERAGE, SUM...).
    pub(super) summary_formulas: usize,
}

/// Distinct numbers kept per column to recognise design settings.
pub(super) const MAX_SETTINGS: usize = 6;

impl ColumnCounts {
    pub(super) fn non_empty(&self) -> usize {
        self.numbers + self.texts + self.booleans + self.dates + self.errors
    }
    /// The distinct numbers seen, when there are at most [`MAX_SETTINGS`].
    pub(super) fn distinct_numbers(&self) -> &[f64] {
        &self.settings[..self.n_settings]
    }
    fn note_number(&mut self, number: f64) {
        if self.many_numbers || self.settings[..self.n_settings].contains(&number) {
            return;
        }
        if self.n_settings == MAX_SETTINGS {
            self.many_numbers = true;
        } else {
            self.settings[self.n_settings] = number;
            self.n_settings += 1;
        }
    }
    pub(super) fn is_numeric(&self) -> bool {
        // Error values and TRUE/FALSE among numbers are unusable numbers, not labels.
        self.numbers > 0 && self.numbers >= self.texts + self.dates
    }
}

pub(super) struct HeaderColumn {
    pub(super) col: u32,
    pub(super) name: String,
    pub(super) counts: ColumnCounts,
    pub(super) distinct_labels: usize,
}

/// The position of each column in a list of columns, looked up in constant
/// time (a table may have thousands of columns and a million rows).
pub(super) struct ColumnIndex {
    slots: Vec<u32>,
}

impl ColumnIndex {
    pub(super) fn new(columns: &[u32]) -> Self {
        // Grids hold columns of a sheet only (below MAX_COLS).
        let size = columns
            .iter()
            .map(|&col| col as usize + 1)
            .max()
            .unwrap_or(0)
            .min(crate::cell::MAX_COLS as usize);
        let mut slots = vec![u32::MAX; size];
        // The first listing of a column wins, as a search from the front would find it.
        for (index, &col) in columns.iter().enumerate().rev() {
            if let Some(slot) = slots.get_mut(col as usize) {
                *slot = index as u32;
            }
        }
        Self { slots }
    }

    pub(super) fn index(&self, col: u32) -> Option<usize> {
        match self.slots.get(col as usize) {
            Some(&slot) if slot != u32::MAX => Some(slot as usize),
            _ => None,
        }
    }
}

/// Start and end indices of each row's cells.
pub(super) fn row_spans(cells: &[(CellPos, CellValue)]) -> Vec<(usize, usize)> {
    let mut spans = Vec::new();
    let mut start = 0;
    for index in 1..=cells.len() {
        if index == cells.len() || cells[index].0.row != cells[start].0.row {
            spans.push((start, index));
            start = index;
        }
    }
    spans
}

/// The header is the first row of text cells followed by a row with a
/// number; rows with two or more texts are preferred over a lone title.
pub(super) fn find_header_row(
    grid: &SheetGrid,
    cells: &[(CellPos, CellValue)],
    rows: &[(usize, usize)],
    explicit_range: bool,
) -> Option<usize> {
    let is_text = |value: &CellValue| matches!(value, CellValue::Text(_));
    let row_has_number = |span: &(usize, usize)| {
        cells[span.0..span.1]
            .iter()
            .any(|(_, value)| matches!(value, CellValue::Number(_)))
    };
    if explicit_range {
        let first = rows.first()?;
        return cells[first.0..first.1]
            .iter()
            .any(|(_, value)| is_text(value))
            .then_some(0);
    }
    // The header is the all-text row with the most cells among the rows above the first
    // row holding a number: a one- or two-cell title above it and a units row below it
    // have fewer cells. Of rows with as many cells the later wins (a title of as many
    // cells sits above the header), unless it starts right of the table's first column
    // or holds only bracketed units.
    let scan = rows.len().min(200);
    let mut best: Option<(usize, usize)> = None;
    let mut first_col = u32::MAX;
    for index in 0..scan {
        let span = rows[index];
        if row_has_number(&span) {
            if best.is_some() {
                break;
            }
            continue;
        }
        let row_cells = &cells[span.0..span.1];
        let n_text = row_cells.iter().filter(|(_, value)| is_text(value)).count();
        if n_text != row_cells.len() {
            continue;
        }
        let followed_by_numbers = rows[index + 1..rows.len().min(index + 6)].iter().any(row_has_number);
        if !followed_by_numbers {
            continue;
        }
        first_col = first_col.min(row_cells[0].0.col);
        let units_only = row_cells.iter().all(|(_, value)| match value {
            CellValue::Text(text) => {
                let text = grid.text(*text).trim();
                text.starts_with('(') || text.starts_with('[')
            }
            _ => false,
        });
        // The same short word in every cell under a header ("mm", "mm", "mm") is a
        // units row: column names differ.
        let texts: Vec<&str> = row_cells
            .iter()
            .filter_map(|(_, value)| match value {
                CellValue::Text(text) => Some(grid.text(*text).trim()),
                _ => None,
            })
            .collect();
        let repeated_unit = best.is_some()
            && texts.len() >= 2
            && texts[0].chars().count() <= 12
            && texts.iter().all(|text| text.eq_ignore_ascii_case(texts[0]));
        let units_only = units_only || repeated_unit;
        let weight = 2 * n_text + usize::from(row_cells[0].0.col == first_col && !units_only);
        if best.is_none_or(|(_, most)| weight >= most) {
            best = Some((index, weight));
        }
    }
    // A lone title (or nothing) above a row of numbers naming the conditions.
    let lone_title = best.filter(|(index, _)| rows[*index].1 - rows[*index].0 == 1);
    if best.is_none() || lone_title.is_some() {
        let below = lone_title.map_or(0, |(index, _)| index + 1);
        if let Some(index) = numeric_header_row(cells, rows, below, lone_title.is_some()) {
            return Some(index);
        }
    }
    best.map(|(index, _)| index)
}

/// A row of numbers that names the conditions of a wide table (settings such as 160, 170,
/// 180 over columns of measurements): the first row holding a number at or after `from`,
/// of two or more numbers only, all different and rising or falling from left to right,
/// with two or more rows of numbers below in its columns; and told from a first row of
/// measurements by a title cell above it, or by whole numbers over measurements with
/// fractions, or by values farther outside the range of the numbers below each of them
/// than that range is wide.
pub(super) fn numeric_header_row(
    cells: &[(CellPos, CellValue)],
    rows: &[(usize, usize)],
    from: usize,
    titled: bool,
) -> Option<usize> {
    let index = (from..rows.len().min(from + 200)).find(|index| {
        cells[rows[*index].0..rows[*index].1]
            .iter()
            .any(|(_, value)| matches!(value, CellValue::Number(_)))
    })?;
    let row_cells = &cells[rows[index].0..rows[index].1];
    let mut settings: Vec<(u32, f64)> = Vec::with_capacity(row_cells.len());
    for (pos, value) in row_cells {
        match value {
            CellValue::Number(number) if number.is_finite() => settings.push((pos.col, *number)),
            _ => return None,
        }
    }
    if settings.len() < 2 {
        return None;
    }
    let rising = settings.windows(2).all(|pair| pair[1].1 > pair[0].1);
    let falling = settings.windows(2).all(|pair| pair[1].1 < pair[0].1);
    if !rising && !falling {
        return None;
    }
    // The numbers below, in the header's columns, over the next rows (bounded).
    let mut ranges: Vec<(f64, f64)> = vec![(f64::INFINITY, f64::NEG_INFINITY); settings.len()];
    let mut data_rows = 0;
    let mut fractions = false;
    let mut outside_columns = 0;
    for span in rows.iter().skip(index + 1).take(50) {
        let mut in_header_columns = false;
        for (pos, value) in &cells[span.0..span.1] {
            let Ok(slot) = settings.binary_search_by_key(&pos.col, |(col, _)| *col) else {
                continue;
            };
            if let CellValue::Number(number) = value {
                in_header_columns = true;
                fractions |= number.fract() != 0.0;
                let range = &mut ranges[slot];
                *range = (range.0.min(*number), range.1.max(*number));
            }
        }
        if in_header_columns {
            data_rows += 1;
        } else {
            outside_columns += 1;
        }
    }
    if data_rows < 2 || outside_columns > data_rows {
        return None;
    }
    let whole_settings = settings.iter().all(|(_, number)| number.fract() == 0.0);
    let outside = settings
        .iter()
        .zip(&ranges)
        .all(|((_, number), (low, high))| low <= high && (low - number).max(number - high) > high - low);
    (outside || (whole_settings && (titled || fractions))).then_some(index)
}

/// The header names of the table: merged header cells spread over their columns,
/// blank headers above data named after their column, and duplicates given a suffix;
/// each change is reported. Sorted by column.
#[allow(clippy::too_many_arguments)]
pub(super) fn header_names(
    grid: &SheetGrid,
    sheet: &str,
    cells: &[(CellPos, CellValue)],
    header_span: (usize, usize),
    header_row: u32,
    data_cells: &[(CellPos, CellValue)],
    findings: &mut Findings,
) -> Vec<(u32, String)> {
    let mut headers: Vec<(u32, String)> = cells[header_span.0..header_span.1]
        .iter()
        .map(|(pos, value)| (pos.col, value_text(grid, *value).trim().to_string()))
        .filter(|(_, name)| !name.is_empty())
        .collect();
    for area in &grid.merged {
        if area.first.row <= header_row && area.last.row >= header_row && area.n_cols() > 1 {
            let base = headers
                .iter()
                .find(|(col, _)| *col == area.first.col)
                .map(|(_, name)| name.clone());
            if let Some(base) = base {
                findings.push(Finding {
                    kind: FindingKind::MergedHeader,
                    sheet: sheet.to_string(),
                    cell: Some(area.a1()),
                    found: base.clone(),
                    action: "each column of the merged area was given the header with its position".into(),
                    message: format!(
                        "header cells {} are merged; their columns were named '{base} 1', '{base} 2', ...; unmerge them and name each column",
                        area.a1()
                    ),
                });
                // By column, so that a merged area across thousands of
                // columns costs their number, not its square.
                let mut by_col: std::collections::BTreeMap<u32, String> = headers.drain(..).collect();
                let last_col = area.last.col.min(crate::cell::MAX_COLS - 1);
                for (offset, col) in (area.first.col..=last_col).enumerate() {
                    by_col.insert(col, format!("{base} {}", offset + 1));
                }
                headers = by_col.into_iter().collect();
            }
        }
    }
    headers.sort_by_key(|(col, _)| *col);

    // Columns with data but without a header, inside the header's span.
    if let (Some(first_col), Some(last_col)) = (headers.first().map(|h| h.0), headers.last().map(|h| h.0)) {
        let mut unnamed: Vec<u32> = data_cells
            .iter()
            .map(|(pos, _)| pos.col)
            .filter(|col| {
                *col > first_col && *col < last_col && headers.binary_search_by_key(col, |(named, _)| *named).is_err()
            })
            .collect();
        unnamed.sort_unstable();
        unnamed.dedup();
        for col in unnamed {
            let name = format!("column {}", column_letters(col));
            findings.push(Finding {
                kind: FindingKind::BlankHeader,
                sheet: sheet.to_string(),
                cell: Some(CellPos::new(header_row, col).a1()),
                found: "a blank header".into(),
                action: format!("the column was named '{name}'"),
                message: format!("the header cell is blank but the column below holds data; it was named '{name}'"),
            });
            headers.push((col, name));
        }
        headers.sort_by_key(|(col, _)| *col);
    }

    // Duplicate headers get a suffix.
    let mut seen: HashMap<String, usize> = HashMap::new();
    for (col, name) in headers.iter_mut() {
        let key = name.to_lowercase();
        let count = seen.entry(key).or_insert(0);
        *count += 1;
        if *count > 1 {
            let renamed = format!("{name} ({count})");
            findings.push(Finding {
                kind: FindingKind::DuplicateHeader,
                sheet: sheet.to_string(),
                cell: Some(CellPos::new(header_row, *col).a1()),
                found: name.clone(),
                action: format!("renamed to '{renamed}'"),
                message: format!(
                    "the header '{name}' is used by an earlier column too; this one was called '{renamed}'"
                ),
            });
            *name = renamed;
        }
    }
    headers
}

/// What each header's column holds below the header: counts of numbers, texts and
/// other values, whether the numbers count up by one, and the number of distinct labels.
pub(super) fn count_columns(
    grid: &SheetGrid,
    headers: &[(u32, String)],
    data_cells: &[(CellPos, CellValue)],
) -> Vec<HeaderColumn> {
    // Count what each column holds.
    // Column number to header index, by direct lookup (columns are below 16,384).
    let mut col_index: Vec<Option<usize>> =
        vec![None; headers.iter().map(|(col, _)| *col as usize + 1).max().unwrap_or(0)];
    for (index, (col, _)) in headers.iter().enumerate() {
        col_index[*col as usize] = Some(index);
    }
    let mut columns: Vec<HeaderColumn> = headers
        .iter()
        .map(|(col, name)| HeaderColumn {
            col: *col,
            name: name.clone(),
            counts: ColumnCounts::default(),
            distinct_labels: 0,
        })
        .collect();
    let mut label_sets: Vec<HashMap<String, ()>> = vec![HashMap::new(); columns.len()];
    // Text indices whose label is already in each column's set: a label is
    // trimmed, copied and hashed once per distinct text, not once per cell.
    let mut counted: Vec<Vec<bool>> = vec![Vec::new(); columns.len()];
    for (pos, value) in data_cells {
        let Some(&Some(index)) = col_index.get(pos.col as usize) else {
            continue;
        };
        let counts = &mut columns[index].counts;
        match value {
            CellValue::Number(number) => {
                counts.counts_up = match counts.last_number {
                    None => number.fract() == 0.0,
                    Some(previous) => counts.counts_up && *number == previous + 1.0,
                };
                counts.last_number = Some(*number);
                counts.numbers += 1;
                counts.note_number(*number);
                if !grid.summary_formulas.is_empty() && super::formulas::summary_formula_at(grid, *pos).is_some() {
                    counts.summary_formulas += 1;
                }
            }
            CellValue::Text(text_index) => {
                counts.texts += 1;
                let seen = &mut counted[index];
                if seen.is_empty() {
                    seen.resize(grid.strings.len(), false);
                }
                let slot = *text_index as usize;
                let known = seen.get(slot).copied().unwrap_or(false);
                if !known && label_sets[index].len() <= 10_000 {
                    label_sets[index].insert(grid.text(*text_index).trim().to_string(), ());
                    if let Some(flag) = seen.get_mut(slot) {
                        *flag = true;
                    }
                }
            }
            CellValue::Bool(_) => counts.booleans += 1,
            CellValue::Date(_) => counts.dates += 1,
            CellValue::Error(_) => counts.errors += 1,
        }
    }
    for (column, labels) in columns.iter_mut().zip(&label_sets) {
        column.distinct_labels = labels.len();
    }
    columns
}

/// A finding about a whole column, placed at its header cell.
pub(super) fn column_finding(
    kind: FindingKind,
    sheet: &str,
    header_row: u32,
    column: &HeaderColumn,
    action: &str,
    message: String,
) -> Finding {
    Finding {
        kind,
        sheet: sheet.to_string(),
        cell: Some(CellPos::new(header_row, column.col).a1()),
        found: column.name.clone(),
        action: action.into(),
        message,
    }
}

/// Reports each column with a header and no values below it (it is left out of detection).
pub(super) fn empty_column_findings(sheet: &str, header_row: u32, columns: &[HeaderColumn], findings: &mut Findings) {
    for column in columns {
        if column.counts.non_empty() == 0 {
            findings.push(column_finding(
                FindingKind::EmptyColumn,
                sheet,
                header_row,
                column,
                "the column was left out",
                format!(
                    "the column headed '{}' has no values below its header; it was left out",
                    column.name
                ),
            ));
        }
    }
}
