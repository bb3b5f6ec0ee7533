//! Loading a workbook and layering its settings: the request a front end
//! sends, the file's hash, the settings sheet, the table search, and
//! `inspect` (the table and findings without an analysis).
//!
//! Precedence of settings: the caller's (command line or request), then the
//! workbook's settings sheet, then the folder settings file, then the
//! built-in defaults; the results record where each came from.

use std::io::Read;
use std::path::Path;
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::Arc;
use std::time::Instant;

use sha2::{Digest, Sha256};
use workbook_io::layout::{choose_table, detect_table, Finding, FindingKind, TableRequest, TrialTable};
use workbook_io::settings::{is_settings_sheet, read_setting_rows, SETTINGS_SHEET};
use workbook_io::{open_workbook, CellRect, ReadError, ReadLimits, SheetGrid, SheetInfo, Workbook};

use crate::failure::ServiceError;
use crate::results::{FactorSummary, Inspection, SourceInfo, TableSummary, Timings};
use crate::settings::Settings;

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

/// A cancel point: [`ServiceError::Cancelled`] once stopping was asked for.
///
/// # Errors
///
/// [`ServiceError::Cancelled`] when `cancel` is set.
pub fn stop_if_cancelled(cancel: &CancelFlag) -> Result<(), ServiceError> {
    if cancel.is_cancelled() {
        Err(ServiceError::Cancelled)
    } else {
        Ok(())
    }
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
    /// How the outputs are named and where they may go.
    pub output: crate::paths::OutputRules,
    /// True when these settings are shared by several workbooks (a batch over a
    /// folder): a direction for a response that this workbook lacks is then a note
    /// on this workbook, not a mistake in the request.
    pub shared_by_several: bool,
}

impl AnalysisRequest {
    /// This request with the folder settings in force for `workbook`: the
    /// nearest `trialyst.toml` from the workbook's folder up to `root`
    /// ([`crate::folder_settings::settings_file_for`]).
    ///
    /// # Errors
    ///
    /// [`ServiceError::FolderSettings`] when the file found cannot be used.
    pub fn with_folder_settings_for(mut self, workbook: &Path, root: Option<&Path>) -> Result<Self, ServiceError> {
        self.folder_settings =
            crate::folder_settings::settings_for_workbook(workbook, root)?.map(|(_, settings)| settings);
        Ok(self)
    }
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
    let mut file = workbook_io::read::open_regular_file(path).map_err(io_error)?;
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
    let Some((sheet_name, visible)) = workbook
        .sheets()
        .iter()
        .find(|info| is_settings_sheet(&info.name))
        .map(|info| (info.name.clone(), info.visible))
    else {
        if let Some(finding) = look_alike_settings_sheet(workbook) {
            findings.push(finding);
        }
        return Settings::default();
    };
    if !visible {
        // Settings a reader of the workbook cannot see still decide where
        // results go and what is analysed: say so.
        findings.push(Finding {
            kind: FindingKind::Setting,
            sheet: sheet_name.clone(),
            cell: None,
            found: "a hidden settings sheet".into(),
            action: "its settings were applied".into(),
            message: format!(
                "the settings sheet '{sheet_name}' is hidden; its settings were applied (unhide it to see them)"
            ),
        });
    }
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

/// Sheet names people give a sheet of settings of their own accord.
const LOOK_ALIKE_SETTINGS_NAMES: &[&str] = &[
    "settings",
    "setting",
    "trial settings",
    "analysis settings",
    "setup",
    "set up",
    "options",
    "config",
    "configuration",
    "parameters",
];

/// When a workbook has no settings sheet but a sheet named like one ("Settings",
/// "Setup") whose rows use our keys, a finding says its settings were not applied and
/// how to apply them: an engineer who wrote `block | Lot` there expects it to count.
fn look_alike_settings_sheet(workbook: &mut Workbook) -> Option<Finding> {
    let name = workbook
        .sheets()
        .iter()
        .find(|info| {
            let lowered = info.name.trim().to_lowercase();
            LOOK_ALIKE_SETTINGS_NAMES.contains(&lowered.as_str())
        })?
        .name
        .clone();
    let grid = workbook.read_sheet(&name, None).ok()?;
    let rows = read_setting_rows(&grid);
    let ours: Vec<&workbook_io::settings::SettingRow> = rows
        .iter()
        .filter(|row| {
            let (_, errors) = Settings::from_pairs_lenient([(row.key.as_str(), row.value.as_str(), String::new())]);
            !errors
                .iter()
                .any(|error| matches!(error, crate::settings::SettingsError::UnknownKey { .. }))
        })
        .collect();
    let first = ours.first()?;
    let keys: Vec<String> = ours.iter().map(|row| format!("'{}'", row.key)).collect();
    Some(Finding {
        kind: FindingKind::Setting,
        sheet: name.clone(),
        cell: Some(first.cell.clone()),
        found: format!("settings on a sheet named '{name}'"),
        action: "not applied".into(),
        message: format!(
            "the sheet '{name}' holds rows that look like trialyst settings ({}), but only a sheet named '{SETTINGS_SHEET}' is read, so they were not applied; rename the sheet to '{SETTINGS_SHEET}' to apply them",
            keys.join(", ")
        ),
    })
}

pub(crate) fn summarise_table(table: &TrialTable) -> TableSummary {
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
        choices: table.choices.clone(),
    }
}

