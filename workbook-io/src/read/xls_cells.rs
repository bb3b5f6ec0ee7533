//! A tolerant reader of the cell records of an xls workbook (BIFF8, [MS-XLS]).
//!
//! calamine parses every sheet of an xls workbook when it opens it, and one
//! cell record it cannot make sense of (a shared-text index past the table,
//! an error code it does not know, a record cut short) refuses the whole
//! workbook. When that happens, the workbook is read again here, from the
//! published record layouts: the globals give the shared strings (SST and its
//! CONTINUE records), the number formats and cell formats (FORMAT, XF, to tell
//! dates), the 1904 flag (DATEMODE) and the sheets (BoundSheet8); each sheet's
//! cell records (NUMBER, RK, MULRK, LABELSST, LABEL, RSTRING, BOOLERR, FORMULA
//! with its cached value and the STRING after it; BLANK and MULBLANK are
//! empty) become cells. A record whose content does not fit its type becomes
//! an unreadable cell at its own address (an error cell whose text describes
//! it and does not start with '#'), and the rest of the sheet is still read.
//! Defined names (Lbl) whose formula is one reference to a rectangle of one
//! sheet of this workbook are read too, so that a range can be given by name;
//! any other defined name is passed over.
//!
//! Every length is checked before it is used: nothing here indexes past a
//! slice, and nothing is allocated from a count the file declares (strings
//! and cells grow one by one, from bytes that are really there).

use std::io::Read;
use std::path::Path;

use crate::cell::{CellPos, CellRect, CellValue};

use super::sheet_xml::{is_builtin_date_id, is_date_format};
use super::xls_names::{defined_name, References, SELF_SUPPORTING_BOOK};
use super::GridBuilder;

/// Why the workbook could not be read here either.
#[derive(Debug)]
pub(crate) enum XlsRefusal {
    /// A FILEPASS record: the workbook is encrypted.
    Password,
    /// Not a BIFF8 workbook this reader understands (no compound container
    /// or Workbook stream, an older BIFF version, no BOF record first).
    Unreadable,
}

/// One sheet listed in the globals.
#[derive(Debug, Clone)]
pub(crate) struct XlsSheet {
    pub name: String,
    /// Offset of the sheet's BOF record in the Workbook stream.
    offset: usize,
    pub visible: bool,
    /// A worksheet (not a chart, macro or module sheet).
    pub worksheet: bool,
}

/// The Workbook stream and what its globals say.
#[derive(Debug)]
pub(crate) struct XlsBook {
    stream: Vec<u8>,
    strings: Vec<String>,
    /// For each XF record in order: whether its number format shows dates.
    date_xfs: Vec<bool>,
    pub sheets: Vec<XlsSheet>,
    /// Defined names and the range each stands for (`'Sheet'!A1:C9`),
    /// workbook-wide names before names of one sheet.
    pub names: Vec<(String, String)>,
}

/// One BIFF record: its type, its body and the bodies of the CONTINUE
/// records after it; `cut` when the stream ends inside the body.
struct Record<'a> {
    kind: u16,
    body: &'a [u8],
    continues: Vec<&'a [u8]>,
    cut: bool,
}

/// The records of `stream` from `offset`, CONTINUE records attached to the
/// record before them (MS-XLS 2.1.4). A record that runs past the end of the
/// stream is yielded once with what is there and `cut` set, and ends the walk.
fn records(stream: &[u8], offset: usize) -> impl Iterator<Item = Record<'_>> {
    let mut position = offset;
    let mut done = false;
    std::iter::from_fn(move || {
        if done {
            return None;
        }
        let header = stream.get(position..position.checked_add(4)?)?;
        let kind = u16::from_le_bytes([header[0], header[1]]);
        let length = u16::from_le_bytes([header[2], header[3]]) as usize;
        let start = position + 4;
        let end = start + length;
        if end > stream.len() {
            done = true;
            return Some(Record {
                kind,
                body: &stream[start.min(stream.len())..],
                continues: Vec::new(),
                cut: true,
            });
        }
        position = end;
        let mut continues = Vec::new();
        while let Some(next) = stream.get(position..position + 4) {
            if u16::from_le_bytes([next[0], next[1]]) != 0x003C {
                break;
            }
            let length = u16::from_le_bytes([next[2], next[3]]) as usize;
            let Some(body) = stream.get(position + 4..position + 4 + length) else {
                break;
            };
            continues.push(body);
            position += 4 + length;
        }
        Some(Record {
            kind,
            body: &stream[start..end],
            continues,
            cut: false,
        })
    })
}

