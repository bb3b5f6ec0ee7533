//! Output paths and folder scanning: where results and problems workbooks
//! go, which files a scan passes over, and the workbooks of a folder.

use std::collections::HashMap;
use std::path::{Component, Path, PathBuf};
use std::sync::{Arc, Mutex};

use crate::failure::ServiceError;
use crate::settings::Settings;

/// Suffix of results workbooks; files ending so are never analysed as input.
pub const RESULTS_SUFFIX: &str = ".results.xlsx";

/// Suffix of problems workbooks written for inputs that could not be analysed.
pub const PROBLEMS_SUFFIX: &str = ".problems.xlsx";

/// Where the results workbook for `source` goes: beside it, or in `out_dir`.
pub fn results_path_for(source: &Path, out_dir: Option<&Path>) -> PathBuf {
    results_path_named(source, out_dir, &OutputName::default())
}

/// How one input's outputs are named so that no two inputs of a run share
/// an output name ([`output_names`] gives the rule).
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct OutputName {
    /// Keep the extension in the name: `week.xlsm.results.xlsx`.
    pub keep_extension: bool,
    /// A sub-folder of the output folder (the input's folder relative to
    /// the deepest folder holding every input of the same name).
    pub subfolder: Option<PathBuf>,
}

/// Where the results workbook for `source` goes, named by `name`.
pub fn results_path_named(source: &Path, out_dir: Option<&Path>, name: &OutputName) -> PathBuf {
    let stem = if name.keep_extension {
        source.file_name()
    } else {
        source.file_stem()
    }
    .map(|stem| stem.to_string_lossy().into_owned())
    .unwrap_or_else(|| "workbook".into());
    let mut folder = out_dir
        .map(Path::to_path_buf)
        .unwrap_or_else(|| source.parent().map(Path::to_path_buf).unwrap_or_default());
    if let (Some(subfolder), Some(_)) = (&name.subfolder, out_dir) {
        folder.push(subfolder);
    }
    folder.join(format!("{stem}{RESULTS_SUFFIX}"))
}

/// The output names of the inputs of one run, by the collision rule:
///
/// 1. `<stem>.results.xlsx` (and `.problems.xlsx`) when no other input of
///    the run would get the same name in the same folder;
/// 2. else `<stem>.<extension>.results.xlsx` for each input sharing the
///    stem (`week.xlsx`, `week.xlsm` and `week.ods` give
///    `week.xlsx.results.xlsx`, `week.xlsm.results.xlsx`, ...);
/// 3. and when one output folder is shared (`--out-dir`) and inputs still
///    share the whole file name (`a/w.xlsx`, `b/w.xlsx` under
///    `--recursive`), each goes into the sub-folder of the output folder
///    that matches its folder below the deepest folder holding them all
///    (`out/a/w.xlsx.results.xlsx`, `out/b/w.xlsx.results.xlsx`).
///
/// Names are compared without regard to case (as on Windows). A collision
/// that only a workbook's own `output folder` setting causes is caught
/// when writing ([`OutputRules::claimed`]) and refused, never replaced.
pub fn output_names(inputs: &[PathBuf], shared_folder: bool) -> Vec<OutputName> {
    let folder_key = |path: &Path| -> String {
        if shared_folder {
            String::new()
        } else {
            path.parent().unwrap_or(Path::new("")).to_string_lossy().to_lowercase()
        }
    };
    let lower = |text: Option<&std::ffi::OsStr>| {
        text.map(|text| text.to_string_lossy().to_lowercase())
            .unwrap_or_default()
    };
    let mut by_stem: HashMap<(String, String), usize> = HashMap::new();
    for input in inputs {
        *by_stem
            .entry((folder_key(input), lower(input.file_stem())))
            .or_default() += 1;
    }
    let mut names: Vec<OutputName> = inputs
        .iter()
        .map(|input| OutputName {
            keep_extension: by_stem[&(folder_key(input), lower(input.file_stem()))] > 1,
            subfolder: None,
        })
        .collect();
    if shared_folder {
        let mut by_name: HashMap<String, Vec<usize>> = HashMap::new();
        for (index, input) in inputs.iter().enumerate() {
            by_name.entry(lower(input.file_name())).or_default().push(index);
        }
        for group in by_name.values().filter(|group| group.len() > 1) {
            let folders: Vec<PathBuf> = group
                .iter()
                .map(|&index| {
                    let folder = inputs[index].parent().unwrap_or(Path::new(""));
                    std::path::absolute(folder).unwrap_or_else(|_| folder.to_path_buf())
                })
                .collect();
            let common = common_ancestor(&folders);
            for (&index, folder) in group.iter().zip(&folders) {
                let relative = folder.strip_prefix(&common).unwrap_or(folder);
                let relative: PathBuf = relative
                    .components()
                    .filter_map(|component| match component {
                        Component::Normal(part) => Some(part),
                        _ => None,
                    })
                    .collect();
                names[index].subfolder = Some(relative);
            }
        }
    }
    names
}

