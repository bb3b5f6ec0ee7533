//! The tolerant xls reader against calamine: on an undamaged workbook both
//! read the same cells; on a workbook calamine refuses for one cell, the
//! tolerant reader makes that cell an unreadable cell at its address and
//! reads every other cell as calamine reads the undamaged file. The records
//! are built from their layouts in [MS-XLS] (section numbers beside each).

use std::path::Path;

use super::xls_cells::XlsBook;
use super::{open_workbook, GridBuilder, ReadLimits, SheetGrid};
use crate::cell::{CellPos, CellValue};
use crate::testing::{biff8_record as record, xls_stream};

fn head(row: u16, col: u16) -> Vec<u8> {
    let mut body = row.to_le_bytes().to_vec();
    body.extend(col.to_le_bytes());
    body.extend(0u16.to_le_bytes()); // XF 0: General
    body
}

/// Number (2.4.180).
fn number(row: u16, col: u16, value: f64) -> Vec<u8> {
    let mut body = head(row, col);
    body.extend(value.to_le_bytes());
    record(0x0203, &body)
}

/// RK (2.4.220).
fn rk(row: u16, col: u16, rk: u32) -> Vec<u8> {
    let mut body = head(row, col);
    body.extend(rk.to_le_bytes());
    record(0x027E, &body)
}

/// MulRk (2.4.175): XF and RK per column, then the last column.
fn mul_rk(row: u16, first: u16, values: &[u32]) -> Vec<u8> {
    let mut body = row.to_le_bytes().to_vec();
    body.extend(first.to_le_bytes());
    for value in values {
        body.extend(0u16.to_le_bytes());
        body.extend(value.to_le_bytes());
    }
    body.extend((first + values.len() as u16 - 1).to_le_bytes());
    record(0x00BD, &body)
}

/// LabelSst (2.4.149).
fn label_sst(row: u16, col: u16, index: u32) -> Vec<u8> {
    let mut body = head(row, col);
    body.extend(index.to_le_bytes());
    record(0x00FD, &body)
}

/// Label (2.4.148) with an XLUnicodeString of one-byte characters.
fn label(row: u16, col: u16, text: &str) -> Vec<u8> {
    let mut body = head(row, col);
    body.extend((text.len() as u16).to_le_bytes());
    body.push(0);
    body.extend(text.as_bytes());
    record(0x0204, &body)
}

/// BoolErr (2.4.24): value, then 0 for TRUE/FALSE or 1 for an error code.
fn bool_err(row: u16, col: u16, value: u8, is_error: bool) -> Vec<u8> {
    let mut body = head(row, col);
    body.extend([value, u8::from(is_error)]);
    record(0x0205, &body)
}

/// Formula (2.4.127) with its cached value (2.5.133) and a one-token formula (ptgInt 1).
fn formula(row: u16, col: u16, value: [u8; 8]) -> Vec<u8> {
    let mut body = head(row, col);
    body.extend(value);
    body.extend(0u16.to_le_bytes()); // grbit
    body.extend(0u32.to_le_bytes()); // chn
    body.extend(3u16.to_le_bytes()); // cce
    body.extend([0x1E, 1, 0]); // ptgInt 1
    record(0x0006, &body)
}

/// String (2.4.268): a formula's text result.
fn string(text: &str) -> Vec<u8> {
    let mut body = (text.len() as u16).to_le_bytes().to_vec();
    body.push(0);
    body.extend(text.as_bytes());
    record(0x0207, &body)
}

fn write_xls(path: &Path, stream: &[u8]) {
    std::fs::write(path, crate::testing::xls_file(stream)).expect("written");
}

const STRINGS: [&str; 4] = ["Line", "Width (mm)", "upper", "lower"];

/// The undamaged sheet, one record per entry; entries are replaced by damaged ones below.
fn sound_cells() -> Vec<Vec<u8>> {
    vec![
        label_sst(0, 0, 0),
        label_sst(0, 1, 1),
        label(0, 2, "Note"),
        label_sst(1, 0, 2),
        number(1, 1, 10.25),
        rk(1, 2, (7 << 2) | 2), // RK integer 7
        label_sst(2, 0, 3),
        // B3 9.5 as the high half of a double, C3 12.34 as the integer 1234 / 100.
        mul_rk(2, 1, &[0x4023_0000, (1234 << 2) | 3]),
        bool_err(3, 0, 1, false),
        bool_err(3, 1, 0x2A, true),
        formula(3, 2, 3.75f64.to_le_bytes()),
        formula(4, 0, [0, 0, 0, 0, 0, 0, 0xFF, 0xFF]),
        string("made"),
        formula(4, 1, [1, 0, 1, 0, 0, 0, 0xFF, 0xFF]),
        number(4, 2, 1.5),
    ]
}