pub(super) fn u16_at(bytes: &[u8], at: usize) -> Option<u16> {
    bytes.get(at..at + 2).map(|two| u16::from_le_bytes([two[0], two[1]]))
}

fn u32_at(bytes: &[u8], at: usize) -> Option<u32> {
    bytes
        .get(at..at + 4)
        .map(|four| u32::from_le_bytes([four[0], four[1], four[2], four[3]]))
}

fn f64_at(bytes: &[u8], at: usize) -> Option<f64> {
    let eight: [u8; 8] = bytes.get(at..at + 8)?.try_into().ok()?;
    Some(f64::from_le_bytes(eight))
}

/// A reader over a record body and its CONTINUE bodies, for strings that may
/// cross from one to the next (MS-XLS 2.5.293, 2.4.58: characters that cross
/// start the next body with a fresh flags byte).
pub(super) struct Segments<'a> {
    parts: Vec<&'a [u8]>,
    part: usize,
    at: usize,
}

impl<'a> Segments<'a> {
    pub(super) fn new(parts: Vec<&'a [u8]>) -> Self {
        Self { parts, part: 0, at: 0 }
    }

    fn remaining_here(&self) -> usize {
        self.parts
            .get(self.part)
            .map_or(0, |part| part.len().saturating_sub(self.at))
    }

    /// Moves to the next body when this one is used up; false at the end.
    fn settle(&mut self) -> bool {
        while self.part < self.parts.len() && self.remaining_here() == 0 {
            self.part += 1;
            self.at = 0;
        }
        self.part < self.parts.len()
    }

    fn byte(&mut self) -> Option<u8> {
        if !self.settle() {
            return None;
        }
        let byte = self.parts[self.part][self.at];
        self.at += 1;
        Some(byte)
    }

    pub(super) fn u16(&mut self) -> Option<u16> {
        Some(u16::from_le_bytes([self.byte()?, self.byte()?]))
    }

    fn u32(&mut self) -> Option<u32> {
        Some(u32::from_le_bytes([
            self.byte()?,
            self.byte()?,
            self.byte()?,
            self.byte()?,
        ]))
    }

    /// Skips `count` bytes, across bodies; false when they are not there.
    fn skip(&mut self, mut count: usize) -> bool {
        while count > 0 {
            if !self.settle() {
                return false;
            }
            let step = count.min(self.remaining_here());
            self.at += step;
            count -= step;
        }
        true
    }

    /// `count` characters, one or two bytes each as `wide` says; a new body
    /// in the middle starts with its own flags byte (bit 0: two bytes).
    fn characters(&mut self, count: usize, mut wide: bool) -> Option<String> {
        let mut units: Vec<u16> = Vec::new();
        let mut left = count;
        while left > 0 {
            if self.remaining_here() == 0 {
                // A continuation: its first byte says how wide what follows is.
                self.part += 1;
                self.at = 0;
                if self.part >= self.parts.len() {
                    return None;
                }
                wide = self.byte()? & 1 == 1;
                continue;
            }
            let width = if wide { 2 } else { 1 };
            let here = (self.remaining_here() / width).min(left);
            if here == 0 {
                // Half a character at the end of a body.
                return None;
            }
            let bytes = &self.parts[self.part][self.at..self.at + here * width];
            if wide {
                units.extend(bytes.chunks_exact(2).map(|pair| u16::from_le_bytes([pair[0], pair[1]])));
            } else {
                units.extend(bytes.iter().map(|&byte| u16::from(byte)));
            }
            self.at += here * width;
            left -= here;
        }
        Some(String::from_utf16_lossy(&units))
    }
}

/// One shared string (XLUnicodeRichExtendedString, MS-XLS 2.5.293).
fn rich_string(reader: &mut Segments<'_>) -> Option<String> {
    let count = reader.u16()? as usize;
    let flags = reader.byte()?;
    let runs = if flags & 0x08 != 0 { reader.u16()? as usize } else { 0 };
    let extra = if flags & 0x04 != 0 { reader.u32()? as usize } else { 0 };
    let text = reader.characters(count, flags & 1 == 1)?;
    if !reader.skip(runs * 4) || !reader.skip(extra) {
        return None;
    }
    Some(text)
}

