//! Helpers shared by the integration tests: temporary folders, workbooks
//! written for a test, running the built `trialyst` binary with a full
//! account on failure, reading results workbooks back, and the tolerances.

pub mod blessing;
pub mod corpus;
pub mod print_check;
pub mod shapes;

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

use calamine::{Data, Reader};
use sha2::{Digest, Sha256};

/// Relative tolerance for numbers printed by the engine and compared with a
/// reference library run (the engine's own arithmetic is far better; this
/// leaves room for the reference's float rounding).
pub const REFERENCE_RELATIVE: f64 = 1e-12;

/// Least acceptable log relative error (correct digits) for NIST StRD
/// certified values (statrs and the NIST pages use the same measure).
pub const NIST_MIN_DIGITS: f64 = 13.0;

/// A fresh temporary folder, removed when dropped.
pub fn temp_folder() -> tempfile::TempDir {
    tempfile::Builder::new()
        .prefix("trialyst-test-")
        .tempdir()
        .expect("a temporary folder can be made")
}

/// The `trialyst` program under test: `sidecar/src/main.rs`, built by cargo
/// as this package's `trialyst-under-test` binary before these tests run.
pub fn trialyst_path() -> PathBuf {
    PathBuf::from(env!("CARGO_BIN_EXE_trialyst-under-test"))
}

/// The outcome of one run of the binary, with what is needed to explain a failure.
pub struct Run {
    /// The command line, for messages.
    pub command: String,
    /// The folder it ran in.
    pub folder: PathBuf,
    /// What the process returned.
    pub output: Output,
}

impl Run {
    /// Exit code (-1 when killed by a signal).
    pub fn code(&self) -> i32 {
        self.output.status.code().unwrap_or(-1)
    }

    /// Standard output as text.
    pub fn stdout(&self) -> String {
        String::from_utf8_lossy(&self.output.stdout).into_owned()
    }

    /// Standard error as text.
    pub fn stderr(&self) -> String {
        String::from_utf8_lossy(&self.output.stderr).into_owned()
    }

    /// Everything about the run, for an assertion message.
    pub fn report(&self) -> String {
        let mut listing: Vec<String> = std::fs::read_dir(&self.folder)
            .map(|entries| {
                entries
                    .filter_map(Result::ok)
                    .map(|entry| entry.file_name().to_string_lossy().into_owned())
                    .collect()
            })
            .unwrap_or_default();
        listing.sort();
        format!(
            "\ncommand: {}\nfolder: {}\nfiles: {:?}\nstatus: {}\n--- stdout\n{}\n--- stderr\n{}\n",
            self.command,
            self.folder.display(),
            listing,
            self.output.status,
            self.stdout(),
            self.stderr()
        )
    }

    /// Asserts the exit code, printing the whole run when it differs.
    pub fn expect_code(&self, expected: i32) -> &Self {
        assert_eq!(self.code(), expected, "unexpected exit code{}", self.report());
        self
    }
}

/// The environment variable naming a folder that collects every workbook
/// the program writes during the tests (results, plans, problems, roll-ups),
/// for checking them in a spreadsheet application (tests/render/check-in-office.sh).
pub const KEEP_OUTPUTS_VAR: &str = "TRIALYST_KEEP_OUTPUTS";

/// Copies a workbook the program wrote into the folder named by
/// [`KEEP_OUTPUTS_VAR`], under a name made unique by the test's name and a
/// counter. Does nothing when the variable is unset or the file is missing.
pub fn keep_output(path: &Path) {
    use std::sync::atomic::{AtomicUsize, Ordering};
    static COUNTER: AtomicUsize = AtomicUsize::new(0);
    let Some(folder) = std::env::var_os(KEEP_OUTPUTS_VAR).filter(|value| !value.is_empty()) else {
        return;
    };
    if !path.is_file() {
        return;
    }
    let folder = PathBuf::from(folder);
    std::fs::create_dir_all(&folder).expect("the keep-outputs folder can be made");
    let test_name: String = std::thread::current()
        .name()
        .unwrap_or("test")
        .chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || c == '-' || c == '_' {
                c
            } else {
                '_'
            }
        })
        .collect();
    let file_name = path
        .file_name()
        .map(|name| name.to_string_lossy().into_owned())
        .unwrap_or_default();
    let number = COUNTER.fetch_add(1, Ordering::Relaxed);
    let target = folder.join(format!("{test_name}-{}-{number:03}-{file_name}", std::process::id()));
    std::fs::copy(path, &target).expect("a kept output can be copied");
}

