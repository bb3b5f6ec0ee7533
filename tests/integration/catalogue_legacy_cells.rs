//! The hostile catalogue, damaged cells in the older binary formats: in an
//! xls (BIFF8, [MS-XLS]) and an xlsb (BIFF12, [MS-XLSB]) workbook, a
//! shared-text index past the table, an error code no spreadsheet defines and
//! a cell record cut short are findings at their cells, and the rest of the
//! table is analysed (the whole workbook used to be refused, naming no cell).
//! Every file is built here from the record layouts; each runs the real
//! program under the address-space cap and must leave the file unchanged.

use std::path::Path;

use crate::common::{sha256_of, temp_folder};
use crate::hostile::{biff_record, run_capped, write_compound, write_zip, STALL_LIMIT};

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
        biff_record(0x00FD, &body) // LabelSst (MS-XLS 2.4.149)
    };
    let mut cells = vec![label_sst(0, 0, 0), label_sst(0, 1, 1)];
    for row in 1..=20u16 {
        cells.push(label_sst(row, 0, if row % 2 == 1 { 2 } else { 3 }));
        let mut body = xls_head(row, 1);
        let record = match row {
            2 => label_sst(row, 1, 99),
            3 => {
                body.extend([0x55, 1]); // BoolErr (2.4.24) with an undefined error code
                biff_record(0x0205, &body)
            }
            4 => {
                body.extend([0u8; 4]); // Number (2.4.180) of 10 bytes, not 14
                biff_record(0x0203, &body)
            }
            _ => {
                body.extend(width(row + 1).to_le_bytes());
                biff_record(0x0203, &body)
            }
        };
        cells.push(record);
    }
    // Globals: BOF, SST (2.4.265), BoundSheet8 (2.4.28), EOF; then the sheet.
    let bof = |dt: u16| {
        let mut body = 0x0600u16.to_le_bytes().to_vec();
        body.extend(dt.to_le_bytes());
        body.extend([0u8; 12]);
        biff_record(0x0809, &body)
    };
    let mut sst = (strings.len() as u32).to_le_bytes().to_vec();
    sst.extend((strings.len() as u32).to_le_bytes());
    for text in strings {
        sst.extend((text.len() as u16).to_le_bytes());
        sst.push(0);
        sst.extend(text.as_bytes());
    }
    let sst = biff_record(0x00FC, &sst);
    let globals_len = bof(5).len() + sst.len() + (4 + 8 + 5) + 4;
    let mut bound = (globals_len as u32).to_le_bytes().to_vec();
    bound.extend([0u8, 0u8, 5, 0]);
    bound.extend(b"Trial");
    let mut stream = bof(5);
    stream.extend(sst);
    stream.extend(biff_record(0x0085, &bound));
    stream.extend(biff_record(0x000A, &[]));
    assert_eq!(stream.len(), globals_len);
    stream.extend(bof(0x10));
    for cell in cells {
        stream.extend(cell);
    }
    stream.extend(biff_record(0x000A, &[]));
    write_compound(&folder.path().join("damaged.xls"), &[("Workbook", &stream)]);
    check_findings(folder.path(), "damaged.xls");
}

/// One BIFF12 record (MS-XLSB 2.1.4): type and size as base-128 numbers, then the body.
fn xlsb_record(kind: u16, body: &[u8]) -> Vec<u8> {
    let mut bytes = Vec::new();
    for mut value in [u32::from(kind), body.len() as u32] {
        loop {
            let byte = (value & 0x7F) as u8;
            value >>= 7;
            if value == 0 {
                bytes.push(byte);
                break;
            }
            bytes.push(byte | 0x80);
        }
    }
    bytes.extend_from_slice(body);
    bytes
}