/// The workbook, its table and the layered settings: what both inspect and analyse need.
pub(crate) struct Loaded {
    pub(crate) source: SourceInfo,
    pub(crate) sheets: Vec<SheetInfo>,
    pub(crate) table: TrialTable,
    pub(crate) settings: Settings,
    pub(crate) settings_sources: Vec<(String, String)>,
    /// The responses named by directions in the request itself (command line or
    /// protocol): one naming no response is a mistake in the request.
    pub(crate) requested_directions: Vec<String>,
    pub(crate) findings: Vec<Finding>,
    pub(crate) timings: Timings,
}

pub(crate) fn table_request(settings: &Settings, range: Option<CellRect>) -> TableRequest {
    TableRequest {
        range,
        factors: settings.factors.clone(),
        responses: settings.responses.clone(),
        blocks: settings.blocks.clone(),
        layout: settings.layout,
        wide_response_name: settings.value_name.clone(),
    }
}

pub(crate) fn settings_sources(command: &Settings, sheet: &Settings, folder: &Settings) -> Vec<(String, String)> {
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
    let mut direction_for_all_above = false;
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
        // A response's own direction stands unless a source above set one for every response.
        if !direction_for_all_above {
            for entry in &settings.response_directions {
                let key = format!("direction for '{}'", entry.response);
                if !sources.iter().any(|(existing, _)| existing.eq_ignore_ascii_case(&key)) {
                    sources.push((key, origin.to_string()));
                }
            }
        }
        direction_for_all_above |= settings.direction.is_some();
        for entry in &settings.goals {
            let key = format!("goal for '{}'", entry.response);
            if !sources.iter().any(|(existing, _)| existing.eq_ignore_ascii_case(&key)) {
                sources.push((key, origin.to_string()));
            }
        }
    }
    if !sources.iter().any(|(key, _)| key == "confidence") {
        sources.push(("confidence".into(), "built-in default (0.95)".into()));
    }
    sources
}

pub(crate) fn load(path: &Path, request: &AnalysisRequest) -> Result<Loaded, ServiceError> {
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
    stop_if_cancelled(&request.cancel)?;
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
    let mut found_tables: Vec<TrialTable> = Vec::new();
    let mut read_total = 0.0;
    let mut layout_total = 0.0;
    for sheet in &candidates {
        if request.cancel.is_cancelled() {
            return Err(ServiceError::Cancelled);
        }
        let read_started = Instant::now();
        let grid: SheetGrid = workbook.read_sheet(sheet, range)?;
        read_total += read_started.elapsed().as_secs_f64() * 1e3;
        stop_if_cancelled(&request.cancel)?;
        let layout_started = Instant::now();
        let detected = detect_table(&grid, &table_request);
        layout_total += layout_started.elapsed().as_secs_f64() * 1e3;
        stop_if_cancelled(&request.cancel)?;
        match detected {
            Ok(table) => {
                found_tables.push(table);
                // The sheet the user chose is the only one looked at.
                if wanted_sheet.is_some() {
                    break;
                }
            }
            Err(error) => {
                // A named column missing from the sheet the user chose is final.
                if wanted_sheet.is_some() {
                    return Err(ServiceError::NoTable {
                        path: path.to_path_buf(),
                        reasons: error.to_string(),
                    });
                }
                // The failure already says "no trial table found"; each sheet's reason
                // says only what was looked for there.
                reasons.push(
                    error
                        .to_string()
                        .replacen(": no trial table found; looked for ", ": looked for ", 1),
                );
            }
        }
    }
    let _ = started;
    timings.read_ms = read_total;
    timings.layout_ms = layout_total;
    let Some(mut table) = choose_sheet_table(found_tables) else {
        if candidates.is_empty() {
            reasons.push("the workbook has no visible worksheet".into());
        }
        return Err(ServiceError::NoTable {
            path: path.to_path_buf(),
            reasons: reasons.join("; "),
        });
    };
    findings.append(&mut table.findings);
    stop_if_cancelled(&request.cancel)?;
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
        requested_directions: if request.shared_by_several {
            Vec::new()
        } else {
            request
                .settings
                .response_directions
                .iter()
                .map(|named| named.response.clone())
                .collect()
        },
        findings,
        timings: Timings::default(),
    })
}

/// Of the tables found on several sheets, the one that looks most like trial data (the
/// first of equals), with the choice said in its choices and as a finding naming the
/// other sheets' tables.
fn choose_sheet_table(tables: Vec<TrialTable>) -> Option<TrialTable> {
    choose_table(
        tables,
        |table| format!("'{}'!{}", table.sheet, table.area.a1()),
        "on the workbook's sheets",
        "`sheet` or `range`",
    )
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
