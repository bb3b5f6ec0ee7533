//! How a sheet prints: the scale, the row heights for wrapped text, the page breaks, the
//! long lines given a wrapped area of their own, and chart sizes that fit a page.
//!
//! Every sheet we write must print on A4 and on Letter with no text smaller than 8 pt,
//! every chart whole on one page with its axis titles, and every wrapped cell in a row
//! tall enough for it. Spreadsheet programs fit a sheet to the page width by shrinking
//! everything, which turns one long line or a wide table into 4-pt type, and they place
//! page breaks wherever a page is full, through a chart or between a table's header and
//! its rows. So the page is planned here instead:
//!
//! - Scale: the sheet's columns (and charts) are measured in points; the scale is what
//!   fits them on the narrower printable width of the two papers, but never below
//!   [`MIN_SCALE`] percent (body text 11 pt and chart text 10 pt stay at 8 pt or more).
//!   Columns that still do not fit print on a page of their own to the right.
//! - Long lines: a line of text that would run past the right edge of the page is given
//!   the cells to the page edge as a merged, wrapped area with a row tall enough for it.
//! - Row heights: every row holding wrapped text (headers, paragraphs, cautions) is made
//!   tall enough for its text, estimated by wrapping words into the column's width.
//! - Breaks: the rows are laid on pages as tall as the shorter printable height of the
//!   two papers, so that both papers break at the same rows. A run of rows with no blank
//!   row between them (a table with its heading, a paragraph, a chart) moves to the next
//!   page whole when it does not fit the rest of a page but fits a page; a longer run
//!   breaks where the page is full, but never just after a heading or a column header.
//!   Rows frozen at the top repeat on every printed page.
//!
//! Measures (common practice for xlsx, from the file format's definition of column
//! width): a column `w` characters wide is `7 w + 5` pixels at 96 pixels an inch (0.75 pt
//! a pixel); a row is 15 pt unless set; margins are the writer's defaults (0.7 in left
//! and right, 0.75 in top and bottom). Paper: A4 8.27 × 11.69 in, Letter 8.5 × 11 in.

use std::collections::{BTreeMap, HashMap};

use super::{ChartSpec, Look, Sheet, Value};

/// The smallest print scale, in percent: 11-pt text (the body and every chart's text)
/// prints at 8.25 pt.
pub const MIN_SCALE: u16 = 75;

/// The default row height in points.
pub const DEFAULT_ROW_HEIGHT: f64 = 15.0;

/// The default column width in characters.
pub const DEFAULT_COLUMN_WIDTH: f64 = 8.43;

/// The largest row height a cell format allows, in points.
const MAX_ROW_HEIGHT: f64 = 409.0;

/// Printable width and height in points of the narrower and shorter of A4 and Letter,
/// with the default margins: (width, height).
pub fn printable_area(portrait: bool) -> (f64, f64) {
    // A4 8.27 × 11.69 in, Letter 8.5 × 11 in; margins 0.7 in left and right, 0.75 in top
    // and bottom. A little is kept back for the program's own header and footer and for
    // programs that measure columns a little wider than the file format says.
    let (short, long) = (8.27_f64.min(8.5), 11.0_f64.min(11.69));
    let (width, height) = if portrait { (short, long) } else { (long, short) };
    ((width - 1.4) * 72.0 * 0.94, (height - 1.5) * 72.0 * 0.92)
}

/// Points of a column `width` characters wide.
pub fn column_points(width: f64) -> f64 {
    if width <= 0.0 {
        0.0
    } else {
        (width * 7.0 + 5.0).round() * 0.75
    }
}

/// Characters of a look's text that fit in one unit of column width (a conservative
/// estimate for the proportional fonts spreadsheet programs use).
fn characters_per_unit(look: Look) -> f64 {
    match look {
        Look::Title => 0.62,
        Look::Heading | Look::Verdict => 0.8,
        Look::ColumnHeader | Look::Caution | Look::Key => 0.9,
        _ => 1.0,
    }
}

