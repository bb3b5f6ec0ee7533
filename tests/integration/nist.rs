//! Accuracy against the NIST StRD one-way analysis of variance datasets,
//! through the whole read path: each dataset is written to an xlsx workbook
//! (long layout: a treatment column, a response column; every number is the
//! f64 parsed from the .dat text), read back and analysed by the service,
//! and every certified value is compared by its log relative error.
//!
//! Source of the check values: the certified values printed in each .dat file
//! (NIST Information Technology Laboratory, Statistical Reference Datasets,
//! analysis of variance; Simon and Lesage 1989 for the SmLs series).

use service::{analyse_workbook, AnalysisRequest};

use crate::common::{correct_digits, temp_folder, NIST_MIN_DIGITS};

/// Certified values and data of one dataset, parsed from its .dat text.
struct Dataset {
    df_between: f64,
    ss_between: f64,
    ms_between: f64,
    f: f64,
    df_within: f64,
    ss_within: f64,
    ms_within: f64,
    r_squared: f64,
    residual_sd: f64,
    data: Vec<(String, f64)>,
}

fn number(token: Option<&str>, what: &str) -> f64 {
    token
        .and_then(|text| text.parse::<f64>().ok())
        .unwrap_or_else(|| panic!("the .dat file has no number for {what}"))
}

fn parse_dat(text: &str) -> Dataset {
    let mut between: Vec<f64> = Vec::new();
    let mut within: Vec<f64> = Vec::new();
    let mut r_squared = f64::NAN;
    let mut residual_sd = f64::NAN;
    let mut data = Vec::new();
    let mut data_headers_seen = 0;
    for line in text.lines() {
        let trimmed = line.trim();
        let tokens: Vec<&str> = trimmed.split_whitespace().collect();
        if trimmed.starts_with("Data:") {
            data_headers_seen += 1;
            continue;
        }
        if data_headers_seen >= 2 {
            if tokens.len() == 2 {
                data.push((tokens[0].to_string(), number(Some(tokens[1]), "a response")));
            }
            continue;
        }
        if trimmed.starts_with("Between") {
            between = tokens[2..].iter().map(|token| number(Some(token), "between")).collect();
        } else if trimmed.starts_with("Within") {
            within = tokens[2..].iter().map(|token| number(Some(token), "within")).collect();
        } else if trimmed.starts_with("Certified R-Squared") {
            r_squared = number(tokens.last().copied(), "R-squared");
        } else if trimmed.starts_with("Standard Deviation") {
            residual_sd = number(tokens.last().copied(), "residual SD");
        }
    }
    assert_eq!(between.len(), 4, "between line: df, SS, MS, F");
    assert_eq!(within.len(), 3, "within line: df, SS, MS");
    Dataset {
        df_between: between[0],
        ss_between: between[1],
        ms_between: between[2],
        f: between[3],
        df_within: within[0],
        ss_within: within[1],
        ms_within: within[2],
        r_squared,
        residual_sd,
        data,
    }
}

/// Writes the dataset as a long table; labels are text (`treatment 1`), responses the parsed f64.
fn write_dataset(path: &std::path::Path, dataset: &Dataset) {
    let mut book = rust_xlsxwriter::Workbook::new();
    let sheet = book.add_worksheet();
    sheet.set_name("Data").expect("valid name");
    sheet.write_string(0, 0, "Treatment").expect("writable");
    sheet.write_string(0, 1, "Response").expect("writable");
    for (index, (label, value)) in dataset.data.iter().enumerate() {
        let row = index as u32 + 1;
        sheet
            .write_string(row, 0, format!("treatment {label}"))
            .expect("writable");
        sheet.write_number(row, 1, *value).expect("writable");
    }
    book.save(path).expect("saved");
}

