//! The protocol's share of a `trialyst/analyseCells` request of 10,000
//! values (8 conditions of 1,250, invented values from a fixed seed).
//!
//! `protocol_share` is the way requests take now, around the library's JSON
//! trees (`server::side_channel`): the guard reads the cells into the stash
//! and forwards a small request, the library reads that, the cells become
//! the grid; the answer's tables are laid out, the answer is written as JSON
//! in the library's key order, the library writes the small placeholder
//! answer and the merger puts the answer in its place. `protocol_share_former`
//! is the library's own way: the guard's check, the library's reading of the
//! whole request, the grid, and the answer turned into the library's value
//! and written. The analysis itself is timed apart (`analysis`) and is not
//! the protocol's share. Target: the share under 2 ms at p50.
//!
//! Run in release (the bench profile): `cargo bench -p server --bench protocol_share`.

use divan::Bencher;
use serde_json::{json, Value};
use server::answer_tables::BookTables;
use server::framing::{check_body, Incoming};
use server::from_proto::cells_params;
use server::server::{CellsAnswer, CellsReply};
use server::side_channel::{Settled, Stash, CELLS_FIELD};
use server::sorted_json::to_vec_sorted;
use server::to_proto::book_tables;
use service::CancelFlag;
use tower_lsp_server::jsonrpc::Response;

fn main() {
    divan::main();
}

/// The body of the request, as an add-in sends it.
fn request_body() -> String {
    let n_conditions = 8;
    let n_rows = 10_000 / n_conditions;
    let mut rows = vec![Value::Array(
        (1..=n_conditions)
            .map(|condition| json!(format!("Setting {condition}")))
            .collect(),
    )];
    let mut state: u64 = 0x2545_F491_4F6C_DD1D;
    for _ in 0..n_rows {
        let row: Vec<Value> = (0..n_conditions)
            .map(|condition| {
                state ^= state << 13;
                state ^= state >> 7;
                state ^= state << 17;
                let noise = (state >> 11) as f64 / (1u64 << 53) as f64 - 0.5;
                json!(50.0 + condition as f64 * 0.4 + noise * 3.0)
            })
            .collect();
        rows.push(Value::Array(row));
    }
    json!({
        "jsonrpc": "2.0",
        "id": 12,
        "method": "trialyst/analyseCells",
        "params": {"cells": rows, "origin": "A1", "sheet": "Timing", "sourceName": "timing.ods"},
    })
    .to_string()
}

/// The library's reading of the request and of its params (it hands the
/// handler `serde_json::from_value` of the params).
fn library_read(body: &str) -> Value {
    let Ok(Incoming::Request(request)) = serde_json::from_str::<Incoming>(body) else {
        panic!("the request reads as a request");
    };
    let (_, _, params) = request.into_parts();
    serde_json::from_value::<Value>(params.unwrap_or(Value::Null)).expect("params")
}

fn analysed(params: &Value) -> service::WorkbookResults {
    let read = cells_params(params).expect("cells");
    service::analyse_grid(&read.grid, &read.settings, &read.source_name, &CancelFlag::default()).expect("analysed")
}

/// The answer as the library writes it: the result turned into its value,
/// the response written as JSON.
fn answer_bytes(results: service::WorkbookResults) -> Vec<u8> {
    let tables = BookTables(service::report::build_results_book(&results));
    let answer = CellsAnswer { results, tables };
    let value = serde_json::to_value(&answer).expect("answer");
    let response = Response::from_ok(12.into(), value);
    serde_json::to_vec(&response).expect("written")
}

#[divan::bench(sample_count = 200)]
fn framing_check(bencher: Bencher<'_, '_>) {
    let body = request_body();
    bencher.bench(|| check_body(body.as_bytes()).is_ok());
}

/// The guard's former check, for comparison: the message read into the
/// library's types through a buffered tree, as the library itself reads it.
#[divan::bench(sample_count = 200)]
fn framing_check_former(bencher: Bencher<'_, '_>) {
    let body = request_body();
    bencher.bench(|| serde_json::from_str::<Incoming>(&body).is_ok());
}

#[divan::bench(sample_count = 200)]
fn library_read_request(bencher: Bencher<'_, '_>) {
    let body = request_body();
    bencher.bench(|| library_read(&body));
}

#[divan::bench(sample_count = 200)]
fn params_to_grid(bencher: Bencher<'_, '_>) {
    let params = library_read(&request_body());
    bencher.bench(|| cells_params(&params).map(|read| read.n_cells).ok());
}

/// The engine's and service's work: not the protocol's share.
#[divan::bench(sample_count = 50)]
fn analysis(bencher: Bencher<'_, '_>) {
    let params = library_read(&request_body());
    bencher.bench(|| analysed(&params));
}

#[divan::bench(sample_count = 200)]
fn answer_written(bencher: Bencher<'_, '_>) {
    let results = analysed(&library_read(&request_body()));
    bencher.with_inputs(|| results.clone()).bench_values(answer_bytes);
}

/// The request's part around the library: the guard keeps the cells and
/// forwards a small request; the library reads it; the handler makes the grid.
fn side_channel_request(body: &str, stash: &Stash) -> (server::from_proto::CellsParams, String) {
    let forwarded = stash.divert(body.as_bytes()).expect("diverted");
    let params = library_read(std::str::from_utf8(&forwarded).expect("text"));
    let key = params[CELLS_FIELD].as_str().expect("key").to_string();
    let raw = stash.take_cells(&key).expect("kept");
    let read = server::from_proto::cells_params_with(&params, Some(&raw)).expect("cells");
    (read, key)
}

