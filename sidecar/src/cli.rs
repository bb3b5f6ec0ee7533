//! The command line: argument parsing and output over the `service` crate.
//!
//! Exit codes: 0 when every workbook was analysed, 1 when at least one
//! failed (each failure is printed on one line and the run goes on), 2 for a
//! usage error.

use std::io::Write;
use std::path::{Path, PathBuf};
use std::time::Instant;

use indicatif::{ProgressBar, ProgressDrawTarget, ProgressStyle};

use clap::{Args, Parser, Subcommand};
use workbook_io::layout::Layout;

use service::settings::{parse_confidence, parse_direction, Settings};
use service::AnalysisRequest;

/// Exit code when every workbook was analysed.
pub const EXIT_OK: i32 = 0;
/// Exit code when some workbook could not be analysed.
pub const EXIT_SOME_FAILED: i32 = 1;
/// Exit code for a usage error.
pub const EXIT_USAGE: i32 = 2;

/// Compare process conditions from trial workbooks.
#[derive(Debug, Parser)]
#[command(name = "trialyst", version, about, long_about = None)]
pub struct Cli {
    /// What to do.
    #[command(subcommand)]
    pub command: Command,
}

/// The subcommands.
#[derive(Debug, Subcommand)]
pub enum Command {
    /// Analyse workbooks (files or folders) and write a results workbook beside each.
    Run(RunArgs),
    /// Show the table that would be analysed and every data problem, without analysing.
    Inspect(InspectArgs),
    /// Write a trial-plan workbook: runs in a randomized order, blank result columns.
    Plan(PlanArgs),
    /// Power and sample size for the next trial.
    Size(SizeArgs),
    /// Watch a folder: analyse each workbook dropped into it, once per content.
    Watch(WatchArgs),
    /// The watcher's isolated worker (not for direct use).
    #[command(name = "__analyse-one", hide = true)]
    AnalyseOne(AnalyseOneArgs),
    /// Answer a spreadsheet add-in or editor over JSON-RPC (Language Server Protocol framing) on stdio.
    Serve(ServeArgs),
}

/// `trialyst serve`.
#[derive(Debug, Args)]
pub struct ServeArgs {
    /// Serve one connection on a loopback TCP address (127.0.0.1:PORT) instead of stdio.
    #[arg(long, value_name = "ADDRESS")]
    pub listen: Option<String>,
}

/// `trialyst plan`.
#[derive(Debug, Args)]
pub struct PlanArgs {
    /// A factor and its levels, e.g. "Temperature=160,180"; repeat for each factor.
    #[arg(long)]
    pub factor: Vec<String>,
    /// A response column to fill in, e.g. "Yield (%)"; repeatable.
    #[arg(long)]
    pub response: Vec<String>,
    /// Read the plan from a TOML file (options given here win over it).
    #[arg(long)]
    pub from: Option<PathBuf>,
    /// Copies of the whole design (one-factor plans: runs per condition).
    #[arg(long)]
    pub replicates: Option<usize>,
    /// Centre runs in each block (two-level plans with numeric factors).
    #[arg(long)]
    pub centre_points: Option<usize>,
    /// Number of blocks: one per replicate, or each replicate split in 2, 4, 8 ...
    #[arg(long)]
    pub blocks: Option<usize>,
    /// Runs of one replicate of a two-level fraction (a power of two).
    #[arg(long)]
    pub runs: Option<usize>,
    /// A generator of a two-level fraction, e.g. "E=ABC"; repeatable (default: searched).
    #[arg(long)]
    pub generator: Vec<String>,
    /// Seed of the run order (default: drawn from the clock and recorded).
    #[arg(long)]
    pub seed: Option<u64>,
    /// The plan's date, YYYY-MM-DD (recorded as the file's creation date).
    #[arg(long)]
    pub date: Option<String>,
    /// The plan workbook to write (default: trial-plan-<plan id>.xlsx here).
    #[arg(long)]
    pub out: Option<PathBuf>,
    /// Print the plan summary as JSON.
    #[arg(long)]
    pub json: bool,
}

