//! Merged areas of an xlsx worksheet, found by scanning its part for
//! `<mergeCell ref="…"/>` tags.
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

/// The merged areas of an xlsx worksheet, or `None` when its part cannot be
/// located or read this way (the caller then asks calamine).
pub(crate) fn xlsx_merged_areas(path: &std::path::Path, sheet: &str) -> Option<Vec<CellRect>> {
    // Names with markup characters are stored escaped; leave those to calamine.
    if sheet.contains(['&', '<', '>', '"', '\'']) {
        return None;
    }
    let file = std::fs::File::open(path).ok()?;
    let mut archive = zip::ZipArchive::new(BufReader::new(file)).ok()?;
    let part = sheet_part_path(&mut archive, sheet)?;
    let entry = archive.by_name(&part).ok()?;
    let mut areas = Vec::new();
    scan_tags(entry, b"mergeCell", |tag| {
        if let Some(area) = attribute_value(tag, "ref").and_then(parse_a1_range) {
            areas.push(area);
        }
    })
    .ok()?;
    Some(areas)
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
    fn survives_tags_split_across_reads_and_unclosed_tags() {
        // Reads are 65,536 bytes; the tag starts 5 bytes before the first one ends.
        let mut xml = String::from("<a>");
        xml.push_str(&"x".repeat(65_528));
        xml.push_str(r#"<mergeCell ref="A1:B1"/><c "#);
        xml.push_str(&"y".repeat(70_000));
        assert_eq!(refs(&xml), [r#"mergeCell ref="A1:B1"/"#]);
    }
}
