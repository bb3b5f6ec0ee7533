//! Merged areas and hidden rows and columns of an xlsx worksheet, found by
//! scanning its part for `<mergeCell ref="…"/>` tags and `hidden`
//! attributes of `<row>` and `<col>` tags, in one pass.
//!
//! calamine's own lookup parses the whole sheet XML a second time after the
//! cells were streamed, which doubles the cost of reading a large sheet. The
//! merged areas sit in the `<mergeCells>` element after the cell data, so
//! here the part is only inflated and searched for the tag name as bytes. When the sheet's part cannot be found this way (an
//! unusual relationship target, an escaped sheet name), the caller falls back
//! to calamine.

use std::io::{BufReader, Read, Seek};

use crate::cell::{parse_a1_range, CellRect};

use super::guard::attribute_value;

/// Longest tag collected; a longer one is not one of the tags looked for.
const MAX_TAG_BYTES: usize = 4096;

/// Bytes inflated per read.
const CHUNK_BYTES: usize = 1 << 16;

/// Calls `found` with the text of every tag whose local name (after any
/// namespace prefix) is `local_name`, from the name to the closing `>`.
///
/// The name is searched for as bytes (`memchr::memmem`); a hit counts when a
/// `<` or a prefix's `:` stands before it and whitespace, `/` or `>` after
/// it. Text and attribute values cannot hold a raw `<`, so a hit in them has
/// neither and is passed over.
fn scan_tags<R: Read>(mut reader: R, local_name: &[u8], mut found: impl FnMut(&str)) -> std::io::Result<()> {
    let finder = memchr::memmem::Finder::new(local_name);
    let mut chunk = vec![0u8; CHUNK_BYTES];
    let mut window: Vec<u8> = Vec::with_capacity(2 * CHUNK_BYTES);
    // Index in `window` of the first start not yet tried.
    let mut next_start = 0usize;
    loop {
        let read = match reader.read(&mut chunk) {
            Ok(read) => read,
            Err(error) if error.kind() == std::io::ErrorKind::Interrupted => continue,
            Err(error) => return Err(error),
        };
        let at_end = read == 0;
        window.extend_from_slice(&chunk[..read]);
        let mut untried = None;
        while let Some(offset) = finder.find(&window[next_start..]) {
            let start = next_start + offset;
            let after = start + local_name.len();
            let Some(close) = memchr::memchr(b'>', &window[after..]).map(|offset| after + offset) else {
                if !at_end && window.len() - start <= MAX_TAG_BYTES {
                    // The tag may close in the next chunk: try this start again then.
                    untried = Some(start);
                    break;
                }
                next_start = start + 1;
                continue;
            };
            let before_ok = start > 0 && matches!(window[start - 1], b'<' | b':');
            let after_ok = window
                .get(after)
                .is_some_and(|byte| byte.is_ascii_whitespace() || matches!(byte, b'/' | b'>'));
            if before_ok && after_ok && close - start <= MAX_TAG_BYTES {
                found(&String::from_utf8_lossy(&window[start..close]));
            }
            next_start = start + 1;
        }
        if at_end {
            return Ok(());
        }
        // Starts from here on were not tried (too close to the end to hold
        // the whole name, or a tag still open); keep them, and one byte
        // before them for the `<` or `:` check.
        let first_untried =
            untried.unwrap_or_else(|| next_start.max((window.len() + 1).saturating_sub(local_name.len())));
        let keep_from = first_untried.saturating_sub(1);
        window.drain(..keep_from);
        next_start = first_untried - keep_from;
    }
}

/// The text of a small zip part, or `None` when it is missing or not text.
fn part_text<R: Read + Seek>(archive: &mut zip::ZipArchive<R>, name: &str) -> Option<String> {
    let entry = archive.by_name(name).ok()?;
    let mut text = String::new();
    entry.take(64 * 1024 * 1024).read_to_string(&mut text).ok()?;
    Some(text)
}

