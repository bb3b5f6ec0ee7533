// The tests print how long the work ran before it stopped.
#![allow(clippy::print_stdout)]

//! Cancel points of the requests that read cells or plan: a long inspection of cells,
//! a long plan and a long size question each notice their cancel flag and stop (the
//! log says so and the progress ends "cancelled"), and the session goes on.

use std::time::Instant;

use serde_json::{json, Value};

use super::{error_code, expect_stopped, large_cells, temp_dir, write_trial, TestClient};
use crate::server::methods;
use crate::server::ServerOptions;

/// Sends `method` with a progress token, cancels it once its progress has begun, and
/// checks that the request is answered as cancelled and that the work itself stopped.
pub(super) async fn cancel_once_begun(method: &str, mut params: Value) {
    let mut client = TestClient::start(ServerOptions::default());
    let _ = client.initialize(json!({})).await;
    params["workDoneToken"] = json!("long");
    let started = Instant::now();
    let id = client.send_request(method, params);
    let _ = client
        .notification("$/progress", |message| message["params"]["value"]["kind"] == "begin")
        .await;
    client.notify("$/cancelRequest", json!({"id": id}));
    let answer = client.response(id).await;
    // LSP 3.17: -32800 request cancelled.
    assert_eq!(error_code(&answer), -32800, "{method}: {answer}");
    expect_stopped(&client).await;
    println!(
        "{method}: stopped {:.2} s after it was sent",
        started.elapsed().as_secs_f64()
    );
    // The session goes on.
    let unknown = client.request("trialyst/noSuchThing", json!({})).await;
    assert_eq!(error_code(&unknown), -32601);
    assert_eq!(client.finish().await, 0);
}

#[tokio::test]
async fn a_long_inspection_of_cells_stops_when_cancelled() {
    cancel_once_begun(methods::INSPECT_CELLS, json!({"cells": large_cells(200_000)})).await;
}

#[tokio::test]
async fn a_long_inspection_of_a_workbook_stops_when_cancelled() {
    let folder = temp_dir();
    let path = folder.path().join("large trial.xlsx");
    write_trial(&path, 300_000, None);
    cancel_once_begun(methods::INSPECT_WORKBOOK, json!({"path": path.display().to_string()})).await;
}

/// 13 factors at two levels, the full factorial: 8,192 runs with their plan workbook.
fn many_factor_plan() -> Value {
    let factors: Vec<Value> = (0..13)
        .map(|index| json!({"name": format!("Setting {index}"), "levels": [10 + index, 20 + index]}))
        .collect();
    json!({"factors": factors, "responses": ["Yield", "Thickness"], "seed": 3})
}

#[tokio::test]
async fn a_long_plan_stops_when_cancelled() {
    cancel_once_begun(methods::PLAN_TRIAL, many_factor_plan()).await;
}

/// The largest size question: 200 conditions, a difference and a half-width far below
/// the SD (tens of thousands of runs per condition, studentized-range quantiles of 200
/// groups). Size questions take milliseconds, so this one is mostly stopped at its
/// first cancel point; the test shows the flag reaches the work.
fn long_size_question() -> Value {
    json!({"conditions": 200, "smallestDifference": 0.05, "sd": 1.0, "halfWidth": 0.02, "power": 0.99})
}

#[tokio::test]
async fn a_long_size_question_stops_when_cancelled() {
    cancel_once_begun(methods::SIZE_TRIAL, long_size_question()).await;
}

/// The same requests run to their end when not cancelled (so the cancelled answers
/// above are not failures of the requests themselves).
#[tokio::test]
async fn the_long_requests_answer_when_left_alone() {
    let mut client = TestClient::start(ServerOptions::default());
    let _ = client.initialize(json!({})).await;
    for (method, params, key) in [
        (methods::PLAN_TRIAL, many_factor_plan(), "plan"),
        (methods::SIZE_TRIAL, long_size_question(), "answer"),
    ] {
        let started = Instant::now();
        let answer = client.request(method, params).await;
        assert!(answer["result"][key].is_object(), "{method}: {answer}");
        println!("{method}: answered in {:.2} s", started.elapsed().as_secs_f64());
    }
    assert_eq!(client.finish().await, 0);
}

/// Past its time limit a plan that has begun is stopped at the next stage (the first
/// cancel point, before the plan is made, has passed by then), answered with the
/// time-limit error, and says in the log that it stopped. On a loaded machine the limit
/// can fall after the last stage has begun, when the work ends as done: every try must
/// answer with the time-limit error, and one of the tries, with shorter and shorter
/// limits, must stop at a stage (without the stage checks none would).
#[tokio::test]
async fn a_plan_past_its_time_limit_stops_at_its_next_stage() {
    let mut ends = Vec::new();
    for milliseconds in [100, 40, 15, 5] {
        let limit = std::time::Duration::from_millis(milliseconds);
        let mut client = TestClient::start(ServerOptions {
            request_time_limit: Some(limit),
            ..ServerOptions::default()
        });
        let _ = client.initialize(json!({})).await;
        let mut params = many_factor_plan();
        params["workDoneToken"] = json!("long");
        let id = client.send_request(methods::PLAN_TRIAL, params);
        let answer = client.response(id).await;
        assert_eq!(answer["error"]["data"]["kind"], "time-limit", "{answer}");
        let end = client
            .notification("$/progress", |message| message["params"]["value"]["kind"] == "end")
            .await;
        let stopped = end["params"]["value"]["message"] == "cancelled";
        if stopped {
            expect_stopped(&client).await;
        }
        assert_eq!(client.finish().await, 0);
        if stopped {
            return;
        }
        ends.push(end);
    }
    panic!("with no limit tried did the plan stop at a stage after it: {ends:?}");
}
