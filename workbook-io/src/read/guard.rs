//! Checks made on a workbook's container before any parser sees it.
//!
//! A hostile file can make a parser allocate without bound: a zip entry that
//! inflates a thousandfold, a shared-strings table that claims billions of
//! entries, an external-sheet count that asks for gigabytes. Each check here
//! reads only the container's directory or the first bytes of one entry, and
//! turns such a file into a clear [`ReadError`] instead of an aborted process.

use std::fs::File;
use std::io::{BufReader, Read};
use std::path::Path;

use super::{Format, ReadError, ReadLimits};

/// What the container sniffing found.
pub(crate) struct Container {
    /// The format the bytes say the file is, whatever its extension.
    pub format: Format,
}

/// Looks at the file's first bytes and, for zip containers, at every entry's
/// declared sizes, and returns the real format.
///
/// # Errors
///
/// [`ReadError::NotAWorkbook`], [`ReadError::PasswordProtected`],
/// [`ReadError::TooLarge`], [`ReadError::Io`].
pub(crate) fn inspect(path: &Path, limits: &ReadLimits) -> Result<Container, ReadError> {
    let io_error = |source| ReadError::Io {
        path: path.to_path_buf(),
        source,
    };
    let metadata = std::fs::metadata(path).map_err(io_error)?;
    if !metadata.is_file() {
        return Err(ReadError::NotAWorkbook {
            path: path.to_path_buf(),
            detail: format!(
                "it is not a regular file ({})",
                super::describe_file_type(metadata.file_type())
            ),
        });
    }
    if metadata.len() > limits.max_file_bytes {
        return Err(ReadError::TooLarge {
            path: path.to_path_buf(),
            what: format!("the file is {} bytes", metadata.len()),
            limit: format!("{} bytes", limits.max_file_bytes),
        });
    }
    let mut head = [0u8; 8];
    let mut file = super::open_regular_file(path).map_err(io_error)?;
    let read = read_up_to(&mut file, &mut head).map_err(io_error)?;
    let head = &head[..read];
    if head.starts_with(b"PK\x03\x04") || head.starts_with(b"PK\x05\x06") {
        inspect_zip(path, limits)
    } else if head.starts_with(&[0xD0, 0xCF, 0x11, 0xE0, 0xA1, 0xB1, 0x1A, 0xE1]) {
        inspect_compound(path, limits)
    } else {
        let detail = if read == 0 {
            "the file is empty".to_string()
        } else {
            "its first bytes are not those of an xlsx, xlsm, xlsb, xls or ods workbook".to_string()
        };
        Err(ReadError::NotAWorkbook {
            path: path.to_path_buf(),
            detail,
        })
    }
}

fn read_up_to(file: &mut File, buffer: &mut [u8]) -> std::io::Result<usize> {
    let mut filled = 0;
    while filled < buffer.len() {
        let got = file.read(&mut buffer[filled..])?;
        if got == 0 {
            break;
        }
        filled += got;
    }
    Ok(filled)
}

/// A compound-document file is an xls workbook, or an encrypted
/// (password-protected) xlsx, which is stored as a compound document too.
fn inspect_compound(path: &Path, limits: &ReadLimits) -> Result<Container, ReadError> {
    let mut bytes = Vec::new();
    super::open_regular_file(path)
        .and_then(|file| file.take(limits.max_file_bytes).read_to_end(&mut bytes))
        .map_err(|source| ReadError::Io {
            path: path.to_path_buf(),
            source,
        })?;
    // Directory entry names are UTF-16; "EncryptedPackage" marks an encrypted
    // OOXML package (MS-OFFCRYPTO).
    let marker: Vec<u8> = "EncryptedPackage"
        .encode_utf16()
        .flat_map(|unit| unit.to_le_bytes())
        .collect();
    if bytes.windows(marker.len()).any(|window| window == marker.as_slice()) {
        return Err(ReadError::PasswordProtected {
            path: path.to_path_buf(),
        });
    }
    check_xls_sheet_sizes(path, &bytes, limits)?;
    Ok(Container { format: Format::Xls })
}

/// The xls parser reserves room for a sheet's whole DIMENSIONS rectangle and
/// then builds a dense grid over the rectangle its cells span, both before
/// any cell is handed to us. A hostile file can claim 2^32 rows or place
/// cells at column 65,535 and make those requests ask for terabytes, which
/// aborts the process. So the Workbook stream is walked here, record by
/// record, exactly as the parser will walk it (MS-XLS 2.1.4: a 2-byte type, a
/// 2-byte length, the body), and a sheet whose rectangle exceeds
/// [`ReadLimits::max_box_cells`] is refused.
fn check_xls_sheet_sizes(path: &Path, bytes: &[u8], limits: &ReadLimits) -> Result<(), ReadError> {
    let corrupt = |detail: String| ReadError::Corrupt {
        path: path.to_path_buf(),
        detail,
    };
    let mut compound = cfb::CompoundFile::open(std::io::Cursor::new(bytes))
        .map_err(|error| corrupt(format!("the compound container cannot be read ({error})")))?;
    let stream_name = ["/Workbook", "/Book"]
        .into_iter()
        .find(|name| compound.is_stream(name))
        .ok_or_else(|| corrupt("the compound container has no Workbook stream".into()))?;
    let mut stream = Vec::new();
    compound
        .open_stream(stream_name)
        .and_then(|reader| reader.take(bytes.len() as u64).read_to_end(&mut stream))
        .map_err(|error| corrupt(format!("the Workbook stream cannot be read ({error})")))?;
    walk_xls_sheets(path, &stream, limits, &mut 0)
}

