//! In-process tests of the protocol server: the whole stack (framing guard,
//! library, handlers, document owner) over in-memory pipes, driven by a
//! client task that answers the server's requests and records everything
//! the server sends.

use std::collections::HashMap;
use std::path::Path;
use std::sync::{Arc, Mutex};
use std::time::Duration;

use serde_json::{json, Value};
use tokio::io::{AsyncReadExt, AsyncWriteExt};
use tokio::sync::{mpsc, Notify};

use super::framing::{frame, FramingOptions};
use super::server::ServerOptions;
use service::settings::Settings;
use service::{self, AnalysisRequest};

/// How long any one wait may take before a test gives up.
const WAIT: Duration = Duration::from_secs(20);

#[derive(Default)]
struct Received {
    /// Answers to our requests, by id.
    responses: HashMap<i64, Value>,
    /// Answers with a null id (framing errors).
    unmatched: Vec<Value>,
    /// Notifications and requests from the server, in arrival order.
    from_server: Vec<Value>,
}

struct TestClient {
    outgoing: mpsc::UnboundedSender<Vec<u8>>,
    received: Arc<Mutex<Received>>,
    arrived: Arc<Notify>,
    server: tokio::task::JoinHandle<i32>,
    next_id: i64,
}

fn split_frame(buffer: &[u8]) -> Option<(usize, Value)> {
    let header_end = buffer.windows(4).position(|window| window == b"\r\n\r\n")?;
    let header = std::str::from_utf8(&buffer[..header_end]).ok()?;
    let length: usize = header
        .lines()
        .find_map(|line| line.strip_prefix("Content-Length: "))
        .and_then(|value| value.trim().parse().ok())?;
    let total = header_end + 4 + length;
    if buffer.len() < total {
        return None;
    }
    let value = serde_json::from_slice(&buffer[header_end + 4..total]).unwrap_or(Value::Null);
    Some((total, value))
}

impl TestClient {
    fn start(options: ServerOptions) -> Self {
        let (client_end, server_end) = tokio::io::duplex(1 << 20);
        let (server_read, server_write) = tokio::io::split(server_end);
        let server = tokio::spawn(super::serve_session(
            server_read,
            server_write,
            options,
            FramingOptions {
                body_idle_timeout: Duration::from_millis(200),
                ..FramingOptions::default()
            },
        ));
        let (mut client_read, mut client_write) = tokio::io::split(client_end);
        let (outgoing, mut outgoing_receiver) = mpsc::unbounded_channel::<Vec<u8>>();
        tokio::spawn(async move {
            while let Some(bytes) = outgoing_receiver.recv().await {
                if client_write.write_all(&bytes).await.is_err() {
                    break;
                }
            }
            // Dropping the writer closes the server's input.
            let _ = client_write.shutdown().await;
        });
        let received = Arc::new(Mutex::new(Received::default()));
        let arrived = Arc::new(Notify::new());
        let reader_received = received.clone();
        let reader_arrived = arrived.clone();
        // A weak handle, so that dropping the client's sender closes the server's input.
        let answer_sender = outgoing.downgrade();
        tokio::spawn(async move {
            let mut buffer = Vec::new();
            let mut chunk = vec![0u8; 1 << 16];
            loop {
                let read = match client_read.read(&mut chunk).await {
                    Ok(0) | Err(_) => break,
                    Ok(read) => read,
                };
                buffer.extend_from_slice(&chunk[..read]);
                while let Some((size, message)) = split_frame(&buffer) {
                    buffer.drain(..size);
                    let mut received = reader_received.lock().unwrap_or_else(|poison| poison.into_inner());
                    if message.get("method").is_some() {
                        // A request from the server is answered at once.
                        if let Some(id) = message.get("id") {
                            let answer = json!({"jsonrpc": "2.0", "id": id, "result": null});
                            if let Some(sender) = answer_sender.upgrade() {
                                let _ = sender.send(frame(answer.to_string().as_bytes()));
                            }
                        }
                        received.from_server.push(message);
                    } else if let Some(id) = message.get("id").and_then(Value::as_i64) {
                        received.responses.insert(id, message);
                    } else {
                        received.unmatched.push(message);
                    }
                    reader_arrived.notify_waiters();
                }
            }
        });
        Self {
            outgoing,
            received,
            arrived,
            server,
            next_id: 1,
        }
    }

    fn send_raw(&self, bytes: Vec<u8>) {
        let _ = self.outgoing.send(bytes);
    }

