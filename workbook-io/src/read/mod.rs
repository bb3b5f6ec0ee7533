//! Opening workbooks and reading one sheet's used cells, safely.
//!
//! Every format calamine reads is accepted (.xlsx .xlsm .xlsb .xls .ods); the
//! real format is taken from the file's bytes, not its name. Cells are read
//! with calamine's streaming cell reader where the format has one (xlsx,
//! xlsb), so a sheet with cells at `A1` and `XFD1048576` costs two cells, not
//! the bounding box. Before calamine parses anything, [`guard`] checks the
//! container; calamine's own panics are caught and become errors.

mod guard;
mod merged;
mod sheet_xml;
#[cfg(test)]
mod sheet_xml_tests;
mod xls_cells;
#[cfg(test)]
mod xls_cells_tests;
mod xls_names;
#[cfg(test)]
mod xls_names_tests;
mod xlsb_cells;
#[cfg(test)]
mod xlsb_cells_tests;

use std::collections::HashMap;
use std::fs::File;
use std::io::BufReader;
use std::panic::{catch_unwind, AssertUnwindSafe};
use std::path::{Path, PathBuf};

use calamine::{Data, DataRef, Ods, Reader, Sheets, Xls, Xlsb, Xlsx};
use serde::Serialize;

use crate::cell::{parse_a1_range, split_sheet_reference, CellPos, CellRect, CellValue, MAX_COLS, MAX_ROWS};

/// The container formats this crate reads.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Format {
    /// Office Open XML workbook, with or without macros (.xlsx, .xlsm).
    Xlsx,
    /// Binary workbook (.xlsb).
    Xlsb,
    /// The older binary format (.xls).
    Xls,
    /// OpenDocument spreadsheet (.ods).
    Ods,
}

impl Format {
    /// The file extensions that name this format.
    pub fn extensions(self) -> &'static [&'static str] {
        match self {
            Format::Xlsx => &["xlsx", "xlsm"],
            Format::Xlsb => &["xlsb"],
            Format::Xls => &["xls"],
            Format::Ods => &["ods"],
        }
    }
}

/// Caps that keep a hostile or absurd file from exhausting the machine.
#[derive(Debug, Clone)]
pub struct ReadLimits {
    /// Largest file accepted, in bytes.
    pub max_file_bytes: u64,
    /// Largest inflated size of one zip entry.
    pub max_entry_bytes: u64,
    /// Largest inflated size of all zip entries together.
    pub max_total_bytes: u64,
    /// Most zip entries accepted.
    pub max_zip_entries: usize,
    /// Largest inflation ratio accepted for entries above `ratio_check_above_bytes`.
    pub max_compression_ratio: f64,
    /// Entries smaller than this inflated size are not ratio-checked.
    pub ratio_check_above_bytes: u64,
    /// Most non-empty cells read from one sheet.
    pub max_cells: u64,
    /// Largest rows × columns rectangle of one sheet, for the xls format,
    /// whose parser allocates the whole rectangle (declared or spanned by
    /// its cells) before handing over any cell.
    pub max_box_cells: u64,
}

impl Default for ReadLimits {
    fn default() -> Self {
        Self {
            max_file_bytes: 1 << 31,
            max_entry_bytes: 3 << 30,
            max_total_bytes: 4 << 30,
            max_zip_entries: 10_000,
            // Sheet XML of repetitive numbers deflates 20 to 60 times in
            // practice; deflate's ceiling is about 1,030, which bombs approach.
            max_compression_ratio: 400.0,
            ratio_check_above_bytes: 4 << 20,
            max_cells: 40_000_000,
            // A full xls sheet: 65,536 rows × 256 columns (IV), the format's
            // own size, so no conforming file is refused.
            max_box_cells: 65_536 * 256,
        }
    }
}