/// The work of [`check_xls_sheet_sizes`] on the Workbook stream itself,
/// counting the records it visits in `visited`.
fn walk_xls_sheets(path: &Path, stream: &[u8], limits: &ReadLimits, visited: &mut u64) -> Result<(), ReadError> {
    let corrupt = |detail: String| ReadError::Corrupt {
        path: path.to_path_buf(),
        detail,
    };
    // Globals: BoundSheet8 records (0x0085) give each sheet's stream offset
    // and name, up to the first EOF (0x000A).
    let mut sheets: Vec<(usize, String)> = Vec::new();
    for (record_type, body, _) in biff_records(stream, 0) {
        *visited += 1;
        match record_type {
            0x0085 if body.len() >= 8 => {
                let offset = u32::from_le_bytes([body[0], body[1], body[2], body[3]]) as usize;
                sheets.push((offset, bound_sheet_name(body, sheets.len())));
            }
            0x000A => break,
            _ => {}
        }
    }
    let limit = limits.max_box_cells;
    for (offset, name) in &sheets {
        if *offset >= stream.len() {
            return Err(corrupt(format!(
                "sheet '{name}' is said to start at byte {offset} of the Workbook stream, which holds {} bytes",
                stream.len()
            )));
        }
    }
    // The parser walks each listed sheet from its start to its EOF; sheets
    // that start inside one another, or one place listed many times, would
    // make it (and this walk) cover the same records again and again, and
    // it keeps every sheet it walks. Sound sheets lie apart and cover the
    // stream at most once, so more than twice is refused, and this walk
    // stays linear in the stream's length.
    let budget = stream.len().saturating_mul(2);
    let mut walked = 0usize;
    let listed = sheets.len();
    for (offset, name) in sheets {
        let too_large = |what: String| ReadError::TooLarge {
            path: path.to_path_buf(),
            what: format!("sheet '{name}' {what}"),
            limit: format!("{limit} cells in a sheet's rectangle"),
        };
        let mut seen_sheet_bof = false;
        let mut depth = 0usize;
        let mut span: Option<(u32, u32, u32, u32)> = None;
        let mut sheet_end = offset;
        for (record_type, body, end) in biff_records(stream, offset) {
            *visited += 1;
            sheet_end = end;
            if walked + (end - offset) > budget {
                return Err(corrupt(format!(
                    "its sheet list is damaged: the {listed} sheets it lists start inside one another or at one \
                     place, so reading them would cover the Workbook stream's {} bytes more than twice (stopped at \
                     sheet '{name}')",
                    stream.len()
                )));
            }
            // Nested substreams (charts) are skipped by the parser; so here.
            if depth > 0 {
                match record_type {
                    0x0809 => depth += 1,
                    0x000A => depth -= 1,
                    _ => {}
                }
                continue;
            }
            let u16_at = |at: usize| {
                body.get(at..at + 2)
                    .map(|two| u16::from_le_bytes([two[0], two[1]]) as u32)
            };
            let u32_at = |at: usize| {
                body.get(at..at + 4)
                    .map(|four| u32::from_le_bytes([four[0], four[1], four[2], four[3]]))
            };
            match record_type {
                0x0809 if seen_sheet_bof => depth += 1,
                0x0809 => seen_sheet_bof = true,
                0x000A => break,
                // DIMENSIONS (MS-XLS 2.4.90), measured as the parser measures
                // it, wrapping arithmetic included.
                0x0200 => {
                    let fields = match body.len() {
                        10 => u16_at(0).zip(u16_at(2)).zip(u16_at(4)).zip(u16_at(6)),
                        14 | 16 => u32_at(0).zip(u32_at(4)).zip(u16_at(8)).zip(u16_at(10)),
                        _ => None,
                    };
                    if let Some((((first_row, end_row), mut first_col), end_col)) = fields {
                        if first_col > 0xFF || end_col < first_col {
                            first_col = 0;
                        }
                        let (rows, cols) = if end_row >= 1 && end_col >= 1 {
                            (
                                (end_row - 1).wrapping_sub(first_row).wrapping_add(1) as u64,
                                (end_col - 1).wrapping_sub(first_col).wrapping_add(1) as u64,
                            )
                        } else {
                            (1, 1)
                        };
                        if rows.saturating_mul(cols) > limit {
                            return Err(too_large(format!("declares {rows} rows × {cols} columns")));
                        }
                    }
                }
                // Cell records: row and column lead the body (MS-XLS 2.4.180
                // Number, 2.4.148 Label, 2.4.181 RString, 2.4.24 BoolErr,
                // 2.4.220 RK, 2.4.149 LabelSst, 2.4.127 Formula); MulRk
                // (2.4.175) ends with its last column.
                0x0203 | 0x0204 | 0x00D6 | 0x0205 | 0x027E | 0x00FD | 0x0006 | 0x00BD => {
                    let (Some(row), Some(first_col)) = (u16_at(0), u16_at(2)) else {
                        continue;
                    };
                    let last_col = if record_type == 0x00BD && body.len() >= 6 {
                        u16_at(body.len() - 2).unwrap_or(first_col).max(first_col)
                    } else {
                        first_col
                    };
                    let (top, bottom, left, right) = span.unwrap_or((row, row, first_col, last_col));
                    let grown = (top.min(row), bottom.max(row), left.min(first_col), right.max(last_col));
                    let rows = (grown.1 - grown.0 + 1) as u64;
                    let cols = (grown.3 - grown.2 + 1) as u64;
                    if rows * cols > limit {
                        return Err(too_large(format!("has cells spanning {rows} rows × {cols} columns")));
                    }
                    span = Some(grown);
                }
                _ => {}
            }
        }
        walked += sheet_end - offset;
    }
    Ok(())
}