/// The workbooks in a folder with their modification times, taken before a
/// run so that [`keep_new_outputs`] can tell what the run wrote.
pub fn workbook_snapshot(folder: &Path) -> Vec<(PathBuf, Option<std::time::SystemTime>)> {
    if std::env::var_os(KEEP_OUTPUTS_VAR).is_none() {
        return Vec::new();
    }
    std::fs::read_dir(folder)
        .map(|entries| {
            entries
                .filter_map(Result::ok)
                .map(|entry| entry.path())
                .filter(|path| path.extension().is_some_and(|ext| ext.eq_ignore_ascii_case("xlsx")))
                .map(|path| {
                    let modified = std::fs::metadata(&path).and_then(|meta| meta.modified()).ok();
                    (path, modified)
                })
                .collect()
        })
        .unwrap_or_default()
}

/// Keeps (see [`keep_output`]) every workbook in `folder` that is new or
/// changed since `before`: the program never writes its input, so these are
/// the workbooks it produced.
pub fn keep_new_outputs(folder: &Path, before: &[(PathBuf, Option<std::time::SystemTime>)]) {
    if std::env::var_os(KEEP_OUTPUTS_VAR).is_none() {
        return;
    }
    for (path, modified) in workbook_snapshot(folder) {
        let unchanged = before
            .iter()
            .any(|(old_path, old_modified)| *old_path == path && *old_modified == modified);
        let is_lock_or_temp = path
            .file_name()
            .is_some_and(|name| name.to_string_lossy().starts_with(['~', '.']));
        if !unchanged && !is_lock_or_temp {
            keep_output(&path);
        }
    }
}

/// Runs `trialyst` with the arguments in `folder`.
pub fn trialyst(folder: &Path, args: &[&str]) -> Run {
    let binary = trialyst_path();
    assert!(
        binary.is_file(),
        "the program under test is missing at {}; `cargo test -p tests` builds it",
        binary.display()
    );
    let before = workbook_snapshot(folder);
    let results_before = results_workbooks_under(folder);
    let written_before = our_workbooks_under(folder);
    let output = Command::new(&binary)
        .args(args)
        .current_dir(folder)
        .output()
        .expect("the trialyst binary can be started");
    keep_new_outputs(folder, &before);
    for (path, modified) in results_workbooks_under(folder) {
        if !results_before.contains(&(path.clone(), modified)) {
            check_named_sheets_exist(&path);
        }
    }
    // Every workbook the run wrote prints well (checked on the xlsx itself).
    for (path, modified) in our_workbooks_under(folder) {
        if !written_before.contains(&(path.clone(), modified)) {
            print_check::assert_prints_well(&path);
        }
    }
    Run {
        command: format!("trialyst {}", args.join(" ")),
        folder: folder.to_path_buf(),
        output,
    }
}

/// SHA-256 of a file's bytes, hex.
pub fn sha256_of(path: &Path) -> String {
    let bytes = std::fs::read(path).expect("the file can be read");
    Sha256::digest(&bytes)
        .iter()
        .map(|byte| format!("{byte:02x}"))
        .collect()
}

