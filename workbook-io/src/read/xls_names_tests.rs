//! Defined names read by the tolerant xls reader. Every workbook is built
//! from the record layouts of [MS-XLS] (section numbers beside each): Lbl
//! 2.4.150, ExternSheet 2.4.106, SupBook 2.4.271, PtgRef3d 2.5.198.85,
//! PtgArea3d 2.5.198.28, ColRelNegU 2.5.50. On a sound workbook the names
//! resolve to the ranges calamine gives them; on one calamine refuses, the
//! tolerant reader gives the same ranges, and a name it cannot resolve is
//! passed over without a refusal or a panic.

use std::path::Path;

use super::xls_cells::XlsBook;
use super::xls_names::defined_name;
use super::{open_workbook, ReadLimits, Workbook};
use crate::cell::{parse_a1_range, CellRect};
use crate::testing::{
    biff8_extern_sheet, biff8_name, biff8_record as record, biff8_self_supbook, ptg_area3d, xls_book_stream, xls_file,
};

/// A Number record (2.4.180) at a cell, cell format 0.
fn number(row: u16, col: u16, value: f64) -> Vec<u8> {
    let mut body = row.to_le_bytes().to_vec();
    body.extend(col.to_le_bytes());
    body.extend(0u16.to_le_bytes());
    body.extend(value.to_le_bytes());
    record(0x0203, &body)
}

/// A Number record cut to 10 of its 14 bytes: calamine refuses the workbook for it.
fn number_cut_short(row: u16, col: u16) -> Vec<u8> {
    let mut short = number(row, col, 1.0);
    short.truncate(4 + 10);
    short[2..4].copy_from_slice(&10u16.to_le_bytes());
    short
}

/// A PtgRef3d (2.5.198.85) of class `ptg`: XTI index, row, column field.
fn ptg_ref3d(ptg: u8, xti: u16, row: u16, column: u16) -> Vec<u8> {
    let mut formula = vec![ptg];
    for field in [xti, row, column] {
        formula.extend(field.to_le_bytes());
    }
    formula
}

/// A workbook of three sheets ("Notes", the chart-free worksheets "Line A"
/// and "Line's B"), whose first worksheet holds `first_cells`, with the
/// SupBook of this workbook (book 0), an external-looking SupBook (book 1)
/// and `names`. XTI entries: 0 → sheet 0, 1 → sheet 1, 2 → sheet 2,
/// 3 → sheets 1 to 2, 4 → book 1's sheet 0, 5 → sheet 9 (not there).
fn stream_with_names(first_cells: &[Vec<u8>], names: &[Vec<u8>]) -> Vec<u8> {
    // An external SupBook (2.4.271): one sheet, a virtual path of one character, a sheet name.
    let mut external = 1u16.to_le_bytes().to_vec();
    external.extend(1u16.to_le_bytes());
    external.extend([0u8, b'x']);
    external.extend(1u16.to_le_bytes());
    external.extend([0u8, b'S']);
    let mut globals = vec![biff8_self_supbook(3), record(0x01AE, &external)];
    globals.push(biff8_extern_sheet(&[
        (0, 0, 0),
        (0, 1, 1),
        (0, 2, 2),
        (0, 1, 2),
        (1, 0, 0),
        (0, 9, 9),
    ]));
    globals.extend_from_slice(names);
    let second = [number(0, 0, 2.5), number(3, 2, 4.0)];
    let third = [number(1, 1, 7.0)];
    xls_book_stream(
        &[],
        &globals,
        &[("Notes", first_cells), ("Line A", &second), ("Line's B", &third)],
        None,
    )
}

fn open(folder: &Path, stream: &[u8]) -> Workbook {
    let path = folder.join("named.xls");
    std::fs::write(&path, xls_file(stream)).expect("written");
    open_workbook(&path, &ReadLimits::default()).expect("opened, not refused")
}

fn rect(a1: &str) -> CellRect {
    parse_a1_range(a1).expect("an A1 range")
}