/// `trialyst size`.
#[derive(Debug, Args)]
pub struct SizeArgs {
    /// One-way trial: number of conditions.
    #[arg(long)]
    pub conditions: Option<usize>,
    /// One-way trial: smallest difference between two conditions worth detecting.
    #[arg(long)]
    pub difference: Option<f64>,
    /// One-way trial: supposed means of the conditions, e.g. "10,12,13".
    #[arg(long, value_delimiter = ',')]
    pub means: Vec<f64>,
    /// One-way trial: wanted half-width of all-pairs intervals.
    #[arg(long)]
    pub half_width: Option<f64>,
    /// Two-level trial: number of factors.
    #[arg(long)]
    pub factors: Option<usize>,
    /// Two-level trial: effect worth detecting (difference of averages, high minus low).
    #[arg(long)]
    pub effect: Option<f64>,
    /// Two-level trial: runs of one replicate of a fraction (default: the full factorial).
    #[arg(long)]
    pub runs: Option<usize>,
    /// Two-level trial: centre runs added.
    #[arg(long, default_value_t = 0)]
    pub centre_points: usize,
    /// Two-level trial: plan a model of main effects only (default: with two-factor interactions).
    #[arg(long)]
    pub main_effects_only: bool,
    /// The SD of a single run.
    #[arg(long)]
    pub sd: Option<f64>,
    /// Take the SD from the results workbook of the last trial.
    #[arg(long)]
    pub from_results: Option<PathBuf>,
    /// The response whose SD to take from the results workbook.
    #[arg(long)]
    pub response: Option<String>,
    /// Level of the test.
    #[arg(long, default_value_t = 0.05)]
    pub alpha: f64,
    /// Power wanted.
    #[arg(long, default_value_t = 0.8)]
    pub power: f64,
    /// Write the table of runs against power, with a chart, to this workbook.
    #[arg(long)]
    pub out: Option<PathBuf>,
    /// Print the answer as JSON.
    #[arg(long)]
    pub json: bool,
}

/// Options that choose the table and the analysis.
#[derive(Debug, Args, Clone, Default)]
pub struct TableArgs {
    /// Sheet holding the trial table (default: the first sheet that holds one).
    #[arg(long)]
    pub sheet: Option<String>,
    /// The table's cells: an A1 range (B2:D40), a defined name, or a table name.
    #[arg(long)]
    pub range: Option<String>,
    /// Response column header; repeat or separate with commas for several.
    #[arg(long, value_delimiter = ',')]
    pub response: Vec<String>,
    /// Factor (condition) column header; repeat or separate with commas.
    #[arg(long, value_delimiter = ',')]
    pub factor: Vec<String>,
    /// Blocking column header; repeat or separate with commas.
    #[arg(long, value_delimiter = ',')]
    pub block: Vec<String>,
    /// Table layout: long, wide (default: detect).
    #[arg(long)]
    pub layout: Option<String>,
}

/// `trialyst run`.
#[derive(Debug, Args)]
pub struct RunArgs {
    /// Workbooks or folders of workbooks.
    #[arg(required = true)]
    pub paths: Vec<PathBuf>,
    /// Look into sub-folders too.
    #[arg(long)]
    pub recursive: bool,
    /// Print results as JSON Lines (one object per workbook) on stdout.
    #[arg(long)]
    pub json: bool,
    /// Folder for the results workbooks (default: beside each original).
    #[arg(long)]
    pub out_dir: Option<PathBuf>,
    /// Do not write results workbooks (with --json, for machine use).
    #[arg(long)]
    pub no_write: bool,
    /// Workbooks analysed at once (default: the number of cores).
    #[arg(long)]
    pub jobs: Option<usize>,
    /// Write a roll-up workbook: one row per workbook and response, and a chart of the verdicts.
    #[arg(long, value_name = "FILE")]
    pub rollup: Option<PathBuf>,
    /// Analysis and table options.
    #[command(flatten)]
    pub analysis: AnalysisArgs,
}

