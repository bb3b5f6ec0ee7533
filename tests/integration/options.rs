//! Options checked up front: a bad value is a usage error (exit code 2) with a message
//! saying what is accepted, before any workbook is read.

use crate::common::{long_rows, temp_folder, trialyst, write_rows};

fn trial(folder: &std::path::Path) {
    write_rows(
        &folder.join("trial.xlsx"),
        "Runs",
        &long_rows(
            "Supplier",
            "Tensile (MPa)",
            &[
                ("North", &[20.1, 20.4, 19.9, 20.2]),
                ("South", &[21.0, 21.3, 20.9, 21.2]),
                ("East", &[20.0, 20.2, 20.1, 19.8]),
            ],
        ),
    );
}

#[test]
fn confidence_takes_three_forms_from_fifty_percent() {
    let folder = temp_folder();
    trial(folder.path());
    for bad in ["0.5%", "0.3", "100", "1.5"] {
        let run = trialyst(folder.path(), &["run", "trial.xlsx", "--no-write", "--confidence", bad]);
        run.expect_code(2);
        assert!(run.stderr().contains("0.95, 95 or 95%"), "{}", run.report());
    }
    for good in ["0.9", "90", "90%"] {
        trialyst(
            folder.path(),
            &["run", "trial.xlsx", "--no-write", "--confidence", good],
        )
        .expect_code(0);
    }
}

#[test]
fn jobs_must_be_at_least_one() {
    let folder = temp_folder();
    trial(folder.path());
    let run = trialyst(folder.path(), &["run", "trial.xlsx", "--no-write", "--jobs", "0"]);
    run.expect_code(2);
    assert!(run.stderr().contains("1 or more"), "{}", run.report());
}

#[test]
fn a_one_condition_size_question_is_a_usage_error() {
    let folder = temp_folder();
    let run = trialyst(
        folder.path(),
        &["size", "--conditions", "1", "--difference", "2", "--sd", "1"],
    );
    run.expect_code(2);
}

#[test]
fn a_contrast_or_direction_naming_nothing_is_a_usage_error_listing_the_names() {
    let folder = temp_folder();
    trial(folder.path());
    let run = trialyst(
        folder.path(),
        &["run", "trial.xlsx", "--no-write", "--contrast", "West - North"],
    );
    run.expect_code(2);
    assert!(
        run.stderr().contains("names nothing in the table") && run.stderr().contains("North"),
        "{}",
        run.report()
    );
    let run = trialyst(
        folder.path(),
        &["run", "trial.xlsx", "--no-write", "--direction", "Gloss=higher"],
    );
    run.expect_code(2);
    assert!(run.stderr().contains("'Tensile (MPa)'"), "{}", run.report());
}

/// `--control` names the condition the others are compared with; the Summary's reading
/// says which differ from it (the Dunnett figures themselves are checked against
/// references in the engine's tests), and a control naming no condition is a usage
/// error listing the conditions.
#[test]
fn control_names_the_condition_the_others_are_compared_with() {
    let folder = temp_folder();
    trial(folder.path());
    let run = trialyst(
        folder.path(),
        &["run", "trial.xlsx", "--no-write", "--json", "--control", "North"],
    );
    run.expect_code(0);
    let document: serde_json::Value = serde_json::from_str(run.stdout().trim()).expect("one JSON document");
    let details = document["responses"][0]["verdict"]["details"]
        .as_array()
        .expect("details");
    let line = details
        .iter()
        .filter_map(|detail| detail.as_str())
        .find(|detail| detail.starts_with("Against the control North"))
        .unwrap_or_else(|| panic!("no control line in {details:?}"));
    // South averages 21.1 against North's 20.15; East (20.025) does not differ clearly.
    assert!(
        line.contains("South is higher by 0.95 MPa")
            && line.ends_with("the other condition does not differ clearly from it."),
        "{line}"
    );
    let run = trialyst(folder.path(), &["run", "trial.xlsx", "--no-write", "--control", "West"]);
    run.expect_code(2);
    assert!(
        run.stderr().contains("the control 'West' names nothing in the table") && run.stderr().contains("'East'"),
        "{}",
        run.report()
    );
}

/// A value that stands out is named by its cell in the Summary's reading, not only on
/// the sheet of checks.
#[test]
fn an_outlier_is_named_by_its_cell_in_the_reading() {
    let folder = temp_folder();
    write_rows(
        &folder.path().join("trial.xlsx"),
        "Runs",
        &long_rows(
            "Supplier",
            "Tensile (MPa)",
            &[
                ("North", &[20.1, 20.4, 19.9, 20.2, 20.0, 20.3, 26.0]),
                ("South", &[21.0, 21.3, 20.9, 21.2, 21.1, 20.8]),
                ("East", &[20.0, 20.2, 20.1, 19.8, 20.1, 19.9]),
            ],
        ),
    );
    let run = trialyst(folder.path(), &["run", "trial.xlsx", "--no-write", "--json"]);
    run.expect_code(0);
    let document: serde_json::Value = serde_json::from_str(run.stdout().trim()).expect("one JSON document");
    let details = document["responses"][0]["verdict"]["details"]
        .as_array()
        .expect("details");
    // The header is row 1; North's seventh value, 26, is in B8.
    assert!(
        details.iter().filter_map(|detail| detail.as_str()).any(|detail| detail
            == "Check — Outliers: 1 value stands out beyond what chance allows: 26 at B8 (North); check it before trusting the comparison."),
        "{details:?}"
    );
}