/// The records of a BIFF stream from `offset`: (type, body, the position
/// after it), stopping at the first record that runs past the end.
/// Continuation records (0x003C) belong to the record before them and are
/// passed over.
fn biff_records(stream: &[u8], offset: usize) -> impl Iterator<Item = (u16, &[u8], usize)> {
    let mut position = offset;
    std::iter::from_fn(move || loop {
        let header = stream.get(position..position.checked_add(4)?)?;
        let record_type = u16::from_le_bytes([header[0], header[1]]);
        let length = u16::from_le_bytes([header[2], header[3]]) as usize;
        let body = stream.get(position + 4..position + 4 + length)?;
        position += 4 + length;
        if record_type != 0x003C {
            return Some((record_type, body, position));
        }
    })
}

/// The sheet name of a BoundSheet8 body (MS-XLS 2.4.28): an offset, two
/// flag bytes, then a short string (a count, a flag byte, the characters).
fn bound_sheet_name(body: &[u8], index: usize) -> String {
    let fallback = || format!("number {}", index + 1);
    let (Some(&count), Some(&flags)) = (body.get(6), body.get(7)) else {
        return fallback();
    };
    let count = count as usize;
    if flags & 1 == 0 {
        body.get(8..8 + count)
            .map(|chars| chars.iter().map(|&byte| byte as char).collect())
            .unwrap_or_else(fallback)
    } else {
        body.get(8..8 + 2 * count)
            .map(|units| {
                let units: Vec<u16> = units
                    .chunks_exact(2)
                    .map(|pair| u16::from_le_bytes([pair[0], pair[1]]))
                    .collect();
                String::from_utf16_lossy(&units)
            })
            .unwrap_or_else(fallback)
    }
}

fn inspect_zip(path: &Path, limits: &ReadLimits) -> Result<Container, ReadError> {
    let file = super::open_regular_file(path).map_err(|source| ReadError::Io {
        path: path.to_path_buf(),
        source,
    })?;
    let mut archive = zip::ZipArchive::new(BufReader::new(file)).map_err(|error| ReadError::Corrupt {
        path: path.to_path_buf(),
        detail: format!("the zip container cannot be read ({error}); the file may be truncated"),
    })?;
    if archive.len() > limits.max_zip_entries {
        return Err(ReadError::TooLarge {
            path: path.to_path_buf(),
            what: format!("the container holds {} entries", archive.len()),
            limit: format!("{} entries", limits.max_zip_entries),
        });
    }
    let mut total_uncompressed: u64 = 0;
    let has = |name: &str| archive.index_for_name(name).is_some();
    let format = if has("xl/workbook.xml") {
        Format::Xlsx
    } else if has("xl/workbook.bin") {
        Format::Xlsb
    } else if has("content.xml") {
        Format::Ods
    } else {
        return Err(ReadError::NotAWorkbook {
            path: path.to_path_buf(),
            detail: "it is a zip archive without a workbook part (no xl/workbook.xml, xl/workbook.bin or content.xml)"
                .into(),
        });
    };
    for index in 0..archive.len() {
        let entry = archive.by_index_raw(index).map_err(|error| ReadError::Corrupt {
            path: path.to_path_buf(),
            detail: format!("zip entry {index} cannot be read ({error})"),
        })?;
        let entry_name = entry.name().map(|name| name.into_owned()).unwrap_or_default();
        let uncompressed = entry.size();
        let compressed = entry.compressed_size().max(1);
        total_uncompressed = total_uncompressed.saturating_add(uncompressed);
        if uncompressed > limits.max_entry_bytes {
            return Err(ReadError::TooLarge {
                path: path.to_path_buf(),
                what: format!("zip entry '{}' inflates to {} bytes", entry_name, uncompressed),
                limit: format!("{} bytes per entry", limits.max_entry_bytes),
            });
        }
        let ratio = uncompressed as f64 / compressed as f64;
        if uncompressed > limits.ratio_check_above_bytes && ratio > limits.max_compression_ratio {
            return Err(ReadError::TooLarge {
                path: path.to_path_buf(),
                what: format!(
                    "zip entry '{}' inflates {:.0} times ({} bytes from {}), as a zip bomb does",
                    entry_name, ratio, uncompressed, compressed
                ),
                limit: format!("a ratio of {:.0}", limits.max_compression_ratio),
            });
        }
    }
    if total_uncompressed > limits.max_total_bytes {
        return Err(ReadError::TooLarge {
            path: path.to_path_buf(),
            what: format!("the container inflates to {total_uncompressed} bytes in all"),
            limit: format!("{} bytes", limits.max_total_bytes),
        });
    }
    match format {
        Format::Xlsx => check_shared_strings_xml(path, &mut archive)?,
        Format::Xlsb => check_xlsb_workbook(path, &mut archive)?,
        Format::Ods => check_ods_sheet_sizes(path, &mut archive, limits)?,
        Format::Xls => {}
    }
    Ok(Container { format })
}