/// Whether calamine refuses the workbook or leaves out the cell at `cell`.
fn calamine_refuses_or_loses(stream: &[u8], cell: CellPos) -> bool {
    let folder = tempfile::tempdir().expect("temporary folder");
    let path = folder.path().join("probe.xls");
    write_xls(&path, stream);
    let file = std::fs::File::open(&path).expect("opens");
    use calamine::Reader;
    std::panic::catch_unwind(|| match calamine::Xls::new(std::io::BufReader::new(file)) {
        Err(_) => true,
        Ok(mut xls) => xls.worksheet_range("Trial").map_or(true, |range| {
            // A dense range holds Empty where no cell was read.
            !matches!(range.get_value((cell.row, cell.col)), Some(value) if *value != calamine::Data::Empty)
        }),
    })
    .unwrap_or(true)
}

fn read(stream: &[u8]) -> SheetGrid {
    let folder = tempfile::tempdir().expect("temporary folder");
    let path = folder.path().join("trial.xls");
    write_xls(&path, stream);
    let mut workbook = open_workbook(&path, &ReadLimits::default()).expect("opened, not refused");
    assert_eq!(workbook.sheets().len(), 1);
    workbook.read_sheet("Trial", None).expect("read, not refused")
}

/// A value in words that do not depend on the string pool's order.
pub(super) fn shown(grid: &SheetGrid, value: CellValue) -> String {
    match value {
        CellValue::Text(index) => format!("text {}", grid.text(index)),
        CellValue::Error(index) => format!("error {}", grid.text(index)),
        other => format!("{other:?}"),
    }
}

pub(super) fn listed(grid: &SheetGrid) -> Vec<(String, String)> {
    grid.cells
        .iter()
        .map(|(pos, value)| (pos.a1(), shown(grid, *value)))
        .collect()
}

#[test]
fn on_a_sound_workbook_the_tolerant_reader_reads_what_calamine_reads() {
    let stream = xls_stream(&STRINGS, &sound_cells(), None);
    assert!(
        !calamine_refuses_or_loses(&stream, CellPos::new(1, 1)),
        "the sound stream must open in calamine"
    );
    let by_calamine = read(&stream);
    assert_eq!(by_calamine.cells.len(), 15, "{:?}", listed(&by_calamine));
    let book = XlsBook::from_stream(stream).expect("globals read");
    let mut builder = GridBuilder::new("Trial", None, 1000);
    book.read_sheet(0, &mut builder).expect("under the cap");
    let ours = builder.finish();
    assert_eq!(listed(&ours), listed(&by_calamine));
    // Spot values from the record layouts (RK 2.5.218: integer 1234 with the /100 flag).
    assert_eq!(ours.get(CellPos::new(2, 2)), Some(CellValue::Number(12.34)));
    assert_eq!(ours.get(CellPos::new(2, 1)), Some(CellValue::Number(9.5)));
}

/// Replaces sound record `index` (or, with `cut`, ends the stream with a
/// partial record instead of the last cell) and checks the damaged cell and
/// every other cell against calamine's reading of the sound workbook.
fn check_damage(index: usize, damaged: Vec<u8>, cell: &str, said: &str, cut: bool) {
    let sound = read(&xls_stream(&STRINGS, &sound_cells(), None));
    let mut cells = sound_cells();
    let stream = if cut {
        cells.truncate(index);
        xls_stream(&STRINGS, &cells, Some(damaged))
    } else {
        cells[index] = damaged;
        xls_stream(&STRINGS, &cells, None)
    };
    let at = crate::cell::parse_a1(cell).expect("an A1 address");
    assert!(
        calamine_refuses_or_loses(&stream, at),
        "{cell}: calamine must refuse the damaged workbook or lose the cell"
    );
    compare_with_sound(&sound, &read(&stream), at, said);
}

