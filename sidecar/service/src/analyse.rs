//! The one service API that every front end calls: the command line, the
//! protocol server, the folder watcher and the batch runner.
//!
//! It reads a workbook through `workbook-io`, layers the settings, runs the
//! analyses and returns [`WorkbookResults`], plain values that the report
//! builder turns into a workbook and serde turns into JSON. Front ends never
//! compute statistics or touch calamine themselves.

use std::collections::HashMap;
use std::io::Read;
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::Arc;
use std::time::Instant;

use serde::Serialize;
use sha2::{Digest, Sha256};
use workbook_io::layout::{detect_table, Finding, FindingKind, Layout, TableRequest, TrialTable};
use workbook_io::settings::{is_settings_sheet, read_setting_rows};
use workbook_io::{open_workbook, CellRect, ReadError, ReadLimits, SheetGrid, SheetInfo, Workbook};

use crate::settings::Settings;
use engine::analysis::contrast::parse_contrasts;
use engine::analysis::oneway::{fit_one_way, OneWayError, OneWayFit};

/// Version of the results document (JSON and workbook); bumped on any
/// incompatible change to field names or meaning.
pub const RESULTS_FORMAT_VERSION: &str = "1.0";

/// The tool's name and version, as recorded in every result.
pub const TOOL_NAME: &str = "trialyst";
/// The tool's version.
pub const TOOL_VERSION: &str = env!("CARGO_PKG_VERSION");

/// Most conditions compared in one response. Every pair of conditions is
/// compared, so the work and the tables grow with the square of the count:
/// 200 conditions are 19,900 pairs. A table with more is almost always a
/// sheet read in the wrong layout (a row of thousands of headers), and
/// comparing it would exhaust the machine.
pub const MAX_CONDITIONS: usize = 200;

/// Most responses analysed from one table; the rest are left out with a
/// finding. Each response gets its own section, chart and tables, and a
/// sheet of thousands of numeric columns is rarely one trial.
pub const MAX_RESPONSES: usize = 250;

/// A flag a front end sets to stop a computation that is under way.
#[derive(Debug, Clone, Default)]
pub struct CancelFlag(Arc<AtomicBool>);

impl CancelFlag {
    /// A new, unset flag.
    pub fn new() -> Self {
        Self::default()
    }

    /// Asks the computation to stop.
    pub fn cancel(&self) {
        self.0.store(true, Ordering::SeqCst);
    }

    /// Whether stopping was asked for.
    pub fn is_cancelled(&self) -> bool {
        self.0.load(Ordering::SeqCst)
    }
}

/// Why a workbook could not be analysed.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum ServiceError {
    /// The workbook could not be read.
    #[error(transparent)]
    Read(#[from] ReadError),
    /// No sheet holds an analysable table.
    #[error("'{}': no trial table found: {reasons}", path.display())]
    NoTable {
        /// The workbook.
        path: PathBuf,
        /// What each sheet lacked.
        reasons: String,
    },
    /// A table was found but no response could be analysed.
    #[error("'{}': nothing could be analysed: {reasons}", path.display())]
    NothingAnalysable {
        /// The workbook.
        path: PathBuf,
        /// Why each response failed.
        reasons: String,
        /// The data findings, each with its place, that explain it.
        findings: Vec<Finding>,
    },
    /// A setting given by the caller is unusable.
    #[error("{0}")]
    Settings(String),
    /// The results workbook could not be written.
    #[error(transparent)]
    Write(#[from] workbook_io::write::WriteError),
    /// The caller cancelled the work.
    #[error("cancelled")]
    Cancelled,
}

impl ServiceError {
    /// A short, stable name for the kind of failure: sent in protocol error
    /// data and diagnostic codes, and used to sort failures.
    pub fn kind(&self) -> &'static str {
        match self {
            Self::Read(read) => match read {
                ReadError::Io { .. } => "unreadable",
                ReadError::NotAWorkbook { .. } => "not-a-workbook",
                ReadError::PasswordProtected { .. } => "password-protected",
                ReadError::TooLarge { .. } | ReadError::TooManyCells { .. } => "too-large",
                ReadError::Corrupt { .. } => "damaged",
                ReadError::SheetNotFound { .. } => "no-such-sheet",
                ReadError::BadReference { .. } => "bad-range",
                _ => "unreadable",
            },
            Self::NoTable { .. } => "no-table",
            Self::NothingAnalysable { .. } => "nothing-analysable",
            Self::Settings(_) => "bad-setting",
            Self::Write(_) => "write-failed",
            Self::Cancelled => "cancelled",
        }
    }
}

/// Where the analysed data came from.
#[derive(Debug, Clone, Serialize)]
pub struct SourceInfo {
    /// The path as given.
    pub path: String,
    /// The file name alone.
    pub file_name: String,
    /// SHA-256 of the file's bytes, hex.
    pub sha256: String,
    /// Size in bytes.
    pub bytes: u64,
    /// Format found in the bytes.
    pub format: String,
    /// Sheet analysed.
    pub sheet: String,
    /// Range analysed (header row through last data row).
    pub range: String,
}

/// What the table detection found.
#[derive(Debug, Clone, Serialize)]
pub struct TableSummary {
    /// Sheet of the table.
    pub sheet: String,
    /// Its range.
    pub range: String,
    /// Long or wide.
    pub layout: Layout,
    /// Factors with their levels.
    pub factors: Vec<FactorSummary>,
    /// Response names.
    pub responses: Vec<String>,
    /// Number of records.
    pub n_records: usize,
}