/// The number an RK value stands for (MS-XLS 2.5.218).
pub(super) fn rk_number(rk: u32) -> f64 {
    let value = if rk & 0x02 != 0 {
        f64::from((rk as i32) >> 2)
    } else {
        f64::from_bits(u64::from(rk & 0xFFFF_FFFC) << 32)
    };
    if rk & 0x01 != 0 {
        value / 100.0
    } else {
        value
    }
}

/// The text of a BErr error code (MS-XLS 2.5.20), as calamine writes it.
pub(super) fn error_text(code: u8) -> Option<&'static str> {
    Some(match code {
        0x00 => "#NULL!",
        0x07 => "#DIV/0!",
        0x0F => "#VALUE!",
        0x17 => "#REF!",
        0x1D => "#NAME?",
        0x24 => "#NUM!",
        0x2A => "#N/A",
        0x2B => "#DATA!",
        _ => return None,
    })
}

/// Names of the cell records, for descriptions of damaged ones.
fn record_name(kind: u16) -> &'static str {
    match kind {
        0x0203 => "number",
        0x027E => "RK number",
        0x00BD => "multiple-RK",
        0x00FD => "shared-text",
        0x0204 => "text",
        0x00D6 => "rich-text",
        0x0205 => "TRUE/FALSE or error",
        0x0006 => "formula",
        0x0207 => "formula text",
        _ => "cell",
    }
}

/// The number format ids that show dates, from FORMAT records.
fn format_code(body: &[u8], continues: &[&[u8]]) -> Option<(u16, bool)> {
    let id = u16_at(body, 0)?;
    let mut parts = vec![body.get(2..)?];
    parts.extend_from_slice(continues);
    let mut reader = Segments::new(parts);
    let count = reader.u16()? as usize;
    let wide = reader.byte()? & 1 == 1;
    let code = reader.characters(count, wide)?;
    Some((id, is_date_format(&code)))
}

impl XlsBook {
    /// Reads the Workbook stream of the compound file at `path` (at most
    /// `max_bytes`) and its globals.
    pub(crate) fn open(path: &Path, max_bytes: u64) -> Result<Self, XlsRefusal> {
        let file = super::open_regular_file(path).map_err(|_| XlsRefusal::Unreadable)?;
        let mut compound =
            cfb::CompoundFile::open(std::io::BufReader::new(file)).map_err(|_| XlsRefusal::Unreadable)?;
        let name = ["/Workbook", "/Book"]
            .into_iter()
            .find(|name| compound.is_stream(name))
            .ok_or(XlsRefusal::Unreadable)?;
        let mut stream = Vec::new();
        compound
            .open_stream(name)
            .and_then(|reader| reader.take(max_bytes).read_to_end(&mut stream))
            .map_err(|_| XlsRefusal::Unreadable)?;
        Self::from_stream(stream)
    }