/// The answer's part around the library: tables laid out, the answer
/// written, the library's placeholder answer written, and the merger's
/// message with the answer in place (in its parts, as the merger writes them).
fn side_channel_answer(stash: &Stash, key: &str, results: service::WorkbookResults) -> Settled {
    let tables = BookTables(service::report::build_shown_sheets(&results));
    let bytes = to_vec_sorted(&CellsAnswer { results, tables }).expect("written");
    assert!(stash.put_answer(key, bytes));
    let value = serde_json::to_value(CellsReply::Stashed(Stash::placeholder(key))).expect("placeholder");
    let response = serde_json::to_vec(&Response::from_ok(12.into(), value)).expect("written");
    stash.settle(&response).expect("put in place")
}

#[divan::bench(sample_count = 200)]
fn side_channel_request_part(bencher: Bencher<'_, '_>) {
    let body = request_body();
    let stash = Stash::new();
    let refused = br#"{"jsonrpc":"2.0","error":{"code":-32800,"message":"x"},"id":12}"#;
    bencher.bench(|| {
        let (read, _) = side_channel_request(&body, &stash);
        // The entry goes with its answer (not timed apart: a small read).
        assert!(stash.settle(refused).is_none());
        read.n_cells
    });
}

#[divan::bench(sample_count = 200)]
fn side_channel_answer_part(bencher: Bencher<'_, '_>) {
    let body = request_body();
    let results = analysed(&library_read(&body));
    let stash = Stash::new();
    bencher
        .with_inputs(|| {
            let (_, key) = side_channel_request(&body, &stash);
            (results.clone(), key)
        })
        .bench_values(|(results, key)| side_channel_answer(&stash, &key, results).answer.len());
}

/// Parts of the answer around the library: the answer written in the library's key order.
#[divan::bench(sample_count = 200)]
fn answer_part_sorted_json(bencher: Bencher<'_, '_>) {
    let results = analysed(&library_read(&request_body()));
    let tables = BookTables(service::report::build_shown_sheets(&results));
    let answer = CellsAnswer { results, tables };
    bencher.bench(|| to_vec_sorted(&answer).map(|bytes| bytes.len()).ok());
}

/// The protocol's share in one, the way requests take now: the request and
/// the answer around the library (the analysis result made beforehand).
#[divan::bench(sample_count = 200)]
fn protocol_share(bencher: Bencher<'_, '_>) {
    let body = request_body();
    let results = analysed(&library_read(&body));
    let stash = Stash::new();
    bencher.with_inputs(|| results.clone()).bench_values(|results| {
        let (read, key) = side_channel_request(&body, &stash);
        let n = read.n_cells;
        drop(read);
        (n, side_channel_answer(&stash, &key, results))
    });
}

/// The protocol's share in one, the library's own way: check, read, grid,
/// answer (the analysis result made beforehand).
#[divan::bench(sample_count = 200)]
fn protocol_share_former(bencher: Bencher<'_, '_>) {
    let body = request_body();
    let results = analysed(&library_read(&body));
    bencher.with_inputs(|| results.clone()).bench_values(|results| {
        assert!(check_body(body.as_bytes()).is_ok());
        let params = library_read(&body);
        let read = cells_params(&params).expect("cells");
        drop(params);
        let n = read.n_cells;
        (n, answer_bytes(results))
    });
}

/// Parts of the answer, the former way: the result tables laid out from the
/// results as owned rows (each value and format code copied).
#[divan::bench(sample_count = 200)]
fn answer_part_tables_former(bencher: Bencher<'_, '_>) {
    let results = analysed(&library_read(&request_body()));
    bencher.bench(|| book_tables(&service::report::build_results_book(&results)).len());
}

/// Parts of the answer: the library's value made from the answer.
#[divan::bench(sample_count = 200)]
fn answer_part_value(bencher: Bencher<'_, '_>) {
    let results = analysed(&library_read(&request_body()));
    let tables = BookTables(service::report::build_results_book(&results));
    let answer = CellsAnswer { results, tables };
    bencher.bench(|| serde_json::to_value(&answer).map(|value| value.is_object()).ok());
}

/// Parts of the answer: the value written as JSON.
#[divan::bench(sample_count = 200)]
fn answer_part_json(bencher: Bencher<'_, '_>) {
    let results = analysed(&library_read(&request_body()));
    let tables = BookTables(service::report::build_results_book(&results));
    let value = serde_json::to_value(CellsAnswer { results, tables }).expect("answer");
    let response = Response::from_ok(12.into(), value);
    bencher.bench(|| serde_json::to_vec(&response).map(|bytes| bytes.len()).ok());
}

/// Parts of the answer: the report model alone (the service's layout of the results).
#[divan::bench(sample_count = 200)]
fn answer_part_report_model(bencher: Bencher<'_, '_>) {
    let results = analysed(&library_read(&request_body()));
    bencher.bench(|| service::report::build_results_book(&results).sheets.len());
}

/// Parts of the answer around the library: the report model of the sheets
/// a reader sees (the answer has no use for the hidden results document).
#[divan::bench(sample_count = 200)]
fn answer_part_shown_sheets(bencher: Bencher<'_, '_>) {
    let results = analysed(&library_read(&request_body()));
    bencher.bench(|| service::report::build_shown_sheets(&results).sheets.len());
}
