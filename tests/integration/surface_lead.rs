//! A response-surface trial typed by hand (a rotatable composite plan in two factors,
//! no settings sheet) is led by its second-order model: the headline gives the fitted
//! surface's test and its maximum, the lead says why, and the roll-up row reads
//! "second-order model". A full three-by-three grid of the same factors keeps the
//! factorial lead. The trial is invented; its reference figures (statsmodels 0.15.0,
//! numpy 2.4) are checked in the engine's `analysis::surface::reading` tests.

use serde_json::Value;

use crate::common::{put_rows, temp_folder, trialyst, Put, CURE_TRIAL};

fn write_trial(path: &std::path::Path, runs: &[(f64, f64, f64)]) {
    let mut rows = vec![vec![
        Put::Text("Cure temp (C)"),
        Put::Text("Cure time (min)"),
        Put::Text("Peel strength (N)"),
    ]];
    for run in runs {
        rows.push(vec![Put::Number(run.0), Put::Number(run.1), Put::Number(run.2)]);
    }
    let mut book = rust_xlsxwriter::Workbook::new();
    let sheet = book.add_worksheet();
    sheet.set_name("Runs").expect("valid name");
    put_rows(sheet, &rows);
    book.save(path).expect("saved");
}

fn document(folder: &std::path::Path, file: &str, extra: &[&str]) -> Value {
    let mut args = vec!["run", "--json", "--no-write", file];
    args.extend_from_slice(extra);
    let run = trialyst(folder, &args);
    run.expect_code(0);
    let line = run
        .stdout()
        .lines()
        .find(|line| line.starts_with('{'))
        .unwrap_or_else(|| panic!("no JSON{}", run.report()))
        .to_string();
    serde_json::from_str(&line).expect("JSON")
}

#[test]
fn a_hand_typed_composite_trial_is_led_by_its_second_order_model() {
    let folder = temp_folder();
    write_trial(&folder.path().join("cure.xlsx"), &CURE_TRIAL);
    let doc = document(folder.path(), "cure.xlsx", &["--direction", "higher"]);
    let response = &doc["responses"][0];
    assert_eq!(response["lead"]["analysis"], "second-order", "{}", response["lead"]);
    let headline = response["verdict"]["headline"].as_str().unwrap_or_default();
    assert!(
        headline
            .starts_with("The fitted second-order surface explains Peel strength (N) at 95% confidence (p < 0.0001")
            && headline.contains("a maximum at Cure temp (C) 155.2, Cure time (min) 32.36"),
        "{headline}"
    );
    // statsmodels 0.15.0 stationary point 155.17155903264612, 32.36457126731357.
    let real = &response["surface"]["stationary"]["real"];
    let temp = real[0].as_f64().unwrap_or(f64::NAN);
    let time = real[1].as_f64().unwrap_or(f64::NAN);
    assert!((temp - 155.171_559_032_646_12).abs() < 1e-8, "{temp}");
    assert!((time - 32.364_571_267_313_57).abs() < 1e-8, "{time}");
    let details: Vec<&str> = response["verdict"]["details"]
        .as_array()
        .map(|all| all.iter().filter_map(Value::as_str).collect())
        .unwrap_or_default();
    assert!(
        details[0].starts_with("Recommended settings: Cure temp (C) 155.2"),
        "{details:?}"
    );
    // The factorial model's "not estimable" reading of 9 combinations does not lead.
    assert!(!headline.contains("factorial model"), "{headline}");

    // The roll-up row of a batch says which model led.
    let batch = trialyst(
        folder.path(),
        &["run", ".", "--rollup", "week.rollup.xlsx", "--direction", "higher"],
    );
    batch.expect_code(0);
    let sheets = crate::common::read_all_sheets(&folder.path().join("week.rollup.xlsx"));
    let found = sheets.iter().any(|(_, range)| {
        range.rows().any(|row| {
            row.iter()
                .any(|cell| crate::batch::cell_text(cell) == "second-order model")
        })
    });
    assert!(found, "no roll-up row led by the second-order model{}", batch.report());
}

#[test]
fn a_full_three_level_grid_keeps_the_factorial_lead() {
    let folder = temp_folder();
    let mut runs = Vec::new();
    for (i, temp) in [140.0, 150.0, 160.0].iter().enumerate() {
        for (j, time) in [25.0, 30.0, 35.0].iter().enumerate() {
            for copy in 0..2 {
                let y = 40.0 + 2.0 * i as f64 - (j as f64 - 1.0).powi(2) + 0.2 * copy as f64;
                runs.push((*temp, *time, y));
            }
        }
    }
    write_trial(&folder.path().join("grid.xlsx"), &runs);
    let doc = document(folder.path(), "grid.xlsx", &[]);
    assert_eq!(
        doc["responses"][0]["lead"]["analysis"], "factorial",
        "{}",
        doc["responses"][0]["lead"]
    );
}
