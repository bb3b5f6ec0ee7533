//! Print checks made on the xlsx itself, so that they run everywhere (the office render
//! check adds LibreOffice's own pagination where it is installed).
//!
//! For every sheet of a workbook the program wrote:
//! - no fit-to-page (it shrinks a wide sheet or one long line to unreadable type) and a
//!   print scale of at least 73% (11-pt text prints at 8 pt or more);
//! - every cell that wraps its text sits in a row tall enough for it, estimated
//!   generously (1.25 characters per unit of column width, 1.2 × the font size a line;
//!   common practice for proportional fonts), so only a row clearly too short fails;
//! - no value or link is bottom-aligned in a row taller than two lines (it would read
//!   as belonging to the row below);
//! - no manual page break falls inside a chart's rows, and every chart has a title and
//!   both axis titles.

use std::collections::HashMap;
use std::io::Read;
use std::path::Path;

/// 8 pt of an 11-pt body font, in percent.
const SMALLEST_SCALE: f64 = 73.0;

fn attribute<'a>(tag: &'a str, name: &str) -> Option<&'a str> {
    let key = format!(" {name}=\"");
    let start = tag.find(&key)? + key.len();
    let end = tag[start..].find('"')? + start;
    Some(&tag[start..end])
}

/// Every `<name ...>` or `<name .../>` start tag with its body up to the matching close
/// tag (or empty for a self-closed tag).
fn elements<'a>(xml: &'a str, name: &str) -> Vec<(&'a str, &'a str)> {
    let open = format!("<{name}");
    let close = format!("</{name}>");
    let mut found = Vec::new();
    let mut rest = xml;
    while let Some(start) = rest.find(&open) {
        let after = &rest[start + open.len()..];
        if !after.starts_with([' ', '>', '/']) {
            rest = after;
            continue;
        }
        let Some(tag_end) = after.find('>') else { break };
        let tag = &after[..tag_end];
        if tag.ends_with('/') {
            found.push((tag, ""));
            rest = &after[tag_end + 1..];
        } else {
            let body_start = tag_end + 1;
            let body_end = after[body_start..]
                .find(&close)
                .map_or(after.len(), |end| end + body_start);
            found.push((tag, &after[body_start..body_end]));
            rest = &after[body_end..];
        }
    }
    found
}

fn unescape(text: &str) -> String {
    text.replace("&lt;", "<")
        .replace("&gt;", ">")
        .replace("&quot;", "\"")
        .replace("&apos;", "'")
        .replace("&amp;", "&")
}

fn column_number(reference: &str) -> u32 {
    reference
        .chars()
        .take_while(char::is_ascii_alphabetic)
        .fold(0, |n, c| n * 26 + (c.to_ascii_uppercase() as u32 - 'A' as u32 + 1))
}

fn row_number(reference: &str) -> u32 {
    reference
        .chars()
        .skip_while(char::is_ascii_alphabetic)
        .collect::<String>()
        .parse()
        .unwrap_or(0)
}

fn wrapped_lines(text: &str, capacity: f64) -> usize {
    let capacity = capacity.max(1.0);
    text.split('\n')
        .map(|paragraph| {
            let mut lines = 1usize;
            let mut used = 0.0_f64;
            for word in paragraph.split(' ').filter(|word| !word.is_empty()) {
                let length = word.chars().count() as f64;
                if used > 0.0 && used + 1.0 + length > capacity {
                    lines += 1;
                    used = 0.0;
                }
                if used == 0.0 && length > capacity {
                    lines += (length / capacity).ceil() as usize - 1;
                    used = length % capacity;
                } else {
                    used += if used == 0.0 { length } else { 1.0 + length };
                }
            }
            lines
        })
        .sum()
}

/// Sheets whose tables of one-line values have rows a little taller than their text,
/// values at the foot (`Sheet::spaced_table`): there a top-aligned value in a
/// default-height row right under a column header is drawn against the header's border.
const SPACED_SHEETS: &[&str] = &["Power and runs"];

/// The least height of a spaced table's row, in points.
const SPACED_ROW_LEAST: f64 = 17.0;

struct Style {
    /// Has a border (only column headers have one).
    bordered: bool,
    wraps: bool,
    vertical: String,
    font_size: f64,
}

