//! The service's results into protocol values, by hand.
//!
//! Result tables: the report model ([`service::report::build_results_book`])
//! is the one place that decides what the results tables hold; here each of
//! its sheets is laid out as a 2-D array of values with a matching 2-D array
//! of number formats, ready for an add-in to paste into a new sheet. Each
//! chart of the sheet is described as data: its kind, titles, place and
//! the cell ranges of its series, for the add-in to draw with its own
//! chart objects.
//!
//! Diagnostics: each data finding becomes a diagnostic at its cell (row and
//! column as the position), with the sheet and A1 address in its message and
//! in its `data`.

use serde::Serialize;
use serde_json::{json, Value as Json};
use tower_lsp_server::ls_types::{Diagnostic, DiagnosticSeverity, NumberOrString, Position, Range};
use workbook_io::cell::{parse_a1, parse_a1_range};
use workbook_io::cell::{CellPos, CellRect};
use workbook_io::layout::{Finding, FindingKind};
use workbook_io::write::{Book, ChartKind, ChartSpec, Look, NumberFormat, Sheet, SheetRange, Value};

/// The name under which diagnostics are published.
pub const DIAGNOSTIC_SOURCE: &str = "trialyst";

/// One value of a result table as sent: text, a number or nothing.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(untagged)]
pub enum TableValue {
    /// Text (and numbers that are not finite, in words).
    Text(String),
    /// A finite number.
    Number(f64),
    /// An empty cell.
    Blank,
}

/// One results sheet as rows of values and rows of number formats,
/// serialised straight into the answer (no intermediate JSON tree).
#[derive(Debug, Clone, Serialize)]
#[serde(rename_all = "camelCase")]
pub struct SheetTable {
    /// The sheet's name.
    pub name: String,
    /// Rows of values, top row first.
    pub values: Vec<Vec<TableValue>>,
    /// A number-format code for each value.
    pub number_formats: Vec<Vec<String>>,
    /// Rows (zero-based) that hold column headers.
    pub header_rows: Vec<u32>,
    /// Column widths in characters, as (column, width).
    pub column_widths: Vec<(u16, f64)>,
    /// Rows to freeze at the top.
    pub frozen_rows: u32,
    /// The sheet's charts, described as data.
    pub charts: Vec<Json>,
}

/// One results sheet as rows of values and rows of number formats.
pub fn sheet_table(sheet: &Sheet) -> SheetTable {
    let n_rows = sheet.cells.iter().map(|placed| placed.row + 1).max().unwrap_or(0) as usize;
    let n_cols = sheet.cells.iter().map(|placed| placed.col + 1).max().unwrap_or(0) as usize;
    let general = || NumberFormat::General.code();
    let mut values = vec![vec![TableValue::Blank; n_cols]; n_rows];
    let mut formats = vec![vec![general(); n_cols]; n_rows];
    let mut header_rows: Vec<u32> = Vec::new();
    for placed in &sheet.cells {
        let (row, col) = (placed.row as usize, placed.col as usize);
        let (value, format) = match &placed.value {
            Value::Text(text) => (TableValue::Text(text.clone()), general()),
            Value::Number(number, number_format) if number.is_finite() => {
                (TableValue::Number(*number), number_format.code())
            }
            // As in the results workbook, a number that is not finite is shown in words.
            Value::Number(number, _) => (
                TableValue::Text(workbook_io::write::non_finite_in_words(*number).to_string()),
                general(),
            ),
            Value::Link { text, .. } => (TableValue::Text(text.clone()), general()),
            Value::Blank => (TableValue::Blank, general()),
        };
        values[row][col] = value;
        formats[row][col] = format;
        if placed.look == Look::ColumnHeader && header_rows.last() != Some(&placed.row) {
            header_rows.push(placed.row);
        }
    }
    SheetTable {
        name: sheet.name.clone(),
        values,
        number_formats: formats,
        header_rows,
        column_widths: sheet.widths.clone(),
        frozen_rows: sheet.frozen_rows,
        charts: sheet.charts.iter().map(chart_description).collect(),
    }
}

/// Every visible sheet of a results book as a table.
pub fn book_tables(book: &Book) -> Vec<SheetTable> {
    // A hidden sheet (the results document) is for programs reading the
    // file; the client already has the results in the answer.
    book.sheets
        .iter()
        .filter(|sheet| !sheet.hidden)
        .map(sheet_table)
        .collect()
}

/// A range of a chart's data as its sheet and A1 address.
fn range_description(range: &SheetRange) -> Json {
    let rect = CellRect {
        first: CellPos::new(range.first_row, u32::from(range.first_col)),
        last: CellPos::new(range.last_row, u32::from(range.last_col)),
    };
    json!({ "sheet": range.sheet, "range": rect.a1() })
}

