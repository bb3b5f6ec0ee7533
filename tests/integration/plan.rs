//! Trial plans end to end: `trialyst plan` writes a plan workbook, the test
//! fills it in as an engineer would, and `trialyst run` analyses it and
//! checks the runs against the plan; `trialyst size` answers power and
//! sample size questions.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

use calamine::{open_workbook_auto, Data, Reader};

/// The built `trialyst` binary (this package's copy; see tests/Cargo.toml).
fn trialyst() -> PathBuf {
    crate::common::trialyst_path()
}

fn run_in(folder: &Path, args: &[&str]) -> Output {
    let before = crate::common::workbook_snapshot(folder);
    let output = Command::new(trialyst())
        .args(args)
        .current_dir(folder)
        .output()
        .expect("trialyst runs");
    crate::common::keep_new_outputs(folder, &before);
    if !output.status.success() {
        let listing: Vec<String> = std::fs::read_dir(folder)
            .map(|entries| {
                entries
                    .filter_map(Result::ok)
                    .map(|entry| entry.file_name().to_string_lossy().into_owned())
                    .collect()
            })
            .unwrap_or_default();
        panic!(
            "trialyst {args:?} in {} failed with {}\nfiles: {listing:?}\nstdout:\n{}\nstderr:\n{}",
            folder.display(),
            output.status,
            String::from_utf8_lossy(&output.stdout),
            String::from_utf8_lossy(&output.stderr)
        );
    }
    output
}

fn json_of(output: &Output) -> serde_json::Value {
    let text = String::from_utf8_lossy(&output.stdout);
    let line = text.lines().find(|line| line.starts_with('{')).expect("a JSON line");
    serde_json::from_str(line).expect("valid JSON")
}

const PLAN_ARGS: &[&str] = &[
    "plan",
    "--factor",
    "Temperature=160,180",
    "--factor",
    "Supplier=North,South,East",
    "--response",
    "Yield (%)",
    "--replicates",
    "2",
    "--seed",
    "20260309",
];

/// Every sheet of a workbook as (name, cells), for copying.
pub(crate) type Sheets = Vec<(String, Vec<Vec<Data>>)>;

pub(crate) fn read_all(path: &Path) -> Sheets {
    let mut workbook = open_workbook_auto(path).expect("plan workbook opens");
    let names = workbook.sheet_names().to_vec();
    names
        .into_iter()
        .map(|name| {
            let range = workbook.worksheet_range(&name).expect("sheet reads");
            let (first_row, first_col) = range.start().unwrap_or((0, 0));
            let mut rows: Vec<Vec<Data>> = vec![Vec::new(); first_row as usize];
            for row in range.rows() {
                let mut cells = vec![Data::Empty; first_col as usize];
                cells.extend(row.iter().cloned());
                rows.push(cells);
            }
            (name, rows)
        })
        .collect()
}

pub(crate) fn write_all(sheets: &Sheets, path: &Path) {
    let mut workbook = rust_xlsxwriter::Workbook::new();
    for (name, rows) in sheets {
        let sheet = workbook.add_worksheet();
        sheet.set_name(name).expect("sheet name");
        for (row, cells) in rows.iter().enumerate() {
            for (col, cell) in cells.iter().enumerate() {
                let (row, col) = (row as u32, col as u16);
                match cell {
                    Data::Float(number) => {
                        sheet.write_number(row, col, *number).expect("number");
                    }
                    Data::Int(number) => {
                        sheet.write_number(row, col, *number as f64).expect("number");
                    }
                    Data::String(text) => {
                        sheet.write_string(row, col, text).expect("text");
                    }
                    Data::Empty => {}
                    other => panic!("unexpected cell {other:?} in a plan workbook"),
                }
            }
        }
    }
    workbook.save(path).expect("filled workbook saved");
}

/// Every text cell of one sheet, row by row.
fn text_cells(sheets: &Sheets, sheet: &str) -> Vec<String> {
    sheets
        .iter()
        .find(|(name, _)| name == sheet)
        .unwrap_or_else(|| panic!("no sheet '{sheet}'"))
        .1
        .iter()
        .flatten()
        .filter_map(|cell| match cell {
            Data::String(text) => Some(text.clone()),
            _ => None,
        })
        .collect()
}

pub(crate) fn runs_sheet(sheets: &mut Sheets) -> &mut Vec<Vec<Data>> {
    &mut sheets
        .iter_mut()
        .find(|(name, _)| name == "Runs")
        .expect("a Runs sheet")
        .1
}