/// `trialyst watch`.
#[derive(Debug, Args, Clone)]
pub struct WatchArgs {
    /// The folder to watch.
    pub folder: PathBuf,
    /// Watch sub-folders too.
    #[arg(long)]
    pub recursive: bool,
    /// Look for changes every SECONDS instead of listening for them (network shares).
    #[arg(long, value_name = "SECONDS")]
    pub poll: Option<f64>,
    /// Append the log lines to this file too.
    #[arg(long, value_name = "FILE")]
    pub log: Option<PathBuf>,
    /// Folder for the results workbooks (default: the output folder setting, or beside each original).
    #[arg(long)]
    pub out_dir: Option<PathBuf>,
    /// Memory a workbook's reader may use, in MiB.
    #[arg(long, value_name = "MIB", default_value_t = 2048)]
    pub memory_limit: u64,
    /// Time a workbook's analysis may take, in seconds.
    #[arg(long, value_name = "SECONDS", default_value_t = 120.0)]
    pub time_limit: f64,
    /// Minutes after which another watcher's claim on a workbook counts as abandoned.
    #[arg(long, value_name = "MINUTES", default_value_t = 10.0)]
    pub claim_expiry: f64,
    /// Analysis options passed to every workbook.
    #[command(flatten)]
    pub analysis: AnalysisArgs,
}

/// Analysis options shared by `run`, `watch` and the watcher's worker.
#[derive(Debug, Args, Clone, Default)]
pub struct AnalysisArgs {
    /// Confidence level for intervals and tests: 0.95, 95 or 95%.
    #[arg(long)]
    pub confidence: Option<String>,
    /// A linear combination of condition means, e.g. "new vs old: (A + B)/2 - C"; repeatable.
    #[arg(long)]
    pub contrast: Vec<String>,
    /// Which way the response is better: higher, lower, or "target 12.5".
    #[arg(long)]
    pub direction: Option<String>,
    /// Table options.
    #[command(flatten)]
    pub table: TableArgs,
}

/// The watcher's worker: analyses one workbook in a child process.
#[derive(Debug, Args)]
pub struct AnalyseOneArgs {
    /// The request, as JSON (see `watch::worker::WorkerRequest`).
    pub request: String,
}

/// `trialyst inspect`.
#[derive(Debug, Args)]
pub struct InspectArgs {
    /// The workbook.
    pub file: PathBuf,
    /// Print as JSON.
    #[arg(long)]
    pub json: bool,
    /// Table options.
    #[command(flatten)]
    pub table: TableArgs,
}

/// A usage problem found after parsing.
#[derive(Debug, thiserror::Error)]
#[error("{0}")]
pub struct UsageError(pub String);

fn table_settings(table: &TableArgs) -> Result<Settings, UsageError> {
    let layout = match table.layout.as_deref().map(str::to_lowercase).as_deref() {
        None | Some("detect") => None,
        Some("long") => Some(Layout::Long),
        Some("wide") => Some(Layout::Wide),
        Some(other) => {
            return Err(UsageError(format!(
                "--layout must be long, wide or detect, not '{other}'"
            )))
        }
    };
    Ok(Settings {
        sheet: table.sheet.clone(),
        range: table.range.clone(),
        responses: table.response.clone(),
        factors: table.factor.clone(),
        blocks: table.block.clone(),
        layout,
        ..Settings::default()
    })
}

/// The settings given by analysis options on the command line.
///
/// # Errors
///
/// [`UsageError`] naming the option.
pub fn analysis_settings(args: &AnalysisArgs) -> Result<Settings, UsageError> {
    let mut settings = table_settings(&args.table)?;
    if let Some(text) = &args.confidence {
        settings.confidence = Some(parse_confidence(text).ok_or_else(|| {
            UsageError(format!(
                "--confidence must be between 0 and 1 (or a percentage), not '{text}'"
            ))
        })?);
    }
    if let Some(text) = &args.direction {
        settings.direction = Some(parse_direction(text).ok_or_else(|| {
            UsageError(format!(
                "--direction must be higher, lower or \"target N\", not '{text}'"
            ))
        })?);
    }
    settings.contrasts = args.contrast.clone();
    Ok(settings)
}

