//! `trialyst run` as the weekly batch: workbooks analysed in parallel on
//! threads (a panic costs one workbook), a progress bar on a terminal only,
//! a closing summary line, and an optional roll-up workbook.
//!
//! Folder settings: each workbook takes the `trialyst.toml` nearest to it,
//! looking from its own folder up to the folder named on the command line
//! (a file named on the command line: its own folder only).

use std::collections::HashMap;
use std::path::{Component, Path, PathBuf};
use std::sync::atomic::{AtomicUsize, Ordering};
use std::sync::Mutex;

use crate::folder_settings::{read_settings_file, settings_file_for};
use crate::report::rollup::{build_rollup_book_from, summarise, RollupEntry, RollupOutcome, RollupSummary};
use crate::settings::Settings;
use crate::{AnalysisRequest, WorkbookResults};

/// The outcome of one workbook in a run.
pub enum RunOutcome {
    /// Analysed; results written to the path, if writing was asked for.
    Analysed(Box<WorkbookResults>, Option<PathBuf>),
    /// Failed, with the cause chain on one line.
    Failed(String),
}

/// Analyses one workbook and, when `write` is set, writes its results
/// workbook through [`crate::analyse_and_write`]: into `out_dir` when given,
/// else into the `output folder` setting in force, else beside the original.
pub fn run_one(path: &Path, request: &AnalysisRequest, out_dir: Option<&Path>, write: bool) -> RunOutcome {
    if !write {
        return match crate::analyse_workbook(path, request) {
            Ok(results) => RunOutcome::Analysed(Box::new(results), None),
            Err(error) => RunOutcome::Failed(crate::error_chain(&error)),
        };
    }
    match crate::analyse_and_write(path, request, out_dir, &mut |_| {}) {
        Ok(written) => RunOutcome::Analysed(Box::new(written.results), Some(written.results_file)),
        Err(error) => RunOutcome::Failed(crate::error_chain(&error)),
    }
}

/// Analyses workbooks on `jobs` threads; outcomes come back in input order.
/// `request_of(i)` gives the request of workbook `i`; `done(i, outcome)` is
/// called as each workbook finishes (in the order they finish), so a caller
/// can print its line at once.
pub fn run_parallel_with(
    workbooks: &[PathBuf],
    request_of: &(dyn Fn(usize) -> AnalysisRequest + Sync),
    out_dir: Option<&Path>,
    write: bool,
    jobs: usize,
    done: &(dyn Fn(usize, &RunOutcome) + Sync),
) -> Vec<RunOutcome> {
    let keep = |index: usize, outcome: RunOutcome| {
        done(index, &outcome);
        outcome
    };
    run_streaming(workbooks, request_of, out_dir, write, jobs, &keep)
        .into_iter()
        .map(|kept| kept.unwrap_or_else(|| RunOutcome::Failed("not analysed".into())))
        .collect()
}

/// Analyses workbooks on `jobs` threads, handing each outcome to `keep(i, outcome)` as
/// workbook `i` finishes (in the order they finish; its results are already written)
/// and holding only what `keep` returns: a caller that prints the line and keeps a
/// small summary (say a [`RollupSummary`]) frees each workbook's results at once, so a
/// long batch holds a bounded amount per workbook. What was kept comes back in input
/// order (`None` for a workbook whose thread could not hand it over).
pub fn run_streaming<T: Send>(
    workbooks: &[PathBuf],
    request_of: &(dyn Fn(usize) -> AnalysisRequest + Sync),
    out_dir: Option<&Path>,
    write: bool,
    jobs: usize,
    keep: &(dyn Fn(usize, RunOutcome) -> T + Sync),
) -> Vec<Option<T>> {
    let next = AtomicUsize::new(0);
    let slots: Vec<Mutex<Option<T>>> = workbooks.iter().map(|_| Mutex::new(None)).collect();
    std::thread::scope(|scope| {
        for _ in 0..jobs.min(workbooks.len()).max(1) {
            scope.spawn(|| loop {
                let index = next.fetch_add(1, Ordering::SeqCst);
                if index >= workbooks.len() {
                    break;
                }
                let outcome = std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| {
                    run_one(&workbooks[index], &request_of(index), out_dir, write)
                }))
                .unwrap_or_else(|_| RunOutcome::Failed("internal error while analysing; please report it".into()));
                let kept = keep(index, outcome);
                if let Ok(mut slot) = slots[index].lock() {
                    *slot = Some(kept);
                }
            });
        }
    });
    slots.into_iter().map(|slot| slot.into_inner().ok().flatten()).collect()
}

