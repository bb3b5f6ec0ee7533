//! The command line end to end: the built `trialyst` binary is run in a
//! fresh temporary folder on workbooks the test writes, and its results
//! workbook, JSON lines, messages and exit codes are checked against the
//! engine (the service called in-process on the same file) and against an
//! outside reference (scipy).

use service::report::names;
use service::{analyse_workbook, AnalysisRequest};

use crate::common::{
    as_number, assert_close, long_rows, read_all_sheets, row_after, sha256_of, temp_folder, trialyst, write_rows, Put,
    REFERENCE_RELATIVE,
};

/// Three mould temperatures, unequal group sizes (invented data).
const LOW: [f64; 6] = [12.1, 11.8, 12.6, 12.3, 11.9, 12.4];
const MID: [f64; 5] = [12.9, 13.2, 12.7, 13.5, 13.0];
const HIGH: [f64; 7] = [11.2, 11.9, 11.5, 11.0, 11.6, 11.4, 11.8];

// scipy 1.17.1: scipy.stats.f_oneway(LOW, MID, HIGH) -> statistic, pvalue;
// SS from numpy 2 sums of squared deviations about the group and grand means.
const SCIPY_F: f64 = 37.453495250928455;
const SCIPY_P: f64 = 1.4697162251091664e-06;
const SCIPY_SS_BETWEEN: f64 = 7.23553968253967;
const SCIPY_SS_WITHIN: f64 = 1.4489047619047626;
// numpy 2: numpy.mean of each group.
const SCIPY_MEANS: [f64; 3] = [12.183333333333332, 13.059999999999999, 11.485714285714286];

fn trial_rows() -> Vec<Vec<Put>> {
    long_rows(
        "Mould temperature",
        "Thickness (mm)",
        &[("low", &LOW), ("mid", &MID), ("high", &HIGH)],
    )
}

