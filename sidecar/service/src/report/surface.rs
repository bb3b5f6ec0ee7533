//! The second-order part of the results workbook: for every response with a
//! second-order analysis, its coefficients, the ANOVA split into linear,
//! interaction and square parts with lack of fit, the stationary point with the
//! canonical analysis, the ridge path when there is one, and the prediction at
//! the recommended settings with its intervals, on one sheet. No I/O.

use workbook_io::write::{Book, Look, NumberFormat, Sheet, Value};

use crate::WorkbookResults;
use engine::analysis::surface::SurfaceOutcome;

/// The sheet's name.
pub const SURFACE_SHEET: &str = "Response surface";

fn optional(value: Option<f64>, format: NumberFormat) -> Value {
    value.map_or(Value::Blank, |value| Value::Number(value, format))
}

fn number(value: f64) -> Value {
    Value::Number(value, NumberFormat::Decimals(4))
}

/// Adds the sheet when some response has a second-order analysis.
pub fn add_surface_results(results: &WorkbookResults, book: &mut Book) {
    let analysed: Vec<(&str, &SurfaceOutcome)> = results
        .responses
        .iter()
        .filter_map(|response| {
            response
                .surface
                .as_deref()
                .map(|outcome| (response.name.as_str(), outcome))
        })
        .collect();
    if analysed.is_empty() {
        return;
    }
    let mut sheet = Sheet::new(SURFACE_SHEET);
    // The first column holds terms ("Cure temperature (C) × Primer coat (g/m2)"),
    // factors and responses, the second a goal's words in the compromise table:
    // each as wide as its longest text, within reason.
    let chars = |text: &str| text.chars().count() as f64 + 2.0;
    let first = analysed
        .iter()
        .flat_map(|(name, outcome)| {
            std::iter::once(chars(name)).chain(outcome.coefficients.iter().map(|line| chars(&line.term)))
        })
        .fold(30.0, f64::max)
        .min(56.0);
    let second = results
        .compromise
        .iter()
        .flat_map(|compromise| compromise.responses.iter().map(|line| chars(&line.goal)))
        .fold(14.0, f64::max)
        .min(40.0);
    sheet.widths = vec![
        (0, first),
        (1, second),
        (2, 14.0),
        (3, 14.0),
        (4, 14.0),
        (5, 14.0),
        (6, 14.0),
        (7, 14.0),
    ];
    sheet.put(
        0,
        0,
        Value::text(format!(
            "Contour maps of each fitted surface are on the sheet '{}'.",
            super::contour::CONTOUR_SHEET
        )),
        Look::Note,
    );
    let mut row = 2;
    if let Some(compromise) = &results.compromise {
        super::compromise::compromise_section(&mut sheet, &mut row, compromise);
    }
    for (name, outcome) in analysed {
        surface_section(&mut sheet, &mut row, name, outcome);
        row += 1;
    }
    // Before the data-problems sheet and those after it, which the caller adds next.
    book.sheets.push(sheet);
}