    /// Reads the globals of a Workbook stream.
    pub(crate) fn from_stream(stream: Vec<u8>) -> Result<Self, XlsRefusal> {
        let mut book = XlsBook {
            stream: Vec::new(),
            strings: Vec::new(),
            date_xfs: Vec::new(),
            sheets: Vec::new(),
            names: Vec::new(),
        };
        let mut references = References::default();
        let mut date_formats: Vec<u16> = Vec::new();
        let mut xf_formats: Vec<u16> = Vec::new();
        let mut seen_bof = false;
        for record in records(&stream, 0) {
            match record.kind {
                0x0809 => {
                    if seen_bof {
                        break;
                    }
                    seen_bof = true;
                    // BOF (MS-XLS 2.4.21): only BIFF8 (0x0600) is read here.
                    let version = u16_at(record.body, 0).unwrap_or(0);
                    if version != 0x0600 {
                        // An older version: calamine's refusal stands.
                        return Err(XlsRefusal::Unreadable);
                    }
                }
                _ if !seen_bof => return Err(XlsRefusal::Unreadable),
                0x002F => return Err(XlsRefusal::Password),
                0x041E => {
                    if let Some((id, true)) = format_code(record.body, &record.continues) {
                        date_formats.push(id);
                    }
                }
                // XF (MS-XLS 2.4.353): the number format id is the second field.
                0x00E0 => xf_formats.push(u16_at(record.body, 2).unwrap_or(0)),
                // BoundSheet8 (MS-XLS 2.4.28).
                0x0085 => {
                    let Some(offset) = u32_at(record.body, 0) else {
                        continue;
                    };
                    let state = record.body.get(4).copied().unwrap_or(0) & 0x03;
                    let kind = record.body.get(5).copied().unwrap_or(0);
                    let index = book.sheets.len();
                    let name = record
                        .body
                        .get(6)
                        .and_then(|&count| {
                            let flags = *record.body.get(7)?;
                            let chars = record.body.get(8..)?;
                            let count = count as usize;
                            if flags & 1 == 1 {
                                let units: Vec<u16> = chars
                                    .get(..count * 2)?
                                    .chunks_exact(2)
                                    .map(|pair| u16::from_le_bytes([pair[0], pair[1]]))
                                    .collect();
                                Some(String::from_utf16_lossy(&units))
                            } else {
                                Some(chars.get(..count)?.iter().map(|&byte| char::from(byte)).collect())
                            }
                        })
                        .unwrap_or_else(|| format!("Sheet{}", index + 1));
                    book.sheets.push(XlsSheet {
                        name,
                        offset: offset as usize,
                        visible: state == 0,
                        worksheet: kind == 0,
                    });
                }
                // SST (MS-XLS 2.4.265): the strings as far as they can be read.
                0x00FC => {
                    let mut parts = vec![record.body];
                    parts.extend_from_slice(&record.continues);
                    let mut reader = Segments::new(parts);
                    let (Some(_total), Some(unique)) = (reader.u32(), reader.u32()) else {
                        continue;
                    };
                    for _ in 0..unique {
                        match rich_string(&mut reader) {
                            Some(text) => book.strings.push(text),
                            None => break,
                        }
                    }
                }
                // SupBook (MS-XLS 2.4.271): whether it stands for this workbook.
                0x01AE => references
                    .supporting_books
                    .push(u16_at(record.body, 2) == Some(SELF_SUPPORTING_BOOK)),
                // ExternSheet (2.4.106): the XTI entries, as far as they are there.
                0x0017 => references.read_extern_sheet(record.body, &record.continues),
                // Lbl (2.4.150).
                0x0018 => references.names.extend(defined_name(record.body)),
                0x000A => break,
                _ => {}
            }
        }
        if !seen_bof {
            return Err(XlsRefusal::Unreadable);
        }
        book.names = references.resolve(&book.sheets);
        book.date_xfs = xf_formats
            .iter()
            .map(|&id| is_builtin_date_id(u32::from(id)) || date_formats.contains(&id))
            .collect();
        book.stream = stream;
        Ok(book)
    }

    /// Whether a worksheet holds a shared-text cell whose index lies past
    /// the table: calamine leaves such a cell out without a word, so a
    /// workbook that has one is read here instead, where it is a finding.
    pub(crate) fn has_dangling_shared_text(&self) -> bool {
        let mut offsets: Vec<usize> = self
            .sheets
            .iter()
            .filter(|sheet| sheet.worksheet)
            .map(|sheet| sheet.offset)
            .collect();
        // Sheets listed twice at one place are walked once.
        offsets.sort_unstable();
        offsets.dedup();
        offsets.into_iter().any(|offset| {
            records(&self.stream, offset)
                .skip(1)
                .take_while(|record| record.kind != 0x000A && record.kind != 0x0809)
                .any(|record| {
                    record.kind == 0x00FD
                        && u32_at(record.body, 6).is_some_and(|index| index as usize >= self.strings.len())
                })
        })
    }

    /// A number in the cell format `xf`: a date when the format shows dates.
    fn number(&self, xf: Option<u16>, value: f64) -> CellValue {
        let date = xf.is_some_and(|xf| self.date_xfs.get(xf as usize) == Some(&true));
        if date {
            CellValue::Date(value)
        } else {
            CellValue::Number(value)
        }
    }

