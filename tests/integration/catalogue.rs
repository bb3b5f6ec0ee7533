//! A catalogue of broken and hostile inputs, each made here by a generator
//! (no committed binaries), run through the real program under the
//! address-space cap of `hostile.rs`, which holds the first defences; this
//! module extends it. Every case asserts the exit code, a clear one-line
//! message naming the file and, where there is one, the sheet and cell, no
//! panic, and the original's SHA-256 unchanged.
//!
//! Refused files exit 1 with the reason; files that can be read exit 0 and
//! carry a finding at the place of the problem.

use std::io::Write;
use std::path::Path;
use std::time::Instant;

use crate::common::{sha256_of, temp_folder, trialyst_path, write_rows, Put, Run};
use crate::hostile::{
    biff_record, expect_refused, sheet_xml, small_table_rows, write_compound, write_xlsx_parts, write_zip, xls_number,
    xls_workbook_stream, ADDRESS_SPACE_CAP_KIB, CONTENT_TYPES, EMPTY_SHARED_STRINGS, ROOT_RELS, STALL_LIMIT,
    WORKBOOK_RELS,
};

/// Runs `trialyst <args>` under the address-space cap and checks the common
/// promises: no signal, no panic text, no stall, the file unchanged.
fn run_checked(folder: &Path, file_name: &str, args: &[&str]) -> Run {
    run_checked_within(folder, file_name, args, STALL_LIMIT)
}

/// Honest work on a million-row or sixteen-thousand-column file takes
/// seconds, and many times that on a machine busy with other builds; this
/// limit only catches a hang.
const LARGE_FILE_STALL_LIMIT: std::time::Duration = std::time::Duration::from_secs(600);

/// [`run_checked`] with its own stall limit.
fn run_checked_within(folder: &Path, file_name: &str, args: &[&str], stall_limit: std::time::Duration) -> Run {
    let path = folder.join(file_name);
    let hash_before = path.is_file().then(|| sha256_of(&path));
    let before = crate::common::workbook_snapshot(folder);
    let started = Instant::now();
    let binary = trialyst_path();
    let mut all_args: Vec<&str> = args.to_vec();
    all_args.push(file_name);
    let output = if cfg!(target_os = "linux") && Path::new("/bin/sh").exists() {
        std::process::Command::new("/bin/sh")
            .arg("-c")
            .arg(format!("ulimit -v {ADDRESS_SPACE_CAP_KIB} && exec \"$0\" \"$@\""))
            .arg(&binary)
            .args(&all_args)
            .current_dir(folder)
            .output()
            .expect("the shell starts")
    } else {
        std::process::Command::new(&binary)
            .args(&all_args)
            .current_dir(folder)
            .output()
            .expect("the program starts")
    };
    let run = Run {
        command: format!("(ulimit -v {ADDRESS_SPACE_CAP_KIB}) trialyst {}", all_args.join(" ")),
        folder: folder.to_path_buf(),
        output,
    };
    let elapsed = started.elapsed();
    assert!(elapsed < stall_limit, "took {elapsed:?}{}", run.report());
    assert!(run.output.status.code().is_some(), "killed by a signal{}", run.report());
    assert!(
        !run.stderr().contains("panicked") && !run.stdout().contains("panicked"),
        "{}",
        run.report()
    );
    if let Some(hash_before) = hash_before {
        assert_eq!(sha256_of(&path), hash_before, "the file was changed{}", run.report());
    }
    crate::common::keep_new_outputs(folder, &before);
    run
}

/// The one JSON line of a `--json` run.
fn json_line(run: &Run) -> serde_json::Value {
    let text = run.stdout();
    let line = text.lines().find(|line| line.starts_with('{')).unwrap_or_default();
    serde_json::from_str(line).unwrap_or_else(|error| panic!("not a JSON line ({error}){}", run.report()))
}

/// Analyses the file (without writing results) and expects it analysed, with
/// a finding of `kind` at `place` (`Sheet!A1`, or the sheet alone) whose
/// message holds every word of `words`. Returns the JSON line.
fn expect_finding(folder: &Path, file_name: &str, kind: &str, place: &str, words: &[&str]) -> serde_json::Value {
    let run = run_checked(folder, file_name, &["run", "--json", "--no-write", "--jobs", "1"]);
    run.expect_code(0);
    let line = json_line(&run);
    assert_eq!(line["status"], "analysed", "{}", run.report());
    let findings = line["findings"].as_array().cloned().unwrap_or_default();
    let matching = findings.iter().find(|finding| {
        let at = match (finding["sheet"].as_str(), finding["cell"].as_str()) {
            (Some(sheet), Some(cell)) if !sheet.is_empty() => format!("{sheet}!{cell}"),
            (Some(sheet), _) => sheet.to_string(),
            _ => String::new(),
        };
        finding["kind"] == kind && at == place
    });
    let Some(finding) = matching else {
        panic!("no '{kind}' finding at '{place}' in {findings:#?}{}", run.report());
    };
    let message = finding["message"].as_str().unwrap_or_default();
    for word in words {
        assert!(message.contains(word), "the message lacks '{word}': {message}");
    }
    assert!(!message.contains('\n'), "one line: {message}");
    line
}

/// Expects the file refused by the layout or the analysis (exit 1, status
/// failed), with an error naming the file and holding every word of `words`.
fn expect_failed(folder: &Path, file_name: &str, words: &[&str]) -> String {
    let run = run_checked(folder, file_name, &["run", "--json", "--no-write", "--jobs", "1"]);
    run.expect_code(1);
    let line = json_line(&run);
    assert_eq!(line["status"], "failed", "{}", run.report());
    let error = line["error"].as_str().unwrap_or_default().to_string();
    assert!(error.contains(file_name), "the error does not name the file: {error}");
    for word in words {
        assert!(error.contains(word), "the error lacks '{word}': {error}");
    }
    assert!(!error.contains('\n'), "one line: {error}");
    error
}

/// A plain trial table as rows (header, then four values for each of two conditions).
fn plain_rows() -> Vec<Vec<Put>> {
    let mut rows = vec![vec![Put::Text("Condition"), Put::Text("Weight")]];
    for (index, value) in [10.1, 10.4, 9.9, 10.2, 10.8, 11.0, 10.7, 11.1].iter().enumerate() {
        rows.push(vec![
            Put::Text(if index < 4 { "old" } else { "new" }),
            Put::Number(*value),
        ]);
    }
    rows
}

