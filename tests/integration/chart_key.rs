//! Charts over long condition labels show short codes with a key: the Summary chart of a
//! four-factor trial (combined labels such as "100 / 40 / 12 / 2") and of a trial whose
//! conditions have long names. Checked on the written xlsx: the chart's categories point
//! at the code column of the conditions sheet, every code has one line in the key under
//! the chart, the key stands on the chart's printed page, and numeric levels are in
//! numeric order. Short labels keep their labels.

use std::path::Path;

use calamine::{Data, Range};

use crate::common::{read_all_sheets, temp_folder, trialyst, write_rows, zip_entry_names, zip_entry_text, Put};

fn sheet<'a>(sheets: &'a [(String, Range<Data>)], name: &str) -> &'a Range<Data> {
    &sheets
        .iter()
        .find(|(sheet, _)| sheet == name)
        .expect("the sheet exists")
        .1
}

fn text_at(range: &Range<Data>, row: u32, col: u32) -> String {
    range
        .get_value((row, col))
        .map(|cell| cell.to_string())
        .unwrap_or_default()
}

/// The category reference of the first series of every chart (`'Sheet'!$A$2:$A$9`).
fn chart_categories(path: &Path) -> Vec<String> {
    let mut charts: Vec<String> = zip_entry_names(path)
        .into_iter()
        .filter(|name| name.starts_with("xl/charts/chart") && name.ends_with(".xml"))
        .collect();
    charts.sort();
    charts
        .iter()
        .filter_map(|name| {
            let xml = zip_entry_text(path, name);
            let cat = xml.find("<c:cat>")?;
            let start = xml[cat..].find("<c:f>")? + cat + 5;
            let end = xml[start..].find("</c:f>")? + start;
            Some(xml[start..end].to_string())
        })
        .collect()
}

/// The conditions listed on the conditions sheet (column A under its header `factor`),
/// with the code beside each (column M) when there is one.
fn listed_conditions(conditions: &Range<Data>, factor: &str) -> (u32, Vec<(String, String)>) {
    let header = (0..conditions.height() as u32)
        .find(|row| text_at(conditions, *row, 0) == factor)
        .expect("the conditions table's header");
    let mut listed = Vec::new();
    let mut row = header + 1;
    while matches!(conditions.get_value((row, 1)), Some(Data::Float(_) | Data::Int(_))) {
        listed.push((text_at(conditions, row, 0), text_at(conditions, row, 12)));
        row += 1;
    }
    (header, listed)
}

/// The Summary rows holding the key's lines, and each code's label there.
fn key_entries(summary: &Range<Data>) -> (Vec<u32>, Vec<(String, String)>) {
    let mut rows = Vec::new();
    let mut entries = Vec::new();
    let start = (0..summary.height() as u32)
        .find(|row| text_at(summary, *row, 0).starts_with("Key to the chart's codes"))
        .expect("a key under the chart");
    let mut row = start + 1;
    while text_at(summary, row, 0).starts_with('C') && text_at(summary, row, 0).contains(" = ") {
        rows.push(row);
        for entry in text_at(summary, row, 0).split(";   ") {
            let (code, label) = entry.split_once(" = ").expect("code = label");
            entries.push((code.to_string(), label.to_string()));
        }
        row += 1;
    }
    rows.insert(0, start);
    (rows, entries)
}

/// The zero-based rows where Summary's printed pages start (manual breaks), and the
/// anchor row of its one chart.
fn summary_breaks_and_chart_row(path: &Path) -> (Vec<u32>, u32) {
    // The Summary is the first sheet.
    let xml = zip_entry_text(path, "xl/worksheets/sheet1.xml");
    let mut breaks = vec![0];
    let mut rest = xml.as_str();
    while let Some(at) = rest.find("<brk id=\"") {
        let start = at + 9;
        let end = rest[start..].find('"').expect("closed") + start;
        breaks.push(rest[start..end].parse::<u32>().expect("a row number"));
        rest = &rest[end..];
    }
    let drawing = zip_entry_text(path, "xl/drawings/drawing1.xml");
    let from = drawing.find("<xdr:from>").expect("an anchored chart");
    let row_start = drawing[from..].find("<xdr:row>").expect("a row") + from + 9;
    let row_end = drawing[row_start..].find('<').expect("closed") + row_start;
    (breaks, drawing[row_start..row_end].parse().expect("a row number"))
}

