//! The plan workbook: what [`engine::design::Plan`] looks like on paper, and
//! the reading back of the plan kept inside it.
//!
//! A plan workbook has four sheets:
//! - [`RUN_SHEET`]: one row per run in run order, the factor settings in
//!   real units and a blank, number-only column per response;
//! - [`DESIGN_SHEET`]: generators, defining relation, resolution, blocks and
//!   the alias table;
//! - the settings sheet ([`workbook_io::settings::SETTINGS_SHEET`]), which
//!   tells the analysis which columns are factors, responses and blocks and
//!   which plan the runs belong to;
//! - [`PLAN_SHEET`]: the plan definition and the expected settings of every
//!   run, in plain text, which the check reads back ([`read_plan_sheet`]).
//!
//! The book's bytes depend on the plan alone: the document's creation date is
//! the plan's date (or a fixed date when it has none), never the clock.

use workbook_io::settings::SETTINGS_SHEET;
use workbook_io::write::{Book, CreationDate, Look, NumberOnly, Sheet, Value, WriteOptions};
use workbook_io::{CellValue, SheetGrid};

use engine::design::{DesignKind, Plan, Setting};
use engine::stats::two_level::{resolution_numeral, FACTOR_LETTERS};

/// The sheet of runs to make and fill in.
pub const RUN_SHEET: &str = "Runs";
/// The sheet describing the design.
pub const DESIGN_SHEET: &str = "Design";
/// The sheet that keeps the plan for the check.
pub const PLAN_SHEET: &str = "Plan (do not edit)";
/// Header of the run order column.
pub const RUN_ORDER_HEADER: &str = "Run order";
/// Header of the standard order column.
pub const STANDARD_ORDER_HEADER: &str = "Standard order";
/// Header of the block column.
pub const BLOCK_HEADER: &str = "Block";
/// The run sheet's header row (zero-based); runs follow it.
pub const RUN_HEADER_ROW: u32 = 2;
/// Creation date written when the plan has no date of its own.
pub const UNDATED: CreationDate = CreationDate {
    year: 2000,
    month: 1,
    day: 1,
};

/// The write options that make the plan's bytes reproducible.
pub fn write_options(plan: &Plan) -> WriteOptions {
    WriteOptions {
        created: Some(match plan.date {
            Some((year, month, day)) => CreationDate { year, month, day },
            None => UNDATED,
        }),
        replace: workbook_io::write::ReplaceRule::Never,
    }
}

/// Significant figures of a numeric setting as shown on a plan's runs and design
/// sheets. The plan sheet, the plan id and the coding keep every digit; the check of
/// a filled plan accepts a setting written either way ([`super::check::same_setting`]).
pub const SHOWN_FIGURES: usize = 6;

/// A setting as shown on a plan: rounded to [`SHOWN_FIGURES`] significant figures
/// (correctly rounded in decimal, so 135.857864376 shows as 135.858 and 1e-7 stays).
pub fn shown_number(value: f64) -> f64 {
    if !value.is_finite() || value == 0.0 {
        return value;
    }
    format!("{value:.*e}", SHOWN_FIGURES - 1).parse().unwrap_or(value)
}

/// A level's text as shown on a plan: a number rounded as by [`shown_number`], any
/// other text as it is.
fn shown_text(text: &str) -> String {
    match text.trim().parse::<f64>() {
        Ok(number) if number.is_finite() => engine::design::format_number(shown_number(number)),
        _ => text.to_string(),
    }
}

fn setting_value(plan: &Plan, factor: usize, setting: Setting) -> Value {
    match plan.setting_number(factor, setting) {
        Some(number) if plan.factors[factor].is_quantitative() => Value::number(shown_number(number)),
        _ => Value::text(plan.setting_text(factor, setting)),
    }
}

