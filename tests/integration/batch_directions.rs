//! A direction for one response given on the command line for a folder of trials
//! applies where that response is found; the other workbooks are analysed with a note,
//! not failed. For one workbook named alone, a direction that names nothing stays a
//! usage error (exit code 2). Expectation from common practice: a week's folder holds
//! trials of different responses.

use crate::common::{long_rows, temp_folder, trialyst, write_rows};

#[test]
fn a_direction_for_one_response_does_not_fail_the_other_workbooks_of_a_batch() {
    let folder = temp_folder();
    write_rows(
        &folder.path().join("peel.xlsx"),
        "Runs",
        &long_rows(
            "Primer",
            "Peel strength (N)",
            &[("P1", &[41.0, 42.0, 41.5]), ("P2", &[38.0, 38.5, 37.9])],
        ),
    );
    write_rows(
        &folder.path().join("gloss.xlsx"),
        "Runs",
        &long_rows(
            "Line",
            "Gloss",
            &[("L1", &[80.0, 81.0, 80.4]), ("L2", &[84.0, 83.2, 84.4])],
        ),
    );
    let run = trialyst(
        folder.path(),
        &["run", ".", "--no-write", "--direction", "Peel strength (N)=higher"],
    );
    run.expect_code(0);
    let said = format!("{}{}", run.stdout(), run.stderr());
    assert!(
        said.contains("2 analysed, 0 failed"),
        "both workbooks analysed{}",
        run.report()
    );
    let alone = trialyst(
        folder.path(),
        &[
            "run",
            "gloss.xlsx",
            "--no-write",
            "--direction",
            "Peel strength (N)=higher",
        ],
    );
    alone.expect_code(2);
    assert!(
        alone.stderr().contains("names nothing in the table"),
        "{}",
        alone.report()
    );
}