/// The zip path of the worksheet named `sheet`, from the workbook part and its relationships.
pub(crate) fn sheet_part_path<R: Read + Seek>(archive: &mut zip::ZipArchive<R>, sheet: &str) -> Option<String> {
    let workbook = part_text(archive, "xl/workbook.xml")?;
    let mut relationship_id = None;
    scan_tags(workbook.as_bytes(), b"sheet", |tag| {
        if relationship_id.is_none() && attribute_value(tag, "name") == Some(sheet) {
            relationship_id = attribute_value(tag, "r:id").map(str::to_string);
        }
    })
    .ok()?;
    let relationship_id = relationship_id?;
    let relationships = part_text(archive, "xl/_rels/workbook.xml.rels")?;
    let mut target = None;
    scan_tags(relationships.as_bytes(), b"Relationship", |tag| {
        if target.is_none() && attribute_value(tag, "Id") == Some(relationship_id.as_str()) {
            target = attribute_value(tag, "Target").map(str::to_string);
        }
    })
    .ok()?;
    let target = target?;
    let path = match target.strip_prefix('/') {
        Some(absolute) => absolute.to_string(),
        None => format!("xl/{target}"),
    };
    archive.index_for_name(&path).map(|_| path)
}

/// The part of every worksheet, by sheet name, read from the workbook part
/// and its relationships once (the first sheet of a name wins, as in
/// [`sheet_part_path`]); sheets whose part is missing are left out.
pub(crate) fn sheet_part_paths<R: Read + Seek>(
    archive: &mut zip::ZipArchive<R>,
) -> Option<std::collections::HashMap<String, String>> {
    let workbook = part_text(archive, "xl/workbook.xml")?;
    let mut relationship_ids: Vec<(String, String)> = Vec::new();
    scan_tags(workbook.as_bytes(), b"sheet", |tag| {
        if let (Some(name), Some(id)) = (attribute_value(tag, "name"), attribute_value(tag, "r:id")) {
            relationship_ids.push((name.to_string(), id.to_string()));
        }
    })
    .ok()?;
    let relationships = part_text(archive, "xl/_rels/workbook.xml.rels")?;
    let mut targets: std::collections::HashMap<String, String> = std::collections::HashMap::new();
    scan_tags(relationships.as_bytes(), b"Relationship", |tag| {
        if let (Some(id), Some(target)) = (attribute_value(tag, "Id"), attribute_value(tag, "Target")) {
            targets.entry(id.to_string()).or_insert_with(|| target.to_string());
        }
    })
    .ok()?;
    let mut paths = std::collections::HashMap::new();
    for (name, id) in relationship_ids {
        if paths.contains_key(&name) {
            continue;
        }
        let Some(target) = targets.get(&id) else { continue };
        let path = match target.strip_prefix('/') {
            Some(absolute) => absolute.to_string(),
            None => format!("xl/{target}"),
        };
        if archive.index_for_name(&path).is_some() {
            paths.insert(name, path);
        }
    }
    Some(paths)
}

/// Rows and columns (zero-based) hidden in a sheet, each sorted and without repeats.
#[derive(Debug, Default, Clone, PartialEq)]
pub(crate) struct Hidden {
    pub rows: Vec<u32>,
    pub cols: Vec<u32>,
}

/// Most hidden rows or columns listed; a sheet hiding more is reported by its first ones.
const MAX_HIDDEN_LISTED: usize = 100_000;

