//! Every kind of data finding, with the cell it names and the words it says,
//! on small workbooks written for each case; and text that looks like a
//! formula coming back as text in the results workbook.
//!
//! The expected addresses follow from where each test writes its cells
//! (common practice: A1 addresses, row 1 the header).

use std::path::Path;

use rust_xlsxwriter::{ExcelDateTime, Format, Formula, Workbook};
use service::{analyse_workbook, inspect_workbook, AnalysisRequest};
use workbook_io::layout::{Finding, FindingKind};

use crate::common::{
    put_rows, read_all_sheets, temp_folder, trialyst, write_rows, zip_entry_names, zip_entry_text, Put,
};

/// A long table with two conditions of four values each, below a header.
fn base_rows() -> Vec<Vec<Put>> {
    let mut rows = vec![vec![Put::Text("Condition"), Put::Text("Weight (g)")]];
    for (label, values) in [("old", [10.1, 10.4, 9.9, 10.2]), ("new", [10.8, 11.0, 10.7, 11.1])] {
        for value in values {
            rows.push(vec![Put::Text(label), Put::Number(value)]);
        }
    }
    rows
}

fn findings_of(path: &Path) -> Vec<Finding> {
    match analyse_workbook(path, &AnalysisRequest::default()) {
        Ok(results) => results.findings,
        Err(error) => panic!("the workbook was not analysed: {error}"),
    }
}

/// The one finding of a kind, failing with the full list when there is not exactly one.
fn only(findings: &[Finding], kind: FindingKind) -> Finding {
    let matching: Vec<&Finding> = findings.iter().filter(|finding| finding.kind == kind).collect();
    assert_eq!(matching.len(), 1, "exactly one {kind:?} finding in {findings:#?}");
    matching[0].clone()
}

fn check(finding: &Finding, sheet: &str, cell: &str, message_parts: &[&str]) {
    assert_eq!(finding.sheet, sheet, "{finding:#?}");
    assert_eq!(finding.cell.as_deref(), Some(cell), "{finding:#?}");
    for part in message_parts {
        assert!(finding.message.contains(part), "message lacks '{part}': {finding:#?}");
    }
    assert!(!finding.action.is_empty(), "{finding:#?}");
}

fn analysed(rows: &[Vec<Put>]) -> Vec<Finding> {
    let folder = temp_folder();
    let path = folder.path().join("trial.xlsx");
    write_rows(&path, "Trial", rows);
    findings_of(&path)
}

#[test]
fn a_clean_table_has_no_findings() {
    assert_eq!(analysed(&base_rows()), Vec::new());
}

#[test]
fn text_in_numbers() {
    let mut rows = base_rows();
    rows[3][1] = Put::Text("about 10");
    let finding = only(&analysed(&rows), FindingKind::TextInNumbers);
    check(
        &finding,
        "Trial",
        "B4",
        &["text 'about 10'", "'Weight (g)'", "left out"],
    );
    assert_eq!(finding.found, "about 10");
}

#[test]
fn a_number_stored_as_text_is_read_and_reported() {
    // "10.3" typed as text, and "11.2 g" with the column's own unit: both read, each
    // reported at its cell; "10,6" (a decimal comma or a thousands separator, which
    // cannot be told apart) and "10.2 kg" (another unit) are left out.
    let mut rows = base_rows();
    rows[3][1] = Put::Text("10.3");
    rows[6][1] = Put::Text(" 11.2 g");
    rows[7][1] = Put::Text("10,6");
    rows[8][1] = Put::Text("10.2 kg");
    let folder = temp_folder();
    let path = folder.path().join("trial.xlsx");
    write_rows(&path, "Trial", &rows);
    let results = analyse_workbook(&path, &AnalysisRequest::default()).expect("analysed");
    let texts: Vec<&Finding> = results
        .findings
        .iter()
        .filter(|finding| finding.kind == FindingKind::TextInNumbers)
        .collect();
    assert_eq!(texts.len(), 4, "{texts:#?}");
    check(
        texts[0],
        "Trial",
        "B4",
        &["the number '10.3' stored as text", "read as 10.3"],
    );
    check(
        texts[1],
        "Trial",
        "B7",
        &[
            "the number '11.2 g' stored as text, with the column's unit g",
            "read as 11.2",
        ],
    );
    check(texts[2], "Trial", "B8", &["text '10,6'", "left out"]);
    check(texts[3], "Trial", "B9", &["text '10.2 kg'", "left out"]);
    // 'old' has 10.3 read from text beside 10.1, 10.4 and 10.2 typed; 'new' has 10.8
    // typed and 11.2 read.
    let fit = results.responses[0].fit().expect("analysed");
    let mean_of = |name: &str| {
        let condition = fit
            .conditions
            .iter()
            .find(|condition| condition.name == name)
            .expect(name);
        (condition.n, condition.mean)
    };
    let (n_old, mean_old) = mean_of("old");
    assert_eq!(n_old, 4);
    assert!(
        (mean_old - (10.1 + 10.4 + 10.3 + 10.2) / 4.0).abs() < 1e-12,
        "{mean_old}"
    );
    let (n_new, mean_new) = mean_of("new");
    assert_eq!(n_new, 2);
    assert!((mean_new - (10.8 + 11.2) / 2.0).abs() < 1e-12, "{mean_new}");
}

