//! The hostile catalogue, damaged cells in the older binary formats: in an
//! xls (BIFF8, [MS-XLS]) and an xlsb (BIFF12, [MS-XLSB]) workbook, a
//! shared-text index past the table, an error code no spreadsheet defines and
//! a cell record cut short are findings at their cells, and the rest of the
//! table is analysed (the whole workbook used to be refused, naming no cell).
//! Every file is built here from the record layouts; each runs the real
//! program under the address-space cap and must leave the file unchanged.

use std::path::Path;

use workbook_io::testing::{
    biff12_record, biff8_extern_sheet, biff8_name, biff8_record, biff8_self_supbook, ptg_area3d, xls_book_stream,
    xls_file, xls_stream, xlsb_parts, zip_of,
};

use crate::common::{sha256_of, temp_folder, trialyst};
use crate::hostile::{run_capped, STALL_LIMIT};

/// Rows 2..=21 of a two-column trial: Line (upper/lower) and Width (mm), invented.
fn width(row: u16) -> f64 {
    10.0 + f64::from(row % 5) / 10.0
}

/// The damaged cells of both files and words of their findings.
const DAMAGED: [(&str, &str); 3] = [
    ("B3", "entry 99 of a shared-text table of 4"),
    ("B4", "error code 0x55"),
    ("B5", "cut short"),
];

/// Runs the program on `file_name` and checks the findings at the damaged cells.
fn check_findings(folder: &Path, file_name: &str) {
    let path = folder.join(file_name);
    let hash_before = sha256_of(&path);
    let (run, elapsed) = run_capped(folder, file_name);
    run.expect_code(0);
    assert!(elapsed < STALL_LIMIT, "took {elapsed:?}{}", run.report());
    assert!(!run.stderr().contains("panicked"), "{}", run.report());
    let line: serde_json::Value = serde_json::from_str(run.stdout().trim()).expect("one JSON line");
    assert_eq!(line["table"]["n_records"], 20, "{}", run.report());
    let findings = line["findings"].as_array().cloned().unwrap_or_default();
    for (cell, said) in DAMAGED {
        assert!(
            findings.iter().any(|finding| finding["cell"] == cell
                && finding["message"]
                    .as_str()
                    .is_some_and(|message| message.contains("unreadable cell") && message.contains(said))),
            "{file_name}: no finding for {cell}: {findings:#?}"
        );
    }
    // The other 17 widths were analysed: 20 records, 3 values left out.
    assert_eq!(
        line["responses"][0]["assessment"]["checks"]["normality"]["n"],
        17,
        "{}",
        run.report()
    );
    assert_eq!(sha256_of(&path), hash_before, "the file was changed");
}

/// Cell head of a BIFF8 cell record: row, column, cell format 0.
fn xls_head(row: u16, col: u16) -> Vec<u8> {
    let mut body = row.to_le_bytes().to_vec();
    body.extend(col.to_le_bytes());
    body.extend(0u16.to_le_bytes());
    body
}

#[test]
fn damaged_xls_cells_are_findings_at_their_cells() {
    let folder = temp_folder();
    let strings = ["Line", "Width (mm)", "upper", "lower"];
    let label_sst = |row: u16, col: u16, index: u32| {
        let mut body = xls_head(row, col);
        body.extend(index.to_le_bytes());
        biff8_record(0x00FD, &body) // LabelSst (MS-XLS 2.4.149)
    };
    let mut cells = vec![label_sst(0, 0, 0), label_sst(0, 1, 1)];
    for row in 1..=20u16 {
        cells.push(label_sst(row, 0, if row % 2 == 1 { 2 } else { 3 }));
        let mut body = xls_head(row, 1);
        let record = match row {
            2 => label_sst(row, 1, 99),
            3 => {
                body.extend([0x55, 1]); // BoolErr (2.4.24) with an undefined error code
                biff8_record(0x0205, &body)
            }
            4 => {
                body.extend([0u8; 4]); // Number (2.4.180) of 10 bytes, not 14
                biff8_record(0x0203, &body)
            }
            _ => {
                body.extend(width(row + 1).to_le_bytes());
                biff8_record(0x0203, &body)
            }
        };
        cells.push(record);
    }
    let stream = xls_stream(&strings, &cells, None);
    std::fs::write(folder.path().join("damaged.xls"), xls_file(&stream)).expect("written");
    check_findings(folder.path(), "damaged.xls");
}

