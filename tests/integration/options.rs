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
