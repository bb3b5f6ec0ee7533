//! The settings sheet: key/value rows inside a workbook that tell the
//! analysis what to do with it.
//!
//! This module only finds the sheet and reads its rows as text; what the keys
//! mean is decided by the caller. The sheet is recognised by its name,
//! [`SETTINGS_SHEET`], compared without regard to case.

use crate::cell::CellValue;
use crate::read::SheetGrid;

/// The name of the settings sheet that trialyst reads and its plan workbooks write.
pub const SETTINGS_SHEET: &str = "trialyst settings";

/// One key/value row of the settings sheet.
#[derive(Debug, Clone, PartialEq)]
pub struct SettingRow {
    /// The key, trimmed and lower-cased.
    pub key: String,
    /// The value, trimmed, as text.
    pub value: String,
    /// The A1 address of the value cell (or of the key, when the value is blank).
    pub cell: String,
}

/// True when a sheet name is the settings sheet's.
pub fn is_settings_sheet(name: &str) -> bool {
    name.trim().eq_ignore_ascii_case(SETTINGS_SHEET)
}

/// Reads the key/value rows: the first non-empty cell of a row is the key,
/// the next non-empty cell to its right the value. Rows whose key starts
/// with `#` are comments; a first row reading `setting | value` is a header.
pub fn read_setting_rows(grid: &SheetGrid) -> Vec<SettingRow> {
    let mut rows = Vec::new();
    let mut index = 0;
    while index < grid.cells.len() {
        let row = grid.cells[index].0.row;
        let mut end = index;
        while end < grid.cells.len() && grid.cells[end].0.row == row {
            end += 1;
        }
        let row_cells = &grid.cells[index..end];
        index = end;
        let mut texts = row_cells.iter().map(|(pos, value)| {
            let text = match value {
                CellValue::Number(number) => format!("{number}"),
                other => grid.display(*other),
            };
            (pos, text.trim().to_string())
        });
        let Some((key_pos, key)) = texts.find(|(_, text)| !text.is_empty()) else {
            continue;
        };
        let key = key.to_lowercase();
        if key.starts_with('#') {
            continue;
        }
        let value = texts.find(|(_, text)| !text.is_empty());
        if rows.is_empty()
            && key == "setting"
            && value
                .as_ref()
                .is_some_and(|(_, text)| text.eq_ignore_ascii_case("value"))
        {
            continue;
        }
        let (cell, value) = match value {
            Some((pos, text)) => (pos.a1(), text),
            None => (key_pos.a1(), String::new()),
        };
        rows.push(SettingRow { key, value, cell });
    }
    rows
}
