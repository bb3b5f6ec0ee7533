//! A tolerant reader of the cell records of an xlsb sheet (BIFF12, [MS-XLSB]).
//!
//! calamine's xlsb cell reader stops the whole sheet at the first cell record
//! it cannot make sense of (a shared-text index past the table, an error code
//! it does not know, a record cut short). When it does, the sheet is read
//! again here from the published record layouts: the workbook part gives the
//! sheets (BrtBundleSh) and its relationships their parts, the shared strings
//! part the strings (BrtSSTItem), the styles part which cell formats show
//! dates (BrtFmt, BrtXF inside BrtBeginCellXFs), and the sheet part its cells
//! (BrtRowHdr, then BrtCellRk, BrtCellError, BrtCellBool, BrtCellReal,
//! BrtCellSt, BrtCellIsst and the four BrtFmla* records with their cached
//! values). A record whose content does not fit its type becomes an unreadable
//! cell at its address, and the rest of the sheet is still read.
//!
//! Every length is checked before it is used, and nothing is allocated from a
//! count the file declares.

use std::io::{BufReader, Read};
use std::path::Path;

use crate::cell::CellValue;

use super::sheet_xml::{is_builtin_date_id, is_date_format};
// An RkNumber (MS-XLSB 2.5.122) is laid out as the RK of MS-XLS 2.5.218.
use super::xls_cells::{damaged, error_text, rk_number};
use super::GridBuilder;

/// One record: its type and body; `cut` when the part ends inside it.
struct Record<'a> {
    kind: u32,
    body: &'a [u8],
    cut: bool,
}

/// A little-endian base-128 number of at most `max_bytes` bytes (MS-XLSB 2.1.4).
fn varint(bytes: &[u8], at: &mut usize, max_bytes: usize) -> Option<u32> {
    let mut value = 0u32;
    for shift in 0..max_bytes {
        let byte = *bytes.get(*at)?;
        *at += 1;
        value |= u32::from(byte & 0x7F) << (7 * shift);
        if byte & 0x80 == 0 {
            return Some(value);
        }
    }
    Some(value)
}

/// The records of a part held in memory (the small workbook, strings and
/// styles parts); a record that runs past the end is yielded once with what
/// is there and `cut` set, and ends the walk.
fn records(part: &[u8]) -> impl Iterator<Item = Record<'_>> {
    let mut at = 0usize;
    let mut done = false;
    std::iter::from_fn(move || {
        if done || at >= part.len() {
            return None;
        }
        let kind = varint(part, &mut at, 2)?;
        let size = varint(part, &mut at, 4)? as usize;
        let start = at.min(part.len());
        let end = start.saturating_add(size);
        if end > part.len() {
            done = true;
            return Some(Record {
                kind,
                body: &part[start..],
                cut: true,
            });
        }
        at = end;
        Some(Record {
            kind,
            body: &part[start..end],
            cut: false,
        })
    })
}

/// The records of a sheet part read as a stream, one body at a time in a
/// reused buffer (a sheet part can be large; it is never held whole).
struct RecordStream<R: Read> {
    reader: R,
    body: Vec<u8>,
    done: bool,
}

impl<R: Read> RecordStream<R> {
    fn new(reader: R) -> Self {
        Self {
            reader,
            body: Vec::new(),
            done: false,
        }
    }

    fn varint(&mut self, max_bytes: usize) -> Option<u32> {
        let mut value = 0u32;
        for shift in 0..max_bytes {
            let mut byte = [0u8];
            self.reader.read_exact(&mut byte).ok()?;
            value |= u32::from(byte[0] & 0x7F) << (7 * shift);
            if byte[0] & 0x80 == 0 {
                return Some(value);
            }
        }
        Some(value)
    }

    /// The next record, or None at the end of the part.
    fn next_record(&mut self) -> Option<Record<'_>> {
        if self.done {
            return None;
        }
        let Some(kind) = self.varint(2) else {
            self.done = true;
            return None;
        };
        let Some(size) = self.varint(4) else {
            self.done = true;
            return None;
        };
        self.body.clear();
        // Grows with the bytes that are there, not with the declared size.
        let read = (&mut self.reader).take(u64::from(size)).read_to_end(&mut self.body);
        let cut = read.is_err() || self.body.len() < size as usize;
        if cut {
            self.done = true;
        }
        Some(Record {
            kind,
            body: &self.body,
            cut,
        })
    }
}