pub(crate) fn column_of(rows: &[Vec<Data>], header: &str) -> usize {
    // The header row is the third row of the runs sheet.
    rows[2]
        .iter()
        .position(|cell| matches!(cell, Data::String(text) if text == header))
        .unwrap_or_else(|| panic!("no column '{header}'"))
}

/// Fills the result column with invented yields that depend on the settings.
fn fill_results(rows: &mut [Vec<Data>]) {
    let temperature = column_of(rows, "Temperature");
    let supplier = column_of(rows, "Supplier");
    let result = column_of(rows, "Yield (%)");
    for (index, row) in rows.iter_mut().enumerate().skip(3) {
        let heat = match &row[temperature] {
            Data::Float(value) => *value,
            other => panic!("temperature {other:?}"),
        };
        let offset = match &row[supplier] {
            Data::String(text) if text == "North" => 0.0,
            Data::String(text) if text == "South" => 1.5,
            _ => -1.0,
        };
        let value = 60.0 + (heat - 160.0) * 0.2 + offset + (index % 3) as f64 * 0.3;
        while row.len() <= result {
            row.push(Data::Empty);
        }
        row[result] = Data::Float(value);
    }
}

fn plan_departures(results: &serde_json::Value) -> Vec<(String, String)> {
    results["findings"]
        .as_array()
        .expect("findings")
        .iter()
        .filter(|finding| finding["kind"] == "plan-departure")
        .map(|finding| {
            (
                format!(
                    "{}!{}",
                    finding["sheet"].as_str().unwrap_or_default(),
                    finding["cell"].as_str().unwrap_or_default()
                ),
                finding["message"].as_str().unwrap_or_default().to_string(),
            )
        })
        .collect()
}

#[test]
fn plans_regenerate_byte_for_byte_from_their_seed() {
    let folder = tempfile::tempdir().expect("temp dir");
    let mut first_args = PLAN_ARGS.to_vec();
    first_args.extend(["--out", "first.xlsx"]);
    run_in(folder.path(), &first_args);
    // A second run a moment later must give the very same bytes: nothing
    // in the file depends on the clock.
    let mut second_args = PLAN_ARGS.to_vec();
    second_args.extend(["--out", "second.xlsx"]);
    run_in(folder.path(), &second_args);
    let first = std::fs::read(folder.path().join("first.xlsx")).expect("first plan");
    let second = std::fs::read(folder.path().join("second.xlsx")).expect("second plan");
    assert!(first == second, "the same seed gave different bytes");
    let mut other_args: Vec<&str> = PLAN_ARGS.to_vec();
    let seed_position = other_args.iter().position(|arg| *arg == "20260309").expect("seed");
    other_args[seed_position] = "20260310";
    other_args.extend(["--out", "other.xlsx"]);
    run_in(folder.path(), &other_args);
    let other = std::fs::read(folder.path().join("other.xlsx")).expect("other plan");
    assert!(first != other, "another seed gave the same bytes");
}

#[test]
fn fraction_plan_records_its_design() {
    let folder = tempfile::tempdir().expect("temp dir");
    let output = run_in(
        folder.path(),
        &[
            "plan",
            "--factor",
            "A=1,2",
            "--factor",
            "B=1,2",
            "--factor",
            "C=1,2",
            "--factor",
            "D=1,2",
            "--factor",
            "E=1,2",
            "--factor",
            "F=1,2",
            "--factor",
            "G=1,2",
            "--runs",
            "8",
            "--response",
            "Strength",
            "--seed",
            "1",
            "--json",
            "--out",
            "fraction.xlsx",
        ],
    );
    let summary = json_of(&output);
    // The 2^(7-4) fraction of 8 runs is saturated and of resolution III
    // (Box, Hunter and Hunter, Statistics for Experimenters, 2nd ed.,
    // table 6.14; from memory).
    assert_eq!(summary["runs"], 8);
    assert_eq!(summary["resolution"], "III");
    assert_eq!(summary["generators"].as_array().map(Vec::len), Some(4));
    let sheets = read_all(&folder.path().join("fraction.xlsx"));
    let text = text_cells(&sheets, "Design");
    assert!(text.iter().any(|cell| cell.starts_with("I = ")), "{text:?}");
    // In a resolution III design a main effect's chain holds two-factor
    // interactions: the alias table lists A with some of them.
    assert!(
        text.iter()
            .any(|cell| cell.starts_with("A + ") || cell.starts_with("A - ")),
        "{text:?}"
    );
}

