//! Writing workbooks from a plain model of sheets, cells and charts.
//!
//! The caller (the report builder) describes what goes where with [`Book`];
//! this module turns it into an xlsx file with rust_xlsxwriter. Text is always
//! written as text, never as a formula, whatever it starts with. The file is
//! written to a hidden temporary name in the destination folder and renamed
//! into place, so a results file is either complete or absent.

use std::collections::HashMap;
use std::path::{Path, PathBuf};

pub mod chart_key;
pub mod print;

use rust_xlsxwriter::{
    Chart, ChartAxisLabelPosition, ChartDataLabel, ChartEmptyCells, ChartErrorBars, ChartErrorBarsType, ChartFont,
    ChartFormat, ChartLine, ChartMarker, ChartMarkerType, ChartRange, ChartSolidFill, Color, DataValidation,
    DataValidationErrorStyle, DataValidationRule, DocProperties, ExcelDateTime, Format, FormatAlign, FormatBorder,
    Formula, Image, Workbook as XlsxWorkbook, XlsxError,
};

/// The longest text a cell may hold in xlsx.
const MAX_CELL_TEXT: usize = 32_767;

/// The deflate level of the file's parts (1 fastest to 9). Compressing was the
/// largest single cost of a results workbook with many conditions (every pair's row
/// and the results document): level 2 took about a third of the time of the writer's
/// default 6, for a file about a fifth larger.
const ZIP_LEVEL: u8 = 2;

/// How a number is shown.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum NumberFormat {
    /// The application's general format.
    General,
    /// A whole number with thousands separators.
    Integer,
    /// Fixed decimals.
    Decimals(u8),
    /// A percentage with the given decimals.
    Percent(u8),
    /// A p-value: four decimals, small values in scientific notation.
    PValue,
    /// Scientific notation with the given decimals.
    Scientific(u8),
}

impl NumberFormat {
    /// The format code a spreadsheet understands, such as `0.000` or `#,##0`.
    pub fn code(self) -> String {
        match self {
            NumberFormat::General => "General".into(),
            NumberFormat::Integer => "#,##0".into(),
            NumberFormat::Decimals(0) => "0".into(),
            NumberFormat::Decimals(places) => format!("0.{}", "0".repeat(places as usize)),
            NumberFormat::Percent(0) => "0%".into(),
            NumberFormat::Percent(places) => format!("0.{}%", "0".repeat(places as usize)),
            NumberFormat::PValue => "[<0.0001]0.00E+00;0.0000".into(),
            NumberFormat::Scientific(places) => format!("0.{}E+00", "0".repeat(places.max(1) as usize)),
        }
    }
}

/// How a cell looks.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Default)]
pub enum Look {
    /// Ordinary cell.
    #[default]
    Plain,
    /// The sheet's title.
    Title,
    /// A section heading.
    Heading,
    /// A table's column header.
    ColumnHeader,
    /// An explanatory note in italics. Placed with [`Sheet::put`] it is one
    /// line that runs on across the empty cells to its right; placed with
    /// [`Sheet::paragraph`] it wraps within its column.
    Note,
    /// The caution about acting on results.
    Caution,
    /// A plain-language verdict, emphasised.
    Verdict,
    /// A key in a key/value list.
    Key,
    /// Running text, wrapped within the column.
    Paragraph,
    /// A one-line value of a table placed with [`Sheet::spaced_table`]: at the foot of a
    /// row a little taller than its text, so that it stands clear of the header's
    /// border above rather than touching it.
    Spaced,
}

/// What a cell shows for a number too large in magnitude for the arithmetic (beyond
/// about 1.8e308): the figure exists but cannot be held, so it is said in words.
pub const BEYOND_RANGE: &str = "beyond the range of the arithmetic";

/// As [`BEYOND_RANGE`], for a negative figure.
pub const BEYOND_RANGE_NEGATIVE: &str = "beyond the range of the arithmetic (negative)";

/// The words shown in place of a number that is not finite: "not defined" for a figure
/// that has no value, [`BEYOND_RANGE`] (or its negative) for one that exists but is too
/// large in magnitude for the arithmetic; never a symbol for infinity. For a finite
/// number, the empty text.
pub fn non_finite_in_words(number: f64) -> &'static str {
    if number.is_nan() {
        "not defined"
    } else if number == f64::INFINITY {
        BEYOND_RANGE
    } else if number == f64::NEG_INFINITY {
        BEYOND_RANGE_NEGATIVE
    } else {
        ""
    }
}

/// A cell's content.
#[derive(Debug, Clone, PartialEq)]
pub enum Value {
    /// Text, written as a string cell.
    Text(String),
    /// A number with its display format; non-finite numbers are written as text
    /// ("not defined", or [`BEYOND_RANGE`] in words).
    Number(f64, NumberFormat),
    /// A link to another file, with the text shown.
    Link {
        /// The target, a file path (relative to the workbook's folder, or whole) or URL.
        target: String,
        /// The text shown.
        text: String,
    },
    /// Nothing.
    Blank,
}

impl Value {
    /// Text.
    pub fn text(text: impl Into<String>) -> Self {
        Value::Text(text.into())
    }

    /// A number in the general format.
    pub fn number(value: f64) -> Self {
        Value::Number(value, NumberFormat::General)
    }

    /// A number with fixed decimals.
    pub fn decimals(value: f64, places: u8) -> Self {
        Value::Number(value, NumberFormat::Decimals(places))
    }

    /// A whole number.
    pub fn integer(value: f64) -> Self {
        Value::Number(value, NumberFormat::Integer)
    }

    /// A p-value.
    pub fn p_value(value: f64) -> Self {
        Value::Number(value, NumberFormat::PValue)
    }
}

/// One cell placed on a sheet.
#[derive(Debug, Clone, PartialEq)]
pub struct Placed {
    /// Zero-based row.
    pub row: u32,
    /// Zero-based column.
    pub col: u16,
    /// The content.
    pub value: Value,
    /// The look.
    pub look: Look,
}

/// A rectangle of cells on a named sheet, for chart data.
#[derive(Debug, Clone, PartialEq)]
pub struct SheetRange {
    /// The sheet's name.
    pub sheet: String,
    /// First row, zero-based.
    pub first_row: u32,
    /// First column.
    pub first_col: u16,
    /// Last row.
    pub last_row: u32,
    /// Last column.
    pub last_col: u16,
}

impl SheetRange {
    /// A single column range.
    pub fn column(sheet: &str, col: u16, first_row: u32, last_row: u32) -> Self {
        Self {
            sheet: sheet.to_string(),
            first_row,
            first_col: col,
            last_row,
            last_col: col,
        }
    }