fn u32_at(bytes: &[u8], at: usize) -> Option<u32> {
    bytes
        .get(at..at + 4)
        .map(|four| u32::from_le_bytes([four[0], four[1], four[2], four[3]]))
}

/// An XLWideString (MS-XLSB 2.5.168): a character count, then UTF-16 units.
fn wide_string(bytes: &[u8], at: usize) -> Option<String> {
    let count = u32_at(bytes, at)? as usize;
    let units = bytes.get(at + 4..at.checked_add(4)?.checked_add(count.checked_mul(2)?)?)?;
    let units: Vec<u16> = units
        .chunks_exact(2)
        .map(|pair| u16::from_le_bytes([pair[0], pair[1]]))
        .collect();
    Some(String::from_utf16_lossy(&units))
}

/// Names of the cell records, for descriptions of damaged ones.
fn record_name(kind: u32) -> &'static str {
    match kind {
        0x0002 => "RK number cell",
        0x0003 => "error cell",
        0x0004 => "TRUE/FALSE cell",
        0x0005 => "number cell",
        0x0006 => "text cell",
        0x0007 => "shared-text cell",
        0x0008 => "text formula",
        0x0009 => "number formula",
        0x000A => "TRUE/FALSE formula",
        0x000B => "error formula",
        _ => "cell",
    }
}

/// The parts the cells need, read from the container.
struct Parts {
    strings: Vec<String>,
    date_styles: Vec<bool>,
}

/// Reads a zip entry whole, at most `limit` bytes; None when it is missing.
fn entry<R: Read + std::io::Seek>(archive: &mut zip::ZipArchive<R>, name: &str, limit: u64) -> Option<Vec<u8>> {
    let found = exact_name(archive, name)?;
    let mut bytes = Vec::new();
    archive.by_name(&found).ok()?.take(limit).read_to_end(&mut bytes).ok()?;
    Some(bytes)
}

/// The name an entry has in the container, matched without regard to case.
fn exact_name<R: Read + std::io::Seek>(archive: &zip::ZipArchive<R>, name: &str) -> Option<String> {
    archive
        .file_names()
        .filter_map(Result::ok)
        .find(|candidate| candidate.eq_ignore_ascii_case(name))
        .map(|candidate| candidate.into_owned())
}

/// The part of the sheet named `sheet`: its relationship id from the
/// workbook part (BrtBundleSh, MS-XLSB 2.4.304), its target from the
/// workbook's relationships.
fn sheet_part<R: Read + std::io::Seek>(archive: &mut zip::ZipArchive<R>, sheet: &str, limit: u64) -> Option<String> {
    let workbook = entry(archive, "xl/workbook.bin", limit)?;
    let relation = records(&workbook).find_map(|record| {
        if record.kind != 0x009C {
            return None;
        }
        let id = wide_string(record.body, 8)?;
        let id_len = 4 + 2 * id.encode_utf16().count();
        let name = wide_string(record.body, 8 + id_len)?;
        (name == sheet).then_some(id)
    })?;
    let rels = entry(archive, "xl/_rels/workbook.bin.rels", limit)?;
    let rels = String::from_utf8_lossy(&rels);
    for element in rels.split('<').filter(|element| element.starts_with("Relationship ")) {
        if super::guard::attribute_value(element, "Id") == Some(relation.as_str()) {
            let target = super::guard::attribute_value(element, "Target")?;
            let name = match target.strip_prefix('/') {
                Some(absolute) => absolute.to_string(),
                None => format!("xl/{target}"),
            };
            return exact_name(archive, &name);
        }
    }
    None
}

