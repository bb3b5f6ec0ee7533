//! A generated corpus of workbooks in the shapes engineers keep trial data in: title rows
//! and blank rows above the header, notes and units rows, merged title cells, cover and
//! summary sheets, several tables on one sheet, logs with dates and operators, formulas
//! with cached values, summary rows, hidden helper columns, colour-only markings, numeric
//! settings columns laid out as a design, two responses and text among the numbers.
//!
//! Every scenario is invented (fixed seeds, made-up products and plants). Each case states
//! the table a person would analyse: the sheet and the header's first cell, the layout,
//! the factor and response columns, the number of records and, where it matters, the
//! levels in order. The expectations are a reader's choice by common practice: record
//! identifiers and context (dates, operators, run and replicate numbers, sample numbers,
//! lots, notes) are not conditions, summary rows are not measurements, and a cover or
//! specification table is not the trial.

use std::path::Path;

use rust_xlsxwriter::{Color, Format, Formula, Workbook};

use super::corpus::{two_level_runs, Noise};

/// One cell of a generated sheet.
#[derive(Debug, Clone)]
pub enum Cell {
    /// Text.
    Text(String),
    /// A number.
    Number(f64),
    /// A date (a serial day number shown with a date format).
    Date(f64),
    /// A formula with its cached result.
    Formula(String, f64),
    /// A number marked by colour only.
    Marked(f64),
}

/// Text cell.
pub fn t(text: &str) -> Cell {
    Cell::Text(text.to_string())
}

/// Number cell.
pub fn n(value: f64) -> Cell {
    Cell::Number(value)
}

/// A sheet to generate.
#[derive(Debug, Clone, Default)]
pub struct SheetSpec {
    /// Sheet name.
    pub name: String,
    /// Cells by zero-based row and column.
    pub cells: Vec<(u32, u16, Cell)>,
    /// Merged areas (first row, first column, last row, last column) with their text.
    pub merged: Vec<(u32, u16, u32, u16, String)>,
    /// Hidden columns.
    pub hidden_cols: Vec<u16>,
}

impl SheetSpec {
    /// An empty sheet.
    pub fn new(name: &str) -> Self {
        Self {
            name: name.to_string(),
            ..Self::default()
        }
    }

    /// One cell.
    pub fn put(&mut self, row: u32, col: u16, cell: Cell) -> &mut Self {
        self.cells.push((row, col, cell));
        self
    }

    /// A header row at (row, col) and data rows below it.
    pub fn table(&mut self, row: u32, col: u16, header: &[&str], rows: &[Vec<Option<Cell>>]) -> &mut Self {
        for (offset, name) in header.iter().enumerate() {
            if !name.is_empty() {
                self.put(row, col + offset as u16, t(name));
            }
        }
        for (row_offset, cells) in rows.iter().enumerate() {
            for (offset, cell) in cells.iter().enumerate() {
                if let Some(cell) = cell {
                    self.put(row + 1 + row_offset as u32, col + offset as u16, cell.clone());
                }
            }
        }
        self
    }
}

