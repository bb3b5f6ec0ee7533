//! Analyse and write: the one use case behind `trialyst run`, the watcher's
//! worker and the protocol's `trialyst/writeResults`.
//!
//! The workbook is analysed, the output folder resolved (the folder named by
//! the caller, else the `output folder` setting in force relative to the
//! workbook's folder, else beside the workbook), made if missing, and the
//! results workbook written atomically (a temporary file renamed into
//! place). A caller that must know the destination before the write starts
//! (the watcher's worker, so that its parent can clean up after a killed
//! child) passes a hook that is called with it.

use std::path::{Path, PathBuf};

use crate::failure::ServiceError;
use crate::load::AnalysisRequest;
use crate::paths::{output_folder_for, results_path_for};
use crate::results::WorkbookResults;

/// What [`analyse_and_write`] produced.
#[derive(Debug, Clone)]
pub struct WrittenResults {
    /// The results.
    pub results: WorkbookResults,
    /// The results workbook written.
    pub results_file: PathBuf,
}

/// Analyses `workbook` and writes its results workbook.
///
/// `output_folder` is the folder named by the caller (already resolved to
/// a path), the highest precedence. `before_write` is called with the
/// destination once it is known and the folder exists, just before the
/// write starts.
///
/// # Errors
///
/// [`ServiceError`] from the analysis; [`ServiceError::Cancelled`] when the
/// request was cancelled before the write; [`ServiceError::OutputFolder`]
/// when the folder cannot be made; [`ServiceError::Write`].
pub fn analyse_and_write(
    workbook: &Path,
    request: &AnalysisRequest,
    output_folder: Option<&Path>,
    before_write: &mut dyn FnMut(&Path),
) -> Result<WrittenResults, ServiceError> {
    let results = crate::orchestrate::analyse_workbook(workbook, request)?;
    if request.cancel.is_cancelled() {
        return Err(ServiceError::Cancelled);
    }
    let folder = output_folder_for(workbook, output_folder, &results.settings);
    if let Some(folder) = &folder {
        std::fs::create_dir_all(folder).map_err(|source| ServiceError::OutputFolder {
            folder: folder.clone(),
            source,
        })?;
    }
    let results_file = results_path_for(workbook, folder.as_deref());
    before_write(&results_file);
    write_results(&results, &results_file)?;
    Ok(WrittenResults { results, results_file })
}

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