/// The bytes of a plain xlsx made by the writer crate.
fn plain_xlsx_bytes(folder: &Path) -> Vec<u8> {
    let scratch = folder.join("scratch-source.xlsx");
    write_rows(&scratch, "Trial", &plain_rows());
    let bytes = std::fs::read(&scratch).expect("read");
    std::fs::remove_file(&scratch).expect("removed");
    bytes
}

/// The workbook part naming one sheet.
fn workbook_xml(sheet_name_escaped: &str) -> String {
    format!(
        r#"<?xml version="1.0" encoding="UTF-8" standalone="yes"?>
<workbook xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main" xmlns:r="http://schemas.openxmlformats.org/officeDocument/2006/relationships"><sheets><sheet name="{sheet_name_escaped}" sheetId="1" r:id="rId1"/></sheets></workbook>"#
    )
}

/// An xlsx with the standard parts, the given sheet name and sheet XML.
fn write_named_xlsx(path: &Path, sheet_name_escaped: &str, sheet: &str) {
    write_zip(
        path,
        &[
            ("[Content_Types].xml", CONTENT_TYPES.as_bytes()),
            ("_rels/.rels", ROOT_RELS.as_bytes()),
            ("xl/workbook.xml", workbook_xml(sheet_name_escaped).as_bytes()),
            ("xl/_rels/workbook.xml.rels", WORKBOOK_RELS.as_bytes()),
            ("xl/worksheets/sheet1.xml", sheet.as_bytes()),
            ("xl/sharedStrings.xml", EMPTY_SHARED_STRINGS.as_bytes()),
        ],
    );
}

