//! Sheets for the simultaneous comparisons, the model checks and the
//! analyses that do without the model's assumptions.

use workbook_io::write::{ChartKind, ChartSpec, Look, NumberFormat, Series, Sheet, SheetRange, Value};

use crate::WorkbookResults;
use engine::analysis::assessment::{
    Assessment, LeadAnalysis, NON_NORMAL_P, OUTLIER_FAMILY_ALPHA, SMALL_GROUP_N, UNEQUAL_SPREAD_P, UNEQUAL_SPREAD_RATIO,
};
use engine::analysis::comparisons::{PairFamily, SimultaneousPair};
use engine::analysis::verdict::{lead_family, round_for_text};

/// Sheet names.
pub mod names {
    /// Simultaneous pairwise intervals.
    pub const SIMULTANEOUS: &str = "Which pairs differ";
    /// Comparisons with the control and with the best.
    pub const CONTROL_BEST: &str = "Control and best";
    /// Model checks.
    pub const CHECKS: &str = "Model checks";
    /// Welch and rank-based analyses.
    pub const OTHER: &str = "Other analyses";
}

/// How the letters of an "alike group" column read, said once under each
/// such column.
pub const ALIKE_GROUP_NOTE: &str =
    "Alike group: conditions with a letter in common could not be told apart by this trial; conditions with no letter in common gave different averages.";

fn pct(confidence: f64) -> String {
    format!("{}%", round_for_text(confidence * 100.0, 3))
}

fn pair_rows(pairs: &[SimultaneousPair], places: u8) -> Vec<Vec<Value>> {
    pairs
        .iter()
        .map(|pair| {
            vec![
                Value::text(pair.first.clone()),
                Value::text(pair.second.clone()),
                Value::decimals(pair.difference, places),
                Value::decimals(pair.low, places),
                Value::decimals(pair.high, places),
                Value::p_value(pair.p_adjusted),
                Value::text(if pair.differ { "yes" } else { "no" }),
            ]
        })
        .collect()
}

/// One family's table; `lead` marks the family of the lead analysis, and
/// `with_letters` adds the alike-group letters beside it (shown for one
/// family only, the one the means table and the Summary use).
fn family_block(sheet: &mut Sheet, row: u32, family: &PairFamily, places: u8, lead: bool, with_letters: bool) -> u32 {
    let title = format!(
        "{} — {} family confidence{}",
        family.method.label(),
        pct(family.family_confidence),
        if lead { " (the lead analysis)" } else { "" }
    );
    sheet.put(row, 0, Value::text(title), Look::Key);
    let next = sheet.table(
        row + 1,
        0,
        &[
            "condition",
            "minus condition",
            "difference",
            "low",
            "high",
            "adjusted p",
            "differ?",
        ],
        pair_rows(&family.pairs, places),
    );
    if !with_letters {
        return next + 1;
    }
    let letters = family
        .letters
        .iter()
        .map(|(name, letters)| vec![Value::text(name.clone()), Value::text(letters.clone())])
        .collect();
    let letters_end = sheet.table(row + 1, 8, &["condition", "alike group"], letters);
    sheet.put(letters_end, 8, Value::text(ALIKE_GROUP_NOTE), Look::Note);
    next.max(letters_end + 1) + 1
}

