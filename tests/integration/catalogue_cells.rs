//! The hostile catalogue, damaged cells: text in a number cell, a cell of an
//! unknown type, a shared-text index past the table and an odd TRUE/FALSE
//! cell are findings at their cells; the rest of the table is analysed.

use crate::common::{temp_folder, trialyst};
use crate::hostile::{sheet_xml, two_column_rows, write_xlsx_parts, EMPTY_SHARED_STRINGS};

#[test]
fn cells_that_do_not_fit_their_type_are_findings_at_their_cells() {
    let folder = temp_folder();
    // Line / Width (mm) in A1:B21 (invented); B3..B6 are damaged.
    let damaged = [
        (r#"t="n""#, "12,5", "a number cell holding \"12,5\""),
        (r#"t="q7""#, "10.4", "a type this reader does not know"),
        (r#"t="s""#, "99", "a shared-text cell pointing to entry \"99\""),
        (r#"t="b""#, "yes", "a TRUE/FALSE cell holding \"yes\""),
    ];
    let rows = two_column_rows(("Line", "Width (mm)"), ("upper", "lower"), |row| {
        damaged
            .get(row.wrapping_sub(3))
            .map(|(kind, value, _)| format!(r#"<c r="B{row}" {kind}><v>{value}</v></c>"#))
    });
    write_xlsx_parts(
        &folder.path().join("damaged.xlsx"),
        &sheet_xml(&rows),
        EMPTY_SHARED_STRINGS,
    );
    let run = trialyst(folder.path(), &["run", "damaged.xlsx", "--json", "--no-write"]);
    run.expect_code(0);
    let line: serde_json::Value = serde_json::from_str(run.stdout().trim()).expect("one JSON line");
    assert_eq!(line["table"]["n_records"], 20, "{}", run.report());
    let findings = line["findings"].as_array().cloned().unwrap_or_default();
    for (index, (_, _, said)) in damaged.iter().enumerate() {
        let cell = format!("B{}", index + 3);
        assert!(
            findings.iter().any(|finding| finding["cell"] == cell.as_str()
                && finding["message"]
                    .as_str()
                    .is_some_and(|message| message.contains("unreadable cell") && message.contains(said))),
            "no finding for {cell}: {findings:#?}"
        );
    }
}
