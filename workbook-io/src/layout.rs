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

use std::collections::HashMap;

use serde::Serialize;

use crate::cell::{column_letters, CellPos, CellRect, CellValue};
use crate::read::SheetGrid;

/// At most this many findings are kept one by one; the rest are counted.
pub const MAX_LISTED_FINDINGS: usize = 2_000;

/// The two table shapes.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, serde::Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Layout {
    /// Label columns and response columns, one record per row.
    Long,
    /// One column per condition.
    Wide,
}

/// What kind of data problem a finding reports.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
#[non_exhaustive]
pub enum FindingKind {
    /// Text where a number was expected.
    TextInNumbers,
    /// A spreadsheet error value such as `#N/A`.
    ErrorValue,
    /// A blank where a value was expected.
    BlankValue,
    /// A record whose condition label is blank.
    BlankLabel,
    /// Two columns with the same header.
    DuplicateHeader,
    /// A column with data but no header.
    BlankHeader,
    /// A date or time in a response column.
    DateInNumbers,
    /// TRUE or FALSE in a response column.
    BooleanInNumbers,
    /// A condition with fewer than two values.
    TooFewValues,
    /// A column with a header and no data.
    EmptyColumn,
    /// Header cells merged across columns.
    MergedHeader,
    /// Labels that differ only in case or spacing.
    SimilarLabels,
    /// A label column that looks like an identifier and was not used as a factor.
    IdentifierColumn,
    /// A workbook-level remark (extension, macros, settings).
    Workbook,
    /// A settings value that could not be used.
    Setting,
    /// Findings beyond the listed ones, counted.
    MoreFindings,
    /// A remark from the analysis (degenerate data and the like).
    Analysis,
    /// A run that departs from the workbook's trial plan: missing, added,
    /// with changed settings, or out of the planned order.
    PlanDeparture,
    /// Rows or columns of the table that are hidden in the sheet.
    HiddenCells,
}

/// One data problem, at one place.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Finding {
    /// What kind of problem.
    pub kind: FindingKind,
    /// The sheet, empty for workbook-level findings.
    pub sheet: String,
    /// The A1 address of the cell or area, when there is one.
    pub cell: Option<String>,
    /// The value found, as text.
    pub found: String,
    /// What was done about it.
    pub action: String,
    /// A full sentence for a person.
    pub message: String,
}

impl Finding {
    /// The place as `Sheet!C17`, or the sheet alone, or nothing.
    pub fn place(&self) -> String {
        match (&self.cell, self.sheet.is_empty()) {
            (Some(cell), false) => format!("{}!{}", self.sheet, cell),
            (Some(cell), true) => cell.clone(),
            (None, false) => self.sheet.clone(),
            (None, true) => String::new(),
        }
    }
}

/// Collects findings, keeping at most [`MAX_LISTED_FINDINGS`] one by one.
#[derive(Debug, Default, Clone)]
pub struct Findings {
    listed: Vec<Finding>,
    unlisted: usize,
}

impl Findings {
    /// Adds a finding.
    pub fn push(&mut self, finding: Finding) {
        if self.listed.len() < MAX_LISTED_FINDINGS {
            self.listed.push(finding);
        } else {
            self.unlisted += 1;
        }
    }

    /// Total number of findings, listed or not.
    pub fn total(&self) -> usize {
        self.listed.len() + self.unlisted
    }

    /// The findings, with one closing entry that counts any unlisted ones.
    pub fn into_vec(mut self) -> Vec<Finding> {
        if self.unlisted > 0 {
            self.listed.push(Finding {
                kind: FindingKind::MoreFindings,
                sheet: String::new(),
                cell: None,
                found: format!("{} more", self.unlisted),
                action: "not listed one by one".into(),
                message: format!(
                    "{} further findings like the ones above were not listed one by one",
                    self.unlisted
                ),
            });
        }
        self.listed
    }
}