/// The header row and eight data rows of `small_table_rows`, with row 5's
/// value cell replaced by `cell_b5`.
fn table_with_b5(cell_b5: &str) -> String {
    let rows = small_table_rows();
    let start = rows.find(r#"<c r="B5">"#).expect("B5 is there");
    let end = start + rows[start..].find("</c>").expect("closed") + 4;
    format!("{}{}{}", &rows[..start], cell_b5, &rows[end..])
}

/// An OpenDocument spreadsheet with one sheet from its rows' XML.
fn write_ods(path: &Path, sheet_name: &str, rows_xml: &str) {
    let content = format!(
        r#"<?xml version="1.0" encoding="UTF-8"?><office:document-content xmlns:office="urn:oasis:names:tc:opendocument:xmlns:office:1.0" xmlns:table="urn:oasis:names:tc:opendocument:xmlns:table:1.0" xmlns:text="urn:oasis:names:tc:opendocument:xmlns:text:1.0" office:version="1.2"><office:body><office:spreadsheet><table:table table:name="{sheet_name}">{rows_xml}</table:table></office:spreadsheet></office:body></office:document-content>"#
    );
    write_ods_content(path, &content);
}

/// An OpenDocument spreadsheet container around the given `content.xml`.
fn write_ods_content(path: &Path, content: &str) {
    let manifest = r#"<?xml version="1.0" encoding="UTF-8"?><manifest:manifest xmlns:manifest="urn:oasis:names:tc:opendocument:xmlns:manifest:1.0" manifest:version="1.2"><manifest:file-entry manifest:full-path="/" manifest:media-type="application/vnd.oasis.opendocument.spreadsheet"/><manifest:file-entry manifest:full-path="content.xml" manifest:media-type="text/xml"/></manifest:manifest>"#;
    let file = std::fs::File::create(path).expect("created");
    let mut zip = zip::ZipWriter::new(file);
    // OpenDocument 1.2 part 3, 3.3: the mimetype entry comes first, stored.
    let stored = zip::write::SimpleFileOptions::default().compression_method(zip::CompressionMethod::Stored);
    let deflated = zip::write::SimpleFileOptions::default().compression_method(zip::CompressionMethod::Deflated);
    zip.start_file("mimetype", stored).expect("entry");
    zip.write_all(b"application/vnd.oasis.opendocument.spreadsheet")
        .expect("written");
    zip.start_file("META-INF/manifest.xml", deflated).expect("entry");
    zip.write_all(manifest.as_bytes()).expect("written");
    zip.start_file("content.xml", deflated).expect("entry");
    zip.write_all(content.as_bytes()).expect("written");
    zip.finish().expect("finished");
}

fn ods_text(text: &str) -> String {
    format!(r#"<table:table-cell office:value-type="string"><text:p>{text}</text:p></table:table-cell>"#)
}

fn ods_number(value: f64) -> String {
    format!(
        r#"<table:table-cell office:value-type="float" office:value="{value}"><text:p>{value}</text:p></table:table-cell>"#
    )
}

/// The plain table as ods rows.
fn ods_plain_rows() -> String {
    let mut rows = format!(
        "<table:table-row>{}{}</table:table-row>",
        ods_text("Condition"),
        ods_text("Weight")
    );
    for (index, value) in [10.1, 10.4, 9.9, 10.2, 10.8, 11.0, 10.7, 11.1].iter().enumerate() {
        rows.push_str(&format!(
            "<table:table-row>{}{}</table:table-row>",
            ods_text(if index < 4 { "old" } else { "new" }),
            ods_number(*value)
        ));
    }
    rows
}

// ---------------------------------------------------------------- containers

#[test]
fn xlsx_cut_inside_its_central_directory_is_refused() {
    let folder = temp_folder();
    let bytes = plain_xlsx_bytes(folder.path());
    std::fs::write(folder.path().join("cut end.xlsx"), &bytes[..bytes.len() - 30]).expect("written");
    expect_refused(folder.path(), "cut end.xlsx", "may be truncated");
}

#[test]
fn xls_cut_in_half_is_refused() {
    let folder = temp_folder();
    let whole = folder.path().join("whole.xls");
    let stream = xls_workbook_stream(&[xls_number(0, 0, 1.0), xls_number(1, 0, 2.0)]);
    // Padded so that the compound file's sectors are not all in its first half.
    let mut padded = stream.clone();
    padded.extend(std::iter::repeat_n(0u8, 8192));
    write_compound(&whole, &[("Workbook", &padded)]);
    let bytes = std::fs::read(&whole).expect("read");
    std::fs::write(folder.path().join("half.xls"), &bytes[..bytes.len() / 2]).expect("written");
    expect_refused(folder.path(), "half.xls", "damaged");
}

#[test]
fn xls_with_a_password_record_is_refused_as_password_protected() {
    let folder = temp_folder();
    // FilePass (MS-XLS 2.4.117, record 0x002F) in the globals marks an
    // encrypted BIFF8 stream: wEncryptionType 1 (RC4), then filler.
    let mut globals = xls_workbook_stream(&[xls_number(1, 1, 1.0)]);
    let file_pass = biff_record(0x002F, &[1, 0, 1, 0, 1, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0]);
    // After the globals' BOF record (4 + 16 bytes).
    let at = 20;
    globals.splice(at..at, file_pass.iter().copied());
    write_compound(&folder.path().join("sealed.xls"), &[("Workbook", &globals)]);
    let error = expect_refused(folder.path(), "sealed.xls", "sealed.xls");
    assert!(
        error.contains("password") || error.contains("damaged"),
        "an encrypted xls is named as such or as unreadable: {error}"
    );
}

#[test]
fn xls_sheet_said_to_start_beyond_its_stream_is_refused() {
    // Found by the read_xls fuzz target: the parser sliced the stream at the
    // BoundSheet8 offset unchecked and panicked.
    let folder = temp_folder();
    let mut stream = xls_workbook_stream(&[xls_number(1, 1, 1.0)]);
    // The globals' BOF record is 20 bytes; BoundSheet8's body (MS-XLS 2.4.28)
    // starts 4 bytes later with the sheet's stream position.
    stream[24..28].copy_from_slice(&33_554_473u32.to_le_bytes());
    write_compound(&folder.path().join("adrift.xls"), &[("Workbook", &stream)]);
    let error = expect_refused(
        folder.path(),
        "adrift.xls",
        "sheet 'Trial' is said to start at byte 33554473",
    );
    assert!(error.contains("damaged"), "{error}");
}

#[test]
fn xlsb_sheet_entry_claiming_more_text_than_it_holds_is_refused() {
    // Found by the read_xlsb fuzz target: the parser sliced the BrtBundleSh
    // record (MS-XLSB 2.4.304) by its own counts and panicked.
    let folder = temp_folder();
    let mut body = 0u32.to_le_bytes().to_vec(); // hsState: visible
    body.extend(1u32.to_le_bytes()); // iTabID
    body.extend(1_000u32.to_le_bytes()); // the relationship id claims 1,000 characters
    body.extend("rId1".encode_utf16().flat_map(u16::to_le_bytes));
    // Record type 0x9C and size as base-128 numbers (MS-XLSB 2.1.4).
    let mut record = vec![0x9C, 0x01, body.len() as u8];
    record.extend(&body);
    let mut part = vec![0x83, 0x01, 0x00]; // BrtBeginBook
    part.extend(&record);
    write_zip(
        &folder.path().join("overdrawn.xlsb"),
        &[
            ("[Content_Types].xml", CONTENT_TYPES.as_bytes()),
            ("xl/workbook.bin", &part),
        ],
    );
    expect_refused(folder.path(), "overdrawn.xlsb", "claims more text than it holds");
}

#[test]
fn compound_file_without_a_workbook_stream_is_refused() {
    let folder = temp_folder();
    // A word-processor document is a compound file too, with other streams.
    write_compound(&folder.path().join("memo.xls"), &[("WordDocument", &[0u8; 512])]);
    expect_refused(folder.path(), "memo.xls", "has no Workbook stream");
}

#[test]
fn zip_of_a_text_document_is_not_a_workbook() {
    let folder = temp_folder();
    write_zip(
        &folder.path().join("report.xlsx"),
        &[
            ("[Content_Types].xml", CONTENT_TYPES.as_bytes()),
            ("word/document.xml", b"<w:document/>"),
        ],
    );
    expect_refused(folder.path(), "report.xlsx", "without a workbook part");
}

#[test]
fn pdf_png_gzip_and_html_named_as_workbooks_are_not_workbooks() {
    let folder = temp_folder();
    let cases: [(&str, &[u8]); 4] = [
        ("scan.xlsx", b"%PDF-1.7\n%\xE2\xE3\xCF\xD3\n1 0 obj\n<< >>\nendobj\n"),
        (
            "photo.xlsx",
            b"\x89PNG\r\n\x1a\n\0\0\0\rIHDR\0\0\0\x01\0\0\0\x01\x08\x02\0\0\0",
        ),
        (
            "packed.xlsx",
            b"\x1f\x8b\x08\0\0\0\0\0\0\x03\x4b\xcb\xcf\x07\0\x21\x65\x73\x8c\x03\0\0\0",
        ),
        (
            "web export.xls",
            b"<html><body><table><tr><td>Condition</td><td>Weight</td></tr></table></body></html>",
        ),
    ];
    for (name, bytes) in cases {
        std::fs::write(folder.path().join(name), bytes).expect("written");
        expect_refused(folder.path(), name, "first bytes are not those of");
    }
}

#[test]
fn xlsx_whose_sheet_part_is_missing_is_refused_naming_the_sheet() {
    let folder = temp_folder();
    write_zip(
        &folder.path().join("hollow.xlsx"),
        &[
            ("[Content_Types].xml", CONTENT_TYPES.as_bytes()),
            ("_rels/.rels", ROOT_RELS.as_bytes()),
            ("xl/workbook.xml", workbook_xml("Trial").as_bytes()),
            ("xl/_rels/workbook.xml.rels", WORKBOOK_RELS.as_bytes()),
        ],
    );
    let error = expect_refused(folder.path(), "hollow.xlsx", "hollow.xlsx");
    assert!(error.contains("Trial") || error.contains("damaged"), "{error}");
}

#[test]
fn malformed_sheet_xml_is_refused_naming_the_sheet() {
    let folder = temp_folder();
    let broken = sheet_xml(&small_table_rows()).replace("</sheetData>", "<row r=\"20\"><c r=\"A20\"><v>1</c></row>");
    write_xlsx_parts(&folder.path().join("garbled.xlsx"), &broken, EMPTY_SHARED_STRINGS);
    let error = expect_refused(folder.path(), "garbled.xlsx", "damaged");
    assert!(error.contains("sheet 'Trial'"), "{error}");
}

#[test]
fn invalid_utf8_in_the_sheet_is_refused_or_read_without_a_crash() {
    let folder = temp_folder();
    let mut sheet = sheet_xml(&small_table_rows()).into_bytes();
    let at = sheet
        .windows(3)
        .position(|window| window == b"old")
        .expect("a label is there");
    sheet[at] = 0xFF;
    sheet[at + 1] = 0xFE;
    let path = folder.path().join("bytes.xlsx");
    write_zip(
        &path,
        &[
            ("[Content_Types].xml", CONTENT_TYPES.as_bytes()),
            ("_rels/.rels", ROOT_RELS.as_bytes()),
            ("xl/workbook.xml", workbook_xml("Trial").as_bytes()),
            ("xl/_rels/workbook.xml.rels", WORKBOOK_RELS.as_bytes()),
            ("xl/worksheets/sheet1.xml", &sheet),
            ("xl/sharedStrings.xml", EMPTY_SHARED_STRINGS.as_bytes()),
        ],
    );
    let run = run_checked(
        folder.path(),
        "bytes.xlsx",
        &["run", "--json", "--no-write", "--jobs", "1"],
    );
    let line = json_line(&run);
    match run.code() {
        0 => assert_eq!(line["status"], "analysed", "{}", run.report()),
        1 => {
            let error = line["error"].as_str().unwrap_or_default();
            assert!(
                error.contains("bytes.xlsx") && error.contains("sheet 'Trial'"),
                "{error}"
            );
        }
        other => panic!("exit {other}{}", run.report()),
    }
}

#[test]
fn entity_expansion_in_the_sheet_is_not_expanded() {
    let folder = temp_folder();
    // Nested entities that would expand to 10^9 bytes if a parser expanded them.
    let mut doctype = String::from(r#"<?xml version="1.0"?><!DOCTYPE w [<!ENTITY e0 "lollollollol">"#);
    for level in 1..=9 {
        let previous = format!("&e{};", level - 1);
        doctype.push_str(&format!(r#"<!ENTITY e{level} "{}">"#, previous.repeat(10)));
    }
    doctype.push_str("]>");
    let sheet = format!(
        r#"{doctype}<worksheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main"><sheetData><row r="1"><c r="A1" t="inlineStr"><is><t>&e9;</t></is></c></row></sheetData></worksheet>"#
    );
    write_xlsx_parts(&folder.path().join("laughs.xlsx"), &sheet, EMPTY_SHARED_STRINGS);
    let error = expect_refused(folder.path(), "laughs.xlsx", "damaged");
    assert!(error.contains("sheet 'Trial'"), "{error}");
}

#[test]
fn zip_entry_that_inflates_beyond_its_declared_size_is_stopped() {
    // The directory says the sheet part inflates to 900 bytes, so the
    // ratio check passes; its data inflates to 64 MB of zeros. The reader
    // must stop at the declared size (or fail its checksum) rather than
    // inflate whatever arrives.
    let folder = temp_folder();
    let path = folder.path().join("liar.xlsx");
    let file = std::fs::File::create(&path).expect("created");
    let mut zip = zip::ZipWriter::new(file);
    let options = zip::write::SimpleFileOptions::default()
        .compression_method(zip::CompressionMethod::Deflated)
        .large_file(false);
    for (name, text) in [
        ("[Content_Types].xml", CONTENT_TYPES),
        ("_rels/.rels", ROOT_RELS),
        ("xl/_rels/workbook.xml.rels", WORKBOOK_RELS),
        ("xl/sharedStrings.xml", EMPTY_SHARED_STRINGS),
    ] {
        zip.start_file(name, options).expect("entry");
        zip.write_all(text.as_bytes()).expect("written");
    }
    zip.start_file("xl/workbook.xml", options).expect("entry");
    zip.write_all(workbook_xml("Trial").as_bytes()).expect("written");
    zip.start_file("xl/worksheets/sheet1.xml", options).expect("entry");
    let zeros = vec![b' '; 1 << 20];
    for _ in 0..64 {
        zip.write_all(&zeros).expect("written");
    }
    zip.finish().expect("finished");
    let mut bytes = std::fs::read(&path).expect("read");
    // Rewrite the entry's uncompressed size in its local header (offset 22)
    // and its central directory record (offset 24), APPNOTE 4.3.7 and 4.3.12.
    let name = b"xl/worksheets/sheet1.xml";
    let mut patched = 0;
    for (signature, size_at, name_at) in [(&b"PK\x03\x04"[..], 22usize, 30usize), (&b"PK\x01\x02"[..], 24, 46)] {
        let mut from = 0;
        while let Some(offset) = bytes[from..].windows(4).position(|window| window == signature) {
            let start = from + offset;
            if bytes.get(start + name_at..start + name_at + name.len()) == Some(&name[..]) {
                bytes[start + size_at..start + size_at + 4].copy_from_slice(&900u32.to_le_bytes());
                patched += 1;
            }
            from = start + 4;
        }
    }
    assert_eq!(patched, 2, "both records were found");
    std::fs::write(&path, &bytes).expect("written");
    let run = run_checked(
        folder.path(),
        "liar.xlsx",
        &["run", "--json", "--no-write", "--jobs", "1"],
    );
    run.expect_code(1);
    let error = json_line(&run)["error"].as_str().unwrap_or_default().to_string();
    assert!(error.contains("liar.xlsx"), "{error}");
}

#[test]
fn container_with_too_many_entries_is_refused() {
    let folder = temp_folder();
    let path = folder.path().join("confetti.xlsx");
    let file = std::fs::File::create(&path).expect("created");
    let mut zip = zip::ZipWriter::new(file);
    let options = zip::write::SimpleFileOptions::default().compression_method(zip::CompressionMethod::Stored);
    for (name, text) in [
        ("[Content_Types].xml", CONTENT_TYPES),
        ("xl/workbook.xml", "<workbook/>"),
    ] {
        zip.start_file(name, options).expect("entry");
        zip.write_all(text.as_bytes()).expect("written");
    }
    for index in 0..10_001 {
        zip.start_file(format!("xl/media/bit{index}.bin"), options)
            .expect("entry");
    }
    zip.finish().expect("finished");
    expect_refused(folder.path(), "confetti.xlsx", "entries");
}

#[test]
fn shared_string_index_beyond_the_table_does_not_crash() {
    let folder = temp_folder();
    let rows = format!(
        r#"{}<row r="10"><c r="A10" t="s"><v>4000000000</v></c><c r="B10"><v>10.5</v></c></row>"#,
        small_table_rows()
    );
    let strings = r#"<?xml version="1.0" encoding="UTF-8" standalone="yes"?>
<sst xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main" count="1" uniqueCount="1"><si><t>old</t></si></sst>"#;
    write_xlsx_parts(&folder.path().join("dangling.xlsx"), &sheet_xml(&rows), strings);
    let run = run_checked(
        folder.path(),
        "dangling.xlsx",
        &["run", "--json", "--no-write", "--jobs", "1"],
    );
    let line = json_line(&run);
    match run.code() {
        0 => assert_eq!(line["status"], "analysed"),
        1 => {
            let error = line["error"].as_str().unwrap_or_default();
            assert!(
                error.contains("dangling.xlsx") && error.contains("sheet 'Trial'"),
                "{error}"
            );
        }
        other => panic!("exit {other}{}", run.report()),
    }
}

#[test]
fn a_dimension_claiming_the_whole_sheet_costs_nothing() {
    let folder = temp_folder();
    let sheet = sheet_xml(&small_table_rows()).replace("<sheetData>", r#"<dimension ref="A1:XFD1048576"/><sheetData>"#);
    write_xlsx_parts(&folder.path().join("claims.xlsx"), &sheet, EMPTY_SHARED_STRINGS);
    let run = run_checked(
        folder.path(),
        "claims.xlsx",
        &["run", "--json", "--no-write", "--jobs", "1"],
    );
    run.expect_code(0);
    assert_eq!(json_line(&run)["table"]["n_records"], 8, "{}", run.report());
}

#[test]
fn a_cell_beyond_the_last_row_is_left_out() {
    let folder = temp_folder();
    let rows = format!(
        r#"{}<row r="1048577"><c r="A1048577"><v>1</v></c></row><row r="2"><c r="XFE2"><v>2</v></c></row>"#,
        small_table_rows()
    );
    write_xlsx_parts(
        &folder.path().join("beyond.xlsx"),
        &sheet_xml(&rows),
        EMPTY_SHARED_STRINGS,
    );
    let run = run_checked(
        folder.path(),
        "beyond.xlsx",
        &["run", "--json", "--no-write", "--jobs", "1"],
    );
    let line = json_line(&run);
    match run.code() {
        0 => assert_eq!(line["table"]["n_records"], 8, "{}", run.report()),
        1 => {
            let error = line["error"].as_str().unwrap_or_default();
            assert!(
                error.contains("beyond.xlsx") && error.contains("sheet 'Trial'"),
                "{error}"
            );
        }
        other => panic!("exit {other}{}", run.report()),
    }
}

// ------------------------------------------------------------ sheet contents

#[test]
fn xlsx_named_xls_is_read_by_its_bytes_and_the_name_is_reported() {
    let folder = temp_folder();
    std::fs::write(folder.path().join("renamed.xls"), plain_xlsx_bytes(folder.path())).expect("written");
    let line = expect_finding(
        folder.path(),
        "renamed.xls",
        "workbook",
        "",
        &["named .xls ", "an .xlsx workbook"],
    );
    assert_eq!(line["table"]["n_records"], 8);
}

#[test]
fn ods_named_xlsx_is_read_by_its_bytes_and_the_name_is_reported() {
    let folder = temp_folder();
    write_ods(&folder.path().join("exported.xlsx"), "Trial", &ods_plain_rows());
    let line = expect_finding(
        folder.path(),
        "exported.xlsx",
        "workbook",
        "",
        &["named .xlsx ", "an .ods workbook"],
    );
    assert_eq!(line["table"]["n_records"], 8);
}

#[test]
fn macro_enabled_workbook_is_read_and_its_macros_never_run() {
    let folder = temp_folder();
    let sheet = sheet_xml(&small_table_rows());
    write_zip(
        &folder.path().join("automated.xlsm"),
        &[
            ("[Content_Types].xml", CONTENT_TYPES.as_bytes()),
            ("_rels/.rels", ROOT_RELS.as_bytes()),
            ("xl/workbook.xml", workbook_xml("Trial").as_bytes()),
            ("xl/_rels/workbook.xml.rels", WORKBOOK_RELS.as_bytes()),
            ("xl/worksheets/sheet1.xml", sheet.as_bytes()),
            ("xl/sharedStrings.xml", EMPTY_SHARED_STRINGS.as_bytes()),
            // The project's content is never looked at; filler is enough.
            ("xl/vbaProject.bin", &[0xD0, 0xCF, 0x11, 0xE0, 0, 0, 0, 0]),
        ],
    );
    expect_finding(
        folder.path(),
        "automated.xlsm",
        "workbook",
        "",
        &["macros", "no macro was run"],
    );
}

#[test]
fn formulas_whose_cached_values_are_errors_are_named_at_their_cells() {
    let folder = temp_folder();
    let rows = table_with_b5(r#"<c r="B5" t="e"><f>B4/0</f><v>#DIV/0!</v></c>"#).replace(
        r#"<c r="B8"><v>10.7</v></c>"#,
        r#"<c r="B8" t="e"><f>VLOOKUP(A8,Z:Z,2,0)</f><v>#N/A</v></c>"#,
    );
    write_xlsx_parts(
        &folder.path().join("errors.xlsx"),
        &sheet_xml(&rows),
        EMPTY_SHARED_STRINGS,
    );
    expect_finding(folder.path(), "errors.xlsx", "error-value", "Trial!B5", &["#DIV/0!"]);
    expect_finding(folder.path(), "errors.xlsx", "error-value", "Trial!B8", &["#N/A"]);
}

#[test]
fn formula_without_a_cached_value_is_named_as_blank() {
    let folder = temp_folder();
    let rows = table_with_b5(r#"<c r="B5"><f>B4*2</f></c>"#);
    write_xlsx_parts(
        &folder.path().join("uncalculated.xlsx"),
        &sheet_xml(&rows),
        EMPTY_SHARED_STRINGS,
    );
    expect_finding(
        folder.path(),
        "uncalculated.xlsx",
        "blank-value",
        "Trial!B5",
        &["no value", "Weight"],
    );
}

#[test]
fn dates_typed_as_responses_are_named_at_their_cells() {
    let folder = temp_folder();
    let path = folder.path().join("dated.xlsx");
    let mut book = rust_xlsxwriter::Workbook::new();
    let sheet = book.add_worksheet();
    sheet.set_name("Trial").expect("name");
    crate::common::put_rows(sheet, &plain_rows());
    let date_format = rust_xlsxwriter::Format::new().set_num_format("yyyy-mm-dd");
    let date = rust_xlsxwriter::ExcelDateTime::from_ymd(2026, 3, 9).expect("date");
    sheet
        .write_datetime_with_format(3, 1, &date, &date_format)
        .expect("written");
    book.save(&path).expect("saved");
    expect_finding(folder.path(), "dated.xlsx", "date-in-numbers", "Trial!B4", &["date"]);
}

#[test]
fn merged_header_cells_are_named() {
    let folder = temp_folder();
    let path = folder.path().join("merged.xlsx");
    let mut book = rust_xlsxwriter::Workbook::new();
    let sheet = book.add_worksheet();
    sheet.set_name("Trial").expect("name");
    sheet.write_string(0, 0, "Condition").expect("written");
    sheet
        .merge_range(0, 1, 0, 2, "Weight", &rust_xlsxwriter::Format::new())
        .expect("merged");
    for row in 1..=8u32 {
        sheet
            .write_string(row, 0, if row <= 4 { "old" } else { "new" })
            .expect("written");
        sheet
            .write_number(row, 1, 10.0 + f64::from(row) * 0.1)
            .expect("written");
        sheet
            .write_number(row, 2, 20.0 + f64::from(row % 3) * 0.2)
            .expect("written");
    }
    book.save(&path).expect("saved");
    expect_finding(
        folder.path(),
        "merged.xlsx",
        "merged-header",
        "Trial!B1:C1",
        &["merged", "unmerge"],
    );
}

#[test]
fn a_header_merged_across_every_column_is_named_quickly() {
    // Found by the read_xls fuzz target: a merged area across thousands of
    // columns cost the square of their number in table detection.
    let folder = temp_folder();
    let path = folder.path().join("banner.xlsx");
    let mut book = rust_xlsxwriter::Workbook::new();
    let sheet = book.add_worksheet();
    sheet.set_name("Trial").expect("name");
    crate::common::put_rows(sheet, &plain_rows());
    sheet
        .merge_range(0, 1, 0, 16_383, "Weight", &rust_xlsxwriter::Format::new())
        .expect("merged");
    book.save(&path).expect("saved");
    expect_finding(
        folder.path(),
        "banner.xlsx",
        "merged-header",
        "Trial!B1:XFD1",
        &["merged", "unmerge"],
    );
}

#[test]
fn hidden_rows_and_columns_of_the_table_are_named() {
    let folder = temp_folder();
    let path = folder.path().join("hidden.xlsx");
    let mut book = rust_xlsxwriter::Workbook::new();
    let sheet = book.add_worksheet();
    sheet.set_name("Trial").expect("name");
    let mut rows = plain_rows();
    rows[0].push(Put::Text("Haze"));
    for (index, row) in rows.iter_mut().enumerate().skip(1) {
        row.push(Put::Number(2.0 + (index % 3) as f64 * 0.1));
    }
    crate::common::put_rows(sheet, &rows);
    sheet.set_row_hidden(4).expect("hidden");
    sheet.set_row_hidden(5).expect("hidden");
    sheet.set_column_hidden(2).expect("hidden");
    book.save(&path).expect("saved");
    expect_finding(
        folder.path(),
        "hidden.xlsx",
        "hidden-cells",
        "Trial!A5:C5",
        &["5-6", "hidden"],
    );
    // The hidden column is a helper column: kept as context unless named.
    expect_finding(
        folder.path(),
        "hidden.xlsx",
        "identifier-column",
        "Trial!C1",
        &[
            "'Haze'",
            "hidden in the sheet",
            "name it as a factor, block or response",
        ],
    );
}

#[test]
fn duplicated_headers_are_named() {
    let folder = temp_folder();
    let mut rows = plain_rows();
    rows[0].push(Put::Text("Weight"));
    for row in rows.iter_mut().skip(1) {
        row.push(Put::Number(3.5));
    }
    write_rows(&folder.path().join("twice.xlsx"), "Trial", &rows);
    expect_finding(folder.path(), "twice.xlsx", "duplicate-header", "Trial!C1", &["Weight"]);
}

#[test]
fn a_sheet_name_with_odd_characters_is_named_exactly() {
    let folder = temp_folder();
    let name = "Trial 'A' & <B> #1 ü %";
    let mut rows = plain_rows();
    rows[3][1] = Put::Text("n/a");
    write_rows(&folder.path().join("odd name.xlsx"), name, &rows);
    expect_finding(
        folder.path(),
        "odd name.xlsx",
        "text-in-numbers",
        &format!("{name}!B4"),
        &["n/a"],
    );
    // The results workbook is written and names the sheet in its summary.
    let run = run_checked(folder.path(), "odd name.xlsx", &["run", "--jobs", "1"]);
    run.expect_code(0);
    let results = folder.path().join("odd name.results.xlsx");
    let sheets = crate::common::read_all_sheets(&results);
    let summary = &sheets[0].1;
    assert!(
        summary
            .rows()
            .any(|row| row.iter().any(|cell| cell.to_string().contains(name))),
        "the summary names the sheet"
    );
}

#[test]
fn a_sheet_name_no_spreadsheet_program_allows_is_still_read() {
    let folder = temp_folder();
    // `/ : * ? [ ]` are refused by spreadsheet programs but can be written by hand.
    let name = "a/b:c*d?[e]";
    let rows = table_with_b5(r#"<c r="B5" t="inlineStr"><is><t>missing</t></is></c>"#);
    write_named_xlsx(&folder.path().join("forbidden.xlsx"), name, &sheet_xml(&rows));
    expect_finding(
        folder.path(),
        "forbidden.xlsx",
        "text-in-numbers",
        &format!("{name}!B5"),
        &["missing"],
    );
    let run = run_checked(folder.path(), "forbidden.xlsx", &["run", "--jobs", "1"]);
    run.expect_code(0);
    assert!(
        folder.path().join("forbidden.results.xlsx").is_file(),
        "{}",
        run.report()
    );
}

#[test]
fn right_to_left_and_emoji_labels_come_back_unchanged() {
    let folder = temp_folder();
    let labels = ["فرن قديم", "תנור חדש", "🔥 hot ✓"];
    let mut rows = vec![vec![Put::Text("Oven"), Put::Text("Weight")]];
    for (index, label) in labels.iter().enumerate() {
        for step in 0..4 {
            rows.push(vec![
                Put::Owned((*label).to_string()),
                Put::Number(10.0 + index as f64 * 0.5 + f64::from(step) * 0.1),
            ]);
        }
    }
    write_rows(&folder.path().join("labels.xlsx"), "Trial", &rows);
    let run = run_checked(folder.path(), "labels.xlsx", &["run", "--json", "--jobs", "1"]);
    run.expect_code(0);
    let line = json_line(&run);
    let levels: Vec<String> = line["table"]["factors"][0]["levels"]
        .as_array()
        .cloned()
        .unwrap_or_default()
        .iter()
        .map(|level| level.as_str().unwrap_or_default().to_string())
        .collect();
    assert_eq!(levels, labels, "{}", run.report());
    let sheets = crate::common::read_all_sheets(&folder.path().join("labels.results.xlsx"));
    let conditions = sheets
        .iter()
        .find(|(sheet, _)| sheet == "Conditions")
        .map(|(_, range)| range)
        .expect("a Conditions sheet");
    for label in labels {
        assert!(
            conditions.rows().any(|row| row
                .first()
                .is_some_and(|cell| *cell == calamine::Data::String(label.to_string()))),
            "'{label}' is in the Conditions sheet"
        );
    }
}

#[test]
fn a_header_row_without_data_is_no_table() {
    let folder = temp_folder();
    write_rows(
        &folder.path().join("headers only.xlsx"),
        "Trial",
        &[vec![Put::Text("Condition"), Put::Text("Weight")]],
    );
    expect_failed(folder.path(), "headers only.xlsx", &["sheet 'Trial'", "no trial table"]);
}

#[test]
fn a_sheet_asked_for_that_does_not_exist_is_named_with_the_ones_there() {
    let folder = temp_folder();
    write_rows(&folder.path().join("one sheet.xlsx"), "Trial", &plain_rows());
    let run = run_checked(
        folder.path(),
        "one sheet.xlsx",
        &["run", "--json", "--no-write", "--sheet", "Week 9"],
    );
    run.expect_code(1);
    let error = json_line(&run)["error"].as_str().unwrap_or_default().to_string();
    assert!(
        error.contains("one sheet.xlsx") && error.contains("Week 9") && error.contains("Trial"),
        "{error}"
    );
}

#[test]
fn an_unusable_settings_value_is_named_at_its_cell() {
    let folder = temp_folder();
    let path = folder.path().join("settings.xlsx");
    let mut book = rust_xlsxwriter::Workbook::new();
    let sheet = book.add_worksheet();
    sheet.set_name("Trial").expect("name");
    crate::common::put_rows(sheet, &plain_rows());
    let settings = book.add_worksheet();
    settings.set_name("trialyst settings").expect("name");
    settings.write_string(0, 0, "confidence").expect("written");
    settings.write_string(0, 1, "very sure").expect("written");
    book.save(&path).expect("saved");
    expect_finding(
        folder.path(),
        "settings.xlsx",
        "setting",
        "trialyst settings!B1",
        &["very sure"],
    );
}

#[test]
fn a_table_with_a_million_rows_is_read() {
    // 1,048,575 records under the header fill every row of the sheet.
    let folder = temp_folder();
    let path = folder.path().join("full height.xlsx");
    let file = std::fs::File::create(&path).expect("created");
    let mut zip = zip::ZipWriter::new(file);
    let options = zip::write::SimpleFileOptions::default()
        .compression_method(zip::CompressionMethod::Deflated)
        .compression_level(Some(1));
    for (name, text) in [
        ("[Content_Types].xml", CONTENT_TYPES),
        ("_rels/.rels", ROOT_RELS),
        ("xl/_rels/workbook.xml.rels", WORKBOOK_RELS),
        ("xl/sharedStrings.xml", EMPTY_SHARED_STRINGS),
    ] {
        zip.start_file(name, options).expect("entry");
        zip.write_all(text.as_bytes()).expect("written");
    }
    zip.start_file("xl/workbook.xml", options).expect("entry");
    zip.write_all(workbook_xml("Trial").as_bytes()).expect("written");
    zip.start_file("xl/worksheets/sheet1.xml", options).expect("entry");
    let mut text = String::with_capacity(1 << 22);
    text.push_str(r#"<?xml version="1.0" encoding="UTF-8" standalone="yes"?><worksheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main"><sheetData><row r="1"><c r="A1" t="inlineStr"><is><t>Line</t></is></c><c r="B1" t="inlineStr"><is><t>Weight</t></is></c></row>"#);
    for row in 2..=1_048_576u32 {
        let line = if row % 2 == 0 { "a" } else { "b" };
        let value = f64::from(row % 97) / 10.0 + if row % 2 == 0 { 0.0 } else { 0.3 };
        text.push_str(&format!(
            r#"<row r="{row}"><c r="A{row}" t="inlineStr"><is><t>{line}</t></is></c><c r="B{row}"><v>{value}</v></c></row>"#
        ));
        if text.len() > (1 << 22) - 256 {
            zip.write_all(text.as_bytes()).expect("written");
            text.clear();
        }
    }
    text.push_str("</sheetData></worksheet>");
    zip.write_all(text.as_bytes()).expect("written");
    zip.finish().expect("finished");
    let run = run_checked_within(
        folder.path(),
        "full height.xlsx",
        &["run", "--json", "--no-write", "--jobs", "1"],
        LARGE_FILE_STALL_LIMIT,
    );
    run.expect_code(0);
    let line = json_line(&run);
    assert_eq!(line["table"]["n_records"], 1_048_575, "{}", run.report());
    assert_eq!(line["table"]["range"], "A1:B1048576");
}

#[test]
fn a_row_of_16384_condition_columns_is_refused_with_the_reason() {
    let folder = temp_folder();
    let columns = 16_384u32;
    let mut rows = String::new();
    for row in 1..=3u32 {
        rows.push_str(&format!(r#"<row r="{row}">"#));
        for col in 0..columns {
            let letters = workbook_io::column_letters(col);
            if row == 1 {
                rows.push_str(&format!(
                    r#"<c r="{letters}1" t="inlineStr"><is><t>C{col}</t></is></c>"#
                ));
            } else {
                rows.push_str(&format!(r#"<c r="{letters}{row}"><v>{}</v></c>"#, (col * row) % 7));
            }
        }
        rows.push_str("</row>");
    }
    write_xlsx_parts(
        &folder.path().join("wide.xlsx"),
        &sheet_xml(&rows),
        EMPTY_SHARED_STRINGS,
    );
    expect_failed(
        folder.path(),
        "wide.xlsx",
        &[
            "16384 conditions",
            "sheet 'Trial'",
            "A1:XFD3",
            "more than the 200",
            "layout",
        ],
    );
}

#[test]
fn a_table_of_16383_response_columns_is_analysed_for_its_first_ones() {
    let folder = temp_folder();
    let mut rows = String::new();
    for row in 1..=5u32 {
        rows.push_str(&format!(r#"<row r="{row}">"#));
        for col in 0..16_384u32 {
            let letters = workbook_io::column_letters(col);
            match (row, col) {
                (1, 0) => rows.push_str(r#"<c r="A1" t="inlineStr"><is><t>Line</t></is></c>"#),
                (1, _) => rows.push_str(&format!(
                    r#"<c r="{letters}1" t="inlineStr"><is><t>R{col}</t></is></c>"#
                )),
                (_, 0) => rows.push_str(&format!(
                    r#"<c r="A{row}" t="inlineStr"><is><t>{}</t></is></c>"#,
                    if row % 2 == 0 { "a" } else { "b" }
                )),
                _ => rows.push_str(&format!(
                    r#"<c r="{letters}{row}"><v>{}</v></c>"#,
                    (col * 7 + row * row) % 13
                )),
            }
        }
        rows.push_str("</row>");
    }
    write_xlsx_parts(
        &folder.path().join("broad.xlsx"),
        &sheet_xml(&rows),
        EMPTY_SHARED_STRINGS,
    );
    let run = run_checked_within(
        folder.path(),
        "broad.xlsx",
        &["run", "--json", "--no-write", "--jobs", "1"],
        LARGE_FILE_STALL_LIMIT,
    );
    run.expect_code(0);
    let line = json_line(&run);
    assert_eq!(
        line["responses"].as_array().map(Vec::len),
        Some(250),
        "{}",
        run.report()
    );
    // Column IR (zero-based 251) holds R251, the first response left out.
    let finding = line["findings"]
        .as_array()
        .and_then(|findings| findings.iter().find(|finding| finding["cell"] == "IR1").cloned())
        .unwrap_or_else(|| panic!("no finding at IR1{}", run.report()));
    assert_eq!(finding["kind"], "analysis");
    assert_eq!(finding["sheet"], "Trial");
    let message = finding["message"].as_str().unwrap_or_default();
    for word in ["16383 response columns", "first 250", "'R251'"] {
        assert!(message.contains(word), "the message lacks '{word}': {message}");
    }
}

#[test]
fn a_long_table_of_thousands_of_factor_combinations_is_refused_with_the_reason() {
    let folder = temp_folder();
    let mut rows = vec![vec![Put::Text("Mould"), Put::Text("Press"), Put::Text("Weight")]];
    for mould in 0..60 {
        for press in 0..60 {
            rows.push(vec![
                Put::Owned(format!("M{mould}")),
                Put::Owned(format!("P{press}")),
                Put::Number(f64::from((mould * 7 + press * 3) % 11)),
            ]);
        }
    }
    write_rows(&folder.path().join("combinations.xlsx"), "Trial", &rows);
    let error = expect_failed(folder.path(), "combinations.xlsx", &["conditions", "sheet 'Trial'"]);
    assert!(error.contains("3600"), "{error}");
}

// ----------------------------------------------------------------------- ods

#[test]
fn ods_built_by_hand_is_readable() {
    // The control for the ods bombs below.
    let folder = temp_folder();
    write_ods(&folder.path().join("plain.ods"), "Trial", &ods_plain_rows());
    let run = run_checked(
        folder.path(),
        "plain.ods",
        &["run", "--json", "--no-write", "--jobs", "1"],
    );
    run.expect_code(0);
    assert_eq!(json_line(&run)["table"]["n_records"], 8, "{}", run.report());
}

#[test]
fn ods_row_repeated_a_billion_times_is_refused() {
    let folder = temp_folder();
    let rows = format!(
        r#"{}<table:table-row table:number-rows-repeated="1000000000">{}</table:table-row>"#,
        ods_plain_rows(),
        ods_number(1.0)
    );
    write_ods(&folder.path().join("tall.ods"), "Trial", &rows);
    let error = expect_refused(folder.path(), "tall.ods", "sheet 'Trial' spans 1000000009 rows");
    assert!(error.contains("repeated"), "{error}");
}

#[test]
fn ods_repeated_rows_of_repeated_cells_are_refused() {
    // 1,000,000 rows × 99 cells stays under the parser's own cell cap but
    // asks for gigabytes: this aborted the process before the guard.
    let folder = temp_folder();
    let cell = ods_number(1.0).replace(
        "<table:table-cell ",
        r#"<table:table-cell table:number-columns-repeated="99" "#,
    );
    let rows = format!(
        r#"{}<table:table-row table:number-rows-repeated="1000000">{cell}</table:table-row>"#,
        ods_plain_rows()
    );
    write_ods(&folder.path().join("block.ods"), "Trial", &rows);
    expect_refused(folder.path(), "block.ods", "1000009 rows × 99 columns");
}

#[test]
fn ods_cell_repeated_across_sixteen_million_columns_is_refused() {
    let folder = temp_folder();
    let cell = ods_number(1.0).replace(
        "<table:table-cell ",
        r#"<table:table-cell table:number-columns-repeated="16000000" "#,
    );
    let rows = format!("{}<table:table-row>{cell}</table:table-row>", ods_plain_rows());
    write_ods(&folder.path().join("broad.ods"), "Trial", &rows);
    expect_refused(folder.path(), "broad.ods", "16000000 columns");
}

#[test]
fn ods_content_ending_inside_a_sheet_is_refused_at_once() {
    // Found by the read_ods fuzz target: the parser waited for ever for the
    // end tag of a sheet whose content part stops short.
    let folder = temp_folder();
    let content = format!(
        r#"<?xml version="1.0" encoding="UTF-8"?><office:document-content xmlns:office="urn:oasis:names:tc:opendocument:xmlns:office:1.0" xmlns:table="urn:oasis:names:tc:opendocument:xmlns:table:1.0" xmlns:text="urn:oasis:names:tc:opendocument:xmlns:text:1.0"><office:body><office:spreadsheet><table:table table:name="Trial">{}<!-- </table:table> --></table:table/cell>"#,
        ods_plain_rows()
    );
    write_ods_content(&folder.path().join("stops short.ods"), &content);
    expect_refused(folder.path(), "stops short.ods", "ends inside sheet 'Trial'");
}

#[test]
fn ods_empty_filler_rows_as_saved_by_spreadsheet_programs_cost_nothing() {
    let folder = temp_folder();
    let rows = format!(
        r#"{}<table:table-row table:number-rows-repeated="1048567"><table:table-cell table:number-columns-repeated="1024"/></table:table-row>"#,
        ods_plain_rows()
    );
    write_ods(&folder.path().join("saved.ods"), "Trial", &rows);
    let run = run_checked(
        folder.path(),
        "saved.ods",
        &["run", "--json", "--no-write", "--jobs", "1"],
    );
    run.expect_code(0);
    assert_eq!(json_line(&run)["table"]["n_records"], 8, "{}", run.report());
}