/// One chart as data: kind (`points`, `lines`, `scatter`, `columns`),
/// titles, the top-left cell it sits at, its size in pixels and its series.
pub fn chart_description(chart: &ChartSpec) -> Json {
    let kind = match chart.kind {
        ChartKind::Points => "points",
        ChartKind::Lines => "lines",
        ChartKind::Scatter => "scatter",
        ChartKind::Columns => "columns",
    };
    let anchor = CellPos::new(chart.anchor.0, u32::from(chart.anchor.1));
    json!({
        "kind": kind,
        "title": chart.title,
        "xTitle": chart.x_title,
        "yTitle": chart.y_title,
        "anchor": anchor.a1(),
        "size": [chart.size.0, chart.size.1],
        "series": chart.series.iter().map(|series| json!({
            "name": series.name,
            "categories": range_description(&series.categories),
            "values": range_description(&series.values),
            "barPlus": series.bar_plus.as_ref().map(range_description),
            "barMinus": series.bar_minus.as_ref().map(range_description),
            "labels": series.labels.as_ref().map(range_description),
        })).collect::<Vec<_>>(),
    })
}

fn kind_name(kind: FindingKind) -> String {
    serde_json::to_value(kind)
        .ok()
        .and_then(|value| value.as_str().map(str::to_string))
        .unwrap_or_default()
}

/// The range a finding's cell or area covers; the top-left cell when there is none.
fn finding_range(finding: &Finding) -> Range {
    let start_of_sheet = Range::new(Position::new(0, 0), Position::new(0, 1));
    let Some(cell) = &finding.cell else {
        return start_of_sheet;
    };
    if cell.contains(':') {
        if let Some(rect) = parse_a1_range(cell) {
            return Range::new(
                Position::new(rect.first.row, rect.first.col),
                Position::new(rect.last.row, rect.last.col + 1),
            );
        }
    }
    match parse_a1(cell) {
        Some(pos) => Range::new(Position::new(pos.row, pos.col), Position::new(pos.row, pos.col + 1)),
        None => start_of_sheet,
    }
}

/// A finding as a diagnostic at its cell.
pub fn finding_diagnostic(finding: &Finding) -> Diagnostic {
    let severity = match finding.kind {
        FindingKind::Workbook | FindingKind::MoreFindings => DiagnosticSeverity::INFORMATION,
        _ => DiagnosticSeverity::WARNING,
    };
    let place = finding.place();
    let message = if place.is_empty() {
        finding.message.clone()
    } else {
        format!("{place}: {}", finding.message)
    };
    let kind = kind_name(finding.kind);
    Diagnostic {
        range: finding_range(finding),
        severity: Some(severity),
        code: Some(NumberOrString::String(kind.clone())),
        source: Some(DIAGNOSTIC_SOURCE.into()),
        message,
        data: Some(json!({
            "sheet": finding.sheet,
            "cell": finding.cell,
            "place": place,
            "kind": kind,
            "found": finding.found,
            "action": finding.action,
        })),
        ..Diagnostic::default()
    }
}

/// A diagnostic for a workbook that could not be checked at all.
pub fn failure_diagnostic(message: &str, kind: &str) -> Diagnostic {
    Diagnostic {
        range: Range::new(Position::new(0, 0), Position::new(0, 1)),
        severity: Some(DiagnosticSeverity::ERROR),
        code: Some(NumberOrString::String(kind.into())),
        source: Some(DIAGNOSTIC_SOURCE.into()),
        message: message.to_string(),
        data: Some(json!({ "kind": kind })),
        ..Diagnostic::default()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn sheet_cells_land_at_their_rows_and_columns() {
        let mut sheet = Sheet::new("Conditions");
        sheet.table(
            0,
            0,
            &["condition", "mean"],
            vec![
                vec![Value::text("A"), Value::decimals(1.25, 3)],
                vec![Value::text("B"), Value::Number(f64::NAN, NumberFormat::Decimals(3))],
            ],
        );
        sheet.put(4, 3, Value::p_value(0.01), Look::Plain);
        let table = serde_json::to_value(sheet_table(&sheet)).unwrap_or(Json::Null);
        assert_eq!(table["values"].as_array().map(Vec::len), Some(5));
        assert_eq!(table["values"][0][1], "mean");
        assert_eq!(table["values"][1][1], 1.25);
        assert_eq!(table["numberFormats"][1][1], "0.000");
        assert_eq!(table["values"][2][1], "not defined");
        assert_eq!(table["values"][4][3], 0.01);
        assert_eq!(table["values"][3][0], Json::Null);
        assert_eq!(table["headerRows"], json!([0]));
    }

    #[test]
    fn findings_become_diagnostics_at_their_cells() {
        let finding = Finding {
            kind: FindingKind::TextInNumbers,
            sheet: "Trial".into(),
            cell: Some("C17".into()),
            found: "n/a".into(),
            action: "the value was left out".into(),
            message: "found text 'n/a' in the numbers of 'Gloss'; the value was left out".into(),
        };
        let diagnostic = finding_diagnostic(&finding);
        // C17: zero-based row 16, column 2 (A1 notation: common practice).
        assert_eq!(diagnostic.range.start, Position::new(16, 2));
        assert!(diagnostic.message.starts_with("Trial!C17: "));
        let data = diagnostic.data.unwrap_or_default();
        assert_eq!(data["sheet"], "Trial");
        assert_eq!(data["cell"], "C17");
        assert_eq!(data["kind"], "text-in-numbers");
        let area = Finding {
            cell: Some("B2:D2".into()),
            ..finding
        };
        let range = finding_diagnostic(&area).range;
        assert_eq!((range.start, range.end), (Position::new(1, 1), Position::new(1, 4)));
    }
}
