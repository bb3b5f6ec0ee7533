//! The factorial part of the results workbook: the k-way ANOVA, means, effects, the
//! alias structure and the reduced model, each on its own sheet, with interaction,
//! main-effects and normal / half-normal effect plots, and the factorial reading added
//! to the Summary sheet. No I/O; the sheets join the book that `workbook-io` writes.

use workbook_io::write::{chart_key, Book, ChartKind, ChartSpec, Look, NumberFormat, Series, Sheet, SheetRange, Value};

use crate::{ResponseResult, WorkbookResults};
use engine::analysis::factorial::{
    AnovaLine, FactorialOutcome, IntervalLine, KWayModel, ReducedModel, TwoLevelOutcome,
};
use engine::analysis::verdict::round_for_text;

/// Sheet names of the factorial part.
pub mod names {
    /// The k-way analysis of variance.
    pub const ANOVA: &str = "Factorial ANOVA";
    /// Cell means, least-squares means and two-factor means, with plots.
    pub const MEANS: &str = "Factorial means";
    /// Effects (k-way and two-level), with normal and half-normal plots.
    pub const EFFECTS: &str = "Effects";
    /// Design, defining relation, alias chains and coding.
    pub const ALIASES: &str = "Aliases";
    /// The model of the active effects.
    pub const REDUCED: &str = "Reduced model";
}

/// Interaction and main-effect charts per response, at most.
const MAX_CHARTS_PER_KIND: usize = 4;

fn optional(value: Option<f64>, format: NumberFormat) -> Value {
    match value {
        Some(value) => Value::Number(value, format),
        None => Value::Blank,
    }
}

fn decimals(value: Option<f64>) -> Value {
    optional(value, NumberFormat::Decimals(4))
}

fn percent(confidence: f64) -> String {
    format!("{}%", round_for_text(confidence * 100.0, 3))
}

/// Adds the factorial sheets (before the data-problems sheet, which the caller adds
/// next) and the factorial reading to the Summary sheet, for every response that has a
/// factorial outcome. Does nothing when none has.
pub fn add_factorial_results(results: &WorkbookResults, book: &mut Book) {
    let analysed: Vec<(&ResponseResult, &FactorialOutcome)> = results
        .responses
        .iter()
        .filter_map(|response| response.factorial.as_ref().map(|outcome| (response, outcome)))
        .collect();
    if analysed.is_empty() {
        return;
    }
    let mut anova = Sheet::new(names::ANOVA);
    anova.widths = vec![(0, 30.0), (1, 8.0), (2, 16.0), (3, 16.0), (4, 11.0), (5, 11.0)];
    let mut means = Sheet::new(names::MEANS);
    means.widths = vec![
        (0, 26.0),
        (1, 14.0),
        (2, 14.0),
        (3, 12.0),
        (4, 12.0),
        (5, 12.0),
        (6, 12.0),
    ];
    let mut effects = Sheet::new(names::EFFECTS);
    // Widths that fit one landscape page across at the smallest print scale (about
    // 155 characters in all), so no column prints on a page of its own.
    effects.widths = vec![
        (0, 16.0),
        (1, 22.0),
        (2, 28.0),
        (3, 11.0),
        (4, 11.0),
        (5, 9.0),
        (6, 7.0),
        (7, 9.0),
        (8, 10.0),
        (9, 10.0),
        (10, 10.0),
        (11, 7.0),
    ];
    let mut aliases = Sheet::new(names::ALIASES);
    aliases.widths = vec![(0, 14.0), (1, 28.0), (2, 44.0), (3, 12.0), (4, 16.0), (5, 30.0)];
    let mut reduced = Sheet::new(names::REDUCED);
    reduced.widths = vec![(0, 40.0), (1, 14.0), (2, 12.0), (3, 10.0), (4, 11.0)];
    let mut rows = Rows::default();
    let mut any_two_level = false;
    let mut any_reduced = false;
    let mut summary_lines: Vec<(String, Look)> = Vec::new();
    for (response, outcome) in &analysed {
        // A response-surface trial is read by its second-order model; the factorial
        // model's reading of its levels as categories stays on its own sheets.
        if response.lead.analysis == crate::LeadKind::SecondOrder {
            continue;
        }
        summary_lines.push((format!("{}: factorial reading", response.name), Look::Heading));
        for (position, line) in outcome.summary.iter().enumerate() {
            summary_lines.push((line.clone(), if position == 0 { Look::Verdict } else { Look::Plain }));
        }
        for line in outcome.reading.iter().filter(|line| !outcome.summary.contains(line)) {
            summary_lines.push((line.clone(), Look::Plain));
        }
        for caution in &outcome.cautions {
            summary_lines.push((caution.clone(), Look::Caution));
        }
        summary_lines.push((
            format!(
                "Details: sheets '{}', '{}', '{}'{}. Intervals are at {} confidence.",
                names::ANOVA,
                names::MEANS,
                names::EFFECTS,
                if outcome.two_level.is_some() {
                    format!(", '{}'", names::ALIASES)
                } else {
                    String::new()
                },
                percent(outcome.confidence)
            ),
            Look::Note,
        ));
        summary_lines.push((String::new(), Look::Plain));
        anova_section(&mut anova, &mut rows.anova, response, outcome);
        means_section(&mut means, &mut rows.means, response, outcome);
        effects_section(&mut effects, &mut rows.effects, response, outcome);
        if let Some(two) = &outcome.two_level {
            any_two_level = true;
            aliases_section(&mut aliases, &mut rows.aliases, response, outcome, two);
        }
        if let Some(model) = &outcome.reduced {
            any_reduced = true;
            reduced_section(&mut reduced, &mut rows.reduced, response, outcome, model);
        }
    }
    if let Some(summary) = book.sheets.first_mut() {
        insert_before_cautions(summary, &summary_lines);
    }
    book.sheets.push(anova);
    book.sheets.push(means);
    book.sheets.push(effects);
    if any_two_level {
        book.sheets.push(aliases);
    }
    if any_reduced {
        book.sheets.push(reduced);
    }
}