impl Parts {
    fn load<R: Read + std::io::Seek>(archive: &mut zip::ZipArchive<R>, limit: u64) -> Self {
        let mut strings = Vec::new();
        if let Some(part) = entry(archive, "xl/sharedStrings.bin", limit) {
            // BrtSSTItem (MS-XLSB 2.4.727): a RichStr, flags byte then the text.
            for record in records(&part).filter(|record| record.kind == 0x0013) {
                strings.push(wide_string(record.body, 1).unwrap_or_default());
            }
        }
        let mut date_formats = Vec::new();
        let mut date_styles = Vec::new();
        if let Some(part) = entry(archive, "xl/styles.bin", limit) {
            let mut in_cell_xfs = false;
            for record in records(&part) {
                match record.kind {
                    // BrtFmt (MS-XLSB 2.4.661): id, then the format code.
                    0x002C => {
                        let id = record.body.get(..2).map(|two| u16::from_le_bytes([two[0], two[1]]));
                        if let (Some(id), Some(code)) = (id, wide_string(record.body, 2)) {
                            if is_date_format(&code) {
                                date_formats.push(id);
                            }
                        }
                    }
                    0x0269 => in_cell_xfs = true,
                    0x026A => in_cell_xfs = false,
                    // BrtXF (MS-XLSB 2.4.812): parent, then the number format id.
                    0x002F if in_cell_xfs => {
                        let id = record
                            .body
                            .get(2..4)
                            .map_or(0, |two| u16::from_le_bytes([two[0], two[1]]));
                        date_styles.push(is_builtin_date_id(u32::from(id)) || date_formats.contains(&id));
                    }
                    _ => {}
                }
            }
        }
        Parts { strings, date_styles }
    }
}

/// An opened container with the sheet's part name and the parts the cells need.
pub(crate) struct SheetSource {
    archive: zip::ZipArchive<BufReader<std::fs::File>>,
    part: String,
    parts: Parts,
    limit: u64,
}

impl SheetSource {
    /// Opens the container at `path` and finds the part of `sheet`; None
    /// when the container, the workbook part or the sheet's part cannot be read.
    pub(crate) fn open(path: &Path, sheet: &str, limit: u64) -> Option<Self> {
        let file = super::open_regular_file(path).ok()?;
        let mut archive = zip::ZipArchive::new(BufReader::new(file)).ok()?;
        let part = sheet_part(&mut archive, sheet, limit)?;
        let parts = Parts::load(&mut archive, limit);
        Some(Self {
            archive,
            part,
            parts,
            limit,
        })
    }

    /// Whether the sheet holds a cell record that calamine would read wrong
    /// or not at all (see [`calamine_misreads`]).
    pub(crate) fn calamine_misreads(&mut self) -> bool {
        let Ok(entry) = self.archive.by_name(&self.part) else {
            return false;
        };
        calamine_misreads(BufReader::new(entry.take(self.limit)), &self.parts)
    }

    /// Reads the sheet's cells into `builder`; false when the cap was reached.
    pub(crate) fn read(&mut self, builder: &mut GridBuilder) -> bool {
        let Ok(entry) = self.archive.by_name(&self.part) else {
            return true;
        };
        read_cells(BufReader::new(entry.take(self.limit)), &self.parts, builder)
    }
}

/// The cells of a sheet part; false when the cap was reached.
fn read_cells<R: Read>(part: R, parts: &Parts, builder: &mut GridBuilder) -> bool {
    let mut stream = RecordStream::new(part);
    let mut row: Option<u32> = None;
    let mut in_data = false;
    while let Some(record) = stream.next_record() {
        match record.kind {
            0x0091 => in_data = true,
            0x0092 => break,
            // BrtRowHdr (MS-XLSB 2.4.726): the row of the cells after it.
            0x0000 if in_data => row = u32_at(record.body, 0),
            0x0002..=0x000B if in_data => {
                let (Some(row), Some(col)) = (row, u32_at(record.body, 0)) else {
                    continue;
                };
                let value = match decode(&record, parts) {
                    Decoded::Nothing => continue,
                    Decoded::Number(value) => CellValue::Number(value),
                    Decoded::Date(value) => CellValue::Date(value),
                    Decoded::Bool(flag) => CellValue::Bool(flag),
                    Decoded::Text(text) => CellValue::Text(builder.intern(&text)),
                    Decoded::Shared(index) => {
                        CellValue::Text(builder.intern(parts.strings.get(index).map_or("", String::as_str)))
                    }
                    Decoded::Error(text) => CellValue::Error(builder.intern(text)),
                    Decoded::Damaged(what) => damaged(builder, record_name(record.kind), &what),
                };
                if !builder.push(row, col, value) {
                    return false;
                }
            }
            _ => {}
        }
    }
    true
}

