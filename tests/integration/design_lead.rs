//! The answer follows the trial's design: a generated corpus of trials in the shapes
//! plants run (see `common::corpus`), each written as a workbook and run through the
//! real program. For each case the test states the lead a correct reading takes
//! (the factorial model for crossed factors or a factor beside blocks, the one-way
//! comparison for one factor), the effects that must be found and those that must not,
//! and checks the headline, the verdict in the JSON document, the console line and the
//! roll-up row. Expectations come from the generating models (effects several noise SDs
//! large, inert factors with no effect at all) and from common practice: an
//! unreplicated design is read by its effects, not by single-run "conditions".

use std::path::Path;

use serde_json::Value;

use crate::batch::cell_text;
use crate::common::corpus::{corpus, write_case, ExpectedLead, TrialCase};
use crate::common::{read_all_sheets, temp_folder, trialyst, Run};

/// The JSON document of one case, run alone with `run --json --no-write`.
fn run_case(folder: &Path, case: &TrialCase) -> Value {
    let file = format!("{}.xlsx", case.name);
    write_case(case, &folder.join(&file));
    let run = trialyst(folder, &["run", "--json", "--no-write", "--jobs", "1", &file]);
    run.expect_code(0);
    first_document(&run)
}

/// The first JSON document a `run --json` printed.
fn first_document(run: &Run) -> Value {
    let line = run
        .stdout()
        .lines()
        .find(|line| line.starts_with('{'))
        .unwrap_or_else(|| panic!("no JSON line{}", run.report()))
        .to_string();
    serde_json::from_str(&line).expect("the JSON line parses")
}

/// Checks one case's document against its expectations; returns the headline.
fn check_document(case: &TrialCase, document: &Value) -> String {
    let response = &document["responses"][0];
    let what = format!("case '{}'", case.name);
    assert_eq!(
        response["lead"]["analysis"].as_str(),
        Some(case.lead.json_name()),
        "{what}: lead {}",
        response["lead"]
    );
    let reason = response["lead"]["reason"].as_str().unwrap_or_default();
    assert!(
        reason.ends_with('.') && reason.contains(" leads because "),
        "{what}: {reason}"
    );
    let headline = response["verdict"]["headline"].as_str().unwrap_or_default().to_string();
    let findings: Vec<&str> = document["findings"]
        .as_array()
        .map(|all| all.iter().filter_map(|finding| finding["message"].as_str()).collect())
        .unwrap_or_default();
    if case.one_run_per_combination {
        assert!(
            !findings.iter().any(|message| message.contains("has only one value")),
            "{what}: a per-run 'too few values' finding for a design of one run per combination: {findings:?}"
        );
    }
    match case.lead {
        ExpectedLead::Factorial => {
            let reading = &response["factorial_reading"];
            let matter: Vec<&str> = reading["matter"]
                .as_array()
                .map(|all| all.iter().filter_map(Value::as_str).collect())
                .unwrap_or_default();
            for term in &case.must_find {
                assert!(
                    matter.contains(&term.as_str()),
                    "{what}: '{term}' not found in {matter:?}; {headline}"
                );
                assert!(
                    headline.contains(term.as_str()),
                    "{what}: '{term}' not in the headline: {headline}"
                );
            }
            for term in &case.must_not_find {
                assert!(
                    !matter.contains(&term.as_str()),
                    "{what}: '{term}' found in {matter:?}; {headline}"
                );
            }
            assert_eq!(
                response["verdict"]["conditions_differ"].as_bool(),
                Some(!case.must_find.is_empty()),
                "{what}: {headline}"
            );
            assert!(
                !headline.contains("conditions differ") && !headline.contains("Kruskal"),
                "{what}: the one-way comparison leads the headline: {headline}"
            );
            let details: Vec<&str> = response["verdict"]["details"]
                .as_array()
                .map(|all| all.iter().filter_map(Value::as_str).collect())
                .unwrap_or_default();
            // Each effect is said once: in the headline (the largest) or in one line of the
            // details, never again in other words.
            for term in &matter {
                let moving = if term.contains(" × ") {
                    format!("the interaction {} changes", term.to_lowercase())
                } else {
                    format!("moving {} from", term.to_lowercase())
                };
                let times = std::iter::once(headline.as_str())
                    .chain(details.iter().copied())
                    .filter(|line| line.to_lowercase().contains(&moving))
                    .count();
                assert!(
                    times <= 1,
                    "{what}: the effect of '{term}' is said {times} times: {headline} / {details:?}"
                );
            }
            if case.expects_best {
                assert!(
                    reading["best_settings"].is_string(),
                    "{what}: no best settings: {reading}"
                );
            } else {
                assert!(
                    reading["best_settings"].is_null(),
                    "{what}: best settings without a direction"
                );
                assert!(
                    details
                        .iter()
                        .any(|line| line.contains("No best settings are chosen without a direction")),
                    "{what}: no request for a direction: {details:?}"
                );
                assert!(
                    !details.iter().any(|line| line.starts_with("Recommended settings")),
                    "{what}: recommended settings without a direction: {details:?}"
                );
            }
            if let Some(largest) = reading["largest"].as_object() {
                let size = largest["size"].as_f64().unwrap_or(f64::NAN);
                assert!(size.is_finite() && size != 0.0, "{what}: largest effect {largest:?}");
            }
        }
        ExpectedLead::OneWay => {
            assert!(response["factorial_reading"].is_null(), "{what}");
            assert!(headline.starts_with("The conditions differ"), "{what}: {headline}");
        }
    }
    headline
}

