//! The results document kept inside the results workbook: a hidden sheet
//! that holds the same JSON that `trialyst run --json` prints (the serde
//! JSON of [`WorkbookResults`]), so that a program can read the figures
//! back without matching printed labels.
//!
//! Layout of the sheet [`names::RESULTS_DOCUMENT`]: A1 holds
//! [`DOCUMENT_MARK`], B1 the results format version; from A2 down, the JSON
//! text in pieces of at most [`CHUNK_CHARS`] characters (a cell holds at
//! most 32,767), to be joined in row order.

use std::path::{Path, PathBuf};

use serde_json::Value as Json;
use workbook_io::write::{Look, Sheet, Value};
use workbook_io::{open_workbook, ReadError, ReadLimits};

use super::names;
use crate::WorkbookResults;

/// The text in A1 of the document sheet that marks it as ours.
pub const DOCUMENT_MARK: &str = "trialyst results document";

/// Most characters (counted as UTF-16 units, as spreadsheet programs count
/// them) in one cell of the document sheet.
pub const CHUNK_CHARS: usize = 32_000;

/// Why a results document could not be read.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum DocumentError {
    /// The file could not be read.
    #[error(transparent)]
    Read(#[from] ReadError),
    /// The file holds no usable results document.
    #[error("'{}': {reason}", path.display())]
    Missing {
        /// The file.
        path: PathBuf,
        /// What is missing or wrong.
        reason: String,
    },
}

/// Splits `text` into pieces of at most `limit` UTF-16 units, never inside a character.
pub fn chunks_of(text: &str, limit: usize) -> Vec<&str> {
    let mut pieces = Vec::new();
    let mut start = 0;
    let mut units = 0;
    for (index, character) in text.char_indices() {
        let width = character.len_utf16();
        if units + width > limit {
            pieces.push(&text[start..index]);
            start = index;
            units = 0;
        }
        units += width;
    }
    if start < text.len() {
        pieces.push(&text[start..]);
    }
    pieces
}

/// The hidden sheet holding the results document.
pub fn document_sheet(results: &WorkbookResults) -> Sheet {
    let mut sheet = Sheet::new(names::RESULTS_DOCUMENT);
    sheet.hidden = true;
    sheet.put(0, 0, Value::text(DOCUMENT_MARK), Look::Key);
    sheet.put(0, 1, Value::text(results.format_version), Look::Plain);
    let text = serde_json::to_string(results).unwrap_or_default();
    for (index, piece) in chunks_of(&text, CHUNK_CHARS).into_iter().enumerate() {
        sheet.put(1 + index as u32, 0, Value::text(piece), Look::Plain);
    }
    sheet
}

