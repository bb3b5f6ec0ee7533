//! The results of table detection: the trial table, its factors and responses, the
//! findings about unusable cells, the request that overrides detection and the errors.

use serde::Serialize;

use crate::cell::{CellPos, CellRect};

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
    /// A choice detection made (which table, which columns, a layout), with the
    /// setting that would change it.
    Choice,
    /// A summary row (average, total and the like) under or beside the data.
    SummaryRow,
    /// A context column (shift, day, operator, lot) that changes exactly as a
    /// factor does, so that the two cannot be told apart.
    ContextWithFactor,
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

    /// Keeps the listed findings `keep` accepts.
    pub fn retain(&mut self, keep: impl FnMut(&Finding) -> bool) {
        self.listed.retain(keep);
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
    /// For a wide table, the column of each level of the single factor (the first, when
    /// condition names written alike were merged).
    #[serde(skip)]
    pub level_columns: Vec<u32>,
    /// For a wide table, each record's column (empty for a long table).
    #[serde(skip)]
    pub record_cols: Vec<u32>,
    /// Data problems found while reading.
    pub findings: Vec<Finding>,
    /// Each choice detection made, in one line with the setting that would change it.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub choices: Vec<String>,
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
            Layout::Wide => match self.record_cols.get(record) {
                Some(&col) => CellPos::new(row, col),
                None => {
                    let level = self.factors[0].level_of_record[record] as usize;
                    CellPos::new(row, self.level_columns[level])
                }
            },
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
