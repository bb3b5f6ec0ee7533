//! `trialyst serve` end to end: the built binary, spoken to over its real
//! stdio (and once over a loopback socket), as an add-in would.
//!
//! The binary is the real program built as this package's
//! `trialyst-under-test` (see tests/Cargo.toml), so these tests always run
//! against the current source.

use std::collections::HashMap;
use std::io::{BufRead, BufReader, Read, Write};
use std::path::{Path, PathBuf};
use std::process::{Child, Command, Stdio};
use std::sync::{Arc, Condvar, Mutex};
use std::time::{Duration, Instant};

use serde_json::{json, Value};

/// How long any one wait may take.
const WAIT: Duration = Duration::from_secs(30);

/// The program under test.
fn trialyst_binary() -> PathBuf {
    PathBuf::from(env!("CARGO_BIN_EXE_trialyst-under-test"))
}

#[derive(Default)]
struct Received {
    responses: HashMap<i64, Value>,
    unmatched: Vec<Value>,
    from_server: Vec<Value>,
    closed: bool,
}

struct Inbox {
    received: Mutex<Received>,
    changed: Condvar,
}

/// The child's stdin, shared by the test and the reader thread (which
/// answers the server's requests), so that their messages never interleave.
type SharedWriter = Arc<Mutex<Option<Box<dyn Write + Send>>>>;

/// A client speaking to a `trialyst serve` child over its stdio.
pub(crate) struct Session {
    child: Child,
    writer: SharedWriter,
    inbox: Arc<Inbox>,
    next_id: i64,
}

fn frame(body: &[u8]) -> Vec<u8> {
    let mut framed = format!("Content-Length: {}\r\n\r\n", body.len()).into_bytes();
    framed.extend_from_slice(body);
    framed
}

/// Reads framed messages from `output` into the inbox, answering the
/// server's own requests through `answers`.
fn read_messages(output: impl Read, inbox: Arc<Inbox>, answers: SharedWriter) {
    let mut reader = BufReader::new(output);
    loop {
        let mut length = None;
        loop {
            let mut line = String::new();
            match reader.read_line(&mut line) {
                Ok(0) | Err(_) => {
                    let mut received = inbox.received.lock().unwrap_or_else(|poison| poison.into_inner());
                    received.closed = true;
                    inbox.changed.notify_all();
                    return;
                }
                Ok(_) => {}
            }
            let line = line.trim_end();
            if line.is_empty() {
                break;
            }
            if let Some(value) = line.strip_prefix("Content-Length: ") {
                length = value.trim().parse::<usize>().ok();
            }
        }
        let mut body = vec![0u8; length.unwrap_or(0)];
        if reader.read_exact(&mut body).is_err() {
            continue;
        }
        let message: Value = serde_json::from_slice(&body).unwrap_or(Value::Null);
        let mut received = inbox.received.lock().unwrap_or_else(|poison| poison.into_inner());
        if message.get("method").is_some() {
            if let Some(id) = message.get("id") {
                let answer = json!({"jsonrpc": "2.0", "id": id, "result": null});
                if let Some(writer) = answers.lock().unwrap_or_else(|poison| poison.into_inner()).as_mut() {
                    let _ = writer.write_all(&frame(answer.to_string().as_bytes()));
                    let _ = writer.flush();
                }
            }
            received.from_server.push(message);
        } else if let Some(id) = message.get("id").and_then(Value::as_i64) {
            received.responses.insert(id, message);
        } else {
            received.unmatched.push(message);
        }
        inbox.changed.notify_all();
    }
}

impl Session {
    pub(crate) fn start() -> Self {
        Self::start_with(&[])
    }

