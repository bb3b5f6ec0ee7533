//! A guard of the results document's format (`sidecar/docs/results-format.md`): small
//! fixed workbooks, a one-way trial and a two-factor trial, are written here and
//! analysed through the service; the document, serialised as `trialyst run --json`
//! serialises it, is compared whole with a committed snapshot in `tests/snapshots/`.
//! A renamed, removed, added or retyped field fails with the path of the first
//! difference.
//!
//! Only what legitimately varies is masked (the key is kept, so removing the field
//! still fails): `created_at`, `timings`, `tool_version`, and the source's `path`,
//! `sha256` and `bytes` (the workbook is written at test time by a library whose
//! output may change between its versions). Texts, booleans, nulls and integers
//! (counts, df) are compared exactly. Fractional numbers are compared by kind only
//! (a number stays a number, a null a null): their values are this program's own
//! output, checked against the world by the accuracy tests (`nist`, `cli`,
//! `factorial`), not by this format guard.
//!
//! Re-bless after an intended change of the format with
//! `TRIALYST_BLESS=1 cargo test -p tests --test integration -- results_snapshot::`,
//! and commit the snapshot with the change of `RESULTS_FORMAT_VERSION` and the
//! document (see DEVELOPERS.md, Testing).

use std::path::Path;

use serde_json::Value;
use service::{analyse_workbook, AnalysisRequest, RESULTS_FORMAT_VERSION};

use crate::common::blessing::committed_or_bless;
use crate::common::{trialyst, write_rows, Put};

/// The fields that legitimately vary from run to run, as paths of object keys.
const VARYING_FIELDS: &[&[&str]] = &[
    &["created_at"],
    &["timings"],
    &["tool_version"],
    &["source", "path"],
    &["source", "sha256"],
    &["source", "bytes"],
];

/// What a masked field holds in the snapshot.
const MASKED: &str = "<varies>";

/// Replaces each varying field that is present with the mask, keeping its key.
fn mask_varying_fields(document: &mut Value) {
    for path in VARYING_FIELDS {
        let (last, parents) = path.split_last().expect("a path has a key");
        let mut place = Some(&mut *document);
        for key in parents {
            place = place.and_then(|inner| inner.get_mut(*key));
        }
        if let Some(value) = place.and_then(|inner| inner.get_mut(*last)) {
            *value = Value::from(MASKED);
        }
    }
}

/// A JSON value's kind, for messages.
fn kind_of(value: &Value) -> &'static str {
    match value {
        Value::Null => "null",
        Value::Bool(_) => "a boolean",
        Value::Number(number) if number.is_f64() => "a fractional number",
        Value::Number(_) => "an integer",
        Value::String(_) => "a text",
        Value::Array(_) => "an array",
        Value::Object(_) => "an object",
    }
}

/// A value shortened for a message.
fn shown(value: &Value) -> String {
    let text = value.to_string();
    if text.chars().count() > 160 {
        format!("{}…", text.chars().take(160).collect::<String>())
    } else {
        text
    }
}

/// The first difference between the snapshot (`expected`) and the document (`actual`),
/// as a sentence naming its path (`$.responses[0].one_way.anova[1].df`), or `None`.
fn first_difference(path: &str, expected: &Value, actual: &Value) -> Option<String> {
    match (expected, actual) {
        (Value::Object(expected_map), Value::Object(actual_map)) => {
            for (key, expected_value) in expected_map {
                let inner = format!("{path}.{key}");
                match actual_map.get(key) {
                    None => return Some(format!("{inner}: in the snapshot but missing from the document")),
                    Some(actual_value) => {
                        if let Some(difference) = first_difference(&inner, expected_value, actual_value) {
                            return Some(difference);
                        }
                    }
                }
            }
            actual_map
                .iter()
                .find(|(key, _)| !expected_map.contains_key(*key))
                .map(|(key, value)| {
                    format!(
                        "{path}.{key}: in the document (value {}) but not in the snapshot",
                        shown(value)
                    )
                })
        }
        (Value::Array(expected_items), Value::Array(actual_items)) => {
            for (index, (expected_item, actual_item)) in expected_items.iter().zip(actual_items).enumerate() {
                if let Some(difference) = first_difference(&format!("{path}[{index}]"), expected_item, actual_item) {
                    return Some(difference);
                }
            }
            (expected_items.len() != actual_items.len()).then(|| {
                format!(
                    "{path}: {} items in the snapshot, {} in the document",
                    expected_items.len(),
                    actual_items.len()
                )
            })
        }
        (Value::Number(expected_number), Value::Number(actual_number))
            if expected_number.is_f64() && actual_number.is_f64() =>
        {
            None
        }
        _ if kind_of(expected) != kind_of(actual) => Some(format!(
            "{path}: {} in the snapshot ({}), {} in the document ({})",
            kind_of(expected),
            shown(expected),
            kind_of(actual),
            shown(actual)
        )),
        _ if expected != actual => Some(format!(
            "{path}: the snapshot has {}, the document {}",
            shown(expected),
            shown(actual)
        )),
        _ => None,
    }
}