#[derive(Default)]
struct Rows {
    anova: u32,
    means: u32,
    effects: u32,
    aliases: u32,
    reduced: u32,
}

/// Moves the Summary's "Cautions" section (and anything below it) down and puts the
/// factorial lines in the gap; at the end when there is no such section.
fn insert_before_cautions(summary: &mut Sheet, lines: &[(String, Look)]) {
    let at = summary
        .cells
        .iter()
        .find(|placed| placed.look == Look::Heading && placed.value == Value::text("Cautions"))
        .map(|placed| placed.row)
        .unwrap_or_else(|| summary.cells.iter().map(|placed| placed.row + 1).max().unwrap_or(0));
    let shift = lines.len() as u32;
    for placed in &mut summary.cells {
        if placed.row >= at {
            placed.row += shift;
        }
    }
    for chart in &mut summary.charts {
        if chart.anchor.0 >= at {
            chart.anchor.0 += shift;
        }
    }
    // Row heights and page breaks belong to the rows that moved.
    for (row, _) in &mut summary.heights {
        if *row >= at {
            *row += shift;
        }
    }
    for row in &mut summary.page_breaks {
        if *row >= at {
            *row += shift;
        }
    }
    // The factorial reading starts on a page of its own, wrapped like the
    // rest of the summary.
    summary.page_breaks.push(at);
    let width = summary
        .widths
        .iter()
        .find(|(col, _)| *col == 0)
        .map_or(72.0, |(_, width)| *width);
    for (offset, (text, look)) in lines.iter().enumerate() {
        if !text.is_empty() {
            summary.paragraph(at + offset as u32, 0, text.clone(), *look, width);
        }
    }
}

fn anova_rows(lines: &[AnovaLine]) -> Vec<Vec<Value>> {
    lines
        .iter()
        .map(|line| {
            vec![
                Value::text(line.source.replace(':', " × ")),
                Value::integer(line.df as f64),
                Value::Number(line.sum_sq, super::significant_format(line.sum_sq)),
                optional(
                    line.mean_sq,
                    line.mean_sq.map_or(NumberFormat::General, super::significant_format),
                ),
                optional(line.f_value, NumberFormat::Decimals(4)),
                optional(line.p_value, NumberFormat::PValue),
            ]
        })
        .collect()
}

const ANOVA_HEADERS: [&str; 6] = ["source", "df", "sum of squares", "mean square", "F", "p-value"];

