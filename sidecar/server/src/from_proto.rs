//! Protocol parameters into the service's plain types, checked by hand.
//!
//! Every parameter arrives as JSON; each one is read here into a typed
//! request ([`WorkbookParams`], [`CellsParams`], [`WriteParams`]) or refused
//! with an [`ParamsError`] that names the field (`params.settings.confidence`)
//! and says what is accepted. Settings use the same keys and value forms as
//! a workbook's settings sheet, so a user learns one vocabulary.

use std::path::PathBuf;

use serde_json::{Map, Value};
use tower_lsp_server::ls_types::{NumberOrString, ProgressToken, Uri};
use workbook_io::cell::{parse_a1, split_sheet_reference, CellPos, CellValue, MAX_COLS, MAX_ROWS};
use workbook_io::SheetGrid;

use service::settings::Settings;

use crate::side_channel::{RawCell, RawCells};

/// A parameter that could not be used: the field and what was wrong.
#[derive(Debug, Clone, PartialEq)]
pub struct ParamsError {
    /// The field, as a path from `params`, such as `params.cells[3][1]`.
    pub field: String,
    /// What is accepted, and what was found.
    pub problem: String,
}

impl std::fmt::Display for ParamsError {
    fn fmt(&self, formatter: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(formatter, "{}: {}", self.field, self.problem)
    }
}

pub(crate) fn error(field: impl Into<String>, problem: impl Into<String>) -> ParamsError {
    ParamsError {
        field: field.into(),
        problem: problem.into(),
    }
}

/// A short description of a JSON value, for messages.
pub(crate) fn describe(value: &Value) -> String {
    match value {
        Value::Null => "null".into(),
        Value::Bool(flag) => format!("{flag}"),
        Value::Number(number) => format!("the number {number}"),
        Value::String(text) => format!("the text '{}'", text.chars().take(60).collect::<String>()),
        Value::Array(items) => format!("a list of {}", items.len()),
        Value::Object(_) => "an object".into(),
    }
}

/// The params object of a request.
///
/// # Errors
///
/// [`ParamsError`] when params is absent or not an object.
pub fn params_object(params: &Value) -> Result<&Map<String, Value>, ParamsError> {
    params
        .as_object()
        .ok_or_else(|| error("params", format!("expected an object, got {}", describe(params))))
}

fn optional_text(map: &Map<String, Value>, key: &str, place: &str) -> Result<Option<String>, ParamsError> {
    match map.get(key) {
        None | Some(Value::Null) => Ok(None),
        Some(Value::String(text)) => Ok(Some(text.clone())),
        Some(other) => Err(error(
            format!("{place}.{key}"),
            format!("expected text, got {}", describe(other)),
        )),
    }
}

/// The path of a workbook, taken exactly as the client wrote it, or from a
/// `file:` URI given in `uri`; either must lie inside the folders the
/// server was confined to at start ([`confine_to`]).
fn workbook_path(map: &Map<String, Value>) -> Result<PathBuf, ParamsError> {
    if let Some(text) = optional_text(map, "path", "params")? {
        if text.trim().is_empty() {
            return Err(error("params.path", "the workbook's path must not be empty"));
        }
        return confined("params.path", PathBuf::from(text));
    }
    if let Some(text) = optional_text(map, "uri", "params")? {
        let uri: Uri = text
            .parse()
            .map_err(|_| error("params.uri", format!("'{text}' is not a URI")))?;
        let path = file_path_of(&uri).ok_or_else(|| {
            error(
                "params.uri",
                format!("'{text}' is not a local file: URI (the host must be empty or localhost, and no %2F, %5C or %00 may stand for a separator or an end)"),
            )
        })?;
        return confined("params.uri", path);
    }
    Err(error("params.path", "missing; give the workbook's path"))
}

/// The folders the server may read workbooks in and write results to, set
/// once at start (`trialyst serve --allow-root`); none set means anywhere.
static ALLOWED_ROOTS: std::sync::OnceLock<Vec<PathBuf>> = std::sync::OnceLock::new();