    fn send(&self, message: Value) {
        self.send_raw(frame(message.to_string().as_bytes()));
    }

    fn notify(&self, method: &str, params: Value) {
        self.send(json!({"jsonrpc": "2.0", "method": method, "params": params}));
    }

    fn send_request(&mut self, method: &str, params: Value) -> i64 {
        let id = self.next_id;
        self.next_id += 1;
        self.send(json!({"jsonrpc": "2.0", "id": id, "method": method, "params": params}));
        id
    }

    /// Waits until `found` picks something out of what was received.
    async fn wait_for<T>(&self, mut found: impl FnMut(&Received) -> Option<T>) -> T {
        let deadline = tokio::time::Instant::now() + WAIT;
        loop {
            let notified = self.arrived.notified();
            if let Some(value) = found(&self.received.lock().unwrap_or_else(|poison| poison.into_inner())) {
                return value;
            }
            if tokio::time::timeout_at(deadline, notified).await.is_err() {
                let received = self.received.lock().unwrap_or_else(|poison| poison.into_inner());
                panic!(
                    "timed out; received responses {:?}, unmatched {:?}, from server {:?}",
                    received.responses, received.unmatched, received.from_server
                );
            }
        }
    }

    async fn response(&self, id: i64) -> Value {
        self.wait_for(|received| received.responses.get(&id).cloned()).await
    }

    async fn request(&mut self, method: &str, params: Value) -> Value {
        let id = self.send_request(method, params);
        self.response(id).await
    }

    async fn notification(&self, method: &str, mut matches: impl FnMut(&Value) -> bool) -> Value {
        self.wait_for(|received| {
            received
                .from_server
                .iter()
                .find(|message| message["method"] == method && matches(message))
                .cloned()
        })
        .await
    }

    async fn initialize(&mut self, capabilities: Value) -> Value {
        let answer = self
            .request(
                "initialize",
                json!({"processId": null, "rootUri": null, "capabilities": capabilities}),
            )
            .await;
        self.notify("initialized", json!({}));
        answer
    }

    async fn finish(mut self) -> i32 {
        let _ = self.request("shutdown", Value::Null).await;
        self.notify("exit", Value::Null);
        self.exit_code().await
    }

    async fn exit_code(self) -> i32 {
        match tokio::time::timeout(WAIT, self.server).await {
            Ok(Ok(code)) => code,
            _ => -1,
        }
    }
}

/// Writes a wide trial table: a column per condition, `n_rows` values each.
/// `bad_cell` puts the text "n/a" in place of one value, at (row, column).
fn write_trial(path: &Path, n_rows: usize, bad_cell: Option<(u32, u16)>) {
    let mut workbook = rust_xlsxwriter::Workbook::new();
    let sheet = workbook.add_worksheet();
    let _ = sheet.set_name("Trial");
    for (col, name) in ["Line A", "Line B", "Line C"].iter().enumerate() {
        let _ = sheet.write_string(0, col as u16, *name);
        for row in 0..n_rows {
            // Values that differ by condition and by row; no statistics are checked here.
            let value = 10.0 + col as f64 + ((row * 7 + col * 3) % 5) as f64 * 0.1;
            let _ = sheet.write_number(row as u32 + 1, col as u16, value);
        }
    }
    if let Some((row, col)) = bad_cell {
        let _ = sheet.write_string(row, col, "n/a");
    }
    workbook.save(path).expect("the test workbook can be written");
}

fn file_uri(path: &Path) -> String {
    format!("file://{}", path.display()).replace(' ', "%20")
}

fn temp_dir() -> tempfile::TempDir {
    tempfile::tempdir().expect("a temporary folder")
}

/// A value as the client sees it: written as JSON text and read back, as
/// every answer is (the reading may round a float's last bit).
fn as_received(value: &impl serde::Serialize) -> Value {
    serde_json::to_string(value)
        .ok()
        .and_then(|text| serde_json::from_str(&text).ok())
        .unwrap_or(Value::Null)
}

/// The parts of a results document that do not change from run to run.
fn stable(mut results: Value) -> Value {
    if let Value::Object(map) = &mut results {
        map.remove("created_at");
        map.remove("timings");
    }
    results
}

/// The results of `trialyst/analyseCells` params, as the service makes them.
pub(crate) fn analysed_params(params: &Value) -> service::WorkbookResults {
    let read = super::from_proto::cells_params(params).expect("cells");
    service::analyse_grid(
        &read.grid,
        &read.settings,
        &read.source_name,
        &service::CancelFlag::default(),
    )
    .expect("analysed")
}