/// Why a workbook or sheet could not be read.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum ReadError {
    /// The file could not be opened or read from disk.
    #[error("cannot read '{}'", path.display())]
    Io {
        /// The file.
        path: PathBuf,
        /// The operating system's error.
        #[source]
        source: std::io::Error,
    },
    /// The bytes are not those of any supported workbook format.
    #[error("'{}' is not a workbook: {detail}", path.display())]
    NotAWorkbook {
        /// The file.
        path: PathBuf,
        /// What was found instead.
        detail: String,
    },
    /// The workbook is encrypted; it must be saved without a password first.
    #[error("'{}' is password-protected; save a copy without a password and analyse that", path.display())]
    PasswordProtected {
        /// The file.
        path: PathBuf,
    },
    /// A size, count or ratio is beyond what is accepted.
    #[error("'{}' was refused: {what} (the limit is {limit})", path.display())]
    TooLarge {
        /// The file.
        path: PathBuf,
        /// What was too large.
        what: String,
        /// The limit in force.
        limit: String,
    },
    /// The container or a part inside it is damaged.
    #[error("'{}' is damaged: {detail}", path.display())]
    Corrupt {
        /// The file.
        path: PathBuf,
        /// What the parser reported.
        detail: String,
    },
    /// The named sheet does not exist.
    #[error("'{}' has no sheet named '{sheet}' (sheets: {available})", path.display())]
    SheetNotFound {
        /// The file.
        path: PathBuf,
        /// The sheet asked for.
        sheet: String,
        /// The sheets there are, comma-separated.
        available: String,
    },
    /// A range, defined name or table name could not be resolved.
    #[error("'{}': '{reference}' is not an A1 range, a defined name or a table of this workbook", path.display())]
    BadReference {
        /// The file.
        path: PathBuf,
        /// The reference as given.
        reference: String,
    },
    /// A sheet has more non-empty cells than accepted.
    #[error("'{}': sheet '{sheet}' has more than {limit} non-empty cells", path.display())]
    TooManyCells {
        /// The file.
        path: PathBuf,
        /// The sheet.
        sheet: String,
        /// The cap in force.
        limit: u64,
    },
}

/// One sheet's used cells, sparse and in row-major order.
#[derive(Debug, Clone, Default)]
pub struct SheetGrid {
    /// The sheet's name.
    pub name: String,
    /// Non-empty cells, sorted by row then column.
    pub cells: Vec<(CellPos, CellValue)>,
    /// Distinct texts; `CellValue::Text(i)` and `Error(i)` index this.
    pub strings: Vec<String>,
    /// Merged areas of the sheet, where the format reports them.
    pub merged: Vec<CellRect>,
    /// Rows (zero-based) hidden in the sheet, in order, where the format reports them (xlsx).
    pub hidden_rows: Vec<u32>,
    /// Columns (zero-based) hidden in the sheet, in order, where the format reports them (xlsx).
    pub hidden_cols: Vec<u32>,
    /// Cells whose formula summarises other cells (AVERAGE, SUM, STDEV, MIN, MAX, MEDIAN,
    /// COUNT, SUBTOTAL and the like, outermost or inside ROUND or IFERROR), with the
    /// function's name, in row-major order; read where the sheet's formulas are read
    /// (xlsx through this crate's own reader), at most [`MAX_SUMMARY_FORMULAS`].
    pub summary_formulas: Vec<(CellPos, &'static str)>,
}

/// Most summary-formula cells kept per sheet (a bound on memory; a sheet of more
/// summaries than this has its first ones kept).
pub const MAX_SUMMARY_FORMULAS: usize = 1 << 20;

/// Functions whose formulas summarise a range rather than compute a record's value.
const SUMMARY_FUNCTIONS: &[&str] = &[
    "AVERAGE",
    "AVERAGEA",
    "AVERAGEIF",
    "AVERAGEIFS",
    "SUM",
    "SUMIF",
    "SUMIFS",
    "STDEV",
    "STDEV.S",
    "STDEV.P",
    "STDEVA",
    "STDEVP",
    "STDEVPA",
    "VAR",
    "VAR.S",
    "VAR.P",
    "VARA",
    "VARP",
    "MIN",
    "MINA",
    "MINIFS",
    "MAX",
    "MAXA",
    "MAXIFS",
    "MEDIAN",
    "MODE",
    "MODE.SNGL",
    "COUNT",
    "COUNTA",
    "COUNTIF",
    "COUNTIFS",
    "SUBTOTAL",
    "AGGREGATE",
    "GEOMEAN",
    "HARMEAN",
    "TRIMMEAN",
    "AVEDEV",
    "DEVSQ",
    "PERCENTILE",
    "PERCENTILE.INC",
    "QUARTILE",
    "QUARTILE.INC",
    "LARGE",
    "SMALL",
];

/// Functions that wrap a summary without changing what it is.
const WRAPPING_FUNCTIONS: &[&str] = &["ROUND", "ROUNDUP", "ROUNDDOWN", "IFERROR", "ABS", "FIXED"];

/// The summary function a formula's text starts with (`AVERAGE(B2:B9)`,
/// `=_xlfn.STDEV.S(C2:C9)`, `ROUND(AVERAGE(B2:B9),1)`), if any.
pub(crate) fn summary_function(formula: &[u8]) -> Option<&'static str> {
    let mut rest = formula;
    for _ in 0..3 {
        while let [first, tail @ ..] = rest {
            if first.is_ascii_whitespace() || *first == b'=' || *first == b'+' {
                rest = tail;
            } else {
                break;
            }
        }
        for prefix in [&b"_xlfn."[..], &b"_xlws."[..]] {
            if rest.len() >= prefix.len() && rest[..prefix.len()].eq_ignore_ascii_case(prefix) {
                rest = &rest[prefix.len()..];
            }
        }
        let name_len = rest
            .iter()
            .take_while(|byte| byte.is_ascii_alphanumeric() || **byte == b'.')
            .count();
        if rest.get(name_len) != Some(&b'(') || name_len == 0 {
            return None;
        }
        let name = &rest[..name_len];
        if let Some(found) = SUMMARY_FUNCTIONS
            .iter()
            .find(|function| function.as_bytes().eq_ignore_ascii_case(name))
        {
            return Some(found);
        }
        if !WRAPPING_FUNCTIONS
            .iter()
            .any(|function| function.as_bytes().eq_ignore_ascii_case(name))
        {
            return None;
        }
        rest = &rest[name_len + 1..];
    }
    None
}