#[test]
fn filled_plan_round_trips_into_the_right_analysis() {
    let folder = tempfile::tempdir().expect("temp dir");
    let mut args = PLAN_ARGS.to_vec();
    args.extend(["--out", "plan.xlsx"]);
    run_in(folder.path(), &args);
    let mut sheets = read_all(&folder.path().join("plan.xlsx"));
    fill_results(runs_sheet(&mut sheets));
    write_all(&sheets, &folder.path().join("filled.xlsx"));
    let output = run_in(folder.path(), &["run", "--json", "--no-write", "filled.xlsx"]);
    let results = json_of(&output);
    assert_eq!(results["status"], "analysed");
    let table = &results["table"];
    assert_eq!(table["sheet"], "Runs");
    // 2 temperatures x 3 suppliers x 2 replicates, by construction of the plan.
    assert_eq!(table["n_records"], 12);
    assert_eq!(table["responses"], serde_json::json!(["Yield (%)"]));
    let factors: Vec<&str> = table["factors"]
        .as_array()
        .expect("factors")
        .iter()
        .filter_map(|factor| factor["name"].as_str())
        .collect();
    assert_eq!(factors, vec!["Temperature", "Supplier"]);
    assert_eq!(
        results["settings"]["plan_id"].as_str().map(|id| id.starts_with("TP-")),
        Some(true)
    );
    let departures = plan_departures(&results);
    assert!(departures.is_empty(), "{departures:#?}");
    // The plan's settings name the factors and the response, so its run-number columns
    // are plainly context: a correctly filled plan has no data problem to report.
    let findings = results["findings"].as_array().expect("findings");
    assert!(findings.is_empty(), "{findings:#?}");
}

#[test]
fn changed_settings_missing_and_out_of_order_runs_are_found() {
    let folder = tempfile::tempdir().expect("temp dir");
    let mut args = PLAN_ARGS.to_vec();
    args.extend(["--out", "plan.xlsx"]);
    run_in(folder.path(), &args);
    let mut sheets = read_all(&folder.path().join("plan.xlsx"));
    let rows = runs_sheet(&mut sheets);
    fill_results(rows);
    let temperature = column_of(rows, "Temperature");
    let supplier = column_of(rows, "Supplier");
    // Run 1 (sheet row 4) was made 5 degrees hotter than planned.
    let planned = match rows[3][temperature] {
        Data::Float(value) => value,
        _ => panic!("numeric temperature"),
    };
    rows[3][temperature] = Data::Float(planned + 5.0);
    // Runs 4 and 5 (rows 7 and 8) were swapped, when their settings differ.
    let settings = |row: &Vec<Data>| (format!("{:?}", row[temperature]), format!("{:?}", row[supplier]));
    // With this seed they do (180/South and 180/East); the check below
    // needs them to differ.
    assert!(
        settings(&rows[6]) != settings(&rows[7]),
        "runs 4 and 5 have the same settings"
    );
    rows.swap(6, 7);
    // The last run (row 15) was never made: its row is removed.
    rows.truncate(14);
    write_all(&sheets, &folder.path().join("filled.xlsx"));
    let output = run_in(folder.path(), &["run", "--json", "--no-write", "filled.xlsx"]);
    let results = json_of(&output);
    let departures = plan_departures(&results);
    let column_letter = (b'A' + temperature as u8) as char;
    let changed = format!("Runs!{column_letter}4");
    assert!(
        departures
            .iter()
            .any(|(place, message)| *place == changed && message.contains("planned with Temperature")),
        "{departures:#?}"
    );
    assert!(
        departures
            .iter()
            .any(|(place, message)| place.starts_with("Plan (do not edit)!") && message.contains("planned run 12")),
        "{departures:#?}"
    );
    let out_of_order: Vec<&(String, String)> = departures
        .iter()
        .filter(|(_, message)| message.contains("run order was not followed"))
        .collect();
    assert_eq!(out_of_order.len(), 2, "{departures:#?}");
    // Nothing else: one changed cell, one missing run, two runs out of order.
    assert_eq!(departures.len(), 4, "{departures:#?}");
}