/// Points of one line of a look's text.
fn line_points(look: Look) -> f64 {
    match look {
        Look::Title => 20.0,
        Look::Heading | Look::Verdict => 16.5,
        _ => 15.0,
    }
}

/// Lines that `text` takes when its words are wrapped into `capacity` characters a line.
pub fn wrapped_lines(text: &str, capacity: f64) -> usize {
    let capacity = capacity.max(1.0);
    let mut lines = 0usize;
    for paragraph in text.split('\n') {
        let mut used = 0.0_f64;
        let mut paragraph_lines = 1usize;
        for word in paragraph.split(' ').filter(|word| !word.is_empty()) {
            let length = word.chars().count() as f64;
            let needed = if used == 0.0 { length } else { used + 1.0 + length };
            if needed <= capacity {
                used = needed;
            } else if used == 0.0 {
                // A word longer than a line is broken into pieces.
                paragraph_lines += (length / capacity).ceil() as usize - 1;
                used = length % capacity;
            } else {
                paragraph_lines += 1;
                if length > capacity {
                    paragraph_lines += (length / capacity).ceil() as usize - 1;
                    used = length % capacity;
                } else {
                    used = length;
                }
            }
        }
        lines += paragraph_lines;
    }
    lines.max(1)
}

/// Whether a look wraps its text within its cell.
pub fn look_wraps(look: Look) -> bool {
    matches!(
        look,
        Look::ColumnHeader | Look::Paragraph | Look::Verdict | Look::Caution
    )
}

/// The printed layout of one sheet.
#[derive(Debug, Clone, PartialEq)]
pub struct SheetPrint {
    /// The print scale in percent.
    pub scale: u16,
    /// Row heights in points, for every row given one.
    pub heights: BTreeMap<u32, f64>,
    /// Rows that start a printed page.
    pub breaks: Vec<u32>,
    /// Long lines given a wrapped merged area: (row, first column, last column).
    pub merges: Vec<(u32, u16, u16)>,
    /// The height in pixels of each chart (by position in `Sheet::charts`), shrunk where
    /// a chart would be taller than a page.
    pub chart_heights: Vec<u32>,
    /// Pages down the sheet.
    pub pages_down: usize,
}

fn text_of(value: &Value) -> Option<&str> {
    match value {
        Value::Text(text) => Some(text),
        Value::Link { text, .. } => Some(text),
        _ => None,
    }
}

