//! xlsb through the read path: the raw bytes as a file (mode byte even), or
//! the bytes as the binary sheet part of a container whose workbook part
//! names one sheet (mode byte odd; after a 0xFF 0xFE pair, the rest is the
//! workbook part instead of the built-in one).
#![no_main]

use libfuzzer_sys::fuzz_target;
use workbook_io_fuzz::{mode_and_rest, read_everything, zip_of, CONTENT_TYPES, ROOT_RELS};

/// One record (MS-XLSB 2.1.4): type and size as little-endian base-128 numbers, then the body.
fn record(record_type: u16, body: &[u8]) -> Vec<u8> {
    let mut bytes = Vec::new();
    let mut value = u32::from(record_type);
    loop {
        let byte = (value & 0x7F) as u8;
        value >>= 7;
        if value == 0 {
            bytes.push(byte);
            break;
        }
        bytes.push(byte | 0x80);
    }
    let mut size = body.len() as u32;
    loop {
        let byte = (size & 0x7F) as u8;
        size >>= 7;
        if size == 0 {
            bytes.push(byte);
            break;
        }
        bytes.push(byte | 0x80);
    }
    bytes.extend_from_slice(body);
    bytes
}

/// A workbook part naming one sheet "Trial" at relationship rId1 (BrtBundleSh, MS-XLSB 2.4.304).
fn workbook_part() -> Vec<u8> {
    let wide = |text: &str| {
        let units: Vec<u16> = text.encode_utf16().collect();
        let mut bytes = (units.len() as u32).to_le_bytes().to_vec();
        for unit in units {
            bytes.extend(unit.to_le_bytes());
        }
        bytes
    };
    let mut bundle = 0u32.to_le_bytes().to_vec(); // visible
    bundle.extend(1u32.to_le_bytes()); // sheet id
    bundle.extend(wide("rId1"));
    bundle.extend(wide("Trial"));
    let mut part = record(0x0083, &[]); // BrtBeginBook
    part.extend(record(0x008F, &[])); // BrtBeginBundleShs
    part.extend(record(0x009C, &bundle)); // BrtBundleSh
    part.extend(record(0x0090, &[])); // BrtEndBundleShs
    part.extend(record(0x0084, &[])); // BrtEndBook
    part
}

const RELS: &str = r#"<?xml version="1.0" encoding="UTF-8" standalone="yes"?><Relationships xmlns="http://schemas.openxmlformats.org/package/2006/relationships"><Relationship Id="rId1" Type="http://schemas.openxmlformats.org/officeDocument/2006/relationships/worksheet" Target="worksheets/sheet1.bin"/></Relationships>"#;

fuzz_target!(|data: &[u8]| {
    let Some((mode, rest)) = mode_and_rest(data) else {
        return;
    };
    if mode % 2 == 0 {
        read_everything(rest, "xlsb");
        return;
    }
    let built_in = workbook_part();
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