impl SheetGrid {
    /// The text behind a `Text` or `Error` index.
    pub fn text(&self, index: u32) -> &str {
        self.strings.get(index as usize).map(String::as_str).unwrap_or("")
    }

    /// The value at a position, by binary search.
    pub fn get(&self, pos: CellPos) -> Option<CellValue> {
        self.cells
            .binary_search_by(|(cell_pos, _)| (cell_pos.row, cell_pos.col).cmp(&(pos.row, pos.col)))
            .ok()
            .map(|index| self.cells[index].1)
    }

    /// The value rendered as text, for messages.
    pub fn display(&self, value: CellValue) -> String {
        match value {
            CellValue::Number(number) => format!("{number}"),
            CellValue::Text(index) => self.text(index).to_string(),
            CellValue::Bool(flag) => if flag { "TRUE" } else { "FALSE" }.to_string(),
            CellValue::Date(serial) if serial.is_finite() => format!("date serial {serial}"),
            CellValue::Date(_) => "a date".to_string(),
            CellValue::Error(index) => self.text(index).to_string(),
        }
    }

    /// The bounding rectangle of the used cells, if any.
    pub fn used_rect(&self) -> Option<CellRect> {
        let first = self.cells.first()?.0;
        let last = self.cells.last()?.0;
        let min_col = self.cells.iter().map(|(pos, _)| pos.col).min()?;
        let max_col = self.cells.iter().map(|(pos, _)| pos.col).max()?;
        Some(CellRect {
            first: CellPos::new(first.row, min_col),
            last: CellPos::new(last.row, max_col),
        })
    }
}

/// Builds a [`SheetGrid`] cell by cell, interning text.
struct GridBuilder {
    grid: SheetGrid,
    interned: HashMap<String, u32>,
    window: Option<CellRect>,
    max_cells: u64,
    sorted: bool,
}

impl GridBuilder {
    fn new(name: &str, window: Option<CellRect>, max_cells: u64) -> Self {
        Self {
            grid: SheetGrid {
                name: name.to_string(),
                ..SheetGrid::default()
            },
            interned: HashMap::new(),
            window,
            max_cells,
            sorted: true,
        }
    }

    /// Room for `cells` more cells (a hint; the cell cap still applies).
    fn reserve(&mut self, cells: u64) {
        // At most 8 Mi cells (192 MB) up front; a larger sheet grows the vector as before.
        let cells = cells.min(self.max_cells.saturating_add(1)).min(1 << 23);
        self.grid.cells.reserve(cells as usize);
    }

    fn intern(&mut self, text: &str) -> u32 {
        if let Some(&index) = self.interned.get(text) {
            return index;
        }
        let index = self.grid.strings.len() as u32;
        self.grid.strings.push(text.to_string());
        self.interned.insert(text.to_string(), index);
        index
    }

    /// Adds one cell; returns false when the cap is reached.
    fn push(&mut self, row: u32, col: u32, value: CellValue) -> bool {
        let pos = CellPos::new(row, col);
        if row >= MAX_ROWS || col >= MAX_COLS {
            return true;
        }
        if let Some(window) = self.window {
            if !window.contains(pos) {
                return true;
            }
        }
        if let Some(&(last, _)) = self.grid.cells.last() {
            if (last.row, last.col) >= (row, col) {
                self.sorted = false;
            }
        }
        self.grid.cells.push((pos, value));
        (self.grid.cells.len() as u64) <= self.max_cells
    }