fn error_code(answer: &Value) -> i64 {
    answer["error"]["code"].as_i64().unwrap_or(0)
}

#[tokio::test]
async fn lifecycle_and_exit_codes() {
    let mut client = TestClient::start(ServerOptions::default());
    // LSP 3.17, initialize: requests before it get -32002.
    let early = client
        .request(super::server::methods::INSPECT_WORKBOOK, json!({"path": "x.xlsx"}))
        .await;
    assert_eq!(error_code(&early), -32002, "{early}");
    let answer = client.initialize(json!({})).await;
    assert_eq!(answer["result"]["serverInfo"]["name"], "trialyst");
    assert_eq!(answer["result"]["serverInfo"]["version"], service::TOOL_VERSION);
    let ours = &answer["result"]["capabilities"]["experimental"]["trialyst"];
    assert_eq!(
        ours["requests"].as_array().map(Vec::len),
        Some(super::server::methods::ALL.len()),
        "{answer}"
    );
    assert_eq!(ours["resultsFormatVersion"], service::RESULTS_FORMAT_VERSION);
    // JSON-RPC 2.0, section 5.1: -32601 method not found.
    let unknown = client.request("trialyst/noSuchThing", json!({})).await;
    assert_eq!(error_code(&unknown), -32601);
    // LSP 3.17, exit: 0 after shutdown.
    assert_eq!(client.finish().await, 0);

    // LSP 3.17, exit: 1 without shutdown.
    let mut client = TestClient::start(ServerOptions::default());
    let _ = client.initialize(json!({})).await;
    client.notify("exit", Value::Null);
    assert_eq!(client.exit_code().await, 1);

    // A closed input ends the session too, with 1 since there was no shutdown.
    let mut client = TestClient::start(ServerOptions::default());
    let _ = client.initialize(json!({})).await;
    let TestClient { outgoing, server, .. } = client;
    drop(outgoing);
    let code = tokio::time::timeout(WAIT, server).await.ok().and_then(Result::ok);
    assert_eq!(code, Some(1));
}

#[tokio::test]
async fn every_request_answers_as_the_service_does() {
    let folder = temp_dir();
    let path = folder.path().join("week 3.xlsx");
    // "n/a" at zero-based (4, 1): cell B5.
    write_trial(&path, 8, Some((4, 1)));
    let path_text = path.display().to_string();
    let mut client = TestClient::start(ServerOptions::default());
    let _ = client.initialize(json!({})).await;

    let inspected = client
        .request(super::server::methods::INSPECT_WORKBOOK, json!({"path": path_text}))
        .await;
    let inspection = &inspected["result"];
    assert_eq!(inspection["sheets"][0]["name"], "Trial", "{inspected}");
    assert_eq!(inspection["table"]["layout"], "wide");
    assert_eq!(inspection["findings"][0]["cell"], "B5");

    let analysed = client
        .request(
            super::server::methods::ANALYSE_WORKBOOK,
            json!({"path": path_text, "sheet": "Trial", "settings": {"confidence": "90%"}}),
        )
        .await;
    // Reference: the service API called directly with the same settings.
    let request = AnalysisRequest {
        settings: Settings {
            sheet: Some("Trial".into()),
            confidence: Some(0.9),
            ..Settings::default()
        },
        ..AnalysisRequest::default()
    };
    let direct = service::analyse_workbook(&path, &request).expect("the service analyses it");
    assert_eq!(stable(analysed["result"].clone()), stable(as_received(&direct)));

    let written = client
        .request(
            super::server::methods::WRITE_RESULTS,
            json!({"path": path_text, "outputFolder": folder.path().join("out").display().to_string()}),
        )
        .await;
    let expected = service::results_path_for(&path, Some(&folder.path().join("out")));
    assert_eq!(
        written["result"]["resultsFile"],
        expected.display().to_string(),
        "{written}"
    );
    assert!(expected.is_file());
    assert!(path.is_file(), "the original stays where it was");
    assert_eq!(client.finish().await, 0);
}

