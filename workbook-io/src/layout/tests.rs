//! Table-driven tests of table detection on grids built in memory.
//!
//! A grid is written as rows of text: a cell that parses as a number is a number, an
//! empty string is an empty cell, `TRUE`/`FALSE` are booleans, a spreadsheet error name
//! (`#N/A`, `#DIV/0!`, ...) is an error value, anything else is text. Each case states
//! what a person reading the grid would take as the trial table (common practice for
//! trial sheets: a header row of column names, one record per row or one column per
//! condition); the expected levels, cells and counts are read off the grid itself.

use std::collections::HashMap;

use crate::cell::{parse_a1_range, CellPos, CellValue};
use crate::read::SheetGrid;

use super::{detect_table, FindingKind, Layout, LayoutError, TableRequest};
use FindingKind::{
    BlankHeader, BlankLabel, BlankValue, BooleanInNumbers, ContextWithFactor, DuplicateHeader, EmptyColumn, ErrorValue,
    IdentifierColumn, MergedHeader, SimilarLabels, SummaryRow, TextInNumbers,
};

/// Error values a spreadsheet shows (common practice; the set every spreadsheet program writes).
const ERROR_NAMES: [&str; 7] = ["#N/A", "#DIV/0!", "#VALUE!", "#REF!", "#NAME?", "#NUM!", "#NULL!"];

/// A sheet named `Trial` holding the rows, with text interned as the readers do.
fn grid(rows: &[&[&str]], merged: &[&str]) -> SheetGrid {
    let mut strings: Vec<String> = Vec::new();
    let mut index_of: HashMap<String, u32> = HashMap::new();
    let mut intern = |text: &str| -> u32 {
        *index_of.entry(text.to_string()).or_insert_with(|| {
            strings.push(text.to_string());
            (strings.len() - 1) as u32
        })
    };
    let mut cells = Vec::new();
    for (row, texts) in rows.iter().enumerate() {
        for (col, text) in texts.iter().enumerate() {
            if text.is_empty() {
                continue;
            }
            let value = if let Ok(number) = text.parse::<f64>() {
                CellValue::Number(number)
            } else if *text == "TRUE" || *text == "FALSE" {
                CellValue::Bool(*text == "TRUE")
            } else if ERROR_NAMES.contains(text) {
                CellValue::Error(intern(text))
            } else {
                CellValue::Text(intern(text))
            };
            cells.push((CellPos::new(row as u32, col as u32), value));
        }
    }
    SheetGrid {
        name: "Trial".into(),
        cells,
        strings,
        merged: merged
            .iter()
            .map(|area| parse_a1_range(area).expect("merged area in A1 form"))
            .collect(),
        hidden_rows: Vec::new(),
        hidden_cols: Vec::new(),
        summary_formulas: Vec::new(),
    }
}

/// The table a person would take from the grid.
struct TableExpect {
    layout: Layout,
    /// Header row through last data row, in A1 form.
    area: &'static str,
    /// Factors in order: name, levels in order of first appearance, whether a block.
    factors: &'static [(&'static str, &'static [&'static str], bool)],
    responses: &'static [&'static str],
    records: usize,
    /// Findings in the order they are reported: kind and cell.
    findings: &'static [(FindingKind, &'static str)],
}