/// Overrides for table detection; empty fields mean "detect".
#[derive(Debug, Clone, Default)]
pub struct TableRequest {
    /// Only cells inside this rectangle are considered; its first row is the header.
    pub range: Option<CellRect>,
    /// Header names of the factor columns.
    pub factors: Vec<String>,
    /// Header names of the response columns.
    pub responses: Vec<String>,
    /// Header names of blocking columns (factors that enter additively).
    pub blocks: Vec<String>,
    /// Force one layout.
    pub layout: Option<Layout>,
    /// Name for the response of a wide table (default `value`).
    pub wide_response_name: Option<String>,
}

/// A factor: a label column (long layout) or the column headers (wide).
#[derive(Debug, Clone, Serialize)]
pub struct Factor {
    /// The header text.
    pub name: String,
    /// The column, in the long layout.
    pub column: Option<u32>,
    /// Distinct labels in order of first appearance.
    pub levels: Vec<String>,
    /// For each record, the index of its level.
    #[serde(skip)]
    pub level_of_record: Vec<u32>,
    /// True for a blocking factor.
    pub is_block: bool,
}

/// A response: a numeric column (long) or the numbers of all condition columns (wide).
#[derive(Debug, Clone, Serialize)]
pub struct Response {
    /// The header text.
    pub name: String,
    /// The column, in the long layout.
    pub column: Option<u32>,
    /// For each record, the value, or NaN where the cell could not be used.
    #[serde(skip)]
    pub values: Vec<f64>,
}

/// The trial table found in a sheet.
#[derive(Debug, Clone, Serialize)]
pub struct TrialTable {
    /// The sheet it was found on.
    pub sheet: String,
    /// Header row through last data row.
    pub area: CellRect,
    /// Which layout was recognised.
    pub layout: Layout,
    /// The factor columns (one for a wide table).
    pub factors: Vec<Factor>,
    /// The response columns (one for a wide table).
    pub responses: Vec<Response>,
    /// For each record, its sheet row (zero-based).
    #[serde(skip)]
    pub record_rows: Vec<u32>,
    /// For a wide table, the column of each level of the single factor.
    #[serde(skip)]
    pub level_columns: Vec<u32>,
    /// Data problems found while reading.
    pub findings: Vec<Finding>,
}

impl TrialTable {
    /// Number of records (rows of the long form).
    pub fn n_records(&self) -> usize {
        self.record_rows.len()
    }

    /// The cell a record's response value came from.
    pub fn value_cell(&self, response_index: usize, record: usize) -> CellPos {
        let row = self.record_rows[record];
        match self.layout {
            Layout::Long => CellPos::new(row, self.responses[response_index].column.unwrap_or(0)),
            Layout::Wide => {
                let level = self.factors[0].level_of_record[record] as usize;
                CellPos::new(row, self.level_columns[level])
            }
        }
    }
}

/// Why no table could be found.
#[derive(Debug, Clone, thiserror::Error)]
#[non_exhaustive]
pub enum LayoutError {
    /// Nothing that looks like a trial table was found.
    #[error("sheet '{sheet}': no trial table found; looked for {looked_for}")]
    NoTable {
        /// The sheet.
        sheet: String,
        /// What the detection looked for and what it saw.
        looked_for: String,
    },
    /// A column named in the request is not in the header row.
    #[error("sheet '{sheet}': no column headed '{name}' in the header row {header_row} (headers: {available})")]
    UnknownColumn {
        /// The sheet.
        sheet: String,
        /// The name asked for.
        name: String,
        /// The header row, 1-based.
        header_row: u32,
        /// The headers found.
        available: String,
    },
}

#[derive(Default, Clone, Copy)]
struct ColumnCounts {
    /// True while every number so far is one more than the one above it.
    counts_up: bool,
    last_number: Option<f64>,
    numbers: usize,
    texts: usize,
    booleans: usize,
    dates: usize,
    errors: usize,
}

