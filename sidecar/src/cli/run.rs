//! `trialyst run`: the batch over workbooks, its progress bar and its lines (plain or JSON).

use std::io::Write;
use std::path::{Path, PathBuf};
use std::time::Instant;

use indicatif::{ProgressBar, ProgressDrawTarget, ProgressStyle};

use service::batch::RunOutcome;
use service::collect_workbooks;
use service::settings::Settings;
use service::AnalysisRequest;

use super::args::{analysis_settings, RunArgs};
use super::{EXIT_OK, EXIT_SOME_FAILED, EXIT_USAGE};

pub(crate) fn json_line(path: &Path, outcome: &RunOutcome) -> String {
    let value = match outcome {
        RunOutcome::Analysed(results, written) => {
            let mut value = serde_json::to_value(results.as_ref()).unwrap_or(serde_json::Value::Null);
            if let serde_json::Value::Object(map) = &mut value {
                map.insert("status".into(), "analysed".into());
                map.insert(
                    "results_file".into(),
                    written
                        .as_ref()
                        .map(|path| serde_json::Value::from(path.display().to_string()))
                        .unwrap_or(serde_json::Value::Null),
                );
            }
            value
        }
        RunOutcome::Failed(message) => serde_json::json!({
            "format_version": service::RESULTS_FORMAT_VERSION,
            "status": "failed",
            "source": { "path": path.display().to_string() },
            "error": message,
        }),
    };
    serde_json::to_string(&value).unwrap_or_default()
}

pub(crate) fn human_line(path: &Path, outcome: &RunOutcome) -> String {
    match outcome {
        RunOutcome::Analysed(results, written) => {
            let verdicts: Vec<String> = results
                .responses
                .iter()
                .map(|response| {
                    let line = match &response.verdict {
                        Some(verdict) => format!("{}: {}", response.name, verdict.headline),
                        None => format!("{}: not analysed", response.name),
                    };
                    match &response.next_trial {
                        Some(next_trial) => format!("{line}\n    Next trial: {next_trial}"),
                        None => line,
                    }
                })
                .collect();
            let target = written
                .as_ref()
                .map(|path| format!(" -> {}", path.display()))
                .unwrap_or_default();
            format!(
                "analysed {}{target} ({})\n  {}",
                path.display(),
                engine::analysis::verdict::count_of(results.findings.len(), "finding"),
                verdicts.join("\n  ")
            )
        }
        RunOutcome::Failed(message) => format!("failed {}: {message}", path.display()),
    }
}

/// What a batch needs beyond the workbooks.
struct BatchOptions<'a> {
    /// The settings from the command line.
    pub settings: Settings,
    /// The folder for results given on the command line.
    pub out_dir: Option<&'a Path>,
    /// Whether to write results workbooks.
    pub write: bool,
    /// Threads.
    pub jobs: usize,
    /// JSON lines on stdout.
    pub json: bool,
    /// The roll-up workbook to write.
    pub rollup: Option<&'a Path>,
    /// Folders an `output folder` setting may point into besides the workbook's folder.
    pub allowed_output_roots: Vec<PathBuf>,
}

/// What a batch keeps of one workbook after printing its line.
struct Kept {
    /// Not analysed.
    failed: bool,
    /// Failed because a setting names nothing in the table (a usage error).
    names_nothing: bool,
    /// Its roll-up rows, when a roll-up is asked for.
    rollup: Option<service::report::rollup::RollupSummary>,
}

/// Refuses a roll-up that would replace an input or a results workbook of
/// this run, or a file we did not write.
fn check_rollup(rollup: &Path, workbooks: &[PathBuf], planned_outputs: &[PathBuf]) -> Result<(), String> {
    let target = service::paths::resolve_for_comparison(rollup);
    if workbooks
        .iter()
        .any(|input| service::paths::resolve_for_comparison(input) == target)
    {
        return Err(format!(
            "the roll-up '{}' is one of the workbooks to analyse; choose another file name",
            rollup.display()
        ));
    }
    if planned_outputs
        .iter()
        .any(|output| service::paths::resolve_for_comparison(output) == target)
    {
        return Err(format!(
            "the roll-up '{}' would replace a results workbook of this run; choose another file name",
            rollup.display()
        ));
    }
    workbook_io::write::check_replaceable(rollup, workbook_io::write::ReplaceRule::OnlyOurs)
        .map_err(|error| error.to_string())
}