    /// `trialyst serve` with more arguments.
    pub(crate) fn start_with(arguments: &[&str]) -> Self {
        let mut child = Command::new(trialyst_binary())
            .arg("serve")
            .args(arguments)
            .stdin(Stdio::piped())
            .stdout(Stdio::piped())
            .stderr(Stdio::null())
            .spawn()
            .expect("trialyst serve starts");
        let stdout = child.stdout.take().expect("piped stdout");
        let stdin: Option<Box<dyn Write + Send>> =
            child.stdin.take().map(|stdin| Box::new(stdin) as Box<dyn Write + Send>);
        let writer: SharedWriter = Arc::new(Mutex::new(stdin));
        let inbox = Arc::new(Inbox {
            received: Mutex::new(Received::default()),
            changed: Condvar::new(),
        });
        let reader_inbox = inbox.clone();
        let reader_writer = writer.clone();
        std::thread::spawn(move || read_messages(stdout, reader_inbox, reader_writer));
        Self {
            child,
            writer,
            inbox,
            next_id: 1,
        }
    }

    fn write_raw(&self, bytes: &[u8]) -> bool {
        let mut writer = self.writer.lock().unwrap_or_else(|poison| poison.into_inner());
        match writer.as_mut() {
            Some(writer) => writer.write_all(bytes).is_ok() && writer.flush().is_ok(),
            None => false,
        }
    }

    /// Closes the server's stdin.
    fn close_stdin(&mut self) {
        *self.writer.lock().unwrap_or_else(|poison| poison.into_inner()) = None;
    }

