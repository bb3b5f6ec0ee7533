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
use crate::paths::{output_folder_for, results_path_named};
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
    let folder = output_folder_for(
        workbook,
        output_folder,
        &results.settings,
        &request.output.allowed_roots,
    )?;
    let results_file = results_path_named(workbook, folder.as_deref(), &request.output.name);
    if let Some(folder) = results_file.parent().filter(|folder| !folder.as_os_str().is_empty()) {
        std::fs::create_dir_all(folder).map_err(|source| ServiceError::OutputFolder {
            folder: folder.to_path_buf(),
            source,
        })?;
    }
    workbook_io::write::check_replaceable(&results_file, workbook_io::write::ReplaceRule::OnlyOurs)?;
    request.output.claim(workbook, &results_file)?;
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

#[cfg(test)]
mod tests {
    use super::*;
    use crate::settings::Settings;
    use workbook_io::write::{Book, Look, Sheet, Value};

    /// A small invented trial: three ovens, three hardness readings each.
    fn trial_workbook(path: &Path) {
        let mut sheet = Sheet::new("Runs");
        sheet.put(0, 0, Value::text("Oven"), Look::ColumnHeader);
        sheet.put(0, 1, Value::text("Hardness"), Look::ColumnHeader);
        let runs = [
            ("North", 10.1),
            ("North", 10.4),
            ("North", 9.9),
            ("South", 11.0),
            ("South", 11.3),
            ("South", 10.8),
            ("East", 10.0),
            ("East", 10.2),
            ("East", 10.1),
        ];
        for (index, (oven, hardness)) in runs.iter().enumerate() {
            let row = 1 + index as u32;
            sheet.put(row, 0, Value::text(*oven), Look::Plain);
            sheet.put(row, 1, Value::number(*hardness), Look::Plain);
        }
        workbook_io::write::write_book(&Book { sheets: vec![sheet] }, path).expect("the trial is written");
    }

    #[test]
    fn the_destination_is_announced_before_the_write_and_the_folders_rank() {
        let dir = tempfile::tempdir().expect("a temporary folder");
        let folder = dir.path().join("lines");
        std::fs::create_dir_all(&folder).unwrap();
        let workbook = folder.join("trial.xlsx");
        trial_workbook(&workbook);
        let request = AnalysisRequest {
            settings: Settings {
                out_dir: Some("out".into()),
                ..Settings::default()
            },
            ..AnalysisRequest::default()
        };
        let mut announced = Vec::new();
        let written = analyse_and_write(&workbook, &request, None, &mut |destination: &Path| {
            // The folder is made first; the file is not there yet.
            assert!(destination.parent().is_some_and(Path::is_dir));
            assert!(!destination.exists());
            announced.push(destination.to_path_buf());
        })
        .expect("analysed and written");
        // The setting, relative to the workbook's folder.
        let expected = folder.join("out").join("trial.results.xlsx");
        assert_eq!(written.results_file, expected);
        assert_eq!(announced, vec![expected.clone()]);
        assert!(expected.is_file());

        // A folder named by the caller wins over the setting.
        let named = dir.path().join("named");
        let written = analyse_and_write(&workbook, &request, Some(&named), &mut |_| {}).expect("written");
        assert_eq!(written.results_file, named.join("trial.results.xlsx"));

        // Without either, beside the workbook.
        let written = analyse_and_write(&workbook, &AnalysisRequest::default(), None, &mut |_| {}).expect("written");
        assert_eq!(written.results_file, folder.join("trial.results.xlsx"));

        // A folder that cannot be made (a file stands in its way) is an error naming it.
        let blocked = workbook.join("out");
        let outcome = analyse_and_write(&workbook, &request, Some(&blocked), &mut |_| panic!("no write was due"));
        let Err(error @ ServiceError::OutputFolder { .. }) = outcome else {
            panic!("expected an output folder error, got {outcome:?}");
        };
        assert!(error.to_string().contains(&blocked.display().to_string()), "{error}");
        assert_eq!(error.kind(), "write-failed");

        // A cancelled request writes nothing and announces nothing.
        let cancelled = AnalysisRequest::default();
        cancelled.cancel.cancel();
        std::fs::remove_file(folder.join("trial.results.xlsx")).unwrap();
        let outcome = analyse_and_write(&workbook, &cancelled, None, &mut |_| panic!("no write was due"));
        assert!(matches!(outcome, Err(ServiceError::Cancelled)), "{outcome:?}");
        assert!(!folder.join("trial.results.xlsx").exists());
    }
}