#[test]
fn size_answers_with_a_table_and_a_chart() {
    let folder = tempfile::tempdir().expect("temp dir");
    let output = run_in(
        folder.path(),
        &[
            "size",
            "--conditions",
            "4",
            "--difference",
            "75",
            "--sd",
            "25",
            "--power",
            "0.9",
            "--json",
            "--out",
            "power.xlsx",
        ],
    );
    let answer = json_of(&output);
    // statsmodels 0.15.0: FTestAnovaPower().solve_power(effect_size =
    // sqrt(75^2/(2*4*25^2)), alpha=0.05, power=0.9, k_groups=4) = 17.11
    // runs in all, so 5 per condition; power() at nobs=20 is 0.95358.
    assert_eq!(answer["needed"]["count"], 5);
    let power = answer["needed"]["power"].as_f64().expect("power");
    assert!((power - 0.953_577_933_622_421_4).abs() < 1e-9, "{power}");
    let file = std::fs::File::open(folder.path().join("power.xlsx")).expect("size workbook");
    let mut archive = zip::ZipArchive::new(file).expect("xlsx is a zip");
    assert!(archive.by_name("xl/charts/chart1.xml").is_ok());
}

/// A plan written, filled in and saved as `filled.xlsx` in `folder`.
fn filled_trial(folder: &Path) {
    let mut args = PLAN_ARGS.to_vec();
    args.extend(["--out", "plan.xlsx"]);
    run_in(folder, &args);
    let mut sheets = read_all(&folder.join("plan.xlsx"));
    fill_results(runs_sheet(&mut sheets));
    write_all(&sheets, &folder.join("filled.xlsx"));
}

/// `trialyst size` for three conditions with the SD from `file`, plus `extra`.
fn size_from(folder: &Path, file: &str, extra: &[&str]) -> Output {
    let mut args = vec!["size", "--conditions", "3", "--difference", "2", "--from-results", file];
    args.extend_from_slice(extra);
    Command::new(trialyst())
        .current_dir(folder)
        .args(&args)
        .output()
        .expect("trialyst runs")
}

#[test]
fn size_reads_the_sd_of_the_last_trial() {
    let folder = tempfile::tempdir().expect("temp dir");
    filled_trial(folder.path());
    let output = run_in(folder.path(), &["run", "--json", "filled.xlsx"]);
    let results = json_of(&output);
    let pooled_sd = results["responses"][0]["one_way"]["pooled_sd"]
        .as_f64()
        .expect("pooled SD");
    let answer = json_of(&size_from(folder.path(), "filled.results.xlsx", &["--json"]));
    // The results workbook keeps the results document that `run --json`
    // printed, so the SD read back is the very number printed.
    assert_eq!(answer["sd"], results["responses"][0]["one_way"]["pooled_sd"]);
    assert!(pooled_sd > 0.0);
    assert_eq!(answer["sd_df"], results["responses"][0]["one_way"]["pooled_df"]);

    // A line of `run --json` saved as a file gives the same answer.
    let line = format!("{}\n", serde_json::to_string(&results).expect("encodes"));
    std::fs::write(folder.path().join("last.json"), line).expect("saved");
    let from_json = json_of(&size_from(folder.path(), "last.json", &["--json"]));
    assert_eq!(from_json["sd"], answer["sd"]);
    assert_eq!(from_json["needed"], answer["needed"]);
}

#[test]
fn size_names_the_file_when_the_results_lack_what_it_needs() {
    let folder = tempfile::tempdir().expect("temp dir");
    filled_trial(folder.path());
    // A plan workbook is not a results workbook: it has no results document.
    let output = size_from(folder.path(), "plan.xlsx", &[]);
    assert!(!output.status.success());
    let text = String::from_utf8_lossy(&output.stderr);
    assert!(
        text.contains("plan.xlsx") && text.contains("Results document"),
        "{text}"
    );

    run_in(folder.path(), &["run", "filled.xlsx"]);
    let output = size_from(folder.path(), "filled.results.xlsx", &["--response", "Hardness"]);
    assert!(!output.status.success());
    let text = String::from_utf8_lossy(&output.stderr);
    assert!(
        text.contains("filled.results.xlsx") && text.contains("no response 'Hardness'"),
        "{text}"
    );
}