    fn send(&self, message: Value) {
        self.write_raw(&frame(message.to_string().as_bytes()));
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

    fn wait_for<T>(&self, mut found: impl FnMut(&Received) -> Option<T>) -> T {
        let deadline = Instant::now() + WAIT;
        let mut received = self.inbox.received.lock().unwrap_or_else(|poison| poison.into_inner());
        loop {
            if let Some(value) = found(&received) {
                return value;
            }
            let now = Instant::now();
            assert!(
                now < deadline && !received.closed,
                "gave up waiting (server output closed: {}); responses {:?}, unmatched {:?}, from server {:?}",
                received.closed,
                received.responses,
                received.unmatched,
                received.from_server
            );
            received = self
                .inbox
                .changed
                .wait_timeout(received, deadline - now)
                .map(|(guard, _)| guard)
                .unwrap_or_else(|poison| poison.into_inner().0);
        }
    }

    fn response(&self, id: i64) -> Value {
        self.wait_for(|received| received.responses.get(&id).cloned())
    }

    pub(crate) fn request(&mut self, method: &str, params: Value) -> Value {
        let id = self.send_request(method, params);
        self.response(id)
    }

    fn notification(&self, method: &str, mut matches: impl FnMut(&Value) -> bool) -> Value {
        self.wait_for(|received| {
            received
                .from_server
                .iter()
                .find(|message| message["method"] == method && matches(message))
                .cloned()
        })
    }

    pub(crate) fn initialize(&mut self) -> Value {
        let answer = self.request(
            "initialize",
            json!({"processId": null, "rootUri": null, "capabilities": {"window": {"workDoneProgress": true}}}),
        );
        self.notify("initialized", json!({}));
        answer
    }

    /// Waits for the process to end; its exit code.
    fn exit_code(&mut self) -> Option<i32> {
        let deadline = Instant::now() + WAIT;
        loop {
            match self.child.try_wait() {
                Ok(Some(status)) => return status.code(),
                Ok(None) if Instant::now() < deadline => std::thread::sleep(Duration::from_millis(10)),
                _ => {
                    let _ = self.child.kill();
                    return None;
                }
            }
        }
    }

    pub(crate) fn finish(mut self) -> Option<i32> {
        let answer = self.request("shutdown", Value::Null);
        assert_eq!(answer["result"], Value::Null, "{answer}");
        self.notify("exit", Value::Null);
        self.exit_code()
    }
}

impl Drop for Session {
    fn drop(&mut self) {
        if let Ok(None) = self.child.try_wait() {
            let _ = self.child.kill();
            let _ = self.child.wait();
        }
    }
}

fn error_code(answer: &Value) -> i64 {
    answer["error"]["code"].as_i64().unwrap_or(0)
}

/// Writes a wide trial table with `n_conditions` columns of `n_rows` values;
/// `bad_cell` puts the text "n/a" at one (row, column).
fn write_trial(path: &Path, n_conditions: u16, n_rows: u32, bad_cell: Option<(u32, u16)>) {
    let mut workbook = rust_xlsxwriter::Workbook::new();
    let sheet = workbook.add_worksheet();
    sheet.set_name("Trial").expect("a valid sheet name");
    for col in 0..n_conditions {
        sheet
            .write_string(0, col, format!("Line {}", col + 1))
            .expect("writable");
        for row in 1..=n_rows {
            let value = 20.0 + f64::from(col) * 0.5 + f64::from((row * 13 + u32::from(col) * 7) % 11) * 0.1;
            sheet.write_number(row, col, value).expect("writable");
        }
    }
    if let Some((row, col)) = bad_cell {
        sheet.write_string(row, col, "n/a").expect("writable");
    }
    workbook.save(path).expect("the test workbook can be written");
}

fn file_uri(path: &Path) -> String {
    format!("file://{}", path.display()).replace(' ', "%20")
}

#[test]
fn a_whole_session_over_stdio() {
    let folder = tempfile::tempdir().expect("a temporary folder");
    let path = folder.path().join("week 12.xlsx");
    // "n/a" at zero-based (2, 1): cell B3.
    write_trial(&path, 3, 6, Some((2, 1)));
    let path_text = path.display().to_string();
    let mut session = Session::start();

    // LSP 3.17, initialize: a request before it gets -32002.
    let early = session.request("trialyst/inspectWorkbook", json!({"path": path_text}));
    assert_eq!(error_code(&early), -32002, "{early}");
    let answer = session.initialize();
    assert_eq!(answer["result"]["serverInfo"]["name"], "trialyst");
    let requests = &answer["result"]["capabilities"]["experimental"]["trialyst"]["requests"];
    assert!(requests
        .as_array()
        .is_some_and(|list| list.contains(&json!("trialyst/analyseCells"))));

    let inspected = session.request("trialyst/inspectWorkbook", json!({"path": path_text}));
    assert_eq!(inspected["result"]["findings"][0]["cell"], "B3", "{inspected}");
    assert_eq!(inspected["result"]["table"]["responses"], json!(["value"]));

    let analysed = session.request(
        "trialyst/analyseWorkbook",
        json!({"path": path_text, "sheet": "Trial", "range": "A1:C7", "workDoneToken": 99}),
    );
    let results = &analysed["result"];
    assert_eq!(results["format_version"], service::RESULTS_FORMAT_VERSION, "{analysed}");
    assert_eq!(results["source"]["range"], "A1:C7");
    assert_eq!(results["responses"][0]["status"], "analysed");
    let kinds = session.wait_for(|received| {
        let kinds: Vec<String> = received
            .from_server
            .iter()
            .filter(|message| message["method"] == "$/progress" && message["params"]["token"] == 99)
            .filter_map(|message| message["params"]["value"]["kind"].as_str().map(str::to_string))
            .collect();
        (kinds.last().map(String::as_str) == Some("end")).then_some(kinds)
    });
    assert_eq!(kinds.first().map(String::as_str), Some("begin"), "{kinds:?}");
    assert!(kinds.contains(&"report".to_string()), "{kinds:?}");

    let cells = session.request(
        "trialyst/analyseCells",
        json!({
            "cells": [["Old", "New"], [5.1, 5.6], [5.0, "#N/A"], [5.2, 5.7], [4.9, 5.8]],
            "origin": "B2",
            "sheet": "Sheet 4",
        }),
    );
    // Block row 2, column 1 (zero-based) from B2: C4.
    assert_eq!(cells["result"]["results"]["findings"][0]["cell"], "C4", "{cells}");
    assert_eq!(cells["result"]["results"]["findings"][0]["kind"], "error-value");
    assert!(cells["result"]["tables"]
        .as_array()
        .is_some_and(|tables| !tables.is_empty()));

    let written = session.request("trialyst/writeResults", json!({"path": path_text}));
    let results_file = service::results_path_for(&path, None);
    assert_eq!(
        written["result"]["resultsFile"],
        results_file.display().to_string(),
        "{written}"
    );
    assert!(results_file.is_file());
    crate::common::keep_output(&results_file);

    let unknown = session.request("trialyst/noSuchThing", json!({}));
    // JSON-RPC 2.0, section 5.1: -32601 method not found.
    assert_eq!(error_code(&unknown), -32601);

    // Diagnostics appear at their cell, and clear once the file is fixed.
    let uri = file_uri(&path);
    session.notify(
        "textDocument/didOpen",
        json!({"textDocument": {"uri": uri, "languageId": "workbook", "version": 1, "text": ""}}),
    );
    let published = session.notification("textDocument/publishDiagnostics", |message| {
        message["params"]["diagnostics"]
            .as_array()
            .is_some_and(|list| !list.is_empty())
    });
    let diagnostic = &published["params"]["diagnostics"][0];
    assert_eq!(
        diagnostic["range"]["start"],
        json!({"line": 2, "character": 1}),
        "{published}"
    );
    assert_eq!(diagnostic["data"]["cell"], "B3");
    assert!(diagnostic["message"].as_str().unwrap_or("").starts_with("Trial!B3"));
    write_trial(&path, 3, 6, None);
    session.notify(
        "workspace/didChangeWatchedFiles",
        json!({"changes": [{"uri": uri, "type": 2}]}),
    );
    let cleared = session.notification("textDocument/publishDiagnostics", |message| {
        message["params"]["diagnostics"].as_array().is_some_and(Vec::is_empty)
    });
    assert_eq!(cleared["params"]["uri"], published["params"]["uri"]);

    // LSP 3.17, exit: code 0 after shutdown.
    assert_eq!(session.finish(), Some(0));
}

#[test]
fn exit_codes_without_shutdown() {
    // LSP 3.17, exit: code 1 when no shutdown came first.
    let mut session = Session::start();
    let _ = session.initialize();
    session.notify("exit", Value::Null);
    assert_eq!(session.exit_code(), Some(1));

    // A closed stdin ends the server rather than leaving it hanging.
    let mut session = Session::start();
    let _ = session.initialize();
    session.close_stdin();
    assert_eq!(session.exit_code(), Some(1));

    // Even before initialize.
    let mut session = Session::start();
    session.close_stdin();
    assert_eq!(session.exit_code(), Some(1));
}

/// Waits for the log line naming `name` and the progress end of a computation that
/// noticed its cancel flag and stopped.
fn expect_stopped(session: &Session, name: &str) {
    let stopped = session.notification("window/logMessage", |message| {
        message["params"]["message"]
            .as_str()
            .unwrap_or("")
            .starts_with("stopped")
    });
    assert!(stopped["params"]["message"].as_str().unwrap_or("").contains(name));
    let end = session.notification("$/progress", |message| message["params"]["value"]["kind"] == "end");
    assert_eq!(end["params"]["value"]["message"], "cancelled");
}

#[test]
fn cancelling_a_long_analysis_stops_it() {
    let folder = tempfile::tempdir().expect("a temporary folder");
    let path = folder.path().join("large.xlsx");
    write_trial(&path, 8, 25_000, None);
    let mut session = Session::start();
    let _ = session.initialize();
    let id = session.send_request(
        "trialyst/analyseWorkbook",
        json!({"path": path.display().to_string(), "workDoneToken": "long one"}),
    );
    let _ = session.notification("$/progress", |message| message["params"]["value"]["kind"] == "begin");
    session.notify("$/cancelRequest", json!({"id": id}));
    let answer = session.response(id);
    // LSP 3.17: -32800 request cancelled.
    assert_eq!(error_code(&answer), -32800, "{answer}");
    expect_stopped(&session, "large.xlsx");
    // The server is still there.
    let answer = session.request("trialyst/inspectWorkbook", json!({"path": path.display().to_string()}));
    assert_eq!(answer["result"]["table"]["layout"], "wide", "{answer}");
    assert_eq!(session.finish(), Some(0));
}

/// The limits set on the command line: a message over `--max-message-mib` is refused
/// unread with an answer naming the limit and the setting; a request running past
/// `--request-time-limit` is stopped and answered with a `time-limit` error; the session
/// goes on; a negative limit is a usage error.
#[test]
fn the_message_size_and_request_time_limits_are_set_at_start() {
    let folder = tempfile::tempdir().expect("a temporary folder");
    let path = folder.path().join("large.xlsx");
    write_trial(&path, 8, 25_000, None);
    let mut session = Session::start_with(&["--max-message-mib", "1", "--request-time-limit", "0.05"]);
    let initialized = session.initialize();
    let announced = &initialized["result"]["capabilities"]["experimental"]["trialyst"];
    assert_eq!(announced["maxMessageBytes"], 1_048_576, "{initialized}");
    assert_eq!(announced["requestTimeLimitSeconds"], 0.05, "{initialized}");

    let size = 2_000_000usize;
    session.write_raw(format!("Content-Length: {size}\r\n\r\n").as_bytes());
    assert!(session.write_raw(&vec![b' '; size]), "the server kept reading");
    let refused = session.wait_for(|received| received.unmatched.first().cloned());
    // JSON-RPC 2.0, section 5.1: -32600 invalid request.
    assert_eq!(error_code(&refused), -32600, "{refused}");
    let message = refused["error"]["message"].as_str().unwrap_or("");
    assert!(
        message.contains("limit of 1048576 bytes") && message.contains("--max-message-mib"),
        "{message}"
    );

    let answer = session.request(
        "trialyst/analyseWorkbook",
        json!({"path": path.display().to_string(), "workDoneToken": "long one"}),
    );
    assert_eq!(answer["error"]["data"]["kind"], "time-limit", "{answer}");
    assert!(answer["error"]["message"]
        .as_str()
        .unwrap_or("")
        .contains("time limit of 0.05 s"));
    expect_stopped(&session, "large.xlsx");
    let answer = session.request("trialyst/noSuchMethod", json!({}));
    assert_eq!(error_code(&answer), -32601, "{answer}");
    assert_eq!(session.finish(), Some(0));

    let refused = Command::new(trialyst_binary())
        .args(["serve", "--request-time-limit=-1"])
        .stdin(Stdio::null())
        .output()
        .expect("trialyst runs");
    assert_eq!(refused.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&refused.stderr).contains("--request-time-limit"));
}