/// A factor and its levels.
#[derive(Debug, Clone, Serialize)]
pub struct FactorSummary {
    /// Header text.
    pub name: String,
    /// Column letter, in the long layout.
    pub column: Option<String>,
    /// Levels, in order of first appearance.
    pub levels: Vec<String>,
    /// True for a blocking factor.
    pub is_block: bool,
}

/// The outcome for one response.
#[derive(Debug, Clone, Serialize)]
#[serde(tag = "status", rename_all = "kebab-case")]
pub enum ResponseOutcome {
    /// The one-way model was fitted.
    Analysed {
        /// The fit.
        one_way: Box<OneWayFit>,
    },
    /// The response could not be analysed.
    NotAnalysed {
        /// Why, in a sentence.
        reason: String,
    },
}

/// One response's analysis.
#[derive(Debug, Clone, Serialize)]
pub struct ResponseResult {
    /// The response's header text.
    pub name: String,
    /// Unit, taken from a parenthesis or bracket at the end of the header, if any.
    pub unit: Option<String>,
    /// What defines a condition: the factor name, or the factors joined by " × ".
    pub condition_factor: String,
    /// Simultaneous comparisons, model checks and the lead analysis, when analysed.
    pub assessment: Option<Box<engine::analysis::assessment::Assessment>>,
    /// The plain-language reading, when analysed.
    pub verdict: Option<engine::analysis::verdict::Verdict>,
    /// The factorial analysis, when the table has two or more treatment factors (or blocks).
    pub factorial: Option<engine::analysis::factorial::FactorialOutcome>,
    /// The outcome.
    #[serde(flatten)]
    pub outcome: ResponseOutcome,
}

impl ResponseResult {
    /// The fit, when the response was analysed.
    pub fn fit(&self) -> Option<&OneWayFit> {
        match &self.outcome {
            ResponseOutcome::Analysed { one_way } => Some(one_way),
            ResponseOutcome::NotAnalysed { .. } => None,
        }
    }
}

/// Time spent per stage, in milliseconds.
#[derive(Debug, Clone, Default, Serialize)]
pub struct Timings {
    /// Hashing the source file.
    pub hash_ms: f64,
    /// Opening and reading cells.
    pub read_ms: f64,
    /// Table detection.
    pub layout_ms: f64,
    /// Statistics (the one-way fits and everything after them).
    pub analysis_ms: f64,
    /// Of `analysis_ms`, the comparisons and model checks beyond the one-way fit
    /// (multiple comparisons, spreads, normality, outliers, rank-based analysis).
    pub assessment_ms: f64,
}

/// Everything found for one workbook.
#[derive(Debug, Clone, Serialize)]
pub struct WorkbookResults {
    /// Version of this document's format.
    pub format_version: &'static str,
    /// Tool name.
    pub tool: &'static str,
    /// Tool version.
    pub tool_version: &'static str,
    /// When the analysis ran, RFC 3339 UTC.
    pub created_at: String,
    /// The source.
    pub source: SourceInfo,
    /// The table.
    pub table: TableSummary,
    /// The settings in force after layering.
    pub settings: Settings,
    /// Where each setting in force came from, by key.
    pub settings_sources: Vec<(String, String)>,
    /// One entry per response.
    pub responses: Vec<ResponseResult>,
    /// Data findings, each with its place.
    pub findings: Vec<Finding>,
    /// Cautions that go with every result.
    pub cautions: Vec<String>,
    /// Time per stage.
    pub timings: Timings,
}

/// The standing cautions printed with every result.
pub fn standard_cautions() -> Vec<String> {
    vec![
        "A statistical result does not by itself approve a process change. Follow your site's change-control, validation and safety procedures, applicable codes and licensed practice, especially for safety-critical products.".into(),
        "The intervals and p-values assume independent runs; they say nothing about conditions or ranges that were not tried.".into(),
    ]
}

/// Inputs to one analysis beyond the workbook itself.
#[derive(Debug, Clone, Default)]
pub struct AnalysisRequest {
    /// Settings from the caller (command line or protocol): the highest precedence.
    pub settings: Settings,
    /// Settings from a folder settings file: below the workbook's own settings sheet.
    pub folder_settings: Option<Settings>,
    /// Reading limits.
    pub limits: ReadLimits,
    /// Set by the caller to stop the work.
    pub cancel: CancelFlag,
}

/// What `inspect` reports: the detected table and every finding, no analysis.
#[derive(Debug, Clone, Serialize)]
pub struct Inspection {
    /// The source.
    pub source: SourceInfo,
    /// The worksheets.
    pub sheets: Vec<SheetInfo>,
    /// The table found.
    pub table: TableSummary,
    /// The settings in force.
    pub settings: Settings,
    /// Findings.
    pub findings: Vec<Finding>,
}

/// Hashes a file with SHA-256.
///
/// # Errors
///
/// [`ReadError::Io`] when the file cannot be read.
pub fn sha256_file(path: &Path) -> Result<(String, u64), ReadError> {
    let io_error = |source| ReadError::Io {
        path: path.to_path_buf(),
        source,
    };
    let mut file = std::fs::File::open(path).map_err(io_error)?;
    let mut hasher = Sha256::new();
    let mut buffer = vec![0u8; 1 << 16];
    let mut total = 0u64;
    loop {
        let read = file.read(&mut buffer).map_err(io_error)?;
        if read == 0 {
            break;
        }
        total += read as u64;
        hasher.update(&buffer[..read]);
    }
    let digest = hasher.finalize();
    Ok((digest.iter().map(|byte| format!("{byte:02x}")).collect(), total))
}

