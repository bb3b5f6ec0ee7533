//! The tolerant xlsb reader against calamine: on a sound sheet both read the
//! same cells; on a sheet calamine stops at one damaged cell record, the
//! tolerant reader makes that cell an unreadable cell at its address and reads
//! every other cell as calamine reads the sound file. Records are built from
//! their layouts in [MS-XLSB] (section numbers beside each).

use std::path::Path;

use super::xls_cells_tests::{compare_with_sound, listed};
use super::{open_workbook, GridBuilder, ReadLimits, SheetGrid};
use crate::cell::{CellPos, CellValue};
use crate::testing::{biff12_record as record, biff12_wide as wide};

/// A Cell (2.5.9): column, style 0 and no flags.
fn cell(col: u32, value: &[u8]) -> Vec<u8> {
    let mut body = col.to_le_bytes().to_vec();
    body.extend([0u8; 4]);
    body.extend(value);
    body
}

/// The formula trailer of the BrtFmla* records: flags, an empty CellParsedFormula.
fn trailer() -> Vec<u8> {
    let mut bytes = 0u16.to_le_bytes().to_vec();
    bytes.extend(0u32.to_le_bytes());
    bytes.extend(0u32.to_le_bytes());
    bytes
}

fn row_header(row: u32) -> Vec<u8> {
    let mut body = row.to_le_bytes().to_vec();
    body.extend([0u8; 13]);
    record(0x0000, &body)
}

const STRINGS: [&str; 4] = ["Line", "Width (mm)", "upper", "lower"];

/// The sound sheet's records, one per entry; the row headers are entries too.
fn sound_records() -> Vec<Vec<u8>> {
    let mut fmla_num = 3.75f64.to_le_bytes().to_vec();
    fmla_num.extend(trailer());
    let mut fmla_string = wide("made");
    fmla_string.extend(trailer());
    let mut fmla_bool = vec![1u8];
    fmla_bool.extend(trailer());
    vec![
        row_header(0),
        record(0x0007, &cell(0, &0u32.to_le_bytes())), // BrtCellIsst (2.4.309)
        record(0x0007, &cell(1, &1u32.to_le_bytes())),
        record(0x0006, &cell(2, &wide("Note"))), // BrtCellSt (2.4.314)
        row_header(1),
        record(0x0007, &cell(0, &2u32.to_le_bytes())),
        record(0x0005, &cell(1, &10.25f64.to_le_bytes())), // BrtCellReal (2.4.311)
        record(0x0002, &cell(2, &((7u32 << 2) | 2).to_le_bytes())), // BrtCellRk (2.4.310)
        row_header(2),
        record(0x0007, &cell(0, &3u32.to_le_bytes())),
        record(0x0002, &cell(1, &0x4023_0000u32.to_le_bytes())),
        record(0x0002, &cell(2, &((1234u32 << 2) | 3).to_le_bytes())),
        row_header(3),
        record(0x0004, &cell(0, &[1])),      // BrtCellBool (2.4.305)
        record(0x0003, &cell(1, &[0x2A])),   // BrtCellError (2.4.307): #N/A
        record(0x0009, &cell(2, &fmla_num)), // BrtFmlaNum (2.4.683)
        row_header(4),
        record(0x0008, &cell(0, &fmla_string)), // BrtFmlaString (2.4.684)
        record(0x000A, &cell(1, &fmla_bool)),   // BrtFmlaBool (2.4.681)
        record(0x0005, &cell(2, &1.5f64.to_le_bytes())),
    ]
}

/// A sheet part: BrtBeginSheet, BrtWsDim (2.4.853), BrtBeginSheetData, the
/// cell records, then the end records unless `cut` ends the part inside a record.
fn sheet_part(cells: &[Vec<u8>], cut: Option<Vec<u8>>) -> Vec<u8> {
    let mut part = record(0x0081, &[]);
    let mut dimensions = 0u32.to_le_bytes().to_vec();
    dimensions.extend(4u32.to_le_bytes());
    dimensions.extend(0u32.to_le_bytes());
    dimensions.extend(2u32.to_le_bytes());
    part.extend(record(0x0094, &dimensions));
    part.extend(record(0x0091, &[]));
    for cell in cells {
        part.extend(cell);
    }
    match cut {
        Some(partial) => part.extend(partial),
        None => {
            part.extend(record(0x0092, &[]));
            part.extend(record(0x0082, &[]));
        }
    }
    part
}

/// An xlsb container with one sheet "Trial" holding `sheet` and the shared strings.
fn write_xlsb(path: &Path, sheet: &[u8], strings: &[&str]) {
    let parts = crate::testing::xlsb_parts(sheet, strings);
    std::fs::write(path, crate::testing::zip_of(&parts)).expect("written");
}