/// Confines every path and URI of every request to `roots` for the life of
/// the process. Called once by `serve` at start; a second call is ignored.
pub fn confine_to(roots: Vec<PathBuf>) {
    let _ = ALLOWED_ROOTS.set(roots);
}

/// The folders the server is confined to (empty: not confined).
pub fn allowed_roots() -> &'static [PathBuf] {
    ALLOWED_ROOTS.get().map_or(&[], Vec::as_slice)
}

/// `path` when the server is not confined or it lies inside an allowed folder.
fn confined(field: &str, path: PathBuf) -> Result<PathBuf, ParamsError> {
    let roots = allowed_roots();
    if roots.is_empty() || service::inside_any(&path, roots) {
        Ok(path)
    } else {
        Err(error(
            field,
            format!(
                "'{}' is outside the folders this server may use ({})",
                path.display(),
                roots
                    .iter()
                    .map(|root| root.display().to_string())
                    .collect::<Vec<_>>()
                    .join(", ")
            ),
        ))
    }
}

/// The local path of a `file:` URI, decoded strictly: the host must be
/// empty or `localhost` (`file://otherhost/share/x.xlsx` is refused, not read
/// as a local path), and percent-escapes of a separator (`%2F`, `%5C`) or
/// of NUL (`%00`) are refused.
pub fn file_path_of(uri: &Uri) -> Option<PathBuf> {
    let is_file = uri.scheme().as_str().eq_ignore_ascii_case("file");
    if !is_file {
        return None;
    }
    let text = uri.as_str();
    let after_scheme = &text[text.find(':')? + 1..];
    if let Some(rest) = after_scheme.strip_prefix("//") {
        let host = &rest[..rest.find('/').unwrap_or(rest.len())];
        if !host.is_empty() && !host.eq_ignore_ascii_case("localhost") {
            return None;
        }
    }
    let lower = after_scheme.to_ascii_lowercase();
    if ["%2f", "%5c", "%00"].iter().any(|escape| lower.contains(escape)) {
        return None;
    }
    uri.to_file_path().map(|path| path.into_owned())
}

/// The progress token a client put in `workDoneToken`, if any.
pub(crate) fn work_done_token(map: &Map<String, Value>) -> Result<Option<ProgressToken>, ParamsError> {
    match map.get("workDoneToken") {
        None | Some(Value::Null) => Ok(None),
        Some(Value::String(text)) => Ok(Some(NumberOrString::String(text.clone()))),
        Some(Value::Number(number)) => match number.as_i64().and_then(|whole| i32::try_from(whole).ok()) {
            Some(whole) => Ok(Some(NumberOrString::Number(whole))),
            None => Err(error(
                "params.workDoneToken",
                "a number token must be a whole 32-bit number",
            )),
        },
        Some(other) => Err(error(
            "params.workDoneToken",
            format!("expected text or a whole number, got {}", describe(other)),
        )),
    }
}