    fn push_data(&mut self, row: u32, col: u32, data: &DataRef<'_>) -> bool {
        let value = match data {
            DataRef::Empty => return true,
            DataRef::Int(number) => CellValue::Number(*number as f64),
            DataRef::Float(number) => CellValue::Number(*number),
            DataRef::String(text) => {
                if text.is_empty() {
                    return true;
                }
                CellValue::Text(self.intern(text))
            }
            DataRef::SharedString(text) => {
                if text.is_empty() {
                    return true;
                }
                CellValue::Text(self.intern(text))
            }
            DataRef::Bool(flag) => CellValue::Bool(*flag),
            DataRef::DateTime(date) => CellValue::Date(date.as_f64()),
            DataRef::DateTimeIso(_) | DataRef::DurationIso(_) => CellValue::Date(f64::NAN),
            DataRef::Error(error) => CellValue::Error(self.intern(&error.to_string())),
        };
        self.push(row, col, value)
    }

    /// Notes a cell whose formula summarises other cells.
    fn note_summary_formula(&mut self, row: u32, col: u32, function: &'static str) {
        let pos = CellPos::new(row, col);
        if self.grid.summary_formulas.len() >= MAX_SUMMARY_FORMULAS
            || self.window.is_some_and(|window| !window.contains(pos))
        {
            return;
        }
        self.grid.summary_formulas.push((pos, function));
    }

    fn finish(mut self) -> SheetGrid {
        if !self
            .grid
            .summary_formulas
            .windows(2)
            .all(|pair| (pair[0].0.row, pair[0].0.col) < (pair[1].0.row, pair[1].0.col))
        {
            self.grid.summary_formulas.sort_by_key(|(pos, _)| (pos.row, pos.col));
            self.grid.summary_formulas.dedup_by_key(|(pos, _)| *pos);
        }
        if !self.sorted {
            self.grid.cells.sort_by_key(|(pos, _)| (pos.row, pos.col));
            self.grid.cells.dedup_by_key(|(pos, _)| *pos);
        }
        self.grid
    }
}

fn data_to_ref(data: &Data) -> DataRef<'_> {
    match data {
        Data::Int(number) => DataRef::Int(*number),
        Data::Float(number) => DataRef::Float(*number),
        Data::String(text) => DataRef::SharedString(text),
        Data::Bool(flag) => DataRef::Bool(*flag),
        Data::DateTime(date) => DataRef::DateTime(*date),
        Data::DateTimeIso(text) => DataRef::DateTimeIso(text.clone()),
        Data::DurationIso(text) => DataRef::DurationIso(text.clone()),
        Data::Error(error) => DataRef::Error(error.clone()),
        Data::Empty => DataRef::Empty,
    }
}

/// A sheet's name and whether it is visible.
#[derive(Debug, Clone, Serialize)]
pub struct SheetInfo {
    /// The sheet's name.
    pub name: String,
    /// False for hidden and very hidden sheets.
    pub visible: bool,
}

/// An open workbook.
pub struct Workbook {
    path: PathBuf,
    format: Format,
    sheets: Vec<SheetInfo>,
    defined_names: Vec<(String, String)>,
    /// calamine's reader; None when calamine refused an xls workbook that
    /// [`xls_cells`] reads instead.
    inner: Option<Sheets<BufReader<File>>>,
    /// The tolerant xls reader, when calamine refused the workbook.
    own_xls: Option<xls_cells::XlsBook>,
    limits: ReadLimits,
    macro_enabled: bool,
    /// The direct xlsx reader's open archive and parts, kept across sheets
    /// (`Some(None)`: it declined the workbook).
    direct: Option<Option<sheet_xml::DirectBook>>,
}

impl std::fmt::Debug for Workbook {
    fn fmt(&self, formatter: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        formatter
            .debug_struct("Workbook")
            .field("path", &self.path)
            .field("format", &self.format)
            .field("sheets", &self.sheets)
            .finish()
    }
}

thread_local! {
    /// True while this thread runs the parser inside [`parse_guarded`].
    static IN_PARSER: std::cell::Cell<bool> = const { std::cell::Cell::new(false) };
}

/// Runs the parser with its panics caught. A panic there is malformed input
/// the parser did not expect; it becomes an error for the caller, so the
/// panic hook (installed once, chained to the one before it) stays silent
/// for it instead of printing a panic message to the user. Panics anywhere
/// else still reach the previous hook.
fn parse_guarded<T>(parse: impl FnOnce() -> T) -> std::thread::Result<T> {
    static INSTALL: std::sync::Once = std::sync::Once::new();
    INSTALL.call_once(|| {
        let previous = std::panic::take_hook();
        std::panic::set_hook(Box::new(move |info| {
            if !IN_PARSER.with(std::cell::Cell::get) {
                previous(info);
            }
        }));
    });
    IN_PARSER.with(|flag| flag.set(true));
    let outcome = catch_unwind(AssertUnwindSafe(parse));
    IN_PARSER.with(|flag| flag.set(false));
    outcome
}