fn anova_section(sheet: &mut Sheet, row: &mut u32, response: &ResponseResult, outcome: &FactorialOutcome) {
    sheet.put(
        *row,
        0,
        Value::text(format!("{}: factorial model", response.name)),
        Look::Heading,
    );
    *row += 1;
    let cells = &outcome.cells;
    let mut facts = vec![
        (
            "factors".to_string(),
            outcome
                .factors
                .iter()
                .map(|factor| {
                    format!(
                        "{}{} ({} levels)",
                        factor.name,
                        if factor.is_block { " [block]" } else { "" },
                        factor.levels.len()
                    )
                })
                .collect::<Vec<_>>()
                .join(", "),
        ),
        ("values analysed".into(), outcome.n_values.to_string()),
        (
            "combinations of levels".into(),
            format!("{} of {} present", cells.n_present, cells.n_possible),
        ),
        (
            "values per combination".into(),
            if cells.count_range.0 == cells.count_range.1 {
                cells.count_range.0.to_string()
            } else {
                format!("{} to {}", cells.count_range.0, cells.count_range.1)
            },
        ),
        ("balanced".into(), if cells.balanced { "yes" } else { "no" }.to_string()),
    ];
    if cells.n_centre_points > 0 {
        facts.push((
            "centre points".into(),
            format!(
                "{} (in the two-level analysis, not in this model)",
                cells.n_centre_points
            ),
        ));
    }
    if cells.n_missing > 0 {
        let listed: Vec<String> = cells.missing.iter().take(50).map(|levels| levels.join(" / ")).collect();
        facts.push((
            "combinations not run".into(),
            format!(
                "{}{}",
                listed.join("; "),
                if cells.n_missing > listed.len() {
                    format!("; and {} more", cells.n_missing - listed.len())
                } else {
                    String::new()
                }
            ),
        ));
    }
    let Some(model) = &outcome.model else {
        for (key, value) in facts {
            sheet.put(*row, 0, Value::text(key), Look::Key);
            sheet.put(*row, 1, Value::text(value), Look::Plain);
            *row += 1;
        }
        for note in &outcome.notes {
            sheet.put(*row, 0, Value::text(note.clone()), Look::Note);
            *row += 1;
        }
        *row += 1;
        return;
    };
    facts.push((
        "interactions fitted".into(),
        format!("up to {} factors ({})", model.interaction_order, model.order_reason),
    ));
    for (key, value) in facts {
        sheet.put(*row, 0, Value::text(key), Look::Key);
        sheet.put(*row, 1, Value::text(value), Look::Plain);
        *row += 1;
    }
    *row += 1;
    // What can be estimated.
    let estimability: Vec<Vec<Value>> = model
        .terms
        .iter()
        .map(|term| {
            vec![
                Value::text(term.term.replace(':', " × ")),
                Value::integer(term.df_full as f64),
                Value::integer(term.df_estimable as f64),
                Value::text(term.estimability.clone()),
            ]
        })
        .collect();
    *row = sheet.table(
        *row,
        0,
        &["term", "df if complete", "df estimable", "can be estimated"],
        estimability,
    ) + 1;
    for (title, lines) in [
        (
            "Type I sums of squares (sequential, in the order listed)",
            &model.type_i,
        ),
        (
            "Type II sums of squares (each term after the terms not containing it)",
            &model.type_ii,
        ),
        ("Type III sums of squares (each term after all others)", &model.type_iii),
    ] {
        sheet.put(*row, 0, Value::text(title), Look::Key);
        *row += 1;
        let mut table_rows = anova_rows(lines);
        table_rows.extend(anova_rows(&model.error_lines));
        *row = sheet.table(*row, 0, &ANOVA_HEADERS, table_rows) + 1;
    }
    sheet.put(*row, 0, Value::text(model.types_note.clone()), Look::Note);
    *row += 1;
    if model.type_iii_depends_on_coding {
        sheet.put(
            *row,
            0,
            Value::text("Some combinations are missing, so the Type III hypotheses depend on how the levels are coded (sum-to-zero here)."),
            Look::Note,
        );
        *row += 1;
    }
    let measures = vec![
        vec![Value::text("R²"), decimals(model.r_squared)],
        vec![Value::text("residual SD"), decimals(model.residual_sd)],
        vec![Value::text("residual df"), Value::integer(model.residual_df as f64)],
        vec![
            Value::text("grand mean (equal weight per combination)"),
            decimals(model.grand_mean),
        ],
    ];
    *row = sheet.table(*row + 1, 0, &["measure", "value"], measures) + 1;
    for note in &outcome.notes {
        sheet.put(*row, 0, Value::text(note.clone()), Look::Note);
        *row += 1;
    }
    *row += 1;
}