#[test]
fn bad_input_never_crashes_or_hangs_the_server() {
    let folder = tempfile::tempdir().expect("a temporary folder");
    let text_file = folder.path().join("minutes.xlsx");
    std::fs::write(&text_file, "minutes of the meeting").expect("writable");
    let mut session = Session::start();
    let _ = session.initialize();

    // Malformed JSON, then a Content-Length that is not a number, then one
    // too short and one too long for its body.
    session.write_raw(&frame(b"{\"jsonrpc\": \"2.0\", \"id\": "));
    session.write_raw(b"Content-Length: many\r\n\r\n");
    let body = br#"{"jsonrpc":"2.0","method":"initialized","params":{}}"#;
    let mut short = format!("Content-Length: {}\r\n\r\n", body.len() - 9).into_bytes();
    short.extend_from_slice(body);
    session.write_raw(&short);
    let answers = session.wait_for(|received| (received.unmatched.len() >= 3).then(|| received.unmatched.clone()));
    // JSON-RPC 2.0, section 5.1: -32700 parse error.
    assert!(answers.iter().all(|answer| error_code(answer) == -32700), "{answers:?}");
    let mut long = format!("Content-Length: {}\r\n\r\n", body.len() + 30).into_bytes();
    long.extend_from_slice(body);
    session.write_raw(&long);
    // The next message arrives only after the server gave up waiting for the rest.
    session.wait_for(|received| (received.unmatched.len() >= 4).then_some(()));
    let answer = session.request("trialyst/noSuchMethod", json!({}));
    assert_eq!(error_code(&answer), -32601, "{answer}");

    // A 100 MB message is skipped unread and answered.
    let size = 100_000_000usize;
    session.write_raw(format!("Content-Length: {size}\r\n\r\n").as_bytes());
    let block = vec![b' '; 1 << 20];
    let mut sent = 0;
    while sent < size {
        let part = block.len().min(size - sent);
        assert!(session.write_raw(&block[..part]), "the server kept reading");
        sent += part;
    }
    let refused = session.wait_for(|received| {
        received
            .unmatched
            .iter()
            .find(|answer| {
                answer["error"]["message"]
                    .as_str()
                    .unwrap_or("")
                    .contains("larger than the limit")
            })
            .cloned()
    });
    // JSON-RPC 2.0, section 5.1: -32600 invalid request.
    assert_eq!(error_code(&refused), -32600);

    // Bad parameters name their field; a file that is not a workbook says so.
    let answer = session.request("trialyst/analyseCells", json!({"cells": [[1, 2], {"x": 1}]}));
    assert_eq!(error_code(&answer), -32602, "{answer}");
    assert_eq!(answer["error"]["data"]["field"], "params.cells[1]");
    let answer = session.request(
        "trialyst/analyseWorkbook",
        json!({"path": text_file.display().to_string()}),
    );
    assert_eq!(answer["error"]["data"]["kind"], "not-a-workbook", "{answer}");
    assert!(answer["error"]["message"]
        .as_str()
        .unwrap_or("")
        .contains("minutes.xlsx"));
    assert_eq!(session.finish(), Some(0));
}

