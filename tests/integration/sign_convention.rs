//! One sign convention for differences between two conditions: the condition with the
//! higher average first, the difference the higher minus the lower, in the JSON, on the
//! pair sheets, on the Summary and in the roll-up. Conditions are listed here lowest
//! first, so that a "first minus second in the listed order" would come out negative.
//! Control comparisons (each condition minus the control) and contrasts (as written)
//! say their own order and are not pairs. Common practice; no reference values needed.

use calamine::Data;

use crate::common::{long_rows, read_all_sheets, temp_folder, trialyst, write_rows};

/// Every object holding `first`, `second` and `difference` (or `z`) outside a control
/// comparison: its difference must not be negative.
fn negative_pairs(value: &serde_json::Value, path: &str, found: &mut Vec<String>) {
    match value {
        serde_json::Value::Object(map) => {
            if map.contains_key("first") && map.contains_key("second") {
                // The interval follows the difference: its upper end is not below zero.
                for key in ["difference", "z", "t", "standardized", "high"] {
                    if let Some(number) = map.get(key).and_then(serde_json::Value::as_f64) {
                        if number < 0.0 {
                            found.push(format!("{path}.{key} = {number}"));
                        }
                    }
                }
            }
            for (key, inner) in map {
                if key != "control" {
                    negative_pairs(inner, &format!("{path}.{key}"), found);
                }
            }
        }
        serde_json::Value::Array(items) => {
            for (index, inner) in items.iter().enumerate() {
                negative_pairs(inner, &format!("{path}[{index}]"), found);
            }
        }
        _ => {}
    }
}

fn text(data: &Data) -> String {
    match data {
        Data::String(text) => text.clone(),
        _ => String::new(),
    }
}

#[test]
fn every_difference_between_two_conditions_is_the_higher_minus_the_lower() {
    let folder = temp_folder();
    write_rows(
        &folder.path().join("spin.xlsx"),
        "Runs",
        &long_rows(
            "Spindle speed",
            "Roughness (um)",
            &[
                ("Slow", &[1.10, 1.14, 1.08, 1.12, 1.11]),
                ("Medium", &[1.31, 1.28, 1.35, 1.30, 1.33]),
                ("Fast", &[1.62, 1.55, 1.66, 1.59, 1.61]),
            ],
        ),
    );
    let run = trialyst(folder.path(), &["run", "spin.xlsx", "--json", "--no-write"]);
    run.expect_code(0);
    let stdout = run.stdout();
    let line = stdout.lines().next().expect("a JSON line");
    let document: serde_json::Value = serde_json::from_str(line).expect("JSON");
    let mut found = Vec::new();
    negative_pairs(&document, "", &mut found);
    assert!(found.is_empty(), "negative pair differences: {found:?}");
    let pairs = &document["responses"][0]["one_way"]["pairs"];
    assert_eq!(pairs[0]["first"], "Medium", "{pairs}");
    assert_eq!(pairs[0]["second"], "Slow", "{pairs}");

    // The workbook and a roll-up over the folder.
    let written = trialyst(folder.path(), &["run", ".", "--rollup", "week.rollup.xlsx"]);
    written.expect_code(0);
    let sheets = read_all_sheets(&folder.path().join("spin.results.xlsx"));
    let (_, differences) = sheets
        .iter()
        .find(|(name, _)| name == "Pairwise differences")
        .expect("the pair sheet");
    let mut rows_seen = 0;
    let mut in_table = false;
    for row in differences.rows() {
        if row.first().map(text).as_deref() == Some("condition") {
            in_table = true;
            continue;
        }
        if in_table {
            match row.get(2) {
                Some(Data::Float(difference)) => {
                    assert!(*difference >= 0.0, "difference {difference} in {row:?}");
                    rows_seen += 1;
                }
                _ => in_table = false,
            }
        }
    }
    assert_eq!(rows_seen, 3, "three pairs on the sheet");
    let summary_text: Vec<String> = sheets
        .iter()
        .find(|(name, _)| name == "Summary")
        .expect("Summary")
        .1
        .rows()
        .flat_map(|row| row.iter().map(text).collect::<Vec<_>>())
        .collect();
    let largest = summary_text
        .iter()
        .find_map(|line| line.strip_prefix("Largest difference: "))
        .expect("the Summary's largest difference");
    assert!(largest.starts_with("Fast minus Slow = "), "{largest}");
    let rollup = read_all_sheets(&folder.path().join("week.rollup.xlsx"));
    let in_rollup = rollup
        .iter()
        .flat_map(|(_, range)| range.rows().flat_map(|row| row.iter().map(text).collect::<Vec<_>>()))
        .any(|cell| cell == "Fast minus Slow");
    assert!(in_rollup, "the roll-up names the pair as the Summary does");
}
