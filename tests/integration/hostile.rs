//! Hostile and broken files, one test per defence. Each file is built by the
//! test (zip containers by hand with the `zip` crate, compound files with
//! `cfb`), run through the real binary so that an abort would show as a
//! signal, under a cap on address space where the platform allows one, and
//! must give a clear error naming the file, leave the file unchanged, and
//! finish quickly.

use std::io::Write;
use std::path::Path;
use std::time::{Duration, Instant};

use crate::common::{sha256_of, temp_folder, trialyst, trialyst_path, write_rows, Put, Run};

/// Address space allowed to the binary in these tests. A parser that sizes
/// a buffer from a hostile count asks for far more and fails at once.
pub(crate) const ADDRESS_SPACE_CAP_KIB: u64 = 1_536 * 1024;

/// A run that takes longer than this has been stalled by the file; the
/// honest work on these tiny files takes milliseconds (this is a hang
/// detector, not a speed target).
pub(crate) const STALL_LIMIT: Duration = Duration::from_secs(30);

/// Runs `trialyst run --json --no-write --jobs 1 <file>` under the address-space cap.
pub(crate) fn run_capped(folder: &Path, file_name: &str) -> (Run, Duration) {
    let started = Instant::now();
    let run = if cfg!(target_os = "linux") && Path::new("/bin/sh").exists() {
        let binary = trialyst_path();
        let script = format!("ulimit -v {ADDRESS_SPACE_CAP_KIB} && exec \"$0\" \"$@\"");
        let output = std::process::Command::new("/bin/sh")
            .arg("-c")
            .arg(script)
            .arg(&binary)
            .args(["run", "--json", "--no-write", "--jobs", "1", file_name])
            .current_dir(folder)
            .output()
            .expect("the shell starts");
        Run {
            command: format!("(ulimit -v {ADDRESS_SPACE_CAP_KIB}) trialyst run --json --no-write --jobs 1 {file_name}"),
            folder: folder.to_path_buf(),
            output,
        }
    } else {
        trialyst(folder, &["run", "--json", "--no-write", "--jobs", "1", file_name])
    };
    (run, started.elapsed())
}

/// Runs the binary on a file that must be refused: exit 1 (not a signal),
/// one JSON line saying failed, an error naming the file and containing
/// `expected`, the file unchanged, and no stall. Returns the error text.
pub(crate) fn expect_refused(folder: &Path, file_name: &str, expected: &str) -> String {
    let path = folder.join(file_name);
    let hash_before = sha256_of(&path);
    let (run, elapsed) = run_capped(folder, file_name);
    run.expect_code(1);
    assert!(elapsed < STALL_LIMIT, "took {elapsed:?}{}", run.report());
    let line: serde_json::Value = serde_json::from_str(run.stdout().trim())
        .unwrap_or_else(|error| panic!("not one JSON line ({error}){}", run.report()));
    assert_eq!(line["status"], "failed", "{}", run.report());
    let error = line["error"].as_str().unwrap_or_default().to_string();
    assert!(error.contains(file_name), "the error does not name the file: {error}");
    assert!(error.contains(expected), "the error lacks '{expected}': {error}");
    assert!(!run.stderr().contains("panicked"), "{}", run.report());
    assert_eq!(sha256_of(&path), hash_before, "the file was changed");
    error
}

