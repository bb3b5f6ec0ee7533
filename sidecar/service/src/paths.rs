//! Output paths and folder scanning: where results and problems workbooks
//! go, which files a scan passes over, and the workbooks of a folder.

use std::path::{Path, PathBuf};

use crate::settings::Settings;

/// Suffix of results workbooks; files ending so are never analysed as input.
pub const RESULTS_SUFFIX: &str = ".results.xlsx";

/// Suffix of problems workbooks written for inputs that could not be analysed.
pub const PROBLEMS_SUFFIX: &str = ".problems.xlsx";

/// Where the results workbook for `source` goes: beside it, or in `out_dir`.
pub fn results_path_for(source: &Path, out_dir: Option<&Path>) -> PathBuf {
    let stem = source
        .file_stem()
        .map(|stem| stem.to_string_lossy().into_owned())
        .unwrap_or_else(|| "workbook".into());
    let folder = out_dir
        .map(Path::to_path_buf)
        .unwrap_or_else(|| source.parent().map(Path::to_path_buf).unwrap_or_default());
    folder.join(format!("{stem}{RESULTS_SUFFIX}"))
}

/// True for files that a folder scan should pass over: lock files,
/// temporary files and our own outputs.
pub fn is_ignored_file_name(name: &str) -> bool {
    let lower = name.to_lowercase();
    lower.starts_with("~$")
        || lower.starts_with(".~lock.")
        || lower.starts_with('.')
        || lower.ends_with(".tmp")
        || lower.ends_with(".part")
        || lower.ends_with(".crdownload")
        || lower.ends_with(".partial")
        || lower.ends_with(".download")
        || lower.ends_with(".lock")
        || lower == crate::folder_settings::FOLDER_SETTINGS_FILE
        || lower.ends_with(RESULTS_SUFFIX)
        || lower.ends_with(PROBLEMS_SUFFIX)
        || lower.ends_with(".rollup.xlsx")
}

/// True for names with a workbook extension.
pub fn has_workbook_extension(name: &str) -> bool {
    let lower = name.to_lowercase();
    [".xlsx", ".xlsm", ".xlsb", ".xls", ".ods"]
        .iter()
        .any(|extension| lower.ends_with(extension))
}

/// Expands files and folders into the workbooks to analyse, sorted, skipping
/// lock files, temporary files and our own outputs. Returns the workbooks and
/// the paths that could not be used, each with its reason.
pub fn collect_workbooks(paths: &[PathBuf], recursive: bool) -> (Vec<PathBuf>, Vec<(PathBuf, String)>) {
    let mut found = Vec::new();
    let mut problems = Vec::new();
    for path in paths {
        if path.is_dir() {
            scan_folder(path, recursive, &mut found, &mut problems);
        } else if path.exists() {
            found.push(path.clone());
        } else {
            problems.push((path.clone(), "no such file or folder".to_string()));
        }
    }
    (found, problems)
}

fn scan_folder(folder: &Path, recursive: bool, found: &mut Vec<PathBuf>, problems: &mut Vec<(PathBuf, String)>) {
    let entries = match std::fs::read_dir(folder) {
        Ok(entries) => entries,
        Err(error) => {
            problems.push((folder.to_path_buf(), format!("cannot list the folder: {error}")));
            return;
        }
    };
    let mut paths: Vec<PathBuf> = entries.filter_map(Result::ok).map(|entry| entry.path()).collect();
    paths.sort();
    for path in paths {
        let name = path
            .file_name()
            .map(|name| name.to_string_lossy().into_owned())
            .unwrap_or_default();
        if path.is_dir() {
            if recursive && !name.starts_with('.') {
                scan_folder(&path, recursive, found, problems);
            }
        } else if has_workbook_extension(&name) && !is_ignored_file_name(&name) {
            found.push(path);
        }
    }
}

/// Where the problems workbook for `source` goes: beside it, or in `out_dir`.
pub fn problems_path_for(source: &Path, out_dir: Option<&Path>) -> PathBuf {
    let results = results_path_for(source, out_dir);
    let name = results
        .file_name()
        .map(|name| name.to_string_lossy().into_owned())
        .unwrap_or_default();
    let stem = name.strip_suffix(RESULTS_SUFFIX).unwrap_or(&name);
    results.with_file_name(format!("{stem}{PROBLEMS_SUFFIX}"))
}

/// The folder for results: the folder named by the caller, else the
/// `output folder` setting in force (relative to the workbook's folder),
/// else none (beside the workbook).
pub fn output_folder_for(source: &Path, named_by_caller: Option<&Path>, settings: &Settings) -> Option<PathBuf> {
    if let Some(folder) = named_by_caller {
        return Some(folder.to_path_buf());
    }
    let configured = settings.out_dir.as_ref()?;
    Some(relative_to_workbook(source, Path::new(configured)))
}

/// `folder` taken relative to the folder of the workbook `source` (an
/// absolute folder stays as it is).
pub fn relative_to_workbook(source: &Path, folder: &Path) -> PathBuf {
    if folder.is_absolute() {
        folder.to_path_buf()
    } else {
        source.parent().map(Path::to_path_buf).unwrap_or_default().join(folder)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn scans_pass_over_lock_files_and_our_outputs() {
        assert!(is_ignored_file_name("~$week.xlsx"));
        assert!(is_ignored_file_name(".~lock.week.xlsx#"));
        assert!(is_ignored_file_name("week.results.xlsx"));
        assert!(!is_ignored_file_name("week.xlsx"));
        assert_eq!(
            results_path_for(Path::new("a/b/week 3.xlsx"), None),
            PathBuf::from("a/b/week 3.results.xlsx")
        );
    }

    #[test]
    fn the_callers_folder_wins_over_the_setting() {
        let settings = Settings {
            out_dir: Some("out".into()),
            ..Settings::default()
        };
        let workbook = Path::new("lines/week.xlsx");
        assert_eq!(
            output_folder_for(workbook, Some(Path::new("elsewhere")), &settings),
            Some(PathBuf::from("elsewhere"))
        );
        assert_eq!(
            output_folder_for(workbook, None, &settings),
            Some(PathBuf::from("lines/out"))
        );
        assert_eq!(output_folder_for(workbook, None, &Settings::default()), None);
        assert_eq!(
            relative_to_workbook(workbook, Path::new("reports")),
            PathBuf::from("lines/reports")
        );
    }
}