fn run_sheet(plan: &Plan) -> Sheet {
    let mut sheet = Sheet::new(RUN_SHEET);
    sheet.put(
        0,
        0,
        Value::text(format!(
            "Trial plan {}: make the runs in this order and type each result in its row",
            plan.id
        )),
        Look::Title,
    );
    sheet.put(
        1,
        0,
        Value::text(format!(
            "{} runs, seed {}. Keep the factor settings as planned; if a run had to differ, write what was really used.",
            plan.runs.len(),
            plan.seed
        )),
        Look::Note,
    );
    let mut headers: Vec<String> = vec![RUN_ORDER_HEADER.into(), STANDARD_ORDER_HEADER.into()];
    if plan.is_blocked() {
        headers.push(BLOCK_HEADER.into());
    }
    let first_factor_col = headers.len() as u16;
    headers.extend(plan.factors.iter().map(|factor| factor.name.clone()));
    let first_response_col = headers.len() as u16;
    headers.extend(plan.responses.iter().cloned());
    for (col, header) in headers.iter().enumerate() {
        sheet.put(
            RUN_HEADER_ROW,
            col as u16,
            Value::text(header.clone()),
            Look::ColumnHeader,
        );
        sheet
            .widths
            .push((col as u16, (header.chars().count() as f64 + 4.0).clamp(10.0, 40.0)));
    }
    for (index, run) in plan.runs.iter().enumerate() {
        let row = RUN_HEADER_ROW + 1 + index as u32;
        sheet.put(row, 0, Value::number(run.run_order as f64), Look::Plain);
        sheet.put(row, 1, Value::number(run.standard_order as f64), Look::Plain);
        if plan.is_blocked() {
            sheet.put(row, 2, Value::number(run.block as f64), Look::Plain);
        }
        for (factor, setting) in run.settings.iter().enumerate() {
            sheet.put(
                row,
                first_factor_col + factor as u16,
                setting_value(plan, factor, *setting),
                Look::Plain,
            );
        }
    }
    if !plan.runs.is_empty() {
        for (offset, response) in plan.responses.iter().enumerate() {
            let mut prompt = format!("The measured {response} of this run, as a number.");
            prompt.truncate(255);
            sheet.number_only.push(NumberOnly {
                first_row: RUN_HEADER_ROW + 1,
                first_col: first_response_col + offset as u16,
                last_row: RUN_HEADER_ROW + plan.runs.len() as u32,
                last_col: first_response_col + offset as u16,
                title: "Result".into(),
                prompt,
            });
        }
    }
    sheet.frozen_rows = RUN_HEADER_ROW + 1;
    sheet
}