/// Reads a settings object: the keys of a settings sheet (`confidence`,
/// `response`, `value name`, ...) with text, number or list values.
///
/// # Errors
///
/// [`ParamsError`] naming the first unusable key.
pub fn settings(value: Option<&Value>) -> Result<Settings, ParamsError> {
    let map = match value {
        None | Some(Value::Null) => return Ok(Settings::default()),
        Some(Value::Object(map)) => map,
        Some(other) => {
            return Err(error(
                "params.settings",
                format!("expected an object of settings, got {}", describe(other)),
            ))
        }
    };
    // Each value becomes the text a settings sheet would hold; a list of
    // contrasts gives one row per contrast, other lists join with commas.
    let mut rows: Vec<(String, String, String)> = Vec::new();
    for (key, value) in map {
        let place = format!("params.settings.{key}");
        let normalised = key.trim().to_lowercase().replace(['_', '-'], " ");
        // Contrasts and directions give one row per item (as repeated rows of a settings sheet).
        let is_contrast =
            ["contrast", "contrasts", "direction", "directions", "goal", "goals"].contains(&normalised.as_str());
        let scalar_text = |item: &Value, place: &str| -> Result<String, ParamsError> {
            match item {
                Value::String(text) => Ok(text.clone()),
                Value::Number(number) => Ok(number.to_string()),
                other => Err(error(
                    place,
                    format!("expected text or a number, got {}", describe(other)),
                )),
            }
        };
        match value {
            Value::Null => {}
            Value::Array(items) => {
                let texts = items
                    .iter()
                    .enumerate()
                    .map(|(index, item)| scalar_text(item, &format!("{place}[{index}]")))
                    .collect::<Result<Vec<_>, _>>()?;
                if is_contrast {
                    for text in texts {
                        rows.push((key.clone(), text, place.clone()));
                    }
                } else {
                    rows.push((key.clone(), texts.join(", "), place.clone()));
                }
            }
            Value::Object(per_response)
                if ["direction", "directions", "goal", "goals"].contains(&normalised.as_str()) =>
            {
                // `{"Leak rate": "lower", "Strength": "higher"}`: one direction per response.
                for (response, direction) in per_response {
                    let text = scalar_text(direction, &format!("{place}.{response}"))?;
                    rows.push((key.clone(), format!("{response}: {text}"), place.clone()));
                }
            }
            other => rows.push((key.clone(), scalar_text(other, &place)?, place.clone())),
        }
    }
    Settings::from_pairs(
        rows.iter()
            .map(|(key, value, place)| (key.as_str(), value.as_str(), place.clone())),
    )
    .map_err(|settings_error| {
        let field = settings_error.place().to_string();
        let text = settings_error.to_string();
        // The message starts with the place already; keep the rest.
        let problem = text
            .strip_prefix(&format!("{field}: "))
            .map(str::to_string)
            .unwrap_or(text);
        error(field, problem)
    })
}

/// What a workbook request carries: `trialyst/inspectWorkbook` and
/// `trialyst/analyseWorkbook`.
#[derive(Debug, Clone)]
pub struct WorkbookParams {
    /// The workbook, as the client named it.
    pub path: PathBuf,
    /// The settings, with `sheet` and `range` from the top level folded in.
    pub settings: Settings,
    /// The client's progress token.
    pub work_done_token: Option<ProgressToken>,
}

/// Reads the params of a workbook request.
///
/// # Errors
///
/// [`ParamsError`] naming the field.
pub fn workbook_params(params: &Value) -> Result<WorkbookParams, ParamsError> {
    let map = params_object(params)?;
    let path = workbook_path(map)?;
    let mut settings = settings(map.get("settings"))?;
    if let Some(sheet) = optional_text(map, "sheet", "params")? {
        settings.sheet = Some(sheet).filter(|text| !text.trim().is_empty());
    }
    if let Some(range) = optional_text(map, "range", "params")? {
        settings.range = Some(range).filter(|text| !text.trim().is_empty());
    }
    Ok(WorkbookParams {
        path,
        settings,
        work_done_token: work_done_token(map)?,
    })
}

/// What `trialyst/writeResults` carries.
#[derive(Debug, Clone)]
pub struct WriteParams {
    /// The workbook and its settings.
    pub workbook: WorkbookParams,
    /// The folder for the results file as sent (relative to the workbook's
    /// folder); when absent the `output folder` setting, else beside the workbook.
    pub output_folder: Option<PathBuf>,
}

/// Reads the params of `trialyst/writeResults`.
///
/// # Errors
///
/// [`ParamsError`] naming the field.
pub fn write_params(params: &Value) -> Result<WriteParams, ParamsError> {
    let workbook = workbook_params(params)?;
    let map = params_object(params)?;
    // The `output folder` setting, when sent, stays in the settings: the
    // service resolves it with the workbook's own settings.
    let output_folder = optional_text(map, "outputFolder", "params")?
        .filter(|text| !text.trim().is_empty())
        .map(PathBuf::from);
    Ok(WriteParams {
        workbook,
        output_folder,
    })
}