fn panic_text(payload: Box<dyn std::any::Any + Send>) -> String {
    let detail = if let Some(text) = payload.downcast_ref::<&str>() {
        (*text).to_string()
    } else if let Some(text) = payload.downcast_ref::<String>() {
        text.clone()
    } else {
        "no detail".to_string()
    };
    format!("the parser stopped on data it could not make sense of ({detail})")
}

/// Opens `path` for reading only if it is a regular file (after following
/// links). A FIFO, device or socket is refused before a byte is read: on
/// Unix the file is opened with `O_NONBLOCK`, so opening a FIFO that no one
/// writes to does not wait, and the opened handle is checked with `fstat`
/// (the check and the read use the same file, so a swap in between does
/// not help).
///
/// # Errors
///
/// The operating system's error, or `InvalidInput` naming what the file is.
pub fn open_regular_file(path: &Path) -> std::io::Result<File> {
    let mut options = std::fs::OpenOptions::new();
    options.read(true);
    #[cfg(unix)]
    {
        use std::os::unix::fs::OpenOptionsExt;
        options.custom_flags(libc::O_NONBLOCK);
    }
    let file = options.open(path)?;
    let file_type = file.metadata()?.file_type();
    if !file_type.is_file() {
        return Err(std::io::Error::new(
            std::io::ErrorKind::InvalidInput,
            format!("it is not a regular file ({})", describe_file_type(file_type)),
        ));
    }
    Ok(file)
}

/// Plain words for a file type that is not a regular file.
pub(crate) fn describe_file_type(file_type: std::fs::FileType) -> &'static str {
    #[cfg(unix)]
    {
        use std::os::unix::fs::FileTypeExt;
        if file_type.is_fifo() {
            return "a named pipe";
        }
        if file_type.is_socket() {
            return "a socket";
        }
        if file_type.is_char_device() || file_type.is_block_device() {
            return "a device";
        }
    }
    if file_type.is_dir() {
        "a folder"
    } else {
        "not a plain file"
    }
}

/// Opens a workbook for reading, after checking its container.
///
/// The file is opened read-only and closed when the [`Workbook`] is dropped;
/// nothing is ever written to it.
///
/// # Errors
///
/// Any [`ReadError`]: the file is missing, not a workbook, encrypted, a
/// container bomb, or damaged.
pub fn open_workbook(path: &Path, limits: &ReadLimits) -> Result<Workbook, ReadError> {
    let container = guard::inspect(path, limits)?;
    let file = open_regular_file(path).map_err(|source| ReadError::Io {
        path: path.to_path_buf(),
        source,
    })?;
    let reader = BufReader::new(file);
    let corrupt = |detail: String| ReadError::Corrupt {
        path: path.to_path_buf(),
        detail,
    };
    let opened = parse_guarded(|| -> Result<Sheets<BufReader<File>>, String> {
        Ok(match container.format {
            Format::Xlsx => Sheets::Xlsx(Xlsx::new(reader).map_err(|error| error.to_string())?),
            Format::Xlsb => Sheets::Xlsb(Xlsb::new(reader).map_err(|error| error.to_string())?),
            Format::Xls => Sheets::Xls(Xls::new(reader).map_err(|error| error.to_string())?),
            Format::Ods => Sheets::Ods(Ods::new(reader).map_err(|error| error.to_string())?),
        })
    });
    let refusal = match opened {
        Ok(Ok(inner)) if container.format == Format::Xls => {
            // calamine leaves out a shared-text cell that points past the
            // table; such a workbook is read by the tolerant reader, where
            // the cell is a finding at its address.
            match xls_cells::XlsBook::open(path, limits.max_file_bytes) {
                Ok(book) if book.has_dangling_shared_text() => return Ok(own_xls_workbook(path, book, limits)),
                _ => return Ok(workbook_of(path, &container, inner, limits)),
            }
        }
        Ok(Ok(inner)) => return Ok(workbook_of(path, &container, inner, limits)),
        Ok(Err(detail)) if detail.to_lowercase().contains("password") => {
            return Err(ReadError::PasswordProtected {
                path: path.to_path_buf(),
            })
        }
        Ok(Err(detail)) => corrupt(detail),
        Err(payload) => corrupt(panic_text(payload)),
    };
    if container.format != Format::Xls {
        return Err(refusal);
    }
    // calamine refuses an xls workbook for one cell it cannot read; the
    // tolerant reader reads it again and makes such cells findings.
    match xls_cells::XlsBook::open(path, limits.max_file_bytes) {
        Ok(book) if book.sheets.iter().any(|sheet| sheet.worksheet) => Ok(own_xls_workbook(path, book, limits)),
        Err(xls_cells::XlsRefusal::Password) => Err(ReadError::PasswordProtected {
            path: path.to_path_buf(),
        }),
        _ => Err(refusal),
    }
}