fn check_named(name: &str) {
    let folder = temp_folder();
    let case = corpus()
        .into_iter()
        .find(|case| case.name == name)
        .unwrap_or_else(|| panic!("no case '{name}'"));
    let document = run_case(folder.path(), &case);
    if std::env::var_os("CORPUS_DEBUG").is_some() {
        println!("{}", document["responses"][0]["factorial"]["two_level"]["effects"]);
        println!("{}", document["table"]);
    }
    let headline = check_document(&case, &document);
    println!("{name}: {headline}");
}

#[test]
fn unreplicated_two_to_the_four_leads_with_its_effects() {
    check_named("unreplicated 2^4");
}

#[test]
fn half_fraction_with_centre_points_leads_with_its_effects() {
    check_named("2^(5-1) with centre points");
}

#[test]
fn fraction_without_direction_names_no_best() {
    check_named("2^(4-1) no direction");
}

#[test]
fn blocked_two_to_the_four_leads_with_its_effects() {
    check_named("blocked 2^4");
}

#[test]
fn blocked_with_a_day_shift_never_reads_the_confounded_interaction() {
    check_named("blocked 2^4 with a day shift");
}

#[test]
fn text_factor_leads_with_its_effects() {
    check_named("text factor");
}

#[test]
fn replicated_general_factorial_leads_with_its_effects() {
    check_named("general factorial");
}

#[test]
fn unbalanced_factorial_leads_with_its_effects() {
    check_named("unbalanced");
}

#[test]
fn factorial_with_a_missing_run_leads_with_its_effects() {
    check_named("missing run");
}

#[test]
fn factor_beside_blocks_leads_with_the_factorial_model() {
    check_named("recipe beside shifts");
}

#[test]
fn one_way_with_a_control_leads_with_the_one_way_comparison() {
    check_named("one-way with control");
}

/// The whole corpus in one batch with a
/// roll-up: each console line carries the lead's headline, and each roll-up row names
/// the lead analysis and repeats the headline.
#[test]
fn corpus_leads_in_the_console_and_the_rollup() {
    let folder = temp_folder();
    let trials = folder.path().join("trials");
    std::fs::create_dir_all(&trials).expect("a folder");
    let cases: Vec<TrialCase> = corpus();
    let mut headlines = Vec::new();
    for case in &cases {
        let document = run_case(&trials, case);
        headlines.push(check_document(case, &document));
    }
    let run = trialyst(
        folder.path(),
        &[
            "run",
            "trials",
            "--no-write",
            "--jobs",
            "1",
            "--rollup",
            "corpus.rollup.xlsx",
        ],
    );
    run.expect_code(0);
    let console = format!("{}{}", run.stdout(), run.stderr());
    for (case, headline) in cases.iter().zip(&headlines) {
        assert!(
            console.contains(headline.as_str()),
            "case '{}': the console line lacks the headline '{headline}'{}",
            case.name,
            run.report()
        );
    }
    let rollup = folder.path().join("corpus.rollup.xlsx");
    crate::common::keep_output(&rollup);
    let sheets = read_all_sheets(&rollup);
    let (_, rows) = &sheets[0];
    let header: Vec<String> = rows.rows().next().expect("a header").iter().map(cell_text).collect();
    let column = |name: &str| header.iter().position(|text| text == name).expect("a column");
    let (workbook, lead, verdict, best) = (
        column("Workbook"),
        column("Lead analysis"),
        column("Verdict"),
        column("Best condition(s)"),
    );
    let mut leading_correctly = 0;
    for (case, headline) in cases.iter().zip(&headlines) {
        let row = rows
            .rows()
            .skip(1)
            // The workbook's own file, not another case whose name begins the same way.
            .find(|row| cell_text(&row[workbook]).contains(&format!("{}.xlsx", case.name)))
            .unwrap_or_else(|| panic!("no roll-up row for '{}'", case.name));
        let lead_text = cell_text(&row[lead]);
        let is_factorial = lead_text.starts_with("factorial model");
        assert_eq!(
            is_factorial,
            case.lead == ExpectedLead::Factorial,
            "case '{}': {lead_text}",
            case.name
        );
        assert_eq!(&cell_text(&row[verdict]), headline, "case '{}'", case.name);
        if case.lead == ExpectedLead::Factorial && !case.expects_best {
            assert_eq!(
                cell_text(&row[best]),
                "(set a direction to choose)",
                "case '{}'",
                case.name
            );
        }
        leading_correctly += 1;
    }
    println!(
        "{leading_correctly} of {} corpus cases lead correctly in the roll-up",
        cases.len()
    );
}

