//! The problems workbook: written beside a workbook that could not be
//! analysed, it says in plain words what is wrong, where (sheet and cell
//! when known) and how to fix it.

use workbook_io::write::{Book, Look, Sheet, Value};

use crate::{standard_cautions, Problem};

/// Column widths in characters: where, what is wrong, how to fix it (wrapped, so that the
/// sheet prints legibly on one page width).
const WIDTHS: [f64; 3] = [22.0, 55.0, 55.0];

/// The problems workbook's sheet name.
pub const SHEET: &str = "What to fix";

/// Builds the problems workbook for `file_name`.
pub fn build_problems_book(file_name: &str, created_at: &str, problems: &[Problem]) -> Book {
    let mut sheet = Sheet::new(SHEET);
    sheet.widths = WIDTHS
        .iter()
        .enumerate()
        .map(|(col, &width)| (col as u16, width))
        .collect();
    sheet.put(
        0,
        0,
        Value::text(format!("{file_name} could not be analysed")),
        Look::Title,
    );
    // Two short note lines (each overflows across the empty cells to its right).
    sheet.put(
        1,
        0,
        Value::text(format!(
            "Checked {}. The workbook itself was not changed.",
            super::readable_time(created_at)
        )),
        Look::Note,
    );
    sheet.put(
        2,
        0,
        Value::text("Fix what is listed below and save the workbook again; it will be analysed anew."),
        Look::Note,
    );
    let rows: Vec<Vec<Value>> = problems
        .iter()
        .map(|problem| {
            vec![
                Value::text(if problem.place.is_empty() {
                    "the whole file".to_string()
                } else {
                    problem.place.clone()
                }),
                Value::text(problem.what.clone()),
                Value::text(problem.fix.clone()),
            ]
        })
        .collect();
    let mut row = sheet.wrapped_table(4, 0, &["Where", "What is wrong", "How to fix it"], rows, &WIDTHS);
    row += 1;
    for caution in standard_cautions() {
        sheet.paragraph(row, 1, caution, Look::Caution, WIDTHS[1]);
        row += 1;
    }
    Book { sheets: vec![sheet] }
}