/// Plans how `sheet` prints.
pub fn plan_sheet(sheet: &Sheet) -> SheetPrint {
    let widths: HashMap<u16, f64> = sheet.widths.iter().copied().collect();
    let width_of = |col: u16| widths.get(&col).copied().unwrap_or(DEFAULT_COLUMN_WIDTH);
    let (page_width, page_height) = printable_area(sheet.portrait);
    let paragraph_rows: std::collections::HashSet<u32> = sheet.heights.iter().map(|(row, _)| *row).collect();

    // Cells by row and column.
    let mut occupied: BTreeMap<u32, BTreeMap<u16, &super::Placed>> = BTreeMap::new();
    for placed in &sheet.cells {
        occupied.entry(placed.row).or_default().insert(placed.col, placed);
    }
    let wraps = |placed: &super::Placed| {
        look_wraps(placed.look) || (placed.look == Look::Note && paragraph_rows.contains(&placed.row))
    };

    // The content's width: every column holding a cell that does not run on to its right
    // (wrapped cells, numbers, table cells), and every chart's right edge.
    let mut last_col: u16 = 0;
    for placed in &sheet.cells {
        last_col = last_col.max(placed.col);
    }
    let left_of = |col: u16| (0..col).map(|c| column_points(width_of(c))).sum::<f64>();
    // A chart's last column prints whole, so the content ends where that column ends.
    for chart in &sheet.charts {
        let right = left_of(chart.anchor.1) + f64::from(chart.size.0) * 0.75;
        let mut col = chart.anchor.1;
        while left_of(col + 1) < right {
            col += 1;
        }
        last_col = last_col.max(col);
    }
    for picture in &sheet.pictures {
        let right = left_of(picture.anchor.1) + f64::from(picture.size.0) * 0.75;
        let mut col = picture.anchor.1;
        while left_of(col + 1) < right {
            col += 1;
        }
        last_col = last_col.max(col);
    }
    let content_width = left_of(last_col + 1);
    let fitting = (100.0 * page_width / content_width.max(1.0)).floor();
    let scale = fitting.clamp(f64::from(MIN_SCALE), 100.0) as u16;
    let sheet_width = page_width * 100.0 / f64::from(scale);
    // The last column that ends on the first page.
    let mut edge_col: u16 = 0;
    let mut right = 0.0;
    for col in 0..=last_col.max(64) {
        right += column_points(width_of(col));
        if right > sheet_width {
            break;
        }
        edge_col = col;
    }

    // Heights: those asked for, then whatever wrapped text needs.
    let mut heights: BTreeMap<u32, f64> = BTreeMap::new();
    for (row, height) in &sheet.heights {
        let entry = heights.entry(*row).or_insert(0.0);
        *entry = entry.max(*height);
    }
    let mut merges = Vec::new();
    for (row, cells) in &occupied {
        let mut needed: f64 = 0.0;
        for (col, placed) in cells {
            let Some(text) = text_of(&placed.value) else {
                continue;
            };
            let length = text.chars().count() as f64;
            if wraps(placed) {
                let capacity = width_of(*col) * characters_per_unit(placed.look);
                needed = needed.max(wrapped_lines(text, capacity) as f64 * line_points(placed.look) + 2.0);
                continue;
            }
            // A line that runs on past the page's right edge over empty cells gets those
            // cells as a wrapped area of its own.
            let next_occupied = cells.range(col + 1..).next().map(|(next, _)| *next);
            let run_to = next_occupied.map_or(edge_col, |next| next.saturating_sub(1).min(edge_col));
            if *col > edge_col || next_occupied.is_some_and(|next| next <= edge_col) {
                continue;
            }
            let span_units: f64 = (*col..=run_to).map(width_of).sum();
            let capacity = span_units * characters_per_unit(placed.look);
            if length > capacity {
                merges.push((*row, *col, run_to));
                needed = needed.max(wrapped_lines(text, capacity) as f64 * line_points(placed.look) + 2.0);
            } else if placed.look == Look::Title || placed.look == Look::Heading {
                needed = needed.max(line_points(placed.look) + 2.0);
            }
        }
        if needed > 0.0 {
            let entry = heights.entry(*row).or_insert(DEFAULT_ROW_HEIGHT);
            *entry = entry.max(needed).min(MAX_ROW_HEIGHT);
        }
    }

    // Pages down.
    let usable = page_height * 100.0 / f64::from(scale);
    let height_of = |row: u32| heights.get(&row).copied().unwrap_or(DEFAULT_ROW_HEIGHT);
    let repeat: f64 = (0..sheet.frozen_rows).map(height_of).sum();
    let mut chart_heights = Vec::new();
    // Rows covered by each chart (first, last), and rows that are part of a chart.
    let mut chart_rows: Vec<(u32, u32)> = Vec::new();
    for chart in &sheet.charts {
        let most = ((usable - repeat - 4.0) / 0.75).floor().max(120.0) as u32;
        let height = chart.size.1.min(most);
        chart_heights.push(height);
        let mut bottom = chart.anchor.0;
        let mut covered = 0.0;
        let points = f64::from(height) * 0.75;
        while covered < points {
            covered += height_of(bottom);
            bottom += 1;
        }
        chart_rows.push((chart.anchor.0, bottom.saturating_sub(1)));
    }
    // Pictures keep their size (the caller fits them to a page) and move like charts.
    for picture in &sheet.pictures {
        let mut bottom = picture.anchor.0;
        let mut covered = 0.0;
        let points = f64::from(picture.size.1) * 0.75;
        while covered < points {
            covered += height_of(bottom);
            bottom += 1;
        }
        chart_rows.push((picture.anchor.0, bottom.saturating_sub(1)));
    }
    let last_row = occupied
        .keys()
        .next_back()
        .copied()
        .unwrap_or(0)
        .max(chart_rows.iter().map(|(_, last)| *last).max().unwrap_or(0));
    let filled = |row: u32| occupied.contains_key(&row) || chart_rows.iter().any(|(a, b)| (*a..=*b).contains(&row));
    let keeps_with_next = |row: u32| {
        occupied.get(&row).is_some_and(|cells| {
            cells
                .values()
                .any(|placed| matches!(placed.look, Look::Title | Look::Heading | Look::ColumnHeader))
        })
    };
    let forced: std::collections::HashSet<u32> = sheet.page_breaks.iter().copied().filter(|row| *row > 0).collect();
    let mut breaks: Vec<u32> = Vec::new();
    let mut page_start = 0u32;
    let mut used = 0.0_f64;
    let capacity_of = |page_start: u32| if page_start == 0 { usable } else { usable - repeat };
    let mut row = 0u32;
    while row <= last_row {
        if row > page_start && forced.contains(&row) {
            breaks.push(row);
            page_start = row;
            used = 0.0;
        }
        // At the start of a run of filled rows, see whether the whole run fits. A run
        // that moves takes the blank row above it along: spreadsheet programs place a
        // chart by its own measure of the rows above it, so a chart that starts right at
        // a break can show its top edge at the foot of the page before. Only a table or a
        // short run of text moves whole: a long one (a page of reading) flows on from
        // where it starts, breaking between its rows, rather than leaving most of a page
        // empty.
        if filled(row) && (row == 0 || !filled(row - 1)) && row > page_start {
            let mut end = row;
            while end < last_row && filled(end + 1) && !forced.contains(&(end + 1)) {
                end += 1;
            }
            let run: f64 = (row..=end).map(height_of).sum();
            let table = (row..=end).any(|at| {
                occupied
                    .get(&at)
                    .is_some_and(|cells| cells.values().any(|placed| matches!(placed.look, Look::ColumnHeader)))
            });
            let moves_whole = table || run <= WHOLE_RUN_SHARE * capacity_of(row);
            if used + run > capacity_of(page_start) && moves_whole && run + height_of(row - 1) <= capacity_of(row) {
                let at = if row - 1 > page_start { row - 1 } else { row };
                breaks.push(at);
                page_start = at;
                used = (at..row).map(height_of).sum();
            }
        }
        // A chart starting here moves whole to the next page when it does not fit.
        for (first, last) in &chart_rows {
            if *first == row && row > page_start {
                let span: f64 = (*first..=*last).map(height_of).sum();
                if used + span > capacity_of(page_start) {
                    let mut at = row;
                    while at > page_start + 1 && keeps_with_next(at - 1) {
                        at -= 1;
                    }
                    if at == row && at > page_start + 1 && !filled(at - 1) {
                        at -= 1;
                    }
                    breaks.push(at);
                    page_start = at;
                    used = (at..row).map(height_of).sum();
                }
            }
        }
        let height = height_of(row);
        if used + height > capacity_of(page_start) && row > page_start {
            // Break here, but not just after a heading or a column header, and not inside
            // a chart.
            let mut at = row;
            while at > page_start + 1 && keeps_with_next(at - 1) {
                at -= 1;
            }
            if let Some((first, _)) = chart_rows.iter().find(|(a, b)| *a < at && at <= *b) {
                if *first > page_start {
                    at = *first;
                }
            }
            breaks.push(at);
            page_start = at;
            used = (at..row).map(height_of).sum();
        }
        used += height;
        row += 1;
    }
    breaks.sort_unstable();
    breaks.dedup();
    // The file format holds at most 1,023 manual breaks a sheet.
    breaks.truncate(1_023);
    SheetPrint {
        scale,
        heights,
        pages_down: breaks.len() + 1,
        breaks,
        merges,
        chart_heights,
    }
}