#[tokio::test]
async fn cells_keep_the_client_sheet_addresses() {
    let mut client = TestClient::start(ServerOptions::default());
    let _ = client.initialize(json!({})).await;
    let cells = json!([
        ["Supplier 1", "Supplier 2", "Supplier 3"],
        [4.1, 5.0, 6.2],
        [4.3, "n/a", 6.0],
        [4.0, 5.2, 6.1],
        [4.4, 5.1, 5.9],
    ]);
    let answer = client
        .request(
            super::server::methods::ANALYSE_CELLS,
            json!({"cells": cells, "origin": "C5", "sheet": "Week 3", "sourceName": "week 3.xlsx"}),
        )
        .await;
    let result = &answer["result"];
    // Row 3 of the block (zero-based 2), column 2 (zero-based 1), from C5: D7.
    assert_eq!(result["results"]["findings"][0]["cell"], "D7", "{answer}");
    assert_eq!(result["results"]["findings"][0]["sheet"], "Week 3");
    assert_eq!(result["results"]["source"]["range"], "C5:E9");
    // Reference: the service API on the same cells.
    let read =
        super::from_proto::cells_params(&json!({"cells": cells, "origin": "C5", "sheet": "Week 3"})).expect("valid");
    let direct = service::analyse_grid(&read.grid, &read.settings, "week 3.xlsx", &service::CancelFlag::new())
        .expect("analysable");
    assert_eq!(stable(result["results"].clone()), stable(as_received(&direct)));
    // The tables are the visible sheets of the results workbook (the hidden
    // results document is the `results` already in the answer).
    let book = service::report::build_results_book(&direct);
    let names: Vec<&str> = book
        .sheets
        .iter()
        .filter(|sheet| !sheet.hidden)
        .map(|sheet| sheet.name.as_str())
        .collect();
    assert!(book.sheets.iter().any(|sheet| sheet.hidden));
    let table_names: Vec<&str> = result["tables"]
        .as_array()
        .map(|tables| tables.iter().filter_map(|table| table["name"].as_str()).collect())
        .unwrap_or_default();
    assert_eq!(table_names, names);
    let conditions = result["tables"]
        .as_array()
        .and_then(|tables| {
            tables
                .iter()
                .find(|table| table["name"] == service::report::names::CONDITIONS)
        })
        .cloned()
        .unwrap_or_default();
    let rows = conditions["values"].as_array().cloned().unwrap_or_default();
    let formats = conditions["numberFormats"].as_array().cloned().unwrap_or_default();
    assert_eq!(rows.len(), formats.len());
    assert!(rows.iter().any(|row| row[0] == "Supplier 2"), "{conditions}");
    assert!(client.finish().await == 0);
}

#[tokio::test]
async fn bad_params_and_bad_paths_get_clear_errors() {
    let folder = temp_dir();
    let not_a_workbook = folder.path().join("notes.xlsx");
    std::fs::write(&not_a_workbook, "just some text").expect("writable");
    let mut client = TestClient::start(ServerOptions::default());
    let _ = client.initialize(json!({})).await;
    let methods = super::server::methods::ALL;
    for method in methods {
        let answer = client.request(method, json!({"nothing": true})).await;
        // JSON-RPC 2.0, section 5.1: -32602 invalid params.
        assert_eq!(error_code(&answer), -32602, "{method}: {answer}");
        let field = answer["error"]["data"]["field"].as_str().unwrap_or("");
        assert!(
            ["params.path", "params.cells", "params.factors", "params.sd"].contains(&field),
            "{answer}"
        );
    }
    let answer = client.request(methods[2], json!({"cells": [[1, 2], "row"]})).await;
    assert_eq!(answer["error"]["data"]["field"], "params.cells[1]");
    let answer = client.request(methods[1], json!({"path": 12})).await;
    assert!(answer["error"]["message"]
        .as_str()
        .unwrap_or("")
        .contains("params.path"));
    let answer = client
        .request(methods[1], json!({"path": "x.xlsx", "settings": {"confidence": 150}}))
        .await;
    assert_eq!(
        answer["error"]["data"]["field"], "params.settings.confidence",
        "{answer}"
    );
    let answer = client.request(methods[1], Value::Null).await;
    assert_eq!(error_code(&answer), -32602, "{answer}");

    let answer = client
        .request(methods[1], json!({"path": not_a_workbook.display().to_string()}))
        .await;
    // LSP 3.17: -32803 request failed.
    assert_eq!(error_code(&answer), -32803, "{answer}");
    assert_eq!(answer["error"]["data"]["kind"], "not-a-workbook");
    assert!(answer["error"]["message"]
        .as_str()
        .unwrap_or("")
        .contains("is not a workbook"));
    let missing = folder.path().join("missing.xlsx");
    let answer = client
        .request(methods[0], json!({"path": missing.display().to_string()}))
        .await;
    assert_eq!(answer["error"]["data"]["kind"], "unreadable", "{answer}");
    assert_eq!(client.finish().await, 0);
}