/// The [`Workbook`] over the tolerant xls reader.
fn own_xls_workbook(path: &Path, book: xls_cells::XlsBook, limits: &ReadLimits) -> Workbook {
    Workbook {
        path: path.to_path_buf(),
        format: Format::Xls,
        sheets: book
            .sheets
            .iter()
            .filter(|sheet| sheet.worksheet)
            .map(|sheet| SheetInfo {
                name: sheet.name.clone(),
                visible: sheet.visible,
            })
            .collect(),
        defined_names: book.names.clone(),
        inner: None,
        own_xls: Some(book),
        limits: limits.clone(),
        macro_enabled: false,
        direct: None,
    }
}

/// The [`Workbook`] over calamine's opened reader.
fn workbook_of(
    path: &Path,
    container: &guard::Container,
    inner: Sheets<BufReader<File>>,
    limits: &ReadLimits,
) -> Workbook {
    let sheets = inner
        .sheets_metadata()
        .iter()
        .filter(|sheet| matches!(sheet.typ, calamine::SheetType::WorkSheet))
        .map(|sheet| SheetInfo {
            name: sheet.name.clone(),
            visible: matches!(sheet.visible, calamine::SheetVisible::Visible),
        })
        .collect();
    let defined_names = inner.defined_names().to_vec();
    let macro_enabled = container.format == Format::Xlsx && {
        let mut probe = inner_vba_probe(path);
        probe.take().unwrap_or(false)
    };
    Workbook {
        path: path.to_path_buf(),
        format: container.format,
        sheets,
        defined_names,
        inner: Some(inner),
        own_xls: None,
        limits: limits.clone(),
        macro_enabled,
        direct: None,
    }
}

fn inner_vba_probe(path: &Path) -> Option<bool> {
    let file = open_regular_file(path).ok()?;
    let archive = zip::ZipArchive::new(BufReader::new(file)).ok()?;
    let has_macros = archive
        .file_names()
        .filter_map(Result::ok)
        .any(|name| name.ends_with("vbaProject.bin"));
    Some(has_macros)
}

impl Workbook {
    /// The file this workbook was read from.
    pub fn path(&self) -> &Path {
        &self.path
    }

    /// The container format found in the bytes.
    pub fn format(&self) -> Format {
        self.format
    }

    /// True when the workbook carries a macro project (never run by us).
    pub fn macro_enabled(&self) -> bool {
        self.macro_enabled
    }

    /// The worksheets, in workbook order (chart and macro sheets left out).
    pub fn sheets(&self) -> &[SheetInfo] {
        &self.sheets
    }

    /// Whether the file's extension names a different format than its bytes.
    pub fn extension_mismatch(&self) -> Option<String> {
        let extension = self.path.extension()?.to_str()?.to_ascii_lowercase();
        if self.format.extensions().contains(&extension.as_str()) {
            None
        } else {
            Some(extension)
        }
    }

    fn check_sheet(&self, sheet: &str) -> Result<(), ReadError> {
        if self.sheets.iter().any(|info| info.name == sheet) {
            Ok(())
        } else {
            Err(ReadError::SheetNotFound {
                path: self.path.clone(),
                sheet: sheet.to_string(),
                available: self
                    .sheets
                    .iter()
                    .map(|info| info.name.as_str())
                    .collect::<Vec<_>>()
                    .join(", "),
            })
        }
    }

    /// Resolves a range given as A1 text (optionally sheet-qualified), a
    /// defined name, or a worksheet table's name, to a sheet and rectangle.
    /// `default_sheet` is used for an unqualified A1 range.
    ///
    /// # Errors
    ///
    /// [`ReadError::BadReference`] when nothing matches.
    pub fn resolve_range(
        &mut self,
        reference: &str,
        default_sheet: Option<&str>,
    ) -> Result<(Option<String>, CellRect), ReadError> {
        let bad = || ReadError::BadReference {
            path: self.path.clone(),
            reference: reference.to_string(),
        };
        let (sheet, range_text) = split_sheet_reference(reference);
        if let Some(rect) = parse_a1_range(range_text) {
            return Ok((sheet.or_else(|| default_sheet.map(str::to_string)), rect));
        }
        let wanted = reference.trim();
        if let Some((_, formula)) = self
            .defined_names
            .iter()
            .find(|(name, _)| name.eq_ignore_ascii_case(wanted))
        {
            let (sheet, range_text) = split_sheet_reference(formula);
            if let Some(rect) = parse_a1_range(range_text) {
                return Ok((sheet, rect));
            }
        }
        if let Some(Sheets::Xlsx(xlsx)) = &mut self.inner {
            if let Some(found) = table_reference(&self.path, xlsx, wanted) {
                return Ok(found);
            }
        }
        Err(bad())
    }