/// The deepest folder that holds every one of `folders`.
fn common_ancestor(folders: &[PathBuf]) -> PathBuf {
    let Some(first) = folders.first() else {
        return PathBuf::new();
    };
    let mut common: Vec<Component<'_>> = first.components().collect();
    for folder in &folders[1..] {
        let shared = common
            .iter()
            .zip(folder.components())
            .take_while(|(left, right)| **left == *right)
            .count();
        common.truncate(shared);
    }
    common.into_iter().collect()
}

/// The outputs already written in one run: destination -> the input it
/// belongs to. Shared by the threads of a batch so that two inputs never
/// write the same file.
pub type ClaimedOutputs = Mutex<HashMap<PathBuf, PathBuf>>;

/// How one input's outputs are named and where they may go.
#[derive(Debug, Clone, Default)]
pub struct OutputRules {
    /// The input's output name in its run ([`output_names`]).
    pub name: OutputName,
    /// Folders beyond the workbook's own folder that an `output folder`
    /// setting may point into (given on the command line or at server start).
    pub allowed_roots: Vec<PathBuf>,
    /// The destinations already written in this run, when part of a run.
    pub claimed: Option<Arc<ClaimedOutputs>>,
}

impl OutputRules {
    /// Records that `source` writes `destination` in this run.
    ///
    /// # Errors
    ///
    /// [`ServiceError::OutputCollision`] when another input of the run
    /// already wrote it.
    pub fn claim(&self, source: &Path, destination: &Path) -> Result<(), ServiceError> {
        let Some(claimed) = &self.claimed else { return Ok(()) };
        let key = std::path::absolute(destination).unwrap_or_else(|_| destination.to_path_buf());
        let key = PathBuf::from(key.to_string_lossy().to_lowercase());
        let mut claimed = claimed.lock().unwrap_or_else(std::sync::PoisonError::into_inner);
        match claimed.get(&key) {
            Some(other) if other != source => Err(ServiceError::OutputCollision {
                destination: destination.to_path_buf(),
                other: other.clone(),
            }),
            _ => {
                claimed.insert(key, source.to_path_buf());
                Ok(())
            }
        }
    }
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
            let root = path.canonicalize().unwrap_or_else(|_| path.clone());
            let mut scan = FolderScan {
                root: &root,
                recursive,
                visited: std::collections::HashSet::new(),
                found: &mut found,
                problems: &mut problems,
            };
            scan.folder(path);
        } else if path.exists() {
            found.push(path.clone());
        } else {
            problems.push((path.clone(), "no such file or folder".to_string()));
        }
    }
    (found, problems)
}

/// One folder scan: links are followed only to places inside the folder
/// named (`root`, resolved), and each real folder is listed once, so a
/// link loop or a link to a parent ends instead of repeating the walk.
struct FolderScan<'a> {
    root: &'a Path,
    recursive: bool,
    visited: std::collections::HashSet<PathBuf>,
    found: &'a mut Vec<PathBuf>,
    problems: &'a mut Vec<(PathBuf, String)>,
}