/// Runs a batch over `paths`; returns the process exit code.
fn run_batch(paths: &[PathBuf], recursive: bool, options: &BatchOptions<'_>) -> i32 {
    let started = Instant::now();
    let (workbooks, problems) = collect_workbooks(paths, recursive);
    let roots: Vec<PathBuf> = paths.iter().filter(|path| path.is_dir()).cloned().collect();
    let (folder_settings, chosen) = match service::batch::folder_settings_for(&workbooks, &roots) {
        Ok(found) => found,
        Err(message) => {
            eprintln!("trialyst: {message}");
            return EXIT_USAGE;
        }
    };
    let names = service::output_names(&workbooks, options.out_dir.is_some());
    if let Some(rollup) = options.rollup {
        let planned: Vec<PathBuf> = workbooks
            .iter()
            .zip(&names)
            .map(|(input, name)| service::results_path_named(input, options.out_dir, name))
            .collect();
        if let Err(message) = check_rollup(rollup, &workbooks, &planned) {
            eprintln!("trialyst: {message}");
            return EXIT_USAGE;
        }
    }
    let claimed = std::sync::Arc::new(service::paths::ClaimedOutputs::default());
    let base = AnalysisRequest {
        settings: options.settings.clone(),
        // A direction for one response, given for a folder of trials, applies where
        // that response is found.
        shared_by_several: workbooks.len() > 1,
        ..AnalysisRequest::default()
    };
    let progress = ProgressBar::with_draw_target(Some(workbooks.len() as u64), ProgressDrawTarget::stderr());
    if let Ok(style) = ProgressStyle::with_template("{bar:40} {pos}/{len} workbooks, {per_sec}, about {eta} left") {
        progress.set_style(style);
    }
    let request_of = |index: usize| -> AnalysisRequest {
        AnalysisRequest {
            folder_settings: chosen[index].map(|which| folder_settings[which].clone()),
            output: service::OutputRules {
                name: names[index].clone(),
                allowed_roots: options.allowed_output_roots.clone(),
                claimed: Some(claimed.clone()),
            },
            ..base.clone()
        }
    };
    let stdout = std::io::stdout();
    let mut failed = problems.len();
    for (path, message) in &problems {
        if options.json {
            let _ = writeln!(
                stdout.lock(),
                "{}",
                json_line(path, &RunOutcome::Failed(message.clone()))
            );
        } else {
            eprintln!("failed {}: {message}", path.display());
        }
    }
    // Each workbook's line is printed as soon as it and every workbook
    // before it have finished: the output keeps the input order, a long
    // batch shows its progress in its output, and a batch cut short has
    // printed what it did. Only lines that finished early wait, as text.
    let ordered = std::sync::Mutex::new((0usize, std::collections::BTreeMap::<usize, (bool, String)>::new()));
    let print_line = |index: usize, outcome: &RunOutcome| {
        let path = &workbooks[index];
        let line = if options.json {
            (false, json_line(path, outcome))
        } else {
            (matches!(outcome, RunOutcome::Failed(_)), human_line(path, outcome))
        };
        let mut ordered = ordered.lock().unwrap_or_else(std::sync::PoisonError::into_inner);
        ordered.1.insert(index, line);
        loop {
            let next = ordered.0;
            let Some((to_stderr, text)) = ordered.1.remove(&next) else {
                break;
            };
            progress.suspend(|| {
                if to_stderr {
                    eprintln!("{text}");
                } else {
                    let mut out = stdout.lock();
                    let _ = writeln!(out, "{text}");
                    let _ = out.flush();
                }
            });
            ordered.0 += 1;
        }
        progress.inc(1);
    };
    // Each workbook's results are dropped as soon as its line is printed and its
    // results written: the batch keeps only what the summary line, the exit code and
    // the roll-up need (the roll-up's rows, text already clipped).
    let keep = |index: usize, outcome: RunOutcome| -> Kept {
        print_line(index, &outcome);
        Kept {
            failed: matches!(outcome, RunOutcome::Failed(_)),
            names_nothing: matches!(&outcome, RunOutcome::Failed(message) if message.contains(service::settings::NAMES_NOTHING)),
            rollup: options
                .rollup
                .map(|rollup| service::batch::rollup_summary(rollup, &workbooks[index], &outcome)),
        }
    };
    let kept = service::batch::run_streaming(
        &workbooks,
        &request_of,
        options.out_dir,
        options.write,
        options.jobs,
        &keep,
    );
    progress.finish_and_clear();
    let mut analysed = 0;
    let mut names_nothing = false;
    let mut rows = Vec::with_capacity(kept.len());
    for (index, kept) in kept.into_iter().enumerate() {
        let kept = kept.unwrap_or_else(|| {
            let outcome = RunOutcome::Failed("not analysed".into());
            Kept {
                failed: true,
                names_nothing: false,
                rollup: options
                    .rollup
                    .map(|rollup| service::batch::rollup_summary(rollup, &workbooks[index], &outcome)),
            }
        });
        if kept.failed {
            failed += 1;
        } else {
            analysed += 1;
        }
        names_nothing |= kept.names_nothing;
        rows.extend(kept.rollup);
    }
    let _ = stdout.lock().flush();
    let mut rollup_note = String::new();
    if let Some(rollup) = options.rollup {
        match service::batch::write_rollup_rows(rollup, rows, &problems) {
            Ok(()) => rollup_note = format!("; roll-up {}", rollup.display()),
            Err(message) => {
                eprintln!("trialyst: {message}");
                failed += 1;
            }
        }
    }
    let seconds = started.elapsed().as_secs_f64();
    let rate = if seconds > 0.0 {
        (analysed + failed) as f64 / seconds
    } else {
        0.0
    };
    // A speed only means something for workbooks that were analysed.
    let speed = if analysed > 0 {
        format!(" ({rate:.0} workbooks/s)")
    } else {
        String::new()
    };
    eprintln!("trialyst: {analysed} analysed, {failed} failed in {seconds:.1} s{speed}{rollup_note}");
    if workbooks.is_empty() && problems.is_empty() {
        eprintln!("trialyst: no workbooks found in the paths given");
        return EXIT_SOME_FAILED;
    }
    // A contrast, direction or control naming nothing in the table is a usage error.
    if names_nothing {
        EXIT_USAGE
    } else if failed > 0 {
        EXIT_SOME_FAILED
    } else {
        EXIT_OK
    }
}

/// `trialyst run`: checks the options, then runs the batch; returns the exit code.
pub(crate) fn run_command(args: RunArgs) -> i32 {
    let settings = match analysis_settings(&args.analysis) {
        Ok(settings) => settings,
        Err(error) => {
            eprintln!("trialyst: {error}");
            return EXIT_USAGE;
        }
    };
    if let Some(out_dir) = &args.out_dir {
        if let Err(error) = std::fs::create_dir_all(out_dir) {
            eprintln!(
                "trialyst: cannot create the output folder '{}': {error}",
                out_dir.display()
            );
            return EXIT_USAGE;
        }
    }
    let jobs = args
        .jobs
        .map(|jobs| usize::try_from(jobs).unwrap_or(usize::MAX))
        .unwrap_or_else(|| std::thread::available_parallelism().map_or(1, |n| n.get()))
        .max(1);
    let options = BatchOptions {
        settings,
        out_dir: args.out_dir.as_deref(),
        write: !args.no_write,
        jobs,
        json: args.json,
        rollup: args.rollup.as_deref(),
        allowed_output_roots: args.allow_output_root.clone(),
    };
    run_batch(&args.paths, args.recursive, &options)
}