    fn to_chart_range(&self) -> ChartRange {
        ChartRange::new_from_range(
            &self.sheet,
            self.first_row,
            self.first_col,
            self.last_row,
            self.last_col,
        )
    }
}

/// Chart kinds we draw.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ChartKind {
    /// Points over text categories, without joining lines (means with bars).
    Points,
    /// Points over text categories, joined by lines (interaction plots).
    Lines,
    /// Points at numeric x and y (residual plots, probability plots).
    Scatter,
    /// Columns over categories (counts, verdict tallies).
    Columns,
}

/// One series of a chart.
#[derive(Debug, Clone, PartialEq)]
pub struct Series {
    /// The legend name.
    pub name: String,
    /// Category labels (or x values for a scatter chart).
    pub categories: SheetRange,
    /// The plotted values.
    pub values: SheetRange,
    /// Upward half-widths of interval bars, if any.
    pub bar_plus: Option<SheetRange>,
    /// Downward half-widths of interval bars, if any.
    pub bar_minus: Option<SheetRange>,
    /// Text labels shown beside the points, one cell per point, if any.
    pub labels: Option<SheetRange>,
}

/// A chart placed on a sheet.
#[derive(Debug, Clone, PartialEq)]
pub struct ChartSpec {
    /// The kind.
    pub kind: ChartKind,
    /// The title shown above the chart.
    pub title: String,
    /// The horizontal axis title.
    pub x_title: String,
    /// The vertical axis title.
    pub y_title: String,
    /// The series.
    pub series: Vec<Series>,
    /// Top-left cell (row, column) where the chart is placed.
    pub anchor: (u32, u16),
    /// Width and height in pixels.
    pub size: (u32, u32),
    /// Bounds the value axis never passes, whatever the data (a probability stays
    /// within 0 and 1); `None` lets the axis follow the data.
    pub value_limits: Option<(f64, f64)>,
}

/// A picture (a PNG image made by the caller) placed on a sheet. Pictures count in the
/// print plan like charts (see [`print`]): the caller sizes and places them so that no
/// cell with content lies beneath.
#[derive(Debug, Clone, PartialEq)]
pub struct Picture {
    /// The PNG file's bytes.
    pub png: Vec<u8>,
    /// Top-left cell (row, column) where the picture is placed.
    pub anchor: (u32, u16),
    /// Width and height shown, in pixels at 96 an inch (the image may hold more pixels,
    /// for print, and is scaled to this size).
    pub size: (u32, u32),
    /// What the picture shows, in words, for readers that cannot see it.
    pub description: String,
}

/// One sheet of a book.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Sheet {
    /// The sheet's name (at most 31 characters, none of `[]:*?/\`).
    pub name: String,
    /// Column widths in characters, by column.
    pub widths: Vec<(u16, f64)>,
    /// The cells.
    pub cells: Vec<Placed>,
    /// The charts.
    pub charts: Vec<ChartSpec>,
    /// The pictures.
    pub pictures: Vec<Picture>,
    /// Rows frozen at the top (0 for none).
    pub frozen_rows: u32,
    /// Row heights in points, by row, for rows of wrapped text.
    pub heights: Vec<(u32, f64)>,
    /// Areas where typing is limited to numbers.
    pub number_only: Vec<NumberOnly>,
    /// Printed in portrait rather than landscape.
    pub portrait: bool,
    /// Rows, zero-based, that must start a new printed page; the writer adds the
    /// other breaks itself (see [`print`]).
    pub page_breaks: Vec<u32>,
    /// Hidden from the sheet tabs (the spreadsheet's "unhide" shows it). A
    /// hidden sheet must not be the book's first: the first sheet is the
    /// one shown on opening.
    pub hidden: bool,
}

/// An area of a sheet where the spreadsheet accepts only numbers (any
/// decimal number; blanks allowed), with a message shown on entry and on a
/// refused value.
#[derive(Debug, Clone, PartialEq)]
pub struct NumberOnly {
    /// First row, zero-based.
    pub first_row: u32,
    /// First column.
    pub first_col: u16,
    /// Last row.
    pub last_row: u32,
    /// Last column.
    pub last_col: u16,
    /// Short title of the messages (at most 32 characters).
    pub title: String,
    /// The message shown when a cell of the area is selected (at most 255 characters).
    pub prompt: String,
}

/// A calendar date for the document's creation property, at midnight UTC.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct CreationDate {
    /// The year, 1900 to 9999.
    pub year: u16,
    /// The month, 1 to 12.
    pub month: u8,
    /// The day of the month.
    pub day: u8,
}

/// Choices for writing a book beyond its content.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct WriteOptions {
    /// A fixed creation date written into the document properties instead of
    /// the current time, so that the same book gives the same bytes.
    pub created: Option<CreationDate>,
    /// Which existing file at the destination may be replaced.
    pub replace: ReplaceRule,
}

/// Which existing file at a destination a write may replace.
///
/// Rule (see DEVELOPERS.md, "Nothing lost"): a write never replaces a file we
/// did not write. Every workbook we write carries the custom document
/// property [`PROVENANCE_PROPERTY`]; a destination that exists and lacks it,
/// is read-only, or is not a regular file is refused with
/// [`WriteError::WouldReplace`].
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub enum ReplaceRule {
    /// Replace only a writable regular file that carries our provenance (the default).
    #[default]
    OnlyOurs,
    /// Never replace an existing file (`plan` without `--force`).
    Never,
    /// Replace a writable regular file whatever wrote it (`plan --force`).
    AnyWritable,
}

/// The name of the custom document property every workbook we write carries.
pub const PROVENANCE_PROPERTY: &str = "trialyst";

/// The value of [`PROVENANCE_PROPERTY`].
pub const PROVENANCE_VALUE: &str = "written by trialyst";

/// True when the xlsx file at `path` carries our provenance property. Reads
/// at most the first 64 KiB of its `docProps/custom.xml` part; any problem
/// opening it means "no".
pub fn has_our_provenance(path: &Path) -> bool {
    use std::io::Read;
    let Ok(file) = crate::read::open_regular_file(path) else {
        return false;
    };
    let Ok(mut archive) = zip::ZipArchive::new(std::io::BufReader::new(file)) else {
        return false;
    };
    let Ok(part) = archive.by_name("docProps/custom.xml") else {
        return false;
    };
    let mut text = String::new();
    if part.take(64 * 1024).read_to_string(&mut text).is_err() {
        return false;
    }
    text.contains(&format!("name=\"{PROVENANCE_PROPERTY}\"")) && text.contains(PROVENANCE_VALUE)
}