#[test]
fn each_reference_form_gives_its_range_in_both_readers() {
    // Absolute references (no offset bits in the column field).
    let names = [
        biff8_name(0, 0, "RefRef", &ptg_ref3d(0x3A, 1, 3, 2)),
        biff8_name(0, 0, "RefValue", &ptg_ref3d(0x5A, 2, 1, 1)),
        biff8_name(0, 0, "RefArray", &ptg_ref3d(0x7A, 1, 0, 0)),
        biff8_name(0, 0, "AreaRef", &ptg_area3d(0x3B, 1, (0, 9), (0, 2))),
        biff8_name(0, 0, "AreaValue", &ptg_area3d(0x5B, 2, (4, 1), (3, 1))),
        biff8_name(0, 0, "AreaArray", &ptg_area3d(0x7B, 0, (0, 65_535), (0, 255))),
    ];
    let expected = [
        ("RefRef", "Line A", "C4"),
        ("RefValue", "Line's B", "B2"),
        ("RefArray", "Line A", "A1"),
        ("AreaRef", "Line A", "A1:C10"),
        // Corners in either order make the same rectangle.
        ("AreaValue", "Line's B", "B2:D5"),
        ("AreaArray", "Notes", "A1:IV65536"),
    ];
    let folder = tempfile::tempdir().expect("temporary folder");
    let sound = stream_with_names(&[number(0, 0, 1.0)], &names);
    let damaged = stream_with_names(&[number(0, 0, 1.0), number_cut_short(1, 0)], &names);
    let mut by_calamine = open(folder.path(), &sound);
    let book = XlsBook::from_stream(damaged.clone()).expect("globals read");
    assert_eq!(book.names.len(), expected.len(), "{:?}", book.names);
    let mut by_ours = open(folder.path(), &damaged);
    // The damaged workbook is the tolerant reader's: calamine refuses it.
    use calamine::Reader;
    let calamine_opens = std::fs::File::open(folder.path().join("named.xls"))
        .map(|file| calamine::Xls::new(std::io::BufReader::new(file)).is_ok())
        .expect("opens");
    assert!(!calamine_opens, "calamine must refuse the damaged workbook");
    for (name, sheet, range) in expected {
        let want = (Some(sheet.to_string()), rect(range));
        let ours = by_ours.resolve_range(name, None).expect("resolved");
        assert_eq!(ours, want, "{name}");
        // Names are looked up as spreadsheets look them up, without regard to case.
        let lower = by_ours.resolve_range(&name.to_lowercase(), None).expect("resolved");
        assert_eq!(lower, want, "{name} in lower case");
        assert_eq!(
            by_calamine.resolve_range(name, None).expect("resolved"),
            want,
            "{name} by calamine"
        );
    }
    // The named range reads the cells of its sheet.
    let (sheet, window) = by_ours.resolve_range("AreaRef", None).expect("resolved");
    let grid = by_ours
        .read_sheet(sheet.as_deref().expect("a sheet"), Some(window))
        .expect("read");
    assert_eq!(grid.cells.len(), 2);
}

#[test]
fn names_that_stand_for_no_range_of_this_workbook_are_passed_over() {
    let area = |xti: u16| ptg_area3d(0x3B, xti, (0, 4), (0, 1));
    let mut two_tokens = area(1);
    two_tokens.push(0x15); // PtgParen (2.5.198.80) after the area: a formula, not a reference
    let names = [
        biff8_name(0, 0, "Kept", &area(1)),
        // Built-in (fBuiltin), a macro (fFunc and fProc), a VBA procedure (fOB and fProc).
        biff8_name(0x0020, 0, "\u{7}", &area(1)),
        biff8_name(0x000A, 0, "Macro", &area(1)),
        biff8_name(0x000C, 0, "Procedure", &area(1)),
        // XTI entries: several sheets, another workbook, a sheet that is not there, no entry.
        biff8_name(0, 0, "ThreeD", &area(3)),
        biff8_name(0, 0, "Elsewhere", &area(4)),
        biff8_name(0, 0, "Gone", &area(5)),
        biff8_name(0, 0, "NoEntry", &area(6)),
        biff8_name(0, 0, "Longer", &two_tokens),
        // Offsets from the evaluating cell (column field bits 14 and 15).
        biff8_name(0, 0, "ColumnOffset", &ptg_ref3d(0x3A, 1, 0, 0x4002)),
        biff8_name(0, 0, "RowOffset", &ptg_ref3d(0x3A, 1, 0, 0x8002)),
        // A column past IV, the last of the format.
        biff8_name(0, 0, "Wide", &ptg_area3d(0x3B, 1, (0, 1), (0, 256))),
        // PtgRefErr3d (2.5.198.86): a reference to a deleted range.
        biff8_name(0, 0, "Deleted", &[0x3C, 1, 0, 0, 0, 0, 0]),
        // An empty formula and an empty name.
        biff8_name(0, 0, "Empty", &[]),
        biff8_name(0, 0, "", &area(1)),
    ];
    let damaged = stream_with_names(&[number_cut_short(1, 0)], &names);
    let book = XlsBook::from_stream(damaged.clone()).expect("globals read");
    assert_eq!(book.names, [("Kept".to_string(), "'Line A'!A1:B5".to_string())]);
    let folder = tempfile::tempdir().expect("temporary folder");
    let mut workbook = open(folder.path(), &damaged);
    assert!(workbook.resolve_range("Kept", None).is_ok());
    for name in [
        "Macro",
        "ThreeD",
        "Elsewhere",
        "Gone",
        "NoEntry",
        "Longer",
        "ColumnOffset",
        "Wide",
    ] {
        let refused = workbook.resolve_range(name, None).expect_err(name).to_string();
        assert!(refused.contains(name) && refused.contains("named.xls"), "{refused}");
    }
}