/// Reads the `hidden` flag of a `row` or `col` tag (ECMA-376 Part 1,
/// 18.3.1.73 row: `r`, `hidden`; 18.3.1.13 col: `min`, `max`, `hidden`).
pub(crate) fn note_hidden(tag: &str, hidden: &mut Hidden) {
    let name_end = tag
        .find(|c: char| c.is_ascii_whitespace() || c == '/' || c == '>')
        .unwrap_or(tag.len());
    let name = tag[..name_end].rsplit(':').next().unwrap_or("");
    let flag = attribute_value(tag, "hidden").map(str::trim);
    if !matches!(flag, Some("1" | "true")) {
        return;
    }
    let number = |attribute: &str| attribute_value(tag, attribute).and_then(|value| value.trim().parse::<u32>().ok());
    match name {
        "row" => {
            if let Some(row) = number("r").filter(|row| *row >= 1) {
                if hidden.rows.len() < MAX_HIDDEN_LISTED {
                    hidden.rows.push(row - 1);
                }
            }
        }
        "col" => {
            if let (Some(min), Some(max)) = (number("min"), number("max")) {
                let max = max.min(crate::cell::MAX_COLS);
                for col in min.max(1)..=max {
                    if hidden.cols.len() >= MAX_HIDDEN_LISTED {
                        break;
                    }
                    hidden.cols.push(col - 1);
                }
            }
        }
        _ => {}
    }
}

/// The merged areas and hidden rows and columns of an xlsx worksheet, or
/// `None` when its part cannot be located or read this way (the caller then
/// asks calamine for the merged areas).
pub(crate) fn xlsx_merged_areas(path: &std::path::Path, sheet: &str) -> Option<(Vec<CellRect>, Hidden)> {
    // Names with markup characters are stored escaped; leave those to calamine.
    if sheet.contains(['&', '<', '>', '"', '\'']) {
        return None;
    }
    let file = super::open_regular_file(path).ok()?;
    let mut archive = zip::ZipArchive::new(BufReader::new(file)).ok()?;
    let part = sheet_part_path(&mut archive, sheet)?;
    let entry = archive.by_name(&part).ok()?;
    let mut areas = Vec::new();
    let mut hidden = Hidden::default();
    scan_tags_and_hidden(entry, b"mergeCell", |tag| {
        if tag.starts_with("mergeCell") {
            if let Some(area) = attribute_value(tag, "ref").and_then(parse_a1_range) {
                areas.push(area);
            }
        } else {
            note_hidden(tag, &mut hidden);
        }
    })
    .ok()?;
    hidden.rows.sort_unstable();
    hidden.rows.dedup();
    hidden.cols.sort_unstable();
    hidden.cols.dedup();
    Some((areas, hidden))
}

/// [`scan_tags`] for `local_name`, and in the same pass every tag holding a
/// `hidden=` attribute (rare: only hidden rows and columns carry it), which
/// is found by the attribute and widened back to its tag's `<`.
fn scan_tags_and_hidden<R: Read>(reader: R, local_name: &[u8], mut found: impl FnMut(&str)) -> std::io::Result<()> {
    const NEEDLE: &[u8] = b" hidden=";
    let hidden_finder = memchr::memmem::Finder::new(NEEDLE);
    // `tail` keeps the bytes still needed: those not yet searched, and up to
    // a tag's length before them so that a hit can be widened back to its `<`.
    let mut tail: Vec<u8> = Vec::new();
    let mut searched = 0usize;
    let mut hidden_tags: Vec<String> = Vec::new();
    let tee = TeeReader {
        inner: reader,
        on_chunk: |chunk: &[u8]| {
            tail.extend_from_slice(chunk);
            let mut waiting = false;
            while let Some(offset) = hidden_finder.find(&tail[searched..]) {
                let at = searched + offset;
                let open = memchr::memrchr(b'<', &tail[..at]);
                let close = memchr::memchr(b'>', &tail[at..]).map(|offset| at + offset);
                match (open, close) {
                    (Some(open), Some(close)) => {
                        if close - open <= MAX_TAG_BYTES && hidden_tags.len() < 2 * MAX_HIDDEN_LISTED {
                            hidden_tags.push(String::from_utf8_lossy(&tail[open + 1..close]).into_owned());
                        }
                        searched = close;
                    }
                    // Not closed yet: try again with the next chunk, unless
                    // it is already longer than any tag looked for.
                    (_, None) if tail.len() - at <= MAX_TAG_BYTES && !chunk.is_empty() => {
                        waiting = true;
                        break;
                    }
                    _ => searched = at + 1,
                }
            }
            if !waiting {
                // No hit starts before the last few bytes, which may hold the needle's start.
                searched = searched.max(tail.len().saturating_sub(NEEDLE.len() - 1));
            }
            let keep_from = searched.saturating_sub(MAX_TAG_BYTES);
            tail.drain(..keep_from);
            searched -= keep_from;
        },
    };
    scan_tags(tee, local_name, &mut found)?;
    for tag in hidden_tags {
        found(&tag);
    }
    Ok(())
}