#[test]
fn run_writes_results_that_match_engine_and_reference() {
    let folder = temp_folder();
    let source = folder.path().join("press trial.xlsx");
    write_rows(&source, "Trial", &trial_rows());
    let hash_before = sha256_of(&source);

    let run = trialyst(folder.path(), &["run", "press trial.xlsx"]);
    run.expect_code(0);
    assert_eq!(
        sha256_of(&source),
        hash_before,
        "the original was changed{}",
        run.report()
    );
    let results_path = folder.path().join("press trial.results.xlsx");
    assert!(results_path.is_file(), "no results workbook{}", run.report());

    let sheets = read_all_sheets(&results_path);
    let sheet_names: Vec<&str> = sheets.iter().map(|(name, _)| name.as_str()).collect();
    assert_eq!(
        sheet_names,
        [
            names::SUMMARY,
            names::CONDITIONS,
            names::ANOVA,
            service::report::assessment::names::SIMULTANEOUS,
            names::PAIRS,
            service::report::assessment::names::CHECKS,
            service::report::assessment::names::OTHER,
            names::FINDINGS,
            names::PROVENANCE,
            names::RESULTS_DOCUMENT
        ],
        "sheets of the results workbook"
    );

    // The engine in-process on the same file.
    let engine = analyse_workbook(&source, &AnalysisRequest::default()).expect("the engine analyses the file");
    let fit = engine.responses[0].fit().expect("analysed");
    let sheet = |name: &str| {
        &sheets
            .iter()
            .find(|(sheet_name, _)| sheet_name == name)
            .expect("sheet")
            .1
    };

    let anova = sheet(names::ANOVA);
    let between = row_after(anova, "Thickness (mm)", "between conditions").expect("a between line");
    let within = row_after(anova, "Thickness (mm)", "within conditions").expect("a within line");
    let written = [
        ("df between", as_number(between[1], "df"), fit.anova[0].df, 2.0),
        (
            "SS between",
            as_number(between[2], "SS"),
            fit.anova[0].ss,
            SCIPY_SS_BETWEEN,
        ),
        (
            "F",
            as_number(between[4], "F"),
            fit.anova[0].f.unwrap_or(f64::NAN),
            SCIPY_F,
        ),
        (
            "p",
            as_number(between[5], "p"),
            fit.anova[0].p.unwrap_or(f64::NAN),
            SCIPY_P,
        ),
        ("df within", as_number(within[1], "df"), fit.anova[1].df, 15.0),
        (
            "SS within",
            as_number(within[2], "SS"),
            fit.anova[1].ss,
            SCIPY_SS_WITHIN,
        ),
        (
            "MS within",
            as_number(within[3], "MS"),
            fit.anova[1].ms.unwrap_or(f64::NAN),
            SCIPY_SS_WITHIN / 15.0,
        ),
    ];
    for (what, in_workbook, in_engine, reference) in written {
        // The workbook stores the engine's f64 unrounded (display formats only).
        assert_close(in_workbook, in_engine, 1e-15, &format!("{what}: workbook vs engine"));
        assert_close(
            in_engine,
            reference,
            REFERENCE_RELATIVE,
            &format!("{what}: engine vs scipy"),
        );
    }

    let conditions = sheet(names::CONDITIONS);
    for (label, reference) in ["low", "mid", "high"].iter().zip(SCIPY_MEANS) {
        let row = row_after(conditions, "Thickness (mm)", label).expect("a row per condition");
        let mean = as_number(row[2], "mean");
        let engine_mean = fit
            .conditions
            .iter()
            .find(|condition| condition.name == *label)
            .expect("condition")
            .mean;
        assert_close(
            mean,
            engine_mean,
            1e-15,
            &format!("mean of {label}: workbook vs engine"),
        );
        assert_close(
            mean,
            reference,
            REFERENCE_RELATIVE,
            &format!("mean of {label}: vs numpy"),
        );
    }

    // Provenance names the source's hash, which is the hash of the untouched original.
    let provenance = sheet(names::PROVENANCE);
    let hash_row = row_after(provenance, "item", "source SHA-256").expect("a hash row");
    assert_eq!(hash_row[1].to_string(), hash_before);
}

#[test]
fn json_lines_one_object_per_workbook_with_documented_fields() {
    let folder = temp_folder();
    write_rows(&folder.path().join("a.xlsx"), "Trial", &trial_rows());
    write_rows(&folder.path().join("b.xlsx"), "Trial", &trial_rows());
    std::fs::write(folder.path().join("c.xlsx"), "not a workbook\n").expect("written");

    let run = trialyst(
        folder.path(),
        &["run", "--json", "--no-write", "a.xlsx", "b.xlsx", "c.xlsx"],
    );
    run.expect_code(1);
    let lines: Vec<serde_json::Value> = run
        .stdout()
        .lines()
        .map(|line| serde_json::from_str(line).unwrap_or_else(|error| panic!("not JSON ({error}): {line}")))
        .collect();
    assert_eq!(lines.len(), 3, "one object per workbook{}", run.report());
    for (line, name) in lines.iter().zip(["a.xlsx", "b.xlsx"]) {
        assert_eq!(line["status"], "analysed");
        assert_eq!(line["format_version"], service::RESULTS_FORMAT_VERSION);
        assert_eq!(line["tool"], "trialyst");
        assert_eq!(line["source"]["file_name"], name);
        assert_eq!(line["source"]["sha256"], sha256_of(&folder.path().join(name)));
        assert_eq!(
            line["results_file"],
            serde_json::Value::Null,
            "--no-write writes nothing"
        );
        assert_eq!(line["table"]["layout"], "long");
        assert_eq!(line["table"]["n_records"], 18);
        let response = &line["responses"][0];
        assert_eq!(response["name"], "Thickness (mm)");
        assert_eq!(response["unit"], "mm");
        assert_eq!(response["status"], "analysed");
        let f = response["one_way"]["anova"][0]["f"].as_f64().expect("F is a number");
        assert_close(f, SCIPY_F, REFERENCE_RELATIVE, "F in JSON vs scipy");
        let p = response["one_way"]["anova"][0]["p"].as_f64().expect("p is a number");
        assert_close(p, SCIPY_P, REFERENCE_RELATIVE, "p in JSON vs scipy");
        assert!(line["findings"].is_array());
        assert!(line["created_at"].is_string());
        assert!(line["timings"]["read_ms"].is_number());
    }
    let failed = &lines[2];
    assert_eq!(failed["status"], "failed");
    assert_eq!(failed["source"]["path"], "c.xlsx");
    let error = failed["error"].as_str().expect("an error text");
    assert!(error.contains("c.xlsx") && error.contains("not a workbook"), "{error}");
    assert!(
        !folder.path().join("a.results.xlsx").exists(),
        "--no-write wrote a file"
    );
}