/// The numbers in one column of the Runs sheet, below its header.
fn settings_in(sheets: &mut Sheets, header: &str) -> Vec<f64> {
    let rows = runs_sheet(sheets);
    let column = column_of(rows, header);
    rows[3..]
        .iter()
        .filter_map(|row| match row.get(column) {
            Some(Data::Float(number)) => Some(*number),
            Some(Data::Int(number)) => Some(*number as f64),
            _ => None,
        })
        .collect()
}

const SURFACE_FACTORS: &[&str] = &[
    "--factor",
    "Temperature=160,180",
    "--factor",
    "Time=20,30",
    "--factor",
    "Pressure=2,3",
    "--response",
    "Yield (%)",
    "--centre-points",
    "3",
    "--seed",
    "7",
];

#[test]
fn central_composite_and_box_behnken_plans_are_written_and_read_back() {
    let folder = tempfile::tempdir().expect("temp dir");
    // Three factors, rotatable: a 2^3 cube (8 runs), 6 axial runs at
    // alpha = 8^(1/4) = 1.682 (Box and Hunter 1957; NIST/SEMATECH e-Handbook
    // 5.3.3.6.1 lists 1.682 for three factors) and 3 centre runs with the cube and
    // 3 with the axial runs: 20 runs.
    let mut args = vec![
        "plan",
        "--design",
        "central-composite",
        "--limit",
        "Temperature=150,195",
    ];
    args.extend(SURFACE_FACTORS);
    args.extend(["--json", "--out", "composite.xlsx"]);
    let summary = json_of(&run_in(folder.path(), &args));
    assert_eq!(summary["runs"], 20, "{summary}");
    assert_eq!(summary["kind"], "central composite plan");
    let mut sheets = read_all(&folder.path().join("composite.xlsx"));
    let temperature = settings_in(&mut sheets, "Temperature");
    assert_eq!(temperature.len(), 20);
    let alpha = 8f64.powf(0.25);
    let lowest = temperature.iter().copied().fold(f64::INFINITY, f64::min);
    let highest = temperature.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    // Shown to six significant figures (three decimals here); the plan sheet keeps more.
    let shown = |value: f64| (value * 1000.0).round() / 1000.0;
    assert_eq!(lowest, shown(170.0 - 10.0 * alpha), "{temperature:?}");
    assert_eq!(highest, shown(170.0 + 10.0 * alpha), "{temperature:?}");
    assert!(lowest >= 150.0 && highest <= 195.0);
    // Two runs per factor on its axis, the others at their centres.
    let axial = temperature
        .iter()
        .filter(|value| (**value - 170.0).abs() > 10.5)
        .count();
    assert_eq!(axial, 2);
    let time = settings_in(&mut sheets, "Time");
    assert_eq!(time.iter().filter(|value| (**value - 25.0).abs() < 1e-9).count(), 4 + 6);

    // A limit the axial runs would pass is refused, naming the factor.
    let mut args = vec![
        "plan",
        "--design",
        "central-composite",
        "--limit",
        "Temperature=155,185",
    ];
    args.extend(SURFACE_FACTORS);
    args.extend(["--out", "refused.xlsx"]);
    let output = Command::new(trialyst())
        .args(&args)
        .current_dir(folder.path())
        .output()
        .expect("trialyst runs");
    assert_eq!(output.status.code(), Some(2));
    let message = String::from_utf8_lossy(&output.stderr);
    assert!(message.contains("Temperature"), "{message}");
    assert!(!folder.path().join("refused.xlsx").exists());

    // Box-Behnken, three factors: 12 edge runs (each pair of factors at +-1, the
    // third at its centre) and 3 centre runs, 15 in all (Box and Behnken 1960); every
    // setting is low, centre or high.
    let mut args = vec!["plan", "--design", "box-behnken"];
    args.extend(SURFACE_FACTORS);
    args.extend(["--json", "--out", "edges.xlsx"]);
    let summary = json_of(&run_in(folder.path(), &args));
    assert_eq!(summary["runs"], 15, "{summary}");
    let mut sheets = read_all(&folder.path().join("edges.xlsx"));
    let temperature = settings_in(&mut sheets, "Temperature");
    assert_eq!(temperature.len(), 15);
    assert!(temperature.iter().all(|value| [160.0, 170.0, 180.0].contains(value)));
    assert_eq!(temperature.iter().filter(|value| **value == 170.0).count(), 4 + 3);

    // With no centre runs asked for, a response-surface plan still gets 3 with the cube
    // and 3 with the axial runs (three to six in all is common practice).
    let without: Vec<&str> = SURFACE_FACTORS
        .iter()
        .copied()
        .filter(|arg| *arg != "--centre-points" && *arg != "3")
        .collect();
    let mut args = vec!["plan", "--design", "central-composite"];
    args.extend(without);
    args.extend(["--json", "--out", "default-centre.xlsx"]);
    let summary = json_of(&run_in(folder.path(), &args));
    assert_eq!(summary["runs"], 20, "{summary}");
}