/// The header of the column of chart codes beside long level names.
const CHART_CODE: &str = "chart code";

/// A chart's axis title; when it shows codes, where their levels are found.
fn coded_title(factor: &str, coded: bool) -> String {
    if coded {
        format!("{factor} (chart codes: see the table above the charts)")
    } else {
        factor.to_string()
    }
}

fn interval_row(line: &IntervalLine, first: Value) -> Vec<Value> {
    vec![
        first,
        decimals(line.estimate),
        decimals(line.se),
        decimals(line.low),
        decimals(line.high),
        decimals(line.low.zip(line.estimate).map(|(low, estimate)| estimate - low)),
    ]
}

fn means_section(sheet: &mut Sheet, row: &mut u32, response: &ResponseResult, outcome: &FactorialOutcome) {
    let Some(model) = &outcome.model else {
        return;
    };
    // The charts go under the tables, in page regions of their own, so that none is
    // cut by a page break or pushes the tables onto a second page across.
    let mut charts: Vec<ChartSpec> = Vec::new();
    sheet.put(*row, 0, Value::text(format!("{}: means", response.name)), Look::Heading);
    *row += 1;
    let low = format!("{} low", percent(outcome.confidence));
    let high = format!("{} high", percent(outcome.confidence));
    // Least-squares means, one small table and one main-effects chart per factor.
    for (position, factor_means) in model.ls_means.iter().enumerate() {
        sheet.put(
            *row,
            0,
            Value::text(format!("{}: least-squares means", factor_means.factor)),
            Look::Key,
        );
        *row += 1;
        let first_data = *row + 1;
        // Long level names show as codes on the chart, each beside its level here.
        let labels: Vec<String> = factor_means.means.iter().map(|line| line.label.clone()).collect();
        let coded = chart_key::needs_codes(&labels);
        let codes = chart_key::codes(labels.len());
        let table_rows: Vec<Vec<Value>> = factor_means
            .means
            .iter()
            .zip(&codes)
            .map(|(line, code)| {
                let mut values = interval_row(line, Value::text(line.label.clone()));
                if coded {
                    values.push(Value::text(code.clone()));
                }
                values
            })
            .collect();
        let mut headers = vec![
            factor_means.factor.as_str(),
            "mean",
            "SE",
            low.as_str(),
            high.as_str(),
            "± half-width",
        ];
        if coded {
            headers.push(CHART_CODE);
        }
        *row = sheet.table(*row, 0, &headers, table_rows);
        let last_data = *row - 1;
        let is_block = outcome
            .factors
            .iter()
            .any(|factor| factor.is_block && factor.name == factor_means.factor);
        if position < 2 * MAX_CHARTS_PER_KIND && !is_block {
            let has_bars = factor_means.means.iter().all(|line| line.low.is_some());
            charts.push(ChartSpec {
                kind: ChartKind::Lines,
                title: format!("{}: main effect of {}", response.name, factor_means.factor),
                x_title: coded_title(&factor_means.factor, coded),
                y_title: format!("least-squares mean of {}", response.name),
                series: vec![Series {
                    name: factor_means.factor.clone(),
                    categories: SheetRange::column(names::MEANS, if coded { 6 } else { 0 }, first_data, last_data),
                    values: SheetRange::column(names::MEANS, 1, first_data, last_data),
                    bar_plus: has_bars.then(|| SheetRange::column(names::MEANS, 5, first_data, last_data)),
                    bar_minus: has_bars.then(|| SheetRange::column(names::MEANS, 5, first_data, last_data)),
                    labels: None,
                }],
                anchor: (0, 0),
                size: (420, 280),
                value_limits: None,
            });
        }
        *row += 1;
    }
    // Two-factor tables of model means, with interaction plots.
    for (position, table) in model.two_way_means.iter().enumerate() {
        sheet.put(
            *row,
            0,
            Value::text(format!(
                "{} by {}: model means (interaction {})",
                table.x_factor,
                table.trace_factor,
                table
                    .interaction_p
                    .map_or_else(|| "not tested".to_string(), engine::analysis::verdict::p_equals)
            )),
            Look::Key,
        );
        *row += 1;
        let mut headers: Vec<String> = vec![format!("{} \\ {}", table.x_factor, table.trace_factor)];
        headers.extend(table.trace_levels.iter().cloned());
        let first_data = *row + 1;
        let coded = chart_key::needs_codes(&table.x_levels);
        let code_col = 1 + table.trace_levels.len() as u16;
        if coded {
            headers.push(CHART_CODE.to_string());
        }
        let header_refs: Vec<&str> = headers.iter().map(String::as_str).collect();
        let table_rows: Vec<Vec<Value>> = table
            .x_levels
            .iter()
            .enumerate()
            .map(|(x, level)| {
                let mut values = vec![Value::text(level.clone())];
                values.extend(table.means.iter().map(|trace_row| decimals(trace_row[x])));
                if coded {
                    values.push(Value::text(chart_key::code(x + 1)));
                }
                values
            })
            .collect();
        let header_row = *row;
        *row = sheet.table(*row, 0, &header_refs, table_rows);
        let last_data = *row - 1;
        if position < MAX_CHARTS_PER_KIND {
            let series = table
                .trace_levels
                .iter()
                .enumerate()
                .map(|(trace, level)| Series {
                    name: format!("{} {}", table.trace_factor, level),
                    categories: SheetRange::column(
                        names::MEANS,
                        if coded { code_col } else { 0 },
                        first_data,
                        last_data,
                    ),
                    values: SheetRange::column(names::MEANS, 1 + trace as u16, first_data, last_data),
                    bar_plus: None,
                    bar_minus: None,
                    labels: None,
                })
                .collect();
            let _ = header_row;
            charts.push(ChartSpec {
                kind: ChartKind::Lines,
                title: format!("{}: {} × {}", response.name, table.x_factor, table.trace_factor),
                x_title: coded_title(&table.x_factor, coded),
                y_title: format!("model mean of {}", response.name),
                series,
                anchor: (0, 0),
                size: (460, 300),
                value_limits: None,
            });
        }
        *row += 1;
    }
    // Cell means.
    sheet.put(
        *row,
        0,
        Value::text("Combinations of levels: observed and fitted means"),
        Look::Key,
    );
    *row += 1;
    let mut headers: Vec<String> = outcome.factors.iter().map(|factor| factor.name.clone()).collect();
    headers.extend(["n", "observed mean", "SD", "fitted mean", "SE of fitted"].map(String::from));
    let header_refs: Vec<&str> = headers.iter().map(String::as_str).collect();
    let table_rows: Vec<Vec<Value>> = model
        .cells
        .iter()
        .map(|cell| {
            let mut values: Vec<Value> = cell.levels.iter().map(|level| Value::text(level.clone())).collect();
            values.push(Value::integer(cell.n as f64));
            values.push(Value::decimals(cell.mean, 4));
            values.push(decimals(cell.sd));
            values.push(decimals(cell.fitted));
            values.push(decimals(cell.fitted_se));
            values
        })
        .collect();
    *row = sheet.table(*row, 0, &header_refs, table_rows) + 1;
    *row = sheet.place_charts_on_pages(*row, charts);
}