impl FolderScan<'_> {
    fn folder(&mut self, folder: &Path) {
        let real = folder.canonicalize().unwrap_or_else(|_| folder.to_path_buf());
        if !self.visited.insert(real) {
            return;
        }
        let entries = match std::fs::read_dir(folder) {
            Ok(entries) => entries,
            Err(error) => {
                self.problems
                    .push((folder.to_path_buf(), format!("cannot list the folder: {error}")));
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
            let is_link = std::fs::symlink_metadata(&path).is_ok_and(|metadata| metadata.file_type().is_symlink());
            let wanted = path.is_dir() && self.recursive && !name.starts_with('.')
                || !path.is_dir() && has_workbook_extension(&name) && !is_ignored_file_name(&name);
            if !wanted {
                continue;
            }
            if is_link {
                match path.canonicalize() {
                    Ok(target) if target.starts_with(self.root) => {}
                    Ok(_) => {
                        self.problems.push((
                            path.clone(),
                            "a link to a place outside the folder named was not followed".to_string(),
                        ));
                        continue;
                    }
                    Err(_) => {
                        self.problems
                            .push((path.clone(), "a broken link was not followed".to_string()));
                        continue;
                    }
                }
            }
            if path.is_dir() {
                self.folder(&path);
            } else {
                self.found.push(path);
            }
        }
    }
}

/// Where the problems workbook for `source` goes: beside it, or in `out_dir`.
pub fn problems_path_for(source: &Path, out_dir: Option<&Path>) -> PathBuf {
    problems_path_named(source, out_dir, &OutputName::default())
}

/// The output name of a workbook analysed on its own (the watcher, a
/// protocol request): rule 2 of [`output_names`] applied to the workbooks
/// in its folder now, so `week.xlsx` beside `week.ods` writes
/// `week.xlsx.results.xlsx`.
pub fn output_name_among_siblings(source: &Path) -> OutputName {
    let folder = source
        .parent()
        .filter(|folder| !folder.as_os_str().is_empty())
        .unwrap_or(Path::new("."));
    let stem = source.file_stem().map(|stem| stem.to_string_lossy().to_lowercase());
    let Ok(entries) = std::fs::read_dir(folder) else {
        return OutputName::default();
    };
    let shared = entries.filter_map(Result::ok).any(|entry| {
        let name = entry.file_name().to_string_lossy().into_owned();
        let path = Path::new(&name);
        Some(name.as_str()) != source.file_name().and_then(|own| own.to_str())
            && has_workbook_extension(&name)
            && !is_ignored_file_name(&name)
            && path.file_stem().map(|other| other.to_string_lossy().to_lowercase()) == stem
    });
    OutputName {
        keep_extension: shared,
        subfolder: None,
    }
}

/// Where the problems workbook for `source` goes, named by `name`.
pub fn problems_path_named(source: &Path, out_dir: Option<&Path>, name: &OutputName) -> PathBuf {
    let results = results_path_named(source, out_dir, name);
    let name = results
        .file_name()
        .map(|name| name.to_string_lossy().into_owned())
        .unwrap_or_default();
    let stem = name.strip_suffix(RESULTS_SUFFIX).unwrap_or(&name);
    results.with_file_name(format!("{stem}{PROBLEMS_SUFFIX}"))
}

/// The folder for results: the folder named by the caller, else the
/// `output folder` setting in force (relative to the workbook's folder,
/// and confined to it or to one of `allowed_roots`), else none (beside the
/// workbook).
///
/// # Errors
///
/// [`ServiceError::OutputOutsideFolder`] when the setting points outside
/// the workbook's folder and every allowed root.
pub fn output_folder_for(
    source: &Path,
    named_by_caller: Option<&Path>,
    settings: &Settings,
    allowed_roots: &[PathBuf],
) -> Result<Option<PathBuf>, ServiceError> {
    if let Some(folder) = named_by_caller {
        return Ok(Some(folder.to_path_buf()));
    }
    let Some(configured) = settings.out_dir.as_ref() else {
        return Ok(None);
    };
    let folder = relative_to_workbook(source, Path::new(configured));
    let workbook_folder = source.parent().unwrap_or(Path::new("")).to_path_buf();
    let mut roots = vec![workbook_folder];
    roots.extend(allowed_roots.iter().cloned());
    if inside_any(&folder, &roots) {
        Ok(Some(folder))
    } else {
        Err(ServiceError::OutputOutsideFolder {
            folder,
            setting: configured.clone(),
        })
    }
}

/// True when `path` (after resolving `..` and every link of the part that
/// exists) lies inside one of `roots` (each resolved the same way).
pub fn inside_any(path: &Path, roots: &[PathBuf]) -> bool {
    let resolved = resolve_for_comparison(path);
    roots
        .iter()
        .any(|root| resolved.starts_with(resolve_for_comparison(root)))
}