fn number(value: f64) -> Put {
    Put::Number(value)
}

#[test]
fn a_four_factor_trial_charts_codes_with_a_key_on_the_same_page_in_numeric_order() {
    let folder = temp_folder();
    let mut rows = vec![vec![
        Put::Text("Temperature"),
        Put::Text("Speed"),
        Put::Text("Time"),
        Put::Text("Gate"),
        Put::Text("Yield"),
    ]];
    // Every combination twice, the runs in a scrambled order so that the order of first
    // appearance is not the numeric one (100 before 20, 40 before 5).
    let mut runs = Vec::new();
    for replicate in 0..2u32 {
        for (index, combination) in (0..16u32).enumerate() {
            let temperature = if combination & 1 == 0 { 100.0 } else { 20.0 };
            let speed = if combination & 2 == 0 { 40.0 } else { 5.0 };
            let time = if combination & 4 == 0 { 12.0 } else { 4.0 };
            let gate = if combination & 8 == 0 { 2.0 } else { 1.0 };
            let value = 50.0 + temperature / 10.0 + speed / 8.0 + f64::from(replicate) * 0.7 + (index % 3) as f64 * 0.3;
            runs.push((
                (index * 7 + replicate as usize) % 32,
                [temperature, speed, time, gate, value],
            ));
        }
    }
    runs.sort_by_key(|(order, _)| *order);
    for (_, run) in runs {
        rows.push(run.into_iter().map(number).collect());
    }
    write_rows(&folder.path().join("four.xlsx"), "Trial", &rows);
    trialyst(folder.path(), &["run", "four.xlsx"]).expect_code(0);
    let results = folder.path().join("four.results.xlsx");
    let sheets = read_all_sheets(&results);
    let conditions = sheet(&sheets, "Conditions");
    let summary = sheet(&sheets, "Summary");

    let factor = text_at(conditions, 1, 0);
    assert!(!factor.is_empty());
    let (header, listed) = listed_conditions(conditions, &factor);
    assert_eq!(listed.len(), 16, "{listed:?}");
    assert_eq!(text_at(conditions, header, 12), "chart code");
    // Numeric levels in numeric order: the combined labels sort by each factor's value
    // in turn (common practice for listing a full factorial's combinations).
    let values: Vec<Vec<f64>> = listed
        .iter()
        .map(|(label, _)| {
            label
                .split(" / ")
                .map(|part| part.parse().expect("numeric level"))
                .collect()
        })
        .collect();
    let mut sorted = values.clone();
    sorted.sort_by(|a, b| a.partial_cmp(b).expect("numbers"));
    assert_eq!(values, sorted, "conditions in numeric order");
    assert!(listed[0].0.starts_with("20 / 5"), "{:?}", listed[0]);

    // The chart's categories are the codes.
    let categories = chart_categories(&results);
    assert_eq!(
        categories[0],
        format!("Conditions!$M${}:$M${}", header + 2, header + 1 + listed.len() as u32)
    );
    // Each code has one key line, with its condition's label.
    let (key_rows, entries) = key_entries(summary);
    let expected: Vec<(String, String)> = listed
        .iter()
        .enumerate()
        .map(|(index, (label, code))| {
            assert_eq!(code, &format!("C{}", index + 1));
            (code.clone(), label.clone())
        })
        .collect();
    assert_eq!(entries, expected);

    // The key stands right under the chart, on the chart's printed page.
    let (breaks, chart_row) = summary_breaks_and_chart_row(&results);
    let page_of = |row: u32| breaks.iter().rposition(|start| *start <= row).expect("a page");
    assert!(key_rows[0] > chart_row);
    assert!(
        key_rows[0] <= chart_row + 16,
        "key at {} for a chart at {chart_row}",
        key_rows[0]
    );
    for row in &key_rows {
        assert_eq!(page_of(*row), page_of(chart_row), "key row {row}, breaks {breaks:?}");
    }
}