/// Analyses the workbook through the service with the default request and returns
/// its document as JSON, the varying fields masked.
fn masked_document(path: &Path) -> Value {
    let results = analyse_workbook(path, &AnalysisRequest::default()).expect("the workbook is analysed");
    let mut document = serde_json::to_value(&results).expect("the results serialise");
    mask_varying_fields(&mut document);
    document
}

/// Compares the document with the committed snapshot `tests/snapshots/<name>.json`
/// (or writes it when blessing).
fn assert_matches_snapshot(name: &str, document: &Value) {
    let relative = format!("tests/snapshots/{name}.json");
    let mut made = serde_json::to_string_pretty(document).expect("the document serialises");
    made.push('\n');
    let Some(committed) = committed_or_bless(&relative, made.as_bytes()) else {
        return;
    };
    let snapshot: Value = serde_json::from_slice(&committed).expect("the snapshot is JSON");
    if let Some(difference) = first_difference("$", &snapshot, document) {
        panic!(
            "the results document no longer matches {relative}:\n  {difference}\n\
             If the change is intended, raise RESULTS_FORMAT_VERSION as the format's rules say, \
             update sidecar/docs/results-format.md, and re-bless with \
             `TRIALYST_BLESS=1 cargo test -p tests --test integration -- results_snapshot::`."
        );
    }
}

/// An invented one-way trial: coating thickness (µm) on three lines, four parts each.
fn write_one_way_trial(path: &Path) {
    let mut rows = vec![vec![Put::Text("Line"), Put::Text("Coating thickness (um)")]];
    for (line, values) in [
        ("Line 1", [41.2, 40.8, 41.5, 41.0]),
        ("Line 2", [42.1, 42.6, 41.9, 42.4]),
        ("Line 3", [40.9, 41.3, 41.1, 40.6]),
    ] {
        for value in values {
            rows.push(vec![Put::Text(line), Put::Number(value)]);
        }
    }
    write_rows(path, "Trial", &rows);
}

/// An invented two-factor trial: bond strength (N) for two oven settings and three
/// adhesive batches, two parts in each of the six cells.
fn write_two_factor_trial(path: &Path) {
    let mut rows = vec![vec![
        Put::Text("Oven"),
        Put::Text("Batch"),
        Put::Text("Bond strength (N)"),
    ]];
    let cells: [(&str, &str, [f64; 2]); 6] = [
        ("cool", "Batch A", [118.0, 121.5]),
        ("cool", "Batch B", [124.2, 122.8]),
        ("cool", "Batch C", [119.6, 117.9]),
        ("hot", "Batch A", [129.3, 131.0]),
        ("hot", "Batch B", [127.4, 130.2]),
        ("hot", "Batch C", [133.8, 132.1]),
    ];
    for (oven, batch, values) in cells {
        for value in values {
            rows.push(vec![Put::Text(oven), Put::Text(batch), Put::Number(value)]);
        }
    }
    write_rows(path, "Trial", &rows);
}

/// Writes a trial with `write` into a fresh folder and analyses it: the folder (kept
/// while the caller needs the file), and its masked document.
fn written_and_analysed(file_name: &str, write: fn(&Path)) -> (tempfile::TempDir, Value) {
    let folder = crate::common::temp_folder();
    let path = folder.path().join(file_name);
    write(&path);
    let document = masked_document(&path);
    (folder, document)
}

#[test]
fn one_way_document_matches_its_snapshot() {
    let (_folder, document) = written_and_analysed("coating-lines.xlsx", write_one_way_trial);
    assert_eq!(
        document["responses"][0]["factorial"],
        Value::Null,
        "one factor: no factorial part"
    );
    assert_matches_snapshot("results-one-way", &document);
}