pub use service::batch::{run_one, run_parallel, RunOutcome};
pub use service::{collect_workbooks, error_chain};

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
                .map(|response| match &response.verdict {
                    Some(verdict) => format!("{}: {}", response.name, verdict.headline),
                    None => format!("{}: not analysed", response.name),
                })
                .collect();
            let target = written
                .as_ref()
                .map(|path| format!(" -> {}", path.display()))
                .unwrap_or_default();
            format!(
                "analysed {}{target} ({} finding(s))\n  {}",
                path.display(),
                results.findings.len(),
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
    let base = AnalysisRequest {
        settings: options.settings.clone(),
        ..AnalysisRequest::default()
    };
    let progress = ProgressBar::with_draw_target(Some(workbooks.len() as u64), ProgressDrawTarget::stderr());
    if let Ok(style) = ProgressStyle::with_template("{bar:40} {pos}/{len} workbooks, {per_sec}, about {eta} left") {
        progress.set_style(style);
    }
    let request_of = |index: usize| -> AnalysisRequest {
        AnalysisRequest {
            folder_settings: chosen[index].map(|which| folder_settings[which].clone()),
            ..base.clone()
        }
    };
    let outcomes = service::batch::run_parallel_with(
        &workbooks,
        &request_of,
        options.out_dir,
        options.write,
        options.jobs,
        &|| progress.inc(1),
    );
    progress.finish_and_clear();

    let stdout = std::io::stdout();
    let mut out = stdout.lock();
    let mut failed = problems.len();
    for (path, message) in &problems {
        if options.json {
            let _ = writeln!(out, "{}", json_line(path, &RunOutcome::Failed(message.clone())));
        } else {
            eprintln!("failed {}: {message}", path.display());
        }
    }
    let mut analysed = 0;
    for (path, outcome) in workbooks.iter().zip(&outcomes) {
        match outcome {
            RunOutcome::Analysed(..) => analysed += 1,
            RunOutcome::Failed(_) => failed += 1,
        }
        if options.json {
            let _ = writeln!(out, "{}", json_line(path, outcome));
        } else if matches!(outcome, RunOutcome::Failed(_)) {
            eprintln!("{}", human_line(path, outcome));
        } else {
            let _ = writeln!(out, "{}", human_line(path, outcome));
        }
    }
    let _ = out.flush();
    let mut rollup_note = String::new();
    if let Some(rollup) = options.rollup {
        match service::batch::write_rollup(rollup, &workbooks, &outcomes, &problems) {
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
    eprintln!("trialyst: {analysed} analysed, {failed} failed in {seconds:.1} s ({rate:.0} workbooks/s){rollup_note}");
    if workbooks.is_empty() && problems.is_empty() {
        eprintln!("trialyst: no workbooks found in the paths given");
        return EXIT_SOME_FAILED;
    }
    if failed > 0 {
        EXIT_SOME_FAILED
    } else {
        EXIT_OK
    }
}

/// `trialyst watch`: the options checked, then the watcher until it is asked to stop.
fn watch_command(args: WatchArgs) -> i32 {
    let settings = match analysis_settings(&args.analysis) {
        Ok(settings) => settings,
        Err(error) => {
            eprintln!("trialyst: {error}");
            return EXIT_USAGE;
        }
    };
    let poll = match args.poll {
        Some(seconds) if seconds.is_finite() && seconds > 0.0 => Some(std::time::Duration::from_secs_f64(seconds)),
        Some(seconds) => {
            eprintln!("trialyst: --poll takes a number of seconds above 0, not {seconds}");
            return EXIT_USAGE;
        }
        None => None,
    };
    let limits_usable = args.time_limit.is_finite()
        && args.time_limit > 0.0
        && args.claim_expiry.is_finite()
        && args.claim_expiry >= 0.0;
    if !limits_usable {
        eprintln!("trialyst: --time-limit and --claim-expiry take positive numbers");
        return EXIT_USAGE;
    }
    let program = match std::env::current_exe() {
        Ok(program) => program,
        Err(error) => {
            eprintln!("trialyst: cannot find the program itself to start workers: {error}");
            return EXIT_USAGE;
        }
    };
    let options = watch::WatchOptions {
        folder: args.folder,
        recursive: args.recursive,
        poll,
        log: args.log,
        out_dir: args.out_dir,
        limits: watch::WorkerLimits {
            memory_bytes: args.memory_limit.saturating_mul(1024 * 1024),
            time: std::time::Duration::from_secs_f64(args.time_limit),
        },
        claim_expiry: std::time::Duration::from_secs_f64(args.claim_expiry * 60.0),
        settings,
        program,
    };
    match watch::watch(options) {
        Ok(()) => EXIT_OK,
        Err(watch::WatchError::CannotStart(message)) => {
            eprintln!("trialyst: {message}");
            EXIT_USAGE
        }
        Err(error) => {
            eprintln!("trialyst: {error}");
            EXIT_SOME_FAILED
        }
    }
}

/// Runs the command line; returns the process exit code.
pub fn main_with(cli: Cli) -> i32 {
    match cli.command {
        Command::Run(args) => run_command(args),
        Command::Inspect(args) => inspect_command(args),
        Command::Watch(args) => watch_command(args),
        Command::AnalyseOne(args) => {
            watch::worker::analyse_one(&args.request);
            EXIT_OK
        }
        Command::Plan(args) => plan_command(args),
        Command::Size(args) => size_command(args),
        Command::Serve(args) => {
            let served = match &args.listen {
                Some(address) => server::serve_tcp(address),
                None => server::serve_stdio(),
            };
            served.unwrap_or_else(|error| {
                eprintln!("trialyst: {}", error_chain(&error));
                server::EXIT_CANNOT_START
            })
        }
    }
}

fn run_command(args: RunArgs) -> i32 {
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
        .unwrap_or_else(|| std::thread::available_parallelism().map_or(1, |n| n.get()))
        .max(1);
    let options = BatchOptions {
        settings,
        out_dir: args.out_dir.as_deref(),
        write: !args.no_write,
        jobs,
        json: args.json,
        rollup: args.rollup.as_deref(),
    };
    run_batch(&args.paths, args.recursive, &options)
}

fn inspect_command(args: InspectArgs) -> i32 {
    let settings = match table_settings(&args.table) {
        Ok(settings) => settings,
        Err(error) => {
            eprintln!("trialyst: {error}");
            return EXIT_USAGE;
        }
    };
    let request = AnalysisRequest {
        settings,
        ..AnalysisRequest::default()
    };
    match service::inspect_workbook(&args.file, &request) {
        Ok(inspection) => {
            if args.json {
                println!("{}", serde_json::to_string(&inspection).unwrap_or_default());
            } else {
                let table = &inspection.table;
                println!(
                    "{} ({}, {} bytes)",
                    inspection.source.file_name, inspection.source.format, inspection.source.bytes
                );
                println!(
                    "table: sheet '{}', cells {}, {:?} layout, {} records",
                    table.sheet, table.range, table.layout, table.n_records
                );
                for factor in &table.factors {
                    println!(
                        "  {} '{}'{}: {} levels: {}",
                        if factor.is_block { "block" } else { "factor" },
                        factor.name,
                        factor
                            .column
                            .as_ref()
                            .map(|column| format!(" (column {column})"))
                            .unwrap_or_default(),
                        factor.levels.len(),
                        factor.levels.join(", ")
                    );
                }
                println!("  responses: {}", table.responses.join(", "));
                println!("findings: {}", inspection.findings.len());
                for finding in &inspection.findings {
                    println!("  {}: {}", finding.place(), finding.message);
                }
            }
            EXIT_OK
        }
        Err(error) => {
            eprintln!("trialyst: {}", error_chain(&error));
            EXIT_SOME_FAILED
        }
    }
}

/// Reads `Name=level1,level2,...`.
fn parse_factor_arg(text: &str) -> Result<service::plan::FactorSpec, UsageError> {
    let Some((name, levels)) = text.split_once('=') else {
        return Err(UsageError(format!(
            "--factor '{text}': write the name, '=' and the levels separated by commas, e.g. \"Temperature=160,180\""
        )));
    };
    let levels: Vec<&str> = levels.split(',').map(str::trim).collect();
    Ok(service::plan::FactorSpec::new(name, &levels))
}

fn plan_request(args: &PlanArgs) -> Result<service::plan::PlanRequest, String> {
    let mut request = match &args.from {
        Some(path) => {
            let text =
                std::fs::read_to_string(path).map_err(|error| format!("cannot read '{}': {error}", path.display()))?;
            service::plan::file::parse_plan_file(&text, &path.display().to_string())
                .map_err(|error| error.to_string())?
        }
        None => service::plan::PlanRequest::default(),
    };
    if !args.factor.is_empty() {
        request.factors = args
            .factor
            .iter()
            .map(|text| parse_factor_arg(text))
            .collect::<Result<_, _>>()
            .map_err(|error| error.to_string())?;
    }
    if !args.response.is_empty() {
        request.responses = args.response.clone();
    }
    if !args.generator.is_empty() {
        request.generators = args.generator.clone();
    }
    request.replicates = args.replicates.unwrap_or(request.replicates);
    request.centre_points = args.centre_points.unwrap_or(request.centre_points);
    request.blocks = args.blocks.unwrap_or(request.blocks);
    request.fraction_runs = args.runs.or(request.fraction_runs);
    request.seed = args.seed.or(request.seed);
    request.date = args.date.clone().or(request.date);
    Ok(request)
}

fn plan_command(args: PlanArgs) -> i32 {
    let request = match plan_request(&args) {
        Ok(request) => request,
        Err(message) => {
            eprintln!("trialyst: {message}");
            return EXIT_USAGE;
        }
    };
    let plan = match service::plan::make_plan(&request) {
        Ok(plan) => plan,
        Err(error) => {
            eprintln!("trialyst: {}", error_chain(&error));
            return EXIT_USAGE;
        }
    };
    let destination = args
        .out
        .clone()
        .unwrap_or_else(|| PathBuf::from(format!("trial-plan-{}.xlsx", plan.id)));
    if let Err(error) = service::plan::write_plan(&plan, &destination) {
        eprintln!("trialyst: {}", error_chain(&error));
        return EXIT_SOME_FAILED;
    }
    let summary = service::plan::summarise(&plan, Some(&destination));
    if args.json {
        println!("{}", serde_json::to_string(&summary).unwrap_or_default());
    } else {
        println!(
            "plan {}: {} with {} runs{} -> {}",
            summary.id,
            summary.kind,
            summary.runs,
            if summary.blocks > 1 {
                format!(" in {} blocks", summary.blocks)
            } else {
                String::new()
            },
            destination.display()
        );
        if !summary.generators.is_empty() {
            println!(
                "  generators {} (resolution {})",
                summary.generators.join(", "),
                summary.resolution
            );
        }
        println!(
            "  seed {}{}",
            summary.seed,
            if summary.seed_from_clock {
                " (drawn from the clock; give --seed to make the same plan again)"
            } else {
                ""
            }
        );
    }
    EXIT_OK
}

fn size_request(args: &SizeArgs) -> Result<service::plan::SizeRequest, String> {
    use engine::analysis::power::OneWayEffect;
    use service::plan::size::{SdSource, SizeDesign};
    let sd = match (args.sd, &args.from_results) {
        (Some(sd), None) => SdSource::Given(sd),
        (None, Some(path)) => SdSource::LastTrial {
            path: path.clone(),
            response: args.response.clone(),
        },
        (Some(_), Some(_)) => return Err("give either --sd or --from-results, not both".into()),
        (None, None) => {
            return Err(
                "give the SD of a run with --sd, or --from-results with the last trial's results workbook".into(),
            )
        }
    };
    let design = if args.factors.is_some() || args.effect.is_some() {
        let factors = args.factors.ok_or("a two-level trial needs --factors")?;
        let effect = args
            .effect
            .ok_or("a two-level trial needs --effect, the effect worth detecting")?;
        SizeDesign::TwoLevel {
            factors,
            runs_per_replicate: args.runs,
            centre_points: args.centre_points,
            interactions: !args.main_effects_only,
            effect,
        }
    } else {
        let effect = match (args.difference, args.means.is_empty()) {
            (Some(delta), true) => OneWayEffect::SmallestDifference(delta),
            (None, false) => OneWayEffect::Means(args.means.clone()),
            (Some(_), false) => return Err("give either --difference or --means, not both".into()),
            (None, true) => {
                return Err("give --difference (smallest difference worth detecting) or --means, or --factors and --effect for a two-level trial".into())
            }
        };
        let conditions = match (args.conditions, &effect) {
            (Some(count), _) => count,
            (None, OneWayEffect::Means(means)) => means.len(),
            (None, _) => return Err("give the number of conditions with --conditions".into()),
        };
        SizeDesign::OneWay { conditions, effect }
    };
    Ok(service::plan::SizeRequest {
        design,
        sd,
        alpha: args.alpha,
        power: args.power,
        half_width: args.half_width,
    })
}

fn size_command(args: SizeArgs) -> i32 {
    let request = match size_request(&args) {
        Ok(request) => request,
        Err(message) => {
            eprintln!("trialyst: {message}");
            return EXIT_USAGE;
        }
    };
    let answer = match service::plan::size_answer(&request) {
        Ok(answer) => answer,
        Err(error) => {
            eprintln!("trialyst: {}", error_chain(&error));
            return EXIT_SOME_FAILED;
        }
    };
    if let Some(out) = &args.out {
        if let Err(error) = service::plan::write_size(&answer, out) {
            eprintln!("trialyst: {}", error_chain(&error));
            return EXIT_SOME_FAILED;
        }
    }
    if args.json {
        println!("{}", serde_json::to_string(&answer).unwrap_or_default());
        return EXIT_OK;
    }
    let stdout = std::io::stdout();
    let mut out = stdout.lock();
    let _ = writeln!(out, "{}", answer.question);
    let _ = writeln!(
        out,
        "SD {} ({}), alpha {}, power wanted {}",
        answer.sd, answer.sd_from, answer.alpha, answer.target_power
    );
    let _ = writeln!(
        out,
        "needed: {} {} ({} runs in all), power {:.3}",
        answer.needed.count, answer.count_means, answer.needed.total_runs, answer.needed.power
    );
    if let Some(half) = &answer.half_width {
        let _ = writeln!(
            out,
            "all-pairs intervals of +-{}: {} runs per condition ({} in all), half-width {:.4}",
            half.wanted, half.per_condition, half.total_runs, half.reached
        );
    }
    let _ = writeln!(
        out,
        "{:>20} {:>12} {:>12} {:>8}",
        answer.count_means, "runs in all", "residual df", "power"
    );
    for row in &answer.table {
        let power = if row.power.is_nan() {
            "-".to_string()
        } else {
            format!("{:.3}", row.power)
        };
        let _ = writeln!(
            out,
            "{:>20} {:>12} {:>12} {:>8}",
            row.count, row.total_runs, row.residual_df, power
        );
    }
    for note in &answer.notes {
        let _ = writeln!(out, "note: {note}");
    }
    if let Some(path) = &args.out {
        let _ = writeln!(out, "table written to {}", path.display());
    }
    EXIT_OK
}