/// Two responses of one 2^3 trial, each with its own direction: one from the settings
/// sheet ("Leak rate: lower"), one from the command line ("Strength=higher"), and a
/// direction for a response the table lacks. Each response's best settings follow its
/// own direction (the generating model puts the lowest leak rate and the highest strength
/// at different corners), the provenance names where each came from, and the unknown
/// name is a finding.
#[test]
fn each_response_follows_its_own_direction() {
    use crate::common::corpus::{two_level_runs, Level, Noise};
    let folder = temp_folder();
    let runs = two_level_runs(3, &[]);
    let mut noise = Noise::new(1320);
    let mut book = rust_xlsxwriter::Workbook::new();
    let sheet = book.add_worksheet();
    sheet.set_name("Trial").expect("name");
    for (col, header) in ["Temperature", "Pressure", "Time", "Leak rate (ccm)", "Strength (MPa)"]
        .iter()
        .enumerate()
    {
        sheet.write_string(0, col as u16, *header).expect("header");
    }
    let mut row = 1;
    for _ in 0..2 {
        for run in &runs {
            let levels = [
                Level::Number(if run[0] > 0.0 { 180.0 } else { 150.0 }),
                Level::Number(if run[1] > 0.0 { 4.0 } else { 2.0 }),
                Level::Number(if run[2] > 0.0 { 20.0 } else { 10.0 }),
            ];
            for (col, level) in levels.iter().enumerate() {
                if let Level::Number(number) = level {
                    sheet.write_number(row, col as u16, *number).expect("level");
                }
            }
            // Leak rate rises with Temperature; strength rises with Temperature and Time.
            let leak = 5.0 + 2.0 * run[0] + noise.normal(0.2);
            let strength = 40.0 + 3.0 * run[0] + 2.0 * run[2] + noise.normal(0.3);
            sheet.write_number(row, 3, leak).expect("leak");
            sheet.write_number(row, 4, strength).expect("strength");
            row += 1;
        }
    }
    let settings = book.add_worksheet();
    settings.set_name("trialyst settings").expect("name");
    for (index, (key, value)) in [
        ("factor", "Temperature, Pressure, Time"),
        ("response", "Leak rate (ccm), Strength (MPa)"),
        ("direction", "Leak rate: lower; Haze: lower"),
    ]
    .iter()
    .enumerate()
    {
        settings.write_string(index as u32, 0, *key).expect("key");
        settings.write_string(index as u32, 1, *value).expect("value");
    }
    book.save(folder.path().join("two responses.xlsx")).expect("save");
    let run = trialyst(
        folder.path(),
        &[
            "run",
            "--json",
            "--no-write",
            "--direction",
            "Strength=higher",
            "two responses.xlsx",
        ],
    );
    run.expect_code(0);
    let document = first_document(&run);
    let responses = document["responses"].as_array().expect("responses");
    let best = |index: usize| {
        responses[index]["factorial_reading"]["best_settings"]
            .as_str()
            .map(str::to_string)
    };
    let leak_best = best(0).expect("the leak rate has a direction");
    let strength_best = best(1).expect("the strength has a direction");
    assert!(leak_best.contains("Temperature 150"), "{leak_best}");
    assert!(
        strength_best.contains("Temperature 180") && strength_best.contains("Time 20"),
        "{strength_best}"
    );
    let sources = document["settings_sources"].as_array().expect("sources");
    let origin = |key: &str| {
        sources
            .iter()
            .find(|pair| pair[0].as_str() == Some(key))
            .and_then(|pair| pair[1].as_str())
            .map(str::to_string)
    };
    assert_eq!(
        origin("direction for 'Leak rate'").as_deref(),
        Some("workbook settings sheet")
    );
    assert_eq!(
        origin("direction for 'Strength'").as_deref(),
        Some("command line or request")
    );
    let findings = document["findings"].to_string();
    assert!(findings.contains("direction was given for 'Haze'"), "{findings}");
    for response in responses {
        assert_eq!(response["lead"]["analysis"], "factorial", "{}", response["lead"]);
    }
}

