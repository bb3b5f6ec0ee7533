//! `trialyst run` as the weekly batch: exit code, summary line, roll-up
//! workbook read back, and folder settings with their precedence.

use std::path::Path;

use calamine::Data;

use crate::common::{
    long_rows, read_all_sheets, temp_folder, trialyst, write_rows, zip_entry_names, zip_entry_text, Put,
};

fn good_workbook(path: &Path, shift: f64) {
    let a = [20.1, 20.4, 19.9, 20.2, 20.0];
    let b = [20.0 + shift, 20.3 + shift, 19.9 + shift, 20.2 + shift, 20.1 + shift];
    let c = [20.0, 20.2, 20.1, 19.8, 20.3];
    write_rows(
        path,
        "Runs",
        &long_rows(
            "Supplier",
            "Tensile (MPa)",
            &[("North", &a), ("South", &b), ("East", &c)],
        ),
    );
}

/// A cell's text as shown (blank for an empty cell).
pub(crate) fn cell_text(data: &Data) -> String {
    match data {
        Data::Empty => String::new(),
        other => other.to_string(),
    }
}

#[test]
fn a_mixed_batch_gives_exit_code_summary_and_roll_up() {
    let folder = temp_folder();
    let week = folder.path().join("week");
    std::fs::create_dir_all(&week).expect("a batch folder");
    good_workbook(&week.join("a clear difference.xlsx"), 3.0);
    good_workbook(&week.join("b no difference.xlsx"), 0.0);
    std::fs::write(week.join("c broken.xlsx"), b"PK\x03\x04 cut short").expect("a broken file");
    write_rows(
        &week.join("d no table.xlsx"),
        "Notes",
        &[vec![Put::Text("Remember to book the oven")]],
    );
    let run = trialyst(
        folder.path(),
        &["run", "week", "--jobs", "2", "--rollup", "week.rollup.xlsx"],
    );
    run.expect_code(1);
    let stderr = run.stderr();
    let summary = stderr
        .lines()
        .find(|line| line.starts_with("trialyst: ") && line.contains(" analysed, "))
        .unwrap_or_else(|| panic!("no summary line{}", run.report()));
    assert!(summary.contains("2 analysed, 2 failed"), "{summary}");
    assert!(
        summary.contains("workbooks/s") && summary.contains("roll-up week.rollup.xlsx"),
        "{summary}"
    );
    assert!(
        !stderr.contains('\u{1b}'),
        "a progress bar was drawn off a terminal{}",
        run.report()
    );

    let rollup = folder.path().join("week.rollup.xlsx");
    crate::common::keep_output(&rollup);
    let sheets = read_all_sheets(&rollup);
    let (name, rows) = &sheets[0];
    assert_eq!(name, "Week's trials");
    let header: Vec<String> = rows.rows().next().expect("a header").iter().map(cell_text).collect();
    for wanted in [
        "Workbook",
        "Response",
        "Conditions",
        "Runs (n)",
        "Lead analysis",
        "p (lead analysis)",
        "Best condition(s)",
        "Largest difference",
        "Interval low",
        "Interval high",
        "Verdict",
        "Findings",
        "Results file",
    ] {
        assert!(
            header.iter().any(|cell| cell == wanted),
            "{wanted} missing from {header:?}"
        );
    }
    let column = |title: &str| header.iter().position(|cell| cell == title).expect("a column");
    let body: Vec<Vec<String>> = rows
        .rows()
        .skip(1)
        .map(|row| row.iter().map(cell_text).collect())
        .collect();
    assert_eq!(body.len(), 4, "{body:?}");
    let row_of = |stem: &str| body.iter().find(|row| row[0].contains(stem)).expect("a row");
    let clear = row_of("a clear difference");
    assert_eq!(clear[column("Response")], "Tensile (MPa)");
    assert_eq!(clear[column("Runs (n)")], "15");
    assert_eq!(clear[column("Conditions")], "North, South, East");
    assert!(clear[column("Verdict")].contains("differ"), "{clear:?}");
    assert!(clear[column("Largest difference")].contains("South"), "{clear:?}");
    let p: f64 = clear[column("p (lead analysis)")].parse().expect("a p-value");
    assert!(p < 0.001, "{p}");
    let low: f64 = clear[column("Interval low")].parse().expect("a number");
    let high: f64 = clear[column("Interval high")].parse().expect("a number");
    let difference: f64 = clear[column("Difference")].parse().expect("a number");
    assert!(low < difference && difference < high && low.abs() > 0.0, "{clear:?}");
    // The link shows the file name in lines that fit its column; its target keeps the
    // folder (checked in the sheet's relationships below).
    assert_eq!(
        clear[column("Results file")].split('\n').collect::<Vec<_>>(),
        ["a clear", "difference.", "results.xlsx"]
    );
    let broken = row_of("c broken");
    assert!(broken[column("Verdict")].starts_with("not analysed"), "{broken:?}");
    assert!(row_of("d no table")[column("Verdict")].contains("no trial table"));

    let (name, verdicts) = &sheets[1];
    assert_eq!(name, "Verdicts");
    let counts: Vec<(String, String)> = verdicts
        .rows()
        .filter(|row| row.len() > 1 && matches!(row[1], Data::Float(_) | Data::Int(_)))
        .map(|row| (cell_text(&row[0]), cell_text(&row[1])))
        .collect();
    assert!(counts.contains(&("conditions differ".into(), "1".into())), "{counts:?}");
    assert!(
        counts.contains(&("no clear difference".into(), "1".into())),
        "{counts:?}"
    );
    assert!(
        counts.contains(&("workbook not analysed".into(), "2".into())),
        "{counts:?}"
    );
    assert!(zip_entry_names(&rollup)
        .iter()
        .any(|entry| entry.starts_with("xl/charts/chart")));
    // The link is a HYPERLINK formula (a cell that wraps in every program) whose target
    // keeps the folder.
    let sheet = zip_entry_text(&rollup, "xl/worksheets/sheet1.xml").replace("&quot;", "\"");
    assert!(
        sheet.contains("HYPERLINK(\"week/a clear difference.results.xlsx\""),
        "{sheet}"
    );
    // The results files linked to exist.
    assert!(week.join("a clear difference.results.xlsx").is_file());
}

