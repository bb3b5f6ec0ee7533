//! The roll-up workbook of a batch: one row per workbook and response, with
//! a link to each workbook's own results file, and a sheet that tallies and
//! charts the verdicts.

use workbook_io::write::{Book, ChartKind, ChartSpec, Look, NumberFormat, Series, Sheet, SheetRange, Value};

use crate::{ResponseResult, WorkbookResults};
use engine::analysis::assessment::LeadAnalysis;

/// Sheet names of the roll-up.
pub mod names {
    /// One row per workbook and response.
    pub const ROWS: &str = "Week's trials";
    /// The tally of verdicts, with its chart.
    pub const VERDICTS: &str = "Verdicts";
}

/// Column headers of the rows sheet, in order.
pub const HEADERS: &[&str] = &[
    "Workbook",
    "Response",
    "Conditions",
    "Runs (n)",
    "Lead analysis",
    "p (lead analysis)",
    "Best condition(s)",
    "Largest difference",
    "Difference",
    "Interval low",
    "Interval high",
    "Verdict",
    "Findings",
    "Results file",
];

/// Column widths (characters) of the rows sheet: all fourteen columns fit one landscape
/// page across at the smallest print scale (`print::MIN_SCALE`, so text stays at 8 pt or
/// more on A4 and Letter); longer text and the headers wrap within their cells.
const ROW_WIDTHS: [f64; 14] = [
    13.5, 11.0, 12.0, 5.0, 11.0, 7.5, 11.0, 14.0, 8.5, 8.0, 8.0, 24.0, 7.0, 14.0,
];

/// The kinds of verdict tallied, in the order shown.
pub const VERDICT_KINDS: &[&str] = &[
    "conditions differ",
    "no clear difference",
    "undecided",
    "response not analysed",
    "workbook not analysed",
];

/// One workbook of the batch.
pub struct RollupEntry<'a> {
    /// The workbook's path as shown (relative to the batch where possible).
    pub file: String,
    /// The link to its results file, relative to the roll-up's folder.
    pub results_link: Option<String>,
    /// What came of it.
    pub outcome: RollupOutcome<'a>,
}

/// What came of one workbook.
pub enum RollupOutcome<'a> {
    /// Analysed.
    Analysed(&'a WorkbookResults),
    /// Not analysed, with the reason on one line.
    Failed(&'a str),
}

fn lead_label(lead: LeadAnalysis) -> &'static str {
    match lead {
        LeadAnalysis::OneWay => "one-way ANOVA, Tukey-Kramer pairs",
        LeadAnalysis::UnequalSpreads => "Welch's ANOVA, Games-Howell pairs",
        LeadAnalysis::RankBased => "Kruskal-Wallis ranks, Dunn pairs",
    }
}

/// The kind of verdict of one response (an index into [`VERDICT_KINDS`]).
pub fn verdict_kind(response: &ResponseResult) -> usize {
    match (&response.verdict, response.fit()) {
        (_, None) => 3,
        (Some(verdict), Some(_)) => match verdict.conditions_differ {
            Some(true) => 0,
            Some(false) => 1,
            None => 2,
        },
        (None, Some(_)) => 2,
    }
}

fn clip(text: String, most: usize) -> String {
    if text.chars().count() <= most {
        text
    } else {
        let mut clipped: String = text.chars().take(most.saturating_sub(1)).collect();
        clipped.push('…');
        clipped
    }
}

/// The link to a results file: the whole path as the target, the file name alone as the
/// text, broken into lines that fit the column (after a `.`, `-`, `_` or space, or within
/// a longer piece), because spreadsheet programs do not wrap a name without spaces and
/// cut it at the cell's edge instead.
fn results_link(target: &str) -> Value {
    let name = target.rsplit(['/', '\\']).next().unwrap_or(target);
    // One character less than the column's width: proportional type runs a little wide.
    let line = (ROW_WIDTHS[ROW_WIDTHS.len() - 1] as usize).saturating_sub(1).max(4);
    Value::Link {
        target: target.to_string(),
        text: break_into_lines(name, line),
    }
}