#[tokio::test]
async fn a_panic_in_a_handler_is_an_internal_error_and_the_server_goes_on() {
    let mut client = TestClient::start(ServerOptions {
        with_panic_method: true,
        ..ServerOptions::default()
    });
    let _ = client.initialize(json!({})).await;
    let answer = client.request("test/panic", json!({})).await;
    // JSON-RPC 2.0, section 5.1: -32603 internal error.
    assert_eq!(error_code(&answer), -32603, "{answer}");
    let answer = client.request("test/panic", json!(null)).await;
    assert_eq!(answer["result"], Value::Null, "{answer}");
    assert_eq!(client.finish().await, 0);
}

#[tokio::test]
async fn diagnostics_appear_at_their_cells_and_clear_when_fixed() {
    let folder = temp_dir();
    let path = folder.path().join("trial.xlsx");
    // "n/a" at zero-based (3, 2): cell C4.
    write_trial(&path, 6, Some((3, 2)));
    let uri = file_uri(&path);
    let mut client = TestClient::start(ServerOptions::default());
    let _ = client
        .initialize(json!({"workspace": {"didChangeWatchedFiles": {"dynamicRegistration": true}}}))
        .await;
    let registration = client.notification("client/registerCapability", |_| true).await;
    assert_eq!(
        registration["params"]["registrations"][0]["method"],
        "workspace/didChangeWatchedFiles"
    );
    client.notify(
        "textDocument/didOpen",
        json!({"textDocument": {"uri": uri, "languageId": "workbook", "version": 1, "text": ""}}),
    );
    let published = client
        .notification("textDocument/publishDiagnostics", |message| {
            message["params"]["diagnostics"]
                .as_array()
                .is_some_and(|list| !list.is_empty())
        })
        .await;
    let diagnostic = &published["params"]["diagnostics"][0];
    assert_eq!(
        diagnostic["range"]["start"],
        json!({"line": 3, "character": 2}),
        "{published}"
    );
    assert!(diagnostic["message"].as_str().unwrap_or("").starts_with("Trial!C4: "));
    assert_eq!(diagnostic["data"]["sheet"], "Trial");
    assert_eq!(diagnostic["data"]["cell"], "C4");

    write_trial(&path, 6, None);
    client.notify(
        "workspace/didChangeWatchedFiles",
        json!({"changes": [{"uri": uri, "type": 2}]}),
    );
    let cleared = client
        .notification("textDocument/publishDiagnostics", |message| {
            message["params"]["diagnostics"].as_array().is_some_and(Vec::is_empty)
        })
        .await;
    assert_eq!(cleared["params"]["uri"], published["params"]["uri"]);
    assert_eq!(client.finish().await, 0);
}

fn progress_kinds(received: &Received, token: &Value) -> Vec<String> {
    received
        .from_server
        .iter()
        .filter(|message| message["method"] == "$/progress" && &message["params"]["token"] == token)
        .filter_map(|message| message["params"]["value"]["kind"].as_str().map(str::to_string))
        .collect()
}

#[tokio::test]
async fn progress_on_the_client_token_and_on_our_own() {
    let folder = temp_dir();
    let path = folder.path().join("trial.xlsx");
    write_trial(&path, 20, None);
    let path_text = path.display().to_string();
    let mut client = TestClient::start(ServerOptions {
        progress_above_bytes: 0,
        ..ServerOptions::default()
    });
    let _ = client.initialize(json!({"window": {"workDoneProgress": true}})).await;
    let answer = client
        .request(
            super::server::methods::ANALYSE_WORKBOOK,
            json!({"path": path_text, "workDoneToken": "from the client"}),
        )
        .await;
    assert!(answer["result"].is_object());
    let token = json!("from the client");
    let kinds = client
        .wait_for(|received| {
            let kinds = progress_kinds(received, &token);
            (kinds.last().map(String::as_str) == Some("end")).then_some(kinds)
        })
        .await;
    assert_eq!(kinds.first().map(String::as_str), Some("begin"));
    assert!(kinds.iter().any(|kind| kind == "report"), "{kinds:?}");

    // Without a token, a large workbook gets a token the server creates.
    let answer = client
        .request(super::server::methods::INSPECT_WORKBOOK, json!({"path": path_text}))
        .await;
    assert!(answer["result"].is_object());
    let created = client.notification("window/workDoneProgress/create", |_| true).await;
    let token = created["params"]["token"].clone();
    let kinds = client
        .wait_for(|received| {
            let kinds = progress_kinds(received, &token);
            (kinds.last().map(String::as_str) == Some("end")).then_some(kinds)
        })
        .await;
    assert_eq!(kinds.first().map(String::as_str), Some("begin"), "{kinds:?}");
    assert_eq!(client.finish().await, 0);
}