/// Removes `path` when it is a writable regular file we wrote (a stale
/// output); anything else is left alone. Returns true when it was removed.
pub fn remove_if_ours(path: &Path) -> bool {
    check_replaceable(path, ReplaceRule::OnlyOurs).is_ok() && path.is_file() && std::fs::remove_file(path).is_ok()
}

/// Checks that a write to `destination` may go ahead under `rule`.
///
/// # Errors
///
/// [`WriteError::WouldReplace`] naming the file and why.
pub fn check_replaceable(destination: &Path, rule: ReplaceRule) -> Result<(), WriteError> {
    let refuse = |reason: &str| WriteError::WouldReplace {
        path: destination.to_path_buf(),
        reason: reason.to_string(),
    };
    let metadata = match std::fs::symlink_metadata(destination) {
        Ok(metadata) => metadata,
        Err(error) if error.kind() == std::io::ErrorKind::NotFound => return Ok(()),
        Err(error) => {
            return Err(WriteError::Io {
                path: destination.to_path_buf(),
                source: error,
            })
        }
    };
    if !metadata.file_type().is_file() {
        return Err(refuse("it is not a regular file (a folder, link or device)"));
    }
    if rule == ReplaceRule::Never {
        return Err(refuse("it already exists (use --force to replace it)"));
    }
    if metadata.permissions().readonly() {
        return Err(refuse("it is read-only"));
    }
    if rule == ReplaceRule::OnlyOurs && !has_our_provenance(destination) {
        return Err(refuse("it was not written by trialyst"));
    }
    Ok(())
}

impl Sheet {
    /// A new empty sheet.
    pub fn new(name: impl Into<String>) -> Self {
        Self {
            name: name.into(),
            ..Self::default()
        }
    }

    /// Places a value.
    pub fn put(&mut self, row: u32, col: u16, value: Value, look: Look) {
        self.cells.push(Placed { row, col, value, look });
    }

    /// Places wrapped text in a column `width` characters wide and sets the
    /// row's height to fit it (spreadsheet programs do not always refit rows
    /// of wrapped text on opening).
    pub fn paragraph(&mut self, row: u32, col: u16, text: impl Into<String>, look: Look, width: f64) {
        let text = text.into();
        // About 1.1 characters of body text per unit of column width; 15 points a line.
        let large = matches!(look, Look::Verdict | Look::Heading | Look::Title);
        let per_line = (width * if large { 0.85 } else { 1.1 }).max(10.0);
        let lines = text.chars().count() as f64 / per_line;
        let scale = if large { 1.2 } else { 1.0 };
        self.heights.push((row, 15.5 * scale * lines.ceil().max(1.0)));
        let look = if look == Look::Plain { Look::Paragraph } else { look };
        self.put(row, col, Value::Text(text), look);
    }

    /// Places a table whose cells wrap within their columns, every cell top-aligned, each
    /// row made tall enough for its longest text (estimated from `widths`, the columns'
    /// widths in characters; spreadsheet programs do not always refit rows of wrapped text
    /// on opening). Links keep their own look. Returns the first row after the table.
    pub fn wrapped_table(
        &mut self,
        row: u32,
        col: u16,
        headers: &[&str],
        rows: Vec<Vec<Value>>,
        widths: &[f64],
    ) -> u32 {
        let width_of = |offset: usize| widths.get(offset).copied().unwrap_or(12.0).max(1.0);
        let mut header_lines = 1.0_f64;
        for (offset, header) in headers.iter().enumerate() {
            header_lines = header_lines.max((header.chars().count() as f64 / (width_of(offset) * 1.1)).ceil());
            self.put(row, col + offset as u16, Value::text(*header), Look::ColumnHeader);
        }
        self.heights.push((row, 15.5 * header_lines.min(4.0)));
        let mut next = row + 1;
        for values in rows {
            let mut lines = 1.0_f64;
            for (offset, value) in values.into_iter().enumerate() {
                let length = match &value {
                    Value::Text(text) => text.chars().count(),
                    Value::Link { text, .. } => text.chars().count(),
                    _ => 0,
                };
                // About 1.1 characters of body text per unit of column width.
                lines = lines.max((length as f64 / (width_of(offset) * 1.1)).ceil());
                let look = if matches!(value, Value::Link { .. }) {
                    Look::Plain
                } else {
                    Look::Paragraph
                };
                self.put(next, col + offset as u16, value, look);
            }
            self.heights.push((next, 15.5 * lines.min(24.0)));
            next += 1;
        }
        next
    }

    /// Places a table like [`Sheet::table`] whose rows of values are each
    /// [`SPACED_ROW_HEIGHT`] points tall with the values at the foot of the row, so that
    /// the first row stands clear of the header's border (spreadsheet programs draw a
    /// top-aligned value of a one-line row against the line above it). For tables of
    /// one-line values. Returns the first row after the table.
    pub fn spaced_table(&mut self, row: u32, col: u16, headers: &[&str], rows: Vec<Vec<Value>>) -> u32 {
        for (offset, header) in headers.iter().enumerate() {
            self.put(row, col + offset as u16, Value::text(*header), Look::ColumnHeader);
        }
        let mut next = row + 1;
        for values in rows {
            for (offset, value) in values.into_iter().enumerate() {
                self.put(next, col + offset as u16, value, Look::Spaced);
            }
            self.heights.push((next, SPACED_ROW_HEIGHT));
            next += 1;
        }
        next
    }

    /// Places a table: a header row and rows of values. Returns the first row after it.
    pub fn table(&mut self, row: u32, col: u16, headers: &[&str], rows: Vec<Vec<Value>>) -> u32 {
        for (offset, header) in headers.iter().enumerate() {
            self.put(row, col + offset as u16, Value::text(*header), Look::ColumnHeader);
        }
        let mut next = row + 1;
        for values in rows {
            for (offset, value) in values.into_iter().enumerate() {
                self.put(next, col + offset as u16, value, Look::Plain);
            }
            next += 1;
        }
        next
    }
}

/// The height in points of a row of a [`Sheet::spaced_table`]: a line of 11-pt text and
/// a little room above it (common practice: about 1.5 times the font size).
pub const SPACED_ROW_HEIGHT: f64 = 17.25;

/// A whole workbook to write.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Book {
    /// The sheets, in order.
    pub sheets: Vec<Sheet>,
}

/// Why a book could not be written.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum WriteError {
    /// The spreadsheet writer refused the content.
    #[error("cannot build the workbook '{}'", path.display())]
    Build {
        /// The destination.
        path: PathBuf,
        /// The writer's error.
        #[source]
        source: XlsxError,
    },
    /// The file could not be written or moved into place.
    #[error("cannot write '{}'", path.display())]
    Io {
        /// The destination.
        path: PathBuf,
        /// The operating system's error.
        #[source]
        source: std::io::Error,
    },
    /// The destination holds a file this write must not replace.
    #[error("refusing to replace '{}': {reason}", path.display())]
    WouldReplace {
        /// The destination.
        path: PathBuf,
        /// Why it is kept.
        reason: String,
    },
}