/// `path` made absolute, its existing part resolved through links
/// (`canonicalize`), the rest with `.` dropped and `..` taken lexically.
pub fn resolve_for_comparison(path: &Path) -> PathBuf {
    let path = if path.as_os_str().is_empty() {
        Path::new(".")
    } else {
        path
    };
    let absolute = std::path::absolute(path).unwrap_or_else(|_| path.to_path_buf());
    let mut existing = absolute.clone();
    let mut rest: Vec<std::ffi::OsString> = Vec::new();
    let base = loop {
        if let Ok(resolved) = existing.canonicalize() {
            break resolved;
        }
        let last = existing.components().next_back();
        match (last, existing.parent()) {
            (Some(last), Some(parent)) => {
                rest.push(last.as_os_str().to_os_string());
                existing = parent.to_path_buf();
            }
            _ => break existing,
        }
    };
    let mut resolved = base;
    for part in rest.iter().rev() {
        match part.to_str() {
            Some("..") => {
                resolved.pop();
            }
            Some(".") => {}
            _ => resolved.push(part),
        }
    }
    resolved
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
            output_folder_for(workbook, Some(Path::new("elsewhere")), &settings, &[]).unwrap(),
            Some(PathBuf::from("elsewhere"))
        );
        assert_eq!(
            output_folder_for(workbook, None, &settings, &[]).unwrap(),
            Some(PathBuf::from("lines/out"))
        );
        assert_eq!(
            output_folder_for(workbook, None, &Settings::default(), &[]).unwrap(),
            None
        );
        assert_eq!(
            relative_to_workbook(workbook, Path::new("reports")),
            PathBuf::from("lines/reports")
        );
    }

    #[test]
    fn an_output_folder_setting_stays_inside_the_workbooks_folder() {
        let workbook = Path::new("lines/week.xlsx");
        let setting = |folder: &str| Settings {
            out_dir: Some(folder.into()),
            ..Settings::default()
        };
        for outside in ["../..", "../elsewhere", "out/../../x", "/tmp"] {
            let outcome = output_folder_for(workbook, None, &setting(outside), &[]);
            assert!(
                matches!(outcome, Err(ServiceError::OutputOutsideFolder { .. })),
                "{outside}: {outcome:?}"
            );
        }
        // An allowed root given by the caller admits a folder inside it.
        let allowed = [PathBuf::from("reports")];
        assert!(output_folder_for(workbook, None, &setting("../reports/week"), &allowed).is_ok());
        assert!(output_folder_for(workbook, None, &setting("sub/../out"), &[]).is_ok());
    }

    #[test]
    fn two_inputs_never_share_an_output_name() {
        let inputs: Vec<PathBuf> = ["f/week.xlsx", "f/week.xlsm", "f/week.ods", "f/other.xlsx"]
            .iter()
            .map(PathBuf::from)
            .collect();
        let names = output_names(&inputs, false);
        let paths: Vec<PathBuf> = inputs
            .iter()
            .zip(&names)
            .map(|(input, name)| results_path_named(input, None, name))
            .collect();
        assert_eq!(paths[0], PathBuf::from("f/week.xlsx.results.xlsx"));
        assert_eq!(paths[1], PathBuf::from("f/week.xlsm.results.xlsx"));
        assert_eq!(paths[2], PathBuf::from("f/week.ods.results.xlsx"));
        assert_eq!(paths[3], PathBuf::from("f/other.results.xlsx"));
        // The same name in two folders, one output folder.
        let inputs = vec![PathBuf::from("top/a/w.xlsx"), PathBuf::from("top/b/w.xlsx")];
        let names = output_names(&inputs, true);
        let out = Path::new("out");
        assert_eq!(
            results_path_named(&inputs[0], Some(out), &names[0]),
            PathBuf::from("out/a/w.xlsx.results.xlsx")
        );
        assert_eq!(
            results_path_named(&inputs[1], Some(out), &names[1]),
            PathBuf::from("out/b/w.xlsx.results.xlsx")
        );
        // Beside their workbooks they do not collide and keep the plain name.
        let names = output_names(&inputs, false);
        assert_eq!(names, vec![OutputName::default(), OutputName::default()]);
    }
}