fn surface_section(sheet: &mut Sheet, row: &mut u32, name: &str, outcome: &SurfaceOutcome) {
    sheet.put(
        *row,
        0,
        Value::text(format!("{name}: second-order model")),
        Look::Heading,
    );
    *row += 1;
    let coding: Vec<String> = outcome
        .factor_names
        .iter()
        .zip(&outcome.coding)
        .map(|(factor, (centre, half))| format!("{factor} = (setting - {centre}) / {half}"))
        .collect();
    sheet.put(
        *row,
        0,
        Value::text(format!(
            "Coefficients in coded units: {}. {} records{}.",
            coding.join("; "),
            outcome.n_records,
            if outcome.n_blocks > 1 {
                format!(" in {} blocks (block shifts fitted, not shown)", outcome.n_blocks)
            } else {
                String::new()
            }
        )),
        Look::Note,
    );
    *row += 1;
    let coefficient_rows = outcome
        .coefficients
        .iter()
        .map(|line| {
            vec![
                Value::text(line.term.clone()),
                number(line.estimate),
                optional(line.se, NumberFormat::Decimals(4)),
                optional(line.t_value, NumberFormat::Decimals(3)),
                optional(line.p_value, NumberFormat::PValue),
            ]
        })
        .collect();
    *row = sheet.table(
        *row,
        0,
        &["term", "estimate", "standard error", "t", "p-value"],
        coefficient_rows,
    ) + 1;
    let anova_rows = outcome
        .anova
        .iter()
        .map(|line| {
            vec![
                Value::text(line.source.clone()),
                Value::Number(line.df as f64, NumberFormat::Integer),
                number(line.sum_sq),
                optional(line.mean_sq, NumberFormat::Decimals(4)),
                optional(line.f_value, NumberFormat::Decimals(3)),
                optional(line.p_value, NumberFormat::PValue),
            ]
        })
        .collect();
    *row = sheet.table(
        *row,
        0,
        &["source", "df", "sum of squares", "mean square", "F", "p-value"],
        anova_rows,
    );
    sheet.put(
        *row,
        0,
        Value::text(
            "F of each part against the residual; lack of fit against pure error (the spread of repeated runs).",
        ),
        Look::Note,
    );
    *row += 2;
    let fit_rows = vec![
        vec![
            Value::text("residual SD"),
            optional(outcome.residual_sd, NumberFormat::Decimals(4)),
        ],
        vec![
            Value::text("residual df"),
            Value::Number(outcome.residual_df as f64, NumberFormat::Integer),
        ],
        vec![Value::text("R²"), number(outcome.r_squared)],
        vec![
            Value::text("adjusted R²"),
            optional(outcome.adjusted_r_squared, NumberFormat::Decimals(4)),
        ],
        vec![Value::text("region radius (coded)"), number(outcome.region_radius)],
    ];
    *row = sheet.table(*row, 0, &["fit", "value"], fit_rows) + 1;
    if let Some(point) = &outcome.stationary {
        sheet.put(
            *row,
            0,
            Value::text(format!(
                "Stationary point: {}, predicted {}, {:.3} coded units from the centre, {} the region of the runs",
                point.kind.words(),
                engine::analysis::verdict::round_for_text(point.predicted, 5),
                point.distance,
                if point.inside_region { "inside" } else { "outside" }
            )),
            Look::Plain,
        );
        *row += 1;
        let rows = outcome
            .factor_names
            .iter()
            .enumerate()
            .map(|(index, factor)| {
                vec![
                    Value::text(factor.clone()),
                    number(point.coded[index]),
                    number(point.real[index]),
                ]
            })
            .collect();
        *row = sheet.table(*row, 0, &["factor", "coded", "setting"], rows) + 1;
        let mut headers: Vec<&str> = vec!["canonical axis", "eigenvalue"];
        headers.extend(outcome.factor_names.iter().map(String::as_str));
        let rows = point
            .eigenvalues
            .iter()
            .zip(&point.eigenvectors)
            .enumerate()
            .map(|(index, (value, vector))| {
                let mut cells = vec![Value::text(format!("W{}", index + 1)), number(*value)];
                cells.extend(vector.iter().map(|component| number(*component)));
                cells
            })
            .collect();
        *row = sheet.table(*row, 0, &headers, rows);
        sheet.put(
            *row,
            0,
            Value::text("Eigenvalues of the second-order part (coded units): all negative, a maximum; all positive, a minimum; mixed signs, a saddle; one near zero, a ridge. Each axis's direction in coded units beside it."),
            Look::Note,
        );
        *row += 2;
    }
    if !outcome.ridge.is_empty() {
        let mut headers: Vec<&str> = vec!["radius (coded)", "predicted"];
        headers.extend(outcome.factor_names.iter().map(String::as_str));
        let rows = outcome
            .ridge
            .iter()
            .map(|point| {
                let mut cells = vec![number(point.radius), number(point.predicted)];
                cells.extend(point.real.iter().map(|value| number(*value)));
                cells
            })
            .collect();
        sheet.put(
            *row,
            0,
            Value::text("Ridge path: the best predicted response on spheres of growing radius"),
            Look::Plain,
        );
        *row += 1;
        *row = sheet.table(*row, 0, &headers, rows) + 1;
    }
    if let Some(best) = &outcome.recommended {
        let confidence = engine::analysis::verdict::round_for_text(best.confidence * 100.0, 3);
        sheet.put(
            *row,
            0,
            Value::text(format!(
                "Recommended settings{}",
                outcome
                    .recommended_reason
                    .as_deref()
                    .map(|reason| format!(": {reason}"))
                    .unwrap_or_default()
            )),
            Look::Plain,
        );
        *row += 1;
        let mut rows: Vec<Vec<Value>> = outcome
            .factor_names
            .iter()
            .zip(&best.real)
            .map(|(factor, value)| vec![Value::text(factor.clone()), number(*value)])
            .collect();
        rows.push(vec![Value::text("predicted mean"), number(best.predicted)]);
        rows.push(vec![Value::text("standard error of the mean"), number(best.se_mean)]);
        rows.push(vec![
            Value::text(format!("mean: {confidence}% interval")),
            number(best.mean_low),
            number(best.mean_high),
        ]);
        rows.push(vec![
            Value::text(format!("one new run: {confidence}% interval")),
            number(best.new_run_low),
            number(best.new_run_high),
        ]);
        *row = sheet.table(*row, 0, &["at the recommended settings", "value", "to"], rows) + 1;
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use engine::analysis::surface::{analyse_surface, SurfaceData, SurfaceOptions};

    /// A 2-factor central composite trial (invented numbers) through the engine, then
    /// the sheet: every coefficient and ANOVA line has its row, with the engine's values.
    #[test]
    fn the_sheet_holds_every_coefficient_and_anova_line() {
        let alpha = std::f64::consts::SQRT_2;
        let coded = [
            [-1.0, -1.0],
            [1.0, -1.0],
            [-1.0, 1.0],
            [1.0, 1.0],
            [-alpha, 0.0],
            [alpha, 0.0],
            [0.0, -alpha],
            [0.0, alpha],
            [0.0, 0.0],
            [0.0, 0.0],
            [0.0, 0.0],
        ];
        let noise = [0.2, -0.1, 0.05, -0.15, 0.1, -0.05, 0.12, -0.08, 0.03, -0.02, 0.07];
        let settings: Vec<Vec<f64>> = coded
            .iter()
            .map(|x| vec![160.0 + 10.0 * x[0], 15.0 + 5.0 * x[1]])
            .collect();
        let values: Vec<f64> = coded
            .iter()
            .zip(noise)
            .map(|(x, e)| 80.0 + 4.0 * x[0] + 3.0 * x[1] - 3.0 * x[0] * x[0] - 2.5 * x[1] * x[1] + x[0] * x[1] + e)
            .collect();
        let data = SurfaceData {
            factor_names: vec!["Temperature".into(), "Time".into()],
            coding: vec![(160.0, 10.0), (15.0, 5.0)],
            settings,
            blocks: Vec::new(),
            values,
        };
        let outcome = analyse_surface(
            &data,
            &SurfaceOptions {
                confidence: 0.95,
                direction: Some(engine::options::Direction::HigherIsBetter),
            },
        )
        .expect("fit");
        let mut sheet = Sheet::new(SURFACE_SHEET);
        let mut row = 0;
        surface_section(&mut sheet, &mut row, "Yield", &outcome);
        let text_at = |wanted: &str| {
            sheet
                .cells
                .iter()
                .find(|cell| matches!(&cell.value, Value::Text(text) if text.as_str() == wanted))
                .map(|cell| cell.row)
        };
        for line in &outcome.coefficients {
            let at = text_at(&line.term).unwrap_or_else(|| panic!("no row for {}", line.term));
            let estimate = sheet
                .cells
                .iter()
                .find(|cell| cell.row == at && cell.col == 1)
                .expect("estimate");
            assert!(matches!(estimate.value, Value::Number(value, _) if value == line.estimate));
        }
        for line in &outcome.anova {
            assert!(text_at(&line.source).is_some(), "no row for {}", line.source);
        }
        assert!(outcome.recommended.is_some());
        assert!(text_at("one new run: 95% interval").is_some());
        assert!(text_at("W2").is_some());
    }
}