struct Looks {
    plain: Format,
    title: Format,
    heading: Format,
    column_header: Format,
    note: Format,
    note_line: Format,
    caution: Format,
    verdict: Format,
    key: Format,
    paragraph: Format,
    spaced: Format,
    link: Format,
}

impl Looks {
    fn new() -> Self {
        let ink = Color::RGB(0x1F2A44);
        Self {
            plain: Format::new().set_align(FormatAlign::Top),
            title: Format::new()
                .set_bold()
                .set_font_size(15)
                .set_font_color(ink)
                .set_align(FormatAlign::Top),
            heading: Format::new()
                .set_bold()
                .set_font_size(12)
                .set_font_color(ink)
                .set_align(FormatAlign::Top),
            column_header: Format::new()
                .set_bold()
                .set_text_wrap()
                .set_align(FormatAlign::Center)
                .set_align(FormatAlign::VerticalCenter)
                .set_border_bottom(FormatBorder::Medium)
                .set_background_color(Color::RGB(0xE8EEF4)),
            note: Format::new()
                .set_italic()
                .set_text_wrap()
                .set_align(FormatAlign::Top)
                .set_font_color(Color::RGB(0x505A64)),
            note_line: Format::new()
                .set_italic()
                .set_font_color(Color::RGB(0x505A64))
                .set_align(FormatAlign::Top),
            caution: Format::new()
                .set_bold()
                .set_font_color(Color::RGB(0x8A3B00))
                .set_text_wrap()
                .set_align(FormatAlign::Top),
            verdict: Format::new()
                .set_bold()
                .set_font_size(12)
                .set_text_wrap()
                .set_align(FormatAlign::Top),
            key: Format::new().set_bold().set_align(FormatAlign::Top),
            paragraph: Format::new().set_text_wrap().set_align(FormatAlign::Top),
            spaced: Format::new().set_align(FormatAlign::Bottom),
            link: Format::new()
                .set_font_color(Color::RGB(0x0563C1))
                .set_underline(rust_xlsxwriter::FormatUnderline::Single)
                .set_text_wrap()
                .set_align(FormatAlign::Top),
        }
    }

    fn get(&self, look: Look) -> &Format {
        match look {
            Look::Plain => &self.plain,
            Look::Title => &self.title,
            Look::Heading => &self.heading,
            Look::ColumnHeader => &self.column_header,
            Look::Note => &self.note,
            Look::Caution => &self.caution,
            Look::Verdict => &self.verdict,
            Look::Key => &self.key,
            Look::Paragraph => &self.paragraph,
            Look::Spaced => &self.spaced,
        }
    }
}

/// The longest text constant a formula may hold, in characters (the file format's limit).
const MOST_FORMULA_TEXT: usize = 255;

/// `=HYPERLINK("target", "text")` with each line break of `text` as `CHAR(10)`, or `None`
/// when the target or a line is longer than a formula's text constant may be.
fn hyperlink_formula(target: &str, text: &str) -> Option<String> {
    let quoted = |part: &str| format!("\"{}\"", part.replace('"', "\"\""));
    if target.chars().count() > MOST_FORMULA_TEXT
        || text.split('\n').any(|line| line.chars().count() > MOST_FORMULA_TEXT)
    {
        return None;
    }
    let shown: Vec<String> = text.split('\n').map(quoted).collect();
    Some(format!("=HYPERLINK({},{})", quoted(target), shown.join("&CHAR(10)&")))
}

fn clip_text(text: &str) -> &str {
    if text.len() <= MAX_CELL_TEXT {
        return text;
    }
    let mut end = MAX_CELL_TEXT;
    while !text.is_char_boundary(end) {
        end -= 1;
    }
    &text[..end]
}

