//! The settings-sheet reader and table detection on a sheet built from the
//! input: each line is a row, tab-separated cells; a cell that parses as a
//! number is a number, `#...!` an error value, TRUE/FALSE a boolean, `@n` a
//! date serial, anything else text. The first line may hold merged areas
//! (`merge A1:B1 ...`) and hidden rows (`hide 3 4`).
#![no_main]

use libfuzzer_sys::fuzz_target;
use workbook_io::layout::{detect_table, Layout, TableRequest};
use workbook_io::{parse_a1_range, CellPos, CellValue, SheetGrid};

fuzz_target!(|data: &[u8]| {
    let text = String::from_utf8_lossy(data);
    let mut grid = SheetGrid {
        name: "trialyst settings".into(),
        ..SheetGrid::default()
    };
    let mut lines = text.split('\n').peekable();
    if let Some(first) = lines.peek() {
        if first.starts_with("merge ") || first.starts_with("hide ") {
            for word in first.split_whitespace().skip(1) {
                if let Some(rect) = parse_a1_range(word) {
                    grid.merged.push(rect);
                } else if let Ok(row) = word.parse::<u32>() {
                    grid.hidden_rows.push(row);
                }
            }
            grid.hidden_rows.sort_unstable();
            lines.next();
        }
    }
    for (row, line) in lines.enumerate().take(2_000) {
        for (col, cell) in line.split('\t').enumerate().take(200) {
            if cell.is_empty() {
                continue;
            }
            let value = if let Ok(number) = cell.trim().parse::<f64>() {
                CellValue::Number(number)
            } else if let Some(serial) = cell.strip_prefix('@').and_then(|rest| rest.parse::<f64>().ok()) {
                CellValue::Date(serial)
            } else if cell.eq_ignore_ascii_case("true") || cell.eq_ignore_ascii_case("false") {
                CellValue::Bool(cell.eq_ignore_ascii_case("true"))
            } else {
                let index = grid.strings.len() as u32;
                grid.strings.push(cell.to_string());
                if cell.starts_with('#') && cell.ends_with('!') {
                    CellValue::Error(index)
                } else {
                    CellValue::Text(index)
                }
            };
            grid.cells.push((CellPos::new(row as u32, col as u32), value));
        }
    }
    let _ = workbook_io::settings::read_setting_rows(&grid);
    let _ = grid.used_rect();
    for layout in [None, Some(Layout::Long), Some(Layout::Wide)] {
        let request = TableRequest {
            layout,
            ..TableRequest::default()
        };
        if let Ok(table) = detect_table(&grid, &request) {
            for response in 0..table.responses.len() {
                for record in 0..table.n_records().min(64) {
                    let _ = table.value_cell(response, record);
                }
            }
        }
    }
});
