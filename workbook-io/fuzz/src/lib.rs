//! Shared harness of the workbook-io fuzz targets: writes the input as a
//! workbook file, opens it through the public read path, reads every sheet
//! and runs table detection and the settings reader on it, as `trialyst run`
//! does. Any panic or abort is a finding; errors are expected.

use std::io::Write;
use std::path::PathBuf;

use workbook_io::layout::{detect_table, TableRequest};
use workbook_io::{open_workbook, ReadLimits};

/// Limits small enough that a fuzz run never needs gigabytes for an honest
/// input (the defaults are for real workbooks of a million rows).
pub fn fuzz_limits() -> ReadLimits {
    ReadLimits {
        max_file_bytes: 16 << 20,
        max_entry_bytes: 64 << 20,
        max_total_bytes: 128 << 20,
        max_cells: 200_000,
        // The xls and ods parsers build the whole rectangle: keep it small
        // so that each input takes milliseconds.
        max_box_cells: 200_000,
        ..ReadLimits::default()
    }
}

/// A file of this process for the input, named with `extension`.
fn scratch_path(extension: &str) -> PathBuf {
    std::env::temp_dir().join(format!("workbook-io-fuzz-{}.{extension}", std::process::id()))
}

/// Writes `bytes` to a scratch file and runs the whole read path on it.
pub fn read_everything(bytes: &[u8], extension: &str) {
    let path = scratch_path(extension);
    {
        let mut file = std::fs::File::create(&path).expect("the scratch file can be written");
        file.write_all(bytes).expect("the scratch file can be written");
    }
    let limits = fuzz_limits();
    if let Ok(mut workbook) = open_workbook(&path, &limits) {
        let _ = workbook.extension_mismatch();
        let names: Vec<String> = workbook.sheets().iter().map(|sheet| sheet.name.clone()).collect();
        for name in names.iter().take(8) {
            if let Ok(grid) = workbook.read_sheet(name, None) {
                let _ = workbook_io::settings::read_setting_rows(&grid);
                if let Ok(table) = detect_table(&grid, &TableRequest::default()) {
                    for response in 0..table.responses.len() {
                        for record in 0..table.n_records().min(64) {
                            let _ = table.value_cell(response, record);
                        }
                    }
                }
            }
        }
        let _ = workbook.resolve_range("Data", names.first().map(String::as_str));
    }
    let _ = std::fs::remove_file(&path);
}

/// A zip container from (name, bytes) entries, stored.
pub fn zip_of(entries: &[(&str, &[u8])]) -> Vec<u8> {
    workbook_io::testing::zip_of(entries)
}

/// A compound file holding one `Workbook` stream.
pub fn compound_of(stream: &[u8]) -> Vec<u8> {
    workbook_io::testing::xls_file(stream)
}

pub const CONTENT_TYPES: &str = r#"<?xml version="1.0" encoding="UTF-8" standalone="yes"?><Types xmlns="http://schemas.openxmlformats.org/package/2006/content-types"><Default Extension="rels" ContentType="application/vnd.openxmlformats-package.relationships+xml"/><Default Extension="xml" ContentType="application/xml"/><Override PartName="/xl/workbook.xml" ContentType="application/vnd.openxmlformats-officedocument.spreadsheetml.sheet.main+xml"/></Types>"#;
pub const ROOT_RELS: &str = r#"<?xml version="1.0" encoding="UTF-8" standalone="yes"?><Relationships xmlns="http://schemas.openxmlformats.org/package/2006/relationships"><Relationship Id="rId1" Type="http://schemas.openxmlformats.org/officeDocument/2006/relationships/officeDocument" Target="xl/workbook.xml"/></Relationships>"#;
pub const WORKBOOK: &str = r#"<?xml version="1.0" encoding="UTF-8" standalone="yes"?><workbook xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main" xmlns:r="http://schemas.openxmlformats.org/officeDocument/2006/relationships"><sheets><sheet name="Trial" sheetId="1" r:id="rId1"/></sheets><definedNames><definedName name="Data">Trial!$A$1:$B$9</definedName></definedNames></workbook>"#;
pub const WORKBOOK_RELS: &str = r#"<?xml version="1.0" encoding="UTF-8" standalone="yes"?><Relationships xmlns="http://schemas.openxmlformats.org/package/2006/relationships"><Relationship Id="rId1" Type="http://schemas.openxmlformats.org/officeDocument/2006/relationships/worksheet" Target="worksheets/sheet1.xml"/><Relationship Id="rId2" Type="http://schemas.openxmlformats.org/officeDocument/2006/relationships/sharedStrings" Target="sharedStrings.xml"/></Relationships>"#;

/// Splits a fuzz input into a mode byte and the rest.
pub fn mode_and_rest(data: &[u8]) -> Option<(u8, &[u8])> {
    let (&mode, rest) = data.split_first()?;
    Some((mode, rest))
}
