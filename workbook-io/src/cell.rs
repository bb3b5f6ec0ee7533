//! Cell values and A1 addresses, the vocabulary every other module of this crate uses.

use serde::Serialize;

/// The largest row count a worksheet can have (the xlsx limit).
pub const MAX_ROWS: u32 = 1_048_576;
/// The largest column count a worksheet can have (the xlsx limit).
pub const MAX_COLS: u32 = 16_384;

/// One cell's content, reduced to what table detection needs.
///
/// Text is interned: `Text(i)` indexes the sheet's string pool, so that a
/// million-row label column costs one string per distinct label.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum CellValue {
    /// A number (integers are stored as numbers too).
    Number(f64),
    /// Text, as an index into [`crate::SheetGrid::strings`].
    Text(u32),
    /// A boolean.
    Bool(bool),
    /// A date or time, as the spreadsheet serial number.
    Date(f64),
    /// An error value such as `#N/A`, as an index into the string pool.
    Error(u32),
}

/// A cell position, zero-based row and column.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, Serialize)]
pub struct CellPos {
    /// Zero-based row index.
    pub row: u32,
    /// Zero-based column index.
    pub col: u32,
}

impl CellPos {
    /// Makes a position from zero-based row and column.
    pub fn new(row: u32, col: u32) -> Self {
        Self { row, col }
    }

    /// The A1 form of this position, for example `C17`.
    pub fn a1(self) -> String {
        format!("{}{}", column_letters(self.col), self.row + 1)
    }
}

/// A rectangle of cells, inclusive at both ends.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub struct CellRect {
    /// The top-left cell.
    pub first: CellPos,
    /// The bottom-right cell.
    pub last: CellPos,
}

impl CellRect {
    /// Whether the position lies inside the rectangle.
    pub fn contains(&self, pos: CellPos) -> bool {
        pos.row >= self.first.row && pos.row <= self.last.row && pos.col >= self.first.col && pos.col <= self.last.col
    }

    /// The A1 form, for example `A1:C20`.
    pub fn a1(&self) -> String {
        if self.first == self.last {
            self.first.a1()
        } else {
            format!("{}:{}", self.first.a1(), self.last.a1())
        }
    }

    /// Number of rows covered.
    pub fn n_rows(&self) -> u32 {
        self.last.row - self.first.row + 1
    }

    /// Number of columns covered.
    pub fn n_cols(&self) -> u32 {
        self.last.col - self.first.col + 1
    }
}

/// Column letters for a zero-based column index: 0 -> `A`, 27 -> `AB`.
pub fn column_letters(col: u32) -> String {
    let mut letters = Vec::new();
    let mut remaining = col as u64 + 1;
    while remaining > 0 {
        let digit = ((remaining - 1) % 26) as u8;
        letters.push(b'A' + digit);
        remaining = (remaining - 1) / 26;
    }
    letters.reverse();
    String::from_utf8(letters).unwrap_or_default()
}

/// Parses a cell reference such as `C17` or `$C$17` into a position.
///
/// Returns `None` for anything that is not a valid reference inside the
/// worksheet limits.
pub fn parse_a1(text: &str) -> Option<CellPos> {
    let text = text.trim();
    let bytes = text.as_bytes();
    let mut index = 0;
    if bytes.get(index) == Some(&b'$') {
        index += 1;
    }
    let mut col: u64 = 0;
    let letters_start = index;
    while index < bytes.len() && bytes[index].is_ascii_alphabetic() {
        col = col * 26 + (bytes[index].to_ascii_uppercase() - b'A' + 1) as u64;
        if col > MAX_COLS as u64 {
            return None;
        }
        index += 1;
    }
    if index == letters_start {
        return None;
    }
    if bytes.get(index) == Some(&b'$') {
        index += 1;
    }
    let digits = &text[index..];
    if digits.is_empty() || !digits.bytes().all(|b| b.is_ascii_digit()) || digits.len() > 8 {
        return None;
    }
    let row: u64 = digits.parse().ok()?;
    if row == 0 || row > MAX_ROWS as u64 {
        return None;
    }
    Some(CellPos::new(row as u32 - 1, col as u32 - 1))
}

/// Parses an A1 range such as `B2:D40` (or a single cell) into a rectangle.
///
/// The two corners may come in any order; the rectangle is normalised.
pub fn parse_a1_range(text: &str) -> Option<CellRect> {
    let (first_text, last_text) = match text.split_once(':') {
        Some((first, last)) => (first, last),
        None => (text, text),
    };
    let first = parse_a1(first_text)?;
    let last = parse_a1(last_text)?;
    Some(CellRect {
        first: CellPos::new(first.row.min(last.row), first.col.min(last.col)),
        last: CellPos::new(first.row.max(last.row), first.col.max(last.col)),
    })
}

/// Splits a sheet-qualified reference such as `'Week 3'!$A$1:$C$9` into the
/// sheet name and the range text. A reference without a sheet gives `None` for it.
pub fn split_sheet_reference(text: &str) -> (Option<String>, &str) {
    let text = text.trim().trim_start_matches('=');
    match text.rfind('!') {
        Some(bang) => {
            let sheet_part = &text[..bang];
            let sheet = if sheet_part.starts_with('\'') && sheet_part.ends_with('\'') && sheet_part.len() >= 2 {
                sheet_part[1..sheet_part.len() - 1].replace("''", "'")
            } else {
                sheet_part.to_string()
            };
            (Some(sheet), &text[bang + 1..])
        }
        None => (None, text),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn letters_round_trip() {
        // Common practice: A..Z, then AA; XFD is the last xlsx column (16,384).
        assert_eq!(column_letters(0), "A");
        assert_eq!(column_letters(25), "Z");
        assert_eq!(column_letters(26), "AA");
        assert_eq!(column_letters(16_383), "XFD");
        for col in [0, 1, 25, 26, 51, 52, 701, 702, 16_383] {
            let text = format!("{}1", column_letters(col));
            assert_eq!(parse_a1(&text), Some(CellPos::new(0, col)), "{text}");
        }
    }

    #[test]
    fn parses_ranges_and_rejects_nonsense() {
        assert_eq!(parse_a1("$C$17"), Some(CellPos::new(16, 2)));
        assert_eq!(parse_a1("XFE1"), None);
        assert_eq!(parse_a1("A0"), None);
        assert_eq!(parse_a1("A1048577"), None);
        assert_eq!(parse_a1("17"), None);
        let rect = parse_a1_range("D40:B2").expect("valid range");
        assert_eq!(rect.a1(), "B2:D40");
        assert_eq!(rect.n_rows(), 39);
        assert_eq!(
            split_sheet_reference("'Week ''3'!$A$1:$B$4"),
            (Some("Week '3".to_string()), "$A$1:$B$4")
        );
    }
}