/// The unit at the end of a header: `Thickness (mm)` gives `mm`.
pub fn unit_of(header: &str) -> Option<String> {
    let trimmed = header.trim();
    for (open, close) in [('(', ')'), ('[', ']')] {
        if trimmed.ends_with(close) {
            if let Some(start) = trimmed.rfind(open) {
                let unit = trimmed[start + 1..trimmed.len() - 1].trim();
                if !unit.is_empty() && unit.len() <= 20 {
                    return Some(unit.to_string());
                }
            }
        }
    }
    None
}

fn workbook_findings(workbook: &Workbook) -> Vec<Finding> {
    let mut findings = Vec::new();
    if let Some(extension) = workbook.extension_mismatch() {
        findings.push(Finding {
            kind: FindingKind::Workbook,
            sheet: String::new(),
            cell: None,
            found: format!(".{extension}"),
            action: format!("read as {:?} from its contents", workbook.format()).to_lowercase(),
            message: format!(
                "the file is named .{extension} but its contents are an .{} workbook; it was read by its contents (rename it to match)",
                workbook.format().extensions()[0]
            ),
        });
    }
    if workbook.macro_enabled() {
        findings.push(Finding {
            kind: FindingKind::Workbook,
            sheet: String::new(),
            cell: None,
            found: "a macro project".into(),
            action: "ignored; macros are never run".into(),
            message: "the workbook carries macros; only cell values were read and no macro was run".into(),
        });
    }
    findings
}

/// Reads the workbook's settings sheet, if it has one, turning bad rows into findings.
fn sheet_settings(workbook: &mut Workbook, findings: &mut Vec<Finding>) -> Settings {
    let Some(sheet_name) = workbook
        .sheets()
        .iter()
        .find(|info| is_settings_sheet(&info.name))
        .map(|info| info.name.clone())
    else {
        return Settings::default();
    };
    let grid = match workbook.read_sheet(&sheet_name, None) {
        Ok(grid) => grid,
        Err(error) => {
            findings.push(Finding {
                kind: FindingKind::Setting,
                sheet: sheet_name.clone(),
                cell: None,
                found: error.to_string(),
                action: "the settings sheet was ignored".into(),
                message: format!("the settings sheet could not be read ({error}); it was ignored"),
            });
            return Settings::default();
        }
    };
    let rows = read_setting_rows(&grid);
    let place = |row: &workbook_io::settings::SettingRow| format!("{}!{}", sheet_name, row.cell);
    let mut usable = Vec::new();
    for row in &rows {
        let (_, errors) = Settings::from_pairs_lenient([(row.key.as_str(), row.value.as_str(), place(row))]);
        match errors.first() {
            Some(error) => findings.push(Finding {
                kind: FindingKind::Setting,
                sheet: sheet_name.clone(),
                cell: Some(row.cell.clone()),
                found: row.value.clone(),
                action: "the setting was ignored".into(),
                message: error.to_string(),
            }),
            None => usable.push(row),
        }
    }
    let (settings, _) = Settings::from_pairs_lenient(
        usable
            .iter()
            .map(|row| (row.key.as_str(), row.value.as_str(), place(row))),
    );
    settings
}

fn summarise_table(table: &TrialTable) -> TableSummary {
    TableSummary {
        sheet: table.sheet.clone(),
        range: table.area.a1(),
        layout: table.layout,
        factors: table
            .factors
            .iter()
            .map(|factor| FactorSummary {
                name: factor.name.clone(),
                column: factor.column.map(workbook_io::column_letters),
                levels: factor.levels.clone(),
                is_block: factor.is_block,
            })
            .collect(),
        responses: table.responses.iter().map(|response| response.name.clone()).collect(),
        n_records: table.n_records(),
    }
}

/// The workbook, its table and the layered settings: what both inspect and analyse need.
struct Loaded {
    source: SourceInfo,
    sheets: Vec<SheetInfo>,
    table: TrialTable,
    settings: Settings,
    settings_sources: Vec<(String, String)>,
    findings: Vec<Finding>,
    timings: Timings,
}

fn table_request(settings: &Settings, range: Option<CellRect>) -> TableRequest {
    TableRequest {
        range,
        factors: settings.factors.clone(),
        responses: settings.responses.clone(),
        blocks: settings.blocks.clone(),
        layout: settings.layout,
        wide_response_name: settings.value_name.clone(),
    }
}

fn settings_sources(command: &Settings, sheet: &Settings, folder: &Settings) -> Vec<(String, String)> {
    let describe = |settings: &Settings| -> Vec<&'static str> {
        let mut keys = Vec::new();
        let checks: [(&'static str, bool); 13] = [
            ("sheet", settings.sheet.is_some()),
            ("range", settings.range.is_some()),
            ("response", !settings.responses.is_empty()),
            ("factor", !settings.factors.is_empty()),
            ("block", !settings.blocks.is_empty()),
            ("layout", settings.layout.is_some()),
            ("value name", settings.value_name.is_some()),
            ("confidence", settings.confidence.is_some()),
            ("family confidence", settings.family_confidence.is_some()),
            ("contrast", !settings.contrasts.is_empty()),
            ("direction", settings.direction.is_some()),
            ("control", settings.control.is_some()),
            ("output folder", settings.out_dir.is_some()),
        ];
        for (key, given) in checks {
            if given {
                keys.push(key);
            }
        }
        keys
    };
    let mut sources: Vec<(String, String)> = Vec::new();
    for (settings, origin) in [
        (command, "command line or request"),
        (sheet, "workbook settings sheet"),
        (folder, "folder settings file"),
    ] {
        for key in describe(settings) {
            if !sources.iter().any(|(existing, _)| existing == key) {
                sources.push((key.to_string(), origin.to_string()));
            }
        }
    }
    if !sources.iter().any(|(key, _)| key == "confidence") {
        sources.push(("confidence".into(), "built-in default (0.95)".into()));
    }
    sources
}