fn check(name: &str, text: &str, n_observations: usize) {
    let dataset = parse_dat(text);
    assert_eq!(
        dataset.data.len(),
        n_observations,
        "{name}: observations read from the .dat file"
    );
    let folder = temp_folder();
    let path = folder.path().join(format!("{name}.xlsx"));
    write_dataset(&path, &dataset);
    let results = analyse_workbook(&path, &AnalysisRequest::default())
        .unwrap_or_else(|error| panic!("{name}: analysis failed: {error}"));
    assert_eq!(results.table.n_records, n_observations, "{name}: records read back");
    let fit = results.responses[0]
        .fit()
        .unwrap_or_else(|| panic!("{name}: response not analysed"));
    let between = &fit.anova[0];
    let within = &fit.anova[1];
    let checks = [
        ("df between", between.df, dataset.df_between),
        ("df within", within.df, dataset.df_within),
        ("SS between", between.ss, dataset.ss_between),
        ("SS within", within.ss, dataset.ss_within),
        ("MS between", between.ms.unwrap_or(f64::NAN), dataset.ms_between),
        ("MS within", within.ms.unwrap_or(f64::NAN), dataset.ms_within),
        ("F", between.f.unwrap_or(f64::NAN), dataset.f),
        ("R squared", fit.r_squared, dataset.r_squared),
        ("residual SD", fit.pooled_sd, dataset.residual_sd),
    ];
    let mut failures = Vec::new();
    for (what, value, certified) in checks {
        let digits = correct_digits(value, certified);
        println!("{name}: {what}: {value:.15e} certified {certified:.15e}: {digits:.1} digits");
        if digits.is_nan() || digits < NIST_MIN_DIGITS {
            failures.push(format!(
                "{what} has {digits:.1} correct digits ({value:e} vs {certified:e})"
            ));
        }
    }
    assert!(failures.is_empty(), "{name}: {}", failures.join("; "));
}

// Observation counts: the "Data:" block of each .dat header (NIST StRD).

#[test]
fn nist_atmwtag() {
    check(
        "AtmWtAg",
        include_str!("../../sidecar/engine/src/stats/testdata/AtmWtAg.dat"),
        48,
    );
}

#[test]
fn nist_sirstv() {
    check(
        "SiRstv",
        include_str!("../../sidecar/engine/src/stats/testdata/SiRstv.dat"),
        25,
    );
}

#[test]
fn nist_smls01() {
    check(
        "SmLs01",
        include_str!("../../sidecar/engine/src/stats/testdata/SmLs01.dat"),
        189,
    );
}

#[test]
fn nist_smls02() {
    check(
        "SmLs02",
        include_str!("../../sidecar/engine/src/stats/testdata/SmLs02.dat"),
        1809,
    );
}

#[test]
fn nist_smls03() {
    check(
        "SmLs03",
        include_str!("../../sidecar/engine/src/stats/testdata/SmLs03.dat"),
        18009,
    );
}

#[test]
fn nist_smls04() {
    check(
        "SmLs04",
        include_str!("../../sidecar/engine/src/stats/testdata/SmLs04.dat"),
        189,
    );
}

#[test]
fn nist_smls05() {
    check(
        "SmLs05",
        include_str!("../../sidecar/engine/src/stats/testdata/SmLs05.dat"),
        1809,
    );
}

#[test]
fn nist_smls06() {
    check(
        "SmLs06",
        include_str!("../../sidecar/engine/src/stats/testdata/SmLs06.dat"),
        18009,
    );
}

#[test]
fn nist_smls07() {
    check(
        "SmLs07",
        include_str!("../../sidecar/engine/src/stats/testdata/SmLs07.dat"),
        189,
    );
}

#[test]
fn nist_smls08() {
    check(
        "SmLs08",
        include_str!("../../sidecar/engine/src/stats/testdata/SmLs08.dat"),
        1809,
    );
}

#[test]
fn nist_smls09() {
    check(
        "SmLs09",
        include_str!("../../sidecar/engine/src/stats/testdata/SmLs09.dat"),
        18009,
    );
}