/// Writes the base table with a formula whose cached result is an error value at B3.
fn with_error_formula(result: &str) -> Vec<Finding> {
    let folder = temp_folder();
    let path = folder.path().join("trial.xlsx");
    let mut book = Workbook::new();
    let sheet = book.add_worksheet();
    sheet.set_name("Trial").expect("valid");
    let mut rows = base_rows();
    rows[2][1] = Put::Blank;
    put_rows(sheet, &rows);
    sheet
        .write_formula(2, 1, Formula::new("=1/0").set_result(result))
        .expect("writable");
    book.save(&path).expect("saved");
    findings_of(&path)
}

#[test]
fn not_available_error_value() {
    let finding = only(&with_error_formula("#N/A"), FindingKind::ErrorValue);
    check(&finding, "Trial", "B3", &["an error value '#N/A'", "left out"]);
}

#[test]
fn division_by_zero_error_value() {
    let finding = only(&with_error_formula("#DIV/0!"), FindingKind::ErrorValue);
    check(&finding, "Trial", "B3", &["an error value '#DIV/0!'"]);
}

#[test]
fn blank_value_in_a_long_table() {
    let mut rows = base_rows();
    rows[4][1] = Put::Blank;
    let finding = only(&analysed(&rows), FindingKind::BlankValue);
    check(&finding, "Trial", "B5", &["no value for 'Weight (g)'"]);
}

#[test]
fn blank_value_between_values_in_a_wide_table() {
    let rows = vec![
        vec![Put::Text("old"), Put::Text("new")],
        vec![Put::Number(10.1), Put::Number(10.8)],
        vec![Put::Blank, Put::Number(11.0)],
        vec![Put::Number(9.9), Put::Number(10.7)],
        vec![Put::Number(10.2), Put::Number(11.1)],
    ];
    let finding = only(&analysed(&rows), FindingKind::BlankValue);
    check(&finding, "Trial", "A3", &["a blank between values of 'old'"]);
}

#[test]
fn blank_label() {
    let mut rows = base_rows();
    rows[6][0] = Put::Blank;
    let finding = only(&analysed(&rows), FindingKind::BlankLabel);
    check(
        &finding,
        "Trial",
        "A7",
        &["'Condition' label is blank", "row was left out"],
    );
}

#[test]
fn duplicated_header() {
    let mut rows = base_rows();
    rows[0].push(Put::Text("weight (g)"));
    for (index, row) in rows.iter_mut().enumerate().skip(1) {
        row.push(Put::Number(20.0 + index as f64 * 0.37 % 1.0));
    }
    let finding = only(&analysed(&rows), FindingKind::DuplicateHeader);
    check(
        &finding,
        "Trial",
        "C1",
        &["'weight (g)' is used by an earlier column", "'weight (g) (2)'"],
    );
}

#[test]
fn blank_header_over_data() {
    let mut rows = base_rows();
    rows[0].push(Put::Blank);
    rows[0].push(Put::Text("Length (mm)"));
    for (index, row) in rows.iter_mut().enumerate().skip(1) {
        row.push(Put::Number(5.0 + (index % 3) as f64));
        row.push(Put::Number(50.0 + (index % 4) as f64));
    }
    let finding = only(&analysed(&rows), FindingKind::BlankHeader);
    check(&finding, "Trial", "C1", &["header cell is blank", "'column C'"]);
}