/// The shared-strings part announces its count before its strings, and the
/// parser reserves that many slots up front. Each string takes at least five
/// bytes of XML (`<si/>`), so a count beyond a fifth of the part's size is a lie.
fn check_shared_strings_xml<R: Read + std::io::Seek>(
    path: &Path,
    archive: &mut zip::ZipArchive<R>,
) -> Result<(), ReadError> {
    let Ok(mut entry) = archive.by_name("xl/sharedStrings.xml") else {
        return Ok(());
    };
    let size = entry.size();
    let mut head = vec![0u8; 4096];
    let mut filled = 0;
    while filled < head.len() {
        match entry.read(&mut head[filled..]) {
            Ok(0) => break,
            Ok(got) => filled += got,
            Err(error) => {
                return Err(ReadError::Corrupt {
                    path: path.to_path_buf(),
                    detail: format!("the shared strings part cannot be inflated ({error})"),
                })
            }
        }
    }
    let text = String::from_utf8_lossy(&head[..filled]);
    for attribute in ["uniqueCount", "count"] {
        if let Some(count) = attribute_value(&text, attribute).and_then(|value| value.parse::<u128>().ok()) {
            if attribute == "uniqueCount" && count > size as u128 / 5 + 1 {
                return Err(ReadError::TooLarge {
                    path: path.to_path_buf(),
                    what: format!("the shared strings part claims {count} strings in {size} bytes"),
                    limit: "one string per five bytes of XML".into(),
                });
            }
        }
    }
    Ok(())
}

/// Finds `name="value"` in a fragment of XML text.
pub(crate) fn attribute_value<'t>(text: &'t str, name: &str) -> Option<&'t str> {
    let mut search_from = 0;
    while let Some(found) = text[search_from..].find(name) {
        let start = search_from + found;
        let before_ok = start == 0 || text.as_bytes()[start - 1].is_ascii_whitespace();
        let rest = &text[start + name.len()..];
        let rest_trimmed = rest.trim_start();
        if before_ok && rest_trimmed.starts_with('=') {
            let after_equals = rest_trimmed[1..].trim_start();
            let quote = after_equals.chars().next()?;
            if quote == '"' || quote == '\'' {
                let body = &after_equals[1..];
                let end = body.find(quote)?;
                return Some(&body[..end]);
            }
        }
        search_from = start + name.len();
    }
    None
}

/// The binary workbook part lists external sheets with a count the parser
/// reserves before reading; each entry takes 12 bytes of the record, so the
/// count must fit the record's length.
fn check_xlsb_workbook<R: Read + std::io::Seek>(
    path: &Path,
    archive: &mut zip::ZipArchive<R>,
) -> Result<(), ReadError> {
    let Ok(mut entry) = archive.by_name("xl/workbook.bin") else {
        return Ok(());
    };
    let mut bytes = Vec::new();
    if entry.by_ref().take(64 * 1024 * 1024).read_to_end(&mut bytes).is_err() {
        return Err(ReadError::Corrupt {
            path: path.to_path_buf(),
            detail: "the binary workbook part cannot be inflated".into(),
        });
    }
    let mut position = 0usize;
    // Records: a type and a length, each a little-endian base-128 number (MS-XLSB 2.1.4).
    while position < bytes.len() {
        let Some((record_type, after_type)) = read_varint(&bytes, position, 2) else {
            break;
        };
        let Some((record_len, after_len)) = read_varint(&bytes, after_type, 4) else {
            break;
        };
        let body_end = after_len.saturating_add(record_len as usize);
        if body_end > bytes.len() {
            break;
        }
        // BrtBundleSh (0x009C, MS-XLSB 2.4.304): hsState and iTabID (4 bytes
        // each), then the relationship id and the sheet name as wide strings
        // (a 4-byte count of UTF-16 units, then the units). The parser slices
        // the body by those counts without checking them.
        if record_type == 0x009C {
            let body = &bytes[after_len..body_end];
            let count_at = |at: usize| {
                body.get(at..at + 4)
                    .map(|four| u32::from_le_bytes([four[0], four[1], four[2], four[3]]) as u64)
            };
            let fits = match count_at(8) {
                Some(0xFFFF_FFFF) => true,
                Some(units) => {
                    let name_at = 12 + 2 * units;
                    match usize::try_from(name_at).ok().and_then(count_at) {
                        Some(name_units) => name_at + 4 + 2 * name_units <= body.len() as u64,
                        None => false,
                    }
                }
                None => false,
            };
            if !fits {
                return Err(ReadError::Corrupt {
                    path: path.to_path_buf(),
                    detail: "a sheet entry of the binary workbook part claims more text than it holds".into(),
                });
            }
        }
        // BrtExternSheet (0x016A): cXti (4 bytes), then cXti entries of 12 bytes.
        if record_type == 0x016A && record_len >= 4 {
            let count_bytes = &bytes[after_len..after_len + 4];
            let count = u32::from_le_bytes([count_bytes[0], count_bytes[1], count_bytes[2], count_bytes[3]]) as u64;
            if count.saturating_mul(12) > record_len as u64 - 4 {
                return Err(ReadError::TooLarge {
                    path: path.to_path_buf(),
                    what: format!("the external sheet list claims {count} entries in {record_len} bytes"),
                    limit: "twelve bytes per entry".into(),
                });
            }
        }
        position = body_end;
    }
    Ok(())
}

