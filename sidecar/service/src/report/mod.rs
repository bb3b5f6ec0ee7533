//! Turns [`WorkbookResults`] into a workbook model: the sheets a manager and
//! an engineer read, with charts. No I/O here; `workbook-io` writes the model.
//!
//! Sheets: a summary in plain words, condition statistics, the ANOVA table,
//! the pairs allowing for all comparisons and with the control and the best
//! ([`assessment`]), each pair alone, contrasts, the model checks and the
//! analyses without the model, the factorial sheets ([`factorial`]), data
//! problems, provenance, and a hidden sheet holding the results document as
//! JSON ([`document`]).

pub mod assessment;
mod compromise;
pub mod contour;
pub mod document;
pub mod factorial;
pub mod problems;
pub mod rollup;
pub mod surface;

use workbook_io::write::{
    chart_key, print, Book, ChartKind, ChartSpec, Look, NumberFormat, Series, Sheet, SheetRange, Value,
};

use crate::{ResponseOutcome, WorkbookResults};
use engine::analysis::oneway::OneWayFit;
use engine::analysis::verdict::round_for_text;

/// Sheet names of the results workbook.
pub mod names {
    /// The manager's summary.
    pub const SUMMARY: &str = "Summary";
    /// Per-condition statistics.
    pub const CONDITIONS: &str = "Conditions";
    /// The ANOVA tables.
    pub const ANOVA: &str = "ANOVA";
    /// Pairwise differences.
    pub const PAIRS: &str = "Pairwise differences";
    /// User contrasts.
    pub const CONTRASTS: &str = "Contrasts";
    /// Data problems.
    pub const FINDINGS: &str = "Data problems";
    /// Provenance.
    pub const PROVENANCE: &str = "Provenance";
    /// The hidden sheet holding the results document as JSON ([`super::document`]).
    pub const RESULTS_DOCUMENT: &str = "Results document";
}

pub(crate) fn decimals_for(fit: &OneWayFit) -> u8 {
    // Enough decimals to show the pooled SD to three significant digits.
    let scale = if fit.pooled_sd.is_finite() && fit.pooled_sd > 0.0 {
        fit.pooled_sd
    } else {
        fit.conditions
            .iter()
            .map(|condition| condition.mean.abs())
            .fold(0.0, f64::max)
            .max(1e-12)
            / 100.0
    };
    (2 - scale.log10().floor() as i32).clamp(0, 10) as u8
}

fn number(value: f64, places: u8) -> Value {
    Value::Number(value, NumberFormat::Decimals(places))
}

fn optional(value: Option<f64>, format: NumberFormat) -> Value {
    match value {
        Some(value) => Value::Number(value, format),
        None => Value::Blank,
    }
}

/// A display format showing about seven significant digits: fixed decimals
/// for magnitudes from 1e-4 to 1e9, scientific notation outside them (sums
/// of squares span any range; a fixed number of decimals would hide small
/// ones, and the general format prints fifteen digits).
pub(crate) fn significant_format(value: f64) -> NumberFormat {
    let magnitude = value.abs();
    if magnitude == 0.0 || !magnitude.is_finite() {
        return NumberFormat::General;
    }
    if !(1e-4..1e9).contains(&magnitude) {
        return NumberFormat::Scientific(6);
    }
    let leading = magnitude.log10().floor() as i32;
    NumberFormat::Decimals((6 - leading).clamp(0, 10) as u8)
}

/// An RFC 3339 time such as `2026-03-09T14:05:31.123456Z` as a person reads
/// it, `2026-03-09 14:05 UTC`; anything else is shown as it is.
pub(crate) fn readable_time(rfc3339: &str) -> String {
    let bytes = rfc3339.as_bytes();
    let looks_right = bytes.len() >= 17
        && rfc3339.is_char_boundary(16)
        && bytes[10] == b'T'
        && bytes[13] == b':'
        && rfc3339.ends_with('Z');
    if looks_right {
        format!("{} {} UTC", &rfc3339[..10], &rfc3339[11..16])
    } else {
        rfc3339.to_string()
    }
}

/// The sheet names a text points its reader to: each quoted name after the
/// word "sheet" or "sheets", and the further names of a list that follows
/// ("sheets 'A', 'B' and 'C'"). Used to check that every sheet a results
/// workbook's text names is one it holds.
pub fn sheets_named_in(text: &str) -> Vec<String> {
    let lower = text.to_ascii_lowercase();
    let mut names = Vec::new();
    let mut search_from = 0;
    while let Some(found) = lower[search_from..].find("sheet") {
        let word_end = search_from + found + "sheet".len();
        let mut rest = &text[word_end..];
        rest = rest.strip_prefix('s').unwrap_or(rest);
        let mut first = true;
        loop {
            let separator = if first {
                [" '"].iter().find(|separator| rest.starts_with(**separator))
            } else {
                [", '", " and '", ", and '"]
                    .iter()
                    .find(|separator| rest.starts_with(**separator))
            };
            let Some(separator) = separator else {
                break;
            };
            let quoted = &rest[separator.len()..];
            let Some(close) = quoted.find('\'') else {
                break;
            };
            names.push(quoted[..close].to_string());
            rest = &quoted[close + 1..];
            first = false;
        }
        search_from = word_end;
    }
    names
}