/// Whether a sheet part holds a cell that calamine reads wrong or not at
/// all, so that the sheet is read by this reader instead: a record shorter
/// than its type needs (calamine reads the rest from the bytes left in its
/// buffer by the record before: a wrong value, without a word), or a formula
/// whose cached result is an error value (BrtFmlaError, which calamine's cell
/// reader passes over: the cell would be lost).
fn calamine_misreads<R: Read>(part: R, parts: &Parts) -> bool {
    let mut stream = RecordStream::new(part);
    let mut in_data = false;
    while let Some(record) = stream.next_record() {
        match record.kind {
            0x0091 => in_data = true,
            0x0092 => return false,
            0x000B if in_data => return true,
            0x0002..=0x000A if in_data && record.body.len() >= 4 => {
                if matches!(decode(&record, parts), Decoded::Damaged(_)) {
                    return true;
                }
            }
            _ => {}
        }
    }
    false
}

/// One cell record's content.
enum Decoded {
    Nothing,
    Number(f64),
    Date(f64),
    Bool(bool),
    Text(String),
    /// An index that lies inside the shared-strings table.
    Shared(usize),
    Error(&'static str),
    Damaged(String),
}

/// The content of one cell record (MS-XLSB 2.4.305 to 2.4.314, 2.4.680 to
/// 2.4.684: a Cell of 8 bytes, then the value).
fn decode(record: &Record<'_>, parts: &Parts) -> Decoded {
    let body = record.body;
    let style = body
        .get(4..7)
        .map(|three| u32::from_le_bytes([three[0], three[1], three[2], 0]));
    let number = |value: f64| {
        if style.is_some_and(|style| parts.date_styles.get(style as usize) == Some(&true)) {
            Decoded::Date(value)
        } else {
            Decoded::Number(value)
        }
    };
    let cut_short = |needed: usize| {
        let tail = if record.cut { ", where the part ends" } else { "" };
        Decoded::Damaged(format!(
            "the record is cut short ({} of {needed} bytes{tail})",
            body.len()
        ))
    };
    let error = |code: u8| match error_text(code) {
        Some(text) => Decoded::Error(text),
        None => Decoded::Damaged(format!(
            "it holds error code 0x{code:02X}, which no spreadsheet defines"
        )),
    };
    match record.kind {
        0x0002 => match u32_at(body, 8) {
            Some(rk) => number(rk_number(rk)),
            None => cut_short(12),
        },
        0x0003 | 0x000B => match body.get(8) {
            Some(&code) => error(code),
            None => cut_short(9),
        },
        0x0004 | 0x000A => match body.get(8) {
            Some(&flag) => Decoded::Bool(flag != 0),
            None => cut_short(9),
        },
        0x0005 | 0x0009 => match body.get(8..16) {
            Some(eight) => number(f64::from_le_bytes([
                eight[0], eight[1], eight[2], eight[3], eight[4], eight[5], eight[6], eight[7],
            ])),
            None => cut_short(16),
        },
        0x0006 | 0x0008 => match wide_string(body, 8) {
            Some(text) if text.is_empty() => Decoded::Nothing,
            Some(text) => Decoded::Text(text),
            None => Decoded::Damaged("its characters run past the record's end".into()),
        },
        0x0007 => match u32_at(body, 8) {
            Some(index) => match parts.strings.get(index as usize) {
                Some(text) if text.is_empty() => Decoded::Nothing,
                Some(_) => Decoded::Shared(index as usize),
                None => Decoded::Damaged(format!(
                    "it points to entry {index} of a shared-text table of {}",
                    parts.strings.len()
                )),
            },
            None => cut_short(12),
        },
        _ => Decoded::Nothing,
    }
}