/// `text` in lines of at most `width` characters, broken after a `.`, `-`, `_` or space
/// where one falls within the line, else at the width.
fn break_into_lines(text: &str, width: usize) -> String {
    let mut lines: Vec<String> = Vec::new();
    let mut rest: Vec<char> = text.chars().collect();
    while rest.len() > width {
        let cut = (1..=width)
            .rev()
            .find(|&at| matches!(rest[at - 1], '.' | '-' | '_' | ' '))
            .unwrap_or(width);
        lines.push(rest[..cut].iter().collect::<String>().trim_end().to_string());
        rest.drain(..cut);
    }
    lines.push(rest.into_iter().collect());
    lines.join("\n")
}

fn response_row(entry: &RollupEntry<'_>, response: &ResponseResult, findings: usize) -> Vec<Value> {
    let link = entry.results_link.as_deref().map_or(Value::Blank, results_link);
    let Some(fit) = response.fit() else {
        let reason = match &response.outcome {
            crate::ResponseOutcome::NotAnalysed { reason } => reason.clone(),
            crate::ResponseOutcome::Analysed { .. } => String::new(),
        };
        let mut row = vec![Value::text(entry.file.clone()), Value::text(response.name.clone())];
        row.extend(std::iter::repeat_n(Value::Blank, 9));
        row.push(Value::text(clip(format!("not analysed: {reason}"), 500)));
        row.push(Value::integer(findings as f64));
        row.push(link);
        return row;
    };
    if let (crate::LeadKind::Factorial, Some(reading)) = (response.lead.analysis, &response.factorial_reading) {
        return factorial_row(entry, response, fit, reading, findings, link);
    }
    if let (crate::LeadKind::SecondOrder, Some(surface)) = (response.lead.analysis, response.surface.as_deref()) {
        return surface_row(entry, response, fit, surface, findings, link);
    }
    let conditions = clip(
        fit.conditions
            .iter()
            .map(|condition| condition.name.as_str())
            .collect::<Vec<_>>()
            .join(", "),
        300,
    );
    let assessment = response.assessment.as_deref();
    let lead = assessment.map_or(LeadAnalysis::OneWay, |assessment| assessment.lead);
    let lead_p = match (lead, assessment) {
        (LeadAnalysis::UnequalSpreads, Some(assessment)) => assessment.welch.as_ref().map(|welch| welch.p),
        (LeadAnalysis::RankBased, Some(assessment)) => assessment.rank_based.as_ref().map(|ranks| ranks.p),
        _ => fit.between().p,
    };
    let best = assessment
        .and_then(|assessment| assessment.best.as_ref())
        .map(|best| best.could_be_best.join(", "))
        .unwrap_or_else(|| "(set a direction to choose)".into());
    let family = assessment.and_then(|assessment| match lead {
        LeadAnalysis::UnequalSpreads => assessment.games_howell.as_ref(),
        _ => assessment.tukey_kramer.as_ref(),
    });
    let largest = family.and_then(|family| {
        family
            .pairs
            .iter()
            .filter(|pair| pair.difference.is_finite())
            .max_by(|a, b| a.difference.abs().total_cmp(&b.difference.abs()))
    });
    // As many decimals as the results workbook shows for this response.
    let places = super::decimals_for(fit);
    let (pair_text, difference, low, high) = match largest {
        // Pairs come with the higher average first, as on the Summary: the difference
        // and its interval read as positive amounts.
        Some(pair) => {
            let (first, second, difference, low, high) =
                (&pair.first, &pair.second, pair.difference, pair.low, pair.high);
            (
                Value::text(format!("{first} minus {second}")),
                Value::Number(difference, NumberFormat::Decimals(places)),
                Value::Number(low, NumberFormat::Decimals(places)),
                Value::Number(high, NumberFormat::Decimals(places)),
            )
        }
        None => (Value::Blank, Value::Blank, Value::Blank, Value::Blank),
    };
    vec![
        Value::text(entry.file.clone()),
        Value::text(response.name.clone()),
        Value::text(conditions),
        Value::integer(fit.n_total as f64),
        Value::text(lead_label(lead)),
        lead_p.map_or(Value::Blank, Value::p_value),
        Value::text(best),
        pair_text,
        difference,
        low,
        high,
    ]
    .into_iter()
    .chain(row_end(response, findings, link))
    .collect()
}