/// Sheet names quoted and joined as a sentence says them: 'A', 'B' and 'C'.
fn quoted_list(sheet_names: &[&str]) -> String {
    let quoted: Vec<String> = sheet_names.iter().map(|name| format!("'{name}'")).collect();
    match quoted.split_last() {
        Some((last, rest)) if !rest.is_empty() => format!("{} and {last}", rest.join(", ")),
        Some((last, _)) => last.clone(),
        None => String::new(),
    }
}

fn percent_text(confidence: f64) -> String {
    format!("{}%", round_for_text(confidence * 100.0, 3))
}

/// Builds the results workbook model.
pub fn build_results_book(results: &WorkbookResults) -> Book {
    let mut book = build_shown_sheets(results);
    book.sheets.push(document::document_sheet(results));
    book
}

/// The sheets of the results book that a reader sees: [`build_results_book`]
/// without its hidden sheet of the results document (an answer that carries
/// the results themselves has no use for it, and writing it costs time).
pub fn build_shown_sheets(results: &WorkbookResults) -> Book {
    let mut summary = Sheet::new(names::SUMMARY);
    let mut conditions = Sheet::new(names::CONDITIONS);
    let mut anova = Sheet::new(names::ANOVA);
    let mut pairs = Sheet::new(names::PAIRS);
    let mut contrasts = Sheet::new(names::CONTRASTS);

    // About 6.5 inches in the usual fonts: the text width of an upright A4
    // or Letter page (the summary is printed at 100%, one page per response).
    const SUMMARY_WIDTH: f64 = 72.0;
    // The conditions sheet's column of chart codes, right of the table, when the
    // condition labels are too long for a chart's axis.
    const CODE_COL: u16 = 12;
    summary.widths = vec![(0, SUMMARY_WIDTH)];
    // Printed, each response's section and its chart stand on one upright page.
    summary.portrait = true;
    summary.put(
        0,
        0,
        Value::text(format!("Trial results: {}", results.source.file_name)),
        Look::Title,
    );
    summary.paragraph(
        1,
        0,
        format!(
            "Sheet '{}', cells {}, {} records; analysed {} by {} {}.",
            results.source.sheet,
            results.source.range,
            results.table.n_records,
            readable_time(&results.created_at),
            results.tool,
            results.tool_version
        ),
        Look::Note,
        SUMMARY_WIDTH,
    );
    let mut summary_row = 3;
    // What table detection chose, one line each, before the results.
    for choice in &results.table.choices {
        summary.paragraph(
            summary_row - 1,
            0,
            format!("Chosen: {choice}."),
            Look::Note,
            SUMMARY_WIDTH,
        );
        summary_row += 1;
    }

    // Narrow enough for the twelve columns to print on one page width (headers wrap).
    conditions.widths = vec![
        (0, 22.0),
        (1, 6.0),
        (2, 10.0),
        (3, 10.0),
        (4, 10.0),
        (5, 10.0),
        (6, 10.0),
        (7, 10.0),
        (8, 11.0),
        (9, 11.0),
        (10, 11.0),
        (11, 9.0),
    ];
    anova.widths = vec![(0, 40.0), (1, 8.0), (2, 18.0), (3, 16.0), (4, 12.0), (5, 12.0)];
    pairs.widths = vec![
        (0, 22.0),
        (1, 22.0),
        (2, 13.0),
        (3, 13.0),
        (4, 13.0),
        (5, 13.0),
        (6, 10.0),
        (7, 11.0),
        (8, 14.0),
    ];
    contrasts.widths = vec![
        (0, 22.0),
        (1, 36.0),
        (2, 13.0),
        (3, 13.0),
        (4, 13.0),
        (5, 13.0),
        (6, 10.0),
        (7, 11.0),
    ];
    let mut conditions_row = 0;
    let mut anova_row = 0;
    let mut pairs_row = 0;
    let mut contrasts_row = 0;
    let mut any_contrast = false;

    if let Some(compromise) = &results.compromise {
        summary.paragraph(summary_row, 0, compromise.sentence.clone(), Look::Plain, SUMMARY_WIDTH);
        summary_row += 2;
    }
    for (response_index, response) in results.responses.iter().enumerate() {
        if response_index > 0 {
            summary.page_breaks.push(summary_row);
        }
        summary.put(
            summary_row,
            0,
            Value::text(format!("{} (conditions: {})", response.name, response.condition_factor)),
            Look::Heading,
        );
        summary_row += 1;
        let fit = match &response.outcome {
            ResponseOutcome::Analysed { one_way } => one_way,
            ResponseOutcome::NotAnalysed { reason } => {
                summary.put(
                    summary_row,
                    0,
                    Value::text(format!("Not analysed: {reason}.")),
                    Look::Verdict,
                );
                summary_row += 2;
                continue;
            }
        };
        if let Some(verdict) = &response.verdict {
            summary.paragraph(summary_row, 0, verdict.headline.clone(), Look::Verdict, SUMMARY_WIDTH);
            summary_row += 1;
            summary.paragraph(summary_row, 0, response.lead.reason.clone(), Look::Note, SUMMARY_WIDTH);
            summary_row += 1;
            // With the second-order lead the headline already gives the stationary point;
            // only a judgement of confirmation runs after it is news.
            let second_order = response.second_order.as_deref().and_then(|text| {
                if response.lead.analysis == crate::LeadKind::SecondOrder {
                    text.split_once("the region of the runs. ").map(|(_, rest)| rest)
                } else {
                    Some(text)
                }
            });
            if let Some(second_order) = second_order {
                summary.paragraph(summary_row, 0, second_order.to_string(), Look::Plain, SUMMARY_WIDTH);
                summary_row += 1;
            }
            if let Some(next_trial) = &response.next_trial {
                summary.paragraph(
                    summary_row,
                    0,
                    format!("Next trial: {next_trial}"),
                    Look::Plain,
                    SUMMARY_WIDTH,
                );
                summary_row += 1;
            }
            for line in &verdict.details {
                summary.paragraph(summary_row, 0, line.clone(), Look::Plain, SUMMARY_WIDTH);
                summary_row += 1;
            }
        }
        let mut detail_sheets = vec![names::CONDITIONS, names::ANOVA];
        if response.surface.is_some() {
            detail_sheets.insert(0, surface::SURFACE_SHEET);
        }
        if let Some(assessed) = response.assessment.as_deref() {
            detail_sheets.push(assessment::names::SIMULTANEOUS);
            if assessed.control.is_some() || assessed.best.is_some() {
                detail_sheets.push(assessment::names::CONTROL_BEST);
            }
            detail_sheets.push(assessment::names::CHECKS);
            // Welch's ANOVA and the rank-based analysis stand there; name it
            // when one of them leads.
            if assessed.lead != engine::analysis::assessment::LeadAnalysis::OneWay {
                detail_sheets.push(assessment::names::OTHER);
            }
        }
        summary.paragraph(
            summary_row,
            0,
            format!(
                "Details: sheets {}. Intervals are at {} confidence.",
                quoted_list(&detail_sheets),
                percent_text(fit.confidence)
            ),
            Look::Note,
            SUMMARY_WIDTH,
        );
        summary_row += 1;
        let places = decimals_for(fit);

        // Condition statistics, which also feed the chart.
        conditions.put(conditions_row, 0, Value::text(response.name.clone()), Look::Heading);
        conditions_row += 1;
        let interval_header_low = format!("{} low", percent_text(fit.confidence));
        let interval_header_high = format!("{} high", percent_text(fit.confidence));
        let headers = [
            response.condition_factor.as_str(),
            "n",
            "mean",
            "SD",
            "SE",
            "min",
            "median",
            "max",
            interval_header_low.as_str(),
            interval_header_high.as_str(),
            "± half-width",
            "alike group",
        ];
        let lead_family = response
            .assessment
            .as_deref()
            .and_then(engine::analysis::verdict::lead_family);
        let alike_letters = |name: &str| {
            lead_family
                .and_then(|family| family.letters.iter().find(|(condition, _)| condition == name))
                .map_or(Value::Blank, |(_, letters)| Value::text(letters.clone()))
        };
        let first_data_row = conditions_row + 1;
        let rows: Vec<Vec<Value>> = fit
            .conditions
            .iter()
            .map(|condition| {
                vec![
                    Value::text(condition.name.clone()),
                    Value::integer(condition.n as f64),
                    number(condition.mean, places + 1),
                    number(condition.sd, places + 1),
                    number(condition.se, places + 1),
                    number(condition.min, places),
                    number(condition.median, places),
                    number(condition.max, places),
                    number(condition.mean_low, places + 1),
                    number(condition.mean_high, places + 1),
                    number(condition.mean_half_width, places + 1),
                    alike_letters(&condition.name),
                ]
            })
            .collect();
        conditions_row = conditions.table(conditions_row, 0, &headers, rows);
        let last_data_row = conditions_row - 1;
        conditions.put(
            conditions_row,
            0,
            Value::text(match &fit.blocks {
                None => format!(
                    "Intervals for each mean use the pooled SD ({}) on {} degrees of freedom; SD and SE are each condition's own.",
                    round_for_text(fit.pooled_sd, 4),
                    fit.pooled_df
                ),
                Some(blocks) => format!(
                    "The trial was run in blocks ({}): each block's shift was taken out first, so these are the averages over the blocks, and SD, SE, min, median and max are of the values with their block's shift taken off. Intervals use the SD within conditions and blocks ({}) on {} degrees of freedom.",
                    blocks.factor,
                    round_for_text(fit.pooled_sd, 4),
                    fit.pooled_df
                ),
            }),
            Look::Note,
        );
        conditions_row += 1;
        if let Some(family) = lead_family {
            conditions.put(
                conditions_row,
                0,
                Value::text(format!(
                    "{} ({}, allowing for all pairs at {} confidence together; the pairs are on the sheet '{}').",
                    assessment::ALIKE_GROUP_NOTE.trim_end_matches('.'),
                    family.method.label(),
                    percent_text(family.family_confidence),
                    assessment::names::SIMULTANEOUS
                )),
                Look::Note,
            );
            conditions_row += 1;
        }
        conditions_row += 1;

        // Long combined labels ("60 / 20 / 4 / 1") or many conditions: the chart shows
        // codes, written beside the table on the conditions sheet, and a key under it.
        let labels: Vec<String> = fit.conditions.iter().map(|condition| condition.name.clone()).collect();
        let coded = chart_key::needs_codes(&labels);
        let category_col = if coded {
            conditions.put(
                first_data_row - 1,
                CODE_COL,
                Value::text("chart code"),
                Look::ColumnHeader,
            );
            for (offset, code) in chart_key::codes(labels.len()).into_iter().enumerate() {
                conditions.put(first_data_row + offset as u32, CODE_COL, Value::text(code), Look::Plain);
            }
            if !conditions.widths.iter().any(|(col, _)| *col == CODE_COL) {
                conditions.widths.push((CODE_COL, 7.0));
            }
            CODE_COL
        } else {
            0
        };
        let has_bars = fit.pooled_sd.is_finite();
        let chart_size = (500, 290);
        summary.charts.push(ChartSpec {
            kind: ChartKind::Points,
            title: format!("{}: average by condition", response.name),
            x_title: response.condition_factor.clone(),
            y_title: if has_bars {
                format!("mean with {} interval", percent_text(fit.confidence))
            } else {
                "mean".into()
            },
            series: vec![Series {
                name: response.name.clone(),
                categories: SheetRange::column(names::CONDITIONS, category_col, first_data_row, last_data_row),
                values: SheetRange::column(names::CONDITIONS, 2, first_data_row, last_data_row),
                bar_plus: has_bars.then(|| SheetRange::column(names::CONDITIONS, 10, first_data_row, last_data_row)),
                bar_minus: has_bars.then(|| SheetRange::column(names::CONDITIONS, 10, first_data_row, last_data_row)),
                labels: None,
            }],
            anchor: (summary_row + 1, 0),
            size: chart_size,
            value_limits: None,
        });
        if coded {
            // The key right under the chart, so that both print on one page.
            let key_row = summary_row + 1 + print::chart_rows(chart_size.1);
            summary_row = summary.chart_key(
                key_row,
                0,
                &format!(
                    "{}, in the order of the sheet '{}'",
                    response.condition_factor,
                    names::CONDITIONS
                ),
                &labels,
                SUMMARY_WIDTH,
            ) + 1;
        } else {
            summary_row += 17;
        }

        // ANOVA table.
        anova.put(anova_row, 0, Value::text(response.name.clone()), Look::Heading);
        anova_row += 1;
        let rows: Vec<Vec<Value>> = fit
            .anova
            .iter()
            .map(|line| {
                vec![
                    Value::text(line.source.clone()),
                    Value::integer(line.df),
                    Value::Number(line.ss, significant_format(line.ss)),
                    optional(line.ms, line.ms.map_or(NumberFormat::General, significant_format)),
                    optional(line.f, NumberFormat::Decimals(4)),
                    optional(line.p, NumberFormat::PValue),
                ]
            })
            .collect();
        anova_row = anova.table(
            anova_row,
            0,
            &["source", "df", "sum of squares", "mean square", "F", "p-value"],
            rows,
        );
        let effect_rows = vec![
            vec![
                Value::text("R² (share of variation between conditions)"),
                Value::Number(fit.r_squared, NumberFormat::Decimals(4)),
            ],
            vec![
                Value::text("eta²"),
                Value::Number(fit.eta_squared, NumberFormat::Decimals(4)),
            ],
            vec![
                Value::text("omega² (less biased)"),
                Value::Number(fit.omega_squared, NumberFormat::Decimals(4)),
            ],
            vec![
                Value::text("pooled SD"),
                Value::Number(fit.pooled_sd, NumberFormat::Decimals(places + 1)),
            ],
            vec![
                Value::text("pooled SD degrees of freedom"),
                Value::integer(fit.pooled_df),
            ],
            vec![
                Value::text("grand mean"),
                Value::Number(fit.grand_mean, NumberFormat::Decimals(places + 1)),
            ],
        ];
        anova_row = anova.table(anova_row + 1, 0, &["measure", "value"], effect_rows) + 1;

        // Pairwise differences.
        pairs.put(pairs_row, 0, Value::text(response.name.clone()), Look::Heading);
        pairs_row += 1;
        let low = format!("{} low", percent_text(fit.confidence));
        let high = format!("{} high", percent_text(fit.confidence));
        let rows: Vec<Vec<Value>> = fit
            .pairs
            .iter()
            .map(|pair| {
                vec![
                    Value::text(pair.first.clone()),
                    Value::text(pair.second.clone()),
                    number(pair.difference, places + 1),
                    number(pair.se, places + 1),
                    number(pair.low, places + 1),
                    number(pair.high, places + 1),
                    Value::Number(pair.t, NumberFormat::Decimals(3)),
                    Value::p_value(pair.p),
                    Value::Number(pair.standardized, NumberFormat::Decimals(3)),
                ]
            })
            .collect();
        pairs_row = pairs.table(
            pairs_row,
            0,
            &[
                "condition",
                "minus condition",
                "difference",
                "SE",
                low.as_str(),
                high.as_str(),
                "t",
                "p-value (unadjusted)",
                "difference in SDs",
            ],
            rows,
        );
        pairs.put(
            pairs_row,
            0,
            Value::text("Each row gives the condition with the higher average first, so the difference is the higher minus the lower. Each interval and p-value is for that pair alone; with many pairs, some will look different by chance."),
            Look::Note,
        );
        pairs_row += 2;

        if !fit.contrasts.is_empty() {
            any_contrast = true;
            contrasts.put(contrasts_row, 0, Value::text(response.name.clone()), Look::Heading);
            contrasts_row += 1;
            let rows: Vec<Vec<Value>> = fit
                .contrasts
                .iter()
                .map(|contrast| {
                    vec![
                        Value::text(contrast.name.clone()),
                        Value::text(contrast.expression.clone()),
                        number(contrast.estimate, places + 1),
                        number(contrast.se, places + 1),
                        number(contrast.low, places + 1),
                        number(contrast.high, places + 1),
                        Value::Number(contrast.t, NumberFormat::Decimals(3)),
                        Value::p_value(contrast.p),
                    ]
                })
                .collect();
            contrasts_row = contrasts.table(
                contrasts_row,
                0,
                &[
                    "name",
                    "combination",
                    "estimate",
                    "SE",
                    low.as_str(),
                    high.as_str(),
                    "t",
                    "p-value",
                ],
                rows,
            ) + 1;
        }
    }

    summary.put(summary_row, 0, Value::text("Cautions"), Look::Heading);
    summary_row += 1;
    for caution in &results.cautions {
        summary.paragraph(summary_row, 0, caution.clone(), Look::Caution, SUMMARY_WIDTH);
        summary_row += 1;
    }
    if !results.findings.is_empty() {
        summary.put(
            summary_row,
            0,
            Value::text(format!(
                "{} {} found and handled; see the sheet '{}'.",
                engine::analysis::verdict::count_of(results.findings.len(), "data problem"),
                if results.findings.len() == 1 { "was" } else { "were" },
                names::FINDINGS
            )),
            Look::Plain,
        );
    }

    // Order: the summary; the one-way reading from the means through the
    // pairs allowing for all comparisons to each pair alone; the checks of the
    // model and the analyses without it; then the factorial sheets, the data
    // problems, where the results come from, and the hidden document.
    let mut assessment_sheets = assessment::assessment_sheets(results, &|name: &str| {
        results
            .responses
            .iter()
            .find(|response| response.name == name)
            .and_then(|response| response.fit())
            .map_or(3, |fit| decimals_for(fit) + 1)
    });
    let mut take = |name: &str| {
        assessment_sheets
            .iter()
            .position(|sheet| sheet.name == name)
            .map(|index| assessment_sheets.remove(index))
    };
    let mut book = Book {
        sheets: vec![summary, conditions, anova],
    };
    book.sheets.extend(take(assessment::names::SIMULTANEOUS));
    book.sheets.extend(take(assessment::names::CONTROL_BEST));
    book.sheets.push(pairs);
    if any_contrast {
        book.sheets.push(contrasts);
    }
    book.sheets.extend(take(assessment::names::CHECKS));
    book.sheets.extend(take(assessment::names::OTHER));
    factorial::add_factorial_results(results, &mut book);
    surface::add_surface_results(results, &mut book);
    contour::add_contour_sheet(results, &mut book);
    book.sheets.push(findings_sheet(&results.findings));
    book.sheets.push(provenance_sheet(results));
    book
}

