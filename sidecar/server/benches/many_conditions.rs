//! Cost with many conditions: a one-way trial of N conditions of 3 values each
//! (invented values from a fixed seed), N = 50, 100 and 200, so the number of
//! pairs grows about 4 times from one size to the next (1,225, 4,950, 19,900).
//! Every pair stays in its tables; the target is under 1.5 s for 200 conditions
//! (release) on each path, and a cost growing no faster than the number of pairs.
//!
//! - `analyse_cells_request`: a `trialyst/analyseCells` request as the server
//!   answers it: the params read into a grid, the analysis, the result tables laid
//!   out and the answer written as JSON;
//! - `results_workbook`: the same analysis written as a results workbook (the
//!   bytes of the file, as `trialyst run` writes them), and its parts
//!   `analysis`, `report_model` (the results laid out as sheets) and
//!   `workbook_bytes` (the sheets made into xlsx bytes).
//!
//! Run in release (the bench profile): `cargo bench -p server --bench many_conditions`.

use std::path::Path;

use divan::Bencher;
use serde_json::{json, Value};
use server::answer_tables::BookTables;
use server::from_proto::cells_params;
use server::server::CellsAnswer;
use service::CancelFlag;
use tower_lsp_server::jsonrpc::Response;

fn main() {
    divan::main();
}

/// The numbers of conditions timed.
const SIZES: [usize; 3] = [50, 100, 200];

/// The params of an analyseCells request: a long table, a condition label and a
/// measured value per row, three rows per condition, the means rising slowly
/// with the condition's number and some noise (xorshift from a fixed seed).
fn request_params(n_conditions: usize) -> Value {
    let mut rows = vec![json!(["Condition", "Thickness"])];
    let mut state: u64 = 0x9E37_79B9_7F4A_7C15;
    for condition in 0..n_conditions {
        for _ in 0..3 {
            state ^= state << 13;
            state ^= state >> 7;
            state ^= state << 17;
            let noise = (state >> 11) as f64 / (1u64 << 53) as f64 - 0.5;
            let value = 50.0 + 0.05 * condition as f64 + 2.0 * noise;
            rows.push(json!([format!("setting {:03}", condition + 1), value]));
        }
    }
    json!({"cells": rows, "origin": "A1", "sheet": "Trial", "sourceName": "many.xlsx"})
}

fn analysed(params: &Value) -> service::WorkbookResults {
    let read = cells_params(params).expect("cells");
    service::analyse_grid(&read.grid, &read.settings, &read.source_name, &CancelFlag::default()).expect("analysed")
}

/// The number of pairs the lead family of the results holds.
fn lead_pairs(results: &service::WorkbookResults) -> usize {
    let value = serde_json::to_value(results).expect("results");
    let text = value.to_string();
    text.matches("\"p_adjusted\"").count()
}

/// The whole request as the server answers it.
#[divan::bench(args = SIZES, sample_count = 3)]
fn analyse_cells_request(bencher: Bencher<'_, '_>, n_conditions: usize) {
    let params = request_params(n_conditions);
    bencher.bench(|| {
        let results = analysed(&params);
        let tables = BookTables(service::report::build_results_book(&results));
        let answer = CellsAnswer { results, tables };
        let value = serde_json::to_value(&answer).expect("answer");
        let response = Response::from_ok(12.into(), value);
        serde_json::to_vec(&response).expect("written").len()
    });
}

/// The whole results workbook, as `trialyst run` makes it (in memory).
#[divan::bench(args = SIZES, sample_count = 3)]
fn results_workbook(bencher: Bencher<'_, '_>, n_conditions: usize) {
    let params = request_params(n_conditions);
    // Every pair is there: n(n-1)/2 of them in at least the lead family.
    let n_pairs = n_conditions * (n_conditions - 1) / 2;
    assert!(lead_pairs(&analysed(&params)) >= n_pairs);
    bencher.bench(|| {
        let results = analysed(&params);
        let book = service::report::build_results_book(&results);
        workbook_io::write::to_bytes(&book, Path::new("many.results.xlsx"))
            .expect("bytes")
            .len()
    });
}

/// Part of the workbook: the analysis alone.
#[divan::bench(args = SIZES, sample_count = 3)]
fn analysis(bencher: Bencher<'_, '_>, n_conditions: usize) {
    let params = request_params(n_conditions);
    bencher.bench(|| analysed(&params));
}

/// Part of the workbook: the results laid out as sheets.
#[divan::bench(args = SIZES, sample_count = 3)]
fn report_model(bencher: Bencher<'_, '_>, n_conditions: usize) {
    let results = analysed(&request_params(n_conditions));
    bencher.bench(|| service::report::build_results_book(&results).sheets.len());
}

/// Part of the workbook: the sheets made into xlsx bytes.
#[divan::bench(args = SIZES, sample_count = 3)]
fn workbook_bytes(bencher: Bencher<'_, '_>, n_conditions: usize) {
    let book = service::report::build_results_book(&analysed(&request_params(n_conditions)));
    bencher.bench(|| {
        workbook_io::write::to_bytes(&book, Path::new("many.results.xlsx"))
            .expect("bytes")
            .len()
    });
}