/// Writes the base table with one special response cell written by `put` at B4.
fn with_special_cell(put: impl FnOnce(&mut rust_xlsxwriter::Worksheet)) -> Vec<Finding> {
    let folder = temp_folder();
    let path = folder.path().join("trial.xlsx");
    let mut book = Workbook::new();
    let sheet = book.add_worksheet();
    sheet.set_name("Trial").expect("valid");
    let mut rows = base_rows();
    rows[3][1] = Put::Blank;
    put_rows(sheet, &rows);
    put(sheet);
    book.save(&path).expect("saved");
    findings_of(&path)
}

#[test]
fn date_in_a_response_column() {
    let findings = with_special_cell(|sheet| {
        let date = ExcelDateTime::from_ymd(2024, 3, 15).expect("valid date");
        let format = Format::new().set_num_format("yyyy-mm-dd");
        sheet
            .write_datetime_with_format(3, 1, &date, &format)
            .expect("writable");
    });
    let finding = only(&findings, FindingKind::DateInNumbers);
    check(&finding, "Trial", "B4", &["found a date", "'Weight (g)'"]);
}

#[test]
fn boolean_in_a_response_column() {
    let findings = with_special_cell(|sheet| {
        sheet.write_boolean(3, 1, true).expect("writable");
    });
    let finding = only(&findings, FindingKind::BooleanInNumbers);
    check(&finding, "Trial", "B4", &["found TRUE/FALSE 'TRUE'"]);
}

#[test]
fn condition_with_fewer_than_two_values() {
    let mut rows = base_rows();
    rows.push(vec![Put::Text("trial"), Put::Number(10.5)]);
    let finding = only(&analysed(&rows), FindingKind::TooFewValues);
    check(
        &finding,
        "Trial",
        "B10",
        &["condition 'trial' has only one value", "'Weight (g)'"],
    );
}

#[test]
fn all_blank_column() {
    let mut rows = base_rows();
    rows[0].push(Put::Text("Humidity (%)"));
    let finding = only(&analysed(&rows), FindingKind::EmptyColumn);
    check(
        &finding,
        "Trial",
        "C1",
        &["'Humidity (%)' has no values below its header"],
    );
}

#[test]
fn merged_header_cells() {
    let folder = temp_folder();
    let path = folder.path().join("trial.xlsx");
    let mut book = Workbook::new();
    let sheet = book.add_worksheet();
    sheet.set_name("Trial").expect("valid");
    let mut rows = base_rows();
    for (index, row) in rows.iter_mut().enumerate().skip(1) {
        row.push(Put::Number(10.0 + (index % 3) as f64 * 0.5));
    }
    put_rows(sheet, &rows);
    sheet
        .merge_range(0, 1, 0, 2, "Weight (g)", &Format::new())
        .expect("mergeable");
    book.save(&path).expect("saved");
    let results = analyse_workbook(&path, &AnalysisRequest::default()).expect("analysed");
    let finding = only(&results.findings, FindingKind::MergedHeader);
    check(
        &finding,
        "Trial",
        "B1:C1",
        &["header cells B1:C1 are merged", "'Weight (g) 1'"],
    );
    assert_eq!(results.table.responses, ["Weight (g) 1", "Weight (g) 2"]);
}

#[test]
fn similar_labels() {
    let mut rows = base_rows();
    rows[5][0] = Put::Text("New");
    rows[6][0] = Put::Text("New");
    let finding = only(&analysed(&rows), FindingKind::SimilarLabels);
    // A labels finding names the column, not one cell.
    check(
        &finding,
        "Trial",
        "A",
        &["'New', 'new'", "differ only in case or spacing"],
    );
}

