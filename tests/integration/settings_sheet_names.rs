//! A sheet of settings under a name of the user's own ("Settings", "Setup") is not
//! read as trialyst's settings (only a sheet named 'trialyst settings' is), but it is
//! never ignored in silence: a finding at its first setting says the settings were not
//! applied and how to apply them. Expectation from common practice: what an engineer
//! wrote down as an instruction must either count or be reported.

use crate::common::{long_rows, put_rows, temp_folder, trialyst, Put};

fn write_with_settings_sheet(path: &std::path::Path, settings_name: &str) {
    let mut book = rust_xlsxwriter::Workbook::new();
    let data = book.add_worksheet();
    data.set_name("Data").expect("valid name");
    put_rows(
        data,
        &long_rows(
            "Mixer",
            "Viscosity",
            &[
                ("slow", &[1180.0, 1184.0, 1177.0]),
                ("medium", &[1150.0, 1146.0, 1153.0]),
                ("fast", &[1105.0, 1109.0, 1101.0]),
            ],
        ),
    );
    let settings = book.add_worksheet();
    settings.set_name(settings_name).expect("valid name");
    put_rows(
        settings,
        &[
            vec![Put::Text("setting"), Put::Text("value")],
            vec![Put::Text("confidence"), Put::Text("90%")],
            vec![Put::Text("direction"), Put::Text("lower")],
        ],
    );
    book.save(path).expect("saved");
}

#[test]
fn a_settings_sheet_under_another_name_is_reported_not_applied() {
    let folder = temp_folder();
    let file = folder.path().join("mixer.xlsx");
    write_with_settings_sheet(&file, "Settings");
    let run = trialyst(folder.path(), &["inspect", "mixer.xlsx"]);
    run.expect_code(0);
    let out = run.stdout();
    assert!(
        out.contains("Settings!B2")
            && out.contains("look like trialyst settings ('confidence', 'direction')")
            && out.contains("rename the sheet to 'trialyst settings'"),
        "no finding for the look-alike settings sheet{}",
        run.report()
    );
    // Not applied: the analysis keeps the default confidence.
    let json = trialyst(folder.path(), &["run", "--json", "--no-write", "mixer.xlsx"]);
    json.expect_code(0);
    assert!(json.stdout().contains("\"confidence\":0.95"), "{}", json.report());
}

#[test]
fn the_settings_sheet_by_its_own_name_is_applied_without_that_finding() {
    let folder = temp_folder();
    let file = folder.path().join("mixer.xlsx");
    write_with_settings_sheet(&file, "trialyst settings");
    let run = trialyst(folder.path(), &["run", "--json", "--no-write", "mixer.xlsx"]);
    run.expect_code(0);
    let out = run.stdout();
    assert!(out.contains("\"confidence\":0.9"), "{}", run.report());
    assert!(!out.contains("look like trialyst settings"), "{}", run.report());
}