#[test]
fn filled_central_composite_plan_gets_a_second_order_reading() {
    // An invented yield with its highest point at temperature 173, time 24 and
    // pressure 2.5 (coded 0.3, -0.2, 0) and a small wobble: the second-order fit of a
    // rotatable central composite plan should put a maximum near there, inside the
    // region (canonical analysis, Box and Wilson 1951), and recommend confirming it.
    let folder = tempfile::tempdir().expect("temp dir");
    let mut args = vec!["plan", "--design", "central-composite"];
    args.extend(SURFACE_FACTORS);
    args.extend(["--out", "composite.xlsx"]);
    run_in(folder.path(), &args);
    let mut sheets = read_all(&folder.path().join("composite.xlsx"));
    let rows = runs_sheet(&mut sheets);
    let columns = ["Temperature", "Time", "Pressure"].map(|name| column_of(rows, name));
    let result = column_of(rows, "Yield (%)");
    for (index, row) in rows.iter_mut().enumerate().skip(3) {
        let real = columns.map(|column| match &row[column] {
            Data::Float(value) => *value,
            other => panic!("setting {other:?}"),
        });
        let coded = [(real[0] - 170.0) / 10.0, (real[1] - 25.0) / 5.0, (real[2] - 2.5) / 0.5];
        let value = 80.0 - 2.0 * (coded[0] - 0.3).powi(2) - 3.0 * (coded[1] + 0.2).powi(2) - 1.5 * coded[2].powi(2)
            + [0.05, -0.04, 0.03, -0.05, 0.02][index % 5];
        while row.len() <= result {
            row.push(Data::Empty);
        }
        row[result] = Data::Float(value);
    }
    write_all(&sheets, &folder.path().join("filled.xlsx"));
    let output = run_in(
        folder.path(),
        &["run", "--json", "--direction", "higher", "filled.xlsx"],
    );
    let results = json_of(&output);
    let response = &results["responses"][0];
    let reading = response["second_order"].as_str().unwrap_or_default();
    assert!(reading.contains("a maximum"), "{response}");
    assert!(reading.contains("inside the region"), "{reading}");
    // Settings to four figures: 173.0, 24.01 and 2.500 for this fit.
    assert!(reading.contains("Temperature 173.0,"), "{reading}");
    assert!(reading.contains("Time 24.0"), "{reading}");
    assert!(reading.contains("Pressure 2.50"), "{reading}");
    let next = response["next_trial"].as_str().unwrap_or_default();
    assert!(next.contains("confirm"), "{next}");
    // The second-order model leads: its headline (with the stationary point) and the
    // next trial stand on the Summary sheet; the factorial model's category reading of
    // the composite's levels does not.
    assert_eq!(response["lead"]["analysis"], "second-order", "{}", response["lead"]);
    let written = read_all(&folder.path().join("filled.results.xlsx"));
    let summary = text_cells(&written, "Summary");
    let headline = response["verdict"]["headline"].as_str().unwrap_or_default();
    assert!(headline.contains("a maximum at Temperature 173"), "{headline}");
    assert!(summary.iter().any(|line| line == headline), "{summary:?}");
    assert!(
        !summary.iter().any(|line| line.ends_with(": factorial reading")),
        "{summary:?}"
    );
    assert!(
        summary.iter().any(|line| line == &format!("Next trial: {next}")),
        "{summary:?}"
    );
}

/// The three-factor surface of `SURFACE_FACTORS` as a plan file, with the
/// design, the axial rule and a factor's limits as keys.
const SURFACE_PLAN_FILE: &str = r#"
design = "central-composite"
axial = "orthogonal-blocks"
response = "Yield (%)"
centre_points = 3
blocks = 2
seed = 7

[[factor]]
name = "Temperature"
levels = [160, 180]
lowest = 150
highest = 195

[[factor]]
name = "Time"
levels = [20, 30]

[[factor]]
name = "Pressure"
levels = [2, 3]
"#;