/// Reads one results document from a results workbook written by trialyst
/// (its hidden document sheet) or from a `.json` file holding one document
/// (a line of `trialyst run --json`).
///
/// # Errors
///
/// [`DocumentError::Read`] when the workbook cannot be read;
/// [`DocumentError::Missing`], naming the file, when it holds no document
/// or the document records a failed analysis.
pub fn read_results_document(path: &Path) -> Result<Json, DocumentError> {
    let missing = |reason: String| DocumentError::Missing {
        path: path.to_path_buf(),
        reason,
    };
    let is_json = path
        .extension()
        .is_some_and(|extension| extension.eq_ignore_ascii_case("json"));
    let text = if is_json {
        std::fs::read_to_string(path).map_err(|source| ReadError::Io {
            path: path.to_path_buf(),
            source,
        })?
    } else {
        let mut workbook = open_workbook(path, &ReadLimits::default())?;
        if !workbook
            .sheets()
            .iter()
            .any(|info| info.name == names::RESULTS_DOCUMENT)
        {
            return Err(missing(format!(
                "not a trialyst results workbook, or one written before results kept their document (no sheet '{}'); analyse the trial again",
                names::RESULTS_DOCUMENT
            )));
        }
        let grid = workbook.read_sheet(names::RESULTS_DOCUMENT, None)?;
        let mut text = String::new();
        let mut marked = false;
        for (position, value) in &grid.cells {
            if position.col != 0 {
                continue;
            }
            let cell = grid.display(*value);
            if position.row == 0 {
                marked = cell == DOCUMENT_MARK;
            } else {
                text.push_str(&cell);
            }
        }
        if !marked {
            return Err(missing(format!(
                "the sheet '{}' does not start with '{DOCUMENT_MARK}'",
                names::RESULTS_DOCUMENT
            )));
        }
        text
    };
    let document: Json = serde_json::from_str(text.trim())
        .map_err(|error| missing(format!("the results document is not readable JSON ({error})")))?;
    if document.get("status").and_then(Json::as_str) == Some("failed") {
        let why = document
            .get("error")
            .and_then(Json::as_str)
            .unwrap_or("no reason given");
        return Err(missing(format!("the analysis it records failed: {why}")));
    }
    if !document.is_object() || document.get("responses").is_none() {
        return Err(missing("it holds no results document (no 'responses')".into()));
    }
    Ok(document)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn chunks_keep_characters_whole_and_join_back() {
        let text = format!("{}é€{}", "a".repeat(5), "b".repeat(4));
        let pieces = chunks_of(&text, 6);
        assert_eq!(pieces.concat(), text);
        assert!(
            pieces.iter().all(|piece| piece.encode_utf16().count() <= 6),
            "{pieces:?}"
        );
        // A character outside the basic plane counts two units.
        let wide = "😀".repeat(5);
        let pieces = chunks_of(&wide, 3);
        assert_eq!(pieces.concat(), wide);
        assert!(
            pieces.iter().all(|piece| piece.encode_utf16().count() <= 3),
            "{pieces:?}"
        );
        assert!(chunks_of("", 10).is_empty());
    }

    #[test]
    fn a_long_document_is_kept_in_pieces_and_read_back_whole() {
        use workbook_io::write::Book;
        // An invented trial of 30 conditions, five runs each: 435 pairs make
        // a document longer than one cell can hold.
        let dir = tempfile::tempdir().expect("a temporary folder");
        let source = dir.path().join("many.xlsx");
        let mut sheet = Sheet::new("Runs");
        sheet.put(0, 0, Value::text("Setting"), Look::ColumnHeader);
        sheet.put(0, 1, Value::text("Gloss"), Look::ColumnHeader);
        for record in 0..150u32 {
            let condition = record / 5;
            sheet.put(1 + record, 0, Value::text(format!("S{condition:02}")), Look::Plain);
            let value = 50.0 + f64::from(condition) * 0.3 + f64::from(record % 5) * 0.7;
            sheet.put(1 + record, 1, Value::number(value), Look::Plain);
        }
        workbook_io::write::write_book(&Book { sheets: vec![sheet] }, &source).expect("written");
        let results = crate::analyse_workbook(&source, &crate::AnalysisRequest::default()).expect("analysed");
        let destination = dir.path().join("many.results.xlsx");
        crate::write_results(&results, &destination).expect("results written");
        let pieces = document_sheet(&results).cells.len() - 2;
        assert!(pieces >= 2, "{pieces} piece(s)");
        let document = read_results_document(&destination).expect("the document reads back");
        assert_eq!(document, serde_json::to_value(&results).expect("encodes"));

        // The same document as a .json file.
        let json_file = dir.path().join("many.json");
        std::fs::write(&json_file, serde_json::to_string(&results).unwrap()).unwrap();
        assert_eq!(read_results_document(&json_file).expect("reads"), document);

        // A workbook without the sheet is an error naming the file and the sheet.
        let error = read_results_document(&source).unwrap_err();
        let text = error.to_string();
        assert!(
            text.contains("many.xlsx") && text.contains(names::RESULTS_DOCUMENT),
            "{text}"
        );
    }
}