fn load(path: &Path, request: &AnalysisRequest) -> Result<Loaded, ServiceError> {
    // The file is hashed on a second thread while it is read; a hashing
    // error is still the one reported, as when the hash came first.
    std::thread::scope(|scope| {
        let hashing = scope.spawn(|| {
            let started = Instant::now();
            sha256_file(path).map(|hashed| (hashed, started.elapsed().as_secs_f64() * 1e3))
        });
        load_hashed(path, request, || {
            hashing
                .join()
                .unwrap_or_else(|payload| std::panic::resume_unwind(payload))
        })
    })
}

/// [`load`] with the hash still being computed: `hash` waits for it.
fn load_hashed(
    path: &Path,
    request: &AnalysisRequest,
    hash: impl FnOnce() -> Result<((String, u64), f64), ReadError>,
) -> Result<Loaded, ServiceError> {
    let mut timings = Timings::default();
    let body = load_body(path, request, &mut timings);
    let ((sha256, bytes), hash_ms) = hash()?;
    let mut loaded = body?;
    timings.hash_ms = hash_ms;
    loaded.source.sha256 = sha256;
    loaded.source.bytes = bytes;
    loaded.timings = timings;
    Ok(loaded)
}

fn load_body(path: &Path, request: &AnalysisRequest, timings: &mut Timings) -> Result<Loaded, ServiceError> {
    let (sha256, bytes) = (String::new(), 0u64);
    let started = Instant::now();
    let mut workbook = open_workbook(path, &request.limits)?;
    let mut findings = workbook_findings(&workbook);
    let sheet_level = sheet_settings(&mut workbook, &mut findings);
    let folder_level = request.folder_settings.clone().unwrap_or_default();
    let settings = request.settings.clone().over(&sheet_level.clone().over(&folder_level));
    let sources = settings_sources(&request.settings, &sheet_level, &folder_level);

    let default_sheet = settings.sheet.clone();
    let (range_sheet, range) = match &settings.range {
        Some(reference) => {
            let (sheet, rect) = workbook.resolve_range(reference, default_sheet.as_deref())?;
            (sheet, Some(rect))
        }
        None => (None, None),
    };
    let wanted_sheet = range_sheet.or(default_sheet);
    let candidates: Vec<String> = match &wanted_sheet {
        Some(sheet) => vec![sheet.clone()],
        None => workbook
            .sheets()
            .iter()
            .filter(|info| !is_settings_sheet(&info.name))
            .filter(|info| info.visible)
            .map(|info| info.name.clone())
            .collect(),
    };
    let table_request = table_request(&settings, range);
    let mut reasons = Vec::new();
    let mut found: Option<TrialTable> = None;
    let mut read_total = 0.0;
    let mut layout_total = 0.0;
    for sheet in &candidates {
        if request.cancel.is_cancelled() {
            return Err(ServiceError::Cancelled);
        }
        let read_started = Instant::now();
        let grid: SheetGrid = workbook.read_sheet(sheet, range)?;
        read_total += read_started.elapsed().as_secs_f64() * 1e3;
        let layout_started = Instant::now();
        let detected = detect_table(&grid, &table_request);
        layout_total += layout_started.elapsed().as_secs_f64() * 1e3;
        match detected {
            Ok(table) => {
                found = Some(table);
                break;
            }
            Err(error) => {
                // A named column missing from the sheet the user chose is final.
                if wanted_sheet.is_some() {
                    return Err(ServiceError::NoTable {
                        path: path.to_path_buf(),
                        reasons: error.to_string(),
                    });
                }
                reasons.push(error.to_string());
            }
        }
    }
    let _ = started;
    timings.read_ms = read_total;
    timings.layout_ms = layout_total;
    let Some(mut table) = found else {
        if candidates.is_empty() {
            reasons.push("the workbook has no visible worksheet".into());
        }
        return Err(ServiceError::NoTable {
            path: path.to_path_buf(),
            reasons: reasons.join("; "),
        });
    };
    findings.append(&mut table.findings);
    // A plan workbook's runs are checked against the plan it carries.
    findings.extend(crate::plan::plan_findings(&mut workbook, &settings, &table));
    let source = SourceInfo {
        path: path.display().to_string(),
        file_name: path
            .file_name()
            .map(|name| name.to_string_lossy().into_owned())
            .unwrap_or_default(),
        sha256,
        bytes,
        format: format!("{:?}", workbook.format()).to_lowercase(),
        sheet: table.sheet.clone(),
        range: table.area.a1(),
    };
    Ok(Loaded {
        source,
        sheets: workbook.sheets().to_vec(),
        table,
        settings,
        settings_sources: sources,
        findings,
        timings: Timings::default(),
    })
}