/// What a person would analyse in a case.
#[derive(Debug, Clone)]
pub struct Expected {
    /// The sheet of the trial table.
    pub sheet: &'static str,
    /// The first cell of its header row.
    pub header_cell: &'static str,
    /// "long" or "wide".
    pub layout: &'static str,
    /// Factor names, left to right ("condition" for a wide table).
    pub factors: Vec<&'static str>,
    /// Response names, left to right ("value" for a wide table).
    pub responses: Vec<&'static str>,
    /// Number of records.
    pub records: usize,
    /// Levels, in order, of the factors listed.
    pub levels: Vec<(&'static str, Vec<String>)>,
    /// Whether detection had a choice to make that the summary must state.
    pub choice_said: bool,
}

/// One generated workbook and its expected reading.
#[derive(Debug, Clone)]
pub struct ShapeCase {
    /// File stem.
    pub name: &'static str,
    /// The sheets, in order.
    pub sheets: Vec<SheetSpec>,
    /// The reader's answer.
    pub expected: Expected,
}

/// Writes a case's workbook.
pub fn write_shape(case: &ShapeCase, path: &Path) {
    let mut book = Workbook::new();
    let date_format = Format::new().set_num_format("yyyy-mm-dd");
    let marked_format = Format::new().set_background_color(Color::Yellow);
    for spec in &case.sheets {
        let sheet = book.add_worksheet();
        sheet.set_name(&spec.name).expect("valid sheet name");
        for (row, col, cell) in &spec.cells {
            let (row, col) = (*row, *col);
            match cell {
                Cell::Text(text) => sheet.write_string(row, col, text).map(|_| ()),
                Cell::Number(value) => sheet.write_number(row, col, *value).map(|_| ()),
                Cell::Date(serial) => sheet
                    .write_number_with_format(row, col, *serial, &date_format)
                    .map(|_| ()),
                Cell::Formula(formula, cached) => sheet
                    .write_formula(row, col, Formula::new(formula).set_result(cached.to_string()))
                    .map(|_| ()),
                Cell::Marked(value) => sheet
                    .write_number_with_format(row, col, *value, &marked_format)
                    .map(|_| ()),
            }
            .expect("writable cell");
        }
        for (first_row, first_col, last_row, last_col, text) in &spec.merged {
            sheet
                .merge_range(*first_row, *first_col, *last_row, *last_col, text, &Format::new())
                .expect("mergeable");
        }
        for col in &spec.hidden_cols {
            sheet.set_column_hidden(*col).expect("hideable");
        }
    }
    book.save(path).expect("the corpus workbook can be saved");
}

fn round(value: f64, places: i32) -> f64 {
    let scale = 10f64.powi(places);
    (value * scale).round() / scale
}

fn strings(list: &[&str]) -> Vec<String> {
    list.iter().map(|text| text.to_string()).collect()
}

/// A long table of one label factor: label column and one measurement, `reps` per level.
fn one_factor_rows(noise: &mut Noise, levels: &[&str], reps: usize, base: f64, sd: f64) -> Vec<Vec<Option<Cell>>> {
    let mut rows = Vec::new();
    for (index, level) in levels.iter().enumerate() {
        for _ in 0..reps {
            rows.push(vec![
                Some(t(level)),
                Some(n(round(base + index as f64 * sd + noise.normal(sd), 2))),
            ]);
        }
    }
    rows
}

/// A wide table body: `reps` rows of one value per condition.
fn wide_rows(noise: &mut Noise, conditions: usize, reps: usize, base: f64, sd: f64) -> Vec<Vec<Option<Cell>>> {
    (0..reps)
        .map(|_| {
            (0..conditions)
                .map(|index| Some(n(round(base + index as f64 * sd + noise.normal(sd), 1))))
                .collect()
        })
        .collect()
}

fn expected(
    sheet: &'static str,
    header_cell: &'static str,
    factors: &[&'static str],
    responses: &[&'static str],
    records: usize,
) -> Expected {
    Expected {
        sheet,
        header_cell,
        layout: "long",
        factors: factors.to_vec(),
        responses: responses.to_vec(),
        records,
        levels: Vec::new(),
        choice_said: false,
    }
}

fn wide_expected(sheet: &'static str, header_cell: &'static str, levels: &[&str], records: usize) -> Expected {
    Expected {
        sheet,
        header_cell,
        layout: "wide",
        factors: vec!["condition"],
        responses: vec!["value"],
        records,
        levels: vec![("condition", strings(levels))],
        choice_said: false,
    }
}

/// Rows with a run number (1, 2, ...) put before their first cell.
fn numbered(rows: Vec<Vec<Option<Cell>>>) -> Vec<Vec<Option<Cell>>> {
    rows.into_iter()
        .enumerate()
        .map(|(index, mut row)| {
            row.insert(0, Some(n((index + 1) as f64)));
            row
        })
        .collect()
}

/// A wide table whose title names its factor or its measured value.
fn titled(mut expected: Expected, factor: Option<&'static str>, value: Option<&'static str>) -> Expected {
    if let Some(factor) = factor {
        expected.factors = vec![factor];
        expected.levels[0].0 = factor;
    }
    if let Some(value) = value {
        expected.responses = vec![value];
    }
    expected
}

fn case(name: &'static str, sheets: Vec<SheetSpec>, expected: Expected) -> ShapeCase {
    ShapeCase { name, sheets, expected }
}

fn with_levels(mut expected: Expected, factor: &'static str, levels: &[&str]) -> Expected {
    expected.levels.push((factor, strings(levels)));
    expected
}

fn said(mut expected: Expected) -> Expected {
    expected.choice_said = true;
    expected
}

/// A cover sheet: a title and a small specification table.
fn cover_sheet(name: &str) -> SheetSpec {
    let mut sheet = SheetSpec::new(name);
    sheet.put(0, 0, t("Seal strength study, line 4"));
    sheet.put(1, 0, t("Prepared by process engineering"));
    sheet.table(
        3,
        0,
        &["Parameter", "Target", "Lower limit", "Upper limit"],
        &[
            vec![Some(t("Seal strength")), Some(n(12.0)), Some(n(10.0)), Some(n(14.0))],
            vec![Some(t("Seal width")), Some(n(5.0)), Some(n(4.5)), Some(n(5.5))],
            vec![
                Some(t("Jaw temperature")),
                Some(n(180.0)),
                Some(n(170.0)),
                Some(n(190.0)),
            ],
        ],
    );
    sheet
}

/// Rows of a two-level design in natural units: each factor's (low, high) for -1 / +1.
fn design_rows(
    noise: &mut Noise,
    runs: &[Vec<f64>],
    settings: &[(f64, f64)],
    effects: &[f64],
    base: f64,
    responses: usize,
) -> Vec<Vec<f64>> {
    runs.iter()
        .map(|run| {
            let mut row: Vec<f64> = run
                .iter()
                .zip(settings)
                .map(|(coded, (low, high))| {
                    if *coded < 0.0 {
                        *low
                    } else if *coded > 0.0 {
                        *high
                    } else {
                        (low + high) / 2.0
                    }
                })
                .collect();
            for response in 0..responses {
                let signal: f64 = run
                    .iter()
                    .zip(effects)
                    .map(|(coded, effect)| coded * effect / 2.0)
                    .sum();
                row.push(round(base * (1.0 + response as f64) + signal + noise.normal(0.5), 2));
            }
            row
        })
        .collect()
}

fn numbers(row: &[f64]) -> Vec<Option<Cell>> {
    row.iter().map(|value| Some(n(*value))).collect()
}

/// The whole corpus.
pub fn shapes() -> Vec<ShapeCase> {
    let mut cases = Vec::new();
    let mut noise = Noise::new(20_261_204);

    // 1. A clean long table.
    let mut sheet = SheetSpec::new("Data");
    sheet.table(
        0,
        0,
        &["Supplier", "Strength"],
        &one_factor_rows(&mut noise, &["North", "South", "East", "West"], 5, 40.0, 1.5),
    );
    cases.push(case(
        "clean-long",
        vec![sheet],
        expected("Data", "A1", &["Supplier"], &["Strength"], 20),
    ));

    // 2. A clean wide table.
    let mut sheet = SheetSpec::new("Ovens");
    sheet.table(
        0,
        0,
        &["Oven 1", "Oven 2", "Oven 3"],
        &wide_rows(&mut noise, 3, 8, 85.0, 1.0),
    );
    cases.push(case(
        "clean-wide",
        vec![sheet],
        wide_expected("Ovens", "A1", &["Oven 1", "Oven 2", "Oven 3"], 24),
    ));

    // 3. A title row and a blank row above the header.
    let mut sheet = SheetSpec::new("Trial");
    sheet.put(0, 0, t("Coating thickness by gun setting, March"));
    sheet.table(
        2,
        0,
        &["Gun setting", "Thickness"],
        &one_factor_rows(&mut noise, &["Low", "Mid", "High"], 6, 60.0, 2.0),
    );
    cases.push(case(
        "title-and-blank-row",
        vec![sheet],
        expected("Trial", "A3", &["Gun setting"], &["Thickness"], 18),
    ));

    // 4. A merged title above the header.
    let mut sheet = SheetSpec::new("Trial");
    sheet.merged.push((0, 0, 0, 3, "Bond test, adhesive trial 7".into()));
    sheet.table(
        1,
        0,
        &["Adhesive", "Peel force"],
        &one_factor_rows(&mut noise, &["Type K", "Type L", "Type M"], 5, 22.0, 1.0),
    );
    cases.push(case(
        "merged-title",
        vec![sheet],
        expected("Trial", "A2", &["Adhesive"], &["Peel force"], 15),
    ));

    // 5. A title of two text cells above the header.
    let mut sheet = SheetSpec::new("Trial");
    sheet.put(0, 0, t("Trial:"));
    sheet.put(0, 1, t("Die lubricant"));
    sheet.table(2, 0, &["Lubricant", "Ejection force", "Cycle time"], &{
        let mut rows = one_factor_rows(&mut noise, &["Dry film", "Water based", "Oil based"], 6, 3.0, 0.3);
        for row in &mut rows {
            row.push(Some(n(round(31.0 + noise.normal(0.4), 2))));
        }
        rows
    });
    cases.push(case(
        "two-cell-title",
        vec![sheet],
        expected("Trial", "A3", &["Lubricant"], &["Ejection force", "Cycle time"], 18),
    ));

    // 6. A units row under the header.
    let mut sheet = SheetSpec::new("Trial");
    let mut rows = vec![vec![None, Some(t("MPa"))]];
    rows.extend(one_factor_rows(
        &mut noise,
        &["Cure A", "Cure B", "Cure C"],
        5,
        48.0,
        1.2,
    ));
    sheet.table(0, 0, &["Cure cycle", "Flexural strength"], &rows);
    cases.push(case(
        "units-row",
        vec![sheet],
        expected("Trial", "A1", &["Cure cycle"], &["Flexural strength (MPa)"], 15),
    ));

    // 7. A note a blank row below the table.
    let mut sheet = SheetSpec::new("Trial");
    sheet.table(
        0,
        0,
        &["Nozzle", "Flow"],
        &one_factor_rows(&mut noise, &["0.8 mm", "1.0 mm", "1.2 mm"], 6, 12.0, 0.5),
    );
    sheet.put(20, 0, t("Note: nozzle 1.2 mm was cleaned before its runs"));
    cases.push(case(
        "note-below",
        vec![sheet],
        expected("Trial", "A1", &["Nozzle"], &["Flow"], 18),
    ));

    // 8. A cover sheet with a specification table before the data sheet.
    let mut data = SheetSpec::new("Data");
    data.table(
        0,
        0,
        &["Jaw setting", "Seal strength"],
        &one_factor_rows(&mut noise, &["J1", "J2", "J3", "J4"], 6, 12.0, 0.6),
    );
    cases.push(case(
        "cover-sheet-first",
        vec![cover_sheet("Cover"), data],
        said(expected("Data", "A1", &["Jaw setting"], &["Seal strength"], 24)),
    ));

    // 9. A summary sheet before the data sheet.
    let mut summary = SheetSpec::new("Summary");
    summary.table(
        0,
        0,
        &["Mixer", "Mean", "SD", "n"],
        &[
            vec![Some(t("Paddle")), Some(n(4.1)), Some(n(0.3)), Some(n(6.0))],
            vec![Some(t("Ribbon")), Some(n(4.6)), Some(n(0.2)), Some(n(6.0))],
            vec![Some(t("Plough")), Some(n(3.9)), Some(n(0.4)), Some(n(6.0))],
        ],
    );
    let mut data = SheetSpec::new("Runs");
    data.table(
        0,
        0,
        &["Mixer", "Blend CV"],
        &one_factor_rows(&mut noise, &["Paddle", "Ribbon", "Plough"], 6, 4.0, 0.3),
    );
    cases.push(case(
        "summary-sheet-first",
        vec![summary, data],
        said(expected("Runs", "A1", &["Mixer"], &["Blend CV"], 18)),
    ));

    // 10. Cover sheet of text only, then a wide data sheet.
    let mut cover = SheetSpec::new("Read me");
    cover.put(0, 0, t("Furnace zone trial"));
    cover.put(1, 0, t("Hardness in HRC, one column per zone"));
    let mut data = SheetSpec::new("Hardness");
    data.table(
        0,
        0,
        &["Zone 1", "Zone 2", "Zone 3", "Zone 4"],
        &wide_rows(&mut noise, 4, 6, 52.0, 0.8),
    );
    cases.push(case(
        "text-cover-wide",
        vec![cover, data],
        wide_expected("Hardness", "A1", &["Zone 1", "Zone 2", "Zone 3", "Zone 4"], 24),
    ));

    // 11. Two tables side by side: the trial and a specification table.
    let mut sheet = SheetSpec::new("Line 2");
    sheet.table(
        0,
        0,
        &["Die", "Wall thickness"],
        &one_factor_rows(&mut noise, &["Die 1", "Die 2", "Die 3"], 8, 2.1, 0.05),
    );
    sheet.table(
        0,
        3,
        &["Die", "Minimum", "Maximum"],
        &[
            vec![Some(t("Die 1")), Some(n(2.0)), Some(n(2.2))],
            vec![Some(t("Die 2")), Some(n(2.0)), Some(n(2.2))],
            vec![Some(t("Die 3")), Some(n(2.0)), Some(n(2.2))],
        ],
    );
    cases.push(case(
        "side-by-side-spec",
        vec![sheet],
        said(expected("Line 2", "A1", &["Die"], &["Wall thickness"], 24)),
    ));

    // 12. Two tables side by side, the spec table on the left.
    let mut sheet = SheetSpec::new("Sheet1");
    sheet.table(
        0,
        0,
        &["Grade", "Target"],
        &[vec![Some(t("G1")), Some(n(30.0))], vec![Some(t("G2")), Some(n(32.0))]],
    );
    sheet.table(
        0,
        3,
        &["Grade", "Melt index"],
        &one_factor_rows(&mut noise, &["G1", "G2"], 10, 30.0, 1.0),
    );
    cases.push(case(
        "side-by-side-spec-left",
        vec![sheet],
        said(expected("Sheet1", "D1", &["Grade"], &["Melt index"], 20)),
    ));

    // 13. Stacked: the trial, then a summary table after blank rows.
    let mut sheet = SheetSpec::new("Trial");
    sheet.table(
        0,
        0,
        &["Primer", "Adhesion"],
        &one_factor_rows(&mut noise, &["P1", "P2", "P3"], 5, 8.0, 0.4),
    );
    sheet.table(
        18,
        0,
        &["Primer", "Mean", "SD"],
        &[
            vec![Some(t("P1")), Some(n(8.0)), Some(n(0.4))],
            vec![Some(t("P2")), Some(n(8.4)), Some(n(0.4))],
            vec![Some(t("P3")), Some(n(8.8)), Some(n(0.4))],
        ],
    );
    cases.push(case(
        "stacked-summary-below",
        vec![sheet],
        said(expected("Trial", "A1", &["Primer"], &["Adhesion"], 15)),
    ));

    // 14. Stacked: a settings table on top, the trial below.
    let mut sheet = SheetSpec::new("Trial");
    sheet.table(
        0,
        0,
        &["Setting", "Value"],
        &[
            vec![Some(t("Line speed")), Some(n(40.0))],
            vec![Some(t("Nip pressure")), Some(n(3.0))],
        ],
    );
    sheet.table(
        5,
        0,
        &["Roll cover", "Gloss"],
        &one_factor_rows(&mut noise, &["Rubber", "Steel", "Composite"], 6, 70.0, 2.0),
    );
    cases.push(case(
        "stacked-settings-above",
        vec![sheet],
        said(expected("Trial", "A6", &["Roll cover"], &["Gloss"], 18)),
    ));

    // 15. Two trials side by side (two weeks): the first is analysed and the other named.
    let mut sheet = SheetSpec::new("Weeks");
    sheet.table(
        0,
        0,
        &["Filter", "Turbidity"],
        &one_factor_rows(&mut noise, &["F-A", "F-B"], 6, 1.2, 0.1),
    );
    sheet.table(
        0,
        3,
        &["Filter", "Turbidity"],
        &one_factor_rows(&mut noise, &["F-A", "F-B"], 5, 1.2, 0.1),
    );
    cases.push(case(
        "two-trials-side-by-side",
        vec![sheet],
        said(expected("Weeks", "A1", &["Filter"], &["Turbidity"], 12)),
    ));

    // 16. A log with Date, Operator, Recipe and Yield.
    let mut sheet = SheetSpec::new("Log");
    let operators = ["Ana", "Ben", "Chen"];
    let recipes = ["R1", "R2", "R3"];
    let rows: Vec<Vec<Option<Cell>>> = (0..27)
        .map(|index| {
            vec![
                Some(Cell::Date(46_300.0 + (index / 3) as f64)),
                Some(t(operators[index % 3])),
                Some(t(recipes[(index / 3) % 3])),
                Some(n(round(88.0 + noise.normal(1.0), 2))),
            ]
        })
        .collect();
    sheet.table(0, 0, &["Date", "Operator", "Recipe", "Yield"], &rows);
    cases.push(case(
        "log-date-operator",
        vec![sheet],
        said(expected("Log", "A1", &["Recipe"], &["Yield"], 27)),
    ));

    // 17. A log with Date, Shift, Machine and Diameter.
    let mut sheet = SheetSpec::new("Log");
    let rows: Vec<Vec<Option<Cell>>> = (0..24)
        .map(|index| {
            vec![
                Some(Cell::Date(46_310.0 + (index / 6) as f64)),
                Some(t(["Early", "Late"][index % 2])),
                Some(t(["M1", "M2", "M3"][(index / 2) % 3])),
                Some(n(round(12.0 + noise.normal(0.02), 3))),
            ]
        })
        .collect();
    sheet.table(0, 0, &["Date", "Shift", "Machine", "Diameter"], &rows);
    cases.push(case(
        "log-date-shift",
        vec![sheet],
        said(expected("Log", "A1", &["Machine"], &["Diameter"], 24)),
    ));

    // 18. A replicate column 1-4.
    let mut sheet = SheetSpec::new("Trial");
    let rows: Vec<Vec<Option<Cell>>> = (0..12)
        .map(|index| {
            vec![
                Some(t(["Pt", "Pd", "Ni"][index / 4])),
                Some(n((index % 4 + 1) as f64)),
                Some(n(round(70.0 + noise.normal(2.0), 1))),
            ]
        })
        .collect();
    sheet.table(0, 0, &["Catalyst", "Rep", "Conversion"], &rows);
    cases.push(case(
        "replicate-column",
        vec![sheet],
        said(expected("Trial", "A1", &["Catalyst"], &["Conversion"], 12)),
    ));

    // 19. A run number column in random order.
    let mut sheet = SheetSpec::new("Trial");
    let order = [7, 3, 11, 1, 9, 5, 12, 2, 8, 4, 10, 6];
    let rows: Vec<Vec<Option<Cell>>> = (0..12)
        .map(|index| {
            vec![
                Some(n(order[index] as f64)),
                Some(t(["None", "Low", "High"][index / 4])),
                Some(n(round(350.0 + noise.normal(10.0), 0))),
            ]
        })
        .collect();
    sheet.table(0, 0, &["Run", "Additive", "Viscosity"], &rows);
    cases.push(case(
        "run-number-shuffled",
        vec![sheet],
        said(expected("Trial", "A1", &["Additive"], &["Viscosity"], 12)),
    ));

    // 20. A wide table with a Panel number column and an Average formula row.
    let mut sheet = SheetSpec::new("Panels");
    let mut rows = numbered(wide_rows(&mut noise, 3, 8, 85.0, 1.0));
    let averages: Vec<Option<Cell>> = std::iter::once(Some(t("Average")))
        .chain(
            ["B", "C", "D"]
                .iter()
                .map(|col| Some(Cell::Formula(format!("=AVERAGE({col}2:{col}9)"), 85.0))),
        )
        .collect();
    rows.push(averages);
    sheet.table(0, 0, &["Panel", "Oven 1", "Oven 2", "Oven 3"], &rows);
    cases.push(case(
        "wide-panel-average",
        vec![sheet],
        said(wide_expected("Panels", "B1", &["Oven 1", "Oven 2", "Oven 3"], 24)),
    ));

    // 21. Mean and SD rows under a long table.
    let mut sheet = SheetSpec::new("Trial");
    let mut rows = one_factor_rows(&mut noise, &["Blade A", "Blade B", "Blade C"], 5, 0.8, 0.05);
    rows.push(vec![
        Some(t("Mean")),
        Some(Cell::Formula("=AVERAGE(B2:B16)".into(), 0.85)),
    ]);
    rows.push(vec![Some(t("SD")), Some(Cell::Formula("=STDEV(B2:B16)".into(), 0.06))]);
    sheet.table(0, 0, &["Blade", "Roughness"], &rows);
    cases.push(case(
        "mean-sd-rows",
        vec![sheet],
        said(with_levels(
            expected("Trial", "A1", &["Blade"], &["Roughness"], 15),
            "Blade",
            &["Blade A", "Blade B", "Blade C"],
        )),
    ));

    // 22. A Total row under a long table of counts and a weight.
    let mut sheet = SheetSpec::new("Trial");
    let mut rows = one_factor_rows(&mut noise, &["Tool 1", "Tool 2"], 8, 250.0, 4.0);
    rows.push(vec![Some(t("Total")), Some(n(4040.0))]);
    sheet.table(0, 0, &["Tool", "Parts per hour"], &rows);
    cases.push(case(
        "total-row",
        vec![sheet],
        said(expected("Trial", "A1", &["Tool"], &["Parts per hour"], 16)),
    ));

    // 23. Min and Max rows after a blank row under a wide table.
    let mut sheet = SheetSpec::new("Trial");
    let mut rows = wide_rows(&mut noise, 3, 6, 14.0, 0.5);
    rows.push(vec![]);
    rows.push(vec![
        Some(Cell::Formula("=MIN(A2:A7)".into(), 13.0)),
        Some(Cell::Formula("=MIN(B2:B7)".into(), 13.5)),
        Some(Cell::Formula("=MIN(C2:C7)".into(), 14.0)),
        Some(t("Min")),
    ]);
    rows.push(vec![
        Some(Cell::Formula("=MAX(A2:A7)".into(), 15.0)),
        Some(Cell::Formula("=MAX(B2:B7)".into(), 15.5)),
        Some(Cell::Formula("=MAX(C2:C7)".into(), 16.0)),
        Some(t("Max")),
    ]);
    sheet.table(0, 0, &["Anode 1", "Anode 2", "Anode 3"], &rows);
    cases.push(case(
        "min-max-rows-wide",
        vec![sheet],
        said(wide_expected("Trial", "A1", &["Anode 1", "Anode 2", "Anode 3"], 18)),
    ));

    // 24. A 2^3 factorial typed by hand with numeric settings, Run and Std columns.
    let runs = two_level_runs(3, &[]);
    let body = design_rows(
        &mut noise,
        &runs,
        &[(150.0, 170.0), (10.0, 20.0), (2.0, 4.0)],
        &[4.0, 2.0, 0.0],
        60.0,
        1,
    );
    let rows: Vec<Vec<Option<Cell>>> = body
        .iter()
        .enumerate()
        .map(|(index, row)| {
            let mut cells = vec![Some(n(((index * 5) % 8 + 1) as f64)), Some(n((index + 1) as f64))];
            cells.extend(numbers(row));
            cells
        })
        .collect();
    let mut sheet = SheetSpec::new("Screening");
    sheet.table(0, 0, &["Run", "Std", "Temperature", "Time", "Pressure", "Yield"], &rows);
    cases.push(case(
        "numeric-full-factorial",
        vec![sheet],
        said(with_levels(
            expected("Screening", "A1", &["Temperature", "Time", "Pressure"], &["Yield"], 8),
            "Temperature",
            &["150", "170"],
        )),
    ));

    // 25. A 2^(4-1) fraction with two responses, replicated twice.
    let runs = two_level_runs(3, &[&[0, 1, 2]]);
    let mut rows: Vec<Vec<Option<Cell>>> = Vec::new();
    for _ in 0..2 {
        for row in design_rows(
            &mut noise,
            &runs,
            &[(80.0, 120.0), (20.0, 28.0), (5.0, 9.0), (1.0, 2.0)],
            &[3.0, 1.5, 0.0, 0.0],
            8.0,
            2,
        ) {
            rows.push(numbers(&row));
        }
    }
    let mut sheet = SheetSpec::new("Weld");
    sheet.table(0, 0, &["Current", "Voltage", "Speed", "Gap", "Width", "Depth"], &rows);
    cases.push(case(
        "numeric-fraction-two-responses",
        vec![sheet],
        said(expected(
            "Weld",
            "A1",
            &["Current", "Voltage", "Speed", "Gap"],
            &["Width", "Depth"],
            16,
        )),
    ));

    // 26. A 2^2 design with three centre runs.
    let mut runs = two_level_runs(2, &[]);
    runs.extend(std::iter::repeat_n(vec![0.0, 0.0], 3));
    let body = design_rows(&mut noise, &runs, &[(100.0, 120.0), (30.0, 50.0)], &[2.0, 1.0], 40.0, 1);
    let mut sheet = SheetSpec::new("Cure");
    sheet.table(
        0,
        0,
        &["Std order", "Temp", "Time", "Hardness"],
        &body
            .iter()
            .enumerate()
            .map(|(index, row)| {
                let mut cells = vec![Some(n((index + 1) as f64))];
                cells.extend(numbers(row));
                cells
            })
            .collect::<Vec<_>>(),
    );
    cases.push(case(
        "numeric-centre-points",
        vec![sheet],
        said(with_levels(
            expected("Cure", "A1", &["Temp", "Time"], &["Hardness"], 7),
            "Temp",
            &["100", "110", "120"],
        )),
    ));

    // 27. A two-factor central composite plan typed by hand (five levels each).
    let alpha = std::f64::consts::SQRT_2;
    let mut coded: Vec<Vec<f64>> = two_level_runs(2, &[]);
    coded.extend([vec![-alpha, 0.0], vec![alpha, 0.0], vec![0.0, -alpha], vec![0.0, alpha]]);
    coded.extend(std::iter::repeat_n(vec![0.0, 0.0], 5));
    let rows: Vec<Vec<Option<Cell>>> = coded
        .iter()
        .map(|run| {
            let speed = round(1000.0 + 200.0 * run[0], 0);
            let feed = round(0.2 + 0.05 * run[1], 3);
            let finish = round(
                1.6 - 0.2 * run[0] + 0.3 * run[1] + 0.1 * run[0] * run[0] + noise.normal(0.03),
                3,
            );
            vec![Some(n(speed)), Some(n(feed)), Some(n(finish))]
        })
        .collect();
    let mut sheet = SheetSpec::new("Surface");
    sheet.table(0, 0, &["Spindle speed", "Feed", "Surface finish"], &rows);
    cases.push(case(
        "numeric-central-composite",
        vec![sheet],
        said(with_levels(
            expected("Surface", "A1", &["Spindle speed", "Feed"], &["Surface finish"], 13),
            "Spindle speed",
            &["717", "800", "1000", "1200", "1283"],
        )),
    ));

    // 28. One numeric factor whose levels were run out of order.
    let mut sheet = SheetSpec::new("Dryer");
    let rows: Vec<Vec<Option<Cell>>> = [230.0, 250.0, 240.0, 260.0]
        .iter()
        .flat_map(|temperature| (0..4).map(move |_| *temperature))
        .map(|temperature| {
            vec![
                Some(n(temperature)),
                Some(n(round(9.0 - (temperature - 230.0) / 20.0 + noise.normal(0.2), 2))),
            ]
        })
        .collect();
    sheet.table(0, 0, &["Inlet temperature", "Moisture"], &rows);
    cases.push(case(
        "numeric-levels-by-value",
        vec![sheet],
        said(with_levels(
            expected("Dryer", "A1", &["Inlet temperature"], &["Moisture"], 16),
            "Inlet temperature",
            &["230", "240", "250", "260"],
        )),
    ));

    // 29. Labels differing in case.
    let mut sheet = SheetSpec::new("Trial");
    let variants = ["supplier A", "SUPPLIER B", "supplier c", "Supplier D"];
    let rows: Vec<Vec<Option<Cell>>> = (0..28)
        .map(|index| {
            let label = if index % 7 == 6 {
                variants[index / 7]
            } else {
                ["Supplier A", "Supplier B", "Supplier C", "Supplier D"][index / 7]
            };
            vec![Some(t(label)), Some(n(round(5.0 + noise.normal(0.2), 2)))]
        })
        .collect();
    sheet.table(0, 0, &["Supplier", "Purity"], &rows);
    cases.push(case(
        "labels-case",
        vec![sheet],
        said(with_levels(
            expected("Trial", "A1", &["Supplier"], &["Purity"], 28),
            "Supplier",
            &["Supplier A", "Supplier B", "Supplier C", "Supplier D"],
        )),
    ));

    // 30. Labels differing in spacing (trailing and inner double spaces).
    let mut sheet = SheetSpec::new("Trial");
    let rows: Vec<Vec<Option<Cell>>> = (0..18)
        .map(|index| {
            let label = match (index / 6, index % 3) {
                (0, 0) => "Line 1 ",
                (0, _) => "Line 1",
                (1, 1) => "Line  2",
                (1, _) => "Line 2",
                (_, _) => "Line 3",
            };
            vec![Some(t(label)), Some(n(round(3.2 + noise.normal(0.1), 2)))]
        })
        .collect();
    sheet.table(0, 0, &["Line", "Scrap rate"], &rows);
    cases.push(case(
        "labels-spacing",
        vec![sheet],
        said(with_levels(
            expected("Trial", "A1", &["Line"], &["Scrap rate"], 18),
            "Line",
            &["Line 1", "Line 2", "Line 3"],
        )),
    ));

    // 31. Labels differing in Unicode normalisation (composed and decomposed accents).
    let mut sheet = SheetSpec::new("Essai");
    let rows: Vec<Vec<Option<Cell>>> = (0..16)
        .map(|index| {
            let label = match index % 4 {
                0 => "Réacteur 1",
                1 => "Re\u{301}acteur 1",
                2 => "Réacteur 2",
                _ => "Réacteur 2",
            };
            vec![Some(t(label)), Some(n(round(71.0 + noise.normal(0.8), 1)))]
        })
        .collect();
    sheet.table(0, 0, &["Réacteur", "Rendement"], &rows);
    cases.push(case(
        "labels-unicode",
        vec![sheet],
        said(with_levels(
            expected("Essai", "A1", &["Réacteur"], &["Rendement"], 16),
            "Réacteur",
            &["Réacteur 1", "Réacteur 2"],
        )),
    ));

    // 32. Two responses, one text factor.
    let mut sheet = SheetSpec::new("Moulding");
    let rows: Vec<Vec<Option<Cell>>> = (0..18)
        .map(|index| {
            vec![
                Some(t(["Cavity 1", "Cavity 2", "Cavity 3"][index / 6])),
                Some(n(round(50.0 + noise.normal(0.1), 2))),
                Some(n(round(12.0 + noise.normal(0.05), 3))),
            ]
        })
        .collect();
    sheet.table(0, 0, &["Mould", "Length", "Weight"], &rows);
    cases.push(case(
        "two-responses",
        vec![sheet],
        expected("Moulding", "A1", &["Mould"], &["Length", "Weight"], 18),
    ));

    // 33. Text among the numbers of the response.
    let mut sheet = SheetSpec::new("Trial");
    let mut rows = one_factor_rows(&mut noise, &["Sieve 1", "Sieve 2", "Sieve 3"], 6, 0.5, 0.05);
    rows[4][1] = Some(t("n/a"));
    rows[9][1] = Some(t("not measured"));
    sheet.table(0, 0, &["Sieve", "Fines"], &rows);
    cases.push(case(
        "text-among-numbers",
        vec![sheet],
        expected("Trial", "A1", &["Sieve"], &["Fines"], 18),
    ));

    // 34. The response computed by formulas with cached values.
    let mut sheet = SheetSpec::new("Trial");
    let rows: Vec<Vec<Option<Cell>>> = (0..15)
        .map(|index| {
            let mass = round(20.0 + noise.normal(0.5), 2);
            let volume = round(8.0 + noise.normal(0.1), 2);
            vec![
                Some(t(["Press A", "Press B", "Press C"][index / 5])),
                Some(n(mass)),
                Some(n(volume)),
                Some(Cell::Formula(format!("=B{row}/C{row}", row = index + 2), mass / volume)),
            ]
        })
        .collect();
    sheet.table(0, 0, &["Press", "Mass", "Volume", "Density"], &rows);
    cases.push(case(
        "formula-response",
        vec![sheet],
        expected("Trial", "A1", &["Press"], &["Mass", "Volume", "Density"], 15),
    ));

    // 35. A hidden helper column holding a lookup key.
    let mut sheet = SheetSpec::new("Trial");
    let rows: Vec<Vec<Option<Cell>>> = (0..16)
        .map(|index| {
            let tip = ["Tip S", "Tip M", "Tip L", "Tip XL"][index / 4];
            vec![
                Some(t(tip)),
                Some(Cell::Text(format!("{tip}-{}", index % 4 + 1))),
                Some(n(round(0.35 + noise.normal(0.01), 3))),
            ]
        })
        .collect();
    sheet.table(0, 0, &["Tip", "Key", "Bead width"], &rows);
    sheet.hidden_cols.push(1);
    cases.push(case(
        "hidden-helper-column",
        vec![sheet],
        said(expected("Trial", "A1", &["Tip"], &["Bead width"], 16)),
    ));

    // 36. Colour-only markings on some values.
    let mut sheet = SheetSpec::new("Trial");
    let rows: Vec<Vec<Option<Cell>>> = (0..15)
        .map(|index| {
            let value = round(101.0 + noise.normal(1.0), 1);
            vec![
                Some(t(["Wash 1", "Wash 2", "Wash 3"][index / 5])),
                Some(if index % 4 == 0 { Cell::Marked(value) } else { n(value) }),
            ]
        })
        .collect();
    sheet.table(0, 0, &["Wash", "Brightness"], &rows);
    cases.push(case(
        "colour-markings",
        vec![sheet],
        expected("Trial", "A1", &["Wash"], &["Brightness"], 15),
    ));

    // 37. A notes column filled on a few rows.
    let mut sheet = SheetSpec::new("Trial");
    let mut rows = one_factor_rows(&mut noise, &["Nylon", "Acetal", "PBT"], 6, 61.0, 1.5);
    for (index, row) in rows.iter_mut().enumerate() {
        row.push(match index {
            2 => Some(t("flash on parting line")),
            11 => Some(t("short shot, remeasured")),
            _ => None,
        });
    }
    sheet.table(0, 0, &["Resin", "Impact energy", "Notes"], &rows);
    cases.push(case(
        "notes-column",
        vec![sheet],
        said(expected("Trial", "A1", &["Resin"], &["Impact energy"], 18)),
    ));

    // 38. A comments column filled on most rows.
    let mut sheet = SheetSpec::new("Trial");
    let mut rows = one_factor_rows(&mut noise, &["Flux X", "Flux Y"], 8, 2.0, 0.2);
    for (index, row) in rows.iter_mut().enumerate() {
        row.push(Some(t(["ok", "ok", "slight voids", "ok"][index % 4])));
    }
    sheet.table(0, 0, &["Flux", "Void fraction", "Comments"], &rows);
    cases.push(case(
        "comments-column",
        vec![sheet],
        said(expected("Trial", "A1", &["Flux"], &["Void fraction"], 16)),
    ));

    // 39. A lot column repeated over pairs of rows beside the factor.
    let mut sheet = SheetSpec::new("Trial");
    let rows: Vec<Vec<Option<Cell>>> = (0..16)
        .map(|index| {
            vec![
                Some(Cell::Text(format!("L-23{:02}", index / 2))),
                Some(t(["Binder 1", "Binder 2"][index % 2])),
                Some(n(round(1.8 + noise.normal(0.05), 3))),
            ]
        })
        .collect();
    sheet.table(0, 0, &["Lot", "Binder", "Tablet hardness"], &rows);
    cases.push(case(
        "lot-column",
        vec![sheet],
        said(expected("Trial", "A1", &["Binder"], &["Tablet hardness"], 16)),
    ));

    // 40. A sample number column, numeric but not counting up.
    let mut sheet = SheetSpec::new("Trial");
    let rows: Vec<Vec<Option<Cell>>> = (0..15)
        .map(|index| {
            vec![
                Some(n((1000 + (index * 7) % 15) as f64)),
                Some(t(["Bath 1", "Bath 2", "Bath 3"][index % 3])),
                Some(n(round(25.0 + noise.normal(0.5), 2))),
            ]
        })
        .collect();
    sheet.table(0, 0, &["Sample no.", "Bath", "Plating thickness"], &rows);
    cases.push(case(
        "sample-number",
        vec![sheet],
        said(expected("Trial", "A1", &["Bath"], &["Plating thickness"], 15)),
    ));

    // 41. An operator column beside the machine factor.
    let mut sheet = SheetSpec::new("Trial");
    let rows: Vec<Vec<Option<Cell>>> = (0..18)
        .map(|index| {
            vec![
                Some(t(["Dana", "Eli"][index % 2])),
                Some(t(["Lathe 1", "Lathe 2", "Lathe 3"][index / 6])),
                Some(n(round(0.012 + noise.normal(0.001), 4))),
            ]
        })
        .collect();
    sheet.table(0, 0, &["Operator", "Machine", "Runout"], &rows);
    cases.push(case(
        "operator-column",
        vec![sheet],
        said(expected("Trial", "A1", &["Machine"], &["Runout"], 18)),
    ));

    // 42. Title, units row, Mean row and a hidden helper column together.
    let mut sheet = SheetSpec::new("Trial");
    sheet.put(0, 0, t("Burst pressure by liner"));
    let mut rows = vec![vec![None, Some(t("bar")), None]];
    for (index, row) in one_factor_rows(&mut noise, &["Liner 1", "Liner 2", "Liner 3"], 5, 40.0, 1.5)
        .into_iter()
        .enumerate()
    {
        let mut row = row;
        row.push(Some(n((index % 5 + 1) as f64)));
        rows.push(row);
    }
    rows.push(vec![
        Some(t("Mean")),
        Some(Cell::Formula("=AVERAGE(B4:B18)".into(), 41.5)),
        None,
    ]);
    sheet.table(1, 0, &["Liner", "Burst pressure", "Replicate"], &rows);
    sheet.hidden_cols.push(2);
    cases.push(case(
        "combined-title-units-mean",
        vec![sheet],
        said(expected("Trial", "A2", &["Liner"], &["Burst pressure (bar)"], 15)),
    ));

    // 43. A Date column of text dates and a time of day, then two label factors.
    let mut sheet = SheetSpec::new("Log");
    let rows: Vec<Vec<Option<Cell>>> = (0..24)
        .map(|index| {
            vec![
                Some(Cell::Date(
                    46_320.0 + (index / 4) as f64 + 0.25 + 0.05 * (index % 4) as f64,
                )),
                Some(t(["Fine", "Coarse"][index % 2])),
                Some(t(["Dry", "Wet"][(index / 2) % 2])),
                Some(n(round(60.0 + noise.normal(2.0), 1))),
            ]
        })
        .collect();
    sheet.table(0, 0, &["Sampled at", "Grind", "Process", "Recovery"], &rows);
    cases.push(case(
        "log-timestamps-two-factors",
        vec![sheet],
        said(expected("Log", "A1", &["Grind", "Process"], &["Recovery"], 24)),
    ));

    // 44. Coded -1/+1 settings columns with a run order column.
    let runs = two_level_runs(3, &[]);
    let rows: Vec<Vec<Option<Cell>>> = runs
        .iter()
        .chain(runs.iter())
        .enumerate()
        .map(|(index, run)| {
            let mut cells = vec![Some(n(((index * 7) % 16 + 1) as f64))];
            cells.extend(run.iter().map(|coded| Some(n(*coded))));
            cells.push(Some(n(round(20.0 + 1.5 * run[0] + noise.normal(0.3), 2))));
            cells
        })
        .collect();
    let mut sheet = SheetSpec::new("Coded");
    sheet.table(0, 0, &["Run order", "A", "B", "C", "Response"], &rows);
    cases.push(case(
        "coded-settings",
        vec![sheet],
        said(with_levels(
            expected("Coded", "A1", &["A", "B", "C"], &["Response"], 16),
            "A",
            &["-1", "1"],
        )),
    ));

    // 45. A text factor and a numeric design column together.
    let mut rows: Vec<Vec<Option<Cell>>> = Vec::new();
    for catalyst in ["Cat X", "Cat Y"] {
        for temperature in [180.0, 200.0] {
            for _ in 0..3 {
                rows.push(vec![
                    Some(t(catalyst)),
                    Some(n(temperature)),
                    Some(n(round(70.0 + noise.normal(1.0), 1))),
                ]);
            }
        }
    }
    let mut sheet = SheetSpec::new("Trial");
    sheet.table(0, 0, &["Catalyst", "Temperature", "Selectivity"], &rows);
    cases.push(case(
        "text-and-numeric-factor",
        vec![sheet],
        said(expected(
            "Trial",
            "A1",
            &["Catalyst", "Temperature"],
            &["Selectivity"],
            12,
        )),
    ));

    // 46. A wide table with an Average column at its right.
    let mut sheet = SheetSpec::new("Trial");
    let rows: Vec<Vec<Option<Cell>>> = wide_rows(&mut noise, 3, 6, 7.0, 0.3)
        .into_iter()
        .enumerate()
        .map(|(index, mut row)| {
            row.push(Some(Cell::Formula(format!("=AVERAGE(A{r}:C{r})", r = index + 2), 7.3)));
            row
        })
        .collect();
    sheet.table(0, 0, &["Shim 0.1", "Shim 0.2", "Shim 0.3", "Average"], &rows);
    cases.push(case(
        "wide-average-column",
        vec![sheet],
        said(wide_expected("Trial", "A1", &["Shim 0.1", "Shim 0.2", "Shim 0.3"], 18)),
    ));

    // 47. A results sheet after a chart-data sheet of a few summary numbers.
    let mut chart = SheetSpec::new("Chart data");
    chart.table(
        0,
        0,
        &["Condition", "Average"],
        &[
            vec![Some(t("Gate 1")), Some(n(3.3))],
            vec![Some(t("Gate 2")), Some(n(3.9))],
        ],
    );
    let mut data = SheetSpec::new("Measurements");
    data.put(0, 0, t("Sink mark depth, um"));
    data.table(
        2,
        0,
        &["Gate", "Sink depth"],
        &one_factor_rows(&mut noise, &["Gate 1", "Gate 2"], 9, 3.3, 0.3),
    );
    cases.push(case(
        "chart-data-sheet-first",
        vec![chart, data],
        said(expected("Measurements", "A3", &["Gate"], &["Sink depth"], 18)),
    ));

    cases.extend(more_shapes(&mut noise));
    cases
}

/// Shapes added after the first 47: numbers as condition names, summary rows made by
/// formulas, hidden helper columns, settings columns that do not form a design, wide
/// condition names differing in case or spacing.
fn more_shapes(noise: &mut Noise) -> Vec<ShapeCase> {
    let mut cases = Vec::new();

    // 48. A wide table whose conditions are cure temperatures, under a title cell.
    let mut sheet = SheetSpec::new("Cure");
    sheet.put(0, 0, t("Cure temperature (deg C)"));
    for (offset, setting) in [160.0, 170.0, 180.0].iter().enumerate() {
        sheet.put(1, offset as u16, n(*setting));
    }
    for (row, values) in wide_rows(noise, 3, 6, 31.0, 1.2).into_iter().enumerate() {
        for (col, cell) in values.into_iter().enumerate() {
            if let Some(cell) = cell {
                sheet.put(2 + row as u32, col as u16, cell);
            }
        }
    }
    cases.push(case(
        "wide-numeric-headers-titled",
        vec![sheet],
        said(titled(
            wide_expected("Cure", "A2", &["160", "170", "180"], 18),
            Some("Cure temperature (deg C)"),
            None,
        )),
    ));

    // 49. Numbers as condition names with no title, falling from left to right.
    let mut sheet = SheetSpec::new("Gap");
    for (offset, setting) in [0.8, 0.6, 0.4, 0.2].iter().enumerate() {
        sheet.put(0, offset as u16 + 1, n(*setting));
    }
    for (row, values) in wide_rows(noise, 4, 5, 12.0, 0.9).into_iter().enumerate() {
        for (col, cell) in values.into_iter().enumerate() {
            if let Some(cell) = cell {
                sheet.put(1 + row as u32, col as u16 + 1, cell);
            }
        }
    }
    cases.push(case(
        "wide-numeric-headers-falling",
        vec![sheet],
        said(wide_expected("Gap", "B1", &["0.8", "0.6", "0.4", "0.2"], 20)),
    ));

    // 50. AVERAGE and STDEV formula rows under a long table, labelled in words that do
    // not say summary.
    let mut sheet = SheetSpec::new("Peel");
    let mut rows = one_factor_rows(noise, &["Primer A", "Primer B", "Primer C"], 6, 9.0, 0.6);
    rows.push(vec![
        Some(t("All primers")),
        Some(Cell::Formula("=AVERAGE(B2:B19)".into(), 9.6)),
    ]);
    rows.push(vec![
        Some(t("Spread (s)")),
        Some(Cell::Formula("=STDEV(B2:B19)".into(), 0.7)),
    ]);
    sheet.table(0, 0, &["Primer", "Peel force"], &rows);
    cases.push(case(
        "formula-rows-plain-labels",
        vec![sheet],
        said(expected("Peel", "A1", &["Primer"], &["Peel force"], 18)),
    ));

    // 51. A wide table with a spread column of formulas beside it and an average row of
    // formulas between the data and a late record.
    let mut sheet = SheetSpec::new("Nozzles");
    let mut rows: Vec<Vec<Option<Cell>>> = wide_rows(noise, 3, 7, 2.4, 0.15)
        .into_iter()
        .enumerate()
        .map(|(index, mut row)| {
            row.push(Some(Cell::Formula(
                format!("=MAX(A{r}:C{r})-MIN(A{r}:C{r})", r = index + 2),
                0.3,
            )));
            row
        })
        .collect();
    rows.push(
        ["A", "B", "C"]
            .iter()
            .map(|col| Some(Cell::Formula(format!("=ROUND(AVERAGE({col}2:{col}8),2)"), 2.5)))
            .collect(),
    );
    sheet.table(0, 0, &["Nozzle 1", "Nozzle 2", "Nozzle 3", "Spread"], &rows);
    cases.push(case(
        "wide-formula-column-and-row",
        vec![sheet],
        said(wide_expected(
            "Nozzles",
            "A1",
            &["Nozzle 1", "Nozzle 2", "Nozzle 3"],
            21,
        )),
    ));

    // 52. A hidden numeric helper column between the factor and the measurement.
    let mut sheet = SheetSpec::new("Trial");
    let rows: Vec<Vec<Option<Cell>>> = one_factor_rows(noise, &["Mesh 40", "Mesh 60", "Mesh 80"], 5, 71.0, 2.0)
        .into_iter()
        .map(|mut row| {
            let helper = Cell::Number(round(0.9 + noise.normal(0.05), 4));
            row.insert(1, Some(helper));
            row
        })
        .collect();
    sheet.table(0, 0, &["Mesh", "Factor calc", "Throughput"], &rows);
    sheet.hidden_cols.push(1);
    cases.push(case(
        "hidden-numeric-helper",
        vec![sheet],
        said(expected("Trial", "A1", &["Mesh"], &["Throughput"], 15)),
    ));

    // 53. Two settings changed one at a time beside a label factor: not a design.
    let mut sheet = SheetSpec::new("Coating");
    let settings = [
        (80.0, 2.0),
        (80.0, 2.0),
        (95.0, 2.0),
        (95.0, 2.0),
        (80.0, 3.0),
        (80.0, 3.0),
    ];
    let mut rows = Vec::new();
    for booth in ["Booth 1", "Booth 2"] {
        for (temperature, passes) in settings {
            rows.push(vec![
                Some(t(booth)),
                Some(n(temperature)),
                Some(n(passes)),
                Some(n(round(55.0 + passes * 4.0 + noise.normal(1.0), 1))),
            ]);
        }
    }
    sheet.table(0, 0, &["Booth", "Oven temp", "Passes", "Film build"], &rows);
    cases.push(case(
        "settings-without-design",
        vec![sheet],
        said(expected("Coating", "A1", &["Booth"], &["Film build"], 12)),
    ));

    // 54. A wide table whose condition names differ in case and spacing.
    let mut sheet = SheetSpec::new("Wide");
    sheet.table(
        0,
        0,
        &["Resin X", "resin x", "Resin  Y", "Resin Y"],
        &wide_rows(noise, 4, 4, 18.0, 0.8),
    );
    cases.push(case(
        "wide-names-differ-in-case",
        vec![sheet],
        said(wide_expected("Wide", "A1", &["Resin X", "Resin  Y"], 16)),
    ));

    // 55. A wide table under a title naming the measured value, its factor and unit,
    // with a panel number column and a Mean formula row.
    let mut sheet = SheetSpec::new("Thickness");
    sheet.put(0, 0, t("Wall thickness by die, mm"));
    let mut rows = numbered(wide_rows(noise, 3, 8, 2.1, 0.04));
    rows.push(
        std::iter::once(Some(t("Mean")))
            .chain(
                ["B", "C", "D"]
                    .iter()
                    .map(|col| Some(Cell::Formula(format!("=AVERAGE({col}4:{col}11)"), 2.1))),
            )
            .collect(),
    );
    sheet.table(2, 0, &["Panel", "Die 1", "Die 2", "Die 3"], &rows);
    cases.push(case(
        "wide-titled-value-by-factor",
        vec![sheet],
        said(titled(
            wide_expected("Thickness", "B3", &["Die 1", "Die 2", "Die 3"], 24),
            Some("Die"),
            Some("Wall thickness (mm)"),
        )),
    ));

    cases
}