/// Builds the sheets: which pairs differ, control and best (only when a
/// control or a direction asked for them), model checks and other analyses.
/// Responses without an assessment are skipped; with none at all, no sheet.
pub fn assessment_sheets(results: &WorkbookResults, places_of: &dyn Fn(&str) -> u8) -> Vec<Sheet> {
    let mut simultaneous = Sheet::new(names::SIMULTANEOUS);
    simultaneous.widths = vec![
        (0, 22.0),
        (1, 22.0),
        (2, 13.0),
        (3, 13.0),
        (4, 13.0),
        (5, 12.0),
        (6, 9.0),
        (8, 22.0),
        (9, 14.0),
    ];
    let mut control_best = Sheet::new(names::CONTROL_BEST);
    control_best.widths = vec![
        (0, 22.0),
        (1, 22.0),
        (2, 13.0),
        (3, 13.0),
        (4, 13.0),
        (5, 12.0),
        (6, 12.0),
    ];
    let mut checks = Sheet::new(names::CHECKS);
    checks.widths = vec![
        (0, 40.0),
        (1, 12.0),
        (2, 12.0),
        (3, 12.0),
        (4, 12.0),
        (6, 12.0),
        (7, 12.0),
        (8, 16.0),
        (9, 17.0),
    ];
    let mut other = Sheet::new(names::OTHER);
    other.widths = vec![(0, 26.0), (1, 22.0), (2, 13.0), (3, 13.0), (4, 13.0)];
    let (mut simultaneous_row, mut control_row, mut checks_row, mut other_row) = (0u32, 0u32, 0u32, 0u32);
    let mut any_control_or_best = false;

    for response in &results.responses {
        let Some(assessment) = response.assessment.as_deref() else {
            continue;
        };
        let places = places_of(&response.name);
        let heading = Value::text(response.name.clone());

        simultaneous.put(simultaneous_row, 0, heading.clone(), Look::Heading);
        simultaneous.put(
            simultaneous_row + 1,
            0,
            Value::text(format!(
                "{} Each pair gives the condition with the higher average first: the difference is the higher minus the lower.",
                assessment.family_confidence_reason
            )),
            Look::Note,
        );
        simultaneous_row += 2;
        let lettered = lead_family(assessment).map(|family| family.method);
        let families: [(&Option<PairFamily>, bool); 4] = [
            (&assessment.tukey_kramer, assessment.lead == LeadAnalysis::OneWay),
            (
                &assessment.games_howell,
                assessment.lead == LeadAnalysis::UnequalSpreads,
            ),
            (&assessment.bonferroni, false),
            (&assessment.scheffe, false),
        ];
        if assessment.lead == LeadAnalysis::RankBased {
            simultaneous.put(
                simultaneous_row,
                0,
                Value::text(format!(
                    "The lead analysis is rank-based; its pairs (Dunn's, Holm-adjusted) are on the sheet '{}'. The intervals below assume the one-way model.",
                    names::OTHER
                )),
                Look::Note,
            );
            simultaneous_row += 1;
        }
        for (family, lead) in families {
            if let Some(family) = family {
                let with_letters = lettered == Some(family.method);
                simultaneous_row =
                    family_block(&mut simultaneous, simultaneous_row, family, places, lead, with_letters);
            }
        }
        if !assessment.contrasts.is_empty() {
            simultaneous.put(
                simultaneous_row,
                0,
                Value::text("Your contrasts, adjusted for their number"),
                Look::Key,
            );
            let rows = assessment
                .contrasts
                .iter()
                .map(|contrast| {
                    vec![
                        Value::text(contrast.name.clone()),
                        Value::decimals(contrast.estimate, places),
                        Value::decimals(contrast.scheffe_low, places),
                        Value::decimals(contrast.scheffe_high, places),
                        Value::p_value(contrast.p_scheffe),
                        Value::p_value(contrast.p_holm),
                    ]
                })
                .collect();
            simultaneous_row = simultaneous.table(
                simultaneous_row + 1,
                0,
                &[
                    "contrast",
                    "estimate",
                    "Scheffé low",
                    "Scheffé high",
                    "Scheffé p",
                    "Holm p",
                ],
                rows,
            ) + 1;
        }
        simultaneous_row += 1;

        if assessment.control.is_some() || assessment.best.is_some() {
            any_control_or_best = true;
            control_best.put(control_row, 0, heading.clone(), Look::Heading);
            control_row += 1;
        }
        if let Some(control) = &assessment.control {
            control_best.put(
                control_row,
                0,
                Value::text(format!(
                    "Against the control '{}' (Dunnett, {}, {} family confidence)",
                    control.control,
                    control.sides,
                    pct(control.family_confidence)
                )),
                Look::Key,
            );
            control_row = control_best.table(
                control_row + 1,
                0,
                &[
                    "condition",
                    "minus control",
                    "difference",
                    "low",
                    "high",
                    "adjusted p",
                    "differ?",
                ],
                pair_rows(&control.rows, places),
            ) + 1;
        }
        if let Some(best) = &assessment.best {
            control_best.put(
                control_row,
                0,
                Value::text(format!("Each condition against the best of the others (Hsu's comparisons with the best, {} family confidence)", pct(best.family_confidence))),
                Look::Key,
            );
            let rows = best
                .rows
                .iter()
                .map(|row| {
                    vec![
                        Value::text(row.condition.clone()),
                        Value::decimals(row.difference, places),
                        Value::decimals(row.low, places),
                        Value::decimals(row.high, places),
                        Value::text(if row.could_be_best {
                            "could be best"
                        } else {
                            "not the best"
                        }),
                    ]
                })
                .collect();
            control_row = control_best.table(
                control_row + 1,
                0,
                &["condition", "minus best of others", "low", "high", "verdict"],
                rows,
            );
            control_best.put(
                control_row,
                0,
                Value::text("Differences are signed so that a positive value means better. A condition whose upper end is above zero could be the best."),
                Look::Note,
            );
            control_row += 2;
        }

        checks_row = checks_block(&mut checks, checks_row, &response.name, assessment, places);
        other_row = other_block(&mut other, other_row, &response.name, assessment);
    }
    if !results.responses.iter().any(|response| response.assessment.is_some()) {
        return Vec::new();
    }
    let mut sheets = vec![simultaneous];
    if any_control_or_best {
        sheets.push(control_best);
    }
    sheets.push(checks);
    sheets.push(other);
    sheets
}