/// Analyses workbooks with one request on `jobs` threads; outcomes in input order.
pub fn run_parallel(
    workbooks: &[PathBuf],
    request: &AnalysisRequest,
    out_dir: Option<&Path>,
    write: bool,
    jobs: usize,
) -> Vec<RunOutcome> {
    run_parallel_with(workbooks, &|_| request.clone(), out_dir, write, jobs, &|_, _| {})
}

/// The folder settings of each workbook: the nearest `trialyst.toml` from
/// its folder up to the root it was found under (the deepest of `roots`
/// that holds it; its own folder when none does), by the one rule of
/// [`crate::folder_settings::settings_file_for`]. Returns, per workbook, an
/// index into the list of distinct settings (`None` when no file applies).
///
/// # Errors
///
/// The first bad settings file, naming the file, key and line.
pub fn folder_settings_for(
    workbooks: &[PathBuf],
    roots: &[PathBuf],
) -> Result<(Vec<Settings>, Vec<Option<usize>>), String> {
    let roots: Vec<PathBuf> = roots
        .iter()
        .map(|root| std::path::absolute(root).unwrap_or_else(|_| root.clone()))
        .collect();
    let mut by_file: HashMap<PathBuf, usize> = HashMap::new();
    let mut distinct = Vec::new();
    let mut chosen = Vec::with_capacity(workbooks.len());
    for workbook in workbooks {
        let absolute = std::path::absolute(workbook).unwrap_or_else(|_| workbook.clone());
        let root = absolute.parent().and_then(|start| {
            roots
                .iter()
                .filter(|root| start.starts_with(root))
                .max_by_key(|root| root.components().count())
        });
        let Some(file) = settings_file_for(&absolute, root.map(PathBuf::as_path)) else {
            chosen.push(None);
            continue;
        };
        let index = match by_file.get(&file) {
            Some(&index) => index,
            None => {
                distinct.push(read_settings_file(&file).map_err(|error| error.to_string())?);
                by_file.insert(file, distinct.len() - 1);
                distinct.len() - 1
            }
        };
        chosen.push(Some(index));
    }
    Ok((distinct, chosen))
}

/// `to` relative to the folder `from`, with `/` separators (for links).
pub fn relative_link(from: &Path, to: &Path) -> String {
    let from = std::path::absolute(from).unwrap_or_else(|_| from.to_path_buf());
    let to = std::path::absolute(to).unwrap_or_else(|_| to.to_path_buf());
    let normal = |path: &Path| -> Vec<String> {
        let mut parts: Vec<String> = Vec::new();
        for component in path.components() {
            match component {
                Component::ParentDir => {
                    parts.pop();
                }
                Component::CurDir => {}
                other => parts.push(other.as_os_str().to_string_lossy().into_owned()),
            }
        }
        parts
    };
    let from = normal(&from);
    let to = normal(&to);
    let common = from.iter().zip(&to).take_while(|(a, b)| a == b).count();
    let mut parts: Vec<String> = std::iter::repeat_n("..".to_string(), from.len() - common).collect();
    parts.extend(to[common..].iter().cloned());
    parts.join("/")
}

/// The folder a roll-up is written into (its links are relative to it).
pub fn rollup_folder(rollup: &Path) -> PathBuf {
    rollup
        .parent()
        .filter(|parent| !parent.as_os_str().is_empty())
        .map(Path::to_path_buf)
        .unwrap_or_else(|| PathBuf::from("."))
}

/// The roll-up rows of one workbook of a batch whose roll-up is written to `rollup`:
/// what the batch keeps of it once its line is printed.
pub fn rollup_summary(rollup: &Path, path: &Path, outcome: &RunOutcome) -> RollupSummary {
    let folder = rollup_folder(rollup);
    summarise(&match outcome {
        RunOutcome::Analysed(results, written) => RollupEntry {
            file: path.display().to_string(),
            results_link: written.as_ref().map(|written| relative_link(&folder, written)),
            outcome: RollupOutcome::Analysed(results),
        },
        RunOutcome::Failed(message) => RollupEntry {
            file: path.display().to_string(),
            results_link: None,
            outcome: RollupOutcome::Failed(message),
        },
    })
}

/// Writes the roll-up workbook of a batch: one row per workbook and response,
/// failures included, with links relative to the roll-up's folder.
///
/// # Errors
///
/// A sentence naming the folder or file that could not be written.
pub fn write_rollup(
    rollup: &Path,
    workbooks: &[PathBuf],
    outcomes: &[RunOutcome],
    problems: &[(PathBuf, String)],
) -> Result<(), String> {
    let summaries = workbooks
        .iter()
        .zip(outcomes)
        .map(|(path, outcome)| rollup_summary(rollup, path, outcome))
        .collect();
    write_rollup_rows(rollup, summaries, problems)
}