fn build(book: &Book, options: &WriteOptions) -> Result<XlsxWorkbook, XlsxError> {
    let looks = Looks::new();
    let mut workbook = XlsxWorkbook::new();
    workbook.set_zip_compression_level(ZIP_LEVEL);
    let mut properties = DocProperties::new().set_custom_property(PROVENANCE_PROPERTY, PROVENANCE_VALUE);
    if let Some(date) = options.created {
        let created = ExcelDateTime::from_ymd(date.year, date.month, date.day)?;
        properties = properties.set_creation_datetime(&created);
    }
    workbook.set_properties(&properties);
    let mut number_formats: std::collections::HashMap<(NumberFormat, Look, bool), Format> =
        std::collections::HashMap::new();
    let cells = CellLookup::new(book);
    for sheet in &book.sheets {
        let worksheet = workbook.add_worksheet();
        worksheet.set_name(&sheet.name)?;
        for (col, width) in &sheet.widths {
            worksheet.set_column_width(*col, *width)?;
        }
        // Printed in landscape unless asked otherwise, at a scale and with page breaks
        // planned so that it prints alike on A4 and Letter (see `print`).
        if sheet.portrait {
            worksheet.set_portrait();
        } else {
            worksheet.set_landscape();
        }
        let layout = print::plan_sheet(sheet);
        worksheet.set_print_scale(layout.scale);
        if !layout.breaks.is_empty() {
            worksheet.set_page_breaks(&layout.breaks)?;
        }
        if sheet.frozen_rows > 0 {
            worksheet.set_repeat_rows(0, sheet.frozen_rows - 1)?;
        }
        // Rows given a height hold paragraphs: their notes wrap; elsewhere a
        // note is one line (a wrapped note in a narrow table column would be
        // cut off at the row's height).
        let paragraph_rows: std::collections::HashSet<u32> = sheet.heights.iter().map(|(row, _)| *row).collect();
        for (row, height) in &layout.heights {
            worksheet.set_row_height(*row, *height)?;
        }
        let merged: HashMap<(u32, u16), u16> = layout
            .merges
            .iter()
            .map(|(row, col, last)| ((*row, *col), *last))
            .collect();
        if sheet.frozen_rows > 0 {
            worksheet.set_freeze_panes(sheet.frozen_rows, 0)?;
        }
        if sheet.hidden {
            worksheet.set_hidden(true);
        }
        for placed in &sheet.cells {
            let format = if placed.look == Look::Note && !paragraph_rows.contains(&placed.row) {
                &looks.note_line
            } else {
                looks.get(placed.look)
            };
            if let (Some(last), Value::Text(text)) = (merged.get(&(placed.row, placed.col)), &placed.value) {
                let wrapped = format.clone().set_text_wrap().set_align(FormatAlign::Top);
                if *last > placed.col {
                    worksheet.merge_range(placed.row, placed.col, placed.row, *last, clip_text(text), &wrapped)?;
                } else {
                    worksheet.write_string_with_format(placed.row, placed.col, clip_text(text), &wrapped)?;
                }
                continue;
            }
            match &placed.value {
                Value::Text(text) => {
                    worksheet.write_string_with_format(placed.row, placed.col, clip_text(text), format)?;
                }
                Value::Number(number, number_format) if number.is_finite() => {
                    let with_number = number_formats
                        .entry((*number_format, placed.look, paragraph_rows.contains(&placed.row)))
                        .or_insert_with(|| format.clone().set_num_format(number_format.code()));
                    worksheet.write_number_with_format(placed.row, placed.col, *number, &*with_number)?;
                }
                Value::Number(_, _) if cells.is_plotted(&sheet.name, placed.row, placed.col) => {
                    // Left blank so that the chart leaves a gap instead of drawing 0.
                }
                Value::Number(number, _) => {
                    let shown = non_finite_in_words(*number);
                    worksheet.write_string_with_format(placed.row, placed.col, shown, format)?;
                }
                Value::Link { target, text } => match hyperlink_formula(target, text) {
                    // A link written as a formula is an ordinary cell that wraps its text
                    // in every program; a link stored as the sheet's hyperlink is shown by
                    // some programs as one line cut at the cell's edge.
                    Some(formula) => {
                        let formula = Formula::new(formula).set_result(clip_text(text));
                        worksheet.write_formula_with_format(placed.row, placed.col, formula, &looks.link)?;
                    }
                    None => {
                        let url = if target.contains("://") {
                            target.clone()
                        } else {
                            format!("file:///{target}")
                        };
                        let url = rust_xlsxwriter::Url::new(url).set_text(clip_text(text));
                        worksheet.write_url_with_format(placed.row, placed.col, url, &looks.link)?;
                    }
                },
                Value::Blank => {}
            }
        }
        for area in &sheet.number_only {
            let validation = DataValidation::new()
                .allow_decimal_number_formula(DataValidationRule::Between(
                    Formula::new("-1E+300"),
                    Formula::new("1E+300"),
                ))
                .ignore_blank(true)
                .set_input_title(area.title.as_str())?
                .set_input_message(area.prompt.as_str())?
                .set_error_title(area.title.as_str())?
                .set_error_message("Only a number can go in this cell.")?
                .set_error_style(DataValidationErrorStyle::Stop);
            worksheet.add_data_validation(
                area.first_row,
                area.first_col,
                area.last_row,
                area.last_col,
                &validation,
            )?;
        }
        for (spec, height) in sheet.charts.iter().zip(&layout.chart_heights) {
            let chart = build_chart(spec, *height, &cells);
            worksheet.insert_chart(spec.anchor.0, spec.anchor.1, &chart)?;
        }
        for picture in &sheet.pictures {
            let image = Image::new_from_buffer(&picture.png)?
                .set_width(picture.size.0)
                .set_height(picture.size.1)
                .set_alt_text(picture.description.as_str());
            worksheet.insert_image(picture.anchor.0, picture.anchor.1, &image)?;
        }
    }
    Ok(workbook)
}

const SERIES_COLOURS: [u32; 6] = [0x2F5D8C, 0xC0504D, 0x4E8F3A, 0x8064A2, 0xD08A20, 0x3A8FA0];

/// Every cell of a book by sheet, row and column, for charts that need the numbers and
/// labels their ranges hold.
struct CellLookup<'book> {
    cells: HashMap<(&'book str, u32, u16), &'book Value>,
    /// Cells that a chart plots as values: a non-finite number there is left blank (a
    /// gap in the chart) rather than written as text, which charts draw as 0.
    plotted: std::collections::HashSet<(&'book str, u32, u16)>,
}

impl<'book> CellLookup<'book> {
    /// Indexes only the cells some chart range covers: a book's large tables (every
    /// pair of many conditions) are mostly not charted, and hashing each of their cells
    /// cost more than the charts' lookups in them.
    fn new(book: &'book Book) -> Self {
        let mut charted: HashMap<&'book str, Vec<&'book SheetRange>> = HashMap::new();
        let mut plotted = std::collections::HashSet::new();
        for sheet in &book.sheets {
            for chart in &sheet.charts {
                for series in &chart.series {
                    for (row, col) in series.values.cells() {
                        plotted.insert((series.values.sheet.as_str(), row, col));
                    }
                    let ranges = [
                        Some(&series.categories),
                        Some(&series.values),
                        series.bar_plus.as_ref(),
                        series.bar_minus.as_ref(),
                        series.labels.as_ref(),
                    ];
                    for range in ranges.into_iter().flatten() {
                        charted.entry(range.sheet.as_str()).or_default().push(range);
                    }
                }
            }
        }
        let mut cells = HashMap::new();
        for sheet in &book.sheets {
            let Some(ranges) = charted.get(sheet.name.as_str()) else {
                continue;
            };
            for placed in &sheet.cells {
                if ranges.iter().any(|range| range.covers(placed.row, placed.col)) {
                    cells.insert((sheet.name.as_str(), placed.row, placed.col), &placed.value);
                }
            }
        }
        Self { cells, plotted }
    }

    fn number(&self, sheet: &str, row: u32, col: u16) -> Option<f64> {
        match self.cells.get(&(sheet, row, col)) {
            Some(Value::Number(number, _)) if number.is_finite() => Some(*number),
            _ => None,
        }
    }

    fn text(&self, sheet: &str, row: u32, col: u16) -> String {
        match self.cells.get(&(sheet, row, col)) {
            Some(Value::Text(text)) => text.clone(),
            Some(Value::Link { text, .. }) => text.clone(),
            Some(Value::Number(number, _)) if number.is_finite() => number.to_string(),
            _ => String::new(),
        }
    }

    fn is_plotted(&self, sheet: &str, row: u32, col: u16) -> bool {
        self.plotted.contains(&(sheet, row, col))
    }
}

impl SheetRange {
    /// Whether the cell at (row, column) is in the range.
    fn covers(&self, row: u32, col: u16) -> bool {
        (self.first_row..=self.last_row).contains(&row) && (self.first_col..=self.last_col).contains(&col)
    }

    /// The (row, column) of every cell of the range, row by row.
    pub fn cells(&self) -> impl Iterator<Item = (u32, u16)> + '_ {
        (self.first_row..=self.last_row)
            .flat_map(move |row| (self.first_col..=self.last_col).map(move |col| (row, col)))
    }
}