pub(crate) const CONTENT_TYPES: &str = r#"<?xml version="1.0" encoding="UTF-8" standalone="yes"?>
<Types xmlns="http://schemas.openxmlformats.org/package/2006/content-types"><Default Extension="rels" ContentType="application/vnd.openxmlformats-package.relationships+xml"/><Default Extension="xml" ContentType="application/xml"/><Override PartName="/xl/workbook.xml" ContentType="application/vnd.openxmlformats-officedocument.spreadsheetml.sheet.main+xml"/><Override PartName="/xl/worksheets/sheet1.xml" ContentType="application/vnd.openxmlformats-officedocument.spreadsheetml.worksheet+xml"/><Override PartName="/xl/sharedStrings.xml" ContentType="application/vnd.openxmlformats-officedocument.spreadsheetml.sharedStrings+xml"/></Types>"#;
pub(crate) const ROOT_RELS: &str = r#"<?xml version="1.0" encoding="UTF-8" standalone="yes"?>
<Relationships xmlns="http://schemas.openxmlformats.org/package/2006/relationships"><Relationship Id="rId1" Type="http://schemas.openxmlformats.org/officeDocument/2006/relationships/officeDocument" Target="xl/workbook.xml"/></Relationships>"#;
pub(crate) const WORKBOOK: &str = r#"<?xml version="1.0" encoding="UTF-8" standalone="yes"?>
<workbook xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main" xmlns:r="http://schemas.openxmlformats.org/officeDocument/2006/relationships"><sheets><sheet name="Trial" sheetId="1" r:id="rId1"/></sheets></workbook>"#;
pub(crate) const WORKBOOK_RELS: &str = r#"<?xml version="1.0" encoding="UTF-8" standalone="yes"?>
<Relationships xmlns="http://schemas.openxmlformats.org/package/2006/relationships"><Relationship Id="rId1" Type="http://schemas.openxmlformats.org/officeDocument/2006/relationships/worksheet" Target="worksheets/sheet1.xml"/><Relationship Id="rId2" Type="http://schemas.openxmlformats.org/officeDocument/2006/relationships/sharedStrings" Target="sharedStrings.xml"/></Relationships>"#;

/// Sheet XML from `<row>` elements.
pub(crate) fn sheet_xml(rows: &str) -> String {
    format!(
        r#"<?xml version="1.0" encoding="UTF-8" standalone="yes"?>
<worksheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main"><sheetData>{rows}</sheetData></worksheet>"#
    )
}

/// A small long table in inline strings and numbers, rows 1 to 9 of columns A and B.
pub(crate) fn small_table_rows() -> String {
    let mut rows = String::from(
        r#"<row r="1"><c r="A1" t="inlineStr"><is><t>Condition</t></is></c><c r="B1" t="inlineStr"><is><t>Weight</t></is></c></row>"#,
    );
    let values = [10.1, 10.4, 9.9, 10.2, 10.8, 11.0, 10.7, 11.1];
    for (index, value) in values.iter().enumerate() {
        let row = index + 2;
        let label = if index < 4 { "old" } else { "new" };
        rows.push_str(&format!(
            r#"<row r="{row}"><c r="A{row}" t="inlineStr"><is><t>{label}</t></is></c><c r="B{row}"><v>{value}</v></c></row>"#
        ));
    }
    rows
}

/// Writes a zip container from (name, bytes) entries, deflated.
pub(crate) fn write_zip(path: &Path, entries: &[(&str, &[u8])]) {
    let file = std::fs::File::create(path).expect("created");
    let mut zip = zip::ZipWriter::new(file);
    let options = zip::write::SimpleFileOptions::default().compression_method(zip::CompressionMethod::Deflated);
    for (name, bytes) in entries {
        zip.start_file(*name, options).expect("entry");
        zip.write_all(bytes).expect("written");
    }
    zip.finish().expect("finished");
}

/// The parts of a minimal xlsx around the given sheet and shared-strings XML.
pub(crate) fn write_xlsx_parts(path: &Path, sheet: &str, shared_strings: &str) {
    write_zip(
        path,
        &[
            ("[Content_Types].xml", CONTENT_TYPES.as_bytes()),
            ("_rels/.rels", ROOT_RELS.as_bytes()),
            ("xl/workbook.xml", WORKBOOK.as_bytes()),
            ("xl/_rels/workbook.xml.rels", WORKBOOK_RELS.as_bytes()),
            ("xl/worksheets/sheet1.xml", sheet.as_bytes()),
            ("xl/sharedStrings.xml", shared_strings.as_bytes()),
        ],
    );
}

