//! Table detection on the generated corpus of workbooks in the shapes engineers keep
//! (`common::shapes`): each workbook is written, inspected through the service, and the
//! table found (sheet, header cell, layout, factors, responses, records, levels) is
//! compared with the reader's answer the case states. The test prints the share
//! detected right and fails on any difference. Set `TRIALYST_SHAPES_OUT` to a folder to
//! keep the generated workbooks there.

use serde_json::Value;

use crate::common::shapes::{shapes, write_shape, ShapeCase};
use crate::common::temp_folder;

/// The differences between what detection gave and what the case expects.
fn differences(case: &ShapeCase, inspection: &Value) -> Vec<String> {
    let expected = &case.expected;
    let table = &inspection["table"];
    let mut problems = Vec::new();
    let text = |value: &Value| value.as_str().unwrap_or_default().to_string();
    if text(&table["sheet"]) != expected.sheet {
        problems.push(format!(
            "sheet '{}' instead of '{}'",
            text(&table["sheet"]),
            expected.sheet
        ));
    }
    let range = text(&table["range"]);
    if range.split(':').next() != Some(expected.header_cell) {
        problems.push(format!(
            "table {range} instead of one headed at {}",
            expected.header_cell
        ));
    }
    if text(&table["layout"]) != expected.layout {
        problems.push(format!(
            "{} layout instead of {}",
            text(&table["layout"]),
            expected.layout
        ));
    }
    let names = |list: &Value, field: Option<&str>| -> Vec<String> {
        list.as_array()
            .map(|all| {
                all.iter()
                    .map(|item| text(field.map_or(item, |field| &item[field])))
                    .collect()
            })
            .unwrap_or_default()
    };
    let factors = names(&table["factors"], Some("name"));
    if factors != expected.factors {
        problems.push(format!("factors {factors:?} instead of {:?}", expected.factors));
    }
    let responses = names(&table["responses"], None);
    if responses != expected.responses {
        problems.push(format!("responses {responses:?} instead of {:?}", expected.responses));
    }
    let records = table["n_records"].as_u64().unwrap_or_default() as usize;
    if records != expected.records {
        problems.push(format!("{records} records instead of {}", expected.records));
    }
    for (factor, levels) in &expected.levels {
        let found = table["factors"]
            .as_array()
            .and_then(|all| all.iter().find(|item| item["name"].as_str() == Some(factor)))
            .map(|item| names(&item["levels"], None))
            .unwrap_or_default();
        if &found != levels {
            problems.push(format!("levels of '{factor}' {found:?} instead of {levels:?}"));
        }
    }
    let choices = names(&table["choices"], None);
    if expected.choice_said && choices.is_empty() {
        problems.push("the choice detection made is not said in the summary".into());
    }
    problems
}

#[test]
fn the_corpus_of_kept_shapes_is_read_as_a_person_would() {
    let folder = temp_folder();
    let keep = std::env::var_os("TRIALYST_SHAPES_OUT").map(std::path::PathBuf::from);
    let cases = shapes();
    assert!(cases.len() >= 40, "the corpus holds {} workbooks", cases.len());
    let mut failures = Vec::new();
    for case in &cases {
        let path = folder.path().join(format!("{}.xlsx", case.name));
        write_shape(case, &path);
        if let Some(keep) = &keep {
            std::fs::create_dir_all(keep).expect("the folder for kept workbooks can be made");
            std::fs::copy(&path, keep.join(format!("{}.xlsx", case.name))).expect("copied");
        }
        let problems = match service::inspect_workbook(&path, &service::AnalysisRequest::default()) {
            Ok(inspection) => differences(case, &serde_json::to_value(&inspection).expect("serialisable")),
            Err(error) => vec![format!("no table: {}", service::error_chain(&error))],
        };
        if !problems.is_empty() {
            failures.push(format!("{}: {}", case.name, problems.join("; ")));
        }
    }
    let right = cases.len() - failures.len();
    println!(
        "table shapes: {right} of {} detected right ({:.0}%)",
        cases.len(),
        100.0 * right as f64 / cases.len() as f64
    );
    assert!(
        failures.is_empty(),
        "detection differs from the reader's answer:\n{}",
        failures.join("\n")
    );
}
