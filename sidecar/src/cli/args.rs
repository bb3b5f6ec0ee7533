//! The options of every command (clap structs) and their checking into service settings.

use std::path::PathBuf;

use clap::Args;
use workbook_io::layout::Layout;

use service::settings::{parse_confidence, parse_direction_entries, Settings};

/// `trialyst serve`.
#[derive(Debug, Args)]
pub struct ServeArgs {
    /// Serve one connection on a loopback TCP address (127.0.0.1:PORT) instead of stdio.
    #[arg(long, value_name = "ADDRESS")]
    pub listen: Option<String>,
    /// Confine every request's paths, URIs and output folders to this folder; repeatable.
    #[arg(long, value_name = "FOLDER")]
    pub allow_root: Vec<std::path::PathBuf>,
    /// Stop a request still running after this many seconds and answer it with an error (0: no limit).
    #[arg(long, value_name = "SECONDS", default_value_t = 120.0)]
    pub request_time_limit: f64,
    /// Refuse, unread, any message larger than this many MiB (1 to 1024).
    #[arg(long, value_name = "MIB", default_value_t = 64, value_parser = clap::value_parser!(u64).range(1..=1024))]
    pub max_message_mib: u64,
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
    /// Centre runs in each block (two-level plans with numeric factors; response-surface
    /// plans get 3 in the cube part and 3 with the axial runs when none are given).
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
    /// Replace the plan workbook if it exists (without it an existing file is kept).
    #[arg(long)]
    pub force: bool,
    /// Print the plan summary as JSON.
    #[arg(long)]
    pub json: bool,
    /// A response-surface plan instead of a factorial: "central-composite" or
    /// "box-behnken" (each factor gives its low and high settings).
    #[arg(long)]
    pub design: Option<String>,
    /// How far out the axial runs of a central composite plan go: "rotatable"
    /// (default), "orthogonal-blocks", "faces" or a distance in coded units.
    #[arg(long)]
    pub axial: Option<String>,
    /// The settings a factor can reach, e.g. "Temperature=150,195"; leave a side
    /// empty for no limit ("Temperature=,195"); repeatable.
    #[arg(long)]
    pub limit: Vec<String>,
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
    /// Response-surface plan: "central-composite" or "box-behnken", with --factors,
    /// --curvature and --centre-points (the centre runs of one replicate).
    #[arg(long)]
    pub design: Option<String>,
    /// Response-surface plan: the curvature worth detecting, a square term's coefficient
    /// in coded units (how far the response bends one coded unit from the centre).
    #[arg(long)]
    pub curvature: Option<f64>,
    /// Central composite plan: "rotatable" (default), "faces" or a distance in coded units.
    #[arg(long)]
    pub axial: Option<String>,
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
    #[arg(long, value_parser = parse_jobs)]
    pub jobs: Option<u64>,
    /// Write a roll-up workbook: one row per workbook and response, and a chart of the verdicts.
    #[arg(long, value_name = "FILE")]
    pub rollup: Option<PathBuf>,
    /// A folder an `output folder` setting may point into besides each workbook's own folder; repeatable.
    #[arg(long, value_name = "FOLDER")]
    pub allow_output_root: Vec<PathBuf>,
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
    /// Which way a response is better: higher, lower, or "target 12.5" for every response,
    /// or per response as "Leak rate=lower" (also "Leak rate: lower"); repeatable.
    #[arg(long)]
    pub direction: Vec<String>,
    /// The condition the others are compared with (Dunnett's comparisons with a control),
    /// e.g. "Standard"; it must be one of the table's conditions.
    #[arg(long, value_name = "CONDITION")]
    pub control: Option<String>,
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

/// The settings given by the table options (sheet, range, columns, layout).
///
/// # Errors
///
/// [`UsageError`] for a layout other than long, wide or detect.
pub(crate) fn table_settings(table: &TableArgs) -> Result<Settings, UsageError> {
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

/// Reads `--jobs`: a whole number of at least 1.
fn parse_jobs(text: &str) -> Result<u64, String> {
    match text.trim().parse::<u64>() {
        Ok(jobs) if jobs >= 1 => Ok(jobs),
        _ => Err(format!(
            "give the number of workbooks to analyse at once, 1 or more, not '{text}'"
        )),
    }
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
                "--confidence must be {}, not '{text}'",
                service::settings::CONFIDENCE_FORMS
            ))
        })?);
    }
    for text in &args.direction {
        let entries = parse_direction_entries(text).map_err(|entry| {
            UsageError(format!(
                "--direction must be higher, lower or \"target N\", or a response's name, = and one of these (\"Leak rate=lower\"), not '{entry}'"
            ))
        })?;
        settings.add_directions(entries);
    }
    settings.contrasts = args.contrast.clone();
    if let Some(control) = &args.control {
        if control.trim().is_empty() {
            return Err(UsageError(
                "--control must name one of the conditions, not be empty".into(),
            ));
        }
        settings.control = Some(control.trim().to_string());
    }
    Ok(settings)
}
