//! xlsb through the read path: the raw bytes as a file (mode byte even), or
//! the bytes as the binary sheet part of a container whose workbook part
//! names one sheet (mode byte odd; after a 0xFF 0xFE pair, the rest is the
//! workbook part instead of the built-in one).
#![no_main]

use libfuzzer_sys::fuzz_target;
use workbook_io_fuzz::{mode_and_rest, read_everything, zip_of, CONTENT_TYPES, ROOT_RELS};

const RELS: &str = r#"<?xml version="1.0" encoding="UTF-8" standalone="yes"?><Relationships xmlns="http://schemas.openxmlformats.org/package/2006/relationships"><Relationship Id="rId1" Type="http://schemas.openxmlformats.org/officeDocument/2006/relationships/worksheet" Target="worksheets/sheet1.bin"/></Relationships>"#;

fuzz_target!(|data: &[u8]| {
    let Some((mode, rest)) = mode_and_rest(data) else {
        return;
    };
    if mode % 2 == 0 {
        read_everything(rest, "xlsb");
        return;
    }
    let built_in = workbook_io::testing::xlsb_workbook_part();
    let (sheet, workbook) = match rest.windows(2).position(|pair| pair == [0xFF, 0xFE]) {
        Some(split) => (&rest[..split], &rest[split + 2..]),
        None => (rest, built_in.as_slice()),
    };
    let container = zip_of(&[
        ("[Content_Types].xml", CONTENT_TYPES.as_bytes()),
        ("_rels/.rels", ROOT_RELS.as_bytes()),
        ("xl/workbook.bin", workbook),
        ("xl/_rels/workbook.bin.rels", RELS.as_bytes()),
        ("xl/worksheets/sheet1.bin", sheet),
    ]);
    read_everything(&container, "xlsb");
});