/// The data-problems sheet: one row per finding with its place.
pub fn findings_sheet(findings: &[workbook_io::layout::Finding]) -> Sheet {
    let mut sheet = Sheet::new(names::FINDINGS);
    // Wrapped columns narrow enough to print on one page width.
    let widths = [16.0, 16.0, 22.0, 30.0, 50.0];
    sheet.widths = widths
        .iter()
        .enumerate()
        .map(|(col, width)| (col as u16, *width))
        .collect();
    sheet.frozen_rows = 1;
    let rows: Vec<Vec<Value>> = findings
        .iter()
        .map(|finding| {
            vec![
                Value::text(finding.place()),
                Value::text(
                    serde_json::to_value(finding.kind)
                        .ok()
                        .and_then(|v| v.as_str().map(str::to_string))
                        .unwrap_or_default(),
                ),
                Value::text(finding.found.clone()),
                Value::text(finding.action.clone()),
                Value::text(finding.message.clone()),
            ]
        })
        .collect();
    let next = sheet.wrapped_table(
        0,
        0,
        &["place", "kind", "found", "what was done", "explanation"],
        rows,
        &widths,
    );
    if findings.is_empty() {
        sheet.put(next, 0, Value::text("No data problems were found."), Look::Note);
    }
    sheet
}