/// The row of a response led by the factorial model: the factors, the smallest p among
/// the treatment terms, the best settings among the combinations run and the largest
/// effect with its interval.
fn factorial_row(
    entry: &RollupEntry<'_>,
    response: &ResponseResult,
    fit: &engine::analysis::oneway::OneWayFit,
    reading: &engine::analysis::verdict::FactorialReading,
    findings: usize,
    link: Value,
) -> Vec<Value> {
    let places = super::decimals_for(fit);
    let number = |value: Option<f64>| {
        value.map_or(Value::Blank, |value| {
            Value::Number(value, NumberFormat::Decimals(places))
        })
    };
    let (effect_text, size, low, high) = match &reading.largest {
        Some(largest) => (
            Value::text(largest.label.clone()),
            number(Some(largest.size)),
            number(largest.low),
            number(largest.high),
        ),
        None => (Value::Blank, Value::Blank, Value::Blank, Value::Blank),
    };
    let runs = response
        .factorial
        .as_ref()
        .map_or(fit.n_total, |outcome| outcome.n_values as u64);
    combinations_row_start(entry, response, fit, runs)
        .into_iter()
        .chain([
            Value::text(format!("factorial model, {}", reading.analysis)),
            reading.smallest_p.map_or(Value::Blank, Value::p_value),
            Value::text(
                reading
                    .best_settings
                    .clone()
                    .unwrap_or_else(|| "(set a direction to choose)".into()),
            ),
            effect_text,
            size,
            low,
            high,
        ])
        .chain(row_end(response, findings, link))
        .collect()
}

/// The row of a response led by its second-order model: the model's test, the
/// recommended settings and the average predicted there with its interval.
fn surface_row(
    entry: &RollupEntry<'_>,
    response: &ResponseResult,
    fit: &engine::analysis::oneway::OneWayFit,
    surface: &engine::analysis::surface::SurfaceOutcome,
    findings: usize,
    link: Value,
) -> Vec<Value> {
    let places = super::decimals_for(fit);
    let number = |value: f64| Value::Number(value, NumberFormat::Decimals(places));
    let best = surface
        .recommended
        .as_ref()
        .filter(|_| response.verdict.as_ref().and_then(|v| v.conditions_differ) == Some(true));
    let settings = best.map(|best| {
        surface
            .factor_names
            .iter()
            .zip(&best.real)
            .map(|(name, value)| format!("{name} {}", engine::analysis::verdict::round_for_text(*value, 4)))
            .collect::<Vec<_>>()
            .join(", ")
    });
    let (label, size, low, high) = match best {
        Some(best) => (
            Value::text("average predicted at the recommended settings"),
            number(best.predicted),
            number(best.mean_low),
            number(best.mean_high),
        ),
        None => (Value::Blank, Value::Blank, Value::Blank, Value::Blank),
    };
    combinations_row_start(entry, response, fit, surface.n_records as u64)
        .into_iter()
        .chain([
            Value::text("second-order model"),
            engine::analysis::surface::model_test(surface).map_or(Value::Blank, |(_, _, p)| Value::p_value(p)),
            Value::text(settings.unwrap_or_else(|| "(set a direction to choose)".into())),
            label,
            size,
            low,
            high,
        ])
        .chain(row_end(response, findings, link))
        .collect()
}