    /// Reads the cells of sheet `index` into `builder`; returns the merged
    /// areas, or None when the cell cap was reached.
    pub(crate) fn read_sheet(&self, index: usize, builder: &mut GridBuilder) -> Option<Vec<CellRect>> {
        let Some(sheet) = self.sheets.get(index) else {
            return Some(Vec::new());
        };
        let mut merged = Vec::new();
        let mut seen_bof = false;
        let mut depth = 0usize;
        // The cell of the last FORMULA record whose value is in the STRING record after it.
        let mut pending_string: Option<(u32, u32)> = None;
        for record in records(&self.stream, sheet.offset) {
            if depth > 0 {
                match record.kind {
                    0x0809 => depth += 1,
                    0x000A => depth -= 1,
                    _ => {}
                }
                continue;
            }
            let body = record.body;
            match record.kind {
                0x0809 if seen_bof => depth += 1,
                0x0809 => seen_bof = true,
                0x000A => break,
                0x00E5 => {
                    let count = u16_at(body, 0).unwrap_or(0) as usize;
                    for area in body.get(2..).unwrap_or(&[]).chunks_exact(8).take(count) {
                        let (Some(top), Some(bottom), Some(left), Some(right)) =
                            (u16_at(area, 0), u16_at(area, 2), u16_at(area, 4), u16_at(area, 6))
                        else {
                            continue;
                        };
                        if top <= bottom && left <= right {
                            merged.push(CellRect {
                                first: CellPos::new(u32::from(top), u32::from(left)),
                                last: CellPos::new(u32::from(bottom), u32::from(right)),
                            });
                        }
                    }
                }
                0x0207 => {
                    let Some((row, col)) = pending_string.take() else {
                        continue;
                    };
                    let mut parts = vec![body];
                    parts.extend_from_slice(&record.continues);
                    let mut reader = Segments::new(parts);
                    let text = reader.u16().and_then(|count| {
                        let wide = reader.byte()? & 1 == 1;
                        reader.characters(count as usize, wide)
                    });
                    let value = match text {
                        Some(text) if text.is_empty() => continue,
                        Some(text) => CellValue::Text(builder.intern(&text)),
                        None => damaged(builder, "formula text", "its characters run past the record's end"),
                    };
                    if !builder.push(row, col, value) {
                        return None;
                    }
                }
                0x0203 | 0x027E | 0x00BD | 0x00FD | 0x0204 | 0x00D6 | 0x0205 | 0x0006 => {
                    let (Some(row), Some(col)) = (u16_at(body, 0), u16_at(body, 2)) else {
                        // Not even the cell's address is there: nothing to place.
                        continue;
                    };
                    let (row, col) = (u32::from(row), u32::from(col));
                    if record.kind == 0x00BD {
                        if !self.multiple_rk(body, row, col, builder) {
                            return None;
                        }
                        continue;
                    }
                    let value = self.cell_value(&record, builder, &mut pending_string, (row, col));
                    if let Some(value) = value {
                        if !builder.push(row, col, value) {
                            return None;
                        }
                    }
                }
                _ => {}
            }
        }
        Some(merged)
    }

    /// The cells of a MULRK record (MS-XLS 2.4.175): one per 6 bytes from
    /// the first column, the last column in the final two bytes.
    fn multiple_rk(&self, body: &[u8], row: u32, first: u32, builder: &mut GridBuilder) -> bool {
        let items = body.get(4..).unwrap_or(&[]);
        let whole = items.len().saturating_sub(2) / 6;
        let last = if items.len() >= 2 {
            u16_at(body, body.len() - 2).map(u32::from)
        } else {
            None
        };
        for (step, item) in items.chunks_exact(6).take(whole).enumerate() {
            let col = first + step as u32;
            let (Some(xf), Some(rk)) = (u16_at(item, 0), u32_at(item, 2)) else {
                continue;
            };
            if !builder.push(row, col, self.number(Some(xf), rk_number(rk))) {
                return false;
            }
        }
        let expected = last
            .and_then(|last| last.checked_sub(first))
            .map(|span| span as usize + 1);
        if expected != Some(whole) || items.len() < 2 || (items.len() - 2) % 6 != 0 {
            // A cut or inconsistent record: the first cell it could not give is damaged.
            let col = first + whole as u32;
            let what = damaged(
                builder,
                record_name(0x00BD),
                &format!(
                    "{} bytes of values do not match its columns {} to {}",
                    items.len().saturating_sub(2),
                    crate::cell::column_letters(first),
                    last.map_or_else(|| "?".to_string(), crate::cell::column_letters)
                ),
            );
            if !builder.push(row, col, what) {
                return false;
            }
        }
        true
    }