#[test]
fn exit_codes_are_zero_one_and_two() {
    let folder = temp_folder();
    write_rows(&folder.path().join("good.xlsx"), "Trial", &trial_rows());
    std::fs::write(folder.path().join("bad.xlsx"), b"").expect("written");

    trialyst(folder.path(), &["run", "--no-write", "good.xlsx"]).expect_code(0);
    trialyst(folder.path(), &["run", "--no-write", "good.xlsx", "bad.xlsx"]).expect_code(1);
    trialyst(folder.path(), &["run", "--no-write", "missing.xlsx"]).expect_code(1);
    // Usage errors: an unparsable option value, an unknown option, no paths, a bad layout.
    let run = trialyst(folder.path(), &["run", "--confidence", "abc", "good.xlsx"]);
    run.expect_code(2);
    assert!(run.stderr().contains("--confidence"), "{}", run.report());
    trialyst(folder.path(), &["run", "--no-such-option", "good.xlsx"]).expect_code(2);
    trialyst(folder.path(), &["run"]).expect_code(2);
    trialyst(folder.path(), &["inspect", "--layout", "sideways", "good.xlsx"]).expect_code(2);
}

#[test]
fn a_failing_workbook_prints_its_cause_chain_on_one_line_and_the_run_goes_on() {
    let folder = temp_folder();
    // Sorted order puts the broken one first, so the good one must come after a failure.
    std::fs::write(folder.path().join("a broken.xlsx"), "header,value\nx,1\n").expect("written");
    write_rows(&folder.path().join("b good.xlsx"), "Trial", &trial_rows());

    let run = trialyst(folder.path(), &["run", "."]);
    run.expect_code(1);
    let stderr = run.stderr();
    let failure_lines: Vec<&str> = stderr.lines().filter(|line| line.starts_with("failed ")).collect();
    assert_eq!(failure_lines.len(), 1, "one failure line{}", run.report());
    let line = failure_lines[0];
    assert!(
        line.contains("a broken.xlsx") && line.contains("is not a workbook") && line.contains("first bytes"),
        "the cause chain names the file and the cause: {line}"
    );
    assert!(stderr.contains("1 analysed, 1 failed"), "{}", run.report());
    assert!(folder.path().join("b good.results.xlsx").is_file(), "{}", run.report());
}

#[test]
fn folder_scans_skip_lock_files_temporary_files_and_our_results() {
    let folder = temp_folder();
    let rows = trial_rows();
    // Every skipped file is a valid workbook, so analysing it would show in the count.
    for name in [
        "week 1.xlsx",
        "~$week 1.xlsx",
        ".~lock.week 1.xlsx#",
        "week 0.results.xlsx",
        "week 0.problems.xlsx",
    ] {
        write_rows(&folder.path().join(name), "Trial", &rows);
    }
    let run = trialyst(folder.path(), &["run", "."]);
    run.expect_code(0);
    assert!(run.stderr().contains("1 analysed, 0 failed"), "{}", run.report());
    assert!(folder.path().join("week 1.results.xlsx").is_file());
    // A second run must not pick up the results file the first one wrote.
    let again = trialyst(folder.path(), &["run", "."]);
    again.expect_code(0);
    assert!(again.stderr().contains("1 analysed, 0 failed"), "{}", again.report());
    assert!(!folder.path().join("week 1.results.results.xlsx").exists());
}