/// One cell to write into a test workbook.
#[derive(Debug, Clone)]
pub enum Put {
    /// Text.
    Text(&'static str),
    /// An owned text.
    Owned(String),
    /// A number.
    Number(f64),
    /// Nothing.
    Blank,
}

/// Writes a workbook with one sheet from rows of cells, the first row being the header.
pub fn write_rows(path: &Path, sheet_name: &str, rows: &[Vec<Put>]) {
    let mut book = rust_xlsxwriter::Workbook::new();
    let sheet = book.add_worksheet();
    sheet.set_name(sheet_name).expect("valid sheet name");
    put_rows(sheet, rows);
    book.save(path).expect("the test workbook can be saved");
}

/// Writes rows of cells into a worksheet from A1.
pub fn put_rows(sheet: &mut rust_xlsxwriter::Worksheet, rows: &[Vec<Put>]) {
    for (row_index, row) in rows.iter().enumerate() {
        for (col_index, cell) in row.iter().enumerate() {
            let (row_number, col_number) = (row_index as u32, col_index as u16);
            match cell {
                Put::Text(text) => {
                    sheet.write_string(row_number, col_number, *text).expect("writable");
                }
                Put::Owned(text) => {
                    sheet.write_string(row_number, col_number, text).expect("writable");
                }
                Put::Number(number) => {
                    sheet.write_number(row_number, col_number, *number).expect("writable");
                }
                Put::Blank => {}
            }
        }
    }
}

/// A long-layout table: header row, then one row per value.
pub fn long_rows(factor: &'static str, response: &'static str, groups: &[(&'static str, &[f64])]) -> Vec<Vec<Put>> {
    let mut rows = vec![vec![Put::Text(factor), Put::Text(response)]];
    for (label, values) in groups {
        for value in *values {
            rows.push(vec![Put::Text(label), Put::Number(*value)]);
        }
    }
    rows
}

/// Every sheet of a workbook read with calamine, as ranges.
pub fn read_all_sheets(path: &Path) -> Vec<(String, calamine::Range<Data>)> {
    let mut book = calamine::open_workbook_auto(path).expect("the results workbook opens");
    let names = book.sheet_names().to_vec();
    names
        .into_iter()
        .map(|name| {
            let range = book.worksheet_range(&name).expect("the sheet reads");
            (name, range)
        })
        .collect()
}

/// The row of a sheet whose first cell is `label`, below the row that starts with `after`.
pub fn row_after<'r>(range: &'r calamine::Range<Data>, after: &str, label: &str) -> Option<Vec<&'r Data>> {
    let mut seen_after = false;
    for row in range.rows() {
        let first = row.first().map(|cell| cell.to_string()).unwrap_or_default();
        if first == after {
            seen_after = true;
        }
        if seen_after && first == label {
            return Some(row.iter().collect());
        }
    }
    None
}

/// A cell as a number, or a test failure naming it.
pub fn as_number(data: &Data, what: &str) -> f64 {
    match data {
        Data::Float(number) => *number,
        Data::Int(number) => *number as f64,
        other => panic!("{what}: expected a number, found {other:?}"),
    }
}

/// Relative difference, with the reference as the scale.
pub fn relative_error(value: f64, reference: f64) -> f64 {
    if reference == 0.0 {
        value.abs()
    } else {
        ((value - reference) / reference).abs()
    }
}

/// Asserts that `value` agrees with `reference` to `tolerance` relatively.
pub fn assert_close(value: f64, reference: f64, tolerance: f64, what: &str) {
    assert!(
        relative_error(value, reference) <= tolerance,
        "{what}: got {value:e}, reference {reference:e} (relative error {:e} > {tolerance:e})",
        relative_error(value, reference)
    );
}

/// Log relative error: the number of correct significant digits, capped at 15
/// as the NIST StRD pages do.
pub fn correct_digits(value: f64, certified: f64) -> f64 {
    if value == certified {
        return 15.0;
    }
    let error = relative_error(value, certified);
    if error == 0.0 {
        15.0
    } else {
        (-error.log10()).min(15.0)
    }
}

/// The text of a zip entry of an xlsx file.
pub fn zip_entry_text(path: &Path, name: &str) -> String {
    use std::io::Read;
    let file = std::fs::File::open(path).expect("the workbook opens");
    let mut archive = zip::ZipArchive::new(file).expect("a zip archive");
    let mut entry = archive.by_name(name).expect("the entry exists");
    let mut text = String::new();
    entry.read_to_string(&mut text).expect("the entry is text");
    text
}

/// Zip entry names of an xlsx file.
pub fn zip_entry_names(path: &Path) -> Vec<String> {
    let file = std::fs::File::open(path).expect("the workbook opens");
    let archive = zip::ZipArchive::new(file).expect("a zip archive");
    archive
        .file_names()
        .filter_map(Result::ok)
        .map(|name| name.into_owned())
        .collect()
}

/// Every results workbook (name ending in `.results.xlsx`) in `folder` and
/// its sub-folders a few levels down, with its modification time, so that
/// [`trialyst`] can check each one a run writes.
pub fn results_workbooks_under(folder: &Path) -> Vec<(PathBuf, Option<std::time::SystemTime>)> {
    our_workbooks_under(folder)
        .into_iter()
        .filter(|(path, _)| {
            path.file_name()
                .is_some_and(|name| name.to_string_lossy().ends_with(service::RESULTS_SUFFIX))
        })
        .collect()
}

/// Every xlsx under `folder` (three levels down) that is not a lock or temporary file,
/// with its modification time: after a run, the new or changed ones are the program's.
pub fn our_workbooks_under(folder: &Path) -> Vec<(PathBuf, Option<std::time::SystemTime>)> {
    fn walk(folder: &Path, depth: u32, found: &mut Vec<(PathBuf, Option<std::time::SystemTime>)>) {
        let Ok(entries) = std::fs::read_dir(folder) else {
            return;
        };
        for entry in entries.filter_map(Result::ok) {
            let path = entry.path();
            let name = entry.file_name().to_string_lossy().into_owned();
            if path.is_dir() && depth > 0 {
                walk(&path, depth - 1, found);
            } else if name.ends_with(".xlsx") && !name.starts_with(['~', '.']) {
                let modified = std::fs::metadata(&path).and_then(|meta| meta.modified()).ok();
                found.push((path, modified));
            }
        }
    }
    let mut found = Vec::new();
    walk(folder, 3, &mut found);
    found
}

/// Fails, naming the workbook, the cell and the sheet, when a text cell of a
/// results workbook points the reader to a sheet the workbook does not hold.
/// The hidden results-document sheet counts as held; the trial's own sheet
/// (the source, as the results document records it, quoted whole) is a
/// reference to the trial workbook, not to a results sheet; the data-problems
/// sheet speaks of the trial workbook's sheets throughout and is not read.
pub fn check_named_sheets_exist(path: &Path) {
    let sheets = read_all_sheets(path);
    let held: Vec<&str> = sheets.iter().map(|(name, _)| name.as_str()).collect();
    let document = service::report::document::read_results_document(path)
        .unwrap_or_else(|error| panic!("{}: the results document cannot be read: {error}", path.display()));
    let source_sheet = document["source"]["sheet"].as_str().unwrap_or_default().to_string();
    let mut missing = Vec::new();
    for (sheet, range) in &sheets {
        if sheet == service::report::names::FINDINGS || sheet == service::report::names::RESULTS_DOCUMENT {
            continue;
        }
        for (row, col, cell) in range.used_cells() {
            let Data::String(text) = cell else {
                continue;
            };
            // The trial's own sheet is taken out whole first: its name may
            // hold quotes of its own.
            let text_without_source = text.replace(&format!("'{source_sheet}'"), "''");
            for named in service::report::sheets_named_in(&text_without_source) {
                if !held.contains(&named.as_str()) && !named.is_empty() {
                    missing.push(format!(
                        "sheet '{sheet}' cell {}{} names the sheet '{named}': {text}",
                        workbook_io::column_letters(col as u32 + range.start().map_or(0, |start| start.1)),
                        row as u32 + range.start().map_or(0, |start| start.0) + 1
                    ));
                }
            }
        }
    }
    assert!(
        missing.is_empty(),
        "{}: the text names sheets the workbook does not hold (it holds {held:?}):\n{}",
        path.display(),
        missing.join("\n")
    );
}

/// The invented cure trial, a rotatable composite plan in two factors typed by hand:
/// (temperature, time, peel strength). Its reference figures (statsmodels 0.15.0,
/// numpy 2.4) are checked in the engine's `analysis::surface::reading` tests.
pub const CURE_TRIAL: [(f64, f64, f64); 13] = [
    (150.0, 30.0, 41.48),
    (140.0, 35.0, 36.73),
    (150.0, 37.1, 40.51),
    (135.9, 30.0, 35.32),
    (150.0, 30.0, 41.25),
    (140.0, 25.0, 36.32),
    (150.0, 30.0, 41.95),
    (150.0, 30.0, 41.88),
    (150.0, 22.9, 38.07),
    (160.0, 25.0, 38.76),
    (160.0, 35.0, 41.68),
    (164.1, 30.0, 40.22),
    (150.0, 30.0, 41.98),
];