/// A value axis from `low` to `high` widened by a twentieth of the span on each side and
/// rounded out to a step of 1, 2 or 5 times a power of ten (common practice for chart
/// axes), so that the data and their intervals fill the chart instead of sitting on a
/// line far from an axis forced to 0.
pub fn axis_around(low: f64, high: f64) -> (f64, f64) {
    let span = high - low;
    let pad = if span > 0.0 {
        span / 20.0
    } else if low != 0.0 {
        low.abs() / 10.0
    } else {
        1.0
    };
    let (low, high) = (low - pad, high + pad);
    let rough = (high - low) / 6.0;
    let power = 10f64.powf(rough.log10().floor());
    let step = [1.0, 2.0, 5.0, 10.0]
        .iter()
        .map(|factor| factor * power)
        .find(|step| *step >= rough)
        .unwrap_or(10.0 * power);
    ((low / step).floor() * step, (high / step).ceil() * step)
}

/// The least and greatest of a series' plotted values and, where it has interval bars,
/// of the bars' ends.
fn series_extent(series: &Series, cells: &CellLookup<'_>) -> Option<(f64, f64)> {
    let sheet = series.values.sheet.as_str();
    let mut extent: Option<(f64, f64)> = None;
    let mut widen = |value: f64| {
        extent = Some(extent.map_or((value, value), |(low, high)| (low.min(value), high.max(value))));
    };
    for (index, (row, col)) in series.values.cells().enumerate() {
        let Some(value) = cells.number(sheet, row, col) else {
            continue;
        };
        widen(value);
        let bar = |range: &Option<SheetRange>| {
            range.as_ref().and_then(|range| {
                range
                    .cells()
                    .nth(index)
                    .and_then(|(row, col)| cells.number(&range.sheet, row, col))
            })
        };
        if let Some(plus) = bar(&series.bar_plus) {
            widen(value + plus);
        }
        if let Some(minus) = bar(&series.bar_minus) {
            widen(value - minus);
        }
    }
    extent
}

fn build_chart(spec: &ChartSpec, height: u32, cells: &CellLookup<'_>) -> Chart {
    let mut chart = match spec.kind {
        ChartKind::Points | ChartKind::Lines => Chart::new_line(),
        ChartKind::Scatter => Chart::new_scatter(),
        ChartKind::Columns => Chart::new_column(),
    };
    // The chart's title no larger than a sheet heading.
    chart
        .title()
        .set_name(&spec.title)
        .set_font(ChartFont::new().set_size(12).set_bold());
    // Chart text at 11 pt, like the sheet's, so that it stays legible at the smallest
    // print scale.
    let mut axis_font = ChartFont::new();
    axis_font.set_size(11);
    let mut name_font = axis_font.clone();
    name_font.set_bold();
    chart
        .x_axis()
        .set_name(&spec.x_title)
        .set_name_font(&name_font)
        .set_font(&axis_font);
    chart
        .y_axis()
        .set_name(&spec.y_title)
        .set_name_font(&name_font)
        .set_font(&axis_font);
    chart.legend().set_font(&axis_font);
    chart.set_width(spec.size.0).set_height(height);
    chart.show_empty_cells_as(ChartEmptyCells::Gaps);
    if spec.series.len() <= 1 {
        chart.legend().set_hidden();
    }
    // Value axes around the data and their intervals (counts in columns keep their 0).
    if spec.kind != ChartKind::Columns {
        let extent = spec
            .series
            .iter()
            .filter_map(|series| series_extent(series, cells))
            .reduce(|(a, b), (c, d)| (a.min(c), b.max(d)));
        if let Some((low, high)) = extent {
            let (mut min, mut max) = axis_around(low, high);
            if let Some((least, most)) = spec.value_limits {
                min = min.max(least);
                max = max.min(most);
            }
            chart.y_axis().set_min(min).set_max(max);
        }
        if spec.kind == ChartKind::Scatter {
            let xs: Vec<f64> = spec
                .series
                .iter()
                .flat_map(|series| {
                    series
                        .categories
                        .cells()
                        .filter_map(|(row, col)| cells.number(&series.categories.sheet, row, col))
                        .collect::<Vec<_>>()
                })
                .collect();
            if let (Some(low), Some(high)) = (xs.iter().copied().reduce(f64::min), xs.iter().copied().reduce(f64::max))
            {
                let (min, max) = axis_around(low, high);
                chart.x_axis().set_min(min).set_max(max);
                // Each axis sits at the other's low end (the vertical one at the left, the
                // horizontal one at the foot), so their labels stay clear of the points.
                chart.x_axis().set_crossing(rust_xlsxwriter::ChartAxisCrossing::Min);
                chart.y_axis().set_crossing(rust_xlsxwriter::ChartAxisCrossing::Min);
            }
            chart.x_axis().set_label_position(ChartAxisLabelPosition::Low);
            chart.y_axis().set_label_position(ChartAxisLabelPosition::Low);
        }
    }
    // Category labels: turned when they are too long to stand side by side.
    if spec.kind != ChartKind::Scatter {
        if let Some(series) = spec.series.first() {
            let labels: Vec<String> = series
                .categories
                .cells()
                .map(|(row, col)| cells.text(&series.categories.sheet, row, col))
                .collect();
            let longest = labels.iter().map(|label| label.chars().count()).max().unwrap_or(0);
            // About 6 pixels a character at the axis's 10-pt type.
            let room = f64::from(spec.size.0.saturating_sub(80)) / labels.len().max(1) as f64 / 6.0;
            if longest as f64 > room {
                let mut turned = axis_font.clone();
                turned.set_rotation(-45);
                chart.x_axis().set_font(&turned);
            }
        }
    }
    for (index, series_spec) in spec.series.iter().enumerate() {
        let colour = Color::RGB(SERIES_COLOURS[index % SERIES_COLOURS.len()]);
        let series = chart.add_series();
        series
            .set_name(series_spec.name.as_str())
            .set_categories(&series_spec.categories.to_chart_range())
            .set_values(&series_spec.values.to_chart_range());
        match spec.kind {
            ChartKind::Points | ChartKind::Scatter => {
                series.set_format(ChartFormat::new().set_no_line());
                series.set_marker(
                    ChartMarker::new()
                        .set_type(ChartMarkerType::Circle)
                        .set_size(7)
                        .set_format(
                            ChartFormat::new()
                                .set_solid_fill(ChartSolidFill::new().set_color(colour))
                                .set_line(ChartLine::new().set_color(colour)),
                        ),
                );
            }
            ChartKind::Lines => {
                series.set_format(ChartFormat::new().set_line(ChartLine::new().set_color(colour).set_width(2.0)));
                series.set_marker(ChartMarker::new().set_type(ChartMarkerType::Square).set_size(6));
            }
            ChartKind::Columns => {
                series.set_format(ChartFormat::new().set_solid_fill(ChartSolidFill::new().set_color(colour)));
            }
        }
        if let (Some(plus), Some(minus)) = (&series_spec.bar_plus, &series_spec.bar_minus) {
            let mut bars = ChartErrorBars::new();
            bars.set_type(ChartErrorBarsType::Custom(
                plus.to_chart_range(),
                minus.to_chart_range(),
            ))
            .set_end_cap(true)
            .set_format(ChartLine::new().set_color(colour).set_width(1.25));
            series.set_y_error_bars(&bars);
        }
        if let Some(labels) = &series_spec.labels {
            // One label per point with the text of its cell written into the chart
            // itself: spreadsheet programs differ in showing labels that refer to cells,
            // and some show the plotted value instead.
            let custom: Vec<ChartDataLabel> = labels
                .cells()
                .map(|(row, col)| {
                    let text = cells.text(&labels.sheet, row, col);
                    let mut label = ChartDataLabel::new();
                    if text.is_empty() {
                        label.set_hidden();
                    } else {
                        label.set_value(text.as_str()).set_font(&axis_font);
                    }
                    label.to_custom()
                })
                .collect();
            series.set_custom_data_labels(&custom);
        }
    }
    chart
}