#[test]
fn two_factor_document_matches_its_snapshot() {
    let (_folder, document) = written_and_analysed("bond-oven-batch.xlsx", write_two_factor_trial);
    assert!(
        document["responses"][0]["factorial"].is_object(),
        "two factors: a factorial part is expected, got {}",
        shown(&document["responses"][0]["factorial"])
    );
    assert_eq!(document["table"]["factors"].as_array().map(Vec::len), Some(2));
    assert_matches_snapshot("results-two-factor", &document);
}

/// `trialyst run --json` prints the service's document with `status` and
/// `results_file` added and nothing else changed.
#[test]
fn command_line_document_is_the_service_document_plus_status() {
    let (folder, service_document) = written_and_analysed("coating-lines.xlsx", write_one_way_trial);
    let run = trialyst(folder.path(), &["run", "--json", "--no-write", "coating-lines.xlsx"]);
    assert_eq!(run.code(), 0, "{}", run.stderr());
    let line = run.stdout();
    let line = line.lines().find(|line| line.starts_with('{')).expect("a JSON line");
    let mut printed: Value = serde_json::from_str(line).expect("valid JSON");
    mask_varying_fields(&mut printed);
    let map = printed.as_object_mut().expect("an object");
    assert_eq!(map.remove("status"), Some(Value::from("analysed")));
    assert_eq!(
        map.remove("results_file"),
        Some(Value::Null),
        "--no-write writes nothing"
    );
    if let Some(difference) = first_difference("$", &service_document, &printed) {
        panic!("the printed document differs from the service's: {difference}");
    }
}

/// The document's version is the one the format's documentation declares, in its
/// title and in its table of top-level fields.
#[test]
fn format_version_agrees_with_the_documentation() {
    let documentation_path = crate::common::blessing::repository_path("sidecar/docs/results-format.md");
    let documentation = std::fs::read_to_string(&documentation_path).expect("the results format is documented");
    let title = documentation.lines().next().unwrap_or_default();
    let title_version = title
        .strip_prefix("# The results document (format ")
        .and_then(|rest| rest.strip_suffix(')'))
        .unwrap_or_else(|| panic!("unexpected title of results-format.md: {title}"));
    assert_eq!(title_version, RESULTS_FORMAT_VERSION, "the title of results-format.md");
    let field_row = documentation
        .lines()
        .find(|line| line.starts_with("| `format_version` |"))
        .expect("results-format.md describes format_version");
    assert!(
        field_row.contains(&format!("`\"{RESULTS_FORMAT_VERSION}\"`")),
        "results-format.md's format_version row does not give {RESULTS_FORMAT_VERSION}: {field_row}"
    );
    let (_folder, document) = written_and_analysed("coating-lines.xlsx", write_one_way_trial);
    assert_eq!(document["format_version"], RESULTS_FORMAT_VERSION);
}

/// The comparison names the path of the first difference: a renamed field, a removed
/// one, a changed text and a number turned null (invented documents).
#[test]
fn first_difference_names_the_path() {
    let snapshot = serde_json::json!({"responses": [{"one_way": {"anova": [{"df": 2, "f": 1.5}]}, "name": "Yield"}]});
    let renamed = serde_json::json!({"responses": [{"one_way": {"anova": [{"dof": 2, "f": 1.5}]}, "name": "Yield"}]});
    let nulled = serde_json::json!({"responses": [{"one_way": {"anova": [{"df": 2, "f": null}]}, "name": "Yield"}]});
    let renamed_text =
        serde_json::json!({"responses": [{"one_way": {"anova": [{"df": 2, "f": 7.25}]}, "name": "Strength"}]});
    assert_eq!(
        first_difference("$", &snapshot, &renamed).as_deref(),
        Some("$.responses[0].one_way.anova[0].df: in the snapshot but missing from the document")
    );
    assert_eq!(
        first_difference("$", &snapshot, &nulled).as_deref(),
        Some(
            "$.responses[0].one_way.anova[0].f: a fractional number in the snapshot (1.5), null in the document (null)"
        )
    );
    assert_eq!(
        first_difference("$", &snapshot, &renamed_text).as_deref(),
        Some("$.responses[0].name: the snapshot has \"Yield\", the document \"Strength\"")
    );
    assert_eq!(first_difference("$", &snapshot, &snapshot), None);
}