/// A cell block large enough that analysing it takes far longer than a
/// cancel notification takes to arrive.
fn large_cells(n_rows: usize) -> Value {
    let mut rows = vec![json!(["A", "B", "C", "D", "E", "F", "G", "H"])];
    for row in 0..n_rows {
        rows.push(Value::Array(
            (0..8).map(|col| json!((row * 31 + col * 17) % 97)).collect(),
        ));
    }
    Value::Array(rows)
}

/// Waits for the log line and the progress end of a computation that noticed its
/// cancel flag and stopped.
async fn expect_stopped(client: &TestClient) {
    let stopped = client
        .notification("window/logMessage", |message| {
            message["params"]["message"]
                .as_str()
                .unwrap_or("")
                .starts_with("stopped")
        })
        .await;
    assert!(stopped["params"]["message"]
        .as_str()
        .unwrap_or("")
        .contains("cancelled"));
    let end = client
        .notification("$/progress", |message| message["params"]["value"]["kind"] == "end")
        .await;
    assert_eq!(end["params"]["value"]["message"], "cancelled");
}

#[tokio::test]
async fn cancelling_stops_the_computation() {
    cancel_points::cancel_once_begun(
        super::server::methods::ANALYSE_CELLS,
        json!({"cells": large_cells(60_000)}),
    )
    .await;
}

/// A request outliving the time limit is answered at the limit with a `time-limit`
/// error naming it, its computation is stopped through the cancel flag (it logs that it
/// stopped and ends its progress), and the session goes on.
#[tokio::test]
async fn a_request_past_its_time_limit_is_stopped_and_answered() {
    let limit = Duration::from_millis(20);
    let mut client = TestClient::start(ServerOptions {
        request_time_limit: Some(limit),
        ..ServerOptions::default()
    });
    let initialized = client.initialize(json!({})).await;
    assert_eq!(
        initialized["result"]["capabilities"]["experimental"]["trialyst"]["requestTimeLimitSeconds"],
        json!(0.02),
        "{initialized}"
    );
    let started = std::time::Instant::now();
    let id = client.send_request(
        super::server::methods::ANALYSE_CELLS,
        json!({"cells": large_cells(60_000), "workDoneToken": "long"}),
    );
    let answer = client.response(id).await;
    let waited = started.elapsed();
    assert_eq!(error_code(&answer), -32803, "{answer}");
    assert_eq!(answer["error"]["data"]["kind"], "time-limit", "{answer}");
    let message = answer["error"]["message"].as_str().unwrap_or("");
    assert!(
        message.contains("time limit of 0.02 s") && message.contains("--request-time-limit"),
        "{message}"
    );
    assert!(waited >= limit, "answered after {waited:?}, before the limit");
    // The computation itself noticed the flag and stopped.
    expect_stopped(&client).await;
    // The session goes on: a request that fits the limit is answered.
    let unknown = client.request("trialyst/noSuchThing", json!({})).await;
    assert_eq!(error_code(&unknown), -32601);
    assert_eq!(client.finish().await, 0);
}

/// With no limit set, a long request runs to its end and is answered with results.
#[tokio::test]
async fn without_a_time_limit_a_long_request_runs_to_its_end() {
    let mut client = TestClient::start(ServerOptions {
        request_time_limit: None,
        ..ServerOptions::default()
    });
    let initialized = client.initialize(json!({})).await;
    assert!(
        initialized["result"]["capabilities"]["experimental"]["trialyst"]["requestTimeLimitSeconds"].is_null(),
        "{initialized}"
    );
    let answer = client
        .request(
            super::server::methods::ANALYSE_CELLS,
            json!({"cells": large_cells(2_000)}),
        )
        .await;
    assert!(answer["result"]["results"].is_object(), "{answer}");
    assert_eq!(client.finish().await, 0);
}