/// The hidden temporary name a file is first written under, beside `destination`.
pub fn temporary_name(destination: &Path) -> PathBuf {
    let file_name = destination
        .file_name()
        .map(|name| name.to_string_lossy().into_owned())
        .unwrap_or_default();
    let unique = format!(
        ".{file_name}.{}-{}.tmp",
        std::process::id(),
        std::time::SystemTime::now()
            .duration_since(std::time::UNIX_EPOCH)
            .map_or(0, |elapsed| elapsed.as_nanos())
    );
    destination.with_file_name(unique)
}

/// Builds the workbook in memory as xlsx bytes.
///
/// # Errors
///
/// [`WriteError::Build`] when the writer refuses the content.
pub fn to_bytes(book: &Book, destination: &Path) -> Result<Vec<u8>, WriteError> {
    to_bytes_with(book, &WriteOptions::default(), destination)
}

/// Builds the workbook in memory as xlsx bytes, with the given options.
/// With a fixed [`WriteOptions::created`] date the bytes depend on the book
/// alone (the archive's entry times are fixed by the writer).
///
/// # Errors
///
/// [`WriteError::Build`] when the writer refuses the content or the date.
pub fn to_bytes_with(book: &Book, options: &WriteOptions, destination: &Path) -> Result<Vec<u8>, WriteError> {
    let mut workbook = build(book, options).map_err(|source| WriteError::Build {
        path: destination.to_path_buf(),
        source,
    })?;
    workbook.save_to_buffer().map_err(|source| WriteError::Build {
        path: destination.to_path_buf(),
        source,
    })
}

/// Writes a book to `destination` atomically: to a hidden temporary file in
/// the same folder, flushed, then renamed into place. On any failure the
/// temporary file is removed and the destination is left as it was.
///
/// # Errors
///
/// [`WriteError::Build`] or [`WriteError::Io`]; [`WriteError::WouldReplace`]
/// when the destination holds a file we did not write ([`ReplaceRule::OnlyOurs`]).
pub fn write_book(book: &Book, destination: &Path) -> Result<(), WriteError> {
    write_book_with(book, &WriteOptions::default(), destination)
}

/// Writes a book atomically, as [`write_book`], with the given options.
///
/// # Errors
///
/// [`WriteError::Build`] or [`WriteError::Io`].
pub fn write_book_with(book: &Book, options: &WriteOptions, destination: &Path) -> Result<(), WriteError> {
    check_replaceable(destination, options.replace)?;
    let bytes = to_bytes_with(book, options, destination)?;
    write_atomically(&bytes, destination)
}

