//! Print layout as a tested property: every kind of workbook the program writes (results
//! of the demo's one-way and factorial trials, the roll-up, a problems workbook, a plan
//! and a power table) passes the print checks made on the xlsx (see
//! `common::print_check`), and the checks themselves fail on a sheet laid out the way
//! that printed badly (fitted to the page, a wrapped header in a one-line row).

use crate::common::blessing::repository_path;
use crate::common::print_check::{assert_prints_well, print_problems};
use crate::common::{our_workbooks_under, temp_folder, trialyst};

#[test]
fn every_workbook_of_the_demo_a_plan_and_a_power_table_prints_well() {
    let folder = temp_folder();
    let samples = repository_path("sample-workbooks");
    for entry in std::fs::read_dir(&samples)
        .expect("the demo folder")
        .filter_map(Result::ok)
    {
        let path = entry.path();
        if path.extension().is_some_and(|ext| ext == "xlsx") && !path.to_string_lossy().contains(".results.") {
            std::fs::copy(&path, folder.path().join(entry.file_name())).expect("copy a demo workbook");
        }
    }
    // A workbook that cannot be analysed, so that the batch has a failure in its roll-up.
    std::fs::write(folder.path().join("not-a-workbook.xlsx"), b"plain text, not a workbook").expect("write");
    // `trialyst` runs the print checks on every workbook a run writes.
    trialyst(folder.path(), &["run", ".", "--rollup", "rollup.xlsx"]).expect_code(1);
    trialyst(
        folder.path(),
        &[
            "plan",
            "--factor",
            "Temperature=160,180",
            "--factor",
            "Pressure=5,7",
            "--factor",
            "Time=20,30",
            "--factor",
            "Gate=A,B",
            "--factor",
            "Speed=1,2",
            "--runs",
            "8",
            "--centre-points",
            "2",
            "--response",
            "Yield (%)",
            "--seed",
            "7",
            "--out",
            "plan.xlsx",
        ],
    )
    .expect_code(0);
    trialyst(
        folder.path(),
        &[
            "size",
            "--conditions",
            "4",
            "--difference",
            "2",
            "--sd",
            "1.5",
            "--out",
            "power.xlsx",
        ],
    )
    .expect_code(0);
    trialyst(
        folder.path(),
        &[
            "size",
            "--factors",
            "4",
            "--effect",
            "2",
            "--sd",
            "1.5",
            "--runs",
            "8",
            "--out",
            "power-two-level.xlsx",
        ],
    )
    .expect_code(0);
    let written: Vec<String> = our_workbooks_under(folder.path())
        .into_iter()
        .map(|(path, _)| path.file_name().unwrap_or_default().to_string_lossy().into_owned())
        .collect();
    for expected in ["rollup.xlsx", "plan.xlsx", "power.xlsx", "power-two-level.xlsx"] {
        assert!(
            written.iter().any(|name| name == expected),
            "{expected} written: {written:?}"
        );
    }
    assert!(
        written.iter().filter(|name| name.ends_with(".results.xlsx")).count() >= 3,
        "{written:?}"
    );
    for (path, _) in our_workbooks_under(folder.path()) {
        let name = path.file_name().unwrap_or_default().to_string_lossy().into_owned();
        let ours = name.ends_with(".results.xlsx")
            || ["rollup.xlsx", "plan.xlsx", "power.xlsx", "power-two-level.xlsx"].contains(&name.as_str());
        if ours {
            assert_prints_well(&path);
        }
    }
    // The problems workbook (the watcher writes it beside a workbook it cannot analyse).
    let problems = service::report::problems::build_problems_book(
        "not-a-workbook.xlsx",
        "2026-12-04T09:00:00Z",
        &[service::Problem {
            place: String::new(),
            what: "The file is not a workbook: it holds plain text, not the zip container of an xlsx file. ".repeat(3),
            fix: "Save the trial from the spreadsheet program as an .xlsx workbook and drop it in again.".into(),
        }],
    );
    let problems_path = folder.path().join("not-a-workbook.problems.xlsx");
    workbook_io::write::write_book(&problems, &problems_path).expect("the problems workbook is written");
    assert_prints_well(&problems_path);
}

#[test]
fn the_print_checks_fail_on_a_fitted_sheet_and_a_short_wrapped_header() {
    let folder = temp_folder();
    let path = folder.path().join("badly-laid-out.xlsx");
    let mut workbook = rust_xlsxwriter::Workbook::new();
    let sheet = workbook.add_worksheet();
    sheet.set_print_fit_to_pages(1, 0);
    sheet.set_column_width(0, 8.0).expect("width");
    let wrapped = rust_xlsxwriter::Format::new().set_text_wrap();
    sheet
        .write_string_with_format(0, 0, "p-value (unadjusted) of the pair", &wrapped)
        .expect("header");
    sheet.set_row_height(1, 40.0).expect("height");
    sheet.write_string(1, 0, "a value").expect("value");
    workbook.save(&path).expect("save");
    let problems = print_problems(&path);
    assert!(
        problems.iter().any(|p| p.contains("fitted to the page")),
        "{problems:?}"
    );
    assert!(
        problems.iter().any(|p| p.contains("wrapped text in A1")),
        "{problems:?}"
    );
    assert!(
        problems.iter().any(|p| p.contains("A2 is bottom-aligned")),
        "{problems:?}"
    );
}
