//! Settings shown on a plan are rounded to six significant figures; the plan
//! sheet and the plan id keep every digit, and a filled plan still reads back
//! with no run reported as changed.

use engine::design::surface::AxialDistance;
use engine::design::{FactorSpec, PlanRequest};
use workbook_io::layout::FindingKind;
use workbook_io::write::{Look, Value};

use super::book::{plan_book, shown_number, DESIGN_SHEET, PLAN_SHEET, RUN_HEADER_ROW, RUN_SHEET};
use super::check::same_setting;
use super::{make_surface_plan, SurfaceDesign};

#[test]
fn shown_numbers_keep_six_significant_figures() {
    // Correct decimal rounding (common practice): 150 - 10·√2 = 135.857864376...
    assert_eq!(shown_number(150.0 - 10.0 * 2f64.sqrt()), 135.858);
    assert_eq!(shown_number(164.142135623731), 164.142);
    assert_eq!(shown_number(-0.000123456789), -0.000123457);
    assert_eq!(shown_number(2.5), 2.5);
    assert_eq!(shown_number(0.0), 0.0);
    assert_eq!(shown_number(1234567.0), 1234570.0);
    assert!(same_setting("135.857864376269", "135.858"));
    assert!(same_setting("135.857864376269", "135.857864376269"));
    assert!(!same_setting("135.857864376269", "135.86"));
    assert!(!same_setting("135.857864376269", "135.857"));
}

fn figures(value: f64) -> usize {
    // Digits of the shortest decimal that reads back as the value.
    let text = format!("{value:e}");
    let mantissa = text.split('e').next().unwrap_or("");
    mantissa.chars().filter(char::is_ascii_digit).count()
}

#[test]
fn a_filled_composite_plan_reads_back_with_its_rounded_settings() {
    let request = PlanRequest {
        factors: vec![
            FactorSpec::new("Temperature (C)", &["140", "160"]),
            FactorSpec::new("Time (min)", &["10", "20"]),
        ],
        responses: vec!["Yield (%)".into()],
        centre_points: 4,
        seed: Some(5),
        ..PlanRequest::default()
    };
    let plan =
        make_surface_plan(SurfaceDesign::CentralComposite(AxialDistance::Rotatable), &request, &[]).expect("plan");
    let mut book = plan_book(&plan);
    // The plan sheet keeps the axial setting 150 - 10·√2 as the plan holds it (twelve
    // figures, more than shown) and the id.
    let plan_texts: Vec<String> = book
        .sheets
        .iter()
        .find(|sheet| sheet.name == PLAN_SHEET)
        .expect("plan sheet")
        .cells
        .iter()
        .filter_map(|placed| match &placed.value {
            Value::Text(text) => Some(text.clone()),
            _ => None,
        })
        .collect();
    let exact = plan.factors[0].levels[0].text.clone();
    assert!(
        exact.len() > "135.858".len() && exact.starts_with("135.85786"),
        "{exact}"
    );
    assert!(plan_texts.contains(&exact), "{plan_texts:?}");
    assert!(plan_texts.contains(&plan.id));
    let design_texts: Vec<String> = book
        .sheets
        .iter()
        .find(|sheet| sheet.name == DESIGN_SHEET)
        .expect("design sheet")
        .cells
        .iter()
        .filter_map(|placed| match &placed.value {
            Value::Text(text) => Some(text.clone()),
            _ => None,
        })
        .collect();
    assert!(
        design_texts.iter().any(|text| text.contains("135.858, 140")),
        "{design_texts:?}"
    );
    // Every setting on the runs sheet has at most six significant figures, and the
    // axial ones are shown rounded.
    let runs = book
        .sheets
        .iter_mut()
        .find(|sheet| sheet.name == RUN_SHEET)
        .expect("runs sheet");
    let first_factor_col = if plan.is_blocked() { 3 } else { 2 };
    let mut shown = Vec::new();
    for placed in &runs.cells {
        if placed.row > RUN_HEADER_ROW && (first_factor_col..first_factor_col + 2).contains(&placed.col) {
            if let Value::Number(value, _) = placed.value {
                assert!(figures(value) <= 6, "{value}");
                shown.push(value);
            }
        }
    }
    assert_eq!(shown.len(), 2 * plan.runs.len());
    assert!(shown.contains(&135.858) && shown.contains(&164.142) && shown.contains(&7.92893));
    // Fill in a result for each run (an invented quadratic in the shown settings) and
    // read the filled plan back: no run is reported as changed or out of order.
    let response_col = first_factor_col + 2;
    for index in 0..plan.runs.len() {
        let row = RUN_HEADER_ROW + 1 + index as u32;
        let setting = |col: u16| {
            runs.cells
                .iter()
                .find_map(|placed| match placed.value {
                    Value::Number(value, _) if placed.row == row && placed.col == col => Some(value),
                    _ => None,
                })
                .expect("a setting")
        };
        let (x1, x2) = (
            (setting(first_factor_col) - 150.0) / 10.0,
            (setting(first_factor_col + 1) - 15.0) / 5.0,
        );
        let value = 80.0 + 3.0 * x1 - 2.0 * x2 - 4.0 * x1 * x1 - 3.0 * x2 * x2 + 0.1 * (index % 3) as f64;
        runs.put(row, response_col, Value::number(value), Look::Plain);
    }
    let folder = tempfile::tempdir().expect("a temporary folder");
    let filled = folder.path().join("filled plan.xlsx");
    workbook_io::write::write_book(&book, &filled).expect("written");
    let results = crate::analyse_workbook(&filled, &crate::AnalysisRequest::default()).expect("analysed");
    let departures: Vec<_> = results
        .findings
        .iter()
        .filter(|finding| finding.kind == FindingKind::PlanDeparture)
        .collect();
    assert!(departures.is_empty(), "{departures:?}");
    assert_eq!(results.settings.plan_id.as_deref(), Some(plan.id.as_str()));
    // The rounded axial settings still make a response-surface trial.
    assert!(results.responses[0].surface.is_some());
}
