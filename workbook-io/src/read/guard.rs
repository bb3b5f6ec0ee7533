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
            detail: "it is not a regular file".into(),
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
    let mut file = File::open(path).map_err(io_error)?;
    let read = read_up_to(&mut file, &mut head).map_err(io_error)?;
    let head = &head[..read];
    if head.starts_with(b"PK\x03\x04") || head.starts_with(b"PK\x05\x06") {
        inspect_zip(path, limits)
    } else if head.starts_with(&[0xD0, 0xCF, 0x11, 0xE0, 0xA1, 0xB1, 0x1A, 0xE1]) {
        inspect_compound(path)
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
fn inspect_compound(path: &Path) -> Result<Container, ReadError> {
    let bytes = std::fs::read(path).map_err(|source| ReadError::Io {
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
    Ok(Container { format: Format::Xls })
}

fn inspect_zip(path: &Path, limits: &ReadLimits) -> Result<Container, ReadError> {
    let file = File::open(path).map_err(|source| ReadError::Io {
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
        _ => {}
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
    use super::attribute_value;

    #[test]
    fn finds_attributes() {
        let text = r#"<sst xmlns="x" count="12" uniqueCount='7'>"#;
        assert_eq!(attribute_value(text, "uniqueCount"), Some("7"));
        assert_eq!(attribute_value(text, "count"), Some("12"));
        assert_eq!(attribute_value(text, "missing"), None);
    }
}
