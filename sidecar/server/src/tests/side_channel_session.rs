//! The side channel changes nothing a client sees: the same requests, sent
//! to a session with it and to one without it (the library's own way), get
//! answers that are the same bytes, results, errors, a cancellation, a
//! time limit and the library's refusal after `shutdown` alike; and the
//! stash is empty once every answer has passed.

use std::collections::HashMap;
use std::time::Duration;

use serde_json::{json, Value};
use tokio::io::{AsyncReadExt, AsyncWriteExt};
use tokio::sync::mpsc;

use super::{large_cells, WAIT};
use crate::framing::{frame, FramingOptions};
use crate::server::{methods, ServerOptions};
use crate::side_channel::{Stash, CELLS_FIELD};

/// One step of a conversation.
enum Step {
    /// Send these bytes as one message's body.
    Send(Vec<u8>),
    /// Wait for the answer with this id (its JSON text).
    Await(&'static str),
}

fn message(id: Value, method: &str, params: Value) -> Vec<u8> {
    json!({"jsonrpc": "2.0", "id": id, "method": method, "params": params})
        .to_string()
        .into_bytes()
}

fn notification(method: &str, params: Value) -> Vec<u8> {
    json!({"jsonrpc": "2.0", "method": method, "params": params})
        .to_string()
        .into_bytes()
}

/// A message body's id, as JSON text, when it is an answer.
fn answer_id(body: &[u8]) -> Option<String> {
    let value: Value = serde_json::from_slice(body).ok()?;
    if value.get("method").is_some() {
        return None;
    }
    value.get("id").map(Value::to_string)
}

/// Runs the steps against a session and returns the answers' bodies by id,
/// with the stash the session used (none when the side channel is off).
async fn converse(options: ServerOptions, steps: &[Step]) -> (HashMap<String, Vec<u8>>, Option<Stash>) {
    let stash = options.side_channel.then(Stash::new);
    let (client_end, server_end) = tokio::io::duplex(1 << 20);
    let (server_read, server_write) = tokio::io::split(server_end);
    let server = tokio::spawn(crate::serve_session_with(
        server_read,
        server_write,
        options,
        FramingOptions::default(),
        stash.clone(),
    ));
    let (mut client_read, mut client_write) = tokio::io::split(client_end);
    let (outgoing, mut outgoing_receiver) = mpsc::unbounded_channel::<Vec<u8>>();
    let writer = tokio::spawn(async move {
        while let Some(bytes) = outgoing_receiver.recv().await {
            if client_write.write_all(&bytes).await.is_err() {
                break;
            }
        }
        let _ = client_write.shutdown().await;
    });
    let mut answers = HashMap::new();
    let mut buffer = Vec::new();
    let mut chunk = vec![0u8; 1 << 16];
    for step in steps {
        match step {
            Step::Send(body) => {
                let _ = outgoing.send(frame(body));
            }
            Step::Await(id) => {
                let deadline = tokio::time::Instant::now() + WAIT;
                while !answers.contains_key(*id) {
                    let read = tokio::time::timeout_at(deadline, client_read.read(&mut chunk))
                        .await
                        .unwrap_or_else(|_| panic!("no answer to {id}"));
                    match read {
                        Ok(0) | Err(_) => panic!("the session ended before the answer to {id}"),
                        Ok(read) => buffer.extend_from_slice(&chunk[..read]),
                    }
                    while let Some((size, body_start)) = whole_message(&buffer) {
                        let body = buffer[body_start..size].to_vec();
                        buffer.drain(..size);
                        if let Some(answer) = answer_id(&body) {
                            answers.insert(answer, body);
                        }
                    }
                }
            }
        }
    }
    drop(outgoing);
    let _ = writer.await;
    let _ = tokio::time::timeout(WAIT, server).await;
    (answers, stash)
}

/// The size of the first whole message in `bytes` and where its body starts.
fn whole_message(bytes: &[u8]) -> Option<(usize, usize)> {
    let header_end = bytes.windows(4).position(|window| window == b"\r\n\r\n")?;
    let header = std::str::from_utf8(&bytes[..header_end]).ok()?;
    let length: usize = header.strip_prefix("Content-Length: ")?.trim().parse().ok()?;
    let total = header_end + 4 + length;
    (bytes.len() >= total).then_some((total, header_end + 4))
}

/// The answer's bytes with what changes from run to run (the time the
/// results were made, and how long each stage took, in the results and in
/// the provenance table) blanked; nothing else is touched.
fn without_clock(body: &[u8]) -> String {
    let mut text = String::from_utf8_lossy(body).into_owned();
    let created = "\"created_at\":\"";
    if let Some(start) = text.find(created).map(|at| at + created.len()) {
        if let Some(length) = text[start..].find('"') {
            let stamp = text[start..start + length].to_string();
            text = text.replace(&stamp, "(the time)");
        }
    }
    let timings = "\"timings\":{";
    let mut from = 0;
    while let Some(start) = text[from..].find(timings).map(|at| from + at + timings.len()) {
        let Some(length) = text[start..].find('}') else {
            break;
        };
        text.replace_range(start..start + length, "");
        from = start;
    }
    // The same times, shown in the provenance table: `["time (ms): ...","0.0, ..."]`.
    let label = "[\"time (ms)";
    let mut from = 0;
    while let Some(start) = text[from..].find(label).map(|at| from + at + label.len()) {
        let Some(value_start) = text[start..].find("\",\"").map(|at| start + at + 3) else {
            break;
        };
        let Some(length) = text[value_start..].find('"') else {
            break;
        };
        text.replace_range(value_start..value_start + length, "");
        from = value_start;
    }
    text
}

/// An invented trial: `n_conditions` columns of `n_rows` values that differ
/// by condition and by row (no statistics are checked here).
fn trial_cells(n_conditions: usize, n_rows: usize) -> Value {
    let header = (1..=n_conditions).map(|condition| json!(format!("Setting {condition}")));
    let mut rows = vec![Value::Array(header.collect())];
    for row in 0..n_rows {
        let values = (0..n_conditions).map(|condition| {
            let wobble = ((row * 37 + condition * 11) % 17) as f64 * 0.13 + (row as f64 * 0.7).sin();
            json!(30.0 + condition as f64 * 0.3 + wobble)
        });
        rows.push(Value::Array(values.collect()));
    }
    Value::Array(rows)
}

fn initialize() -> Vec<Step> {
    vec![
        Step::Send(message(
            json!(1),
            "initialize",
            json!({"processId": null, "rootUri": null, "capabilities": {}}),
        )),
        Step::Await("1"),
        Step::Send(notification("initialized", json!({}))),
    ]
}

/// Compares the answers of both sessions, id by id.
/// Returns the answers with the stash's counts (requests diverted, answers put in place).
async fn same_answers(options: ServerOptions, steps: &[Step], ids: &[&str]) -> (HashMap<String, Vec<u8>>, (u64, u64)) {
    let (with, stash) = converse(options.clone(), steps).await;
    let (without, none) = converse(
        ServerOptions {
            side_channel: false,
            ..options
        },
        steps,
    )
    .await;
    assert!(none.is_none());
    let stash = stash.expect("the side channel is on");
    assert!(stash.is_empty(), "entries left after every answer: {stash:?}");
    for id in ids {
        let (Some(with), Some(without)) = (with.get(*id), without.get(*id)) else {
            panic!("no answer to {id}");
        };
        let (with, without) = (without_clock(with), without_clock(without));
        if with != without {
            let at = with
                .bytes()
                .zip(without.bytes())
                .position(|(a, b)| a != b)
                .unwrap_or(with.len().min(without.len()));
            let from = at.saturating_sub(200);
            panic!(
                "the answers to {id} differ from byte {at}:\n{}\nagainst\n{}",
                String::from_utf8_lossy(&with.as_bytes()[from..(at + 200).min(with.len())]),
                String::from_utf8_lossy(&without.as_bytes()[from..(at + 200).min(without.len())])
            );
        }
    }
    (with, stash.counts())
}

#[tokio::test]
async fn answers_are_the_same_bytes_with_and_without_the_side_channel() {
    let analyse = methods::ANALYSE_CELLS;
    let mut steps = initialize();
    let requests: Vec<(Value, &str, Value)> = vec![
        // Results: a small table away from A1, and 10,000 values.
        (
            json!(2),
            analyse,
            json!({"cells": trial_cells(3, 5), "origin": "B3", "sheet": "Line trial"}),
        ),
        (
            json!("large"),
            analyse,
            json!({"cells": trial_cells(8, 1_250), "sourceName": "timing.ods"}),
        ),
        // Findings only: the cells come the same way.
        (
            json!(3),
            methods::INSPECT_CELLS,
            json!({"cells": [["A", "B"], [1, "n/a"], [2, 3], [4, "#N/A"]]}),
        ),
        // Errors: from the handler after the cells were stashed...
        (json!(4), analyse, json!({"cells": [[1]], "origin": "no place"})),
        (
            json!(5),
            analyse,
            json!({"cells": trial_cells(2, 4), "settings": {"confidence": "150%"}}),
        ),
        (
            json!(6),
            analyse,
            json!({"cells": [[1], [], [2]], "origin": "A1048575"}),
        ),
        // ...and from requests the guard leaves to the library.
        (json!(7), analyse, json!({"cells": [[1, {"a": 1}]]})),
        (json!(8), analyse, json!({"origin": "B2"})),
        // The server's own field, sent by a client: refused either way.
        (json!(9), analyse, json!({"cells": [[1]], CELLS_FIELD: "a guess-1"})),
        (json!(10), methods::INSPECT_CELLS, json!({CELLS_FIELD: "a guess-2"})),
    ];
    let mut ids = Vec::new();
    for (id, method, params) in &requests {
        steps.push(Step::Send(message(id.clone(), method, params.clone())));
        let id_text: &'static str = Box::leak(id.to_string().into_boxed_str());
        steps.push(Step::Await(id_text));
        ids.push(id_text);
    }
    // A field given twice: the library keeps the last; the guard leaves it to the library.
    steps.push(Step::Send(
        br#"{"jsonrpc":"2.0","id":11,"method":"trialyst/analyseCells","params":{"cells":[[1]],"cells":[["A","B"],[1,2],[3,4]]}}"#.to_vec(),
    ));
    steps.push(Step::Await("11"));
    // Cancelled while it runs.
    steps.push(Step::Send(message(
        json!(12),
        analyse,
        json!({"cells": large_cells(60_000)}),
    )));
    steps.push(Step::Send(notification("$/cancelRequest", json!({"id": 12}))));
    steps.push(Step::Await("12"));
    // Refused by the library after shutdown.
    steps.push(Step::Send(message(json!(13), "shutdown", Value::Null)));
    steps.push(Step::Await("13"));
    steps.push(Step::Send(message(
        json!(14),
        analyse,
        json!({"cells": trial_cells(3, 5)}),
    )));
    steps.push(Step::Await("14"));
    steps.push(Step::Send(notification("exit", Value::Null)));
    ids.extend(["11", "12", "13", "14"]);

    // Diverted: 2, "large", 3, 4, 5, 6, 12 and 14; answers put in place: 2 and "large".
    let (answers, counts) = same_answers(ServerOptions::default(), &steps, &ids).await;
    assert_eq!(counts, (8, 2), "diverted requests, answers put in place");
    // The comparison is of real answers: results, findings, each error named.
    let read = |id: &str| -> Value { serde_json::from_slice(&answers[id]).unwrap_or(Value::Null) };
    assert!(read("\"large\"")["result"]["tables"]
        .as_array()
        .is_some_and(|tables| tables.len() >= 3));
    assert!(read("2")["result"]["results"].is_object());
    assert!(read("3")["result"].is_object());
    assert_eq!(read("4")["error"]["data"]["field"], "params.origin");
    assert_eq!(read("5")["error"]["data"]["field"], "params.settings.confidence");
    assert_eq!(read("6")["error"]["data"]["field"], "params.cells[2]");
    assert_eq!(read("7")["error"]["data"]["field"], "params.cells[0][1]");
    assert_eq!(read("8")["error"]["data"]["field"], "params.cells");
    assert_eq!(read("9")["error"]["data"]["field"], format!("params.{CELLS_FIELD}"));
    assert_eq!(read("10")["error"]["data"]["field"], format!("params.{CELLS_FIELD}"));
    assert!(read("11")["result"]["results"].is_object());
    // LSP 3.17: -32800 request cancelled; JSON-RPC 2.0: -32600 invalid request.
    assert_eq!(read("12")["error"]["code"], -32800);
    assert_eq!(read("14")["error"]["code"], -32600);
}

#[tokio::test]
async fn a_request_stopped_at_its_time_limit_leaves_nothing_in_the_stash() {
    let options = ServerOptions {
        request_time_limit: Some(Duration::from_millis(20)),
        ..ServerOptions::default()
    };
    let mut steps = initialize();
    steps.push(Step::Send(message(
        json!(2),
        methods::ANALYSE_CELLS,
        json!({"cells": large_cells(60_000)}),
    )));
    steps.push(Step::Await("2"));
    // The stopped computation has ended by the time a later request is answered.
    steps.push(Step::Send(message(
        json!(3),
        methods::ANALYSE_CELLS,
        json!({"cells": trial_cells(3, 4)}),
    )));
    steps.push(Step::Await("3"));
    steps.push(Step::Send(notification("exit", Value::Null)));
    let (answers, counts) = same_answers(options, &steps, &["2"]).await;
    let stopped: Value = serde_json::from_slice(&answers["2"]).unwrap_or(Value::Null);
    assert_eq!(stopped["error"]["data"]["kind"], "time-limit", "{stopped}");
    // The small request may itself outlive so short a limit on a busy machine.
    let small: Value = serde_json::from_slice(&answers["3"]).unwrap_or(Value::Null);
    let put_in_place = u64::from(small["result"].is_object());
    assert_eq!(counts, (2, put_in_place), "{small}");
}

/// An answer whose entry is gone (its id answered already, here by an
/// answer to another request with the same id) is replied in full: no
/// placeholder reaches the client.
#[test]
fn an_answer_without_its_entry_is_replied_in_full() {
    let params = json!({"cells": trial_cells(3, 6)});
    let answer = || {
        let results = super::analysed_params(&params);
        let tables = crate::answer_tables::BookTables(service::report::build_shown_sheets(&results));
        crate::server::CellsAnswer { results, tables }
    };
    let stash = Stash::new();
    let body = message(json!(7), methods::ANALYSE_CELLS, params.clone());
    let forwarded: Value = serde_json::from_slice(&stash.divert(&body).expect("diverted")).unwrap_or(Value::Null);
    let key = forwarded["params"][CELLS_FIELD]
        .as_str()
        .unwrap_or_default()
        .to_string();

    // With its entry: the placeholder, and the answer kept.
    let reply = crate::server::stash_answer(Some(&stash), Some(&key), answer());
    assert!(matches!(reply, crate::server::CellsReply::Stashed(_)));
    assert_eq!(stash.len(), 1);

    // Settled by another answer with id 7: the entry goes, the next reply is whole.
    let other = br#"{"jsonrpc":"2.0","result":{"resultsFile":"x"},"id":7}"#;
    assert!(stash.settle(other).is_none());
    assert!(stash.is_empty());
    let reply = crate::server::stash_answer(Some(&stash), Some(&key), answer());
    assert!(matches!(reply, crate::server::CellsReply::Answer(_)));
    assert!(stash.is_empty());
}