#[test]
fn damaged_xlsb_cells_are_findings_at_their_cells() {
    let folder = temp_folder();
    // A Cell (MS-XLSB 2.5.9): column, style 0, no flags; then the value.
    let cell = |col: u32, value: &[u8]| {
        let mut body = col.to_le_bytes().to_vec();
        body.extend([0u8; 4]);
        body.extend(value);
        body
    };
    let row_header = |row: u32| {
        let mut body = row.to_le_bytes().to_vec();
        body.extend([0u8; 13]);
        biff12_record(0x0000, &body) // BrtRowHdr (2.4.726)
    };
    let isst = |col: u32, index: u32| biff12_record(0x0007, &cell(col, &index.to_le_bytes())); // BrtCellIsst
    let mut sheet = biff12_record(0x0081, &[]); // BrtBeginSheet
    let mut dimensions = 0u32.to_le_bytes().to_vec();
    dimensions.extend(20u32.to_le_bytes());
    dimensions.extend(0u32.to_le_bytes());
    dimensions.extend(1u32.to_le_bytes());
    sheet.extend(biff12_record(0x0094, &dimensions)); // BrtWsDim
    sheet.extend(biff12_record(0x0091, &[])); // BrtBeginSheetData
    sheet.extend(row_header(0));
    sheet.extend(isst(0, 0));
    sheet.extend(isst(1, 1));
    for row in 1..=20u32 {
        sheet.extend(row_header(row));
        sheet.extend(isst(0, if row % 2 == 1 { 2 } else { 3 }));
        sheet.extend(match row {
            2 => isst(1, 99),
            3 => biff12_record(0x0003, &cell(1, &[0x55])), // BrtCellError, undefined code
            4 => biff12_record(0x0005, &cell(1, &[0u8; 4])), // BrtCellReal of 12 bytes, not 16
            _ => biff12_record(0x0005, &cell(1, &width(row as u16 + 1).to_le_bytes())),
        });
    }
    sheet.extend(biff12_record(0x0092, &[])); // BrtEndSheetData
    sheet.extend(biff12_record(0x0082, &[])); // BrtEndSheet
    let strings = ["Line", "Width (mm)", "upper", "lower"];
    let parts = xlsb_parts(&sheet, &strings);
    std::fs::write(folder.path().join("damaged.xlsb"), zip_of(&parts)).expect("written");
    check_findings(folder.path(), "damaged.xlsb");
}

#[test]
fn a_defined_name_of_a_damaged_xls_chooses_the_table() {
    // Two sheets, each with a trial table: "First" (30 records at A1, with a
    // Number record cut short, so calamine refuses the workbook and the
    // tolerant reader reads it) and "Second" (20 records at C3:D23), which
    // the defined name "Widths" (MS-XLS 2.4.150, PtgArea3d 2.5.198.28 through
    // ExternSheet 2.4.106 and SupBook 2.4.271) stands for.
    let folder = temp_folder();
    let strings = ["Line", "Width (mm)", "upper", "lower"];
    let label_sst = |row: u16, col: u16, index: u32| {
        let mut body = xls_head(row, col);
        body.extend(index.to_le_bytes());
        biff8_record(0x00FD, &body) // LabelSst (2.4.149)
    };
    let number = |row: u16, col: u16, value: f64| {
        let mut body = xls_head(row, col);
        body.extend(value.to_le_bytes());
        biff8_record(0x0203, &body) // Number (2.4.180)
    };
    let table = |top: u16, left: u16, records: u16| {
        let mut cells = vec![label_sst(top, left, 0), label_sst(top, left + 1, 1)];
        for record in 1..=records {
            cells.push(label_sst(top + record, left, 2 + u32::from(record % 2)));
            cells.push(number(top + record, left + 1, width(record)));
        }
        cells
    };
    let mut first = table(0, 0, 30);
    let mut short = xls_head(40, 5);
    short.extend([0u8; 4]); // 10 bytes of a 14-byte Number
    first.push(biff8_record(0x0203, &short));
    let second = table(2, 2, 20);
    let globals = [
        biff8_self_supbook(2),
        biff8_extern_sheet(&[(0, 1, 1)]),
        biff8_name(0, 0, "Widths", &ptg_area3d(0x3B, 0, (2, 22), (2, 3))),
    ];
    let stream = xls_book_stream(&strings, &globals, &[("First", &first), ("Second", &second)], None);
    let path = folder.path().join("named.xls");
    std::fs::write(&path, xls_file(&stream)).expect("written");
    let hash_before = sha256_of(&path);
    let by_name = trialyst(
        folder.path(),
        &["run", "--json", "--no-write", "--range", "Widths", "named.xls"],
    );
    by_name.expect_code(0);
    let line: serde_json::Value = serde_json::from_str(by_name.stdout().trim()).expect("one JSON line");
    assert_eq!(line["table"]["n_records"], 20, "{}", by_name.report());
    assert_eq!(line["table"]["range"], "C3:D23", "{}", by_name.report());
    // Without the name, the larger table (the first sheet's) is analysed.
    let by_default = trialyst(folder.path(), &["run", "--json", "--no-write", "named.xls"]);
    by_default.expect_code(0);
    let line: serde_json::Value = serde_json::from_str(by_default.stdout().trim()).expect("one JSON line");
    assert_eq!(line["table"]["n_records"], 30, "{}", by_default.report());
    // A name the workbook does not hold is refused naming the file and the name.
    let unknown = trialyst(
        folder.path(),
        &["run", "--json", "--no-write", "--range", "Heights", "named.xls"],
    );
    assert_ne!(unknown.code(), 0, "{}", unknown.report());
    let said = unknown.stdout() + &unknown.stderr();
    assert!(
        said.contains("Heights") && said.contains("named.xls"),
        "{}",
        unknown.report()
    );
    assert_eq!(sha256_of(&path), hash_before, "the file was changed");
}
