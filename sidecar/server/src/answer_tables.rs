//! The result tables of an answer, written straight from the report model.
//!
//! [`to_proto::book_tables`] lays each sheet out as rows of owned values and
//! owned number-format codes (one `String` per cell), which the library
//! then turns into its own value and writes: every table was built twice
//! before it was sent. [`BookTables`] keeps the report model itself and
//! writes the same JSON from it, cell by cell: nothing is copied but a grid
//! of positions, and each sheet's format codes are made once per format.

use serde::ser::{SerializeSeq, SerializeStruct, Serializer};
use serde::Serialize;
use workbook_io::write::{Book, Look, NumberFormat, Sheet, Value};

use crate::to_proto::chart_description;

/// The visible sheets of a results book, serialised as the protocol's
/// result tables (the same JSON as a list of [`crate::to_proto::SheetTable`]).
#[derive(Debug, Clone)]
pub struct BookTables(pub Book);

impl Serialize for BookTables {
    fn serialize<S: Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        // A hidden sheet (the results document) is for programs reading the
        // file; the client already has the results in the answer.
        serializer.collect_seq(self.0.sheets.iter().filter(|sheet| !sheet.hidden).map(SheetView::new))
    }
}

/// One sheet laid out: for each place of the table, the cell written there last.
struct SheetView<'a> {
    sheet: &'a Sheet,
    n_cols: usize,
    /// Index into `sheet.cells` of each place, row by row.
    grid: Vec<Option<usize>>,
    header_rows: Vec<u32>,
    /// Each format of the sheet's finite numbers with its code, made once.
    codes: Vec<(NumberFormat, String)>,
    /// For each cell of `sheet.cells`, the index of its code in `codes`
    /// (`NO_CODE` for the general format).
    cell_codes: Vec<u16>,
}

/// The general format's place in [`SheetView::cell_codes`].
const NO_CODE: u16 = u16::MAX;

impl<'a> SheetView<'a> {
    fn new(sheet: &'a Sheet) -> Self {
        let n_rows = sheet
            .cells
            .iter()
            .map(|placed| placed.row as usize + 1)
            .max()
            .unwrap_or(0);
        let n_cols = sheet
            .cells
            .iter()
            .map(|placed| placed.col as usize + 1)
            .max()
            .unwrap_or(0);
        let mut grid = vec![None; n_rows * n_cols];
        let mut header_rows: Vec<u32> = Vec::new();
        // A sheet has a handful of formats: a short list, searched from the
        // one found last, costs less than hashing every cell.
        let mut codes: Vec<(NumberFormat, String)> = Vec::new();
        let mut cell_codes = Vec::with_capacity(sheet.cells.len());
        let mut last = 0usize;
        for (index, placed) in sheet.cells.iter().enumerate() {
            grid[placed.row as usize * n_cols + placed.col as usize] = Some(index);
            if placed.look == Look::ColumnHeader && header_rows.last() != Some(&placed.row) {
                header_rows.push(placed.row);
            }
            let code = match &placed.value {
                Value::Number(number, format) if number.is_finite() => {
                    if codes.get(last).is_none_or(|(known, _)| known != format) {
                        last = match codes.iter().position(|(known, _)| known == format) {
                            Some(found) => found,
                            None => {
                                codes.push((*format, format.code()));
                                codes.len() - 1
                            }
                        };
                    }
                    u16::try_from(last).unwrap_or(NO_CODE)
                }
                _ => NO_CODE,
            };
            cell_codes.push(code);
        }
        Self {
            sheet,
            n_cols,
            grid,
            header_rows,
            codes,
            cell_codes,
        }
    }

    fn rows(&self) -> impl Iterator<Item = &[Option<usize>]> {
        self.grid.chunks(self.n_cols.max(1))
    }

    fn value(&self, place: Option<usize>) -> Shown<'a> {
        let Some(index) = place else {
            return Shown::Blank;
        };
        match &self.sheet.cells[index].value {
            Value::Text(text) | Value::Link { text, .. } => Shown::Text(text),
            Value::Number(number, _) if number.is_finite() => Shown::Number(*number),
            // As in the results workbook, a number that is not finite is shown in words.
            Value::Number(number, _) => Shown::Text(workbook_io::write::non_finite_in_words(*number)),
            Value::Blank => Shown::Blank,
        }
    }

    fn code(&self, place: Option<usize>) -> &str {
        place
            .and_then(|index| self.cell_codes.get(index))
            .and_then(|&code| self.codes.get(usize::from(code)))
            .map_or(GENERAL, |(_, code)| code.as_str())
    }
}

/// The code of the general number format (`NumberFormat::General.code()`).
const GENERAL: &str = "General";

/// One value as sent: text, a number or nothing.
enum Shown<'a> {
    Text(&'a str),
    Number(f64),
    Blank,
}