/// The cell at `at` of `grid` is an unreadable cell whose description holds
/// `said`; every other cell of `sound` is in `grid` with the same value.
pub(super) fn compare_with_sound(sound: &SheetGrid, grid: &SheetGrid, at: CellPos, said: &str) {
    let mut compared = 0;
    for (pos, value) in &sound.cells {
        let found = grid.get(*pos);
        if *pos == at {
            match found {
                Some(CellValue::Error(text)) => {
                    let text = grid.text(text);
                    assert!(!text.starts_with('#') && text.contains(said), "{}: {text}", at.a1());
                }
                other => panic!("{}: {other:?}", at.a1()),
            }
        } else {
            let found = found.unwrap_or_else(|| panic!("{} was lost", pos.a1()));
            assert_eq!(shown(grid, found), shown(sound, *value), "{}", pos.a1());
            compared += 1;
        }
    }
    assert_eq!(compared, sound.cells.len() - 1);
}

#[test]
fn a_shared_text_index_past_the_table_is_an_unreadable_cell() {
    check_damage(
        4,
        label_sst(1, 1, 99),
        "B2",
        "entry 99 of a shared-text table of 4",
        false,
    );
}

#[test]
fn an_unknown_error_code_is_an_unreadable_cell() {
    check_damage(9, bool_err(3, 1, 0x55, true), "B4", "error code 0x55", false);
}

#[test]
fn a_cell_record_cut_short_is_an_unreadable_cell() {
    // A Number record of 10 bytes: the value's last four are missing.
    let mut short = head(1, 1);
    short.extend([0u8; 4]);
    check_damage(4, record(0x0203, &short), "B2", "cut short (10 of 14 bytes)", false);
}

#[test]
fn a_formula_result_of_no_known_kind_is_an_unreadable_cell() {
    check_damage(
        10,
        formula(3, 2, [7, 0, 0, 0, 0, 0, 0xFF, 0xFF]),
        "C4",
        "of kind 7",
        false,
    );
}

#[test]
fn a_record_cut_by_the_end_of_the_file_is_an_unreadable_cell() {
    // The last cell's record declares 14 bytes; the stream ends after 10.
    let mut partial = number(4, 2, 1.5);
    partial.truncate(4 + 10);
    check_damage(14, partial, "C5", "where the file ends", true);
}

#[test]
fn hostile_counts_and_lengths_cost_nothing() {
    // An SST claiming 2^32-1 strings in 8 bytes, a MulRk whose last column
    // lies before its first, a Label claiming 65,535 characters: read without
    // allocating from the counts, each cell that cannot be read is unreadable.
    let mut sst = u32::MAX.to_le_bytes().to_vec();
    sst.extend(u32::MAX.to_le_bytes());
    let mut bad_mulrk = 3u16.to_le_bytes().to_vec();
    bad_mulrk.extend(5u16.to_le_bytes());
    bad_mulrk.extend([0, 0, 2, 0, 0, 0]);
    bad_mulrk.extend(1u16.to_le_bytes());
    let mut long_label = head(4, 0);
    long_label.extend(u16::MAX.to_le_bytes());
    long_label.extend([0, b'x']);
    let mut stream = xls_stream(
        &[],
        &[
            number(0, 0, 1.0),
            record(0x00BD, &bad_mulrk),
            record(0x0204, &long_label),
        ],
        None,
    );
    // Put the hostile SST in place of the empty one (its header follows the globals' BOF).
    let at = 4 + 16;
    let empty_sst_len = 4 + 8;
    let hostile = record(0x00FC, &sst);
    assert_eq!(hostile.len(), empty_sst_len);
    stream.splice(at..at + empty_sst_len, hostile);
    let book = XlsBook::from_stream(stream).expect("globals read");
    let mut builder = GridBuilder::new("Trial", None, 1000);
    book.read_sheet(0, &mut builder).expect("under the cap");
    let grid = builder.finish();
    assert_eq!(grid.get(CellPos::new(0, 0)), Some(CellValue::Number(1.0)));
    assert_eq!(grid.get(CellPos::new(3, 5)), Some(CellValue::Number(0.0)));
    for pos in [CellPos::new(3, 6), CellPos::new(4, 0)] {
        match grid.get(pos) {
            Some(CellValue::Error(text)) => assert!(grid.text(text).starts_with("a damaged"), "{}", grid.text(text)),
            other => panic!("{}: {other:?}", pos.a1()),
        }
    }
}