/// Reads a workbook and reports the table it would analyse, with every finding.
///
/// # Errors
///
/// [`ServiceError`] when the workbook cannot be read or holds no table.
pub fn inspect_workbook(path: &Path, request: &AnalysisRequest) -> Result<Inspection, ServiceError> {
    let loaded = load(path, request)?;
    Ok(Inspection {
        source: loaded.source,
        sheets: loaded.sheets,
        table: summarise_table(&loaded.table),
        settings: loaded.settings,
        findings: loaded.findings,
    })
}

/// Reads and analyses a workbook.
///
/// # Errors
///
/// [`ServiceError`] when the workbook cannot be read, holds no table, or no
/// response in it can be analysed. Problems with single cells are findings
/// in the result, not errors.
pub fn analyse_workbook(path: &Path, request: &AnalysisRequest) -> Result<WorkbookResults, ServiceError> {
    let loaded = load(path, request)?;
    analyse_loaded(path, loaded, &request.cancel)
}

/// Analyses cells that a client sent (a 2-D block as read from its sheet).
///
/// # Errors
///
/// As [`analyse_workbook`].
pub fn analyse_grid(
    grid: &SheetGrid,
    settings: &Settings,
    source_name: &str,
    cancel: &CancelFlag,
) -> Result<WorkbookResults, ServiceError> {
    let path = PathBuf::from(source_name);
    let table = detect_table(grid, &table_request(settings, None)).map_err(|error| ServiceError::NoTable {
        path: path.clone(),
        reasons: error.to_string(),
    })?;
    let mut table = table;
    let findings = std::mem::take(&mut table.findings);
    let source = SourceInfo {
        path: source_name.to_string(),
        file_name: source_name.to_string(),
        sha256: String::new(),
        bytes: 0,
        format: "cells".into(),
        sheet: table.sheet.clone(),
        range: table.area.a1(),
    };
    let loaded = Loaded {
        source,
        sheets: vec![SheetInfo {
            name: grid.name.clone(),
            visible: true,
        }],
        table,
        settings: settings.clone(),
        settings_sources: settings_sources(settings, &Settings::default(), &Settings::default()),
        findings,
        timings: Timings::default(),
    };
    analyse_loaded(&path, loaded, cancel)
}

/// The conditions of a table: one factor's levels, or the observed
/// combinations of several treatment factors' levels.
pub fn conditions_of(table: &TrialTable) -> (String, Vec<String>, Vec<u32>) {
    let treatment: Vec<&workbook_io::layout::Factor> = table.factors.iter().filter(|factor| !factor.is_block).collect();
    let treatment = if treatment.is_empty() {
        table.factors.iter().collect()
    } else {
        treatment
    };
    if treatment.len() == 1 {
        let factor = treatment[0];
        return (
            factor.name.clone(),
            factor.levels.clone(),
            factor.level_of_record.clone(),
        );
    }
    let name = treatment
        .iter()
        .map(|factor| factor.name.as_str())
        .collect::<Vec<_>>()
        .join(" × ");
    let mut combination_index: HashMap<Vec<u32>, u32> = HashMap::new();
    let mut names = Vec::new();
    let mut groups = Vec::with_capacity(table.n_records());
    for record in 0..table.n_records() {
        let key: Vec<u32> = treatment.iter().map(|factor| factor.level_of_record[record]).collect();
        let next = combination_index.len() as u32;
        let index = *combination_index.entry(key.clone()).or_insert_with(|| {
            names.push(
                treatment
                    .iter()
                    .zip(&key)
                    .map(|(factor, level)| factor.levels[*level as usize].as_str())
                    .collect::<Vec<_>>()
                    .join(" / "),
            );
            next
        });
        groups.push(index);
    }
    (name, names, groups)
}