/// The first cells of a row read from the combinations run: workbook, response, the
/// combinations and the number of runs.
fn combinations_row_start(
    entry: &RollupEntry<'_>,
    response: &ResponseResult,
    fit: &engine::analysis::oneway::OneWayFit,
    runs: u64,
) -> [Value; 4] {
    [
        Value::text(entry.file.clone()),
        Value::text(response.name.clone()),
        Value::text(clip(
            format!(
                "{} ({} combinations run)",
                response.condition_factor,
                fit.conditions.len()
            ),
            300,
        )),
        Value::integer(runs as f64),
    ]
}

/// The last cells of an analysed response's row: the headline, the findings and the link.
fn row_end(response: &ResponseResult, findings: usize, link: Value) -> [Value; 3] {
    [
        Value::text(
            response
                .verdict
                .as_ref()
                .map(|verdict| verdict.headline.clone())
                .unwrap_or_default(),
        ),
        Value::integer(findings as f64),
        link,
    ]
}

/// What the roll-up keeps of one workbook: its rows (text already clipped) and the
/// verdict kind of each, so that a batch can drop the workbook's results as soon as
/// its line is printed and its results written, and hold a bounded amount per workbook.
#[derive(Debug, Clone, PartialEq)]
pub struct RollupSummary {
    /// The rows of the rows sheet, one per response (one for a failed workbook).
    pub rows: Vec<Vec<Value>>,
    /// The index into [`VERDICT_KINDS`] of each row.
    pub kinds: Vec<usize>,
}

/// The roll-up rows of one workbook.
pub fn summarise(entry: &RollupEntry<'_>) -> RollupSummary {
    let mut summary = RollupSummary {
        rows: Vec::new(),
        kinds: Vec::new(),
    };
    match &entry.outcome {
        RollupOutcome::Analysed(results) => {
            for response in &results.responses {
                summary.kinds.push(verdict_kind(response));
                summary.rows.push(response_row(entry, response, results.findings.len()));
            }
        }
        RollupOutcome::Failed(reason) => {
            let mut row = vec![Value::text(entry.file.clone())];
            row.extend(std::iter::repeat_n(Value::Blank, 10));
            row.push(Value::text(clip(format!("not analysed: {reason}"), 500)));
            row.push(Value::Blank);
            row.push(entry.results_link.as_deref().map_or(Value::Blank, results_link));
            summary.kinds.push(4);
            summary.rows.push(row);
        }
    }
    summary
}