/// What is wrong with how the workbook at `path` prints, one line a problem (empty when
/// nothing is).
pub fn print_problems(path: &Path) -> Vec<String> {
    let file = std::fs::File::open(path).expect("the written workbook opens");
    let mut zip = zip::ZipArchive::new(file).expect("the written workbook is a zip");
    let mut part = |name: &str| -> String {
        let mut text = String::new();
        if let Ok(mut entry) = zip.by_name(name) {
            entry.read_to_string(&mut text).expect("a part reads as text");
        }
        text
    };
    let workbook = part("xl/workbook.xml");
    let workbook_rels = part("xl/_rels/workbook.xml.rels");
    let styles = part("xl/styles.xml");
    let shared: Vec<String> = elements(&part("xl/sharedStrings.xml"), "si")
        .into_iter()
        .map(|(_, body)| {
            elements(body, "t")
                .into_iter()
                .map(|(_, text)| unescape(text))
                .collect::<String>()
        })
        .collect();
    let font_sizes: Vec<f64> = elements(elements(&styles, "fonts").first().map_or("", |(_, body)| *body), "font")
        .into_iter()
        .map(|(_, body)| {
            elements(body, "sz")
                .first()
                .and_then(|(tag, _)| attribute(tag, "val"))
                .and_then(|size| size.parse().ok())
                .unwrap_or(11.0)
        })
        .collect();
    let cell_xfs = elements(&styles, "cellXfs")
        .first()
        .map_or("", |(_, body)| *body)
        .to_string();
    let xf_styles: Vec<Style> = elements(&cell_xfs, "xf")
        .into_iter()
        .map(|(tag, body)| {
            let alignment = elements(body, "alignment").first().map_or("", |(tag, _)| *tag);
            let font = attribute(tag, "fontId")
                .and_then(|id| id.parse::<usize>().ok())
                .unwrap_or(0);
            Style {
                bordered: attribute(tag, "borderId").is_some_and(|id| id != "0"),
                wraps: attribute(alignment, "wrapText") == Some("1"),
                vertical: attribute(alignment, "vertical").unwrap_or("bottom").to_string(),
                font_size: font_sizes.get(font).copied().unwrap_or(11.0),
            }
        })
        .collect();
    let targets: HashMap<String, String> = elements(&workbook_rels, "Relationship")
        .into_iter()
        .filter_map(|(tag, _)| Some((attribute(tag, "Id")?.to_string(), attribute(tag, "Target")?.to_string())))
        .collect();

    let mut problems = Vec::new();
    for (tag, _) in elements(&workbook, "sheet") {
        let name = unescape(attribute(tag, "name").unwrap_or("?"));
        if attribute(tag, "state") == Some("hidden") {
            continue;
        }
        let Some(target) = attribute(tag, "r:id").and_then(|id| targets.get(id)) else {
            continue;
        };
        let sheet_path = format!("xl/{}", target.trim_start_matches("/xl/"));
        let xml = part(&sheet_path);
        let at = |what: String| format!("{}: sheet '{name}': {what}", path.display());

        // Scale.
        if elements(&xml, "pageSetUpPr")
            .iter()
            .any(|(tag, _)| attribute(tag, "fitToPage") == Some("1"))
        {
            problems.push(at("fitted to the page (the type shrinks with the sheet)".into()));
        }
        let scale: f64 = elements(&xml, "pageSetup")
            .first()
            .and_then(|(tag, _)| attribute(tag, "scale"))
            .and_then(|scale| scale.parse().ok())
            .unwrap_or(100.0);
        if scale < SMALLEST_SCALE {
            problems.push(at(format!("printed at {scale}%, below {SMALLEST_SCALE}%")));
        }

        // Columns and merged areas.
        let mut widths: HashMap<u32, f64> = HashMap::new();
        for (tag, _) in elements(&xml, "col") {
            let (Some(min), Some(max), Some(width)) =
                (attribute(tag, "min"), attribute(tag, "max"), attribute(tag, "width"))
            else {
                continue;
            };
            let (min, max, width): (u32, u32, f64) = (
                min.parse().unwrap_or(0),
                max.parse().unwrap_or(0),
                width.parse().unwrap_or(8.43),
            );
            for col in min..=max.min(min + 200) {
                widths.insert(col, width);
            }
        }
        let width_of = |col: u32| widths.get(&col).copied().unwrap_or(8.43);
        let mut merged: HashMap<(u32, u32), f64> = HashMap::new();
        for (tag, _) in elements(&xml, "mergeCell") {
            if let Some((first, last)) = attribute(tag, "ref").and_then(|r| r.split_once(':')) {
                let width: f64 = (column_number(first)..=column_number(last)).map(width_of).sum();
                merged.insert((row_number(first), column_number(first)), width);
            }
        }

        // Rows and their cells.
        let spaced = SPACED_SHEETS.contains(&name.as_str());
        let mut header_row_above = false;
        let mut last_row = 0u32;
        for (row_tag, row_body) in elements(&xml, "row") {
            let row: u32 = attribute(row_tag, "r").and_then(|r| r.parse().ok()).unwrap_or(0);
            let height: f64 = attribute(row_tag, "ht").and_then(|h| h.parse().ok()).unwrap_or(15.0);
            let under_header = header_row_above && row == last_row + 1;
            last_row = row;
            header_row_above = false;
            for (cell_tag, cell_body) in elements(row_body, "c") {
                let reference = attribute(cell_tag, "r").unwrap_or("A1");
                let col = column_number(reference);
                let style = attribute(cell_tag, "s")
                    .and_then(|s| s.parse::<usize>().ok())
                    .and_then(|s| xf_styles.get(s));
                let text = match attribute(cell_tag, "t") {
                    Some("s") => elements(cell_body, "v")
                        .first()
                        .and_then(|(_, v)| v.parse::<usize>().ok())
                        .and_then(|index| shared.get(index).cloned())
                        .unwrap_or_default(),
                    Some("inlineStr") | Some("str") => {
                        elements(cell_body, "t").into_iter().map(|(_, t)| unescape(t)).collect()
                    }
                    _ => String::new(),
                };
                let has_value = !cell_body.is_empty();
                if let Some(style) = style {
                    if style.wraps && !text.is_empty() {
                        let width = merged.get(&(row, col)).copied().unwrap_or_else(|| width_of(col));
                        let lines = wrapped_lines(&text, width * 1.25);
                        let needed = lines as f64 * style.font_size * 1.2;
                        if needed > height + 0.5 {
                            problems.push(at(format!(
                                "row {row} is {height} pt tall but the wrapped text in {reference} needs about {needed:.0} pt ({lines} lines): {}",
                                text.chars().take(60).collect::<String>()
                            )));
                        }
                    }
                }
                header_row_above |= style.is_some_and(|style| style.bordered);
                let vertical = style.map_or("bottom", |style| style.vertical.as_str());
                if spaced && under_header && has_value && vertical == "top" && height < SPACED_ROW_LEAST {
                    problems.push(at(format!(
                        "{reference}, right under a column header, is top-aligned in a row {height} pt tall: it is drawn against the header's border"
                    )));
                }
                if has_value && height > 32.0 && vertical == "bottom" {
                    problems.push(at(format!(
                        "{reference} is bottom-aligned in a row {height} pt tall: it reads as part of the next row"
                    )));
                }
            }
        }

        // Charts against page breaks.
        let breaks: Vec<u32> = elements(&xml, "brk")
            .into_iter()
            .filter_map(|(tag, _)| attribute(tag, "id")?.parse().ok())
            .collect();
        let sheet_file = sheet_path.rsplit('/').next().unwrap_or("").to_string();
        let rels = part(&format!("xl/worksheets/_rels/{sheet_file}.rels"));
        for (tag, _) in elements(&rels, "Relationship") {
            let Some(drawing) = attribute(tag, "Target").filter(|t| t.contains("drawings/drawing")) else {
                continue;
            };
            let drawing_path = format!("xl/{}", drawing.trim_start_matches("../"));
            let drawing_xml = part(&drawing_path);
            for (_, anchor) in elements(&drawing_xml, "xdr:twoCellAnchor") {
                let row_of = |name: &str| -> Option<u32> {
                    let (_, body) = elements(anchor, name).into_iter().next()?;
                    elements(body, "xdr:row").first()?.1.parse().ok()
                };
                let (Some(first), Some(last)) = (row_of("xdr:from"), row_of("xdr:to")) else {
                    continue;
                };
                // A break at row b (1-based in the file: the row after which the page
                // ends) inside a chart's rows cuts it.
                if let Some(cut) = breaks.iter().find(|b| **b > first && **b <= last) {
                    problems.push(at(format!(
                        "a chart on rows {} to {} is cut by the page break after row {cut}",
                        first + 1,
                        last + 1
                    )));
                }
            }
            let drawing_file = drawing_path.rsplit('/').next().unwrap_or("").to_string();
            let drawing_rels = part(&format!("xl/drawings/_rels/{drawing_file}.rels"));
            for (tag, _) in elements(&drawing_rels, "Relationship") {
                let Some(chart) = attribute(tag, "Target").filter(|t| t.contains("charts/chart")) else {
                    continue;
                };
                let chart_xml = part(&format!("xl/{}", chart.trim_start_matches("../")));
                let titles = elements(&chart_xml, "c:title").len();
                if titles < 3 {
                    problems.push(at(format!(
                        "a chart ({chart}) has {titles} of its 3 titles (chart, category axis, value axis)"
                    )));
                }
            }
        }
    }
    problems
}

/// Panics with every print problem of the workbook at `path`.
pub fn assert_prints_well(path: &Path) {
    let problems = print_problems(path);
    assert!(problems.is_empty(), "print problems:\n{}", problems.join("\n"));
}
