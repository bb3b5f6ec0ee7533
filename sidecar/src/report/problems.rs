//! The problems workbook: written beside a workbook that could not be
//! analysed, it says in plain words what is wrong, where (sheet and cell
//! when known) and how to fix it.

use workbook_io::write::{Book, Look, Sheet, Value};

use crate::service::{standard_cautions, Problem};

/// The problems workbook's sheet name.
pub const SHEET: &str = "What to fix";

/// Builds the problems workbook for `file_name`.
pub fn build_problems_book(file_name: &str, created_at: &str, problems: &[Problem]) -> Book {
    let mut sheet = Sheet::new(SHEET);
    sheet.widths = vec![(0, 22.0), (1, 60.0), (2, 60.0)];
    sheet.put(
        0,
        0,
        Value::text(format!("{file_name} could not be analysed")),
        Look::Title,
    );
    sheet.put(
        1,
        0,
        Value::text(format!(
            "Checked {created_at}. Fix what is listed below and save the workbook again; it will be analysed anew. The workbook itself was not changed."
        )),
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
    let mut row = sheet.table(3, 0, &["Where", "What is wrong", "How to fix it"], rows);
    row += 1;
    for caution in standard_cautions() {
        sheet.paragraph(row, 1, caution, Look::Caution, 60.0);
        row += 1;
    }
    Book { sheets: vec![sheet] }
}
