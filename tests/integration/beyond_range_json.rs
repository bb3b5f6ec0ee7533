//! A figure beyond the range of the arithmetic, in the JSON a reader gets: `trialyst run
//! --json` and the protocol's `trialyst/analyseWorkbook` and `trialyst/analyseCells`
//! answers write it as `null` and name it, by JSON Pointer (RFC 6901), in the document's
//! `beyond_range` list (`sidecar/docs/results-format.md`). An ordinary trial has an empty
//! list.
//!
//! The trial is the invented strength trial of `sidecar/service/tests/beyond_range.rs`:
//! values near ±1.7e308 of opposite sign, so that the sums of squares (about 1.7e617 and
//! 6.3e616) and the difference of the recipes A and B (3.32e308) exceed the largest double,
//! about 1.8e308 (IEEE 754 binary64; common practice), while F and p (8.1666..., 0.01939...)
//! come from scaled sums and stay within the range.

use serde_json::{json, Value};

use crate::common::{long_rows, trialyst, write_rows};
use crate::lsp::Session;

const STRENGTH: [(&str, &[f64]); 3] = [
    ("A", &[1.70e308, 1.62e308, 1.66e308]),
    ("B", &[-1.70e308, -1.61e308, -1.67e308]),
    ("C", &[1.50e308, -1.55e308, 1.52e308]),
];

/// An ordinary trial: the same recipes at everyday strengths.
const ORDINARY: [(&str, &[f64]); 3] = [
    ("A", &[17.0, 16.2, 16.6]),
    ("B", &[15.1, 15.6, 15.3]),
    ("C", &[16.0, 15.5, 15.2]),
];

/// A trial as the cells a client sends: a header row, then one row per run.
fn cells_of(trial: &[(&str, &[f64])]) -> Vec<Value> {
    std::iter::once(json!(["Recipe", "Strength"]))
        .chain(
            trial
                .iter()
                .flat_map(|(recipe, values)| values.iter().map(move |value| json!([recipe, value]))),
        )
        .collect()
}

/// The `beyond_range` list of a results document, as texts.
fn listed(document: &Value) -> Vec<String> {
    document["beyond_range"]
        .as_array()
        .unwrap_or_else(|| panic!("no beyond_range list in {document}"))
        .iter()
        .map(|entry| entry.as_str().expect("a pointer is a text").to_string())
        .collect()
}

/// Checks the document of the strength trial: the sums of squares between and within the
/// recipes and the difference A - B are listed, each pointer names a `null`, F and p are
/// numbers and are not listed.
fn check_strength_document(document: &Value, place: &str) {
    let pointers = listed(document);
    println!("{place}: beyond_range = {pointers:?}");
    let between = "/responses/0/one_way/anova/0";
    for expected in [format!("{between}/ss"), format!("{between}/ms")] {
        assert!(
            pointers.contains(&expected),
            "{place}: {expected} is not listed in {pointers:?}"
        );
    }
    let pair_differences: Vec<&String> = pointers
        .iter()
        .filter(|pointer| pointer.starts_with("/responses/0/one_way/pairs/") && pointer.ends_with("/difference"))
        .collect();
    assert!(
        !pair_differences.is_empty(),
        "{place}: no pair's difference is listed in {pointers:?}"
    );
    for pointer in &pointers {
        assert_eq!(
            document.pointer(pointer),
            Some(&Value::Null),
            "{place}: {pointer} does not name a null"
        );
    }
    for within in [format!("{between}/f"), format!("{between}/p")] {
        assert!(
            document.pointer(&within).is_some_and(Value::is_number),
            "{place}: {within}"
        );
        assert!(!pointers.contains(&within), "{place}: {within} is listed");
    }
}

#[test]
fn run_json_names_each_figure_beyond_the_range() {
    let folder = crate::common::temp_folder();
    write_rows(
        &folder.path().join("strength.xlsx"),
        "Trial",
        &long_rows("Recipe", "Strength", &STRENGTH),
    );
    write_rows(
        &folder.path().join("everyday.xlsx"),
        "Trial",
        &long_rows("Recipe", "Strength", &ORDINARY),
    );
    let run = trialyst(
        folder.path(),
        &["run", "--json", "--no-write", "strength.xlsx", "everyday.xlsx"],
    );
    assert_eq!(run.code(), 0, "{}", run.report());
    let stdout = run.stdout();
    let lines: Vec<Value> = stdout
        .lines()
        .filter(|line| line.starts_with('{'))
        .map(|line| serde_json::from_str(line).expect("valid JSON"))
        .collect();
    assert_eq!(lines.len(), 2, "{stdout}");
    check_strength_document(&lines[0], "run --json");
    assert_eq!(listed(&lines[1]), Vec::<String>::new(), "an ordinary trial");
}

#[test]
fn protocol_answers_name_each_figure_beyond_the_range() {
    let folder = crate::common::temp_folder();
    let path = folder.path().join("strength.xlsx");
    write_rows(&path, "Trial", &long_rows("Recipe", "Strength", &STRENGTH));
    let mut session = Session::start();
    session.initialize();
    let analysed = session.request("trialyst/analyseWorkbook", json!({ "path": path }));
    check_strength_document(&analysed["result"], "analyseWorkbook");

    let answer = session.request(
        "trialyst/analyseCells",
        json!({ "cells": cells_of(&STRENGTH), "sheet": "Trial" }),
    );
    check_strength_document(&answer["result"]["results"], "analyseCells");

    let answer = session.request(
        "trialyst/analyseCells",
        json!({ "cells": cells_of(&ORDINARY), "sheet": "Trial" }),
    );
    assert_eq!(
        listed(&answer["result"]["results"]),
        Vec::<String>::new(),
        "an ordinary trial"
    );
    assert_eq!(session.finish(), Some(0));
}