#[test]
fn inspect_shows_the_table_and_every_finding_with_its_cell() {
    let folder = temp_folder();
    let mut rows = trial_rows();
    rows[3][1] = Put::Text("n/a");
    write_rows(&folder.path().join("trial.xlsx"), "Trial", &rows);
    let hash_before = sha256_of(&folder.path().join("trial.xlsx"));

    let run = trialyst(folder.path(), &["inspect", "trial.xlsx"]);
    run.expect_code(0);
    let stdout = run.stdout();
    assert!(
        stdout.contains("table: sheet 'Trial', cells A1:B19, Long layout, 18 records"),
        "{}",
        run.report()
    );
    assert!(
        stdout.contains("factor 'Mould temperature' (column A): 3 levels: low, mid, high"),
        "{}",
        run.report()
    );
    assert!(stdout.contains("responses: Thickness (mm)"), "{}", run.report());
    assert!(stdout.contains("Trial!B4: found text 'n/a'"), "{}", run.report());
    assert_eq!(
        std::fs::read_dir(folder.path()).expect("listable").count(),
        1,
        "inspect wrote nothing"
    );

    let json = trialyst(folder.path(), &["inspect", "--json", "trial.xlsx"]);
    json.expect_code(0);
    let value: serde_json::Value = serde_json::from_str(json.stdout().trim()).expect("one JSON object");
    assert_eq!(value["table"]["sheet"], "Trial");
    assert_eq!(
        value["table"]["factors"][0]["levels"],
        serde_json::json!(["low", "mid", "high"])
    );
    assert_eq!(value["findings"][0]["kind"], "text-in-numbers");
    assert_eq!(value["findings"][0]["cell"], "B4");
    assert_eq!(value["sheets"][0]["name"], "Trial");
    assert_eq!(sha256_of(&folder.path().join("trial.xlsx")), hash_before);

    let missing = trialyst(folder.path(), &["inspect", "nothing here.xlsx"]);
    missing.expect_code(1);
    assert!(missing.stderr().contains("nothing here.xlsx"), "{}", missing.report());
}

/// The check every results workbook of this suite goes through
/// (`common::check_named_sheets_exist`, called by `common::trialyst`) fails
/// when the text names a sheet the workbook lacks: a workbook with the real
/// results document but a Summary pointing to a sheet that is not there.
#[test]
fn the_named_sheets_check_fails_on_a_sheet_that_is_missing() {
    use workbook_io::write::{Book, Look, Sheet, Value};
    let folder = temp_folder();
    let source = folder.path().join("press trial.xlsx");
    write_rows(&source, "Trial", &trial_rows());
    let results = analyse_workbook(&source, &AnalysisRequest::default()).expect("analysed");
    let mut summary = Sheet::new(names::SUMMARY);
    summary.put(
        0,
        0,
        Value::text("Sheet 'Trial', cells A1:B19; details: sheets 'Summary' and 'Model checks'."),
        Look::Plain,
    );
    let written = folder.path().join("hand made.results.xlsx");
    let book = Book {
        sheets: vec![summary, service::report::document::document_sheet(&results)],
    };
    workbook_io::write::write_book(&book, &written).expect("written");
    let outcome = std::panic::catch_unwind(|| crate::common::check_named_sheets_exist(&written));
    let message = outcome
        .expect_err("a missing sheet fails the check")
        .downcast_ref::<String>()
        .cloned()
        .unwrap_or_default();
    assert!(
        message.contains("'Model checks'") && !message.contains("names the sheet 'Trial'"),
        "{message}"
    );
}