    /// Reads the used cells of one sheet, or of a window of it.
    ///
    /// # Errors
    ///
    /// [`ReadError::SheetNotFound`], [`ReadError::TooManyCells`],
    /// [`ReadError::Corrupt`] when the sheet's part is damaged.
    pub fn read_sheet(&mut self, sheet: &str, window: Option<CellRect>) -> Result<SheetGrid, ReadError> {
        self.read_sheet_by(sheet, window, true)
    }

    /// [`Workbook::read_sheet`], with the direct xlsx reader ([`sheet_xml`])
    /// tried first when `direct` is set, else calamine's reader only.
    fn read_sheet_by(&mut self, sheet: &str, window: Option<CellRect>, direct: bool) -> Result<SheetGrid, ReadError> {
        self.check_sheet(sheet)?;
        let max_entry_bytes = self.limits.max_entry_bytes;
        let path = self.path.clone();
        let max_cells = self.limits.max_cells;
        let corrupt = |detail: String| ReadError::Corrupt {
            path: path.clone(),
            detail: format!("sheet '{sheet}': {detail}"),
        };
        let mut builder = GridBuilder::new(sheet, window, max_cells);
        let mut merged = Vec::new();
        let mut skimmed_merged: Option<Vec<CellRect>> = None;
        let mut hidden = merged::Hidden::default();
        let mut xlsb_refusal: Option<String> = None;
        let mut xlsb_source = None;
        if matches!(self.inner, Some(Sheets::Xlsb(_))) {
            // A sheet with a damaged cell record is read by the tolerant
            // reader alone: calamine would stop at it or read it wrong.
            xlsb_source = xlsb_cells::SheetSource::open(&self.path, sheet, max_entry_bytes);
            if let Some(source) = xlsb_source.as_mut() {
                if source.calamine_misreads() {
                    return if source.read(&mut builder) {
                        Ok(builder.finish())
                    } else {
                        Err(ReadError::TooManyCells {
                            path: self.path.clone(),
                            sheet: sheet.to_string(),
                            limit: max_cells,
                        })
                    };
                }
            }
        }
        if let Some(book) = &self.own_xls {
            // Our own reader: written to refuse nothing and panic on nothing,
            // so it runs unguarded (and the fuzz targets see any slip).
            let index = book.sheets.iter().position(|info| info.name == sheet && info.worksheet);
            let Some(areas) = index.and_then(|index| book.read_sheet(index, &mut builder)) else {
                return Err(ReadError::TooManyCells {
                    path: self.path.clone(),
                    sheet: sheet.to_string(),
                    limit: max_cells,
                });
            };
            let mut grid = builder.finish();
            grid.merged = areas;
            return Ok(grid);
        }
        let outcome = parse_guarded(|| -> Result<bool, String> {
            let Some(inner) = &mut self.inner else {
                return Ok(true);
            };
            match inner {
                Sheets::Xlsx(xlsx) => {
                    let book = if direct {
                        self.direct
                            .get_or_insert_with(|| sheet_xml::DirectBook::open(&path, max_entry_bytes).ok())
                            .as_mut()
                    } else {
                        None
                    };
                    if let Some(book) = book {
                        match sheet_xml::read_sheet(book, sheet, max_entry_bytes, &mut builder) {
                            Ok(fast) => {
                                skimmed_merged = Some(fast.merged);
                                hidden = fast.hidden;
                                return Ok(true);
                            }
                            Err(sheet_xml::Stop::TooManyCells) => return Ok(false),
                            Err(sheet_xml::Stop::Decline) => builder = GridBuilder::new(sheet, window, max_cells),
                        }
                    }
                    let mut reader = xlsx.worksheet_cells_reader(sheet).map_err(|error| error.to_string())?;
                    while let Some(cell) = reader.next_cell().map_err(|error| error.to_string())? {
                        let (row, col) = cell.get_position();
                        if !builder.push_data(row, col, cell.get_value()) {
                            return Ok(false);
                        }
                    }
                    drop(reader);
                    match merged::xlsx_merged_areas(&path, sheet) {
                        Some((areas, hidden_found)) => {
                            skimmed_merged = Some(areas);
                            hidden = hidden_found;
                        }
                        None => {
                            if let Ok(areas) = xlsx.merge_cells_by_sheet_name(sheet) {
                                merged = areas;
                            }
                        }
                    }
                }
                Sheets::Xlsb(xlsb) => {
                    let read = parse_guarded(|| -> Result<bool, String> {
                        let mut reader = xlsb.worksheet_cells_reader(sheet).map_err(|error| error.to_string())?;
                        while let Some(cell) = reader.next_cell().map_err(|error| error.to_string())? {
                            let (row, col) = cell.get_position();
                            if !builder.push_data(row, col, cell.get_value()) {
                                return Ok(false);
                            }
                        }
                        Ok(true)
                    });
                    match read {
                        Ok(Ok(under_cap)) => return Ok(under_cap),
                        // calamine stops the sheet at the first cell it cannot
                        // read: the tolerant reader reads it again (below).
                        Ok(Err(detail)) => xlsb_refusal = Some(detail),
                        Err(payload) => xlsb_refusal = Some(panic_text(payload)),
                    }
                }
                Sheets::Xls(xls) => {
                    let range = xls.worksheet_range(sheet).map_err(|error| error.to_string())?;
                    for (row, col, data) in range.used_cells() {
                        let (row, col) = (
                            range.start().map_or(0, |s| s.0) + row as u32,
                            range.start().map_or(0, |s| s.1) + col as u32,
                        );
                        if !builder.push_data(row, col, &data_to_ref(data)) {
                            return Ok(false);
                        }
                    }
                    if let Ok(areas) = xls.merge_cells_by_sheet_name(sheet) {
                        merged = areas;
                    }
                }
                Sheets::Ods(ods) => {
                    let range = ods.worksheet_range(sheet).map_err(|error| error.to_string())?;
                    for (row, col, data) in range.used_cells() {
                        let (row, col) = (
                            range.start().map_or(0, |s| s.0) + row as u32,
                            range.start().map_or(0, |s| s.1) + col as u32,
                        );
                        if !builder.push_data(row, col, &data_to_ref(data)) {
                            return Ok(false);
                        }
                    }
                }
            }
            Ok(true)
        });
        if let (Some(detail), Ok(Ok(true))) = (xlsb_refusal, &outcome) {
            // Our own reader, unguarded as the xls one is.
            builder = GridBuilder::new(sheet, window, max_cells);
            let Some(source) = xlsb_source.as_mut() else {
                return Err(corrupt(detail));
            };
            if !source.read(&mut builder) {
                return Err(ReadError::TooManyCells {
                    path: self.path.clone(),
                    sheet: sheet.to_string(),
                    limit: max_cells,
                });
            }
            return Ok(builder.finish());
        }
        match outcome {
            Ok(Ok(true)) => {}
            Ok(Ok(false)) => {
                return Err(ReadError::TooManyCells {
                    path: self.path.clone(),
                    sheet: sheet.to_string(),
                    limit: max_cells,
                })
            }
            Ok(Err(detail)) => return Err(corrupt(detail)),
            Err(payload) => return Err(corrupt(panic_text(payload))),
        }
        let mut grid = builder.finish();
        grid.merged = merged
            .into_iter()
            .map(|area| CellRect {
                first: CellPos::new(area.start.0, area.start.1),
                last: CellPos::new(area.end.0, area.end.1),
            })
            .collect();
        if let Some(areas) = skimmed_merged {
            grid.merged = areas;
        }
        grid.hidden_rows = hidden.rows;
        grid.hidden_cols = hidden.cols;
        Ok(grid)
    }
}