/// What detection should answer.
enum Expected {
    Table(TableExpect),
    /// No trial table in the grid.
    NoTable,
    /// A column named in the request is not a header.
    UnknownColumn(&'static str),
}

struct Case {
    name: &'static str,
    rows: &'static [&'static [&'static str]],
    merged: &'static [&'static str],
    request: TableRequest,
    expect: Expected,
}

fn names(list: &[&str]) -> Vec<String> {
    list.iter().map(|name| name.to_string()).collect()
}

fn factors(list: &[&str]) -> TableRequest {
    TableRequest {
        factors: names(list),
        ..TableRequest::default()
    }
}

fn ranged(area: &str) -> TableRequest {
    TableRequest {
        range: Some(parse_a1_range(area).expect("range in A1 form")),
        ..TableRequest::default()
    }
}

/// Detects the table of one case and describes every difference from the expectation.
fn check(rows: &[&[&str]], merged: &[&str], request: &TableRequest, expect: &Expected) -> Vec<String> {
    let sheet = grid(rows, merged);
    let found = detect_table(&sheet, request);
    let mut problems = Vec::new();
    match (expect, found) {
        (Expected::Table(want), Ok(table)) => {
            if table.layout != want.layout {
                problems.push(format!("layout {:?}, expected {:?}", table.layout, want.layout));
            }
            if table.area.a1() != want.area {
                problems.push(format!("area {}, expected {}", table.area.a1(), want.area));
            }
            let got_factors: Vec<(String, Vec<String>, bool)> = table
                .factors
                .iter()
                .map(|factor| (factor.name.clone(), factor.levels.clone(), factor.is_block))
                .collect();
            let want_factors: Vec<(String, Vec<String>, bool)> = want
                .factors
                .iter()
                .map(|(name, levels, is_block)| (name.to_string(), names(levels), *is_block))
                .collect();
            if got_factors != want_factors {
                problems.push(format!("factors {got_factors:?}, expected {want_factors:?}"));
            }
            let got_responses: Vec<&str> = table.responses.iter().map(|response| response.name.as_str()).collect();
            if got_responses != want.responses {
                problems.push(format!("responses {got_responses:?}, expected {:?}", want.responses));
            }
            if table.n_records() != want.records {
                problems.push(format!("{} records, expected {}", table.n_records(), want.records));
            }
            for factor in &table.factors {
                if factor.level_of_record.len() != table.n_records() {
                    problems.push(format!(
                        "factor '{}' has a level for {} records",
                        factor.name,
                        factor.level_of_record.len()
                    ));
                }
            }
            for response in &table.responses {
                if response.values.len() != table.n_records() {
                    problems.push(format!(
                        "response '{}' has {} values",
                        response.name,
                        response.values.len()
                    ));
                }
            }
            // Choices are checked by the corpus of kept shapes; here the data findings.
            let got_findings: Vec<(FindingKind, String)> = table
                .findings
                .iter()
                .filter(|finding| finding.kind != FindingKind::Choice)
                .map(|finding| (finding.kind, finding.cell.clone().unwrap_or_default()))
                .collect();
            let want_findings: Vec<(FindingKind, String)> = want
                .findings
                .iter()
                .map(|(kind, cell)| (*kind, cell.to_string()))
                .collect();
            if got_findings != want_findings {
                problems.push(format!("findings {got_findings:?}, expected {want_findings:?}"));
            }
        }
        (Expected::NoTable, Err(LayoutError::NoTable { .. })) => {}
        (Expected::UnknownColumn(name), Err(LayoutError::UnknownColumn { name: got, .. })) if got == *name => {}
        (Expected::Table(_), Err(error)) => problems.push(format!("no table: {error}")),
        (_, Ok(table)) => problems.push(format!(
            "found a {:?} table at {} where none was expected",
            table.layout,
            table.area.a1()
        )),
        (_, Err(error)) => problems.push(format!("wrong error: {error}")),
    }
    problems
}

fn run_cases(cases: &[Case]) {
    let mut failures = Vec::new();
    for case in cases {
        let problems = check(case.rows, case.merged, &case.request, &case.expect);
        if !problems.is_empty() {
            failures.push(format!("{}:\n  {}", case.name, problems.join("\n  ")));
        }
    }
    assert!(
        failures.is_empty(),
        "{} case(s) failed:\n{}",
        failures.len(),
        failures.join("\n")
    );
}

/// Ovens A and B with a haze reading: the smallest long table.
const OVEN_HAZE: &[&[&str]] = &[
    &["Oven", "Haze"],
    &["A", "1.2"],
    &["A", "1.4"],
    &["B", "2.0"],
    &["B", "2.1"],
];
const OVEN_HAZE_TABLE: TableExpect = TableExpect {
    layout: Layout::Long,
    area: "A1:B5",
    factors: &[("Oven", &["A", "B"], false)],
    responses: &["Haze"],
    records: 4,
    findings: &[],
};

/// Two ovens run on two days.
const DAY_OVEN_HAZE: &[&[&str]] = &[
    &["Day", "Oven", "Haze"],
    &["Mon", "A", "1.2"],
    &["Mon", "B", "2.0"],
    &["Tue", "A", "1.4"],
    &["Tue", "B", "2.1"],
];
const DAY_OVEN_HAZE_TABLE: TableExpect = TableExpect {
    layout: Layout::Long,
    area: "A1:C5",
    factors: &[("Oven", &["A", "B"], false), ("Day", &["Mon", "Tue"], true)],
    responses: &["Haze"],
    records: 4,
    findings: &[],
};

/// Two oven temperatures written as numbers.
const TEMPERATURE_HAZE: &[&[&str]] = &[
    &["Temperature", "Haze"],
    &["160", "1.2"],
    &["160", "1.4"],
    &["180", "2.0"],
    &["180", "2.1"],
];
const TEMPERATURE_HAZE_TABLE: TableExpect = TableExpect {
    layout: Layout::Long,
    area: "A1:B5",
    factors: &[("Temperature", &["160", "180"], false)],
    responses: &["Haze"],
    records: 4,
    findings: &[],
};

/// Two lines side by side (wide) with a comment on every row.
const LINES_WITH_COMMENT: &[&[&str]] = &[
    &["Line 1", "Line 2", "Comment"],
    &["5.1", "4.8", "start"],
    &["5.3", "4.9", "warm"],
    &["5.2", "5.0", "end"],
];
const LINES_TABLE: TableExpect = TableExpect {
    layout: Layout::Wide,
    area: "A1:B4",
    factors: &[("condition", &["Line 1", "Line 2"], false)],
    responses: &["value"],
    records: 6,
    findings: &[],
};

/// Cases where today's detection gives the answer a person reading the grid would give.
fn cases() -> Vec<Case> {
    vec![
        Case {
            name: "long: one label column, one number column",
            rows: OVEN_HAZE,
            merged: &[],
            request: TableRequest::default(),
            expect: Expected::Table(OVEN_HAZE_TABLE),
        },
        Case {
            name: "long: two factors and two responses, levels in order of first appearance",
            rows: &[
                &["Oven", "Coat", "Haze", "Gloss"],
                &["B", "thin", "2.0", "88"],
                &["A", "thick", "1.2", "91"],
                &["B", "thick", "2.2", "87"],
                &["A", "thin", "1.1", "92"],
            ],
            merged: &[],
            request: TableRequest::default(),
            expect: Expected::Table(TableExpect {
                layout: Layout::Long,
                area: "A1:D5",
                factors: &[("Oven", &["B", "A"], false), ("Coat", &["thin", "thick"], false)],
                responses: &["Haze", "Gloss"],
                records: 4,
                findings: &[],
            }),
        },
        Case {
            name: "wide: one column per condition, unequal lengths",
            rows: &[
                &["Oven A", "Oven B", "Oven C"],
                &["1.2", "2.0", "1.5"],
                &["1.4", "2.1", "1.6"],
                &["1.3", "", "1.7"],
            ],
            merged: &[],
            request: TableRequest::default(),
            expect: Expected::Table(TableExpect {
                layout: Layout::Wide,
                area: "A1:C4",
                factors: &[("condition", &["Oven A", "Oven B", "Oven C"], false)],
                responses: &["value"],
                records: 8,
                findings: &[],
            }),
        },
        Case {
            name: "wide: the response named by the request",
            rows: &[&["Line 1", "Line 2"], &["5.1", "4.8"], &["5.3", "4.9"]],
            merged: &[],
            request: TableRequest {
                wide_response_name: Some("Thickness".into()),
                ..TableRequest::default()
            },
            expect: Expected::Table(TableExpect {
                layout: Layout::Wide,
                area: "A1:B3",
                factors: &[("condition", &["Line 1", "Line 2"], false)],
                responses: &["Thickness"],
                records: 4,
                findings: &[],
            }),
        },
        Case {
            name: "title row and a blank row above the header",
            rows: &[
                &["Haze trial, week 12"],
                &[""],
                &["Oven", "Haze"],
                &["A", "1.2"],
                &["A", "1.4"],
                &["B", "2.0"],
                &["B", "2.1"],
            ],
            merged: &[],
            request: TableRequest::default(),
            expect: Expected::Table(TableExpect {
                layout: Layout::Long,
                area: "A3:B7",
                factors: &[("Oven", &["A", "B"], false)],
                responses: &["Haze"],
                records: 4,
                findings: &[],
            }),
        },
        Case {
            name: "long: a blank row inside the data is skipped",
            rows: &[
                &["Oven", "Haze"],
                &["A", "1.2"],
                &["A", "1.4"],
                &["", ""],
                &["B", "2.0"],
                &["B", "2.1"],
            ],
            merged: &[],
            request: TableRequest::default(),
            expect: Expected::Table(TableExpect {
                layout: Layout::Long,
                area: "A1:B6",
                factors: &[("Oven", &["A", "B"], false)],
                responses: &["Haze"],
                records: 4,
                findings: &[],
            }),
        },
        Case {
            name: "long: text among the numbers is left out and reported at its cell",
            rows: &[
                &["Oven", "Haze"],
                &["A", "1.2"],
                &["A", "n/a"],
                &["B", "2.0"],
                &["B", "2.1"],
            ],
            merged: &[],
            request: TableRequest::default(),
            expect: Expected::Table(TableExpect {
                layout: Layout::Long,
                area: "A1:B5",
                factors: &[("Oven", &["A", "B"], false)],
                responses: &["Haze"],
                records: 4,
                findings: &[(TextInNumbers, "B3")],
            }),
        },
        Case {
            name: "long: error values and TRUE among the numbers",
            rows: &[
                &["Oven", "Haze"],
                &["A", "#N/A"],
                &["A", "1.4"],
                &["B", "#DIV/0!"],
                &["B", "2.1"],
                &["B", "TRUE"],
                &["A", "1.5"],
                &["B", "2.3"],
            ],
            merged: &[],
            request: TableRequest::default(),
            expect: Expected::Table(TableExpect {
                layout: Layout::Long,
                area: "A1:B8",
                factors: &[("Oven", &["A", "B"], false)],
                responses: &["Haze"],
                records: 7,
                findings: &[(ErrorValue, "B2"), (ErrorValue, "B4"), (BooleanInNumbers, "B6")],
            }),
        },
        Case {
            name: "long: a blank value and a blank label",
            rows: &[
                &["Oven", "Haze"],
                &["A", "1.2"],
                &["A", ""],
                &["", "1.9"],
                &["B", "2.0"],
                &["B", "2.1"],
            ],
            merged: &[],
            request: TableRequest::default(),
            expect: Expected::Table(TableExpect {
                layout: Layout::Long,
                area: "A1:B6",
                factors: &[("Oven", &["A", "B"], false)],
                responses: &["Haze"],
                records: 4,
                findings: &[(BlankValue, "B3"), (BlankLabel, "A4")],
            }),
        },
        Case {
            name: "duplicated headers are both kept, the second renamed",
            rows: &[
                &["Oven", "Haze", "Haze"],
                &["A", "1.2", "1.3"],
                &["A", "1.4", "1.5"],
                &["B", "2.0", "2.2"],
            ],
            merged: &[],
            request: TableRequest::default(),
            expect: Expected::Table(TableExpect {
                layout: Layout::Long,
                area: "A1:C4",
                factors: &[("Oven", &["A", "B"], false)],
                responses: &["Haze", "Haze (2)"],
                records: 3,
                findings: &[(DuplicateHeader, "C1")],
            }),
        },
        Case {
            name: "a blank header above data names the column by its letter",
            rows: &[
                &["Oven", "", "Haze"],
                &["A", "7", "1.2"],
                &["A", "8", "1.4"],
                &["B", "6", "2.0"],
            ],
            merged: &[],
            request: TableRequest::default(),
            expect: Expected::Table(TableExpect {
                layout: Layout::Long,
                area: "A1:C4",
                factors: &[("Oven", &["A", "B"], false)],
                responses: &["column B", "Haze"],
                records: 3,
                findings: &[(BlankHeader, "B1")],
            }),
        },
        Case {
            name: "a header with no values below it is reported and left out",
            rows: &[&["Oven", "Haze", "Gloss"], &["A", "1.2"], &["A", "1.4"], &["B", "2.0"]],
            merged: &[],
            request: TableRequest::default(),
            expect: Expected::Table(TableExpect {
                layout: Layout::Long,
                area: "A1:C4",
                factors: &[("Oven", &["A", "B"], false)],
                responses: &["Haze"],
                records: 3,
                findings: &[(EmptyColumn, "C1")],
            }),
        },
        Case {
            name: "merged header cells over two columns",
            rows: &[
                &["Oven", "Haze", ""],
                &["A", "1.2", "1.3"],
                &["A", "1.4", "1.5"],
                &["B", "2.0", "2.2"],
            ],
            merged: &["B1:C1"],
            request: TableRequest::default(),
            expect: Expected::Table(TableExpect {
                layout: Layout::Long,
                area: "A1:C4",
                factors: &[("Oven", &["A", "B"], false)],
                responses: &["Haze 1", "Haze 2"],
                records: 3,
                findings: &[(MergedHeader, "B1:C1")],
            }),
        },
        Case {
            name: "blocks and factors named by the request",
            rows: DAY_OVEN_HAZE,
            merged: &[],
            request: TableRequest {
                factors: names(&["Oven"]),
                blocks: names(&["Day"]),
                ..TableRequest::default()
            },
            expect: Expected::Table(DAY_OVEN_HAZE_TABLE),
        },
        Case {
            name: "the factor named by the request; other label columns are not factors",
            rows: &[
                &["Operator", "Oven", "Haze"],
                &["Kim", "A", "1.2"],
                &["Lee", "B", "2.0"],
                &["Kim", "A", "1.4"],
                &["Lee", "B", "2.1"],
            ],
            merged: &[],
            request: factors(&["oven"]),
            expect: Expected::Table(TableExpect {
                layout: Layout::Long,
                area: "A1:C5",
                factors: &[("Oven", &["A", "B"], false)],
                responses: &["Haze"],
                records: 4,
                // Kim ran every Oven A batch and Lee every Oven B one: said.
                findings: &[(ContextWithFactor, "A1")],
            }),
        },
        Case {
            name: "a numeric factor named by the request",
            rows: TEMPERATURE_HAZE,
            merged: &[],
            request: factors(&["Temperature"]),
            expect: Expected::Table(TEMPERATURE_HAZE_TABLE),
        },
        Case {
            name: "the response named by the request",
            rows: &[
                &["Oven", "Haze", "Gloss"],
                &["A", "1.2", "91"],
                &["B", "2.0", "88"],
                &["A", "1.4", "92"],
            ],
            merged: &[],
            request: TableRequest {
                responses: names(&["Gloss"]),
                ..TableRequest::default()
            },
            expect: Expected::Table(TableExpect {
                layout: Layout::Long,
                area: "A1:C4",
                factors: &[("Oven", &["A", "B"], false)],
                responses: &["Gloss"],
                records: 3,
                findings: &[],
            }),
        },
        Case {
            name: "a column named by the request that is not a header",
            rows: &[&["Oven", "Haze"], &["A", "1.2"], &["B", "2.0"]],
            merged: &[],
            request: factors(&["Furnace"]),
            expect: Expected::UnknownColumn("Furnace"),
        },
        Case {
            name: "the range given picks the second of two tables side by side",
            rows: &[
                &["Oven", "Haze", "", "Press", "Gloss"],
                &["A", "1.2", "", "P1", "91"],
                &["B", "2.0", "", "P2", "88"],
                &["A", "1.4", "", "P1", "92"],
                &["", "", "", "P2", "87"],
            ],
            merged: &[],
            request: ranged("D1:E5"),
            expect: Expected::Table(TableExpect {
                layout: Layout::Long,
                area: "D1:E5",
                factors: &[("Press", &["P1", "P2"], false)],
                responses: &["Gloss"],
                records: 4,
                findings: &[],
            }),
        },
        Case {
            name: "the range given starts below a title; its first row is the header",
            rows: &[
                &["Gloss trial"],
                &["Press", "Gloss"],
                &["P1", "91"],
                &["P2", "88"],
                &["P1", "92"],
            ],
            merged: &[],
            request: ranged("A2:B5"),
            expect: Expected::Table(TableExpect {
                layout: Layout::Long,
                area: "A2:B5",
                factors: &[("Press", &["P1", "P2"], false)],
                responses: &["Gloss"],
                records: 3,
                findings: &[],
            }),
        },
        Case {
            name: "an empty range",
            rows: &[&["Oven", "Haze"], &["A", "1.2"], &["B", "2.0"]],
            merged: &[],
            request: ranged("F10:G20"),
            expect: Expected::NoTable,
        },
        Case {
            name: "an empty sheet",
            rows: &[],
            merged: &[],
            request: TableRequest::default(),
            expect: Expected::NoTable,
        },
        Case {
            name: "text only: no numbers to analyse",
            rows: &[&["Oven", "Operator"], &["A", "Kim"], &["B", "Lee"]],
            merged: &[],
            request: TableRequest::default(),
            expect: Expected::NoTable,
        },
        Case {
            name: "a sample identifier column is not a factor",
            rows: &[
                &["Sample", "Oven", "Haze"],
                &["S-101", "A", "1.2"],
                &["S-102", "A", "1.4"],
                &["S-103", "A", "1.3"],
                &["S-104", "A", "1.1"],
                &["S-105", "B", "2.0"],
                &["S-106", "B", "2.1"],
                &["S-107", "B", "1.9"],
                &["S-108", "B", "2.2"],
            ],
            merged: &[],
            request: TableRequest::default(),
            expect: Expected::Table(TableExpect {
                layout: Layout::Long,
                area: "A1:C9",
                factors: &[("Oven", &["A", "B"], false)],
                responses: &["Haze"],
                records: 8,
                findings: &[(IdentifierColumn, "A1")],
            }),
        },
        Case {
            name: "a run number counting 1, 2, 3, ... is not a response",
            rows: &[
                &["Run", "Oven", "Haze"],
                &["1", "A", "1.2"],
                &["2", "A", "1.4"],
                &["3", "A", "1.3"],
                &["4", "A", "1.1"],
                &["5", "B", "2.0"],
                &["6", "B", "2.1"],
                &["7", "B", "1.9"],
                &["8", "B", "2.2"],
            ],
            merged: &[],
            request: TableRequest::default(),
            expect: Expected::Table(TableExpect {
                layout: Layout::Long,
                area: "A1:C9",
                factors: &[("Oven", &["A", "B"], false)],
                responses: &["Haze"],
                records: 8,
                findings: &[(IdentifierColumn, "A1")],
            }),
        },
        Case {
            name: "a notes column filled on few rows is not a factor",
            rows: &[
                &["Oven", "Haze", "Notes"],
                &["A", "1.2", "door left open"],
                &["A", "1.4", ""],
                &["B", "2.0", ""],
                &["B", "2.1", ""],
            ],
            merged: &[],
            request: TableRequest::default(),
            expect: Expected::Table(TableExpect {
                layout: Layout::Long,
                area: "A1:C5",
                factors: &[("Oven", &["A", "B"], false)],
                responses: &["Haze"],
                records: 4,
                findings: &[(IdentifierColumn, "C1")],
            }),
        },
        Case {
            name: "labels that differ only in case or spacing are one condition, reported",
            rows: &[
                &["Oven", "Haze"],
                &["A", "1.2"],
                &["a ", "1.4"],
                &["B", "2.0"],
                &["B", "2.1"],
            ],
            merged: &[],
            request: TableRequest::default(),
            expect: Expected::Table(TableExpect {
                layout: Layout::Long,
                area: "A1:B5",
                factors: &[("Oven", &["A", "B"], false)],
                responses: &["Haze"],
                records: 4,
                findings: &[(SimilarLabels, "A")],
            }),
        },
        Case {
            name: "a condition written several ways is named by its most used spelling",
            rows: &[
                &["Nozzle", "Fill"],
                &["standard", "500.1"],
                &["Standard", "500.3"],
                &["Wide", "501.0"],
                &["Standard ", "499.9"],
                &["Standard", "500.4"],
                &["Wide", "501.2"],
            ],
            merged: &[],
            request: TableRequest::default(),
            expect: Expected::Table(TableExpect {
                layout: Layout::Long,
                area: "A1:B7",
                factors: &[("Nozzle", &["Standard", "Wide"], false)],
                responses: &["Fill"],
                records: 6,
                findings: &[(SimilarLabels, "A")],
            }),
        },
        Case {
            name: "wide: a blank between values and text among the numbers",
            rows: &[
                &["Oven A", "Oven B"],
                &["1.2", "2.0"],
                &["", "2.1"],
                &["1.3", "none"],
                &["1.4", "2.2"],
            ],
            merged: &[],
            request: TableRequest::default(),
            expect: Expected::Table(TableExpect {
                layout: Layout::Wide,
                area: "A1:B5",
                factors: &[("condition", &["Oven A", "Oven B"], false)],
                responses: &["value"],
                records: 6,
                findings: &[(BlankValue, "A3"), (TextInNumbers, "B4")],
            }),
        },
        Case {
            name: "wide layout asked for, beside a comment column",
            rows: LINES_WITH_COMMENT,
            merged: &[],
            request: TableRequest {
                layout: Some(Layout::Wide),
                ..TableRequest::default()
            },
            expect: Expected::Table(LINES_TABLE),
        },
    ]
}

#[test]
fn former_gaps_are_read_as_a_reader_would() {
    run_cases(&former_gaps());
}

#[test]
fn detection_gives_the_table_a_reader_would_take() {
    run_cases(&cases());
}

/// Cases that were detection gaps before tables were read as engineers keep them
/// (notes and units rows, titles, settings columns, blocks named alone).
fn former_gaps() -> Vec<Case> {
    vec![
        Case {
            name: "a note a blank row below the table is not a record",
            rows: &[
                &["Oven", "Haze"],
                &["A", "1.2"],
                &["A", "1.4"],
                &["B", "2.0"],
                &["B", "2.1"],
                &[""],
                &["Filter changed after run 2"],
            ],
            merged: &[],
            request: TableRequest::default(),
            expect: Expected::Table(OVEN_HAZE_TABLE),
        },
        Case {
            name: "naming only the block leaves the other label column a factor",
            rows: DAY_OVEN_HAZE,
            merged: &[],
            request: TableRequest {
                blocks: names(&["Day"]),
                ..TableRequest::default()
            },
            expect: Expected::Table(DAY_OVEN_HAZE_TABLE),
        },
        Case {
            name: "a numeric column of few repeated settings beside a measurement is a factor",
            rows: TEMPERATURE_HAZE,
            merged: &[],
            request: TableRequest::default(),
            expect: Expected::Table(TEMPERATURE_HAZE_TABLE),
        },
        Case {
            name: "a units row under the header is not a record with a blank label",
            rows: &[
                &["Oven", "Haze"],
                &["", "NTU"],
                &["A", "1.2"],
                &["A", "1.4"],
                &["B", "2.0"],
                &["B", "2.1"],
            ],
            merged: &[],
            request: TableRequest::default(),
            expect: Expected::Table(TableExpect {
                layout: Layout::Long,
                area: "A1:B6",
                factors: &[("Oven", &["A", "B"], false)],
                responses: &["Haze (NTU)"],
                records: 4,
                findings: &[],
            }),
        },
        Case {
            name: "a units row under a wide table's condition columns is the values' unit",
            rows: &[
                &["Line A", "Line B", "Line C"],
                &["mm", "mm", "mm"],
                &["2.07", "2.16", "2.08"],
                &["2.06", "2.13", "2.08"],
            ],
            merged: &[],
            request: TableRequest::default(),
            expect: Expected::Table(TableExpect {
                layout: Layout::Wide,
                area: "A1:C4",
                factors: &[("condition", &["Line A", "Line B", "Line C"], false)],
                responses: &["value (mm)"],
                records: 6,
                findings: &[],
            }),
        },
        Case {
            name: "a column given its unit by a units row is still found by its typed name",
            rows: &[
                &["Oven", "Haze", "Gloss"],
                &["", "NTU", "GU"],
                &["A", "1.2", "80"],
                &["A", "1.4", "82"],
                &["B", "2.0", "85"],
                &["B", "2.1", "86"],
            ],
            merged: &[],
            request: TableRequest {
                factors: vec!["Oven".into()],
                responses: vec!["haze".into()],
                ..TableRequest::default()
            },
            expect: Expected::Table(TableExpect {
                layout: Layout::Long,
                area: "A1:C6",
                factors: &[("Oven", &["A", "B"], false)],
                responses: &["Haze (NTU)"],
                records: 4,
                findings: &[],
            }),
        },
        Case {
            name: "a comment column beside a wide table is not a factor, and is reported",
            rows: LINES_WITH_COMMENT,
            merged: &[],
            request: TableRequest::default(),
            expect: Expected::Table(TableExpect {
                findings: &[(IdentifierColumn, "C1")],
                ..LINES_TABLE
            }),
        },
        Case {
            name: "the only number column is the response even when most cells are unusable",
            rows: &[
                &["Oven", "Haze"],
                &["A", "#N/A"],
                &["A", "1.4"],
                &["B", "#DIV/0!"],
                &["B", "2.1"],
                &["B", "TRUE"],
            ],
            merged: &[],
            request: TableRequest::default(),
            expect: Expected::Table(TableExpect {
                layout: Layout::Long,
                area: "A1:B6",
                factors: &[("Oven", &["A", "B"], false)],
                responses: &["Haze"],
                records: 5,
                findings: &[(ErrorValue, "B2"), (ErrorValue, "B4"), (BooleanInNumbers, "B6")],
            }),
        },
        Case {
            name: "a title of two text cells above the header is not the header",
            rows: &[
                &["Haze trial", "week 12"],
                &["Oven", "Haze"],
                &["A", "1.2"],
                &["A", "1.4"],
                &["B", "2.0"],
                &["B", "2.1"],
            ],
            merged: &[],
            request: TableRequest::default(),
            expect: Expected::Table(TableExpect {
                layout: Layout::Long,
                area: "A2:B6",
                factors: &[("Oven", &["A", "B"], false)],
                responses: &["Haze"],
                records: 4,
                findings: &[],
            }),
        },
    ]
}

/// Shapes engineers keep: several tables, summary rows, context and settings columns.
fn kept_shapes() -> Vec<Case> {
    vec![
        Case {
            name: "a label column with the same label on every row is context beside a factor",
            rows: &[
                &["Sealer temperature", "Seal strength (N/15mm)", "Leak (Y/N)"],
                &["140", "18.2", "N"],
                &["140", "18.9", "N"],
                &["150", "20.1", "N"],
                &["150", "19.7", "N"],
                &["160", "21.0", "N"],
                &["160", "20.6", "N"],
            ],
            merged: &[],
            request: TableRequest::default(),
            expect: Expected::Table(TableExpect {
                layout: Layout::Long,
                area: "A1:C7",
                factors: &[("Sealer temperature", &["140", "150", "160"], false)],
                responses: &["Seal strength (N/15mm)"],
                records: 6,
                findings: &[(IdentifierColumn, "C1")],
            }),
        },
        Case {
            name: "a batch column in which every batch holds every setting is read as blocks",
            rows: &[
                &["Batch", "Mixer speed", "Viscosity (cP)"],
                &["B1", "Low", "1531"],
                &["B1", "Mid", "1502"],
                &["B1", "High", "1470"],
                &["B2", "Low", "1552"],
                &["B2", "High", "1488"],
                &["B2", "Mid", "1517"],
                &["B3", "High", "1499"],
                &["B3", "Mid", "1523"],
                &["B3", "Low", "1561"],
            ],
            merged: &[],
            request: TableRequest::default(),
            expect: Expected::Table(TableExpect {
                layout: Layout::Long,
                area: "A1:C10",
                factors: &[
                    ("Batch", &["B1", "B2", "B3"], true),
                    ("Mixer speed", &["Low", "Mid", "High"], false),
                ],
                responses: &["Viscosity (cP)"],
                records: 9,
                findings: &[],
            }),
        },
        Case {
            name: "batches with repeats at each setting stay a factor (they may be under study)",
            rows: &[
                &["Batch", "Mixer speed", "Viscosity (cP)"],
                &["B1", "Low", "1531"],
                &["B1", "Low", "1528"],
                &["B1", "High", "1470"],
                &["B1", "High", "1474"],
                &["B2", "Low", "1552"],
                &["B2", "High", "1488"],
                &["B2", "Low", "1549"],
                &["B2", "High", "1485"],
            ],
            merged: &[],
            request: TableRequest::default(),
            expect: Expected::Table(TableExpect {
                layout: Layout::Long,
                area: "A1:C9",
                factors: &[
                    ("Batch", &["B1", "B2"], false),
                    ("Mixer speed", &["Low", "High"], false),
                ],
                responses: &["Viscosity (cP)"],
                records: 8,
                findings: &[],
            }),
        },
        Case {
            name: "batches each made at one setting stay a factor (they cannot be blocks)",
            rows: &[
                &["Batch", "Mixer speed", "Viscosity (cP)"],
                &["B1", "Low", "1531"],
                &["B1", "Low", "1528"],
                &["B1", "Low", "1533"],
                &["B2", "High", "1488"],
                &["B2", "High", "1490"],
                &["B2", "High", "1484"],
                &["B3", "Low", "1561"],
                &["B3", "Low", "1557"],
                &["B3", "Low", "1550"],
            ],
            merged: &[],
            request: TableRequest::default(),
            expect: Expected::Table(TableExpect {
                layout: Layout::Long,
                area: "A1:C10",
                factors: &[
                    ("Batch", &["B1", "B2", "B3"], false),
                    ("Mixer speed", &["Low", "High"], false),
                ],
                responses: &["Viscosity (cP)"],
                records: 9,
                findings: &[],
            }),
        },
        Case {
            name: "the trial beside a specification table, a blank column between",
            rows: &[
                &["Die", "Wall", "", "Die", "Min", "Max"],
                &["D1", "2.1", "", "D1", "2.0", "2.2"],
                &["D1", "2.2", "", "D2", "2.0", "2.2"],
                &["D2", "2.0"],
                &["D2", "2.3"],
                &["D1", "2.15"],
                &["D2", "2.25"],
            ],
            merged: &[],
            request: TableRequest::default(),
            expect: Expected::Table(TableExpect {
                layout: Layout::Long,
                area: "A1:B7",
                factors: &[("Die", &["D1", "D2"], false)],
                responses: &["Wall"],
                records: 6,
                findings: &[],
            }),
        },
        Case {
            name: "a summary table below the trial, after a blank row",
            rows: &[
                &["Oven", "Haze"],
                &["A", "1.2"],
                &["A", "1.4"],
                &["B", "2.0"],
                &["B", "2.1"],
                &[""],
                &["Oven", "Mean"],
                &["A", "1.3"],
                &["B", "2.05"],
            ],
            merged: &[],
            request: TableRequest::default(),
            expect: Expected::Table(OVEN_HAZE_TABLE),
        },
        Case {
            name: "an Average row under the data is left out and reported",
            rows: &[
                &["Oven", "Haze"],
                &["A", "1.2"],
                &["A", "1.4"],
                &["B", "2.0"],
                &["B", "2.1"],
                &["Average", "1.675"],
            ],
            merged: &[],
            request: TableRequest::default(),
            expect: Expected::Table(TableExpect {
                findings: &[(SummaryRow, "A6:B6")],
                ..OVEN_HAZE_TABLE
            }),
        },
        Case {
            name: "operator and run columns are context, not factors or responses",
            rows: &[
                &["Operator", "Oven", "Run", "Haze"],
                &["Kim", "A", "1", "1.2"],
                &["Lee", "A", "2", "1.4"],
                &["Kim", "B", "3", "2.0"],
                &["Lee", "B", "4", "2.1"],
            ],
            merged: &[],
            request: TableRequest::default(),
            expect: Expected::Table(TableExpect {
                layout: Layout::Long,
                area: "A1:D5",
                factors: &[("Oven", &["A", "B"], false)],
                responses: &["Haze"],
                records: 4,
                findings: &[(IdentifierColumn, "A1"), (IdentifierColumn, "C1")],
            }),
        },
        Case {
            name: "with one factor named, another settings column is not a response",
            rows: &[
                &["Current", "Voltage", "Width"],
                &["120", "20", "5.6"],
                &["100", "20", "5.1"],
                &["100", "24", "5.3"],
                &["120", "24", "5.9"],
            ],
            merged: &[],
            request: factors(&["Current"]),
            expect: Expected::Table(TableExpect {
                layout: Layout::Long,
                area: "A1:C5",
                factors: &[("Current", &["100", "120"], false)],
                responses: &["Width"],
                records: 4,
                findings: &[(IdentifierColumn, "B1")],
            }),
        },
        Case {
            name: "two-level settings with centre runs are factors, levels by value",
            rows: &[
                &["Temp", "Time", "Yield"],
                &["180", "30", "61.2"],
                &["160", "30", "55.0"],
                &["160", "50", "57.9"],
                &["180", "50", "64.1"],
                &["170", "40", "59.8"],
                &["170", "40", "60.3"],
                &["170", "40", "59.5"],
            ],
            merged: &[],
            request: TableRequest::default(),
            expect: Expected::Table(TableExpect {
                layout: Layout::Long,
                area: "A1:C8",
                factors: &[
                    ("Temp", &["160", "170", "180"], false),
                    ("Time", &["30", "40", "50"], false),
                ],
                responses: &["Yield"],
                records: 7,
                findings: &[],
            }),
        },
    ]
}

/// More kept shapes: a blank spacer column inside one table, levels named like summaries.
fn kept_shapes_more() -> Vec<Case> {
    vec![
        Case {
            name: "a blank spacer column inside one table does not cut it in two",
            rows: &[
                &["Oven", "Haze", "", "Gloss"],
                &["A", "1.2", "", "91"],
                &["A", "1.4", "", "92"],
                &["B", "2.0", "", "88"],
                &["B", "2.1", "", "87"],
            ],
            merged: &[],
            request: TableRequest::default(),
            expect: Expected::Table(TableExpect {
                layout: Layout::Long,
                area: "A1:D5",
                factors: &[("Oven", &["A", "B"], false)],
                responses: &["Haze", "Gloss"],
                records: 4,
                findings: &[],
            }),
        },
        Case {
            name: "a wide table of counts, some columns with few values, stays wide",
            rows: &[
                &["Line 1", "Line 2", "Line 3"],
                &["0", "2", "7"],
                &["1", "3", "5"],
                &["0", "2", "9"],
                &["2", "4", "6"],
                &["1", "3", "8"],
                &["0", "2", "4"],
            ],
            merged: &[],
            request: TableRequest::default(),
            expect: Expected::Table(TableExpect {
                layout: Layout::Wide,
                area: "A1:C7",
                factors: &[("condition", &["Line 1", "Line 2", "Line 3"], false)],
                responses: &["value"],
                records: 18,
                findings: &[],
            }),
        },
        Case {
            name: "levels named Min and Max at the foot are records, not summary rows",
            rows: &[
                &["Fan", "Noise"],
                &["Min", "50"],
                &["Min", "51"],
                &["Max", "60"],
                &["Max", "61"],
            ],
            merged: &[],
            request: TableRequest::default(),
            expect: Expected::Table(TableExpect {
                layout: Layout::Long,
                area: "A1:B5",
                factors: &[("Fan", &["Min", "Max"], false)],
                responses: &["Noise"],
                records: 4,
                findings: &[],
            }),
        },
    ]
}

#[test]
fn kept_shapes_are_read_as_a_reader_would() {
    run_cases(&kept_shapes_more());
    run_cases(&kept_shapes());
}

#[test]
fn dates_are_shown_as_dates() {
    // Day numbers of the 1900 date system counted from 1899-12-30 (common practice for
    // spreadsheet files; 45658 is 2025-01-01, from memory, and the rest follow by counting days).
    assert_eq!(super::cells::date_text(45_658.0), "2025-01-01");
    assert_eq!(super::cells::date_text(46_349.0), "2026-11-23");
    assert_eq!(super::cells::date_text(46_349.5), "2026-11-23 12:00");
    assert_eq!(super::cells::date_text(0.25), "06:00");
    // A leap day: 45351 is 2025-01-01 less the 307 days from 2024-02-29.
    assert_eq!(super::cells::date_text(45_351.0), "2024-02-29");
}

/// Wide tables whose conditions are named by numbers (settings over columns of
/// measurements); the former known gap comes first.
fn numeric_headers() -> Vec<Case> {
    vec![
        Case {
            name: "wide conditions named by numbers in the header row",
            rows: &[&["160", "180"], &["1.2", "2.0"], &["1.4", "2.1"], &["1.3", "2.2"]],
            merged: &[],
            request: TableRequest::default(),
            expect: Expected::Table(TableExpect {
                layout: Layout::Wide,
                area: "A1:B4",
                factors: &[("condition", &["160", "180"], false)],
                responses: &["value"],
                records: 6,
                findings: &[],
            }),
        },
        Case {
            name: "numbers as condition names under a title cell naming the factor",
            rows: &[
                &["Press force (kN)"],
                &["", "20", "25", "30"],
                &["", "41", "44", "47"],
                &["", "40", "45", "48"],
                &["", "42", "43", "46"],
            ],
            merged: &[],
            request: TableRequest::default(),
            expect: Expected::Table(TableExpect {
                layout: Layout::Wide,
                area: "B2:D5",
                factors: &[("Press force (kN)", &["20", "25", "30"], false)],
                responses: &["value"],
                records: 9,
                findings: &[],
            }),
        },
        Case {
            name: "a title 'value by factor, unit' names the measured value and the factor",
            rows: &[
                &["Wall thickness by die, mm"],
                &[],
                &["Die 1", "Die 2", "Die 3"],
                &["2.07", "2.16", "2.08"],
                &["2.06", "2.13", "2.08"],
                &["2.13", "2.12", "2.09"],
            ],
            merged: &[],
            request: TableRequest::default(),
            expect: Expected::Table(TableExpect {
                layout: Layout::Wide,
                area: "A3:C6",
                factors: &[("Die", &["Die 1", "Die 2", "Die 3"], false)],
                responses: &["Wall thickness (mm)"],
                records: 9,
                findings: &[],
            }),
        },
        Case {
            name: "a title 'value by factor, unit' over short forms of the factor's name (N1, N2)",
            rows: &[
                &["Coating thickness by nozzle, um"],
                &["N1", "N2", "N3 (new)"],
                &["52.1", "50.3", "55.0"],
                &["51.7", "49.8", "54.2"],
                &["52.9", "50.6", "55.8"],
            ],
            merged: &[],
            request: TableRequest::default(),
            expect: Expected::Table(TableExpect {
                layout: Layout::Wide,
                area: "A2:C5",
                factors: &[("Nozzle", &["N1", "N2", "N3 (new)"], false)],
                responses: &["Coating thickness (um)"],
                records: 9,
                findings: &[],
            }),
        },
        Case {
            name: "short names whose letters do not start the title's factor leave the title alone",
            rows: &[
                &["Yield by weight, %"],
                &["R1", "R2"],
                &["81.2", "83.0"],
                &["80.7", "84.1"],
                &["81.9", "83.6"],
            ],
            merged: &[],
            request: TableRequest::default(),
            expect: Expected::Table(TableExpect {
                layout: Layout::Wide,
                area: "A2:B5",
                factors: &[("condition", &["R1", "R2"], false)],
                responses: &["value"],
                records: 6,
                findings: &[],
            }),
        },
        Case {
            name: "a title whose 'by' does not name the columns is left alone",
            rows: &[
                &["Yield by weight, %"],
                &["Recipe A", "Recipe B"],
                &["81.2", "83.0"],
                &["80.7", "84.1"],
                &["81.9", "83.6"],
            ],
            merged: &[],
            request: TableRequest::default(),
            expect: Expected::Table(TableExpect {
                layout: Layout::Wide,
                area: "A2:B5",
                factors: &[("condition", &["Recipe A", "Recipe B"], false)],
                responses: &["value"],
                records: 6,
                findings: &[],
            }),
        },
        Case {
            name: "a long description over numbers naming the conditions does not name the factor",
            rows: &[
                &["Press line 2 trial of the new tool, week 49"],
                &["20", "25", "30"],
                &["41", "44", "47"],
                &["40", "45", "48"],
                &["42", "43", "46"],
            ],
            merged: &[],
            request: TableRequest::default(),
            expect: Expected::Table(TableExpect {
                layout: Layout::Wide,
                area: "A2:C5",
                factors: &[("condition", &["20", "25", "30"], false)],
                responses: &["value"],
                records: 9,
                findings: &[],
            }),
        },
        Case {
            name: "falling settings with fractions, outside the range of the values below",
            rows: &[
                &["2.5", "1.5", "0.5"],
                &["12.1", "13.4", "15.0"],
                &["12.4", "13.1", "14.8"],
                &["", "13.3", "15.2"],
            ],
            merged: &[],
            request: TableRequest::default(),
            expect: Expected::Table(TableExpect {
                layout: Layout::Wide,
                area: "A1:C4",
                factors: &[("condition", &["2.5", "1.5", "0.5"], false)],
                responses: &["value"],
                records: 8,
                findings: &[],
            }),
        },
        Case {
            name: "rows of numbers alone, the first like the others, are not a table",
            rows: &[&["12.1", "13.4"], &["12.4", "13.1"], &["12.2", "13.3"]],
            merged: &[],
            request: TableRequest::default(),
            expect: Expected::NoTable,
        },
        Case {
            name: "a first row of numbers out of order is not a header of settings",
            rows: &[&["170", "160", "180"], &["1.2", "2.0", "1.5"], &["1.4", "2.1", "1.6"]],
            merged: &[],
            request: TableRequest::default(),
            expect: Expected::NoTable,
        },
    ]
}

#[test]
fn numbers_in_the_header_row_name_the_conditions() {
    run_cases(&numeric_headers());
    // The choice is said with the numbers read as names.
    let sheet = grid(&[&["160", "180"], &["1.2", "2.0"], &["1.4", "2.1"]], &[]);
    let table = detect_table(&sheet, &TableRequest::default()).expect("a wide table");
    assert!(
        table.choices.iter().any(|line| line.contains("row 1 (160, 180)")),
        "{:?}",
        table.choices
    );
}

/// The cell at an A1 address, for the formula and hidden-column cases.
fn at(a1: &str) -> CellPos {
    crate::cell::parse_a1(a1).expect("an A1 address")
}

#[test]
fn rows_of_summary_formulas_are_left_out_wherever_they_stand() {
    // A long table with an unlabelled AVERAGE row at its foot and a SUBTOTAL row between
    // the suppliers: neither is a record (common practice: summaries are not measurements).
    let mut sheet = grid(
        &[
            &["Supplier", "Strength"],
            &["North", "40.1"],
            &["North", "40.5"],
            &["", "40.3"],
            &["South", "41.9"],
            &["South", "42.2"],
            &["", "41.2"],
        ],
        &[],
    );
    sheet.summary_formulas = vec![(at("B4"), "SUBTOTAL"), (at("B7"), "AVERAGE")];
    let table = detect_table(&sheet, &TableRequest::default()).expect("a long table");
    assert_eq!(table.n_records(), 4);
    assert_eq!(table.factors[0].levels, ["North", "South"]);
    let summary: Vec<String> = table
        .findings
        .iter()
        .filter(|finding| finding.kind == SummaryRow)
        .map(|finding| finding.message.clone())
        .collect();
    assert_eq!(summary.len(), 2, "{summary:?}");
    assert!(summary[0].contains("SUBTOTAL in B4"), "{summary:?}");
    assert!(summary[1].contains("AVERAGE in B7"), "{summary:?}");
    assert!(
        table
            .choices
            .iter()
            .any(|line| line.contains("rows 4, 7 hold summary formulas")),
        "{:?}",
        table.choices
    );
    // The same grid without the formulas noted reads the rows as records with blank
    // labels (no label says summary), so the formulas are what told them apart.
    sheet.summary_formulas.clear();
    let plain = detect_table(&sheet, &TableRequest::default()).expect("a long table");
    assert!(!plain.findings.iter().any(|finding| finding.kind == SummaryRow));
    assert!(plain.findings.iter().any(|finding| finding.kind == BlankLabel));
}

#[test]
fn a_column_of_summary_formulas_beside_a_wide_table_is_left_out() {
    let mut sheet = grid(
        &[
            &["Oven 1", "Oven 2", "Oven 3", "Spread"],
            &["85.1", "86.0", "84.2", "1.8"],
            &["85.4", "86.3", "84.9", "1.4"],
            &["84.8", "85.7", "84.5", "1.2"],
        ],
        &[],
    );
    sheet.summary_formulas = vec![(at("D2"), "MAX"), (at("D3"), "MAX"), (at("D4"), "MAX")];
    let table = detect_table(&sheet, &TableRequest::default()).expect("a wide table");
    assert_eq!(table.layout, Layout::Wide);
    assert_eq!(table.factors[0].levels, ["Oven 1", "Oven 2", "Oven 3"]);
    assert_eq!(table.n_records(), 9);
    assert!(
        table
            .choices
            .iter()
            .any(|line| line.contains("Spread (summary formulas)")),
        "{:?}",
        table.choices
    );
}

#[test]
fn hidden_helper_columns_are_kept_as_context_unless_named() {
    let rows: &[&[&str]] = &[
        &["Tip", "Calc", "Bead width"],
        &["S", "0.912", "0.35"],
        &["S", "0.933", "0.36"],
        &["M", "0.951", "0.41"],
        &["M", "0.947", "0.40"],
        &["L", "0.982", "0.47"],
        &["L", "0.975", "0.46"],
    ];
    let mut sheet = grid(rows, &[]);
    // Shown, the column is a second measurement.
    let shown = detect_table(&sheet, &TableRequest::default()).expect("a long table");
    let names: Vec<&str> = shown.responses.iter().map(|response| response.name.as_str()).collect();
    assert_eq!(names, ["Calc", "Bead width"]);
    // Hidden, it is a helper column: context, said in the choice line and a finding.
    sheet.hidden_cols = vec![1];
    let hidden = detect_table(&sheet, &TableRequest::default()).expect("a long table");
    let names: Vec<&str> = hidden.responses.iter().map(|response| response.name.as_str()).collect();
    assert_eq!(names, ["Bead width"]);
    assert!(
        hidden
            .choices
            .iter()
            .any(|line| line.contains("Calc (hidden helper column)") && line.contains("`response`")),
        "{:?}",
        hidden.choices
    );
    assert!(hidden
        .findings
        .iter()
        .any(|finding| finding.kind == IdentifierColumn && finding.cell.as_deref() == Some("B1")));
    assert!(!hidden
        .findings
        .iter()
        .any(|finding| finding.kind == FindingKind::HiddenCells));
    // Named, it is analysed, and the finding says its values are hidden.
    let named = detect_table(
        &sheet,
        &TableRequest {
            responses: vec!["Calc".to_string()],
            ..TableRequest::default()
        },
    )
    .expect("a long table");
    assert_eq!(named.responses[0].name, "Calc");
    assert!(named
        .findings
        .iter()
        .any(|finding| finding.kind == FindingKind::HiddenCells));
    assert!(named
        .choices
        .iter()
        .any(|line| line.contains("column B of the table is hidden")));
    // Hidden rows are records all the same, said in a choice line.
    sheet.hidden_cols.clear();
    sheet.hidden_rows = vec![2];
    let rows_hidden = detect_table(&sheet, &TableRequest::default()).expect("a long table");
    assert_eq!(rows_hidden.n_records(), 6);
    assert!(rows_hidden
        .choices
        .iter()
        .any(|line| line.contains("row 3 of the table is hidden")));
}

#[test]
fn a_box_behnken_plan_typed_by_hand_is_a_design() {
    // Box-Behnken in three factors (each pair at its four corners with the third at
    // its middle, then centre runs; the published construction), beside a label
    // column: the settings are factors, with no "no design" line.
    let mut rows: Vec<Vec<String>> = vec![vec![
        "Shift".into(),
        "Temp".into(),
        "Speed".into(),
        "Humidity".into(),
        "Shrink".into(),
    ]];
    let settings = [[165.0, 180.0, 195.0], [1.5, 2.0, 2.5], [30.0, 40.0, 50.0]];
    let mut coded: Vec<[usize; 3]> = Vec::new();
    for (first, second) in [(0, 1), (0, 2), (1, 2)] {
        for (a, b) in [(0, 0), (2, 0), (0, 2), (2, 2)] {
            let mut run = [1, 1, 1];
            run[first] = a;
            run[second] = b;
            coded.push(run);
        }
    }
    coded.extend([[1, 1, 1]; 3]);
    for (index, run) in coded.iter().enumerate() {
        let mut row = vec![if index % 2 == 0 { "Early" } else { "Late" }.to_string()];
        row.extend((0..3).map(|factor| settings[factor][run[factor]].to_string()));
        row.push(format!("{:.2}", 3.0 + 0.1 * index as f64));
        rows.push(row);
    }
    let rows: Vec<Vec<&str>> = rows
        .iter()
        .map(|row| row.iter().map(String::as_str).collect())
        .collect();
    let rows: Vec<&[&str]> = rows.iter().map(Vec::as_slice).collect();
    let table = detect_table(&grid(&rows, &[]), &TableRequest::default()).expect("a long table");
    let factor_names: Vec<&str> = table.factors.iter().map(|factor| factor.name.as_str()).collect();
    assert!(
        factor_names.ends_with(&["Temp", "Speed", "Humidity"]),
        "{factor_names:?}"
    );
    assert!(
        !table.choices.iter().any(|line| line.contains("do not form")),
        "{:?}",
        table.choices
    );
    // The same settings changed one at a time from the centre are no design: Temp and
    // Speed are never both away from it.
    let one_at_a_time = grid(
        &[
            &["Temp", "Speed", "Shrink"],
            &["165", "2", "3.1"],
            &["195", "2", "3.4"],
            &["180", "1.5", "3.0"],
            &["180", "2.5", "3.3"],
            &["180", "2", "3.2"],
            &["180", "2", "3.25"],
        ],
        &[],
    );
    let table = detect_table(&one_at_a_time, &TableRequest::default()).expect("a table");
    assert!(
        table.choices.iter().any(
            |line| line.contains("do not form a factorial or response-surface pattern")
                && line.contains("Temp = 165 never meets Speed = 1.5")
        ),
        "{:?}",
        table.choices
    );
}

#[test]
fn settings_columns_are_factors_only_when_they_form_a_design() {
    // A half fraction 2^(3-1) (C = AB) with a centre run: every pair of columns meets in
    // all four combinations (a two-level orthogonal array; common practice).
    let fraction = grid(
        &[
            &["Temp", "Time", "Speed", "Yield"],
            &["150", "10", "300", "61.2"],
            &["170", "10", "200", "66.0"],
            &["150", "20", "200", "63.1"],
            &["170", "20", "300", "70.4"],
            &["160", "15", "250", "65.2"],
            &["150", "10", "300", "60.8"],
            &["170", "10", "200", "66.9"],
            &["150", "20", "200", "62.7"],
            &["170", "20", "300", "71.0"],
        ],
        &[],
    );
    let table = detect_table(&fraction, &TableRequest::default()).expect("a long table");
    let factor_names: Vec<&str> = table.factors.iter().map(|factor| factor.name.as_str()).collect();
    assert_eq!(factor_names, ["Temp", "Time", "Speed"]);
    // One column changed at a time: Temp = 170 never meets Time = 20, no design.
    let one_at_a_time = grid(
        &[
            &["Temp", "Time", "Yield"],
            &["150", "10", "61.2"],
            &["150", "10", "61.9"],
            &["170", "10", "66.0"],
            &["170", "10", "66.4"],
            &["150", "20", "63.1"],
            &["150", "20", "62.5"],
        ],
        &[],
    );
    // Alone, they stay the factors, with the missing pattern said.
    let table = detect_table(&one_at_a_time, &TableRequest::default()).expect("a table");
    let factor_names: Vec<&str> = table.factors.iter().map(|factor| factor.name.as_str()).collect();
    assert_eq!(factor_names, ["Temp", "Time"]);
    assert!(
        table.choices.iter().any(|line| line.contains("do not form a factorial")
            && line.contains("Temp = 170 never meets Time = 20")
            && line.contains("`factor`")),
        "{:?}",
        table.choices
    );
    // Beside a label factor, they are context: neither factors nor measurements.
    let beside_label = grid(
        &[
            &["Line", "Temp", "Time", "Yield"],
            &["East", "150", "10", "61.2"],
            &["East", "150", "10", "61.9"],
            &["East", "170", "10", "66.0"],
            &["West", "170", "10", "66.4"],
            &["West", "150", "20", "63.1"],
            &["West", "150", "20", "62.5"],
        ],
        &[],
    );
    let table = detect_table(&beside_label, &TableRequest::default()).expect("a long table");
    let factor_names: Vec<&str> = table.factors.iter().map(|factor| factor.name.as_str()).collect();
    assert_eq!(factor_names, ["Line"]);
    let response_names: Vec<&str> = table.responses.iter().map(|response| response.name.as_str()).collect();
    assert_eq!(response_names, ["Yield"]);
    assert!(
        table
            .choices
            .iter()
            .any(|line| line.contains("kept as context, neither factors nor measurements")),
        "{:?}",
        table.choices
    );
    // Named as factors, they are read as factors all the same.
    let named = detect_table(&one_at_a_time, &factors(&["Temp", "Time"])).expect("a long table");
    assert_eq!(named.factors.len(), 2);
    assert_eq!(named.responses[0].name, "Yield");
}

#[test]
fn wide_condition_names_written_alike_are_one_condition() {
    let sheet = grid(
        &[
            &["Die A", "die  A", "Die B", "DIE B"],
            &["3.1", "3.3", "4.0", "4.4"],
            &["3.2", "3.0", "4.2", "4.3"],
            &["3.4", "", "4.1", ""],
        ],
        &[],
    );
    let table = detect_table(&sheet, &TableRequest::default()).expect("a wide table");
    assert_eq!(table.factors[0].levels, ["Die A", "Die B"]);
    assert_eq!(table.n_records(), 10);
    // Records of the merged condition keep their own cells.
    let cells: Vec<String> = (0..table.n_records())
        .filter(|record| table.factors[0].level_of_record[*record] == 0)
        .map(|record| table.value_cell(0, record).a1())
        .collect();
    assert_eq!(cells, ["A2", "B2", "A3", "B3", "A4"]);
    // Case alone is not a duplicate header here: the names are merged, not renamed.
    let merged: Vec<&super::Finding> = table
        .findings
        .iter()
        .filter(|finding| finding.kind == SimilarLabels)
        .collect();
    assert_eq!(merged.len(), 2);
    assert_eq!(merged[0].cell.as_deref(), Some("A1:B1"));
    assert!(merged[0].message.contains("'Die A', 'die  A'"), "{}", merged[0].message);
    assert_eq!(merged[1].cell.as_deref(), Some("C1:D1"));
    assert!(!table.findings.iter().any(|finding| finding.kind == DuplicateHeader));
    assert!(
        table.choices.iter().any(|line| line.contains("Die A | die  A")),
        "{:?}",
        table.choices
    );
}

#[test]
fn a_context_column_that_changes_with_a_factor_is_reported() {
    let ties = |rows: &[&[&str]]| -> Vec<super::Finding> {
        let table = detect_table(&grid(rows, &[]), &TableRequest::default()).expect("a table");
        table
            .findings
            .into_iter()
            .filter(|finding| finding.kind == FindingKind::ContextWithFactor)
            .collect()
    };
    // A 2^2 with two centre runs, the low Pressure runs all on the early shift: the
    // shift cannot be told apart from Pressure (the centre runs, on both, do not hide it).
    let tied = ties(&[
        &["Shift", "Pressure", "Hold", "Flash"],
        &["Early", "600", "4", "0.41"],
        &["Early", "600", "8", "0.40"],
        &["Late", "800", "4", "0.66"],
        &["Late", "800", "8", "0.65"],
        &["Early", "700", "6", "0.52"],
        &["Late", "700", "6", "0.55"],
    ]);
    assert_eq!(tied.len(), 1, "{tied:?}");
    assert_eq!(tied[0].cell.as_deref(), Some("A1"));
    assert!(
        tied[0].message.contains("'Shift' changes with the factor 'Pressure'")
            && tied[0].message.contains("every run at Pressure 600 has Shift Early")
            && tied[0].message.contains("every run at Pressure 800 has Shift Late"),
        "{}",
        tied[0].message
    );
    // The same runs blocked on the interaction (common practice): each Pressure and
    // each Hold on both shifts, nothing to say.
    let spread = ties(&[
        &["Shift", "Pressure", "Hold", "Flash"],
        &["Early", "600", "4", "0.41"],
        &["Late", "600", "8", "0.40"],
        &["Late", "800", "4", "0.66"],
        &["Early", "800", "8", "0.65"],
        &["Early", "700", "6", "0.52"],
        &["Late", "700", "6", "0.55"],
    ]);
    assert!(spread.is_empty(), "{spread:?}");
    // A one-factor trial with each die run on its own day.
    let by_day = ties(&[
        &["Day", "Die", "Wall"],
        &["Mon", "Old", "2.11"],
        &["Mon", "Old", "2.13"],
        &["Mon", "Old", "2.12"],
        &["Tue", "New", "2.05"],
        &["Tue", "New", "2.06"],
        &["Tue", "New", "2.04"],
    ]);
    assert_eq!(by_day.len(), 1, "{by_day:?}");
    assert!(
        by_day[0].message.contains("between Mon and Tue (Day)"),
        "{}",
        by_day[0].message
    );
    // One run per setting shows where it happened to be made, not a tie.
    let single = ties(&[
        &["Operator", "Die", "Wall"],
        &["Ann", "Old", "2.11"],
        &["Ben", "New", "2.05"],
        &["Ann", "Mid", "2.08"],
    ]);
    assert!(single.is_empty(), "{single:?}");
}