fn design_sheet(plan: &Plan) -> Sheet {
    let mut sheet = Sheet::new(DESIGN_SHEET);
    sheet.widths = vec![(0, 34.0), (1, 70.0)];
    sheet.put(
        0,
        0,
        Value::text(format!("Design of trial plan {}", plan.id)),
        Look::Title,
    );
    let mut rows: Vec<(String, String)> = vec![
        ("kind".into(), plan.kind.to_string()),
        ("runs".into(), plan.runs.len().to_string()),
        ("replicates".into(), plan.replicates.to_string()),
        ("centre runs per block".into(), plan.centre_points.to_string()),
        ("blocks".into(), plan.n_blocks.to_string()),
        ("seed of the run order".into(), plan.seed.to_string()),
        (
            "seed drawn from".into(),
            if plan.seed_from_clock {
                "the clock (give it again with --seed to make the same plan)".into()
            } else {
                "the request".into()
            },
        ),
    ];
    for (index, factor) in plan.factors.iter().enumerate() {
        let letter = FACTOR_LETTERS
            .get(index)
            .map(|letter| format!("{letter} = "))
            .unwrap_or_default();
        let levels: Vec<String> = factor.levels.iter().map(|level| shown_text(&level.text)).collect();
        rows.push((
            format!("factor {}", index + 1),
            format!("{letter}{} ({})", factor.name, levels.join(", ")),
        ));
    }
    if let Some(fraction) = &plan.fraction {
        let relation = &fraction.relation;
        if relation.n_generators() > 0 {
            rows.push((
                "fraction".into(),
                format!(
                    "2^({}-{}) = {} runs per replicate",
                    relation.n_factors(),
                    relation.n_generators(),
                    relation.n_runs()
                ),
            ));
            rows.push(("generators".into(), relation.generator_equations_text().join(", ")));
            let words: Vec<String> = relation.words().iter().map(ToString::to_string).collect();
            rows.push(("defining relation".into(), format!("I = {}", words.join(" = "))));
            rows.push(("resolution".into(), resolution_numeral(relation.resolution())));
            let pattern = relation.word_length_pattern();
            rows.push((
                "words by length (3, 4, 5, ...)".into(),
                pattern
                    .from_length(3)
                    .iter()
                    .map(ToString::to_string)
                    .collect::<Vec<_>>()
                    .join(", "),
            ));
            rows.push((
                "generators chosen by".into(),
                if fraction.from_search {
                    format!(
                        "minimum aberration search ({} nodes): highest resolution, then fewest short words",
                        fraction.nodes_visited
                    )
                } else {
                    "the request".into()
                },
            ));
        }
    }
    if let Some(blocking) = &plan.blocking {
        rows.push((
            "block generators".into(),
            blocking
                .generators
                .iter()
                .map(ToString::to_string)
                .collect::<Vec<_>>()
                .join(", "),
        ));
        rows.push((
            "confounded with blocks".into(),
            blocking
                .confounded
                .iter()
                .map(|(_, chain)| chain.clone())
                .collect::<Vec<_>>()
                .join("; "),
        ));
        rows.push((
            "blocks and effects".into(),
            match blocking.lowest_order {
                1 => "a main effect is confounded with blocks: no other choice exists for this many blocks; use fewer blocks or more runs".into(),
                2 => "a two-factor interaction is confounded with blocks: no other choice exists for this many blocks; use fewer blocks or more runs".into(),
                order => format!("only interactions of {order} or more factors are confounded with blocks"),
            },
        ));
    }
    if matches!(plan.kind, DesignKind::CentralComposite | DesignKind::BoxBehnken) {
        rows.push((
            "aliases".into(),
            "none among the terms of a second-order model: each factor's straight-line and curved terms and every two-factor interaction can be estimated on its own".into(),
        ));
    } else if plan.kind == DesignKind::Sequence {
        rows.push((
            "aliases".into(),
            "the runs already made and the new block are analysed as one trial: see the results of the filled plan"
                .into(),
        ));
    } else if plan.kind == DesignKind::OneFactor || plan.fraction.is_none() {
        rows.push((
            "aliases".into(),
            "none: every combination of levels is run, so every effect can be estimated on its own".into(),
        ));
    }
    let table_rows = rows
        .into_iter()
        .map(|(key, value)| vec![Value::text(key), Value::text(value)])
        .collect();
    let mut next = sheet.table(2, 0, &["item", "value"], table_rows);
    if let Some(fraction) = &plan.fraction {
        let relation = &fraction.relation;
        if relation.n_generators() > 0 {
            next += 1;
            sheet.put(next, 0, Value::text("What each estimate measures"), Look::Heading);
            next += 1;
            let chains = relation.alias_chains(2);
            let chain_rows = chains
                .iter()
                .map(|chain| {
                    vec![
                        Value::text(chain.leader().to_string()),
                        Value::text(chain.display_up_to(3)),
                    ]
                })
                .collect();
            next = sheet.table(
                next,
                0,
                &["effect", "estimate (aliases up to three factors)"],
                chain_rows,
            );
            sheet.put(
                next,
                0,
                Value::text(
                    "An estimate is the sum of the effects in its chain; effects of four or more factors are left out of the list.",
                ),
                Look::Note,
            );
        }
    }
    sheet
}