fn effects_section(sheet: &mut Sheet, row: &mut u32, response: &ResponseResult, outcome: &FactorialOutcome) {
    let low = format!("{} low", percent(outcome.confidence));
    let high = format!("{} high", percent(outcome.confidence));
    // The effect plots go under the tables, each pair in a page region of its own.
    let mut charts: Vec<ChartSpec> = Vec::new();
    sheet.put(
        *row,
        0,
        Value::text(format!("{}: effects", response.name)),
        Look::Heading,
    );
    *row += 1;
    if let Some(two) = &outcome.two_level {
        two_level_effects(sheet, row, &mut charts, response, outcome, two, &low, &high);
    }
    if let Some(model) = &outcome.model {
        k_way_effects(sheet, row, model, &low, &high);
    }
    *row = sheet.place_charts_on_pages(*row, charts);
}

fn k_way_effects(sheet: &mut Sheet, row: &mut u32, model: &KWayModel, low: &str, high: &str) {
    sheet.put(
        *row,
        0,
        Value::text("Effects of the k-way model (deviations from the grand mean; each term's effects sum to zero)"),
        Look::Key,
    );
    *row += 1;
    let table_rows: Vec<Vec<Value>> = model
        .effects
        .iter()
        .flat_map(|term| {
            term.effects.iter().map(move |line| {
                let mut values = vec![Value::text(term.term.replace(':', " × "))];
                values.extend(interval_row(line, Value::text(line.label.clone())));
                values
            })
        })
        .collect();
    *row = sheet.table(
        *row,
        0,
        &["term", "levels", "effect", "SE", low, high, "± half-width"],
        table_rows,
    ) + 1;
}