#[test]
fn identifier_notes_and_run_number_columns() {
    let mut rows = vec![vec![
        Put::Text("Sample"),
        Put::Text("Condition"),
        Put::Text("Remarks"),
        Put::Text("Run"),
        Put::Text("Weight (g)"),
    ]];
    let weights = [10.1, 10.4, 9.9, 10.2, 10.8, 11.0, 10.7, 11.1, 10.3, 10.9];
    for (index, weight) in weights.iter().enumerate() {
        rows.push(vec![
            Put::Owned(format!("S-{:03}", 100 + index * 7)),
            Put::Text(if index % 2 == 0 { "old" } else { "new" }),
            if index == 3 {
                Put::Text("die changed")
            } else {
                Put::Blank
            },
            Put::Number(index as f64 + 1.0),
            Put::Number(*weight),
        ]);
    }
    let findings = analysed(&rows);
    let identifiers: Vec<&Finding> = findings
        .iter()
        .filter(|finding| finding.kind == FindingKind::IdentifierColumn)
        .collect();
    assert_eq!(identifiers.len(), 3, "{findings:#?}");
    check(
        identifiers[0],
        "Trial",
        "A1",
        &["'Sample' has a different label on almost every row", "identifier"],
    );
    check(
        identifiers[1],
        "Trial",
        "C1",
        &["'Remarks' is filled on fewer than half of the rows", "notes"],
    );
    check(identifiers[2], "Trial", "D1", &["'Run' counts up by one", "run number"]);
}

#[test]
fn wrong_extension() {
    let folder = temp_folder();
    let path = folder.path().join("trial.xls");
    write_rows(&path, "Trial", &base_rows());
    let finding = only(&findings_of(&path), FindingKind::Workbook);
    assert_eq!(finding.cell, None);
    assert_eq!(finding.found, ".xls");
    assert!(
        finding
            .message
            .contains("named .xls but its contents are an .xlsx workbook"),
        "{finding:#?}"
    );
}

#[test]
fn macro_enabled_workbook() {
    let folder = temp_folder();
    let path = folder.path().join("trial.xlsm");
    // A stand-in macro project: the reader only notes that one is present and never runs it.
    let project = folder.path().join("vbaProject.bin");
    std::fs::write(&project, [0xD0, 0xCF, 0x11, 0xE0, 0xA1, 0xB1, 0x1A, 0xE1]).expect("written");
    let mut book = Workbook::new();
    book.add_vba_project(&project).expect("a project file");
    let sheet = book.add_worksheet();
    sheet.set_name("Trial").expect("valid");
    put_rows(sheet, &base_rows());
    book.save(&path).expect("saved");
    assert!(zip_entry_names(&path).iter().any(|name| name == "xl/vbaProject.bin"));
    let finding = only(&findings_of(&path), FindingKind::Workbook);
    assert!(
        finding.message.contains("carries macros") && finding.message.contains("no macro was run"),
        "{finding:#?}"
    );
}

#[test]
fn findings_are_listed_by_inspect_too() {
    let mut rows = base_rows();
    rows[2][1] = Put::Text("x");
    let folder = temp_folder();
    let path = folder.path().join("trial.xlsx");
    write_rows(&path, "Trial", &rows);
    let inspection = inspect_workbook(&path, &AnalysisRequest::default()).expect("inspected");
    let finding = only(&inspection.findings, FindingKind::TextInNumbers);
    check(&finding, "Trial", "B3", &["text 'x'"]);
}

/// Labels that a spreadsheet would take as formulas must come back as text.
#[test]
fn formula_like_labels_come_back_as_text() {
    let labels = ["=SUM(A1:A9)", "+cmd|' /C calc'!A0", "-2+3", "@SUM(1)"];
    let mut rows = vec![vec![Put::Text("Condition"), Put::Text("Weight (g)")]];
    for (index, label) in labels.iter().enumerate() {
        for offset in 0..3 {
            rows.push(vec![
                Put::Text(label),
                Put::Number(10.0 + index as f64 + offset as f64 * 0.3),
            ]);
        }
    }
    let folder = temp_folder();
    write_rows(&folder.path().join("trial.xlsx"), "Trial", &rows);
    trialyst(folder.path(), &["run", "trial.xlsx"]).expect_code(0);
    let results = folder.path().join("trial.results.xlsx");

    let sheets = read_all_sheets(&results);
    let conditions = &sheets
        .iter()
        .find(|(name, _)| name == service::report::names::CONDITIONS)
        .expect("a conditions sheet")
        .1;
    let first_column: Vec<&calamine::Data> = conditions.rows().map(|row| &row[0]).collect();
    for label in labels {
        // Found only as a string cell: a formula, number or error would not match.
        assert!(
            first_column
                .iter()
                .any(|cell| matches!(cell, calamine::Data::String(text) if text == label)),
            "label {label} is not a text cell of the conditions sheet: {first_column:?}"
        );
    }
    let mut sheet_parts = 0;
    for name in zip_entry_names(&results) {
        if name.starts_with("xl/worksheets/sheet") {
            sheet_parts += 1;
            let xml = zip_entry_text(&results, &name);
            assert!(!xml.contains("<f>") && !xml.contains("<f "), "{name} stores a formula");
        }
    }
    assert!(sheet_parts >= 5, "worksheet parts found: {sheet_parts}");
}

