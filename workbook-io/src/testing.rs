//! Builders of binary workbooks record by record, from the layouts in
//! [MS-XLS] (BIFF8) and [MS-XLSB] (BIFF12), for the tests and fuzz targets
//! of this crate and of the workspace. Not part of the reading or writing
//! API: nothing in the program calls them.

use std::io::Write;

/// One BIFF8 record (MS-XLS 2.1.4): type, length, body.
pub fn biff8_record(kind: u16, body: &[u8]) -> Vec<u8> {
    let mut bytes = kind.to_le_bytes().to_vec();
    bytes.extend((body.len() as u16).to_le_bytes());
    bytes.extend(body);
    bytes
}

/// A BIFF8 Workbook stream: globals (BOF, an SST of `strings` in one-byte
/// characters, a BoundSheet8 for the worksheet "Trial", EOF), then the sheet:
/// BOF, `cells`, and EOF, or instead of EOF the bytes of `cut` (a stream
/// that ends inside a record).
pub fn xls_stream(strings: &[&str], cells: &[Vec<u8>], cut: Option<Vec<u8>>) -> Vec<u8> {
    xls_book_stream(strings, &[], &[("Trial", cells)], cut)
}

/// A BIFF8 Workbook stream of several worksheets: globals (BOF, an SST of
/// `strings` in one-byte characters, the records of `globals`, a BoundSheet8
/// per sheet, EOF), then each sheet: BOF, its cell records and EOF; the last
/// sheet ends with the bytes of `cut` instead of EOF when given.
pub fn xls_book_stream(
    strings: &[&str],
    globals: &[Vec<u8>],
    sheets: &[(&str, &[Vec<u8>])],
    cut: Option<Vec<u8>>,
) -> Vec<u8> {
    // BOF (MS-XLS 2.4.21): BIFF8, globals (0x0005) or worksheet (0x0010).
    let bof = |dt: u16| {
        let mut body = 0x0600u16.to_le_bytes().to_vec();
        body.extend(dt.to_le_bytes());
        body.extend([0u8; 12]);
        biff8_record(0x0809, &body)
    };
    // SST (2.4.265): total and unique counts, then XLUnicodeRichExtendedStrings (2.5.293).
    let mut sst = (strings.len() as u32).to_le_bytes().to_vec();
    sst.extend((strings.len() as u32).to_le_bytes());
    for text in strings {
        sst.extend((text.len() as u16).to_le_bytes());
        sst.push(0);
        sst.extend(text.as_bytes());
    }
    let mut head = bof(5);
    head.extend(biff8_record(0x00FC, &sst));
    for record in globals {
        head.extend(record);
    }
    let bound_len: usize = sheets.iter().map(|(name, _)| 4 + 8 + name.len()).sum();
    let mut offset = head.len() + bound_len + 4;
    let mut bodies = Vec::new();
    for (index, (name, cells)) in sheets.iter().enumerate() {
        // BoundSheet8 (2.4.28): the sheet's BOF position, visible, worksheet, name.
        let mut bound = (offset as u32).to_le_bytes().to_vec();
        bound.extend([0u8, 0u8, name.len() as u8, 0u8]);
        bound.extend(name.as_bytes());
        head.extend(biff8_record(0x0085, &bound));
        let mut body = bof(0x10);
        for cell in cells.iter() {
            body.extend(cell);
        }
        match (&cut, index + 1 == sheets.len()) {
            (Some(partial), true) => body.extend(partial),
            _ => body.extend(biff8_record(0x000A, &[])),
        }
        offset += body.len();
        bodies.push(body);
    }
    head.extend(biff8_record(0x000A, &[]));
    for body in bodies {
        head.extend(body);
    }
    head
}

/// A SupBook record (MS-XLS 2.4.271) that stands for the workbook holding
/// it: its sheet count, then 0x0401.
pub fn biff8_self_supbook(sheet_count: u16) -> Vec<u8> {
    let mut body = sheet_count.to_le_bytes().to_vec();
    body.extend(0x0401u16.to_le_bytes());
    biff8_record(0x01AE, &body)
}

/// An ExternSheet record (MS-XLS 2.4.106): the count, then each XTI entry
/// (supporting book, first sheet, last sheet).
pub fn biff8_extern_sheet(entries: &[(u16, i16, i16)]) -> Vec<u8> {
    let mut body = (entries.len() as u16).to_le_bytes().to_vec();
    for (book, first, last) in entries {
        body.extend(book.to_le_bytes());
        body.extend(first.to_le_bytes());
        body.extend(last.to_le_bytes());
    }
    biff8_record(0x0017, &body)
}

/// A Lbl record (MS-XLS 2.4.150) with `flags`, of the workbook (`scope` 0)
/// or of sheet `scope` (1-based), its one-byte-character name and `formula`.
pub fn biff8_name(flags: u16, scope: u16, name: &str, formula: &[u8]) -> Vec<u8> {
    let mut body = flags.to_le_bytes().to_vec();
    body.push(0); // chKey
    body.push(name.len() as u8); // cch
    body.extend((formula.len() as u16).to_le_bytes()); // cce
    body.extend(0u16.to_le_bytes());
    body.extend(scope.to_le_bytes()); // itab
    body.extend([0u8; 4]);
    body.push(0); // one-byte characters
    body.extend(name.as_bytes());
    body.extend(formula);
    biff8_record(0x0018, &body)
}

