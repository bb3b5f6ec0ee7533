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

#[test]
fn a_hand_typed_box_behnken_trial_is_a_design_and_its_details_agree_with_the_lead() {
    // Box-Behnken in three factors (the published construction: each pair at its four
    // corners with the third at its middle, then three centre runs), typed by hand with
    // an invented response y = 3 - 0.4a + 0.2b + 0.15c + 0.35a² + 0.25b² - 0.1ab plus
    // small departures. scipy 1.17.1 / numpy 2.4 on these values: the second-order
    // model's F = 35.81 on 9 and 5 df (p = 0.00052); the one-way F of the 13
    // combinations = 10.86 on 12 and 2 df (p = 0.087).
    let coded: [[i8; 3]; 15] = [
        [-1, -1, 0],
        [-1, 1, 0],
        [1, -1, 0],
        [1, 1, 0],
        [-1, 0, -1],
        [-1, 0, 1],
        [1, 0, -1],
        [1, 0, 1],
        [0, -1, -1],
        [0, -1, 1],
        [0, 1, -1],
        [0, 1, 1],
        [0, 0, 0],
        [0, 0, 0],
        [0, 0, 0],
    ];
    let shrink = [
        3.72, 4.27, 3.11, 3.33, 3.58, 3.9, 2.82, 3.09, 2.87, 3.21, 3.32, 3.58, 3.15, 2.88, 3.0,
    ];
    let mut rows = vec![vec![
        Put::Text("Oven temp"),
        Put::Text("Belt speed"),
        Put::Text("Humidity"),
        Put::Text("Shrinkage"),
    ]];
    for (run, value) in coded.iter().zip(shrink) {
        rows.push(vec![
            Put::Number(180.0 + 15.0 * f64::from(run[0])),
            Put::Number(2.0 + 0.5 * f64::from(run[1])),
            Put::Number(40.0 + 10.0 * f64::from(run[2])),
            Put::Number(value),
        ]);
    }
    let folder = temp_folder();
    let mut book = rust_xlsxwriter::Workbook::new();
    put_rows(book.add_worksheet(), &rows);
    book.save(folder.path().join("oven.xlsx")).expect("saved");
    let doc = document(folder.path(), "oven.xlsx", &[]);
    // The three settings columns are the factors, read as a design: no finding says
    // they form no pattern.
    let choices = doc["table"]["choices"].to_string();
    assert!(!choices.contains("do not form"), "{choices}");
    let response = &doc["responses"][0];
    assert_eq!(response["lead"]["analysis"], "second-order", "{}", response["lead"]);
    let headline = response["verdict"]["headline"].as_str().unwrap_or_default();
    assert!(headline.contains("(p = 0.00052"), "{headline}");
    // The one-way comparison, weaker here, is said as a detail naming its analysis
    // (the assessment leads with the rank test for these mostly single runs), with
    // the reason it is weaker.
    let detail = response["verdict"]["details"]
        .as_array()
        .and_then(|all| {
            all.iter()
                .filter_map(Value::as_str)
                .find(|line| line.starts_with("Detail, not the lead"))
        })
        .unwrap_or_default()
        .to_string();
    // scipy 1.17.1 kruskal on the 13 combinations: H = 13.565891472868215,
    // p = 0.3292837294981336.
    assert!(
        detail.contains("(Kruskal-Wallis with Dunn's pairs) says: The trial does not show that the conditions differ")
            && detail.contains("(p = 0.33)"),
        "{detail}"
    );
    assert!(
        detail.contains("treats each of the 13 combinations as a condition of its own")
            && detail.contains("(2 degrees of freedom)"),
        "{detail}"
    );
    // The one-way ANOVA on the sheet: F = 10.86 on 12 and 2 df, p = 0.087 (scipy above).
    let anova = &response["one_way"]["anova"][0];
    assert!(
        (anova["f"].as_f64().unwrap_or(0.0) - 10.856_284_153_005_47).abs() < 1e-9,
        "{anova}"
    );
    assert!(
        (anova["p"].as_f64().unwrap_or(0.0) - 0.087_358_961_355_766_5).abs() < 1e-9,
        "{anova}"
    );
}