/// Writes bytes to `destination` through a temporary file and a rename.
///
/// # Errors
///
/// [`WriteError::Io`].
pub fn write_atomically(bytes: &[u8], destination: &Path) -> Result<(), WriteError> {
    use std::io::Write;
    let temporary = temporary_name(destination);
    let io_error = |source| WriteError::Io {
        path: destination.to_path_buf(),
        source,
    };
    let outcome = (|| -> std::io::Result<()> {
        let mut file = std::fs::OpenOptions::new()
            .write(true)
            .create_new(true)
            .open(&temporary)?;
        file.write_all(bytes)?;
        file.sync_all()?;
        drop(file);
        std::fs::rename(&temporary, destination)
    })();
    if let Err(error) = outcome {
        let _ = std::fs::remove_file(&temporary);
        return Err(io_error(error));
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A number that is not finite is said in words (never "inf" or "NaN"): IEEE 754
    /// binary64 holds magnitudes up to about 1.8e308 (common practice).
    #[test]
    fn numbers_that_are_not_finite_are_said_in_words() {
        assert_eq!(non_finite_in_words(f64::INFINITY), BEYOND_RANGE);
        assert_eq!(non_finite_in_words(f64::MAX * 2.0), BEYOND_RANGE);
        assert_eq!(non_finite_in_words(-f64::MAX * 2.0), BEYOND_RANGE_NEGATIVE);
        assert_eq!(non_finite_in_words(f64::NAN), "not defined");
        assert_eq!(non_finite_in_words(1.7e308), "");
    }

    #[test]
    fn a_link_is_a_hyperlink_formula_with_its_line_breaks_and_quotes_kept() {
        assert_eq!(
            hyperlink_formula("week/a \"b\".xlsx", "a \"b\".\nxlsx").as_deref(),
            Some("=HYPERLINK(\"week/a \"\"b\"\".xlsx\",\"a \"\"b\"\".\"&CHAR(10)&\"xlsx\")")
        );
        // Longer than a formula's text constant: stored as the sheet's hyperlink instead.
        assert_eq!(hyperlink_formula(&"d/".repeat(200), "x"), None);
        assert_eq!(hyperlink_formula("x", &"y".repeat(256)), None);
    }

    fn entry_text(bytes: &[u8], name: &str) -> String {
        use std::io::Read;
        let mut archive = zip::ZipArchive::new(std::io::Cursor::new(bytes)).expect("a zip archive");
        let mut entry = archive.by_name(name).expect("entry present");
        let mut text = String::new();
        entry.read_to_string(&mut text).expect("utf-8 entry");
        text
    }

    fn sample_book() -> Book {
        let mut sheet = Sheet::new("Runs");
        sheet.put(0, 0, Value::text("Yield"), Look::ColumnHeader);
        sheet.number_only.push(NumberOnly {
            first_row: 1,
            first_col: 0,
            last_row: 8,
            last_col: 0,
            title: "Result".into(),
            prompt: "Type the measured value.".into(),
        });
        Book { sheets: vec![sheet] }
    }

    #[test]
    fn only_our_own_writable_files_are_replaced() {
        let folder = tempfile::tempdir().expect("a temporary folder");
        let ours = folder.path().join("ours.xlsx");
        let book = Book {
            sheets: vec![Sheet::new("One")],
        };
        write_book(&book, &ours).expect("written");
        assert!(has_our_provenance(&ours));
        // Ours is replaced; a second write succeeds.
        write_book(&book, &ours).expect("replaced");
        // A file of someone else's is kept, whatever it holds.
        let theirs = folder.path().join("theirs.xlsx");
        std::fs::write(&theirs, b"their own notes").expect("written");
        let refused = write_book(&book, &theirs).expect_err("kept");
        assert!(refused.to_string().contains("not written by trialyst"), "{refused}");
        assert_eq!(std::fs::read(&theirs).expect("there"), b"their own notes");
        // Never: even ours is kept; any writable: theirs is replaced.
        assert!(check_replaceable(&ours, ReplaceRule::Never).is_err());
        assert!(check_replaceable(&theirs, ReplaceRule::AnyWritable).is_ok());
        // Read-only: kept under every rule but an explicit one.
        let mut permissions = std::fs::metadata(&ours).expect("there").permissions();
        permissions.set_readonly(true);
        std::fs::set_permissions(&ours, permissions).expect("made read-only");
        let refused = write_book(&book, &ours).expect_err("kept");
        assert!(refused.to_string().contains("read-only"), "{refused}");
        // A folder in the way is not a file to replace.
        let refused = write_book(&book, folder.path()).expect_err("kept");
        assert!(refused.to_string().contains("not a regular file"), "{refused}");
        assert!(!remove_if_ours(&theirs) && theirs.exists());
    }

    #[test]
    fn fixed_date_gives_the_same_bytes_and_number_only_is_written() {
        let options = WriteOptions {
            created: Some(CreationDate {
                year: 2026,
                month: 3,
                day: 9,
            }),
            ..WriteOptions::default()
        };
        let destination = Path::new("plan.xlsx");
        let first = to_bytes_with(&sample_book(), &options, destination).expect("built");
        let second = to_bytes_with(&sample_book(), &options, destination).expect("built");
        assert_eq!(first, second);
        let core = entry_text(&first, "docProps/core.xml");
        assert!(core.contains("2026-03-09T00:00:00Z"), "{core}");
        let sheet = entry_text(&first, "xl/worksheets/sheet1.xml");
        // The element and attribute names are those of the Office Open XML
        // standard (ECMA-376 Part 1, 18.3.1.32 dataValidation).
        assert!(sheet.contains("<dataValidation type=\"decimal\""), "{sheet}");
        assert!(sheet.contains("sqref=\"A2:A9\""), "{sheet}");
    }

    #[test]
    fn a_hidden_sheet_is_marked_hidden_and_reads_back() {
        let mut book = sample_book();
        let mut hidden = Sheet::new("Kept data");
        let long = "x".repeat(32_000);
        hidden.put(0, 0, Value::text(long.clone()), Look::Plain);
        hidden.hidden = true;
        book.sheets.push(hidden);
        let dir = tempfile::tempdir().expect("a temporary folder");
        let path = dir.path().join("hidden.xlsx");
        write_book(&book, &path).expect("written");
        let bytes = std::fs::read(&path).expect("read back");
        // ECMA-376 Part 1, 18.2.19 sheet: state="hidden" hides a sheet from the tabs.
        let listing = entry_text(&bytes, "xl/workbook.xml");
        assert!(
            listing.contains("name=\"Kept data\" sheetId=\"2\" state=\"hidden\""),
            "{listing}"
        );
        assert!(!listing.contains("name=\"Runs\" sheetId=\"1\" state="), "{listing}");
        let mut workbook = crate::open_workbook(&path, &crate::ReadLimits::default()).expect("opens");
        let sheets = workbook.sheets().to_vec();
        assert_eq!(sheets.len(), 2);
        assert!(sheets[0].visible && !sheets[1].visible, "{sheets:?}");
        let grid = workbook.read_sheet("Kept data", None).expect("the hidden sheet reads");
        let (_, value) = grid.cells.first().expect("a cell");
        assert_eq!(grid.display(*value), long);
    }

    /// A probability plotted from 0.101 to 0.99 would get an axis to 1.2 (the data
    /// widened by a twentieth and rounded out to a step of 0.2); with limits 0 to 1 the
    /// axis stops at 1. ECMA-376 Part 1, 21.2.2.110 max and 21.2.2.118 min hold an
    /// axis's bounds.
    #[test]
    fn value_limits_cap_the_value_axis() {
        let (_, uncapped) = axis_around(0.101, 0.99);
        assert!((uncapped - 1.2).abs() < 1e-9, "{uncapped}");
        let chart_xml = |limits: Option<(f64, f64)>| {
            let mut sheet = Sheet::new("Power");
            for (row, power) in [0.101, 0.5, 0.824, 0.99].into_iter().enumerate() {
                sheet.put(row as u32, 0, Value::integer(row as f64 + 2.0), Look::Plain);
                sheet.put(row as u32, 1, Value::decimals(power, 3), Look::Plain);
            }
            sheet.charts.push(ChartSpec {
                kind: ChartKind::Lines,
                title: "Power against runs".into(),
                x_title: "runs".into(),
                y_title: "power".into(),
                series: vec![Series {
                    name: "power".into(),
                    categories: SheetRange::column("Power", 0, 0, 3),
                    values: SheetRange::column("Power", 1, 0, 3),
                    bar_plus: None,
                    bar_minus: None,
                    labels: None,
                }],
                anchor: (0, 3),
                size: (480, 300),
                value_limits: limits,
            });
            let bytes = to_bytes_with(
                &Book { sheets: vec![sheet] },
                &WriteOptions::default(),
                Path::new("power.xlsx"),
            )
            .expect("built");
            entry_text(&bytes, "xl/charts/chart1.xml")
        };
        let capped = chart_xml(Some((0.0, 1.0)));
        assert!(capped.contains("<c:max val=\"1\"/>"), "{capped}");
        let free = chart_xml(None);
        assert!(free.contains("<c:max val=\"1.2"), "{free}");
    }
}