fn provenance_sheet(results: &WorkbookResults) -> Sheet {
    let mut sheet = Sheet::new(names::PROVENANCE);
    sheet.widths = vec![(0, 30.0), (1, 80.0)];
    let mut rows: Vec<(String, String)> = vec![
        ("source file".into(), results.source.file_name.clone()),
        ("source path".into(), results.source.path.clone()),
        ("source SHA-256".into(), results.source.sha256.clone()),
        ("source size (bytes)".into(), results.source.bytes.to_string()),
        ("format".into(), results.source.format.clone()),
        ("sheet".into(), results.source.sheet.clone()),
        ("range".into(), results.source.range.clone()),
        ("layout".into(), format!("{:?}", results.table.layout).to_lowercase()),
        ("records".into(), results.table.n_records.to_string()),
    ];
    for factor in &results.table.factors {
        rows.push((
            format!("{} '{}'", if factor.is_block { "block" } else { "factor" }, factor.name),
            factor.levels.join(", "),
        ));
    }
    rows.push(("responses".into(), results.table.responses.join(", ")));
    rows.push(("confidence".into(), format!("{}", results.settings.confidence_level())));
    for contrast in &results.settings.contrasts {
        rows.push(("contrast".into(), contrast.clone()));
    }
    // Which way is better, for every response and per response, as the analysis used it.
    let direction_text = |direction: &engine::options::Direction| match direction {
        engine::options::Direction::HigherIsBetter => "higher is better".to_string(),
        engine::options::Direction::LowerIsBetter => "lower is better".to_string(),
        engine::options::Direction::Target(target) => format!("nearest to {target} is better"),
    };
    rows.push((
        "direction".into(),
        results.settings.direction.as_ref().map_or_else(
            || {
                if results.settings.response_directions.is_empty() && results.settings.goals.is_empty() {
                    "not given (no best condition is chosen)".to_string()
                } else {
                    "not given for every response; per response below".to_string()
                }
            },
            direction_text,
        ),
    ));
    for named in &results.settings.response_directions {
        rows.push((
            format!("direction for '{}'", named.response),
            direction_text(&named.direction),
        ));
    }
    // A goal gives its response a direction when no direction names that response.
    for response in &results.responses {
        let named = results
            .settings
            .response_directions
            .iter()
            .any(|entry| crate::settings::names_response(&entry.response, &response.name));
        let from_goal = results
            .settings
            .goals
            .iter()
            .any(|goal| crate::settings::names_response(&goal.response, &response.name));
        if let (false, true, Some(direction)) = (named, from_goal, results.settings.direction_for(&response.name)) {
            rows.push((
                format!("direction for '{}'", response.name),
                format!("{} (from its goal)", direction_text(&direction)),
            ));
        }
    }
    if let Some(control) = &results.settings.control {
        rows.push(("control".into(), control.clone()));
    }
    for (key, origin) in &results.settings_sources {
        rows.push((format!("setting '{key}' from"), origin.clone()));
    }
    for response in &results.responses {
        if let Some(fit) = response.fit() {
            rows.push((
                format!("arithmetic for '{}'", response.name),
                if fit.exact_decimal {
                    "exact decimal accumulation (every value had a short decimal form)".into()
                } else {
                    "compensated binary accumulation".into()
                },
            ));
        }
        if let Some(factorial) = response
            .factorial
            .as_ref()
            .filter(|factorial| factorial.model.is_some() || factorial.two_level.is_some())
        {
            rows.push((
                format!("arithmetic for '{}' (factorial model)", response.name),
                if factorial.exact_decimal {
                    "exact decimal accumulation of the deviations from one centre (every value had a short decimal form)"
                        .into()
                } else {
                    "compensated binary accumulation of the deviations from one centre".into()
                },
            ));
        }
        if let Some(surface) = &response.surface {
            rows.push((
                format!("arithmetic for '{}' (second-order model)", response.name),
                if surface.exact_decimal {
                    "exact decimal accumulation of the deviations from one centre (every value had a short decimal form), then Householder QR of the coded settings"
                        .into()
                } else {
                    "compensated binary accumulation of the deviations from one centre, then Householder QR of the coded settings".into()
                },
            ));
        }
    }
    rows.push(("tool".into(), format!("{} {}", results.tool, results.tool_version)));
    rows.push(("results format".into(), results.format_version.to_string()));
    rows.push(("created (UTC)".into(), results.created_at.clone()));
    rows.push((
        "time (ms): hash, read, layout, analysis".into(),
        format!(
            "{:.1}, {:.1}, {:.1}, {:.1}",
            results.timings.hash_ms, results.timings.read_ms, results.timings.layout_ms, results.timings.analysis_ms
        ),
    ));
    sheet.put(0, 0, Value::text("Where these results come from"), Look::Title);
    // The item column as wide as its longest item (a response's name can be long),
    // so that no item runs under its value.
    let longest = rows.iter().map(|(key, _)| key.chars().count()).max().unwrap_or(0);
    sheet.widths = vec![(0, (longest as f64 + 2.0).clamp(24.0, 60.0)), (1, 60.0)];
    let table_rows = rows
        .into_iter()
        .map(|(key, value)| vec![Value::text(key), Value::text(value)])
        .collect();
    let next = sheet.table(2, 0, &["item", "value"], table_rows);
    sheet.put(
        next + 1,
        0,
        Value::text("The source workbook was only read; it was not changed."),
        Look::Note,
    );
    sheet
}