#[test]
fn a_shift_that_changes_with_a_factor_is_a_finding_and_a_caution() {
    // A 2^2 in pressure and hold time with its low-pressure runs all on the early
    // shift (twice each) and two centre runs: the shift cannot be told apart from
    // pressure. Invented values.
    let mut rows = vec![vec![
        Put::Text("Shift"),
        Put::Text("Pressure"),
        Put::Text("Hold"),
        Put::Text("Flash"),
    ]];
    for (shift, pressure, hold, flash) in [
        ("Early", 600.0, 4.0, 0.41),
        ("Early", 600.0, 8.0, 0.40),
        ("Early", 600.0, 4.0, 0.43),
        ("Early", 600.0, 8.0, 0.39),
        ("Late", 800.0, 4.0, 0.66),
        ("Late", 800.0, 8.0, 0.65),
        ("Late", 800.0, 4.0, 0.64),
        ("Late", 800.0, 8.0, 0.67),
        ("Early", 700.0, 6.0, 0.52),
        ("Late", 700.0, 6.0, 0.55),
    ] {
        rows.push(vec![
            Put::Text(shift),
            Put::Number(pressure),
            Put::Number(hold),
            Put::Number(flash),
        ]);
    }
    let folder = temp_folder();
    let path = folder.path().join("flash.xlsx");
    write_rows(&path, "Trial", &rows);
    let results = analyse_workbook(&path, &AnalysisRequest::default()).expect("analysed");
    let tie = only(&results.findings, FindingKind::ContextWithFactor);
    check(
        &tie,
        "Trial",
        "A1",
        &[
            "'Shift' changes with the factor 'Pressure'",
            "every run at Pressure 600 has Shift Early",
            "cannot be told apart from the effect of Pressure",
        ],
    );
    // The Summary's cautions say it too, with its place, beside the standing ones.
    assert!(
        results
            .cautions
            .iter()
            .any(|caution| caution.starts_with("The context column 'Shift' changes")
                && caution.ends_with("in random order; see Trial!A1.")),
        "{:#?}",
        results.cautions
    );
    // The results workbook's Summary carries the caution.
    let run = trialyst(folder.path(), &["run", "flash.xlsx"]);
    run.expect_code(0);
    let sheets = read_all_sheets(&folder.path().join("flash.results.xlsx"));
    let (_, summary) = sheets
        .iter()
        .find(|(name, _)| name == "Summary")
        .expect("a Summary sheet");
    assert!(
        summary
            .used_cells()
            .any(|(_, _, cell)| cell.to_string().starts_with("The context column 'Shift' changes")),
        "the Summary does not carry the caution"
    );
}