/// What `trialyst/analyseCells` carries.
#[derive(Debug, Clone)]
pub struct CellsParams {
    /// The cells at their places on the client's sheet.
    pub grid: SheetGrid,
    /// The settings.
    pub settings: Settings,
    /// A name for the source in the results (the client's workbook name).
    pub source_name: String,
    /// The client's progress token.
    pub work_done_token: Option<ProgressToken>,
    /// How many values were sent.
    pub n_cells: usize,
}

/// Spreadsheet error values, as a spreadsheet's scripting interface reports
/// them in cell values.
const ERROR_TEXTS: &[&str] = &[
    "#N/A",
    "#DIV/0!",
    "#VALUE!",
    "#REF!",
    "#NAME?",
    "#NUM!",
    "#NULL!",
    "#SPILL!",
    "#CALC!",
    "#FIELD!",
    "#BUSY!",
    "#GETTING_DATA",
    "#BLOCKED!",
    "#CONNECT!",
    "#UNKNOWN!",
];

/// Reads the params of `trialyst/analyseCells`: `cells` (rows of values),
/// `origin` (the A1 address of the top-left value, optionally with its
/// sheet), `sheet`, `sourceName` and `settings`.
///
/// # Errors
///
/// [`ParamsError`] naming the field.
pub fn cells_params(params: &Value) -> Result<CellsParams, ParamsError> {
    cells_params_with(params, None)
}

/// [`cells_params`], the cells taken from `stashed` when the framing guard
/// read them (see [`crate::side_channel`]) rather than from `params.cells`.
///
/// # Errors
///
/// [`ParamsError`] naming the field, the same as [`cells_params`] for the same request.
pub fn cells_params_with(params: &Value, stashed: Option<&RawCells>) -> Result<CellsParams, ParamsError> {
    let map = params_object(params)?;
    let origin_text = optional_text(map, "origin", "params")?.unwrap_or_else(|| "A1".into());
    let (origin_sheet, origin_cell) = split_sheet_reference(&origin_text);
    let origin = parse_a1(origin_cell).ok_or_else(|| {
        error(
            "params.origin",
            format!("expected the A1 address of the top-left cell, such as B2, got '{origin_text}'"),
        )
    })?;
    let sheet = optional_text(map, "sheet", "params")?
        .filter(|text| !text.trim().is_empty())
        .or(origin_sheet)
        .unwrap_or_else(|| "Sheet1".into());
    let source_name = optional_text(map, "sourceName", "params")?
        .filter(|text| !text.trim().is_empty())
        .unwrap_or_else(|| "cells sent by the client".into());
    let rows = match (stashed, map.get("cells")) {
        (Some(raw), _) => Rows::Raw(raw),
        (None, Some(Value::Array(rows))) => Rows::Json(rows),
        (None, Some(other)) => {
            return Err(error(
                "params.cells",
                format!(
                    "expected a list of rows, each a list of cell values, got {}",
                    describe(other)
                ),
            ))
        }
        (None, None) => return Err(error("params.cells", "missing; give the cell values as a list of rows")),
    };
    let grid = match rows {
        Rows::Json(rows) => grid_of(rows, origin, &sheet)?,
        Rows::Raw(raw) => grid_of_raw(raw, origin, &sheet)?,
    };
    let mut settings = settings(map.get("settings"))?;
    if settings.range.is_some() {
        return Err(error(
            "params.settings.range",
            "a range cannot be chosen among cells sent by the client; send only the cells of the table",
        ));
    }
    settings.sheet = Some(sheet);
    Ok(CellsParams {
        n_cells: grid.cells.len(),
        grid,
        settings,
        source_name,
        work_done_token: work_done_token(map)?,
    })
}