#[cfg(test)]
mod tests {
    use super::{build_results_book, names, quoted_list, readable_time, sheets_named_in, significant_format};
    use workbook_io::write::{Book, Look, NumberFormat, Sheet, Value};

    /// Analyses a long table written to a temporary workbook (invented
    /// values) and builds its results workbook.
    fn book_for(header: &[&str], rows: &[(Vec<&str>, f64)], settings: crate::settings::Settings) -> Book {
        let folder = tempfile::tempdir().expect("a temporary folder");
        let source = folder.path().join("trial.xlsx");
        let mut sheet = Sheet::new("Runs");
        for (col, name) in header.iter().enumerate() {
            sheet.put(0, col as u16, Value::text(*name), Look::ColumnHeader);
        }
        for (index, (levels, value)) in rows.iter().enumerate() {
            let row = index as u32 + 1;
            for (col, level) in levels.iter().enumerate() {
                sheet.put(row, col as u16, Value::text(*level), Look::Plain);
            }
            sheet.put(row, levels.len() as u16, Value::number(*value), Look::Plain);
        }
        workbook_io::write::write_book(&Book { sheets: vec![sheet] }, &source).expect("written");
        let request = crate::AnalysisRequest {
            settings,
            ..crate::AnalysisRequest::default()
        };
        let results = crate::analyse_workbook(&source, &request).expect("analysed");
        build_results_book(&results)
    }

