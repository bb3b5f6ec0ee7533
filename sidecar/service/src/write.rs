//! Analyse and write: the one use case behind `trialyst run`, the watcher's
//! worker and the protocol's `trialyst/writeResults`.

use std::path::Path;

use crate::failure::ServiceError;
use crate::results::WorkbookResults;

/// Writes the results workbook atomically.
///
/// # Errors
///
/// [`ServiceError::Write`].
pub fn write_results(results: &WorkbookResults, destination: &Path) -> Result<(), ServiceError> {
    let book = crate::report::build_results_book(results);
    workbook_io::write::write_book(&book, destination)?;
    Ok(())
}