/// Where the cells of a request are.
enum Rows<'a> {
    Json(&'a [Value]),
    Raw(&'a RawCells),
}

/// Builds a sheet grid from rows of JSON values, the top-left at `origin`,
/// so that every cell keeps the address it has on the client's sheet.
fn grid_of(rows: &[Value], origin: CellPos, sheet: &str) -> Result<SheetGrid, ParamsError> {
    let mut builder = GridBuilder::new(origin, sheet);
    for (row_offset, row) in rows.iter().enumerate() {
        let Value::Array(values) = row else {
            return Err(error(
                format!("params.cells[{row_offset}]"),
                format!("expected a row (a list of cell values), got {}", describe(row)),
            ));
        };
        let row_index = builder.row(row_offset, values.is_empty())?;
        for (col_offset, value) in values.iter().enumerate() {
            let cell = match value {
                Value::Null => Cell::Blank,
                Value::String(text) => Cell::Text(text),
                Value::Number(number) => number.as_f64().map_or(Cell::OutOfRange, Cell::Number),
                Value::Bool(flag) => Cell::Bool(*flag),
                other => Cell::Other(other),
            };
            builder.cell(row_index, row_offset, col_offset, cell)?;
        }
    }
    Ok(builder.grid)
}

/// The same grid from cells the framing guard read (see [`crate::side_channel`]).
fn grid_of_raw(raw: &RawCells, origin: CellPos, sheet: &str) -> Result<SheetGrid, ParamsError> {
    let mut builder = GridBuilder::new(origin, sheet);
    for (row_offset, row) in raw.rows().enumerate() {
        let row_index = builder.row(row_offset, row.is_empty())?;
        for (col_offset, value) in row.iter().enumerate() {
            let cell = match value {
                RawCell::Blank => Cell::Blank,
                RawCell::Text(index) => Cell::Text(raw.text(*index)),
                RawCell::Number(number) => Cell::Number(*number),
                RawCell::Bool(flag) => Cell::Bool(*flag),
            };
            builder.cell(row_index, row_offset, col_offset, cell)?;
        }
    }
    Ok(builder.grid)
}

/// One value sent for a cell, as the grid takes it.
enum Cell<'a> {
    Blank,
    Text(&'a str),
    Number(f64),
    OutOfRange,
    Bool(bool),
    Other(&'a Value),
}

/// A grid being built, row by row, with its texts kept once each.
struct GridBuilder {
    grid: SheetGrid,
    origin: CellPos,
    string_index: std::collections::HashMap<String, u32>,
}

impl GridBuilder {
    fn new(origin: CellPos, sheet: &str) -> Self {
        Self {
            grid: SheetGrid {
                name: sheet.to_string(),
                ..SheetGrid::default()
            },
            origin,
            string_index: std::collections::HashMap::new(),
        }
    }

    fn intern(&mut self, text: &str) -> u32 {
        if let Some(&index) = self.string_index.get(text) {
            return index;
        }
        let index = self.grid.strings.len() as u32;
        self.grid.strings.push(text.to_string());
        self.string_index.insert(text.to_string(), index);
        index
    }

    /// Starts a row; returns its index on the sheet.
    fn row(&self, row_offset: usize, is_empty: bool) -> Result<u64, ParamsError> {
        let row_index = u64::from(self.origin.row) + row_offset as u64;
        if row_index >= u64::from(MAX_ROWS) && !is_empty {
            return Err(error(
                format!("params.cells[{row_offset}]"),
                format!("the row would lie below the last row of a sheet ({MAX_ROWS})"),
            ));
        }
        Ok(row_index)
    }

    fn cell(
        &mut self,
        row_index: u64,
        row_offset: usize,
        col_offset: usize,
        cell: Cell<'_>,
    ) -> Result<(), ParamsError> {
        let col_index = u64::from(self.origin.col) + col_offset as u64;
        let cell_value = match cell {
            Cell::Blank => return Ok(()),
            Cell::Text("") => return Ok(()),
            Cell::Text(text) if ERROR_TEXTS.contains(&text.trim()) => CellValue::Error(self.intern(text.trim())),
            Cell::Text(text) => CellValue::Text(self.intern(text)),
            Cell::Number(number) => CellValue::Number(number),
            Cell::OutOfRange => {
                return Err(error(
                    format!("params.cells[{row_offset}][{col_offset}]"),
                    "the number is out of range",
                ))
            }
            Cell::Bool(flag) => CellValue::Bool(flag),
            Cell::Other(other) => {
                return Err(error(
                    format!("params.cells[{row_offset}][{col_offset}]"),
                    format!("expected a number, text, true/false or null, got {}", describe(other)),
                ))
            }
        };
        if col_index >= u64::from(MAX_COLS) {
            return Err(error(
                format!("params.cells[{row_offset}][{col_offset}]"),
                format!("the cell would lie right of the last column of a sheet ({MAX_COLS})"),
            ));
        }
        // Rows go top to bottom and values left to right, so the cells are
        // already in the row-major order the grid promises.
        self.grid
            .cells
            .push((CellPos::new(row_index as u32, col_index as u32), cell_value));
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use serde_json::json;

    #[test]
    fn cells_keep_their_sheet_addresses() {
        let params = json!({
            "cells": [["Line A", "Line B"], [1.5, "#N/A"], [null, true], ["", 2]],
            "origin": "C5",
            "sheet": "Week 3",
        });
        let read = cells_params(&params).expect("valid");
        let grid = &read.grid;
        assert_eq!(grid.name, "Week 3");
        // C5 is zero-based row 4, column 2 (A1 notation: common practice).
        assert_eq!(
            grid.get(CellPos::new(4, 2)).map(|value| grid.display(value)),
            Some("Line A".into())
        );
        assert_eq!(grid.get(CellPos::new(5, 2)), Some(CellValue::Number(1.5)));
        assert!(matches!(grid.get(CellPos::new(5, 3)), Some(CellValue::Error(_))));
        assert_eq!(grid.get(CellPos::new(6, 2)), None, "null is a blank");
        assert_eq!(grid.get(CellPos::new(6, 3)), Some(CellValue::Bool(true)));
        assert_eq!(grid.get(CellPos::new(7, 2)), None, "empty text is a blank");
        assert_eq!(read.n_cells, 6);
        let sorted = grid
            .cells
            .windows(2)
            .all(|pair| (pair[0].0.row, pair[0].0.col) < (pair[1].0.row, pair[1].0.col));
        assert!(sorted);
    }

    #[test]
    fn bad_params_name_their_field() {
        let check = |params: Value, field: &str| {
            let found = cells_params(&params).map(|_| ()).unwrap_err_field();
            assert_eq!(found, field, "{params}");
        };
        check(json!([1, 2]), "params");
        check(json!({"origin": "B2"}), "params.cells");
        check(json!({"cells": 5}), "params.cells");
        check(json!({"cells": [[1], 7]}), "params.cells[1]");
        check(json!({"cells": [[1, {"a": 1}]]}), "params.cells[0][1]");
        check(json!({"cells": [[1]], "origin": "not a cell"}), "params.origin");
        check(
            json!({"cells": [[1]], "settings": {"confidence": "150%"}}),
            "params.settings.confidence",
        );
        check(
            json!({"cells": [[1]], "settings": {"colour": "blue"}}),
            "params.settings.colour",
        );
        check(
            json!({"cells": [[1]], "settings": {"response": [1, true]}}),
            "params.settings.response[1]",
        );
        check(json!({"cells": [[1]], "workDoneToken": [1]}), "params.workDoneToken");
        let workbook = |params: Value| workbook_params(&params).map(|_| ()).unwrap_err_field();
        assert_eq!(workbook(json!({})), "params.path");
        assert_eq!(workbook(json!({"path": 5})), "params.path");
        assert_eq!(workbook(json!({"path": "  "})), "params.path");
        assert_eq!(workbook(json!({"uri": "https://example.org/a.xlsx"})), "params.uri");
        // Strict decoding: another host, an escaped separator or NUL.
        for uri in [
            "file://otherhost/share/a.xlsx",
            "file:///tmp/a%2F..%2Fb.xlsx",
            "file:///tmp/a%5cb.xlsx",
            "file:///tmp/a.xlsx%00.txt",
        ] {
            assert_eq!(workbook(json!({ "uri": uri })), "params.uri", "{uri}");
        }
        for uri in ["file:///tmp/a%20b.xlsx", "file://localhost/tmp/a.xlsx"] {
            assert!(file_path_of(&uri.parse().expect("a URI")).is_some(), "{uri}");
        }
    }

    trait ErrField {
        fn unwrap_err_field(self) -> String;
    }

    impl ErrField for Result<(), ParamsError> {
        fn unwrap_err_field(self) -> String {
            match self {
                Ok(()) => "no error".into(),
                Err(error) => error.field,
            }
        }
    }

    #[test]
    fn settings_use_the_settings_sheet_keys() {
        let read = settings(Some(&json!({
            "confidence": 0.9,
            "response": ["Gloss", "Haze"],
            "contrast": ["new vs old: A - B", "A - C"],
            "direction": "lower",
            "value name": "Thickness",
        })))
        .expect("valid");
        assert_eq!(read.confidence, Some(0.9));
        assert_eq!(read.responses, vec!["Gloss", "Haze"]);
        assert_eq!(read.contrasts.len(), 2);
        assert_eq!(read.value_name.as_deref(), Some("Thickness"));
        let paths =
            workbook_params(&json!({"path": "week 3.xlsx", "sheet": "Trial", "range": "B2:D9"})).expect("valid");
        assert_eq!(paths.path, PathBuf::from("week 3.xlsx"));
        assert_eq!(paths.settings.sheet.as_deref(), Some("Trial"));
        assert_eq!(paths.settings.range.as_deref(), Some("B2:D9"));
    }

    #[test]
    fn directions_per_response_as_a_list_or_an_object() {
        use service::settings::Direction;
        let listed = settings(Some(&json!({"direction": ["higher", "Leak rate: lower"]}))).expect("valid");
        assert_eq!(listed.direction_for("Leak rate (ccm)"), Some(Direction::LowerIsBetter));
        assert_eq!(listed.direction_for("Strength"), Some(Direction::HigherIsBetter));
        let object = settings(Some(
            &json!({"direction": {"Leak rate": "lower", "Strength": "target 40"}}),
        ))
        .expect("valid");
        assert_eq!(object.direction, None);
        assert_eq!(object.direction_for("Strength"), Some(Direction::Target(40.0)));
        let bad = settings(Some(&json!({"direction": {"Strength": true}}))).unwrap_err();
        assert_eq!(bad.field, "params.settings.direction.Strength");
    }

    #[test]
    fn goals_as_a_list_or_an_object() {
        let listed = settings(Some(&json!({"goal": [
            "Peel strength (N): higher, acceptable 38 to 45",
            "Haze: lower, acceptable 0.8 to 2.5, weight 2"
        ]})))
        .expect("valid");
        assert_eq!(listed.goals.len(), 2);
        assert_eq!(listed.goals[1].weight, 2.0);
        let object = settings(Some(&json!({"goal": {"Haze": "target 1.2, acceptable 0.8 to 2.5"}}))).expect("valid");
        assert_eq!(object.goals[0].response, "Haze");
        assert_eq!(object.goals[0].target, Some(1.2));
        let bad = settings(Some(&json!({"goal": ["Haze: lower"]}))).unwrap_err();
        assert_eq!(bad.field, "params.settings.goal");
        assert!(bad.problem.contains("acceptable limits"), "{}", bad.problem);
    }
}