#[tokio::test]
async fn framing_errors_are_answered_and_the_session_goes_on() {
    let mut client = TestClient::start(ServerOptions::default());
    let _ = client.initialize(json!({})).await;
    client.send_raw(frame(b"{this is not json"));
    client.send_raw(b"Content-Length: 99999999999999999999999\r\n\r\n".to_vec());
    client.send_raw(b"Content-Length: 40\r\n\r\n{\"jsonrpc\":\"2.0\"".to_vec());
    let answers = client
        .wait_for(|received| (received.unmatched.len() >= 3).then(|| received.unmatched.clone()))
        .await;
    // JSON-RPC 2.0, section 5.1: -32700 parse error.
    assert!(answers.iter().all(|answer| error_code(answer) == -32700), "{answers:?}");
    let unknown = client.request("trialyst/noSuchThing", json!({})).await;
    assert_eq!(error_code(&unknown), -32601);
    assert_eq!(client.finish().await, 0);
}

#[test]
fn listen_addresses_must_be_loopback() {
    assert!(super::loopback_address("127.0.0.1:9257").is_ok());
    assert!(super::loopback_address("[::1]:9257").is_ok());
    let refused = super::loopback_address("0.0.0.0:9257")
        .map(|_| ())
        .map_err(|error| error.to_string());
    assert!(refused.is_err_and(|text| text.contains("not a loopback address")));
    let refused = super::loopback_address("192.0.2.7:9257").map(|_| ());
    assert!(matches!(refused, Err(super::ServeError::NotLoopback { .. })));
    assert!(matches!(
        super::loopback_address("nonsense"),
        Err(super::ServeError::BadAddress { .. })
    ));
}

#[tokio::test]
async fn a_surface_plan_is_asked_for_by_design_axial_rule_and_limits() {
    let mut client = TestClient::start(ServerOptions::default());
    let _ = client.initialize(json!({})).await;
    let factors = json!([
        {"name": "Temperature", "levels": [160, 180], "lowest": 150, "highest": 195},
        {"name": "Time", "levels": [20, 30]},
    ]);
    let answer = client
        .request(
            super::server::methods::PLAN_TRIAL,
            json!({"factors": factors, "responses": ["Yield"], "design": "central-composite",
                   "axial": "faces", "seed": 3}),
        )
        .await;
    // The reference: the same request made by the service (three centre runs each
    // with the cube and the axial runs, as `trialyst plan` gives when none are asked for).
    let request = service::plan::PlanRequest {
        factors: vec![
            service::plan::FactorSpec::new("Temperature", &["160", "180"]),
            service::plan::FactorSpec::new("Time", &["20", "30"]),
        ],
        responses: vec!["Yield".into()],
        seed: Some(3),
        ..service::plan::PlanRequest::default()
    };
    let choice = service::plan::SurfaceChoice {
        design: service::plan::surface_choice::read_design(
            "central composite",
            service::plan::surface_choice::read_axial("faces").ok(),
        )
        .expect("a design"),
        limits: vec![service::plan::FactorLimits {
            factor: "Temperature".into(),
            lower: Some(150.0),
            upper: Some(195.0),
        }],
    };
    let plan = service::plan::make_any_plan(&request, Some(&choice), false).expect("a valid plan");
    // A 2^2 cube, 4 runs on the faces and 3 + 3 centre runs: 14 (common practice).
    assert_eq!(plan.runs.len(), 14);
    assert_eq!(answer["result"]["plan"]["runs"], 14, "{answer}");
    assert_eq!(answer["result"]["plan"]["id"], plan.id.as_str(), "{answer}");
    assert_eq!(answer["result"]["plan"]["kind"], "central composite plan", "{answer}");

    // Limits the axial runs would pass: a plan that cannot be made, naming the factor.
    let refused = client
        .request(
            super::server::methods::PLAN_TRIAL,
            json!({"factors": [{"name": "Temperature", "levels": [160, 180], "highest": 181},
                               {"name": "Time", "levels": [20, 30]}],
                   "responses": ["Yield"], "design": "central-composite"}),
        )
        .await;
    assert_eq!(error_code(&refused), -32803, "{refused}");
    assert!(
        refused["error"]["message"]
            .as_str()
            .unwrap_or("")
            .contains("Temperature"),
        "{refused}"
    );
    // Words that do not fit name their field.
    for (params, field) in [
        (
            json!({"factors": factors, "responses": ["Y"], "design": "star"}),
            "params.design",
        ),
        (
            json!({"factors": factors, "responses": ["Y"], "design": "box-behnken", "axial": 1.5}),
            "params.axial",
        ),
        (
            json!({"factors": factors, "responses": ["Y"], "design": "central-composite", "axial": -1}),
            "params.axial",
        ),
        (json!({"factors": factors, "responses": ["Y"]}), "params.factors"),
        (
            json!({"factors": [{"name": "A", "levels": [1, 2], "lowest": "low"}], "responses": ["Y"], "design": "central-composite"}),
            "params.factors[0].lowest",
        ),
        (
            json!({"factors": [{"name": "A", "levels": [1, 2], "lowest": 3, "highest": 0}], "responses": ["Y"], "design": "central-composite"}),
            "params.factors[0].highest",
        ),
    ] {
        let answer = client.request(super::server::methods::PLAN_TRIAL, params).await;
        assert_eq!(error_code(&answer), -32602, "{answer}");
        assert_eq!(answer["error"]["data"]["field"], field, "{answer}");
    }
}