/// Passes every chunk read through `on_chunk` on its way.
struct TeeReader<R, F> {
    inner: R,
    on_chunk: F,
}

impl<R: Read, F: FnMut(&[u8])> Read for TeeReader<R, F> {
    fn read(&mut self, buffer: &mut [u8]) -> std::io::Result<usize> {
        let read = self.inner.read(buffer)?;
        (self.on_chunk)(&buffer[..read]);
        Ok(read)
    }
}

#[cfg(test)]
mod tests {
    use super::scan_tags;

    fn refs(xml: &str) -> Vec<String> {
        let mut found = Vec::new();
        scan_tags(xml.as_bytes(), b"mergeCell", |tag| found.push(tag.to_string())).expect("in memory");
        found
    }

    #[test]
    fn finds_merge_tags_with_and_without_prefix() {
        // Tag shapes from ECMA-376 Part 1, 18.3.1.55 (mergeCell) and 18.3.1.56 (mergeCells).
        let xml = r#"<worksheet><sheetData><row r="1"><c r="A1" t="inlineStr"><is><t>mergeCell ref="Z9:Z10"</t></is></c></row></sheetData><mergeCells count="2"><mergeCell ref="B1:C1"/><x:mergeCell ref="D1:E1" /></mergeCells></worksheet>"#;
        assert_eq!(refs(xml), [r#"mergeCell ref="B1:C1"/"#, r#"mergeCell ref="D1:E1" /"#]);
    }

    #[test]
    fn finds_hidden_rows_and_columns_in_the_same_pass() {
        use super::{note_hidden, scan_tags_and_hidden, Hidden};
        // Attribute names from ECMA-376 Part 1, 18.3.1.73 (row) and 18.3.1.13 (col).
        let mut xml = String::from(
            r#"<worksheet><cols><col min="2" max="3" width="9" hidden="1"/><col min="5" max="5" hidden="0"/></cols><sheetData>"#,
        );
        for row in 1..=3000 {
            let flag = if row == 7 || row == 2999 { r#" hidden="1""# } else { "" };
            xml.push_str(&format!(r#"<row r="{row}"{flag}><c r="A{row}"><v>{row}</v></c></row>"#));
        }
        xml.push_str(r#"<row r="3001"><c r="A3001" t="inlineStr"><is><t>it was hidden="1" here</t></is></c></row>"#);
        xml.push_str(r#"</sheetData><mergeCells count="1"><mergeCell ref="B1:C1"/></mergeCells></worksheet>"#);
        let mut merged = Vec::new();
        let mut hidden = Hidden::default();
        scan_tags_and_hidden(xml.as_bytes(), b"mergeCell", |tag| {
            if tag.starts_with("mergeCell") {
                merged.push(tag.to_string());
            } else {
                note_hidden(tag, &mut hidden);
            }
        })
        .expect("in memory");
        assert_eq!(merged, [r#"mergeCell ref="B1:C1"/"#]);
        assert_eq!(hidden.rows, [6, 2998]);
        assert_eq!(hidden.cols, [1, 2]);
    }

    #[test]
    fn survives_tags_split_across_reads_and_unclosed_tags() {
        // Reads are 65,536 bytes; the tag starts 5 bytes before the first one ends.
        let mut xml = String::from("<a>");
        xml.push_str(&"x".repeat(65_528));
        xml.push_str(r#"<mergeCell ref="A1:B1"/><c "#);
        xml.push_str(&"y".repeat(70_000));
        assert_eq!(refs(&xml), [r#"mergeCell ref="A1:B1"/"#]);
    }
}