    /// Rows of a one-factor long table: each condition's values.
    fn one_factor_rows<'n>(conditions: &[(&'n str, &[f64])]) -> Vec<(Vec<&'n str>, f64)> {
        conditions
            .iter()
            .flat_map(|(name, values)| values.iter().map(move |value| (vec![*name], *value)))
            .collect()
    }

    fn sheet<'b>(book: &'b Book, name: &str) -> &'b Sheet {
        book.sheets
            .iter()
            .find(|sheet| sheet.name == name)
            .unwrap_or_else(|| panic!("no sheet '{name}'"))
    }

    fn texts(sheet: &Sheet) -> impl Iterator<Item = &str> {
        sheet.cells.iter().filter_map(|placed| match &placed.value {
            Value::Text(text) => Some(text.as_str()),
            _ => None,
        })
    }

    /// Every sheet any text of the book names is in the book (the source
    /// sheet 'Runs' is the trial's own, named in the Summary's first lines).
    fn assert_named_sheets_exist(book: &Book) {
        let held: Vec<&str> = book.sheets.iter().map(|sheet| sheet.name.as_str()).collect();
        for sheet in &book.sheets {
            for text in texts(sheet) {
                for named in sheets_named_in(text) {
                    assert!(
                        held.contains(&named.as_str()) || named == "Runs",
                        "sheet '{}' names the missing sheet '{named}': {text}; the book holds {held:?}",
                        sheet.name
                    );
                }
            }
        }
    }

    #[test]
    fn reads_sheet_names_from_sentences() {
        assert_eq!(
            sheets_named_in(
                "Details: sheets 'Conditions', 'ANOVA', 'Which pairs differ' and 'Model checks'. Intervals"
            ),
            vec!["Conditions", "ANOVA", "Which pairs differ", "Model checks"]
        );
        assert_eq!(sheets_named_in("see the sheet 'Data problems'."), vec!["Data problems"]);
        assert_eq!(sheets_named_in("Sheet 'Runs', cells A1:B9"), vec!["Runs"]);
        assert!(sheets_named_in("the sheet has no table; 'quoted' text").is_empty());
        assert_eq!(quoted_list(&["A", "B", "C"]), "'A', 'B' and 'C'");
        assert_eq!(quoted_list(&["A"]), "'A'");
    }

    #[test]
    fn a_one_way_results_book_holds_every_sheet_it_names() {
        // Three invented oven settings, four runs each; Low is clearly below
        // the other two, which are close.
        let rows = one_factor_rows(&[
            ("Low", &[50.1, 50.4, 49.8, 50.2]),
            ("Mid", &[53.0, 53.3, 52.8, 53.4]),
            ("High", &[53.2, 53.6, 53.1, 53.5]),
        ]);
        let book = book_for(&["Oven", "Gloss"], &rows, crate::settings::Settings::default());
        let order: Vec<&str> = book.sheets.iter().map(|sheet| sheet.name.as_str()).collect();
        assert_eq!(
            order,
            vec![
                names::SUMMARY,
                names::CONDITIONS,
                names::ANOVA,
                super::assessment::names::SIMULTANEOUS,
                names::PAIRS,
                super::assessment::names::CHECKS,
                super::assessment::names::OTHER,
                names::FINDINGS,
                names::PROVENANCE,
                names::RESULTS_DOCUMENT,
            ]
        );
        assert_named_sheets_exist(&book);
        // The model checks carry the two charts the Summary's readings point to.
        let checks = sheet(&book, super::assessment::names::CHECKS);
        let chart_titles: Vec<&str> = checks.charts.iter().map(|chart| chart.title.as_str()).collect();
        assert_eq!(
            chart_titles,
            vec![
                "Gloss: residuals against fitted means",
                "Gloss: normal probability plot of residuals"
            ]
        );
        // Tukey-Kramer leads (equal spreads, normal-looking residuals): Low
        // differs from both (gap about 3, pooled SD about 0.22), Mid and High
        // (gap 0.2) cannot be told apart, so Low carries a letter of its own.
        let conditions = sheet(&book, names::CONDITIONS);
        let letter_of = |name: &str| {
            let row = conditions
                .cells
                .iter()
                .find(|placed| placed.col == 0 && placed.value == Value::text(name))
                .map(|placed| placed.row)
                .expect("the condition's row");
            conditions
                .cells
                .iter()
                .find(|placed| placed.row == row && placed.col == 11)
                .map(|placed| placed.value.clone())
        };
        assert_eq!(letter_of("Mid"), letter_of("High"));
        assert_ne!(letter_of("Low"), letter_of("Mid"));
        assert!(texts(conditions).any(|text| text == "alike group"));
        let simultaneous = sheet(&book, super::assessment::names::SIMULTANEOUS);
        assert!(
            texts(simultaneous).any(|text| text.starts_with("Tukey-Kramer") && text.ends_with("(the lead analysis)")),
            "{:?}",
            texts(simultaneous).collect::<Vec<_>>()
        );
        // The letters stand beside the lead family only.
        assert_eq!(texts(simultaneous).filter(|text| *text == "alike group").count(), 1);
        let summary_text: Vec<&str> = texts(sheet(&book, names::SUMMARY)).collect();
        assert!(
            summary_text
                .iter()
                .any(|text| text.starts_with("Could not be told apart")
                    && text.contains("Mid and High")
                    && text.contains("Low differs from every other condition")),
            "{summary_text:?}"
        );
        assert!(!summary_text.iter().any(|text| text.contains("sharing a letter")));
    }

    #[test]
    fn a_control_and_a_direction_add_their_sheet_and_the_summary_names_it() {
        // Invented coatings, four runs each; higher gloss is better.
        let rows = one_factor_rows(&[
            ("Standard", &[50.1, 50.4, 49.8, 50.2]),
            ("Primer", &[53.0, 53.3, 52.8, 53.4]),
            ("Two coats", &[51.2, 51.6, 51.1, 51.5]),
        ]);
        let settings = crate::settings::Settings {
            control: Some("Standard".into()),
            direction: Some(engine::options::Direction::HigherIsBetter),
            ..crate::settings::Settings::default()
        };
        let book = book_for(&["Coating", "Gloss"], &rows, settings);
        assert_named_sheets_exist(&book);
        let control_best = sheet(&book, super::assessment::names::CONTROL_BEST);
        let lines: Vec<&str> = texts(control_best).collect();
        assert!(
            lines
                .iter()
                .any(|text| text.starts_with("Against the control 'Standard'")),
            "{lines:?}"
        );
        assert!(
            lines
                .iter()
                .any(|text| text.starts_with("Each condition against the best")),
            "{lines:?}"
        );
        assert!(
            texts(sheet(&book, names::SUMMARY)).any(|text| text.starts_with("Details:")
                && text.contains(&format!("'{}'", super::assessment::names::CONTROL_BEST))),
            "the Summary names the sheet"
        );
    }

    #[test]
    fn unequal_spreads_lead_with_games_howell_and_the_summary_names_welch_s_sheet() {
        // Invented fillers: two hold their weight tightly, one wanders
        // (SD about 40 times larger), with symmetric spread around each mean.
        // Fifteen runs each, so that the rank-based rule (groups under 15)
        // cannot take the lead.
        const SHAPE: [f64; 15] = [
            -1.7, -1.1, -0.8, -0.5, -0.3, -0.15, -0.05, 0.0, 0.05, 0.15, 0.3, 0.5, 0.8, 1.1, 1.7,
        ];
        let filler = |mean: f64, sd: f64| -> Vec<f64> { SHAPE.iter().map(|z| mean + sd * z).collect() };
        let (first, second, third) = (filler(100.0, 0.1), filler(100.0, 4.0), filler(101.0, 0.1));
        let rows = one_factor_rows(&[("Filler 1", &first), ("Filler 2", &second), ("Filler 3", &third)]);
        let book = book_for(&["Filler", "Weight"], &rows, crate::settings::Settings::default());
        assert_named_sheets_exist(&book);
        let simultaneous = sheet(&book, super::assessment::names::SIMULTANEOUS);
        let lead: Vec<&str> = texts(simultaneous)
            .filter(|text| text.ends_with("(the lead analysis)"))
            .collect();
        assert_eq!(lead.len(), 1, "{lead:?}");
        assert!(lead[0].starts_with("Games-Howell"), "{lead:?}");
        assert!(
            texts(sheet(&book, names::SUMMARY))
                .any(|text| text.starts_with("Details:")
                    && text.contains(&format!("'{}'", super::assessment::names::OTHER))),
            "the Summary names the sheet with Welch's ANOVA"
        );
    }

    #[test]
    fn a_two_factor_results_book_holds_every_sheet_it_names() {
        // An invented 2x2 trial, two runs per cell: temperature raises the
        // strength by about 4, the line by about 1.
        let mut rows = Vec::new();
        for (temperature, line, values) in [
            ("170", "North", [20.1, 20.5]),
            ("170", "South", [21.2, 20.8]),
            ("190", "North", [24.0, 24.4]),
            ("190", "South", [25.1, 25.3]),
        ] {
            for value in values {
                rows.push((vec![temperature, line], value));
            }
        }
        let book = book_for(
            &["Temperature", "Line", "Strength"],
            &rows,
            crate::settings::Settings::default(),
        );
        let order: Vec<&str> = book.sheets.iter().map(|sheet| sheet.name.as_str()).collect();
        for expected in [
            super::assessment::names::SIMULTANEOUS,
            super::assessment::names::CHECKS,
            super::assessment::names::OTHER,
            super::factorial::names::ANOVA,
            super::factorial::names::EFFECTS,
        ] {
            assert!(order.contains(&expected), "no sheet '{expected}' in {order:?}");
        }
        assert_named_sheets_exist(&book);
        // The provenance sheet says which arithmetic each model used: the values are
        // short decimals, so both the one-way and the factorial sums were exact.
        let provenance: Vec<&str> = texts(sheet(&book, super::names::PROVENANCE)).collect();
        let row = provenance
            .iter()
            .position(|text| *text == "arithmetic for 'Strength' (factorial model)")
            .unwrap_or_else(|| panic!("no factorial arithmetic row in {provenance:?}"));
        assert!(
            provenance[row + 1].starts_with("exact decimal accumulation of the deviations"),
            "{}",
            provenance[row + 1]
        );
        assert!(provenance.contains(&"arithmetic for 'Strength'"), "{provenance:?}");
    }

    #[test]
    fn sums_of_squares_show_seven_significant_digits() {
        assert_eq!(significant_format(0.179238166666667), NumberFormat::Decimals(7));
        assert_eq!(significant_format(1234.5678), NumberFormat::Decimals(3));
        assert_eq!(significant_format(-12.5), NumberFormat::Decimals(5));
        assert_eq!(significant_format(2.5e12), NumberFormat::Scientific(6));
        assert_eq!(significant_format(3e-9), NumberFormat::Scientific(6));
        assert_eq!(significant_format(0.0), NumberFormat::General);
    }

    #[test]
    fn times_are_shown_to_the_minute() {
        assert_eq!(readable_time("2026-03-09T14:05:31.123456789Z"), "2026-03-09 14:05 UTC");
        assert_eq!(readable_time("2026-03-09T14:05:31Z"), "2026-03-09 14:05 UTC");
        // Not the expected shape: shown unchanged.
        assert_eq!(readable_time("yesterday"), "yesterday");
        assert_eq!(readable_time("2026-03-09T14:05:31+01:00"), "2026-03-09T14:05:31+01:00");
    }
}