#[test]
fn a_factorial_trial_at_any_magnitude_gets_the_factorial_analysis_and_says_why_sums_are_empty() {
    // A replicated 2 x 2 (invented values) at 1, 1e160, 1e300 and 1e-300: the factorial
    // model leads at every magnitude (at 1e160 it once said "does not show that any of
    // the factors affects", later it was not fitted), with the F and p of exact
    // arithmetic; where its sums of squares cannot be held in a double, the workbook says
    // so in those cells and a finding says why.
    // Type III F and p of Resin, Cure and Resin x Cure (df 1 and 8): Python fractions on
    // the exact doubles of the data, mpmath 1.3.0 (regularised incomplete beta, 50 digits);
    // the 17 digits it printed are kept.
    #[allow(clippy::excessive_precision)]
    const REFERENCE: [(f64, [(f64, f64); 3]); 4] = [
        (
            1.0,
            [
                (726.25423728813539, 3.870202811355488e-9),
                (407.20338983050769, 3.7979506749132545e-8),
                (51.271186440677337, 9.610660800709866e-5),
            ],
        ),
        (
            1e160,
            [
                (726.25423728812435, 3.8702028113557211e-9),
                (407.20338983050237, 3.7979506749134496e-8),
                (51.271186440676632, 9.6106608007103303e-5),
            ],
        ),
        (
            1e300,
            [
                (726.25423728813933, 3.8702028113554049e-9),
                (407.20338983051042, 3.7979506749131542e-8),
                (51.271186440677124, 9.6106608007100065e-5),
            ],
        ),
        (
            1e-300,
            [
                (726.25423728812797, 3.8702028113556447e-9),
                (407.20338983050363, 3.7979506749134032e-8),
                (51.271186440676871, 9.6106608007101729e-5),
            ],
        ),
    ];
    let base = [80.3, 79.8, 80.1, 81.6, 81.9, 81.7, 82.4, 82.9, 82.5, 86.1, 85.9, 86.3];
    for (scale, expected) in REFERENCE {
        let mut rows = vec![vec![Put::Text("Resin"), Put::Text("Cure"), Put::Text("Strength")]];
        for (index, value) in base.iter().enumerate() {
            let (resin, cure) = (["R1", "R2"][index / 6], ["C1", "C2"][(index / 3) % 2]);
            rows.push(vec![Put::Text(resin), Put::Text(cure), Put::Number(value * scale)]);
        }
        let folder = temp_folder();
        let path = folder.path().join("strength.xlsx");
        write_rows(&path, "Trial", &rows);
        let results = analyse_workbook(&path, &AnalysisRequest::default()).expect("analysed");
        let response = &results.responses[0];
        let factorial = response
            .factorial
            .as_ref()
            .expect("the factorial analysis at every magnitude");
        let model = factorial.model.as_ref().expect("the k-way model");
        for ((source, (f, p)), line) in ["Resin", "Cure", "Resin:Cure"]
            .iter()
            .zip(expected)
            .zip(&model.type_iii)
        {
            assert_eq!(line.source, *source);
            for (label, actual, reference) in [("F", line.f_value, f), ("p", line.p_value, p)] {
                let actual = actual.unwrap_or_else(|| panic!("scale {scale}: no {label} for {source}"));
                let digits = -((actual - reference).abs() / reference).log10();
                println!("scale {scale:e}, {source} {label}: {actual:e} against {reference:e}, LRE {digits:.1}");
                assert!(digits >= 12.0, "scale {scale:e}, {source} {label}: LRE {digits:.1}");
            }
        }
        let headline = &response.verdict.as_ref().expect("a verdict").headline;
        assert!(headline.contains("affect Strength"), "scale {scale}: {headline}");
        let said: Vec<&Finding> = results
            .findings
            .iter()
            .filter(|finding| finding.message.contains("factorial model's sums of squares"))
            .collect();
        if scale == 1.0 {
            assert!(said.is_empty(), "{said:#?}");
            continue;
        }
        let (words, in_cells) = if scale < 1.0 {
            ("below the smallest number the arithmetic holds", "not defined")
        } else {
            (
                "beyond the largest number the arithmetic holds",
                "beyond the range of the arithmetic",
            )
        };
        assert_eq!(said.len(), 1, "{:#?}", results.findings);
        assert!(said[0].message.contains(words), "{}", said[0].message);
        assert!(
            said[0].message.contains("Resin, Cure, Resin:Cure, residual, total"),
            "{}",
            said[0].message
        );
        assert_eq!(said[0].cell.as_deref(), Some("A1:C13"));
        // The results workbook says it in the sums-of-squares cells and carries the reason.
        let run = trialyst(folder.path(), &["run", "strength.xlsx"]);
        run.expect_code(0);
        let sheets = read_all_sheets(&folder.path().join("strength.results.xlsx"));
        let (_, anova) = sheets
            .iter()
            .find(|(name, _)| name.contains("Factorial ANOVA"))
            .expect("a factorial ANOVA sheet");
        assert!(
            anova.used_cells().any(|(_, _, cell)| *cell == in_cells),
            "scale {scale:e}: no cell reads '{in_cells}'"
        );
        assert!(
            sheets
                .iter()
                .any(|(_, sheet)| sheet.used_cells().any(|(_, _, cell)| cell.to_string().contains(words))),
            "scale {scale:e}: the workbook does not say why"
        );
    }
}