#[tokio::test]
async fn plan_size_and_inspect_cells_answer_as_the_service_does() {
    let mut client = TestClient::start(ServerOptions::default());
    let _ = client.initialize(json!({})).await;
    // Plan: the same request through the service directly is the reference.
    let answer = client
        .request(
            super::server::methods::PLAN_TRIAL,
            json!({"factors": [{"name": "Temperature", "levels": [160, 180]}, {"name": "Line", "levels": ["North", "South"]}],
                   "responses": ["Yield"], "replicates": 2, "seed": 7}),
        )
        .await;
    let request = service::plan::PlanRequest {
        factors: vec![
            service::plan::FactorSpec::new("Temperature", &["160", "180"]),
            service::plan::FactorSpec::new("Line", &["North", "South"]),
        ],
        responses: vec!["Yield".into()],
        replicates: 2,
        blocks: 1,
        seed: Some(7),
        ..service::plan::PlanRequest::default()
    };
    let plan = service::plan::make_plan(&request).expect("a valid plan");
    assert_eq!(answer["result"]["plan"]["runs"], plan.runs.len(), "{answer}");
    let book = service::plan::book::plan_book(&plan);
    let first = book.sheets.iter().find(|sheet| !sheet.hidden).expect("a visible sheet");
    assert_eq!(answer["result"]["tables"][0]["name"], first.name.as_str());
    // A plan that cannot be made is a failed request with its reason.
    let refused = client
        .request(
            super::server::methods::PLAN_TRIAL,
            json!({"factors": [{"name": "Temperature", "levels": [160, 180]}], "responses": []}),
        )
        .await;
    assert_eq!(error_code(&refused), -32803, "{refused}");
    assert_eq!(refused["error"]["data"]["kind"], "bad-plan");
    // Size: the service's answer to the same question.
    let answer = client
        .request(
            super::server::methods::SIZE_TRIAL,
            json!({"conditions": 3, "smallestDifference": 1.0, "sd": 0.5}),
        )
        .await;
    let direct = service::plan::size_answer(&service::plan::SizeRequest {
        design: service::plan::size::SizeDesign::OneWay {
            conditions: 3,
            effect: service::plan::size::OneWayEffect::SmallestDifference(1.0),
        },
        sd: service::plan::size::SdSource::Given(0.5),
        alpha: 0.05,
        power: 0.8,
        half_width: None,
    })
    .expect("answerable");
    assert_eq!(
        answer["result"]["answer"]["needed"]["count"], direct.needed.count,
        "{answer}"
    );
    let size_charts = answer["result"]["tables"][0]["charts"]
        .as_array()
        .map(Vec::len)
        .unwrap_or(0);
    let book = service::plan::size_book(&direct);
    assert_eq!(size_charts, book.sheets[0].charts.len());
    if let Some(chart) = answer["result"]["tables"][0]["charts"].get(0) {
        assert!(chart["series"][0]["values"]["range"]
            .as_str()
            .is_some_and(|range| range.contains(':')));
    }
    // Inspect cells: findings, no analysis.
    let answer = client
        .request(
            super::server::methods::INSPECT_CELLS,
            json!({"cells": [["A", "B"], [1.0, "n/a"], [2.0, 3.0], [1.5, 3.5]], "origin": "B2", "sheet": "S"}),
        )
        .await;
    assert_eq!(answer["result"]["findings"][0]["cell"], "C3", "{answer}");
    assert!(answer["result"].get("responses").is_none());
    assert!(client.finish().await == 0);
}

mod cancel_points;
mod side_channel_session;