#[test]
fn workbook_names_come_before_names_of_one_sheet() {
    let names = [
        biff8_name(0, 2, "Span", &ptg_area3d(0x3B, 2, (0, 1), (0, 0))),
        biff8_name(0, 0, "Span", &ptg_area3d(0x3B, 1, (0, 2), (0, 0))),
    ];
    let book = XlsBook::from_stream(stream_with_names(&[], &names)).expect("globals read");
    assert_eq!(
        book.names,
        [
            ("Span".to_string(), "'Line A'!A1:A3".to_string()),
            ("Span".to_string(), "'Line''s B'!A1:A2".to_string()),
        ]
    );
}

#[test]
fn a_name_record_cut_anywhere_gives_no_name_and_no_panic() {
    let whole = biff8_name(0, 0, "Widths", &ptg_area3d(0x5B, 1, (0, 20), (0, 1)));
    let body = &whole[4..];
    assert!(defined_name(body).is_some(), "the whole record is a name");
    for length in 0..body.len() {
        assert_eq!(defined_name(&body[..length]), None, "cut to {length} bytes");
    }
    // Counts that claim more than is there: 255 characters of name, 65,535 bytes of formula.
    let mut long_name = body.to_vec();
    long_name[3] = 255;
    assert_eq!(defined_name(&long_name), None);
    let mut long_formula = body.to_vec();
    long_formula[4..6].copy_from_slice(&u16::MAX.to_le_bytes());
    assert_eq!(defined_name(&long_formula), None);
    // Two-byte characters (the flags byte after the header, 2.5.296).
    let mut wide = body[..14].to_vec();
    wide.push(1);
    for unit in "Wäge".encode_utf16() {
        wide.extend(unit.to_le_bytes());
    }
    wide[3] = 4;
    wide.extend(&body[15 + "Widths".len()..]);
    assert_eq!(defined_name(&wide).map(|found| found.name), Some("Wäge".to_string()));
    // A cut name record and hostile ExternSheet counts in a whole workbook:
    // the globals are read, the other name resolves, nothing is refused.
    let mut cut = record(0x0018, &body[..20]);
    cut.extend(biff8_name(0, 0, "Kept", &ptg_area3d(0x3B, 0, (0, 0), (0, 0))));
    let hostile_extern = record(0x0017, &[0xFF, 0xFF, 0, 0, 0, 0, 0]);
    let stream = xls_book_stream(
        &[],
        &[
            biff8_self_supbook(1),
            hostile_extern,
            biff8_extern_sheet(&[(0, 0, 0)]),
            cut,
        ],
        &[("Only", &[number(0, 0, 1.0)])],
        None,
    );
    let book = XlsBook::from_stream(stream).expect("globals read");
    assert_eq!(book.names, [("Kept".to_string(), "'Only'!A1".to_string())]);
}