/// The ods parser builds each sheet as one dense rectangle, and a row or
/// cell may say it repeats (`table:number-rows-repeated`,
/// `table:number-columns-repeated`) any number of times: a few hundred
/// bytes can ask for billions of cells and abort the process. So
/// `content.xml` is streamed here once, tag by tag, and each sheet's
/// rectangle is measured as the parser will build it, up to its last
/// non-empty cell (the empty rows and cells that fill out every saved sheet
/// cost nothing). A sheet beyond [`ReadLimits::max_box_cells`] is refused.
fn check_ods_sheet_sizes<R: Read + std::io::Seek>(
    path: &Path,
    archive: &mut zip::ZipArchive<R>,
    limits: &ReadLimits,
) -> Result<(), ReadError> {
    let Ok(entry) = archive.by_name("content.xml") else {
        return Ok(());
    };
    let mut measure = OdsMeasure::default();
    let outcome = scan_xml_tags(entry, |tag| measure.tag(tag));
    if let Err(error) = outcome {
        return Err(ReadError::Corrupt {
            path: path.to_path_buf(),
            detail: format!("the content part cannot be inflated ({error})"),
        });
    }
    if let Some(name) = &measure.unclosed_table {
        // The parser reads a sheet until its end tag and would wait for it for ever.
        return Err(ReadError::Corrupt {
            path: path.to_path_buf(),
            detail: format!("the content part ends inside sheet '{name}'; the file may be truncated"),
        });
    }
    measure.end_sheet();
    match measure.largest {
        Some((name, rows, cols)) if rows.saturating_mul(cols) > limits.max_box_cells => Err(ReadError::TooLarge {
            path: path.to_path_buf(),
            what: format!("sheet '{name}' spans {rows} rows × {cols} columns through its repeated rows and cells"),
            limit: format!("{} cells in a sheet's rectangle", limits.max_box_cells),
        }),
        _ => Ok(()),
    }
}

/// The running measure of the ods sheets seen so far.
#[derive(Default)]
struct OdsMeasure {
    /// Sheet name, rows and columns up to the last non-empty cell.
    sheet: Option<(String, u64, u64)>,
    /// The next row's index in the current sheet.
    row: u64,
    /// How many times the current row repeats.
    row_repeat: u64,
    /// Columns so far in the current row, and the extent up to its last non-empty cell.
    col: u64,
    row_extent: u64,
    /// An open (not self-closing) cell: its first column and repeat count,
    /// and whether anything was found inside it.
    open_cell: Option<(u64, u64, bool)>,
    /// The sheet with the largest rectangle so far.
    largest: Option<(String, u64, u64)>,
    /// A sheet whose start tag has been seen and its end tag not yet.
    unclosed_table: Option<String>,
}