fn wide(text: &str) -> Vec<u8> {
    let units: Vec<u16> = text.encode_utf16().collect();
    let mut bytes = (units.len() as u32).to_le_bytes().to_vec();
    for unit in units {
        bytes.extend(unit.to_le_bytes());
    }
    bytes
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
        xlsb_record(0x0000, &body) // BrtRowHdr (2.4.726)
    };
    let isst = |col: u32, index: u32| xlsb_record(0x0007, &cell(col, &index.to_le_bytes())); // BrtCellIsst
    let mut sheet = xlsb_record(0x0081, &[]); // BrtBeginSheet
    let mut dimensions = 0u32.to_le_bytes().to_vec();
    dimensions.extend(20u32.to_le_bytes());
    dimensions.extend(0u32.to_le_bytes());
    dimensions.extend(1u32.to_le_bytes());
    sheet.extend(xlsb_record(0x0094, &dimensions)); // BrtWsDim
    sheet.extend(xlsb_record(0x0091, &[])); // BrtBeginSheetData
    sheet.extend(row_header(0));
    sheet.extend(isst(0, 0));
    sheet.extend(isst(1, 1));
    for row in 1..=20u32 {
        sheet.extend(row_header(row));
        sheet.extend(isst(0, if row % 2 == 1 { 2 } else { 3 }));
        sheet.extend(match row {
            2 => isst(1, 99),
            3 => xlsb_record(0x0003, &cell(1, &[0x55])), // BrtCellError, undefined code
            4 => xlsb_record(0x0005, &cell(1, &[0u8; 4])), // BrtCellReal of 12 bytes, not 16
            _ => xlsb_record(0x0005, &cell(1, &width(row as u16 + 1).to_le_bytes())),
        });
    }
    sheet.extend(xlsb_record(0x0092, &[])); // BrtEndSheetData
    sheet.extend(xlsb_record(0x0082, &[])); // BrtEndSheet
                                            // BrtBundleSh (2.4.304) inside BrtBeginBundleShs / BrtEndBundleShs.
    let mut bundle = 0u32.to_le_bytes().to_vec();
    bundle.extend(1u32.to_le_bytes());
    bundle.extend(wide("rId1"));
    bundle.extend(wide("Trial"));
    let mut workbook = xlsb_record(0x0083, &[]);
    workbook.extend(xlsb_record(0x008F, &[]));
    workbook.extend(xlsb_record(0x009C, &bundle));
    workbook.extend(xlsb_record(0x0090, &[]));
    workbook.extend(xlsb_record(0x0084, &[]));
    // BrtBeginSst (2.4.26) and BrtSSTItem (2.4.727): flags, then the text.
    let strings = ["Line", "Width (mm)", "upper", "lower"];
    let mut counts = (strings.len() as u32).to_le_bytes().to_vec();
    counts.extend((strings.len() as u32).to_le_bytes());
    let mut shared = xlsb_record(0x009F, &counts);
    for text in strings {
        let mut item = vec![0u8];
        item.extend(wide(text));
        shared.extend(xlsb_record(0x0013, &item));
    }
    shared.extend(xlsb_record(0x00A0, &[]));
    let content_types = r#"<?xml version="1.0" encoding="UTF-8" standalone="yes"?><Types xmlns="http://schemas.openxmlformats.org/package/2006/content-types"><Default Extension="rels" ContentType="application/vnd.openxmlformats-package.relationships+xml"/><Default Extension="bin" ContentType="application/vnd.ms-excel.sheet.binary.macroEnabled.main"/></Types>"#;
    let root_rels = r#"<?xml version="1.0" encoding="UTF-8" standalone="yes"?><Relationships xmlns="http://schemas.openxmlformats.org/package/2006/relationships"><Relationship Id="rId1" Type="http://schemas.openxmlformats.org/officeDocument/2006/relationships/officeDocument" Target="xl/workbook.bin"/></Relationships>"#;
    let workbook_rels = r#"<?xml version="1.0" encoding="UTF-8" standalone="yes"?><Relationships xmlns="http://schemas.openxmlformats.org/package/2006/relationships"><Relationship Id="rId1" Type="http://schemas.openxmlformats.org/officeDocument/2006/relationships/worksheet" Target="worksheets/sheet1.bin"/><Relationship Id="rId2" Type="http://schemas.openxmlformats.org/officeDocument/2006/relationships/sharedStrings" Target="sharedStrings.bin"/></Relationships>"#;
    write_zip(
        &folder.path().join("damaged.xlsb"),
        &[
            ("[Content_Types].xml", content_types.as_bytes()),
            ("_rels/.rels", root_rels.as_bytes()),
            ("xl/workbook.bin", &workbook),
            ("xl/_rels/workbook.bin.rels", workbook_rels.as_bytes()),
            ("xl/worksheets/sheet1.bin", &sheet),
            ("xl/sharedStrings.bin", &shared),
        ],
    );
    check_findings(folder.path(), "damaged.xlsb");
}