fn settings_sheet(plan: &Plan) -> Sheet {
    let mut sheet = Sheet::new(SETTINGS_SHEET);
    sheet.widths = vec![(0, 18.0), (1, 60.0)];
    let factor_names: Vec<&str> = plan.factors.iter().map(|factor| factor.name.as_str()).collect();
    let mut rows = vec![
        ("sheet", RUN_SHEET.to_string()),
        ("layout", "long".to_string()),
        ("factor", factor_names.join(", ")),
        ("response", plan.responses.join(", ")),
    ];
    if plan.is_blocked() {
        rows.push(("block", BLOCK_HEADER.to_string()));
    }
    rows.push(("plan id", plan.id.clone()));
    rows.push(("plan seed", plan.seed.to_string()));
    rows.push(("plan runs", plan.runs.len().to_string()));
    let table_rows = rows
        .into_iter()
        .map(|(key, value)| vec![Value::text(key), Value::text(value)])
        .collect();
    sheet.table(0, 0, &["setting", "value"], table_rows);
    sheet
}

/// Key of the plan sheet's rows giving one factor's name and levels.
const FACTOR_KEY: &str = "factor";

fn plan_sheet(plan: &Plan) -> Sheet {
    let mut sheet = Sheet::new(PLAN_SHEET);
    // Wide enough for the keys ("centre points") and factor names to print whole.
    sheet.widths = (0..16u16).map(|col| (col, 14.0)).collect();
    sheet.put(
        0,
        0,
        Value::text("The plan as written. trialyst compares the runs sheet with it; do not edit this sheet."),
        Look::Note,
    );
    let mut row = 2;
    let mut key_value = |sheet: &mut Sheet, key: &str, values: Vec<String>| {
        sheet.put(row, 0, Value::text(key), Look::Key);
        for (offset, value) in values.into_iter().enumerate() {
            sheet.put(row, 1 + offset as u16, Value::text(value), Look::Plain);
        }
        row += 1;
    };
    key_value(&mut sheet, "plan id", vec![plan.id.clone()]);
    key_value(&mut sheet, "seed", vec![plan.seed.to_string()]);
    if let Some((year, month, day)) = plan.date {
        key_value(&mut sheet, "date", vec![format!("{year:04}-{month:02}-{day:02}")]);
    }
    key_value(&mut sheet, "replicates", vec![plan.replicates.to_string()]);
    key_value(&mut sheet, "centre points", vec![plan.centre_points.to_string()]);
    key_value(&mut sheet, "blocks", vec![plan.n_blocks.to_string()]);
    if let Some(fraction) = &plan.fraction {
        for generator in fraction.relation.generator_equations_text() {
            key_value(&mut sheet, "generator", vec![generator]);
        }
    }
    for factor in &plan.factors {
        let mut values = vec![factor.name.clone()];
        values.extend(factor.levels.iter().map(|level| level.text.clone()));
        key_value(&mut sheet, FACTOR_KEY, values);
    }
    for response in &plan.responses {
        key_value(&mut sheet, "response", vec![response.clone()]);
    }
    row += 1;
    let mut headers = vec![
        "run order".to_string(),
        "standard order".to_string(),
        "block".to_string(),
    ];
    headers.extend(plan.factors.iter().map(|factor| factor.name.clone()));
    for (col, header) in headers.iter().enumerate() {
        sheet.put(row, col as u16, Value::text(header.clone()), Look::ColumnHeader);
    }
    for run in &plan.runs {
        row += 1;
        sheet.put(row, 0, Value::text(run.run_order.to_string()), Look::Plain);
        sheet.put(row, 1, Value::text(run.standard_order.to_string()), Look::Plain);
        sheet.put(row, 2, Value::text(run.block.to_string()), Look::Plain);
        for (factor, setting) in run.settings.iter().enumerate() {
            sheet.put(
                row,
                3 + factor as u16,
                Value::text(plan.setting_text(factor, *setting)),
                Look::Plain,
            );
        }
    }
    sheet
}