/// The issue's own trial: a 2^(5-1) screening plan written by `trialyst plan --runs 16
/// --centre-points 2 --blocks 2`, filled in from a model with known effects (Temperature
/// +6, Pressure +4, Speed -5 and Temperature × Pressure +3, as effects: high minus low;
/// Time and Flow inert; no shift between blocks) and run back. The factorial model must
/// lead, find what the model put in and nothing from the inert factors, and no run of
/// this unreplicated design may be reported as having "too few values".
#[test]
fn a_filled_screening_plan_leads_with_its_effects() {
    use crate::common::corpus::Noise;
    use crate::plan::{column_of, read_all, runs_sheet, write_all};
    use calamine::Data;
    let folder = temp_folder();
    let plan = trialyst(
        folder.path(),
        &[
            "plan",
            "--factor",
            "Temperature=150,180",
            "--factor",
            "Pressure=2,4",
            "--factor",
            "Time=10,20",
            "--factor",
            "Speed=40,60",
            "--factor",
            "Flow=5,9",
            "--response",
            "Yield (%)",
            "--runs",
            "16",
            "--centre-points",
            "2",
            "--blocks",
            "2",
            "--seed",
            "1313",
            "--out",
            "plan.xlsx",
        ],
    );
    plan.expect_code(0);
    let mut sheets = read_all(&folder.path().join("plan.xlsx"));
    let rows = runs_sheet(&mut sheets);
    let coded =
        |rows: &[Vec<Data>], row: usize, header: &str, low: f64, high: f64| match &rows[row][column_of(rows, header)] {
            Data::Float(value) => (2.0 * value - low - high) / (high - low),
            Data::Int(value) => (2.0 * *value as f64 - low - high) / (high - low),
            other => panic!("{header}: {other:?}"),
        };
    let result = column_of(rows, "Yield (%)");
    let mut noise = Noise::new(1314);
    for row in 3..rows.len() {
        let a = coded(rows, row, "Temperature", 150.0, 180.0);
        let b = coded(rows, row, "Pressure", 2.0, 4.0);
        let d = coded(rows, row, "Speed", 40.0, 60.0);
        let value = 70.0 + 3.0 * a + 2.0 * b - 2.5 * d + 1.5 * a * b + noise.normal(0.5);
        while rows[row].len() <= result {
            rows[row].push(Data::Empty);
        }
        rows[row][result] = Data::Float(value);
    }
    write_all(&sheets, &folder.path().join("filled.xlsx"));
    let run = trialyst(folder.path(), &["run", "--json", "--no-write", "filled.xlsx"]);
    run.expect_code(0);
    let document = first_document(&run);
    let response = &document["responses"][0];
    assert_eq!(response["lead"]["analysis"], "factorial", "{}", response["lead"]);
    let matter: Vec<&str> = response["factorial_reading"]["matter"]
        .as_array()
        .map(|all| all.iter().filter_map(Value::as_str).collect())
        .unwrap_or_default();
    let headline = response["verdict"]["headline"].as_str().unwrap_or_default();
    for term in ["Temperature", "Pressure", "Speed"] {
        assert!(matter.contains(&term), "'{term}' not found: {matter:?}; {headline}");
    }
    // This plan's own Design sheet says that AB (Temperature × Pressure) is confounded
    // with blocks (2 blocks of a 2^(5-1) leave no other choice), so the model's AB term
    // cannot be told from the day-to-day shift and must never be read as an effect
    // (issue 13, item 3).
    for term in ["Time", "Flow", "Temperature × Pressure"] {
        assert!(!matter.contains(&term), "'{term}' found: {matter:?}; {headline}");
    }
    let findings = document["findings"].to_string();
    assert!(!findings.contains("has only one value"), "{findings}");
    // No direction was set: no best settings, and the reading asks for one.
    assert!(response["factorial_reading"]["best_settings"].is_null());
    println!("filled screening plan: {headline}");
}