/// Finds a worksheet table by name and returns its sheet and reference.
fn table_reference(path: &Path, xlsx: &mut Xlsx<BufReader<File>>, wanted: &str) -> Option<(Option<String>, CellRect)> {
    xlsx.load_tables().ok()?;
    let sheet_names: Vec<String> = xlsx.sheet_names().to_vec();
    let owner = sheet_names.into_iter().find(|sheet| {
        xlsx.table_names_in_sheet(sheet)
            .iter()
            .any(|name| name.eq_ignore_ascii_case(wanted))
    })?;
    // The table's reference is read from its own part, without loading the sheet.
    let file = open_regular_file(path).ok()?;
    let mut archive = zip::ZipArchive::new(BufReader::new(file)).ok()?;
    let names: Vec<String> = archive
        .file_names()
        .filter_map(Result::ok)
        .filter(|name| name.starts_with("xl/tables/"))
        .map(|name| name.into_owned())
        .collect();
    for name in names {
        let mut entry = archive.by_name(&name).ok()?;
        let mut head = String::new();
        use std::io::Read;
        let _ = entry.by_ref().take(64 * 1024).read_to_string(&mut head);
        let display = guard::attribute_value(&head, "displayName").or_else(|| guard::attribute_value(&head, "name"));
        if display.is_some_and(|display| display.eq_ignore_ascii_case(wanted)) {
            let reference = guard::attribute_value(&head, "ref")?;
            return Some((Some(owner), parse_a1_range(reference)?));
        }
    }
    None
}