/// Runs trialyst in `folder` expecting a refusal of the request (exit 2); its message.
fn refused_in(folder: &Path, args: &[&str]) -> String {
    let output = Command::new(trialyst())
        .args(args)
        .current_dir(folder)
        .output()
        .expect("trialyst runs");
    assert_eq!(output.status.code(), Some(2), "{args:?}");
    String::from_utf8_lossy(&output.stderr).into_owned()
}

#[test]
fn a_plan_file_asks_for_a_surface_plan_as_the_options_do() {
    let folder = tempfile::tempdir().expect("temp dir");
    std::fs::write(folder.path().join("surface.toml"), SURFACE_PLAN_FILE).expect("plan file written");
    let from_file = json_of(&run_in(
        folder.path(),
        &["plan", "--from", "surface.toml", "--json", "--out", "from-file.xlsx"],
    ));
    let mut args = vec![
        "plan",
        "--design",
        "central-composite",
        "--axial",
        "orthogonal-blocks",
        "--blocks",
        "2",
        "--limit",
        "Temperature=150,195",
    ];
    args.extend(SURFACE_FACTORS);
    args.extend(["--json", "--out", "from-options.xlsx"]);
    let from_options = json_of(&run_in(folder.path(), &args));
    // The same request by either route: the same plan, id and runs.
    assert_eq!(from_file["kind"], "central composite plan", "{from_file}");
    assert_eq!(from_file["id"], from_options["id"], "{from_file} {from_options}");
    assert_eq!(from_file["runs"], from_options["runs"]);
    assert_eq!(from_file["blocks"], 2, "{from_file}");
    let file_settings = settings_in(&mut read_all(&folder.path().join("from-file.xlsx")), "Temperature");
    let option_settings = settings_in(&mut read_all(&folder.path().join("from-options.xlsx")), "Temperature");
    assert_eq!(file_settings, option_settings);
    // Orthogonal blocking of a 2^3 cube (F = 8) in one block with n_c0 = 3 centre
    // runs, and the axial block (2k = 6 runs) with n_a0 = 3: alpha^2 =
    // F (2k + n_a0) / (2 (F + n_c0)) = 8 * 9 / 22, alpha = 1.8091 (Box and Hunter
    // 1957, the condition as recalled from memory); 170 +- 10 alpha lies inside
    // the limits 150..195.
    let alpha = (8.0f64 * 9.0 / 22.0).sqrt();
    let highest = file_settings.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    assert!((highest - (170.0 + 10.0 * alpha)).abs() < 1e-3, "{highest} vs {alpha}");

    // A limit the axial runs would pass is refused, naming the factor, and nothing is written.
    let tight = SURFACE_PLAN_FILE.replace("highest = 195", "highest = 185");
    std::fs::write(folder.path().join("tight.toml"), tight).expect("plan file written");
    let message = refused_in(folder.path(), &["plan", "--from", "tight.toml", "--out", "tight.xlsx"]);
    assert!(message.contains("Temperature"), "{message}");
    assert!(!folder.path().join("tight.xlsx").exists());

    // Keys that do not fit name the key and its line.
    for (from, to, key, line) in [
        ("axial = \"orthogonal-blocks\"", "axial = \"far out\"", "'axial'", 3),
        ("design = \"central-composite\"", "design = \"star\"", "'design'", 2),
        ("highest = 195", "highest = 140", "'highest'", 13),
        (
            "design = \"central-composite\"",
            "design = \"box-behnken\"",
            "'axial'",
            3,
        ),
    ] {
        let text = SURFACE_PLAN_FILE.replace(from, to);
        std::fs::write(folder.path().join("bad.toml"), text).expect("plan file written");
        let message = refused_in(folder.path(), &["plan", "--from", "bad.toml", "--out", "bad.xlsx"]);
        assert!(
            message.contains(&format!("bad.toml, line {line}: {key}")),
            "{to}: {message}"
        );
    }
    // Limits without a design: said, not ignored.
    let text = SURFACE_PLAN_FILE.replace("design = \"central-composite\"\naxial = \"orthogonal-blocks\"\n", "");
    std::fs::write(folder.path().join("plain.toml"), text).expect("plan file written");
    let message = refused_in(folder.path(), &["plan", "--from", "plain.toml", "--out", "plain.xlsx"]);
    assert!(message.contains("'lowest'") && message.contains("design"), "{message}");
}