#[test]
fn folder_settings_sit_between_the_settings_sheet_and_the_defaults() {
    let folder = temp_folder();
    good_workbook(&folder.path().join("plain.xlsx"), 1.0);
    // A workbook whose own settings sheet sets the confidence.
    let mut book = rust_xlsxwriter::Workbook::new();
    let runs = book.add_worksheet();
    runs.set_name("Runs").expect("named");
    crate::common::put_rows(
        runs,
        &long_rows(
            "Supplier",
            "Tensile (MPa)",
            &[("North", &[1.0, 1.2, 1.1]), ("South", &[1.5, 1.6, 1.4])],
        ),
    );
    let settings = book.add_worksheet();
    settings.set_name("trialyst settings").expect("named");
    settings.write_string(0, 0, "confidence").expect("writable");
    settings.write_string(0, 1, "80%").expect("writable");
    book.save(folder.path().join("own.xlsx")).expect("saved");
    std::fs::write(
        folder.path().join("trialyst.toml"),
        "confidence = 0.9\ndirection = \"higher\"\n",
    )
    .expect("written");

    let run = trialyst(folder.path(), &["run", ".", "--json", "--no-write"]);
    run.expect_code(0);
    let lines: Vec<serde_json::Value> = run
        .stdout()
        .lines()
        .map(|line| serde_json::from_str(line).expect("JSON"))
        .collect();
    let by_name = |name: &str| {
        lines
            .iter()
            .find(|line| line["source"]["file_name"] == name)
            .unwrap_or_else(|| panic!("{name} missing{}", run.report()))
    };
    let source_of = |line: &serde_json::Value, key: &str| -> String {
        line["settings_sources"]
            .as_array()
            .expect("sources")
            .iter()
            .find(|pair| pair[0] == key)
            .map(|pair| pair[1].as_str().unwrap_or_default().to_string())
            .unwrap_or_default()
    };
    let plain = by_name("plain.xlsx");
    assert_eq!(plain["settings"]["confidence"], 0.9);
    assert_eq!(source_of(plain, "confidence"), "folder settings file");
    assert_eq!(source_of(plain, "direction"), "folder settings file");
    let own = by_name("own.xlsx");
    assert_eq!(own["settings"]["confidence"], 0.8);
    assert_eq!(source_of(own, "confidence"), "workbook settings sheet");
    // The command line wins over both.
    let run = trialyst(
        folder.path(),
        &["run", ".", "--json", "--no-write", "--confidence", "99%"],
    );
    run.expect_code(0);
    for line in run.stdout().lines() {
        let value: serde_json::Value = serde_json::from_str(line).expect("JSON");
        assert_eq!(value["settings"]["confidence"], 0.99, "{line}");
    }
}

#[test]
fn the_output_folder_setting_places_results_and_a_bad_file_stops_the_batch() {
    let folder = temp_folder();
    good_workbook(&folder.path().join("w.xlsx"), 1.0);
    std::fs::write(folder.path().join("trialyst.toml"), "'output folder' = \"out\"\n").expect("written");
    trialyst(folder.path(), &["run", "."]).expect_code(0);
    assert!(folder.path().join("out").join("w.results.xlsx").is_file());
    assert!(!folder.path().join("w.results.xlsx").exists());

    std::fs::write(
        folder.path().join("trialyst.toml"),
        "# week 12\nconfidence = 0.9\nmethods = \"all\"\n",
    )
    .expect("written");
    let run = trialyst(folder.path(), &["run", "."]);
    run.expect_code(2);
    let stderr = run.stderr();
    assert!(
        stderr.contains("trialyst.toml") && stderr.contains("line 3") && stderr.contains("methods"),
        "{}",
        run.report()
    );
}