impl OdsMeasure {
    fn tag(&mut self, tag: &[u8]) {
        // Names are read as the XML parser behind the ods reader reads them:
        // an end tag's name is all of it (trailing spaces aside), a start
        // tag's runs to the first space, after any closing `/` is taken off.
        let closing = tag.first() == Some(&b'/');
        let self_closing = !closing && tag.last() == Some(&b'/');
        let body = if closing {
            &tag[1..]
        } else if self_closing {
            &tag[..tag.len() - 1]
        } else {
            tag
        };
        let name = if closing {
            body.trim_ascii_end()
        } else {
            let name_end = body
                .iter()
                .position(|byte| byte.is_ascii_whitespace())
                .unwrap_or(body.len());
            &body[..name_end]
        };
        let text = String::from_utf8_lossy(body);
        let repeat = |attribute: &str| {
            attribute_value(&text, attribute)
                .and_then(|value| value.trim().parse::<u64>().ok())
                .unwrap_or(1)
                .max(1)
        };
        match (name, closing) {
            (b"table:table", false) => {
                self.end_sheet();
                let sheet_name = attribute_value(&text, "table:name").unwrap_or("").to_string();
                if !self_closing {
                    self.unclosed_table = Some(sheet_name.clone());
                }
                self.sheet = Some((sheet_name, 0, 0));
                self.row = 0;
            }
            (b"table:table", true) => {
                self.unclosed_table = None;
                self.end_sheet();
            }
            (b"table:table-row", false) => {
                self.row_repeat = repeat("table:number-rows-repeated");
                self.col = 0;
                self.row_extent = 0;
                if self_closing {
                    self.end_row();
                }
            }
            (b"table:table-row", true) => self.end_row(),
            (b"table:table-cell" | b"table:covered-table-cell", false) => {
                let cols = repeat("table:number-columns-repeated");
                let has_value = attribute_value(&text, "office:value-type").is_some();
                if self_closing {
                    self.end_cell(cols, has_value);
                } else {
                    self.open_cell = Some((self.col, cols, has_value));
                }
            }
            (b"table:table-cell" | b"table:covered-table-cell", true) => {
                if let Some((_, cols, filled)) = self.open_cell.take() {
                    self.end_cell(cols, filled);
                }
            }
            (_, false) => {
                // Any element inside a cell (a paragraph of text) fills it.
                if let Some(open) = &mut self.open_cell {
                    open.2 = true;
                }
            }
            _ => {}
        }
    }

    fn end_cell(&mut self, cols: u64, filled: bool) {
        self.col = self.col.saturating_add(cols);
        if filled {
            self.row_extent = self.col;
        }
    }

    fn end_row(&mut self) {
        if let Some(open) = self.open_cell.take() {
            self.end_cell(open.1, open.2);
        }
        let next_row = self.row.saturating_add(self.row_repeat);
        if self.row_extent > 0 {
            if let Some((_, rows, cols)) = &mut self.sheet {
                *rows = next_row;
                *cols = (*cols).max(self.row_extent);
            }
        }
        self.row = next_row;
        self.row_repeat = 1;
        self.row_extent = 0;
        self.col = 0;
    }

    fn end_sheet(&mut self) {
        if let Some((name, rows, cols)) = self.sheet.take() {
            let larger = match &self.largest {
                None => true,
                Some((_, old_rows, old_cols)) => rows.saturating_mul(cols) > old_rows.saturating_mul(*old_cols),
            };
            if larger {
                self.largest = Some((name, rows, cols));
            }
        }
    }
}

/// Longest tag kept whole; the rest of a longer one is passed over (the
/// attributes looked for come first in the tags written by spreadsheet
/// programs, and a tag this long is not one of them anyway).
const MAX_KEPT_TAG_BYTES: usize = 16 << 10;