impl ColumnCounts {
    fn non_empty(&self) -> usize {
        self.numbers + self.texts + self.booleans + self.dates + self.errors
    }
    fn is_numeric(&self) -> bool {
        self.numbers > 0 && self.numbers * 2 >= self.non_empty()
    }
}

struct HeaderColumn {
    col: u32,
    name: String,
    counts: ColumnCounts,
    distinct_labels: usize,
}

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

/// Rows and columns of the table that the sheet hides: their values are
/// used like any other, which the person who hid them may not expect.
fn hidden_findings(grid: &SheetGrid, table: &TrialTable) -> Vec<Finding> {
    let area = table.area;
    let mut findings = Vec::new();
    let rows: Vec<u32> = grid
        .hidden_rows
        .iter()
        .copied()
        .filter(|row| (area.first.row..=area.last.row).contains(row))
        .collect();
    if let Some(&first) = rows.first() {
        findings.push(Finding {
            kind: FindingKind::HiddenCells,
            sheet: table.sheet.clone(),
            cell: Some(
                CellRect {
                    first: CellPos::new(first, area.first.col),
                    last: CellPos::new(first, area.last.col),
                }
                .a1(),
            ),
            found: format!("{} hidden row(s)", rows.len()),
            action: "their values were used like any other".into(),
            message: format!(
                "row(s) {} of the table are hidden in the sheet; their values were used like any other; unhide them to check, and delete the runs that should not count",
                number_list(&rows)
            ),
        });
    }
    let cols: Vec<u32> = grid
        .hidden_cols
        .iter()
        .copied()
        .filter(|col| (area.first.col..=area.last.col).contains(col))
        .collect();
    if let Some(&first) = cols.first() {
        let letters: Vec<String> = cols.iter().take(20).map(|&col| column_letters(col)).collect();
        findings.push(Finding {
            kind: FindingKind::HiddenCells,
            sheet: table.sheet.clone(),
            cell: Some(
                CellRect {
                    first: CellPos::new(area.first.row, first),
                    last: CellPos::new(area.last.row, first),
                }
                .a1(),
            ),
            found: format!("{} hidden column(s)", cols.len()),
            action: "their values were used like any other".into(),
            message: format!(
                "column(s) {}{} of the table are hidden in the sheet; their values were used like any other; unhide them to check",
                letters.join(", "),
                if cols.len() > 20 { ", ..." } else { "" }
            ),
        });
    }
    findings
}