#[allow(clippy::too_many_arguments)]
fn two_level_effects(
    sheet: &mut Sheet,
    row: &mut u32,
    charts: &mut Vec<ChartSpec>,
    response: &ResponseResult,
    outcome: &FactorialOutcome,
    two: &TwoLevelOutcome,
    low: &str,
    high: &str,
) {
    sheet.put(
        *row,
        0,
        Value::text(format!(
            "Two-level effects ({}): high level minus low level; the coefficient of a -1/+1 column is half the effect",
            two.design.name
        )),
        Look::Key,
    );
    *row += 1;
    let table_rows: Vec<Vec<Value>> = two
        .effects
        .iter()
        .map(|effect| {
            vec![
                Value::text(effect.name.clone()),
                Value::text(effect.term.replace(':', " × ")),
                Value::text(effect.aliases.clone()),
                Value::decimals(effect.effect, 4),
                Value::decimals(effect.coefficient, 4),
                decimals(effect.se),
                optional(effect.t_value, NumberFormat::Decimals(3)),
                optional(effect.p_value, NumberFormat::PValue),
                decimals(effect.low),
                decimals(effect.high),
                optional(effect.lenth_t, NumberFormat::Decimals(3)),
                Value::text(if effect.active { "yes" } else { "" }),
            ]
        })
        .collect();
    *row = sheet.table(
        *row,
        0,
        &[
            "estimate",
            "read as",
            "alias chain",
            "effect",
            "coefficient",
            "SE",
            "t",
            "p-value",
            low,
            high,
            "effect / PSE",
            "active",
        ],
        table_rows,
    );
    if let Some(lenth) = &two.lenth {
        sheet.put(
            *row,
            0,
            Value::text(format!(
                "Lenth's method: pseudo standard error {} on {} df; margin of error {} for one effect, {} for all at once ({} confidence).{}",
                round_for_text(lenth.pse, 4),
                round_for_text(lenth.df, 3),
                round_for_text(lenth.margin_of_error, 4),
                round_for_text(lenth.simultaneous_margin_of_error, 4),
                percent(lenth.confidence),
                if two.pure_error_df == 0 {
                    " With no replicates, intervals are effect ± the margin of error."
                } else {
                    ""
                }
            )),
            Look::Note,
        );
        *row += 1;
    }
    if two.pure_error_df > 0 {
        sheet.put(
            *row,
            0,
            Value::text(format!(
                "Standard errors from pure error: variance {} on {} df (replicates and centre points).",
                round_for_text(two.pure_error_variance.unwrap_or(f64::NAN), 4),
                two.pure_error_df
            )),
            Look::Note,
        );
        *row += 1;
    }
    if let Some(curvature) = &two.curvature {
        sheet.put(
            *row,
            0,
            Value::text(format!(
                "Curvature: {} average {}, the {} corner runs {}; difference {}{}.",
                engine::analysis::verdict::count_of(curvature.n_centre, "centre point"),
                round_for_text(curvature.centre_mean, 5),
                curvature.n_factorial,
                round_for_text(curvature.factorial_mean, 5),
                round_for_text(curvature.difference, 4),
                match (curvature.se, curvature.p_value) {
                    (Some(se), Some(p)) => format!(
                        " (SE {}, {})",
                        round_for_text(se, 3),
                        engine::analysis::verdict::p_equals(p)
                    ),
                    _ => " (not tested: fewer than two centre points)".to_string(),
                }
            )),
            Look::Note,
        );
        *row += 1;
    }
    *row += 1;
    // Plot positions.
    for (title, points, x_title, chart_title) in [
        (
            "Normal plot of the effects",
            &two.normal_plot,
            "effect",
            format!("{}: normal plot of effects", response.name),
        ),
        (
            "Half-normal plot of the effects",
            &two.half_normal_plot,
            "size of effect",
            format!("{}: half-normal plot of effects", response.name),
        ),
    ] {
        if points.is_empty() {
            continue;
        }
        sheet.put(*row, 0, Value::text(title), Look::Key);
        *row += 1;
        let first_data = *row + 1;
        let table_rows: Vec<Vec<Value>> = points
            .iter()
            .map(|point| {
                vec![
                    Value::text(point.name.clone()),
                    Value::decimals(point.value, 4),
                    Value::decimals(point.quantile, 4),
                ]
            })
            .collect();
        *row = sheet.table(*row, 0, &["estimate", x_title, "normal quantile"], table_rows);
        let last_data = *row - 1;
        charts.push(ChartSpec {
            kind: ChartKind::Scatter,
            title: chart_title,
            x_title: x_title.to_string(),
            y_title: "normal quantile".into(),
            series: vec![Series {
                name: "effects".into(),
                categories: SheetRange::column(names::EFFECTS, 1, first_data, last_data),
                values: SheetRange::column(names::EFFECTS, 2, first_data, last_data),
                bar_plus: None,
                bar_minus: None,
                labels: Some(SheetRange::column(names::EFFECTS, 0, first_data, last_data)),
            }],
            anchor: (0, 0),
            size: (480, 320),
            value_limits: None,
        });
        *row += 1;
    }
    let _ = outcome;
}