/// Streams XML and calls `found` with each tag's text between `<` and `>`,
/// `>` inside quoted attribute values included. Comments, CDATA sections,
/// processing instructions and declarations are passed over whole, as an
/// XML parser passes over them. Memory stays bounded whatever the input.
fn scan_xml_tags<R: Read>(mut reader: R, mut found: impl FnMut(&[u8])) -> std::io::Result<()> {
    #[derive(Clone, Copy, PartialEq)]
    enum State {
        Text,
        /// Just after `<`.
        Open,
        Tag,
        Quoted(u8),
        /// Inside `<!...`, not yet known to be a comment or CDATA.
        Bang,
        /// Inside a comment, CDATA section or processing instruction, until the terminator.
        Skip(&'static [u8]),
    }
    let mut chunk = vec![0u8; 1 << 16];
    let mut tag: Vec<u8> = Vec::with_capacity(256);
    let mut state = State::Text;
    // The last bytes seen while skipping, to find a terminator split across reads.
    let mut recent: Vec<u8> = Vec::with_capacity(16);
    loop {
        let read = match reader.read(&mut chunk) {
            Ok(0) => break,
            Ok(read) => read,
            Err(error) if error.kind() == std::io::ErrorKind::Interrupted => continue,
            Err(error) => return Err(error),
        };
        let mut index = 0;
        while index < read {
            match state {
                State::Text => match memchr::memchr(b'<', &chunk[index..read]) {
                    Some(offset) => {
                        index += offset + 1;
                        state = State::Open;
                    }
                    None => index = read,
                },
                State::Open => {
                    let byte = chunk[index];
                    index += 1;
                    tag.clear();
                    recent.clear();
                    state = match byte {
                        b'!' => State::Bang,
                        b'?' => State::Skip(b"?>"),
                        _ => {
                            tag.push(byte);
                            State::Tag
                        }
                    };
                }
                State::Bang => {
                    recent.push(chunk[index]);
                    index += 1;
                    if recent.as_slice() == b"--" {
                        recent.clear();
                        state = State::Skip(b"-->");
                    } else if recent.as_slice() == b"[CDATA[" {
                        recent.clear();
                        state = State::Skip(b"]]>");
                    } else if !b"--".starts_with(&recent) && !b"[CDATA[".starts_with(&recent) {
                        // A declaration such as <!DOCTYPE ...>: up to its `>`.
                        state = if recent.last() == Some(&b'>') {
                            State::Text
                        } else {
                            State::Skip(b">")
                        };
                        recent.clear();
                    }
                }
                State::Skip(terminator) => {
                    let byte = chunk[index];
                    index += 1;
                    recent.push(byte);
                    if recent.len() > terminator.len() {
                        recent.remove(0);
                    }
                    if recent.as_slice() == terminator {
                        recent.clear();
                        state = State::Text;
                    }
                }
                State::Tag => {
                    let byte = chunk[index];
                    index += 1;
                    match byte {
                        b'>' => {
                            found(&tag);
                            state = State::Text;
                        }
                        b'"' | b'\'' => state = State::Quoted(byte),
                        _ => {}
                    }
                    if byte != b'>' && tag.len() < MAX_KEPT_TAG_BYTES {
                        tag.push(byte);
                    }
                }
                State::Quoted(quote) => {
                    let byte = chunk[index];
                    index += 1;
                    if byte == quote {
                        state = State::Tag;
                    }
                    if tag.len() < MAX_KEPT_TAG_BYTES {
                        tag.push(byte);
                    }
                }
            }
        }
    }
    Ok(())
}

fn read_varint(bytes: &[u8], start: usize, max_bytes: usize) -> Option<(u32, usize)> {
    let mut value: u32 = 0;
    for offset in 0..max_bytes {
        let byte = *bytes.get(start + offset)?;
        value |= ((byte & 0x7F) as u32) << (7 * offset);
        if byte & 0x80 == 0 {
            return Some((value, start + offset + 1));
        }
    }
    Some((value, start + max_bytes))
}

#[cfg(test)]
mod tests {
    use super::{attribute_value, scan_xml_tags, walk_xls_sheets, OdsMeasure};
    use crate::read::{ReadError, ReadLimits};
    use crate::testing::biff8_record;

    /// A Workbook stream (MS-XLS 2.4.21 BOF, 2.4.28 BoundSheet8, 2.4.180
    /// Number, 2.4.103 EOF) of one worksheet of `cells` numbers whose sheet
    /// list has `sheets` entries: the first at the sheet's BOF, the others at
    /// evenly spaced Number records inside it (or, with `same_place`, all at
    /// the BOF). Returns the stream and how many records it holds.
    fn listed_inside_one_sheet(sheets: usize, cells: usize, same_place: bool) -> (Vec<u8>, u64) {
        let bof = |kind: u16| {
            let mut body = 0x0600u16.to_le_bytes().to_vec();
            body.extend(kind.to_le_bytes());
            body.extend([0u8; 12]);
            biff8_record(0x0809, &body)
        };
        let name = |index: usize| format!("S{index:05}");
        let bound_len: usize = (0..sheets).map(|index| 4 + 8 + name(index).len()).sum();
        let sheet_start = bof(5).len() + bound_len + 4;
        let first_cell = sheet_start + bof(0x10).len();
        let number_len = 4 + 14;
        let mut stream = bof(5);
        for index in 0..sheets {
            let offset = if index == 0 || same_place {
                sheet_start
            } else {
                first_cell + number_len * (index * cells / sheets)
            };
            let mut body = (offset as u32).to_le_bytes().to_vec();
            body.extend([0u8, 0u8, name(index).len() as u8, 0u8]);
            body.extend(name(index).as_bytes());
            stream.extend(biff8_record(0x0085, &body));
        }
        stream.extend(biff8_record(0x000A, &[]));
        assert_eq!(stream.len(), sheet_start);
        stream.extend(bof(0x10));
        for cell in 0..cells {
            // Rows 1 to 65,536 of columns A, B, ...: a rectangle well under the cap.
            let mut body = ((cell % 65_536) as u16).to_le_bytes().to_vec();
            body.extend(((cell / 65_536) as u16).to_le_bytes());
            body.extend(0u16.to_le_bytes());
            body.extend((cell as f64).to_le_bytes());
            stream.extend(biff8_record(0x0203, &body));
        }
        stream.extend(biff8_record(0x000A, &[]));
        (stream, (sheets + cells + 4) as u64)
    }

    #[test]
    fn sheets_listed_inside_one_sheet_are_walked_in_linear_time() {
        // 2,000 sheet entries into one sheet of 2 MB (116,508 Number records):
        // each walked from its start to the sheet's end, as the parser walks
        // them, visited 116,571,255 records (984 times the stream's 118,512).
        let (stream, records) = listed_inside_one_sheet(2_000, 116_508, false);
        assert!(stream.len() > 2_000_000);
        let path = std::path::Path::new("overlap.xls");
        let mut visited = 0;
        match walk_xls_sheets(path, &stream, &ReadLimits::default(), &mut visited) {
            Err(ReadError::Corrupt { detail, .. }) => {
                assert!(
                    detail.contains("sheet list is damaged") && detail.contains("'S"),
                    "{detail}"
                );
            }
            other => panic!("{other:?}"),
        }
        assert!(visited <= 3 * records, "{visited} records visited of {records}");
        // All 2,000 at the sheet's own start: the same sheet 2,000 times over.
        let (stream, records) = listed_inside_one_sheet(2_000, 116_508, true);
        let mut visited = 0;
        let outcome = walk_xls_sheets(path, &stream, &ReadLimits::default(), &mut visited);
        assert!(matches!(outcome, Err(ReadError::Corrupt { .. })), "{outcome:?}");
        assert!(visited <= 3 * records, "{visited} records visited of {records}");
    }

    #[test]
    fn sheets_that_lie_apart_or_one_listed_twice_pass() {
        // The same sheet listed twice at its start covers the stream less
        // than twice over; a sheet listed three times of a stream it fills does not.
        for (sheets, passes) in [(1, true), (2, true), (3, false)] {
            let (stream, records) = listed_inside_one_sheet(sheets, 50_000, true);
            let mut visited = 0;
            let outcome = walk_xls_sheets(
                std::path::Path::new("twice.xls"),
                &stream,
                &ReadLimits::default(),
                &mut visited,
            );
            assert_eq!(outcome.is_ok(), passes, "{sheets} entries: {outcome:?}");
            assert!(visited <= sheets as u64 * records, "{visited}");
        }
    }

    fn measure(xml: &str) -> Option<(String, u64, u64)> {
        let mut measure = OdsMeasure::default();
        scan_xml_tags(xml.as_bytes(), |tag| measure.tag(tag)).expect("in memory");
        measure.end_sheet();
        measure.largest
    }

    #[test]
    fn ods_rectangles_count_repeats_up_to_the_last_filled_cell() {
        // Two filled rows of three columns, then the empty filler rows and
        // cells every saved sheet ends with (OpenDocument 1.2, part 1, 9.1.3
        // and 9.1.4: the repeat attributes).
        let xml = r#"<office:spreadsheet><table:table table:name="Trial">
            <table:table-row><table:table-cell office:value-type="string"><text:p>a</text:p></table:table-cell><table:table-cell table:number-columns-repeated="2" office:value-type="float" office:value="1"/></table:table-row>
            <table:table-row table:number-rows-repeated="2"><table:table-cell/><table:table-cell><text:p>b</text:p></table:table-cell><table:table-cell table:number-columns-repeated="1000"/></table:table-row>
            <table:table-row table:number-rows-repeated="1048573"><table:table-cell table:number-columns-repeated="1024"/></table:table-row>
            </table:table></office:spreadsheet>"#;
        assert_eq!(measure(xml), Some(("Trial".to_string(), 3, 3)));
        // A repeated filled cell in a repeated row is the bomb.
        let bomb = r#"<table:table table:name="Big"><table:table-row table:number-rows-repeated="1000000"><table:table-cell table:number-columns-repeated="99" office:value-type="float" office:value="1"/></table:table-row></table:table>"#;
        assert_eq!(measure(bomb), Some(("Big".to_string(), 1_000_000, 99)));
        // The largest of several sheets is kept.
        let two = format!(
            r#"{bomb}<table:table table:name="Small"><table:table-row><table:table-cell office:value-type="float" office:value="1"/></table:table-row></table:table>"#
        );
        assert_eq!(measure(&two).map(|(name, _, _)| name), Some("Big".to_string()));
    }

    #[test]
    fn the_tag_scanner_passes_over_comments_cdata_and_quoted_brackets() {
        let xml = r#"<?xml version="1.0"?><!DOCTYPE x><a b="1 > 0"><!-- <c> --><![CDATA[ <d> ]]><e/></a>"#;
        let mut tags = Vec::new();
        scan_xml_tags(xml.as_bytes(), |tag| {
            tags.push(String::from_utf8_lossy(tag).into_owned())
        })
        .expect("in memory");
        assert_eq!(tags, [r#"a b="1 > 0""#, "e/", "/a"]);
    }

    #[test]
    fn a_sheet_without_its_end_tag_is_found() {
        // Found by the read_ods fuzz target: the parser loops for ever at the
        // end of a content part that ends inside a sheet.
        let mut measure = OdsMeasure::default();
        let xml = r#"<table:table table:name="Trial"><table:table-row><table:table-cell/></table:table-row><!-- </table:table> --></table:table/cell></table:table x>"#;
        scan_xml_tags(xml.as_bytes(), |tag| measure.tag(tag)).expect("in memory");
        assert_eq!(measure.unclosed_table.as_deref(), Some("Trial"));
        let mut measure = OdsMeasure::default();
        scan_xml_tags(&b"<table:table table:name='T'></table:table >"[..], |tag| {
            measure.tag(tag)
        })
        .expect("in memory");
        assert_eq!(measure.unclosed_table, None);
    }

    #[test]
    fn finds_attributes() {
        let text = r#"<sst xmlns="x" count="12" uniqueCount='7'>"#;
        assert_eq!(attribute_value(text, "uniqueCount"), Some("7"));
        assert_eq!(attribute_value(text, "count"), Some("12"));
        assert_eq!(attribute_value(text, "missing"), None);
    }
}