/// Sheet rows of a two-column trial (labels in A, numbers in B) over rows
/// 2..=21, with `special(row)` giving a hand-made B cell where it answers.
pub(crate) fn two_column_rows(
    headers: (&str, &str),
    labels: (&str, &str),
    special: impl Fn(usize) -> Option<String>,
) -> String {
    let mut rows = format!(
        r#"<row r="1"><c r="A1" t="inlineStr"><is><t>{}</t></is></c><c r="B1" t="inlineStr"><is><t>{}</t></is></c></row>"#,
        headers.0, headers.1
    );
    for row in 2..=21_usize {
        let label = if row % 2 == 0 { labels.0 } else { labels.1 };
        let cell =
            special(row).unwrap_or_else(|| format!(r#"<c r="B{row}"><v>{}</v></c>"#, 10.0 + (row % 5) as f64 / 10.0));
        rows.push_str(&format!(
            r#"<row r="{row}"><c r="A{row}" t="inlineStr"><is><t>{label}</t></is></c>{cell}</row>"#
        ));
    }
    rows
}

pub(crate) const EMPTY_SHARED_STRINGS: &str = r#"<?xml version="1.0" encoding="UTF-8" standalone="yes"?>
<sst xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main" count="0" uniqueCount="0"></sst>"#;

#[test]
fn the_hand_built_container_is_a_readable_workbook() {
    // The control for the tests below: the same parts without the hostile detail are analysed.
    let folder = temp_folder();
    write_xlsx_parts(
        &folder.path().join("plain.xlsx"),
        &sheet_xml(&small_table_rows()),
        EMPTY_SHARED_STRINGS,
    );
    let (run, _) = run_capped(folder.path(), "plain.xlsx");
    run.expect_code(0);
}

#[test]
fn cells_at_both_corners_of_the_sheet_cost_two_cells_not_the_box() {
    let folder = temp_folder();
    let mut rows = small_table_rows();
    rows.push_str(r#"<row r="1048576"><c r="XFD1048576"><v>1</v></c></row>"#);
    let path = folder.path().join("corners.xlsx");
    write_xlsx_parts(&path, &sheet_xml(&rows), EMPTY_SHARED_STRINGS);
    let hash_before = sha256_of(&path);
    let (run, elapsed) = run_capped(folder.path(), "corners.xlsx");
    // A stray cell far away does not stop the table from being analysed.
    run.expect_code(0);
    assert!(elapsed < STALL_LIMIT, "took {elapsed:?}{}", run.report());
    let line: serde_json::Value = serde_json::from_str(run.stdout().trim()).expect("one JSON line");
    assert_eq!(line["table"]["n_records"], 8, "{}", run.report());
    assert_eq!(sha256_of(&path), hash_before);
}

#[test]
fn shared_strings_count_bomb_is_refused() {
    let folder = temp_folder();
    let bomb = r#"<?xml version="1.0" encoding="UTF-8" standalone="yes"?>
<sst xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main" count="4000000000" uniqueCount="4000000000"><si><t>Condition</t></si></sst>"#;
    write_xlsx_parts(
        &folder.path().join("strings.xlsx"),
        &sheet_xml(&small_table_rows()),
        bomb,
    );
    expect_refused(folder.path(), "strings.xlsx", "claims 4000000000 strings");
}

#[test]
fn zip_ratio_bomb_is_refused() {
    let folder = temp_folder();
    let path = folder.path().join("inflates.xlsx");
    let file = std::fs::File::create(&path).expect("created");
    let mut zip = zip::ZipWriter::new(file);
    let options = zip::write::SimpleFileOptions::default()
        .compression_method(zip::CompressionMethod::Deflated)
        .large_file(false);
    for (name, text) in [
        ("[Content_Types].xml", CONTENT_TYPES),
        ("_rels/.rels", ROOT_RELS),
        ("xl/workbook.xml", WORKBOOK),
        ("xl/_rels/workbook.xml.rels", WORKBOOK_RELS),
        ("xl/sharedStrings.xml", EMPTY_SHARED_STRINGS),
    ] {
        zip.start_file(name, options).expect("entry");
        zip.write_all(text.as_bytes()).expect("written");
    }
    // 200 MB of zeros: deflate packs them about a thousandfold.
    zip.start_file("xl/worksheets/sheet1.xml", options).expect("entry");
    let zeros = vec![0u8; 1 << 20];
    for _ in 0..200 {
        zip.write_all(&zeros).expect("written");
    }
    zip.finish().expect("finished");
    let size = std::fs::metadata(&path).expect("exists").len();
    assert!(size < 1 << 20, "the bomb is small on disk: {size} bytes");
    expect_refused(folder.path(), "inflates.xlsx", "as a zip bomb does");
}

#[test]
fn truncated_file_is_refused() {
    let folder = temp_folder();
    let whole = folder.path().join("whole.xlsx");
    write_rows(
        &whole,
        "Trial",
        &[
            vec![Put::Text("Condition"), Put::Text("Weight")],
            vec![Put::Text("old"), Put::Number(1.0)],
        ],
    );
    let bytes = std::fs::read(&whole).expect("read");
    std::fs::write(folder.path().join("cut short.xlsx"), &bytes[..bytes.len() / 2]).expect("written");
    expect_refused(folder.path(), "cut short.xlsx", "may be truncated");
}

/// A compound file with the given streams.
pub(crate) fn write_compound(path: &Path, streams: &[(&str, &[u8])]) {
    let mut compound = cfb::create(path).expect("a compound file");
    for (name, bytes) in streams {
        let mut stream = compound.create_stream(name).expect("a stream");
        stream.write_all(bytes).expect("written");
    }
    compound.flush().expect("flushed");
}

#[test]
fn password_protected_workbook_is_refused() {
    let folder = temp_folder();
    // MS-OFFCRYPTO: an encrypted package is a compound file holding
    // "EncryptionInfo" and "EncryptedPackage" streams; the contents here are filler.
    write_compound(
        &folder.path().join("locked.xlsx"),
        &[
            ("EncryptionInfo", &[4, 0, 4, 0, 0x40, 0, 0, 0]),
            ("EncryptedPackage", &[0x5A; 4096]),
        ],
    );
    expect_refused(folder.path(), "locked.xlsx", "is password-protected");
}

#[test]
fn random_bytes_are_not_a_workbook() {
    let folder = temp_folder();
    // A fixed xorshift sequence (Marsaglia 2003), so the test sees the same bytes every time.
    let mut state: u64 = 0x9E37_79B9_7F4A_7C15;
    let bytes: Vec<u8> = (0..4096)
        .map(|_| {
            state ^= state << 13;
            state ^= state >> 7;
            state ^= state << 17;
            (state >> 24) as u8
        })
        .collect();
    std::fs::write(folder.path().join("noise.xlsx"), &bytes).expect("written");
    expect_refused(folder.path(), "noise.xlsx", "is not a workbook");
}

#[test]
fn empty_file_is_not_a_workbook() {
    let folder = temp_folder();
    std::fs::write(folder.path().join("empty.xlsx"), b"").expect("written");
    expect_refused(folder.path(), "empty.xlsx", "the file is empty");
}

#[test]
fn text_file_named_xlsx_is_not_a_workbook() {
    let folder = temp_folder();
    std::fs::write(
        folder.path().join("export.xlsx"),
        "Condition,Weight\nold,10.1\nnew,10.8\n",
    )
    .expect("written");
    expect_refused(folder.path(), "export.xlsx", "its first bytes are not those of");
}

#[test]
fn zip_without_a_workbook_part_is_not_a_workbook() {
    let folder = temp_folder();
    write_zip(&folder.path().join("archive.xlsx"), &[("readme.txt", b"hello")]);
    expect_refused(folder.path(), "archive.xlsx", "without a workbook part");
}

#[test]
fn xlsb_external_sheet_count_bomb_is_refused() {
    let folder = temp_folder();
    // MS-XLSB 2.1.4: record type and size are little-endian base-128 numbers.
    // BrtExternSheet is record 362 (0xEA 0x02); its body starts with cXti,
    // here 0x7FFFFFFF entries of 12 bytes claimed in a 4-byte body.
    let record: &[u8] = &[0xEA, 0x02, 0x04, 0xFF, 0xFF, 0xFF, 0x7F];
    write_zip(
        &folder.path().join("binary.xlsb"),
        &[
            ("[Content_Types].xml", CONTENT_TYPES.as_bytes()),
            ("xl/workbook.bin", record),
        ],
    );
    expect_refused(folder.path(), "binary.xlsb", "claims 2147483647 entries");
}

/// One BIFF8 record: type, length, body (MS-XLS 2.1.4).
pub(crate) fn biff_record(record_type: u16, body: &[u8]) -> Vec<u8> {
    let mut bytes = record_type.to_le_bytes().to_vec();
    bytes.extend((body.len() as u16).to_le_bytes());
    bytes.extend(body);
    bytes
}

/// A BIFF8 Workbook stream with one worksheet whose substream holds `sheet_records`.
pub(crate) fn xls_workbook_stream(sheet_records: &[Vec<u8>]) -> Vec<u8> {
    // BOF (MS-XLS 2.4.21): version 0x0600 (BIFF8), dt 0x0005 globals / 0x0010 worksheet.
    let bof = |dt: u16| {
        let mut body = 0x0600u16.to_le_bytes().to_vec();
        body.extend(dt.to_le_bytes());
        body.extend([0u8; 12]);
        biff_record(0x0809, &body)
    };
    let sheet_name = b"Trial";
    let bound_sheet_len = 4 + 8 + sheet_name.len();
    let globals_len = bof(5).len() + bound_sheet_len + 4;
    // BoundSheet8 (MS-XLS 2.4.28): stream position of the sheet's BOF, state, type, name.
    let mut bound_sheet = (globals_len as u32).to_le_bytes().to_vec();
    bound_sheet.extend([0u8, 0u8, sheet_name.len() as u8, 0u8]);
    bound_sheet.extend(sheet_name);
    let mut stream = bof(5);
    stream.extend(biff_record(0x0085, &bound_sheet));
    stream.extend(biff_record(0x000A, &[]));
    assert_eq!(stream.len(), globals_len);
    stream.extend(bof(0x10));
    for record in sheet_records {
        stream.extend(record);
    }
    stream.extend(biff_record(0x000A, &[]));
    stream
}

/// Number (MS-XLS 2.4.180): row, column, format index, IEEE double.
pub(crate) fn xls_number(row: u16, col: u16, value: f64) -> Vec<u8> {
    let mut body = row.to_le_bytes().to_vec();
    body.extend(col.to_le_bytes());
    body.extend(0u16.to_le_bytes());
    body.extend(value.to_le_bytes());
    biff_record(0x0203, &body)
}

#[test]
fn xls_dimensions_record_claiming_a_vast_sheet_is_refused() {
    let folder = temp_folder();
    // Dimensions (MS-XLS 2.4.90): first row, last row + 1 (u32), first col, last col + 1 (u16).
    let mut dimensions = 0u32.to_le_bytes().to_vec();
    dimensions.extend(u32::MAX.to_le_bytes());
    dimensions.extend(0u16.to_le_bytes());
    dimensions.extend(u16::MAX.to_le_bytes());
    dimensions.extend(0u16.to_le_bytes());
    let stream = xls_workbook_stream(&[biff_record(0x0200, &dimensions), xls_number(1, 1, 1.0)]);
    write_compound(&folder.path().join("vast.xls"), &[("Workbook", &stream)]);
    expect_refused(folder.path(), "vast.xls", "refused");
}

#[test]
fn xls_cells_far_apart_are_refused() {
    let folder = temp_folder();
    // Columns beyond IV (256) do not exist in BIFF8; a reader that sizes the
    // sheet from the cells would allocate 65,536 × 65,536 of them.
    let stream = xls_workbook_stream(&[xls_number(0, 0, 1.0), xls_number(65_535, 65_535, 2.0)]);
    write_compound(&folder.path().join("far apart.xls"), &[("Workbook", &stream)]);
    expect_refused(folder.path(), "far apart.xls", "refused");
}

#[test]
fn xls_built_by_hand_is_readable() {
    // The control for the two tests above: the same stream with sane sizes is read
    // (it holds no table, so it fails for that reason and no other).
    let folder = temp_folder();
    let mut dimensions = 0u32.to_le_bytes().to_vec();
    dimensions.extend(3u32.to_le_bytes());
    dimensions.extend(0u16.to_le_bytes());
    dimensions.extend(2u16.to_le_bytes());
    dimensions.extend(0u16.to_le_bytes());
    let stream = xls_workbook_stream(&[
        biff_record(0x0200, &dimensions),
        xls_number(0, 0, 1.0),
        xls_number(2, 1, 2.0),
    ]);
    write_compound(&folder.path().join("sane.xls"), &[("Workbook", &stream)]);
    expect_refused(folder.path(), "sane.xls", "no trial table found");
}