/// Builds the roll-up workbook of a batch.
pub fn build_rollup_book(entries: &[RollupEntry<'_>], created_at: &str) -> Book {
    let summaries: Vec<RollupSummary> = entries.iter().map(summarise).collect();
    build_rollup_book_from(summaries, created_at)
}

/// Builds the roll-up workbook of a batch from the kept rows of each workbook.
pub fn build_rollup_book_from(summaries: Vec<RollupSummary>, created_at: &str) -> Book {
    let mut rows_sheet = Sheet::new(names::ROWS);
    rows_sheet.widths = ROW_WIDTHS
        .iter()
        .enumerate()
        .map(|(col, &width)| (col as u16, width))
        .collect();
    rows_sheet.frozen_rows = 1;
    let mut tally = [0usize; 5];
    let workbooks = summaries.len();
    let mut rows = Vec::new();
    for summary in summaries {
        for kind in summary.kinds {
            tally[kind] += 1;
        }
        rows.extend(summary.rows);
    }
    rows_sheet.wrapped_table(0, 0, HEADERS, rows, &ROW_WIDTHS);

    let mut verdicts = Sheet::new(names::VERDICTS);
    verdicts.widths = vec![(0, 30.0), (1, 12.0)];
    verdicts.put(0, 0, Value::text("Verdicts of the batch"), Look::Title);
    verdicts.paragraph(
        1,
        0,
        format!(
            "{} workbook(s), made {}. One count per workbook and response; a workbook that could not be read counts once.",
            workbooks,
            super::readable_time(created_at)
        ),
        Look::Note,
        30.0,
    );
    let tally_rows: Vec<Vec<Value>> = VERDICT_KINDS
        .iter()
        .zip(tally)
        .map(|(kind, count)| vec![Value::text(*kind), Value::integer(count as f64)])
        .collect();
    let first = 4u32;
    verdicts.table(first - 1, 0, &["Verdict", "Count"], tally_rows);
    let last = first + VERDICT_KINDS.len() as u32 - 1;
    verdicts.charts.push(ChartSpec {
        kind: ChartKind::Columns,
        title: "Verdicts of the batch".into(),
        x_title: "Verdict".into(),
        y_title: "Count".into(),
        series: vec![Series {
            name: "Count".into(),
            categories: SheetRange::column(names::VERDICTS, 0, first, last),
            values: SheetRange::column(names::VERDICTS, 1, first, last),
            bar_plus: None,
            bar_minus: None,
            labels: None,
        }],
        anchor: (1, 3),
        size: (560, 320),
        value_limits: None,
    });
    Book {
        sheets: vec![rows_sheet, verdicts],
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The rows sheet prints one page across: the print plan keeps the smallest scale or
    /// more and needs no second page to the right for the last column.
    #[test]
    fn the_rows_sheet_fits_one_page_across() {
        let mut sheet = Sheet::new(names::ROWS);
        sheet.widths = ROW_WIDTHS
            .iter()
            .enumerate()
            .map(|(col, &width)| (col as u16, width))
            .collect();
        let long =
            "The conditions differ in Tensile strength (MPa): the trial shows it at 95% confidence (p < 0.0001).";
        let row: Vec<Value> = HEADERS.iter().map(|_| Value::text(long)).collect();
        sheet.wrapped_table(0, 0, HEADERS, vec![row], &ROW_WIDTHS);
        let print = workbook_io::write::print::plan_sheet(&sheet);
        assert!(print.scale >= workbook_io::write::print::MIN_SCALE, "{}", print.scale);
        let (page_width, _) = workbook_io::write::print::printable_area(false);
        let content: f64 = ROW_WIDTHS
            .iter()
            .map(|width| workbook_io::write::print::column_points(*width))
            .sum();
        assert!(
            content * f64::from(print.scale) / 100.0 <= page_width,
            "{content} pt at {}% on {page_width} pt",
            print.scale
        );
    }

    /// The link's text is the file name in lines that fit the column, its target the
    /// whole path (a name without spaces is otherwise cut at the cell's edge).
    #[test]
    fn a_results_link_shows_the_file_name_in_lines_that_fit_its_column() {
        let target = "plant-north/line3/line3-extrusion-trial-week12.results.xlsx";
        let Value::Link { target: link, text } = results_link(target) else {
            panic!("a link");
        };
        assert_eq!(link, target);
        let width = ROW_WIDTHS[ROW_WIDTHS.len() - 1] as usize;
        for line in text.lines() {
            assert!(line.chars().count() < width, "{line:?} in {text:?}");
        }
        // Nothing lost or added but the line breaks, and the folders left out.
        assert_eq!(text.replace('\n', ""), "line3-extrusion-trial-week12.results.xlsx");
        assert_eq!(text.lines().next(), Some("line3-"));
        // A piece with no place to break is cut at the width; a short name stays whole.
        assert_eq!(break_into_lines("abcdefghij", 4), "abcd\nefgh\nij");
        assert_eq!(break_into_lines("a.results.xlsx", 13), "a.results.\nxlsx");
        let Value::Link { text, .. } = results_link("t1.xlsx") else {
            panic!("a link");
        };
        assert_eq!(text, "t1.xlsx");
        let Value::Link { text, .. } = results_link("..\\other\\x.xlsx") else {
            panic!("a link");
        };
        assert_eq!(text, "x.xlsx");
    }
}