fn checks_block(sheet: &mut Sheet, mut row: u32, response: &str, assessment: &Assessment, places: u8) -> u32 {
    let checks = &assessment.checks;
    sheet.put(row, 0, Value::text(response.to_string()), Look::Heading);
    row += 1;
    for reading in &checks.readings {
        sheet.put(row, 0, Value::text(reading.clone()), Look::Plain);
        row += 1;
    }
    sheet.put(
        row,
        0,
        Value::text(format!("Which analysis leads: {}", assessment.lead_reason)),
        Look::Verdict,
    );
    row += 2;
    let mut rows = Vec::new();
    for test in [&checks.levene, &checks.brown_forsythe_spread, &checks.bartlett]
        .into_iter()
        .flatten()
    {
        rows.push(vec![
            Value::text(test.test.clone()),
            Value::decimals(test.statistic, 4),
            Value::text(
                test.df
                    .iter()
                    .map(|df| round_for_text(*df, 4))
                    .collect::<Vec<_>>()
                    .join(", "),
            ),
            Value::p_value(test.p),
        ]);
    }
    if let Some(normality) = &checks.normality {
        rows.push(vec![
            Value::text(format!("{} on {} residuals", normality.test, normality.n)),
            Value::decimals(normality.statistic, 4),
            Value::Blank,
            Value::p_value(normality.p),
        ]);
    }
    if let Some(ratio) = checks.sd_ratio {
        rows.push(vec![
            Value::text("largest SD / smallest SD"),
            Value::decimals(ratio, 3),
            Value::Blank,
            Value::Blank,
        ]);
    }
    row = sheet.table(row, 0, &["check", "statistic", "df", "p-value"], rows) + 1;
    if !checks.outliers.is_empty() {
        let rows = checks
            .outliers
            .iter()
            .map(|outlier| {
                vec![
                    Value::text(outlier.cell.clone().unwrap_or_default()),
                    Value::text(outlier.condition.clone()),
                    Value::number(outlier.value),
                    Value::decimals(outlier.studentized, 3),
                    Value::p_value(outlier.p_bonferroni),
                ]
            })
            .collect();
        row = sheet.table(
            row,
            0,
            &["cell", "condition", "value", "studentized residual", "Bonferroni p"],
            rows,
        ) + 1;
    }
    sheet.put(
        row,
        0,
        Value::text(format!(
            "Rules: rank-based analysis leads when normality p < {NON_NORMAL_P} and the smallest condition has fewer than {SMALL_GROUP_N} values; \
             Welch and Games-Howell lead when the Brown-Forsythe spread test gives p < {UNEQUAL_SPREAD_P} and the largest SD exceeds {UNEQUAL_SPREAD_RATIO} times the smallest; \
             otherwise the one-way ANOVA with Tukey-Kramer leads. Outliers: externally studentized residuals, Bonferroni bound at {OUTLIER_FAMILY_ALPHA} over all values."
        )),
        Look::Note,
    );
    row += 2;

    // Chart data: residuals against fitted, and the probability plot.
    let data_row = row;
    sheet.put(data_row, 6, Value::text("fitted"), Look::ColumnHeader);
    sheet.put(data_row, 7, Value::text("residual"), Look::ColumnHeader);
    sheet.put(data_row, 8, Value::text("normal quantile"), Look::ColumnHeader);
    sheet.put(data_row, 9, Value::text("residual (sorted)"), Look::ColumnHeader);
    for (offset, (fitted, residual)) in checks.residual_points.iter().enumerate() {
        sheet.put(
            data_row + 1 + offset as u32,
            6,
            Value::Number(*fitted, NumberFormat::Decimals(places)),
            Look::Plain,
        );
        sheet.put(
            data_row + 1 + offset as u32,
            7,
            Value::Number(*residual, NumberFormat::Decimals(places)),
            Look::Plain,
        );
    }
    for (offset, (quantile, residual)) in checks.probability_points.iter().enumerate() {
        sheet.put(
            data_row + 1 + offset as u32,
            8,
            Value::Number(*quantile, NumberFormat::Decimals(3)),
            Look::Plain,
        );
        sheet.put(
            data_row + 1 + offset as u32,
            9,
            Value::Number(*residual, NumberFormat::Decimals(places)),
            Look::Plain,
        );
    }
    let residual_end = data_row + checks.residual_points.len().max(1) as u32;
    let probability_end = data_row + checks.probability_points.len().max(1) as u32;
    if !checks.residual_points.is_empty() {
        sheet.charts.push(ChartSpec {
            kind: ChartKind::Scatter,
            title: format!("{response}: residuals against fitted means"),
            x_title: "fitted (condition mean)".into(),
            y_title: "residual".into(),
            series: vec![Series {
                name: "residuals".into(),
                categories: SheetRange::column(names::CHECKS, 6, data_row + 1, residual_end),
                values: SheetRange::column(names::CHECKS, 7, data_row + 1, residual_end),
                bar_plus: None,
                bar_minus: None,
                labels: None,
            }],
            anchor: (data_row, 0),
            size: (460, 260),
            value_limits: None,
        });
    }
    if !checks.probability_points.is_empty() {
        sheet.charts.push(ChartSpec {
            kind: ChartKind::Scatter,
            title: format!("{response}: normal probability plot of residuals"),
            x_title: "normal quantile".into(),
            y_title: "residual".into(),
            series: vec![Series {
                name: "residuals".into(),
                categories: SheetRange::column(names::CHECKS, 8, data_row + 1, probability_end),
                values: SheetRange::column(names::CHECKS, 9, data_row + 1, probability_end),
                bar_plus: None,
                bar_minus: None,
                labels: None,
            }],
            anchor: (data_row + 14, 0),
            size: (460, 260),
            value_limits: None,
        });
    }
    (data_row + 29).max(residual_end.max(probability_end) + 2)
}

