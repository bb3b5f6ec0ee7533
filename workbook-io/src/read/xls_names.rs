//! Defined names of an xls workbook (BIFF8, [MS-XLS]) for the tolerant
//! reader: a name whose formula is one reference to a cell or rectangle of
//! one sheet of this workbook (PtgRef3d 2.5.198.85 or PtgArea3d 2.5.198.28,
//! in any of their three classes) becomes the range it stands for; the sheet
//! is found through the XTI entry of the ExternSheet record (2.4.106) and the
//! SupBook record (2.4.271) that entry names, which must be this workbook.
//! Built-in names, macro names, relative references and any longer formula
//! are passed over, as is a record too short for what it declares: a name
//! is never a reason to refuse the workbook.

use super::xls_cells::{u16_at, Segments, XlsSheet};
use crate::cell::{CellPos, CellRect};

/// The `cch` a SupBook record carries when it stands for the workbook that
/// holds it (MS-XLS 2.4.271: 0x0401, a self-referencing supporting link).
pub(super) const SELF_SUPPORTING_BOOK: u16 = 0x0401;

/// One defined name as its record gives it, before its sheet is resolved.
#[derive(Debug, Clone, PartialEq)]
pub(super) struct DefinedName {
    pub name: String,
    /// True for a name of the whole workbook, false for a name of one sheet.
    pub workbook_wide: bool,
    /// The XTI entry that names the sheet.
    pub xti: u16,
    pub rect: CellRect,
}

/// What the globals say about references: the supporting books (true for
/// this workbook), the XTI entries (supporting book, first and last sheet)
/// and the defined names read so far.
#[derive(Debug, Default)]
pub(super) struct References {
    pub supporting_books: Vec<bool>,
    pub xtis: Vec<(u16, i16, i16)>,
    pub names: Vec<DefinedName>,
}

impl References {
    /// The XTI entries of an ExternSheet record (a count, then six bytes
    /// each), as many as are really there.
    pub fn read_extern_sheet(&mut self, body: &[u8], continues: &[&[u8]]) {
        let mut parts = vec![body];
        parts.extend_from_slice(continues);
        let mut reader = Segments::new(parts);
        let Some(count) = reader.u16() else {
            return;
        };
        for _ in 0..count {
            let (Some(book), Some(first), Some(last)) = (reader.u16(), reader.u16(), reader.u16()) else {
                break;
            };
            self.xtis.push((book, first as i16, last as i16));
        }
    }

    /// Each name whose reference lies on one worksheet of this workbook, as
    /// (name, `'Sheet'!A1:C9`), workbook-wide names first.
    pub fn resolve(&self, sheets: &[XlsSheet]) -> Vec<(String, String)> {
        let mut resolved: Vec<(bool, String, String)> = self
            .names
            .iter()
            .filter_map(|defined| {
                let &(book, first, last) = self.xtis.get(usize::from(defined.xti))?;
                if self.supporting_books.get(usize::from(book)) != Some(&true) || first != last {
                    return None;
                }
                let sheet = sheets.get(usize::try_from(first).ok()?)?;
                if !sheet.worksheet {
                    return None;
                }
                let range = defined.rect.a1();
                let quoted = sheet.name.replace('\'', "''");
                Some((
                    !defined.workbook_wide,
                    defined.name.clone(),
                    format!("'{quoted}'!{range}"),
                ))
            })
            .collect();
        resolved.sort_by_key(|(sheet_only, _, _)| *sheet_only);
        resolved.into_iter().map(|(_, name, range)| (name, range)).collect()
    }
}

/// Flags of a Lbl record that rule a name out: fFunc, fProc (macros) and
/// fBuiltin (MS-XLS 2.4.150).
const NOT_A_RANGE_NAME: u16 = 0x0002 | 0x0008 | 0x0020;

/// The defined name of a Lbl record body (MS-XLS 2.4.150: flags, chKey,
/// cch, cce, reserved, itab, four reserved bytes, the name as an
/// XLUnicodeStringNoCch, then the formula's cce bytes), when its formula is
/// one absolute reference to a cell or a rectangle; None otherwise.
pub(super) fn defined_name(body: &[u8]) -> Option<DefinedName> {
    let flags = u16_at(body, 0)?;
    if flags & NOT_A_RANGE_NAME != 0 {
        return None;
    }
    let count = usize::from(*body.get(3)?);
    let formula_len = usize::from(u16_at(body, 4)?);
    let scope = u16_at(body, 8)?;
    if count == 0 {
        return None;
    }
    let wide = body.get(14)? & 1 == 1;
    let name_end = 15 + count * if wide { 2 } else { 1 };
    let characters = body.get(15..name_end)?;
    let name = if wide {
        let units: Vec<u16> = characters
            .chunks_exact(2)
            .map(|pair| u16::from_le_bytes([pair[0], pair[1]]))
            .collect();
        String::from_utf16_lossy(&units)
    } else {
        characters.iter().map(|&byte| char::from(byte)).collect()
    };
    let formula = body.get(name_end..name_end + formula_len)?;
    let (xti, rect) = single_reference(formula)?;
    Some(DefinedName {
        name,
        workbook_wide: scope == 0,
        xti,
        rect,
    })
}

/// The XTI index and rectangle of a formula that is exactly one PtgRef3d
/// (ptg 0x3A, 0x5A or 0x7A: ixti, row, column) or PtgArea3d (0x3B, 0x5B or
/// 0x7B: ixti, first and last row, first and last column).
fn single_reference(formula: &[u8]) -> Option<(u16, CellRect)> {
    let (&ptg, _) = formula.split_first()?;
    let xti = u16_at(formula, 1)?;
    let (first, last) = match (ptg, formula.len()) {
        (0x3A | 0x5A | 0x7A, 7) => {
            let cell = cell_at(u16_at(formula, 3)?, u16_at(formula, 5)?)?;
            (cell, cell)
        }
        (0x3B | 0x5B | 0x7B, 11) => (
            cell_at(u16_at(formula, 3)?, u16_at(formula, 7)?)?,
            cell_at(u16_at(formula, 5)?, u16_at(formula, 9)?)?,
        ),
        _ => return None,
    };
    let rect = CellRect {
        first: CellPos::new(first.row.min(last.row), first.col.min(last.col)),
        last: CellPos::new(first.row.max(last.row), first.col.max(last.col)),
    };
    Some((xti, rect))
}

/// A cell from a row and a column field (ColRelNegU, MS-XLS 2.5.50: the
/// column in 14 bits, then whether the column and the row are offsets from
/// the cell where the formula is evaluated). A name with an offset moves
/// with that cell and names no fixed range, so it gives None, as does a
/// column past the format's last (IV, 256 columns).
fn cell_at(row: u16, column: u16) -> Option<CellPos> {
    if column & 0xC000 != 0 {
        return None;
    }
    let col = column & 0x3FFF;
    if col > 0xFF {
        return None;
    }
    Some(CellPos::new(u32::from(row), u32::from(col)))
}