/// Zero-based rows as sheet row numbers, runs shortened (`5, 7-9`), at most 20 items.
fn number_list(rows: &[u32]) -> String {
    let mut items: Vec<String> = Vec::new();
    let mut index = 0;
    while index < rows.len() {
        let start = rows[index];
        let mut end = start;
        while index + 1 < rows.len() && rows[index + 1] == end + 1 {
            index += 1;
            end += 1;
        }
        items.push(if end > start {
            format!("{}-{}", start + 1, end + 1)
        } else {
            format!("{}", start + 1)
        });
        index += 1;
    }
    if items.len() > 20 {
        items.truncate(20);
        items.push("...".into());
    }
    items.join(", ")
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

    // Header names, with merged headers spread and duplicates renamed.
    let mut headers: Vec<(u32, String)> = cells[rows[header_index].0..rows[header_index].1]
        .iter()
        .map(|(pos, value)| (pos.col, grid.display(*value).trim().to_string()))
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
                    sheet: sheet.clone(),
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

    let data_cells = &cells[rows.get(header_index + 1).map_or(cells.len(), |span| span.0)..];
    let last_row = data_cells.last().map_or(header_row, |(pos, _)| pos.row);

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
                sheet: sheet.clone(),
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
                sheet: sheet.clone(),
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
    for column in &columns {
        if column.counts.non_empty() == 0 {
            findings.push(Finding {
                kind: FindingKind::EmptyColumn,
                sheet: sheet.clone(),
                cell: Some(CellPos::new(header_row, column.col).a1()),
                found: column.name.clone(),
                action: "the column was left out".into(),
                message: format!(
                    "the column headed '{}' has no values below its header; it was left out",
                    column.name
                ),
            });
        }
    }

    let n_data_rows = data_cells
        .iter()
        .map(|(pos, _)| pos.row)
        .collect::<std::collections::BTreeSet<_>>()
        .len();
    let layout = match request.layout {
        Some(layout) => layout,
        None if !factor_columns.is_empty() => Layout::Long,
        None => {
            let label_candidates: Vec<usize> = (0..columns.len())
                .filter(|&index| !columns[index].counts.is_numeric() && columns[index].counts.non_empty() > 0)
                .filter(|index| !response_columns.contains(index))
                .collect();
            let mut factors_found = Vec::new();
            for index in label_candidates {
                let column = &columns[index];
                let looks_like_identifier = n_data_rows >= 8 && column.distinct_labels * 10 > n_data_rows * 8;
                let looks_like_notes = column.counts.non_empty() * 2 < n_data_rows;
                if looks_like_notes {
                    findings.push(Finding {
                        kind: FindingKind::IdentifierColumn,
                        sheet: sheet.clone(),
                        cell: Some(CellPos::new(header_row, column.col).a1()),
                        found: column.name.clone(),
                        action: "not used as a factor".into(),
                        message: format!(
                            "the column '{}' is filled on fewer than half of the rows, so it was read as notes, not a condition; name it as a factor to use it",
                            column.name
                        ),
                    });
                } else if looks_like_identifier {
                    findings.push(Finding {
                        kind: FindingKind::IdentifierColumn,
                        sheet: sheet.clone(),
                        cell: Some(CellPos::new(header_row, column.col).a1()),
                        found: column.name.clone(),
                        action: "not used as a factor".into(),
                        message: format!(
                            "the column '{}' has a different label on almost every row, so it was read as an identifier, not a condition; name it as a factor to use it",
                            column.name
                        ),
                    });
                } else {
                    factors_found.push(index);
                }
            }
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
                response_columns = (0..columns.len())
                    .filter(|index| columns[*index].counts.is_numeric())
                    .filter(|index| !factor_columns.iter().any(|(factor, _)| factor == index))
                    .collect();
                // A column counting 1, 2, 3, ... is a run or sample number, not a measurement.
                let (counters, measured): (Vec<usize>, Vec<usize>) = response_columns
                    .iter()
                    .partition(|&&index| columns[index].counts.counts_up && columns[index].counts.numbers >= 8);
                if !measured.is_empty() {
                    for index in counters {
                        let column = &columns[index];
                        findings.push(Finding {
                            kind: FindingKind::IdentifierColumn,
                            sheet: sheet.clone(),
                            cell: Some(CellPos::new(header_row, column.col).a1()),
                            found: column.name.clone(),
                            action: "not analysed as a response".into(),
                            message: format!(
                                "the column '{}' counts up by one on every row, so it was read as a run number, not a measurement; name it as a response to analyse it",
                                column.name
                            ),
                        });
                    }
                    response_columns = measured;
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

/// The position of each column in a list of columns, looked up in constant
/// time (a table may have thousands of columns and a million rows).
struct ColumnIndex {
    slots: Vec<u32>,
}

impl ColumnIndex {
    fn new(columns: &[u32]) -> Self {
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

    fn index(&self, col: u32) -> Option<usize> {
        match self.slots.get(col as usize) {
            Some(&slot) if slot != u32::MAX => Some(slot as usize),
            _ => None,
        }
    }
}

/// Start and end indices of each row's cells.
fn row_spans(cells: &[(CellPos, CellValue)]) -> Vec<(usize, usize)> {
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
fn find_header_row(cells: &[(CellPos, CellValue)], rows: &[(usize, usize)], explicit_range: bool) -> Option<usize> {
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
    let scan = rows.len().min(200);
    let mut lone_title: Option<usize> = None;
    for index in 0..scan {
        let span = rows[index];
        let row_cells = &cells[span.0..span.1];
        let n_text = row_cells.iter().filter(|(_, value)| is_text(value)).count();
        let all_text = n_text == row_cells.len();
        let followed_by_numbers = rows[index + 1..rows.len().min(index + 6)].iter().any(row_has_number);
        if !all_text || !followed_by_numbers {
            continue;
        }
        if n_text >= 2 {
            return Some(index);
        }
        lone_title.get_or_insert(index);
    }
    lone_title
}

fn label_text(grid: &SheetGrid, value: CellValue) -> Option<String> {
    match value {
        CellValue::Error(_) => None,
        other => {
            let text = grid.display(other).trim().to_string();
            (!text.is_empty()).then_some(text)
        }
    }
}

fn unusable_number(
    grid: &SheetGrid,
    sheet: &str,
    pos: CellPos,
    value: CellValue,
    column_name: &str,
) -> Option<Finding> {
    let (kind, what) = match value {
        CellValue::Number(number) if number.is_finite() => return None,
        CellValue::Number(_) => (FindingKind::TextInNumbers, "a non-finite number"),
        CellValue::Text(_) => (FindingKind::TextInNumbers, "text"),
        CellValue::Error(_) => (FindingKind::ErrorValue, "an error value"),
        CellValue::Date(_) => (FindingKind::DateInNumbers, "a date"),
        CellValue::Bool(_) => (FindingKind::BooleanInNumbers, "TRUE/FALSE"),
    };
    let found = grid.display(value);
    Some(Finding {
        kind,
        sheet: sheet.to_string(),
        cell: Some(pos.a1()),
        found: found.clone(),
        action: "the value was left out".into(),
        message: format!("found {what} '{found}' in the numbers of '{column_name}'; the value was left out"),
    })
}

#[allow(clippy::too_many_arguments)]
fn build_long(
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
    let mut level_maps: Vec<HashMap<String, u32>> = vec![HashMap::new(); factors.len()];
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
                let found = slot.map_or_else(|| "a blank".to_string(), |value| grid.display(value));
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
                (Some(level), _) => level,
                (None, text) => {
                    let text = text.unwrap_or_default();
                    let next = level_maps[index].len() as u32;
                    let level = *level_maps[index].entry(text.clone()).or_insert_with(|| {
                        factors[index].levels.push(text);
                        next
                    });
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
                Some(other) => {
                    if let Some(finding) = unusable_number(grid, sheet, pos, *other, &responses[index].name) {
                        findings.push(finding);
                    }
                    f64::NAN
                }
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
    for (factor, map) in factors.iter().zip(&level_maps) {
        similar_label_findings(sheet, factor, map, &mut findings);
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
        findings: findings.into_vec(),
    }
}

fn similar_label_findings(sheet: &str, factor: &Factor, map: &HashMap<String, u32>, findings: &mut Findings) {
    let mut by_folded: HashMap<String, Vec<&str>> = HashMap::new();
    for label in map.keys() {
        let folded: String = label.to_lowercase().split_whitespace().collect::<Vec<_>>().join(" ");
        by_folded.entry(folded).or_default().push(label);
    }
    let mut groups: Vec<Vec<&str>> = by_folded.into_values().filter(|group| group.len() > 1).collect();
    groups.sort();
    for mut group in groups {
        group.sort_unstable();
        findings.push(Finding {
            kind: FindingKind::SimilarLabels,
            sheet: sheet.to_string(),
            cell: factor.column.map(column_letters),
            found: group.join(" | "),
            action: "kept as different conditions".into(),
            message: format!(
                "in '{}', the labels {} differ only in case or spacing; they were kept apart; correct them if they are the same condition",
                factor.name,
                group.iter().map(|label| format!("'{label}'")).collect::<Vec<_>>().join(", ")
            ),
        });
    }
}

#[allow(clippy::too_many_arguments)]
fn build_wide(
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
    }
}