fn analyse_loaded(path: &Path, loaded: Loaded, cancel: &CancelFlag) -> Result<WorkbookResults, ServiceError> {
    let Loaded {
        source,
        mut table,
        settings,
        settings_sources,
        mut findings,
        mut timings,
        ..
    } = loaded;
    let started = Instant::now();
    if table.responses.len() > MAX_RESPONSES {
        let first_left_out = &table.responses[MAX_RESPONSES];
        findings.push(Finding {
            kind: FindingKind::Analysis,
            sheet: table.sheet.clone(),
            cell: first_left_out
                .column
                .map(|col| workbook_io::CellPos::new(table.area.first.row, col).a1()),
            found: format!("{} response columns", table.responses.len()),
            action: format!("the first {MAX_RESPONSES} were analysed, the rest left out"),
            message: format!(
                "the table has {} response columns; the first {MAX_RESPONSES} were analysed and the rest, from '{}' on, were left out; name the responses to analyse",
                table.responses.len(),
                first_left_out.name
            ),
        });
        table.responses.truncate(MAX_RESPONSES);
    }
    let (condition_factor, condition_names, groups) = conditions_of(&table);
    let confidence = settings.confidence_level();
    let mut contrasts = Vec::new();
    for text in &settings.contrasts {
        match parse_contrasts(text, &condition_names) {
            Ok(mut parsed) => contrasts.append(&mut parsed),
            Err(error) => findings.push(Finding {
                kind: FindingKind::Setting,
                sheet: String::new(),
                cell: None,
                found: text.clone(),
                action: "the contrast was left out".into(),
                message: error.to_string(),
            }),
        }
    }
    let mut responses = Vec::new();
    for (response_index, response) in table.responses.iter().enumerate() {
        if cancel.is_cancelled() {
            return Err(ServiceError::Cancelled);
        }
        // Conditions with fewer than two usable values are reported here, per response.
        let mut counts = vec![0usize; condition_names.len()];
        let mut first_record: Vec<Option<usize>> = vec![None; condition_names.len()];
        for (record, (&group, value)) in groups.iter().zip(&response.values).enumerate() {
            if value.is_finite() {
                counts[group as usize] += 1;
                first_record[group as usize].get_or_insert(record);
            }
        }
        for (condition, &count) in counts.iter().enumerate() {
            if count < 2 {
                let cell = first_record[condition].map(|record| table.value_cell(response_index, record).a1());
                let (action, detail) = if count == 0 {
                    ("the condition was left out of this response", "has no usable value")
                } else {
                    (
                        "kept; it adds no within-condition degrees of freedom",
                        "has only one value",
                    )
                };
                findings.push(Finding {
                    kind: FindingKind::TooFewValues,
                    sheet: table.sheet.clone(),
                    cell,
                    found: format!("{count} value(s)"),
                    action: action.into(),
                    message: format!(
                        "condition '{}' {detail} for '{}'; its spread cannot be judged on its own",
                        condition_names[condition], response.name
                    ),
                });
            }
        }
        let with_values = counts.iter().filter(|&&count| count > 0).count();
        let outcome = if with_values > MAX_CONDITIONS {
            ResponseOutcome::NotAnalysed {
                reason: format!(
                    "'{}' has {with_values} conditions with values in sheet '{}' ({}), more than the {MAX_CONDITIONS} that are compared pair by pair; check that the table was read in the right layout or choose the columns to use",
                    response.name,
                    table.sheet,
                    table.area.a1()
                ),
            }
        } else {
            match fit_one_way(&condition_names, &groups, &response.values, confidence, &contrasts) {
                Ok(fit) => ResponseOutcome::Analysed { one_way: Box::new(fit) },
                Err(OneWayError::TooFewConditions { found }) => ResponseOutcome::NotAnalysed {
                    reason: format!(
                        "only {found} condition(s) have values for '{}'; at least two are needed",
                        response.name
                    ),
                },
                Err(error) => ResponseOutcome::NotAnalysed {
                    reason: error.to_string(),
                },
            }
        };
        let assessment = match &outcome {
            ResponseOutcome::Analysed { one_way } => {
                let assessment_started = Instant::now();
                let mut assessment = assess_response(one_way, &groups, &counts, &response.values, &settings);
                timings.assessment_ms += assessment_started.elapsed().as_secs_f64() * 1e3;
                for outlier in &mut assessment.checks.outliers {
                    let cell = table.value_cell(response_index, outlier.record).a1();
                    findings.push(Finding {
                        kind: FindingKind::Analysis,
                        sheet: table.sheet.clone(),
                        cell: Some(cell.clone()),
                        found: format!("{}", outlier.value),
                        action: "kept in the analysis; flagged for checking".into(),
                        message: format!(
                            "the value {} of condition '{}' in '{}' stands out (externally studentized residual {:.2}, Bonferroni p = {:.3}); check it",
                            outlier.value, outlier.condition, response.name, outlier.studentized, outlier.p_bonferroni
                        ),
                    });
                    outlier.cell = Some(cell);
                }
                Some(Box::new(assessment))
            }
            ResponseOutcome::NotAnalysed { .. } => None,
        };
        let unit = unit_of(&response.name);
        let verdict = match &outcome {
            ResponseOutcome::Analysed { one_way } => Some(engine::analysis::verdict::read_fit(
                &response.name,
                unit.as_deref(),
                one_way,
                assessment.as_deref(),
            )),
            ResponseOutcome::NotAnalysed { .. } => None,
        };
        let factorial = factorial_of(&table, response_index, &settings);
        responses.push(ResponseResult {
            name: response.name.clone(),
            assessment,
            unit,
            verdict,
            factorial,
            condition_factor: condition_factor.clone(),
            outcome,
        });
    }
    timings.analysis_ms = started.elapsed().as_secs_f64() * 1e3;
    if responses.iter().all(|response| response.fit().is_none()) {
        let reasons = responses
            .iter()
            .map(|response| match &response.outcome {
                ResponseOutcome::NotAnalysed { reason } => reason.clone(),
                ResponseOutcome::Analysed { .. } => String::new(),
            })
            .collect::<Vec<_>>()
            .join("; ");
        return Err(ServiceError::NothingAnalysable {
            path: path.to_path_buf(),
            reasons,
            findings,
        });
    }
    Ok(WorkbookResults {
        format_version: RESULTS_FORMAT_VERSION,
        tool: TOOL_NAME,
        tool_version: TOOL_VERSION,
        created_at: now_rfc3339(),
        source,
        table: summarise_table(&table),
        settings,
        settings_sources,
        responses,
        findings,
        cautions: standard_cautions(),
        timings,
    })
}

/// The factorial analysis of one response, with the engine's record numbers
/// turned into cells.
fn factorial_of(
    table: &TrialTable,
    response_index: usize,
    settings: &Settings,
) -> Option<engine::analysis::factorial::FactorialOutcome> {
    use engine::analysis::factorial::{analyse_factorial, FactorData, FactorialData, FactorialOptions};
    let response = table.responses.get(response_index)?;
    let data = FactorialData {
        factors: table
            .factors
            .iter()
            .map(|factor| FactorData {
                name: &factor.name,
                levels: &factor.levels,
                level_of_record: &factor.level_of_record,
                is_block: factor.is_block,
            })
            .collect(),
        response_name: &response.name,
        values: &response.values,
    };
    let options = FactorialOptions {
        confidence: settings.confidence_level(),
        direction: settings.direction,
        interaction_order: settings.interaction_order,
    };
    let mut outcome = analyse_factorial(&data, &options)?;
    let place = |record: usize| format!("{}!{}", table.sheet, table.value_cell(response_index, record).a1());
    if let Some(record) = outcome.mixed_levels_record {
        outcome.notes.insert(
            0,
            format!(
                "the record at {} has some factors at their middle level and others not, so the runs are not a two-level design with centre points; the factors were analysed with all their levels",
                place(record)
            ),
        );
    }
    if let Some(largest) = outcome
        .reduced
        .as_mut()
        .and_then(|reduced| reduced.residual_check.as_mut())
        .and_then(|check| check.largest.as_mut())
    {
        largest.cell = Some(place(largest.record));
    }
    Some(outcome)
}