/// A PtgArea3d (MS-XLS 2.5.198.28) of class `ptg` (0x3B, 0x5B or 0x7B): the
/// XTI index, first and last row, first and last column (absolute).
pub fn ptg_area3d(ptg: u8, xti: u16, rows: (u16, u16), cols: (u16, u16)) -> Vec<u8> {
    let mut formula = vec![ptg];
    for field in [xti, rows.0, rows.1, cols.0, cols.1] {
        formula.extend(field.to_le_bytes());
    }
    formula
}

/// A compound file holding `stream` as its Workbook stream: an xls file.
pub fn xls_file(stream: &[u8]) -> Vec<u8> {
    let mut compound = cfb::CompoundFile::create(std::io::Cursor::new(Vec::new())).expect("in memory");
    {
        let mut writer = compound.create_stream("Workbook").expect("in memory");
        writer.write_all(stream).expect("in memory");
    }
    compound.flush().expect("in memory");
    compound.into_inner().into_inner()
}

/// One BIFF12 record (MS-XLSB 2.1.4): type and size as little-endian
/// base-128 numbers, then the body.
pub fn biff12_record(kind: u16, body: &[u8]) -> Vec<u8> {
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

/// An XLWideString (MS-XLSB 2.5.168): a character count, then UTF-16 units.
pub fn biff12_wide(text: &str) -> Vec<u8> {
    let units: Vec<u16> = text.encode_utf16().collect();
    let mut bytes = (units.len() as u32).to_le_bytes().to_vec();
    for unit in units {
        bytes.extend(unit.to_le_bytes());
    }
    bytes
}

/// A workbook part listing one visible worksheet "Trial" at relationship
/// rId1 (BrtBundleSh, MS-XLSB 2.4.304, between BrtBeginBundleShs 0x008F and
/// BrtEndBundleShs 0x0090).
pub fn xlsb_workbook_part() -> Vec<u8> {
    let mut bundle = 0u32.to_le_bytes().to_vec();
    bundle.extend(1u32.to_le_bytes());
    bundle.extend(biff12_wide("rId1"));
    bundle.extend(biff12_wide("Trial"));
    let mut part = biff12_record(0x0083, &[]);
    part.extend(biff12_record(0x008F, &[]));
    part.extend(biff12_record(0x009C, &bundle));
    part.extend(biff12_record(0x0090, &[]));
    part.extend(biff12_record(0x0084, &[]));
    part
}

/// The parts of an xlsb container around the sheet part `sheet` and a
/// shared-strings part of `strings` (BrtBeginSst 2.4.26, BrtSSTItem 2.4.727),
/// as (entry name, bytes).
pub fn xlsb_parts(sheet: &[u8], strings: &[&str]) -> Vec<(&'static str, Vec<u8>)> {
    let mut counts = (strings.len() as u32).to_le_bytes().to_vec();
    counts.extend((strings.len() as u32).to_le_bytes());
    let mut shared = biff12_record(0x009F, &counts);
    for text in strings {
        let mut item = vec![0u8];
        item.extend(biff12_wide(text));
        shared.extend(biff12_record(0x0013, &item));
    }
    shared.extend(biff12_record(0x00A0, &[]));
    vec![
        ("[Content_Types].xml", XLSB_CONTENT_TYPES.as_bytes().to_vec()),
        ("_rels/.rels", XLSB_ROOT_RELS.as_bytes().to_vec()),
        ("xl/workbook.bin", xlsb_workbook_part()),
        ("xl/_rels/workbook.bin.rels", XLSB_WORKBOOK_RELS.as_bytes().to_vec()),
        ("xl/worksheets/sheet1.bin", sheet.to_vec()),
        ("xl/sharedStrings.bin", shared),
    ]
}

/// A zip container of `entries`, stored (not deflated), so that changes
/// a fuzzer makes to a part reach the parser unchanged.
pub fn zip_of<B: AsRef<[u8]>>(entries: &[(&str, B)]) -> Vec<u8> {
    let mut cursor = std::io::Cursor::new(Vec::new());
    {
        let mut zip = zip::ZipWriter::new(&mut cursor);
        let options = zip::write::SimpleFileOptions::default().compression_method(zip::CompressionMethod::Stored);
        for (name, bytes) in entries {
            zip.start_file(*name, options).expect("in memory");
            zip.write_all(bytes.as_ref()).expect("in memory");
        }
        zip.finish().expect("in memory");
    }
    cursor.into_inner()
}

const XLSB_CONTENT_TYPES: &str = r#"<?xml version="1.0" encoding="UTF-8" standalone="yes"?><Types xmlns="http://schemas.openxmlformats.org/package/2006/content-types"><Default Extension="rels" ContentType="application/vnd.openxmlformats-package.relationships+xml"/><Default Extension="bin" ContentType="application/vnd.ms-excel.sheet.binary.macroEnabled.main"/></Types>"#;
const XLSB_ROOT_RELS: &str = r#"<?xml version="1.0" encoding="UTF-8" standalone="yes"?><Relationships xmlns="http://schemas.openxmlformats.org/package/2006/relationships"><Relationship Id="rId1" Type="http://schemas.openxmlformats.org/officeDocument/2006/relationships/officeDocument" Target="xl/workbook.bin"/></Relationships>"#;
const XLSB_WORKBOOK_RELS: &str = r#"<?xml version="1.0" encoding="UTF-8" standalone="yes"?><Relationships xmlns="http://schemas.openxmlformats.org/package/2006/relationships"><Relationship Id="rId1" Type="http://schemas.openxmlformats.org/officeDocument/2006/relationships/worksheet" Target="worksheets/sheet1.bin"/><Relationship Id="rId2" Type="http://schemas.openxmlformats.org/officeDocument/2006/relationships/sharedStrings" Target="sharedStrings.bin"/></Relationships>"#;