/// The share of a page up to which a run of filled rows of text that does not fit the
/// rest of a page moves whole to the next one; a longer one flows on. A run holding a
/// table (a column-header row) always moves whole when it fits a page.
const WHOLE_RUN_SHARE: f64 = 0.4;

/// Blank rows between two charts that share a page, and above the first chart of a page
/// (the page break falls on that blank row): spreadsheet programs place a chart by their
/// own measure of the rows above it, which can differ from ours by a row or two, so a
/// chart given a little room never shows an edge on the page before or after.
pub const CHART_GAP_ROWS: u32 = 3;

/// The least height in pixels a chart is shrunk to so that two share a page (16 rows
/// of the sheet's default height would be 320).
pub const SHARED_CHART_HEIGHT: u32 = 240;

/// Rows of the default height that a chart `height` pixels tall covers.
pub fn chart_rows(height: u32) -> u32 {
    (f64::from(height) * 0.75 / DEFAULT_ROW_HEIGHT).ceil() as u32
}

impl Sheet {
    /// Places `charts` one under another from `row` down, in page regions of their own:
    /// each region starts with a page break on a blank row and holds as many charts as
    /// fit the shorter of the two papers' printable heights (the sheet's orientation, at
    /// full scale, less the rows repeated at the top), with [`CHART_GAP_ROWS`] blank rows
    /// between charts; charts are shrunk (to no less than [`SHARED_CHART_HEIGHT`]) so that
    /// two share a page, and a chart taller than a page is shrunk to fit it. Nothing else
    /// should be placed beside them. Returns the first free row after the last chart and
    /// a blank row.
    pub fn place_charts_on_pages(&mut self, row: u32, charts: Vec<ChartSpec>) -> u32 {
        let (_, page_height) = printable_area(self.portrait);
        let repeated = f64::from(self.frozen_rows) * DEFAULT_ROW_HEIGHT;
        let page_rows = ((page_height - repeated) / DEFAULT_ROW_HEIGHT).floor().max(4.0) as u32;
        let mut next = row;
        let mut room = 0u32;
        let pixels_of = |rows: u32| (f64::from(rows) * DEFAULT_ROW_HEIGHT / 0.75).floor() as u32;
        // Two charts to a page where each keeps at least SHARED_CHART_HEIGHT pixels.
        // A region is a blank row with the break, its charts with gaps between, and a
        // blank row after them.
        let half_page = pixels_of(page_rows.saturating_sub(2 + CHART_GAP_ROWS) / 2);
        let most_pixels = if half_page >= SHARED_CHART_HEIGHT {
            half_page
        } else {
            pixels_of(page_rows.saturating_sub(2 + CHART_GAP_ROWS))
        };
        for mut chart in charts {
            chart.size.1 = chart.size.1.min(most_pixels);
            let rows = chart_rows(chart.size.1);
            if rows + CHART_GAP_ROWS > room {
                // A new region: the break on a blank row, the chart one row below. After
                // a chart, one more blank row first, so that the chart before ends a row
                // above the break rather than on it (programs measure rows a little
                // differently; a chart ending on the break row shows its edge on the
                // next page).
                if next > row {
                    next += 1;
                }
                if !self.page_breaks.contains(&next) {
                    self.page_breaks.push(next);
                }
                room = page_rows.saturating_sub(1);
                chart.anchor = (next + 1, 0);
                next += 1 + rows;
                room = room.saturating_sub(1 + rows);
            } else {
                chart.anchor = (next + CHART_GAP_ROWS, 0);
                next += CHART_GAP_ROWS + rows;
                room = room.saturating_sub(CHART_GAP_ROWS + rows);
            }
            self.charts.push(chart);
        }
        next + 1
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::write::{ChartKind, ChartSpec, Series, SheetRange};

    #[test]
    fn words_wrap_into_lines() {
        assert_eq!(wrapped_lines("one two three", 7.0), 2);
        assert_eq!(wrapped_lines("one two three", 13.0), 1);
        assert_eq!(wrapped_lines("abcdefghij", 4.0), 3);
        assert_eq!(wrapped_lines("", 4.0), 1);
    }

    #[test]
    fn a_wide_table_is_not_shrunk_below_the_smallest_scale() {
        let mut sheet = Sheet::new("wide");
        for col in 0..40u16 {
            sheet.put(0, col, Value::number(1.0), Look::Plain);
        }
        let print = plan_sheet(&sheet);
        assert_eq!(print.scale, MIN_SCALE);
    }

    #[test]
    fn a_long_line_wraps_instead_of_shrinking_the_page() {
        let mut sheet = Sheet::new("long");
        sheet.put(0, 0, Value::number(1.0), Look::Plain);
        sheet.put(1, 0, Value::text("word ".repeat(200)), Look::Note);
        let print = plan_sheet(&sheet);
        assert_eq!(print.scale, 100);
        assert_eq!(print.merges.len(), 1);
        assert!(print.heights[&1] > 3.0 * DEFAULT_ROW_HEIGHT);
    }

    #[test]
    fn a_wrapped_header_gets_a_tall_row() {
        let mut sheet = Sheet::new("header");
        sheet.widths = vec![(0, 8.0)];
        sheet.put(0, 0, Value::text("p-value (unadjusted)"), Look::ColumnHeader);
        let print = plan_sheet(&sheet);
        assert!(print.heights[&0] >= 2.0 * DEFAULT_ROW_HEIGHT);
    }

    /// A long reading under a short block flows on from the first page (breaking between
    /// its rows) instead of moving whole and leaving the first page all but empty; a
    /// table (a run with a column header) that does not fit the rest of a page still
    /// starts the next one whole.
    #[test]
    fn a_long_reading_flows_and_a_table_moves_whole() {
        let long_text = "word ".repeat(60);
        let sheet_with = |rows: &dyn Fn(&mut Sheet)| {
            let mut sheet = Sheet::new("reading");
            sheet.portrait = true;
            sheet.widths = vec![(0, 90.0)];
            // A block of four paragraphs, then a blank row.
            for row in 0..4u32 {
                sheet.put(row, 0, Value::text(long_text.clone()), Look::Plain);
            }
            rows(&mut sheet);
            sheet
        };
        // A run of paragraphs longer than the rest of the page and than 40% of a page,
        // but shorter than a page (which alone would have moved whole before).
        let text = sheet_with(&|sheet| {
            for row in 5..13u32 {
                sheet.put(row, 0, Value::text(long_text.clone()), Look::Plain);
            }
        });
        let print = plan_sheet(&text);
        let height = |print: &SheetPrint, row: u32| print.heights.get(&row).copied().unwrap_or(DEFAULT_ROW_HEIGHT);
        let block: f64 = (0..5u32).map(|row| height(&print, row)).sum();
        let reading: f64 = (5..13u32).map(|row| height(&print, row)).sum();
        let page = printable_area(true).1;
        assert!(
            reading > 0.4 * page && reading < page && block + reading > page,
            "{block} {reading}"
        );
        let first_break = print.breaks.first().copied().expect("more than a page");
        assert!(
            first_break > 6,
            "the reading starts on the first page: {:?}",
            print.breaks
        );
        // A table of 30 one-line rows under its column header: it fits a page but not
        // the rest of the first one, so it starts the second, whole.
        let table = sheet_with(&|sheet| {
            sheet.put(5, 0, Value::text("condition"), Look::ColumnHeader);
            for row in 6..36u32 {
                sheet.put(row, 0, Value::number(f64::from(row)), Look::Plain);
            }
        });
        let print = plan_sheet(&table);
        let run: f64 = (5..36u32).map(|row| height(&print, row)).sum();
        assert!(
            run < printable_area(true).1 && block + run > printable_area(true).1,
            "{block} {run}"
        );
        assert_eq!(print.breaks, vec![4], "the table moves whole");
    }

    #[test]
    fn a_chart_that_does_not_fit_the_rest_of_a_page_starts_the_next() {
        let mut sheet = Sheet::new("chart");
        for row in 0..25u32 {
            sheet.put(row, 0, Value::number(f64::from(row)), Look::Plain);
        }
        let range = SheetRange::column("chart", 0, 0, 24);
        sheet.charts.push(ChartSpec {
            kind: ChartKind::Points,
            title: "t".into(),
            x_title: "x".into(),
            y_title: "y".into(),
            series: vec![Series {
                name: "s".into(),
                categories: range.clone(),
                values: range,
                bar_plus: None,
                bar_minus: None,
                labels: None,
            }],
            anchor: (26, 0),
            size: (400, 300),
            value_limits: None,
        });
        let print = plan_sheet(&sheet);
        // 25 rows of 15 pt and a 225-pt chart do not fit one landscape page at 100%
        // (about 450 pt), so the chart starts a page, with the blank row above it.
        assert_eq!(print.breaks, vec![25]);
    }

    #[test]
    fn charts_placed_on_pages_start_each_page_and_never_cross_a_break() {
        let chart = |title: &str| ChartSpec {
            kind: ChartKind::Lines,
            title: title.into(),
            x_title: "x".into(),
            y_title: "y".into(),
            series: vec![Series {
                name: "s".into(),
                categories: SheetRange::column("charts", 0, 0, 9),
                values: SheetRange::column("charts", 1, 0, 9),
                bar_plus: None,
                bar_minus: None,
                labels: None,
            }],
            anchor: (0, 5),
            size: (460, 300),
            value_limits: None,
        };
        for portrait in [false, true] {
            let mut sheet = Sheet::new("charts");
            sheet.portrait = portrait;
            for row in 0..40u32 {
                sheet.put(row, 0, Value::number(f64::from(row)), Look::Plain);
                sheet.put(row, 1, Value::number(f64::from(row) * 2.0), Look::Plain);
            }
            let after = sheet.place_charts_on_pages(41, (0..5).map(|i| chart(&format!("chart {i}"))).collect());
            let print = plan_sheet(&sheet);
            let (_, page_height) = printable_area(portrait);
            let mut starts: Vec<u32> = vec![0];
            starts.extend(print.breaks.iter().copied());
            for placed in &sheet.charts {
                assert_eq!(placed.anchor.1, 0, "charts stand at the left, under the tables");
                let first = placed.anchor.0;
                let last = first + chart_rows(placed.size.1) - 1;
                assert!(last < after, "{after} after the charts");
                // The page holding the chart's first row also holds its last, and the
                // chart's rows fit that page's height.
                let page = starts.iter().rposition(|start| *start <= first).expect("a page");
                let next = starts.get(page + 1).copied().unwrap_or(u32::MAX);
                // A blank row between the chart's last row and the next page's break.
                assert!(
                    last + 1 < next,
                    "chart on rows {first}..={last} ends on or crosses the break at {next} ({portrait})"
                );
                let used = f64::from(last + 1 - starts[page]) * DEFAULT_ROW_HEIGHT;
                assert!(used <= page_height, "{used} of {page_height}");
                assert!(placed.size.1 >= SHARED_CHART_HEIGHT);
            }
            // Two charts to a page: five charts take three regions, each starting with
            // a break on the blank row above its first chart.
            assert_eq!(sheet.page_breaks.len(), 3, "{:?}", sheet.page_breaks);
            for row in &sheet.page_breaks {
                assert!(sheet.charts.iter().any(|chart| chart.anchor.0 == row + 1));
            }
        }
    }
}