/// Builds the per-condition values (in record order, with their records)
/// that the comparisons and checks need, and runs them.
fn assess_response(
    fit: &OneWayFit,
    groups: &[u32],
    counts: &[usize],
    values: &[f64],
    settings: &Settings,
) -> engine::analysis::assessment::Assessment {
    // The fit keeps conditions with at least one value, in their original order.
    let kept: Vec<usize> = (0..counts.len()).filter(|&index| counts[index] > 0).collect();
    let mut position_of = vec![usize::MAX; counts.len()];
    for (position, &index) in kept.iter().enumerate() {
        position_of[index] = position;
    }
    let mut group_values: Vec<Vec<f64>> = kept.iter().map(|&index| Vec::with_capacity(counts[index])).collect();
    let mut group_records: Vec<Vec<usize>> = kept.iter().map(|&index| Vec::with_capacity(counts[index])).collect();
    for (record, (&group, &value)) in groups.iter().zip(values).enumerate() {
        let position = position_of[group as usize];
        if value.is_finite() && position != usize::MAX {
            group_values[position].push(value);
            group_records[position].push(record);
        }
    }
    let options = engine::analysis::assessment::AssessmentOptions {
        family_confidence: settings.family_confidence,
        direction: settings.direction,
        control: settings.control.clone(),
    };
    engine::analysis::assessment::assess(fit, &group_values, &group_records, &options)
}

/// The current time, RFC 3339 in UTC.
pub fn now_rfc3339() -> String {
    time::OffsetDateTime::now_utc()
        .format(&time::format_description::well_known::Rfc3339)
        .unwrap_or_default()
}

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

/// One thing wrong with a workbook that could not be analysed, in plain words.
#[derive(Debug, Clone, PartialEq, Serialize, serde::Deserialize)]
pub struct Problem {
    /// Where: `Sheet!B7`, a sheet, or empty for the whole file.
    pub place: String,
    /// What is wrong.
    pub what: String,
    /// How to fix it.
    pub fix: String,
}

/// Why a workbook failed, for a problems workbook and for retrying.
#[derive(Debug, Clone, PartialEq, Serialize, serde::Deserialize)]
pub struct FailureReport {
    /// The message on one line.
    pub message: String,
    /// The problems, each with its place where known.
    pub problems: Vec<Problem>,
    /// True when the bytes look cut short or unreadable in a way that a
    /// file still being copied also shows: worth trying again once the file
    /// has settled.
    pub maybe_incomplete: bool,
}