fn aliases_section(
    sheet: &mut Sheet,
    row: &mut u32,
    response: &ResponseResult,
    outcome: &FactorialOutcome,
    two: &TwoLevelOutcome,
) {
    sheet.put(
        *row,
        0,
        Value::text(format!("{}: design and aliases", response.name)),
        Look::Heading,
    );
    *row += 1;
    let design = &two.design;
    let mut facts = vec![
        ("design".to_string(), design.name.clone()),
        ("kind".into(), design.kind.clone()),
        (
            "runs".into(),
            format!(
                "{} corner runs, {} distinct{}",
                design.n_runs,
                design.n_distinct_runs,
                design
                    .replication
                    .filter(|r| *r > 1)
                    .map_or_else(String::new, |r| format!(", each run {r} times"))
            ),
        ),
        ("resolution".into(), design.resolution_numeral.clone()),
        ("defining relation".into(), design.defining_relation.clone()),
    ];
    if !design.generators.is_empty() {
        facts.push(("generators".into(), design.generators.join(", ")));
    }
    facts.push((
        "words by length (1, 2, 3, ...)".into(),
        design
            .word_length_pattern
            .iter()
            .map(|count| count.to_string())
            .collect::<Vec<_>>()
            .join(", "),
    ));
    for (key, value) in facts {
        sheet.put(*row, 0, Value::text(key), Look::Key);
        sheet.put(*row, 1, Value::text(value), Look::Plain);
        *row += 1;
    }
    *row += 1;
    sheet.put(*row, 0, Value::text("Coding of the factors"), Look::Key);
    *row += 1;
    let coding_rows: Vec<Vec<Value>> = outcome
        .factors
        .iter()
        .filter_map(|factor| {
            let coding = factor.coding.as_ref()?;
            Some(vec![
                Value::text(factor.letter.map(String::from).unwrap_or_default()),
                Value::text(factor.name.clone()),
                Value::text(coding.low.clone()),
                Value::text(coding.high.clone()),
                Value::text(coding.centre.clone().unwrap_or_default()),
                Value::text(coding.rule.clone()),
            ])
        })
        .collect();
    *row = sheet.table(
        *row,
        0,
        &["letter", "factor", "coded -1", "coded +1", "coded 0 (centre)", "rule"],
        coding_rows,
    ) + 1;
    sheet.put(
        *row,
        0,
        Value::text("Alias chains: what each estimate really measures"),
        Look::Key,
    );
    *row += 1;
    let chain_rows: Vec<Vec<Value>> = two
        .effects
        .iter()
        .map(|effect| {
            vec![
                Value::text(effect.name.clone()),
                Value::text(effect.aliases.clone()),
                Value::text(effect.aliases_named.replace(':', " × ")),
            ]
        })
        .collect();
    *row = sheet.table(*row, 0, &["estimate", "alias chain", "in factor names"], chain_rows);
    sheet.put(
        *row,
        0,
        Value::text("Chains list members of up to four factors; '+ ...' marks longer ones left out. A minus sign means that member enters with its sign reversed."),
        Look::Note,
    );
    *row += 2;
    for note in &two.aliasing_notes {
        sheet.put(*row, 0, Value::text(note.clone()), Look::Plain);
        *row += 1;
    }
    if let Some(follow_up) = &two.follow_up {
        sheet.put(*row, 0, Value::text(follow_up.clone()), Look::Verdict);
        *row += 1;
    }
    *row += 1;
}