/// What calamine's xlsb cell reader gives at `at`: None when it stops,
/// panics or gives no cell there.
fn calamine_reading(path: &Path, at: CellPos) -> Option<String> {
    use calamine::Reader;
    std::panic::catch_unwind(|| {
        let file = std::io::BufReader::new(std::fs::File::open(path).expect("opens"));
        let mut xlsb = calamine::Xlsb::new(file).ok()?;
        let mut reader = xlsb.worksheet_cells_reader("Trial").ok()?;
        let mut found = None;
        loop {
            match reader.next_cell() {
                Ok(Some(cell)) if cell.get_position() == (at.row, at.col) => {
                    found = Some(format!("{:?}", cell.get_value()));
                }
                Ok(Some(_)) => {}
                Ok(None) => return found,
                Err(_) => return None,
            }
        }
    })
    .ok()
    .flatten()
}

fn read(path: &Path) -> SheetGrid {
    let mut workbook = open_workbook(path, &ReadLimits::default()).expect("opened, not refused");
    workbook.read_sheet("Trial", None).expect("read, not refused")
}

#[test]
fn on_a_sound_sheet_the_tolerant_reader_reads_what_calamine_reads() {
    let folder = tempfile::tempdir().expect("temporary folder");
    let path = folder.path().join("sound.xlsb");
    write_xlsb(&path, &sheet_part(&sound_records(), None), &STRINGS);
    assert!(calamine_reading(&path, CellPos::new(1, 1)).is_some());
    let by_calamine = read(&path);
    assert_eq!(by_calamine.cells.len(), 15, "{:?}", listed(&by_calamine));
    let mut builder = GridBuilder::new("Trial", None, 1000);
    let mut source = super::xlsb_cells::SheetSource::open(&path, "Trial", 1 << 20).expect("the sheet's part");
    assert!(!source.calamine_misreads());
    assert!(source.read(&mut builder));
    let ours = builder.finish();
    assert_eq!(listed(&ours), listed(&by_calamine));
    assert_eq!(ours.get(CellPos::new(2, 2)), Some(CellValue::Number(12.34)));
}

fn check_damage(index: usize, damaged: Vec<u8>, cell: &str, said: &str, cut: bool) {
    let folder = tempfile::tempdir().expect("temporary folder");
    let sound_path = folder.path().join("sound.xlsb");
    write_xlsb(&sound_path, &sheet_part(&sound_records(), None), &STRINGS);
    let sound = read(&sound_path);
    let mut records = sound_records();
    let part = if cut {
        records.truncate(index);
        sheet_part(&records, Some(damaged))
    } else {
        records[index] = damaged;
        sheet_part(&records, None)
    };
    let path = folder.path().join("damaged.xlsb");
    write_xlsb(&path, &part, &STRINGS);
    let at = crate::cell::parse_a1(cell).expect("an A1 address");
    // calamine stops at the damaged cell, loses it, or reads a wrong value
    // from the bytes its buffer held before (the record cut short).
    let by_calamine = calamine_reading(&path, at);
    assert!(
        by_calamine.is_none() || by_calamine != calamine_reading(&sound_path, at),
        "{cell}: calamine reads the damaged cell as the sound one"
    );
    compare_with_sound(&sound, &read(&path), at, said);
}

#[test]
fn a_shared_text_index_past_the_table_is_an_unreadable_cell() {
    let damaged = record(0x0007, &cell(1, &99u32.to_le_bytes()));
    check_damage(6, damaged, "B2", "entry 99 of a shared-text table of 4", false);
}

#[test]
fn an_unknown_error_code_is_an_unreadable_cell() {
    check_damage(14, record(0x0003, &cell(1, &[0x55])), "B4", "error code 0x55", false);
}

#[test]
fn a_cell_record_cut_short_is_an_unreadable_cell() {
    // A BrtCellReal of 12 bytes: the value's last four are missing.
    check_damage(
        6,
        record(0x0005, &cell(1, &[0u8; 4])),
        "B2",
        "cut short (12 of 16 bytes)",
        false,
    );
}

#[test]
fn a_record_cut_by_the_end_of_the_part_is_an_unreadable_cell() {
    let mut partial = record(0x0005, &cell(2, &1.5f64.to_le_bytes()));
    partial.truncate(partial.len() - 4);
    check_damage(19, partial, "C5", "where the part ends", true);
}

#[test]
fn a_formula_with_an_error_result_is_read_not_lost() {
    // BrtFmlaError (2.4.682): a Cell, the error code (0x07, #DIV/0!), flags, formula.
    let mut value = vec![0x07u8];
    value.extend(trailer());
    let mut records = sound_records();
    records[15] = record(0x000B, &cell(2, &value));
    let folder = tempfile::tempdir().expect("temporary folder");
    let path = folder.path().join("division.xlsb");
    write_xlsb(&path, &sheet_part(&records, None), &STRINGS);
    assert_eq!(
        calamine_reading(&path, CellPos::new(3, 2)),
        None,
        "calamine passes the cell over"
    );
    let grid = read(&path);
    match grid.get(CellPos::new(3, 2)) {
        Some(CellValue::Error(text)) => assert_eq!(grid.text(text), "#DIV/0!"),
        other => panic!("C4: {other:?}"),
    }
    assert_eq!(grid.cells.len(), 15);
}