/// An error and all its sources on one line, joined by ": ".
pub fn error_chain(error: &dyn std::error::Error) -> String {
    let mut text = error.to_string();
    let mut source = error.source();
    while let Some(cause) = source {
        let cause_text = cause.to_string();
        if !text.contains(&cause_text) {
            text.push_str(": ");
            text.push_str(&cause_text);
        }
        source = cause.source();
    }
    text
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

/// Describes a failure in plain words, with places and fixes.
pub fn describe_failure(error: &ServiceError) -> FailureReport {
    let message = error_chain(error);
    let whole = |what: String, fix: &str| Problem {
        place: String::new(),
        what,
        fix: fix.to_string(),
    };
    let (problems, maybe_incomplete) = match error {
        ServiceError::Read(read) => match read {
            ReadError::Io { .. } => (
                vec![whole(message.clone(), "Check that the file is still there and can be opened; copy it again if it was being copied.")],
                true,
            ),
            ReadError::NotAWorkbook { detail, .. } => (
                vec![whole(
                    format!("the file is not a workbook that can be read ({detail})"),
                    "Open it in your spreadsheet program and save it again as an .xlsx workbook; if it came by e-mail or a download, fetch it again.",
                )],
                true,
            ),
            ReadError::Corrupt { detail, .. } => (
                vec![whole(
                    format!("the file is damaged or cut short ({detail})"),
                    "Copy the file again from where it was made, or open it in your spreadsheet program and save a fresh copy.",
                )],
                true,
            ),
            ReadError::PasswordProtected { .. } => (
                vec![whole(
                    "the workbook is protected by a password".into(),
                    "Save a copy without a password and drop that copy in the folder.",
                )],
                false,
            ),
            ReadError::TooLarge { what, limit, .. } => (
                vec![whole(
                    format!("the file was refused as unsafe to read: {what} (the limit is {limit})"),
                    "Copy the trial table alone into a new workbook and save that; very large used areas often come from formatting applied to whole columns.",
                )],
                false,
            ),
            ReadError::TooManyCells { sheet, limit, .. } => (
                vec![Problem {
                    place: sheet.clone(),
                    what: format!("the sheet has more than {limit} non-empty cells"),
                    fix: "Copy the trial table alone into a new workbook and save that.".into(),
                }],
                false,
            ),
            ReadError::SheetNotFound { sheet, available, .. } => (
                vec![whole(
                    format!("there is no sheet named '{sheet}' (the sheets are: {available})"),
                    "Correct the sheet name in the settings (the trialyst settings sheet, the folder's trialyst.toml or the command line).",
                )],
                false,
            ),
            ReadError::BadReference { reference, .. } => (
                vec![whole(
                    format!("'{reference}' is not a range, defined name or table of this workbook"),
                    "Give the table's cells as an A1 range such as B2:D40, or the name of a defined name or table in the workbook.",
                )],
                false,
            ),
            _ => (vec![whole(message.clone(), "Open the workbook and save a fresh copy.")], false),
        },
        ServiceError::NoTable { reasons, .. } => (
            sheet_reasons(reasons)
                .into_iter()
                .map(|reason| {
                    let place = reason
                        .strip_prefix("sheet '")
                        .and_then(|rest| rest.split_once('\''))
                        .map(|(sheet, _)| sheet.to_string())
                        .unwrap_or_default();
                    Problem {
                        place,
                        what: reason,
                        fix: "Put the trial table on one sheet with a single header row: a column naming the condition of each run and at least one column of measured numbers (or one column per condition). To point at it, add a 'trialyst settings' sheet with 'sheet' or 'range'.".into(),
                    }
                })
                .collect(),
            false,
        ),
        ServiceError::NothingAnalysable { reasons, findings, .. } => {
            let mut problems = vec![Problem {
                place: String::new(),
                what: reasons.clone(),
                fix: "Each response needs numbers for at least two conditions, with at least one condition holding two or more values.".into(),
            }];
            problems.extend(findings.iter().map(|finding| Problem {
                place: finding.place(),
                what: finding.message.clone(),
                fix: format!("Correct the cell if it is a typing slip (what was done: {}).", finding.action),
            }));
            (problems, false)
        }
        ServiceError::Settings(text) => (
            vec![whole(text.clone(), "Correct the setting named in the message.")],
            false,
        ),
        ServiceError::Write(_) => (
            vec![whole(message.clone(), "Check that the output folder exists and can be written to.")],
            false,
        ),
        ServiceError::Cancelled => (vec![whole("the analysis was stopped".into(), "Nothing to fix.")], false),
    };
    FailureReport {
        message,
        problems,
        maybe_incomplete,
    }
}

/// Splits the joined reasons of a failed table search into one per sheet
/// (a sheet's own reason may hold "; " too).
fn sheet_reasons(reasons: &str) -> Vec<String> {
    let mut out: Vec<String> = Vec::new();
    for piece in reasons.split("; ").filter(|piece| !piece.is_empty()) {
        match out.last_mut() {
            Some(last) if !piece.starts_with("sheet '") => {
                last.push_str("; ");
                last.push_str(piece);
            }
            _ => out.push(piece.to_string()),
        }
    }
    out
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

/// The folder for results given on the command line, else the `output
/// folder` setting in force (relative to the workbook's folder), else none.
pub fn output_folder_for(source: &Path, command_line: Option<&Path>, settings: &Settings) -> Option<PathBuf> {
    if let Some(folder) = command_line {
        return Some(folder.to_path_buf());
    }
    let configured = settings.out_dir.as_ref()?;
    let path = PathBuf::from(configured);
    if path.is_absolute() {
        Some(path)
    } else {
        Some(source.parent().map(Path::to_path_buf).unwrap_or_default().join(path))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn failures_are_described_with_their_places() {
        let error = ServiceError::NoTable {
            path: PathBuf::from("w.xlsx"),
            reasons: "sheet 'Notes': no trial table found; looked for a header row; sheet 'Runs': no column headed 'Gloss' in the header row 1 (headers: Oven, Haze)".into(),
        };
        let report = describe_failure(&error);
        assert_eq!(report.problems.len(), 2, "{report:?}");
        assert_eq!(report.problems[0].place, "Notes");
        assert!(report.problems[0].what.ends_with("looked for a header row"));
        assert_eq!(report.problems[1].place, "Runs");
        assert!(!report.maybe_incomplete);
        let error = ServiceError::NothingAnalysable {
            path: PathBuf::from("w.xlsx"),
            reasons: "only 1 condition(s) have values for 'Gloss'; at least two are needed".into(),
            findings: vec![Finding {
                kind: FindingKind::TextInNumbers,
                sheet: "Runs".into(),
                cell: Some("B3".into()),
                found: "n/a".into(),
                action: "left out".into(),
                message: "the cell holds text where a number belongs".into(),
            }],
        };
        let report = describe_failure(&error);
        assert_eq!(report.problems.len(), 2);
        assert_eq!(report.problems[1].place, "Runs!B3");
    }

    #[test]
    fn units_and_names() {
        assert_eq!(unit_of("Thickness (mm)"), Some("mm".into()));
        assert_eq!(unit_of("Yield [%]"), Some("%".into()));
        assert_eq!(unit_of("Yield"), None);
        assert!(is_ignored_file_name("~$week.xlsx"));
        assert!(is_ignored_file_name(".~lock.week.xlsx#"));
        assert!(is_ignored_file_name("week.results.xlsx"));
        assert!(!is_ignored_file_name("week.xlsx"));
        assert_eq!(
            results_path_for(Path::new("a/b/week 3.xlsx"), None),
            PathBuf::from("a/b/week 3.results.xlsx")
        );
    }
}
