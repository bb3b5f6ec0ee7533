//! The power workbook's tables: each row of values stands clear of its header's border
//! (rows a little taller than their text, values at the foot). The print check on the
//! xlsx catches the layout that printed badly (top-aligned values in default-height rows
//! right under the header) and passes what `trialyst size` writes.

use workbook_io::write::{write_book, Book, Sheet, Value, SPACED_ROW_HEIGHT};

use crate::common::print_check::print_problems;
use crate::common::{temp_folder, trialyst, zip_entry_text};

fn power_like_sheet(spaced: bool) -> Book {
    let mut sheet = Sheet::new("Power and runs");
    sheet.widths = vec![(0, 30.0), (1, 16.0)];
    let rows = (2..6)
        .map(|count| vec![Value::integer(f64::from(count)), Value::number(0.1 * f64::from(count))])
        .collect();
    if spaced {
        sheet.spaced_table(0, 0, &["runs per condition", "power"], rows);
    } else {
        sheet.table(0, 0, &["runs per condition", "power"], rows);
    }
    Book { sheets: vec![sheet] }
}

#[test]
fn the_print_check_catches_values_drawn_against_the_header_and_passes_spaced_rows() {
    let folder = temp_folder();
    let tight = folder.path().join("tight.xlsx");
    write_book(&power_like_sheet(false), &tight).expect("written");
    let problems = print_problems(&tight);
    assert!(
        problems
            .iter()
            .any(|p| p.contains("A2, right under a column header, is top-aligned")),
        "{problems:?}"
    );
    let spaced = folder.path().join("spaced.xlsx");
    write_book(&power_like_sheet(true), &spaced).expect("written");
    assert_eq!(print_problems(&spaced), Vec::<String>::new());
}

#[test]
fn the_power_workbook_rows_stand_clear_of_their_headers() {
    let folder = temp_folder();
    // `trialyst` runs the print checks (the spaced-row check included) on what it writes.
    trialyst(
        folder.path(),
        &[
            "size",
            "--conditions",
            "4",
            "--difference",
            "2",
            "--sd",
            "1.5",
            "--out",
            "power.xlsx",
        ],
    )
    .expect_code(0);
    let xml = zip_entry_text(&folder.path().join("power.xlsx"), "xl/worksheets/sheet1.xml");
    // Every row of the two tables (7 answers and 20 counts) carries the spaced height.
    let spaced_rows = xml.matches(&format!("ht=\"{SPACED_ROW_HEIGHT}\"")).count();
    assert!(spaced_rows >= 27, "{spaced_rows} spaced rows");
}