impl Serialize for Shown<'_> {
    fn serialize<S: Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        match self {
            Shown::Text(text) => serializer.serialize_str(text),
            Shown::Number(number) => serializer.serialize_f64(*number),
            Shown::Blank => serializer.serialize_unit(),
        }
    }
}

/// The rows of values.
struct Values<'v, 'a>(&'v SheetView<'a>);

impl Serialize for Values<'_, '_> {
    fn serialize<S: Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        let view = self.0;
        let mut rows = serializer.serialize_seq(Some(view.grid.len() / view.n_cols.max(1)))?;
        for row in view.rows() {
            rows.serialize_element(&ValueRow(view, row))?;
        }
        rows.end()
    }
}

struct ValueRow<'v, 'a>(&'v SheetView<'a>, &'v [Option<usize>]);

impl Serialize for ValueRow<'_, '_> {
    fn serialize<S: Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        serializer.collect_seq(self.1.iter().map(|place| self.0.value(*place)))
    }
}

/// The rows of number-format codes.
struct Formats<'v, 'a>(&'v SheetView<'a>);

impl Serialize for Formats<'_, '_> {
    fn serialize<S: Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        let view = self.0;
        let mut rows = serializer.serialize_seq(Some(view.grid.len() / view.n_cols.max(1)))?;
        for row in view.rows() {
            rows.serialize_element(&FormatRow(view, row))?;
        }
        rows.end()
    }
}

struct FormatRow<'v, 'a>(&'v SheetView<'a>, &'v [Option<usize>]);

impl Serialize for FormatRow<'_, '_> {
    fn serialize<S: Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        serializer.collect_seq(self.1.iter().map(|place| self.0.code(*place)))
    }
}

impl Serialize for SheetView<'_> {
    fn serialize<S: Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        // In the order of the keys, as the library's JSON tree writes them:
        // an answer written around the library then needs no reordering.
        let mut table = serializer.serialize_struct("SheetTable", 7)?;
        let charts: Vec<_> = self.sheet.charts.iter().map(chart_description).collect();
        table.serialize_field("charts", &charts)?;
        table.serialize_field("columnWidths", &self.sheet.widths)?;
        table.serialize_field("frozenRows", &self.sheet.frozen_rows)?;
        table.serialize_field("headerRows", &self.header_rows)?;
        table.serialize_field("name", &self.sheet.name)?;
        table.serialize_field("numberFormats", &Formats(self))?;
        table.serialize_field("values", &Values(self))?;
        table.end()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::to_proto::book_tables;
    use workbook_io::write::{Look, Sheet};

    /// The same JSON as the owned tables, value for value, on a real results
    /// book and on a sheet with every kind of value, a hidden sheet, a
    /// cell written twice and an empty sheet.
    #[test]
    fn writes_the_same_json_as_the_owned_tables() {
        let mut sheet = Sheet::new("Kinds");
        sheet.table(
            1,
            0,
            &["condition", "mean"],
            vec![
                vec![Value::text("A"), Value::decimals(1.25, 3)],
                vec![Value::text("B"), Value::Number(f64::NAN, NumberFormat::Decimals(3))],
                vec![
                    Value::Number(f64::INFINITY, NumberFormat::General),
                    Value::Number(f64::NEG_INFINITY, NumberFormat::Integer),
                ],
            ],
        );
        sheet.put(6, 4, Value::p_value(0.01), Look::Plain);
        sheet.put(6, 4, Value::Number(0.5, NumberFormat::Percent(1)), Look::Plain);
        sheet.put(0, 2, Value::Blank, Look::Plain);
        sheet.widths = vec![(0, 12.0), (4, 8.5)];
        sheet.frozen_rows = 2;
        let mut hidden = Sheet::new("Hidden");
        hidden.hidden = true;
        hidden.put(0, 0, Value::text("x"), Look::Plain);
        let book = Book {
            sheets: vec![sheet, Sheet::new("Empty"), hidden],
        };

        // A real results book: the one-way analysis of an invented trial.
        let grid_rows: Vec<Vec<serde_json::Value>> = std::iter::once(serde_json::json!(["Old", "New", "Trial"]))
            .chain((0..12).map(|row| {
                let row = f64::from(row);
                serde_json::json!([
                    10.0 + row * 0.1,
                    10.6 + (row * 0.7).sin(),
                    10.2 + (row * 1.3).cos() * 0.4
                ])
            }))
            .map(|row| row.as_array().cloned().unwrap_or_default())
            .collect();
        let params = serde_json::json!({"cells": grid_rows, "origin": "B2", "sheet": "Trial"});
        let results = crate::tests::analysed_params(&params);
        let results_book = service::report::build_results_book(&results);
        assert!(results_book.sheets.len() >= 3);

        for book in [book, results_book] {
            let owned = serde_json::to_value(book_tables(&book)).expect("owned");
            let direct = serde_json::to_value(BookTables(book)).expect("direct");
            assert_eq!(owned, direct);
            assert!(owned.as_array().is_some_and(|tables| !tables.is_empty()));
        }
    }
}