#[test]
fn long_condition_names_get_codes_and_short_ones_keep_their_labels() {
    let folder = temp_folder();
    let long = [
        ("coarse grit, slow feed", [12.1, 12.4, 11.9]),
        ("coarse grit, fast feed", [13.0, 13.3, 12.8]),
        ("fine grit, slow feed", [10.2, 10.6, 10.1]),
    ];
    let mut rows = vec![vec![Put::Text("Finish"), Put::Text("Roughness")]];
    for (label, values) in &long {
        for value in values {
            rows.push(vec![Put::Text(label), number(*value)]);
        }
    }
    write_rows(&folder.path().join("long.xlsx"), "Trial", &rows);
    let mut rows = vec![vec![Put::Text("Finish"), Put::Text("Roughness")]];
    for (label, values) in [("A", [1.0, 1.2, 1.1]), ("B", [2.0, 2.1, 1.9])] {
        for value in values {
            rows.push(vec![Put::Text(label), number(value)]);
        }
    }
    write_rows(&folder.path().join("short.xlsx"), "Trial", &rows);
    trialyst(folder.path(), &["run", "long.xlsx"]).expect_code(0);
    trialyst(folder.path(), &["run", "short.xlsx"]).expect_code(0);

    let results = folder.path().join("long.results.xlsx");
    let sheets = read_all_sheets(&results);
    let (header, listed) = listed_conditions(sheet(&sheets, "Conditions"), "Finish");
    assert_eq!(listed.len(), 3);
    assert!(chart_categories(&results)[0].starts_with("Conditions!$M$"));
    let (_, entries) = key_entries(sheet(&sheets, "Summary"));
    let labels: Vec<&str> = entries.iter().map(|(_, label)| label.as_str()).collect();
    for (label, _) in &long {
        assert_eq!(
            labels.iter().filter(|l| *l == label).count(),
            1,
            "{label} in {labels:?}"
        );
    }
    let _ = header;

    let results = folder.path().join("short.results.xlsx");
    let sheets = read_all_sheets(&results);
    assert!(chart_categories(&results)[0].starts_with("Conditions!$A$"));
    let summary = sheet(&sheets, "Summary");
    assert!(!(0..summary.height() as u32).any(|row| text_at(summary, row, 0).starts_with("Key to the chart's codes")));
}

/// The factorial means charts of a two-factor trial with long level names show codes,
/// each written beside its level in the table above the charts; short levels keep
/// their names on the axis.
#[test]
fn factorial_means_charts_show_codes_for_long_level_names() {
    let folder = temp_folder();
    let suppliers = ["Northfield polymer grade 7", "Eastbay resin standard lot"];
    let profiles = ["Slow", "Fast"];
    let mut rows = vec![vec![
        Put::Text("Resin supplier"),
        Put::Text("Cure profile"),
        Put::Text("Peel strength (N)"),
    ]];
    for replicate in 0..3u32 {
        for (s, supplier) in suppliers.iter().enumerate() {
            for (p, profile) in profiles.iter().enumerate() {
                let value = 40.0 + 3.0 * s as f64 - 2.0 * p as f64 + 0.4 * f64::from(replicate) + 0.1 * (s * p) as f64;
                rows.push(vec![Put::Text(supplier), Put::Text(profile), number(value)]);
            }
        }
    }
    write_rows(&folder.path().join("peel.xlsx"), "Trial", &rows);
    trialyst(folder.path(), &["run", "peel.xlsx"]).expect_code(0);
    let results = folder.path().join("peel.results.xlsx");
    let sheets = read_all_sheets(&results);
    let means = sheet(&sheets, "Factorial means");
    // The supplier table: its levels with codes C1, C2 in the column headed "chart code".
    let header = (0..means.height() as u32)
        .find(|row| text_at(means, *row, 0) == "Resin supplier" && text_at(means, *row, 6) == "chart code")
        .expect("the supplier means table with a code column");
    let coded: Vec<(String, String)> = (1..=2)
        .map(|offset| (text_at(means, header + offset, 0), text_at(means, header + offset, 6)))
        .collect();
    assert_eq!(
        coded,
        vec![
            (suppliers[0].to_string(), "C1".to_string()),
            (suppliers[1].to_string(), "C2".to_string())
        ]
    );
    let categories = chart_categories(&results);
    let on_means: Vec<&String> = categories
        .iter()
        .filter(|c| c.starts_with("'Factorial means'!"))
        .collect();
    let code_ref = format!("'Factorial means'!$G${}:$G${}", header + 2, header + 3);
    assert!(on_means.iter().any(|c| **c == code_ref), "{code_ref} in {on_means:?}");
    // The cure profiles are short: their chart keeps the names in column A.
    assert!(
        on_means.iter().any(|c| c.starts_with("'Factorial means'!$A$")),
        "{on_means:?}"
    );
}