/// Writes the roll-up workbook of a batch from the rows kept of each workbook (in
/// input order), the workbooks that could not be collected first.
///
/// # Errors
///
/// A sentence naming the folder or file that could not be written.
pub fn write_rollup_rows(
    rollup: &Path,
    summaries: Vec<RollupSummary>,
    problems: &[(PathBuf, String)],
) -> Result<(), String> {
    let folder = rollup_folder(rollup);
    if let Err(error) = std::fs::create_dir_all(&folder) {
        return Err(format!(
            "cannot create the folder of the roll-up '{}': {error}",
            folder.display()
        ));
    }
    let mut all: Vec<RollupSummary> = problems
        .iter()
        .map(|(path, message)| rollup_summary(rollup, path, &RunOutcome::Failed(message.clone())))
        .collect();
    all.extend(summaries);
    let book = build_rollup_book_from(all, &crate::now_rfc3339());
    workbook_io::write::write_book(&book, rollup)
        .map_err(|error| format!("cannot write the roll-up: {}", crate::error_chain(&error)))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn links_are_relative_to_the_rollup_folder() {
        assert_eq!(
            relative_link(Path::new("/a/b"), Path::new("/a/b/c/x.results.xlsx")),
            "c/x.results.xlsx"
        );
        assert_eq!(
            relative_link(Path::new("/a/b/reports"), Path::new("/a/b/c/x.xlsx")),
            "../c/x.xlsx"
        );
    }

    /// The roll-up built from the rows kept as each workbook finishes (its results
    /// dropped at once) is the roll-up built from every workbook's whole results: same
    /// rows, same tally, same links, for analysed workbooks, a failed one and results
    /// written into a folder.
    #[test]
    fn the_streamed_rollup_equals_the_rollup_of_whole_results() {
        let samples = Path::new(env!("CARGO_MANIFEST_DIR")).join("../../sample-workbooks");
        let folder = tempfile::tempdir().expect("a temporary folder");
        let missing = folder.path().join("not there.xlsx");
        let workbooks = vec![
            samples.join("resin-supplier-tensile.xlsx"),
            missing,
            samples.join("bracket-moulding-week-48.xlsx"),
            samples.join("coating-cure-profiles.xlsx"),
        ];
        let out_dir = folder.path().join("results");
        std::fs::create_dir_all(&out_dir).expect("a results folder");
        let rollup = folder.path().join("reports").join("week.rollup.xlsx");
        let request = AnalysisRequest::default();
        let whole = run_parallel(&workbooks, &request, Some(&out_dir), true, 2);
        assert!(matches!(whole[1], RunOutcome::Failed(_)));
        assert!(
            whole
                .iter()
                .filter(|outcome| matches!(outcome, RunOutcome::Analysed(..)))
                .count()
                >= 2,
            "the samples are analysed"
        );
        let calls = AtomicUsize::new(0);
        let keep = |index: usize, outcome: RunOutcome| {
            calls.fetch_add(1, Ordering::SeqCst);
            rollup_summary(&rollup, &workbooks[index], &outcome)
        };
        let kept: Vec<RollupSummary> = run_streaming(&workbooks, &|_| request.clone(), Some(&out_dir), true, 2, &keep)
            .into_iter()
            .map(|kept| kept.expect("every workbook handed over"))
            .collect();
        assert_eq!(
            calls.load(Ordering::SeqCst),
            workbooks.len(),
            "one hand-over per workbook"
        );
        let folder_of_rollup = rollup_folder(&rollup);
        let entries: Vec<RollupEntry<'_>> = workbooks
            .iter()
            .zip(&whole)
            .map(|(path, outcome)| match outcome {
                RunOutcome::Analysed(results, written) => RollupEntry {
                    file: path.display().to_string(),
                    results_link: written
                        .as_ref()
                        .map(|written| relative_link(&folder_of_rollup, written)),
                    outcome: RollupOutcome::Analysed(results),
                },
                RunOutcome::Failed(message) => RollupEntry {
                    file: path.display().to_string(),
                    results_link: None,
                    outcome: RollupOutcome::Failed(message),
                },
            })
            .collect();
        let at = "2026-12-04T10:00:00Z";
        let from_whole = crate::report::rollup::build_rollup_book(&entries, at);
        let streamed = build_rollup_book_from(kept, at);
        assert_eq!(streamed, from_whole);
        // A link reaches the written results from the roll-up's folder.
        assert!(
            format!("{streamed:?}").contains("../results/resin-supplier-tensile.results.xlsx"),
            "{streamed:?}"
        );
    }
}