fn other_block(sheet: &mut Sheet, mut row: u32, response: &str, assessment: &Assessment) -> u32 {
    sheet.put(row, 0, Value::text(response.to_string()), Look::Heading);
    row += 1;
    if let Some(welch) = &assessment.welch {
        sheet.put(row, 0, Value::text("Welch's ANOVA (spreads may differ)"), Look::Key);
        row = sheet.table(
            row + 1,
            0,
            &["F", "df between", "df within", "p-value"],
            vec![vec![
                Value::decimals(welch.f, 4),
                Value::number(welch.df_between),
                Value::decimals(welch.df_within, 2),
                Value::p_value(welch.p),
            ]],
        ) + 1;
    }
    if let Some(eta) = &assessment.eta_squared {
        sheet.put(
            row,
            0,
            Value::text("Share of variation between conditions (eta²) with its interval"),
            Look::Key,
        );
        row = sheet.table(
            row + 1,
            0,
            &["eta²", "low", "high"],
            vec![vec![
                Value::decimals(eta.estimate, 4),
                Value::decimals(eta.low, 4),
                Value::decimals(eta.high, 4),
            ]],
        ) + 1;
    }
    if let Some(ranks) = &assessment.rank_based {
        sheet.put(row, 0, Value::text("Kruskal-Wallis (ranks, ties corrected)"), Look::Key);
        row = sheet.table(
            row + 1,
            0,
            &["H", "df", "p-value"],
            vec![vec![
                Value::decimals(ranks.h, 4),
                Value::number(ranks.df),
                Value::p_value(ranks.p),
            ]],
        );
        let mean_ranks = ranks
            .mean_ranks
            .iter()
            .map(|(name, rank)| vec![Value::text(name.clone()), Value::decimals(*rank, 2)])
            .collect();
        row = sheet.table(row + 1, 0, &["condition", "mean rank"], mean_ranks) + 1;
        sheet.put(row, 0, Value::text("Dunn's pairs (Holm-adjusted)"), Look::Key);
        let pairs = ranks
            .pairs
            .iter()
            .map(|pair| {
                vec![
                    Value::text(pair.first.clone()),
                    Value::text(pair.second.clone()),
                    Value::decimals(pair.z, 3),
                    Value::p_value(pair.p),
                    Value::p_value(pair.p_holm),
                ]
            })
            .collect();
        row = sheet.table(row + 1, 0, &["condition", "against", "z", "p", "Holm p"], pairs) + 1;
    }
    for note in &assessment.notes {
        sheet.put(row, 0, Value::text(format!("Not computed — {note}")), Look::Note);
        row += 1;
    }
    row + 1
}