#[test]
fn listen_takes_loopback_addresses_only() {
    let refused = Command::new(trialyst_binary())
        .args(["serve", "--listen", "0.0.0.0:0"])
        .stdin(Stdio::null())
        .output()
        .expect("trialyst runs");
    assert_eq!(refused.status.code(), Some(2));
    let message = String::from_utf8_lossy(&refused.stderr);
    assert!(message.contains("not a loopback address"), "{message}");

    let mut child = Command::new(trialyst_binary())
        .args(["serve", "--listen", "127.0.0.1:0"])
        .env("TRIALYST_SERVE_TOKEN", "a secret for this test only")
        .stdin(Stdio::null())
        .stdout(Stdio::null())
        .stderr(Stdio::piped())
        .spawn()
        .expect("trialyst serve starts");
    let mut stderr = BufReader::new(child.stderr.take().expect("piped stderr"));
    let mut line = String::new();
    let _ = stderr.read_line(&mut line);
    let address = line.trim().rsplit(' ').next().unwrap_or("").to_string();
    assert!(address.starts_with("127.0.0.1:"), "{line}");
    let mut stream = std::net::TcpStream::connect(&address).expect("the server accepts");
    let _ = stream.set_read_timeout(Some(WAIT));
    let _ = stream.write_all(b"trialyst-token a secret for this test only\n");
    let initialize = json!({"jsonrpc": "2.0", "id": 1, "method": "initialize", "params": {"capabilities": {}}});
    let _ = stream.write_all(&frame(initialize.to_string().as_bytes()));
    // Wait for the answer before going on, as a client does.
    let mut output = Vec::new();
    let mut chunk = [0u8; 4096];
    while !String::from_utf8_lossy(&output).contains("\"serverInfo\"") {
        match stream.read(&mut chunk) {
            Ok(0) | Err(_) => break,
            Ok(read) => output.extend_from_slice(&chunk[..read]),
        }
    }
    let text = String::from_utf8_lossy(&output).into_owned();
    assert!(text.contains("\"name\":\"trialyst\""), "{text}");
    let shutdown = json!({"jsonrpc": "2.0", "id": 2, "method": "shutdown"});
    let exit = json!({"jsonrpc": "2.0", "method": "exit"});
    for message in [shutdown, exit] {
        let _ = stream.write_all(&frame(message.to_string().as_bytes()));
    }
    let mut rest = Vec::new();
    let _ = stream.read_to_end(&mut rest);
    let text = String::from_utf8_lossy(&rest);
    assert!(text.contains("\"id\":2") && text.contains("\"result\":null"), "{text}");
    let deadline = Instant::now() + WAIT;
    let code = loop {
        match child.try_wait() {
            Ok(Some(status)) => break status.code(),
            Ok(None) if Instant::now() < deadline => std::thread::sleep(Duration::from_millis(10)),
            _ => {
                let _ = child.kill();
                break None;
            }
        }
    };
    assert_eq!(code, Some(0));
}