fn reduced_section(
    sheet: &mut Sheet,
    row: &mut u32,
    response: &ResponseResult,
    outcome: &FactorialOutcome,
    model: &ReducedModel,
) {
    sheet.put(
        *row,
        0,
        Value::text(format!("{}: model of the active effects", response.name)),
        Look::Heading,
    );
    *row += 1;
    let facts = vec![
        (
            "active".to_string(),
            if model.active_terms.is_empty() {
                "none".to_string()
            } else {
                model.active_terms.join(", ").replace(':', " × ")
            },
        ),
        (
            "fitted".into(),
            if model.terms.is_empty() {
                "the mean only".to_string()
            } else {
                model.terms.join(", ").replace(':', " × ")
            },
        ),
        ("how chosen".into(), model.rule.clone()),
        (
            "residual SD".into(),
            model
                .residual_sd
                .map_or_else(|| "not defined".into(), |sd| round_for_text(sd, 4)),
        ),
        ("residual df".into(), model.residual_df.to_string()),
        (
            "R²".into(),
            model
                .r_squared
                .map_or_else(|| "not defined".into(), |r| round_for_text(r, 4)),
        ),
    ];
    for (key, value) in facts {
        sheet.put(*row, 0, Value::text(key), Look::Key);
        sheet.put(*row, 1, Value::text(value), Look::Plain);
        *row += 1;
    }
    *row += 1;
    let coefficient_rows: Vec<Vec<Value>> = model
        .coefficients
        .iter()
        .map(|line| {
            vec![
                Value::text(line.name.replace(':', " × ")),
                Value::decimals(line.estimate, 5),
                decimals(line.se),
                optional(line.t_value, NumberFormat::Decimals(3)),
                optional(line.p_value, NumberFormat::PValue),
            ]
        })
        .collect();
    *row = sheet.table(
        *row,
        0,
        &["column", "coefficient", "SE", "t", "p-value"],
        coefficient_rows,
    ) + 1;
    if let Some(check) = &model.residual_check {
        sheet.put(*row, 0, Value::text(check.reading.clone()), Look::Plain);
        *row += 1;
        if check.n_checked < check.n_residuals {
            sheet.put(
                *row,
                0,
                Value::text(format!(
                    "Checked on {} of the {} residuals, spread evenly through the recorded order.",
                    check.n_checked, check.n_residuals
                )),
                Look::Note,
            );
            *row += 1;
        }
        if let Some(largest) = &check.largest {
            let place = largest
                .cell
                .clone()
                .unwrap_or_else(|| format!("record {}", largest.record + 1));
            sheet.put(
                *row,
                0,
                Value::text(format!(
                    "Largest residual: {} residual SDs, at {place}.",
                    round_for_text(largest.in_sds, 3)
                )),
                Look::Plain,
            );
            *row += 1;
        }
    }
    if let Some(best) = &model.best {
        *row += 1;
        sheet.put(*row, 0, Value::text("Best settings found"), Look::Key);
        *row += 1;
        let mut rows: Vec<Vec<Value>> = best
            .settings
            .iter()
            .map(|(factor, level)| vec![Value::text(factor.clone()), Value::text(level.clone())])
            .collect();
        rows.push(vec![Value::text("predicted mean"), Value::decimals(best.mean, 4)]);
        if let Some((low, high)) = best.mean_interval {
            rows.push(vec![
                Value::text(format!("{} interval for the mean", percent(outcome.confidence))),
                Value::text(format!("{} to {}", round_for_text(low, 5), round_for_text(high, 5))),
            ]);
        }
        if let Some((low, high)) = best.single_run_interval {
            rows.push(vec![
                Value::text(format!("{} interval for one run", percent(outcome.confidence))),
                Value::text(format!("{} to {}", round_for_text(low, 5), round_for_text(high, 5))),
            ]);
        }
        rows.push(vec![
            Value::text("among the runs"),
            Value::text(if best.was_run { "yes" } else { "no" }),
        ]);
        *row = sheet.table(*row, 0, &["factor", "level"], rows);
    }
    *row += 2;
}