    /// The value of one single-cell record, or None for no cell (an empty
    /// text, a formula whose text comes in the next record).
    fn cell_value(
        &self,
        record: &Record<'_>,
        builder: &mut GridBuilder,
        pending_string: &mut Option<(u32, u32)>,
        at: (u32, u32),
    ) -> Option<CellValue> {
        let body = record.body;
        let name = record_name(record.kind);
        let xf = u16_at(body, 4);
        let cut_short = |builder: &mut GridBuilder, needed: usize| {
            let tail = if record.cut { ", where the file ends" } else { "" };
            damaged(
                builder,
                name,
                &format!("the record is cut short ({} of {needed} bytes{tail})", body.len()),
            )
        };
        Some(match record.kind {
            // Number (MS-XLS 2.4.180).
            0x0203 => match f64_at(body, 6) {
                Some(value) => self.number(xf, value),
                _ => cut_short(builder, 14),
            },
            // RK (MS-XLS 2.4.220).
            0x027E => match u32_at(body, 6) {
                Some(rk) => self.number(xf, rk_number(rk)),
                _ => cut_short(builder, 10),
            },
            // LabelSst (MS-XLS 2.4.149).
            0x00FD => match u32_at(body, 6) {
                Some(index) => match self.strings.get(index as usize) {
                    Some(text) if text.is_empty() => return None,
                    Some(text) => CellValue::Text(builder.intern(text)),
                    None => damaged(
                        builder,
                        name,
                        &format!(
                            "it points to entry {index} of a shared-text table of {}",
                            self.strings.len()
                        ),
                    ),
                },
                _ => cut_short(builder, 10),
            },
            // Label (MS-XLS 2.4.148), RString (2.4.181).
            0x0204 | 0x00D6 => {
                let mut parts = vec![body.get(6..).unwrap_or(&[])];
                parts.extend_from_slice(&record.continues);
                let mut reader = Segments::new(parts);
                let text = reader.u16().and_then(|count| {
                    let wide = reader.byte()? & 1 == 1;
                    reader.characters(count as usize, wide)
                });
                match text {
                    Some(text) if text.is_empty() => return None,
                    Some(text) => CellValue::Text(builder.intern(&text)),
                    None => damaged(builder, name, "its characters run past the record's end"),
                }
            }
            // BoolErr (MS-XLS 2.4.24).
            0x0205 => match (body.get(6), body.get(7)) {
                (Some(&value), Some(&0)) => CellValue::Bool(value != 0),
                (Some(&code), Some(&1)) => match error_text(code) {
                    Some(text) => CellValue::Error(builder.intern(text)),
                    None => damaged(
                        builder,
                        name,
                        &format!("it holds error code 0x{code:02X}, which no spreadsheet defines"),
                    ),
                },
                (Some(_), Some(&kind)) => damaged(
                    builder,
                    name,
                    &format!("its kind byte is {kind} (0 is TRUE/FALSE, 1 an error)"),
                ),
                _ => cut_short(builder, 8),
            },
            // Formula (MS-XLS 2.4.127): the cached value (FormulaValue, 2.5.133).
            0x0006 => {
                let Some(value) = body.get(6..14) else {
                    return Some(cut_short(builder, 20));
                };
                if value[6..8] != [0xFF, 0xFF] {
                    let number = f64_at(value, 0).unwrap_or(f64::NAN);
                    return Some(self.number(xf, number));
                }
                match value[0] {
                    0x00 => {
                        *pending_string = Some(at);
                        return None;
                    }
                    0x01 => CellValue::Bool(value[2] != 0),
                    0x02 => match error_text(value[2]) {
                        Some(text) => CellValue::Error(builder.intern(text)),
                        None => damaged(
                            builder,
                            name,
                            &format!(
                                "its result is error code 0x{:02X}, which no spreadsheet defines",
                                value[2]
                            ),
                        ),
                    },
                    0x03 => return None,
                    kind => damaged(
                        builder,
                        name,
                        &format!("its result is of kind {kind}, which the format does not define"),
                    ),
                }
            }
            _ => return None,
        })
    }
}

/// An unreadable cell: an error cell whose text says what was wrong.
pub(super) fn damaged(builder: &mut GridBuilder, record: &str, what: &str) -> CellValue {
    CellValue::Error(builder.intern(&format!("a damaged {record} record: {what}")))
}