/// The plan workbook.
pub fn plan_book(plan: &Plan) -> Book {
    Book {
        sheets: vec![
            run_sheet(plan),
            design_sheet(plan),
            settings_sheet(plan),
            plan_sheet(plan),
        ],
    }
}

/// One run as kept in the plan sheet.
#[derive(Debug, Clone, PartialEq)]
pub struct KeptRun {
    /// Run order, from 1.
    pub run_order: usize,
    /// Standard order, from 1.
    pub standard_order: usize,
    /// The block, as text.
    pub block: String,
    /// Each factor's setting, as text.
    pub settings: Vec<String>,
    /// The plan sheet's row of this run (zero-based).
    pub row: u32,
}

/// The plan as kept in a plan workbook: what the check compares the runs with.
#[derive(Debug, Clone, PartialEq)]
pub struct KeptPlan {
    /// The plan sheet's name.
    pub sheet: String,
    /// The plan id.
    pub id: String,
    /// The factor names, in order.
    pub factors: Vec<String>,
    /// True when the plan has more than one block.
    pub blocked: bool,
    /// The runs, in run order.
    pub runs: Vec<KeptRun>,
}

/// Reads the plan kept in a plan sheet.
///
/// # Errors
///
/// A sentence naming the cell that could not be read.
pub fn read_plan_sheet(grid: &SheetGrid) -> Result<KeptPlan, String> {
    let mut rows: Vec<(u32, Vec<String>)> = Vec::new();
    for (pos, value) in &grid.cells {
        let text = match value {
            CellValue::Number(number) => format!("{number}"),
            other => grid.display(*other),
        };
        match rows.last_mut() {
            Some((row, cells)) if *row == pos.row => {
                while cells.len() < pos.col as usize {
                    cells.push(String::new());
                }
                cells.push(text.trim().to_string());
            }
            _ => {
                let mut cells = vec![String::new(); pos.col as usize];
                cells.push(text.trim().to_string());
                rows.push((pos.row, cells));
            }
        }
    }
    let mut id = String::new();
    let mut n_blocks = 1usize;
    let mut header: Option<usize> = None;
    for (index, (_, cells)) in rows.iter().enumerate() {
        let key = cells.first().map(|key| key.to_lowercase()).unwrap_or_default();
        let value = cells.get(1).cloned().unwrap_or_default();
        match key.as_str() {
            "plan id" => id = value,
            "blocks" => n_blocks = value.parse().unwrap_or(1),
            "run order" => {
                header = Some(index);
                break;
            }
            _ => {}
        }
    }
    let Some(header) = header else {
        return Err(format!(
            "sheet '{}': no row starting with 'run order' was found",
            grid.name
        ));
    };
    let factors: Vec<String> = rows[header].1.iter().skip(3).cloned().collect();
    let mut runs = Vec::new();
    for (row, cells) in &rows[header + 1..] {
        let place = || workbook_io::CellPos::new(*row, 0).a1();
        let run_order = cells
            .first()
            .and_then(|text| text.parse().ok())
            .ok_or_else(|| format!("{}!{}: a run order number was expected", grid.name, place()))?;
        let standard_order = cells
            .get(1)
            .and_then(|text| text.parse().ok())
            .ok_or_else(|| format!("{}!{}: a standard order number was expected", grid.name, place()))?;
        let block = cells.get(2).cloned().unwrap_or_default();
        let settings = (0..factors.len())
            .map(|factor| cells.get(3 + factor).cloned().unwrap_or_default())
            .collect();
        runs.push(KeptRun {
            run_order,
            standard_order,
            block,
            settings,
            row: *row,
        });
    }
    Ok(KeptPlan {
        sheet: grid.name.clone(),
        id,
        factors,
        blocked: n_blocks > 1,
        runs,
    })
}
