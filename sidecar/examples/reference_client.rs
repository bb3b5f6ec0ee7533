//! A reference client for `trialyst serve`: starts the server, makes the
//! calls a spreadsheet add-in makes, prints the answers, and measures the
//! server (start-up, idle memory, latency of `trialyst/analyseCells`).
//!
//! Build the server and this client, then run it:
//!
//! ```text
//! cargo build --release -p sidecar --bin trialyst --example reference_client
//! target/release/examples/reference_client
//! ```
//!
//! It looks for the `trialyst` binary beside its own folder
//! (`target/<profile>/trialyst`), or where `TRIALYST_BIN` says. Pass
//! `--requests N` to change the number of timed requests (default 1,000).

// Benchmarks and examples report on the terminal.
#![allow(clippy::print_stdout, clippy::print_stderr, clippy::exit)]

use std::collections::HashMap;
use std::io::{BufRead, BufReader, Read, Write};
use std::path::{Path, PathBuf};
use std::process::{Child, ChildStdin, ChildStdout, Command, Stdio};
use std::time::{Duration, Instant};

use serde_json::{json, Value};

/// A blocking JSON-RPC client over the server's stdio.
struct Client {
    child: Child,
    stdin: ChildStdin,
    stdout: BufReader<ChildStdout>,
    next_id: i64,
    /// Notifications seen while waiting for answers, by method.
    notifications: HashMap<String, usize>,
}

impl Client {
    fn start(binary: &Path) -> std::io::Result<Self> {
        let mut child = Command::new(binary)
            .arg("serve")
            .stdin(Stdio::piped())
            .stdout(Stdio::piped())
            .stderr(Stdio::inherit())
            .spawn()?;
        let stdin = child.stdin.take().ok_or_else(|| std::io::Error::other("no stdin"))?;
        let stdout = child.stdout.take().ok_or_else(|| std::io::Error::other("no stdout"))?;
        Ok(Self {
            child,
            stdin,
            stdout: BufReader::new(stdout),
            next_id: 1,
            notifications: HashMap::new(),
        })
    }

    fn send(&mut self, message: &Value) -> std::io::Result<()> {
        let body = message.to_string();
        write!(self.stdin, "Content-Length: {}\r\n\r\n{}", body.len(), body)?;
        self.stdin.flush()
    }

    fn read_message(&mut self) -> std::io::Result<Value> {
        let mut length = 0usize;
        loop {
            let mut line = String::new();
            if self.stdout.read_line(&mut line)? == 0 {
                return Err(std::io::Error::other("the server closed its output"));
            }
            let line = line.trim_end();
            if line.is_empty() {
                break;
            }
            if let Some(value) = line.strip_prefix("Content-Length: ") {
                length = value.trim().parse().map_err(std::io::Error::other)?;
            }
        }
        let mut body = vec![0u8; length];
        self.stdout.read_exact(&mut body)?;
        serde_json::from_slice(&body).map_err(std::io::Error::other)
    }

    /// Sends a request and reads until its answer, answering the server's
    /// own requests (progress tokens, registrations) on the way.
    fn request(&mut self, method: &str, params: Value) -> std::io::Result<Value> {
        let id = self.next_id;
        self.next_id += 1;
        self.send(&json!({"jsonrpc": "2.0", "id": id, "method": method, "params": params}))?;
        loop {
            let message = self.read_message()?;
            if let Some(server_method) = message.get("method").and_then(Value::as_str) {
                *self.notifications.entry(server_method.to_string()).or_default() += 1;
                if let Some(server_id) = message.get("id") {
                    self.send(&json!({"jsonrpc": "2.0", "id": server_id, "result": null}))?;
                }
                continue;
            }
            if message.get("id") == Some(&json!(id)) {
                return Ok(message);
            }
        }
    }

    fn notify(&mut self, method: &str, params: Value) -> std::io::Result<()> {
        self.send(&json!({"jsonrpc": "2.0", "method": method, "params": params}))
    }

    /// Resident memory of the server process in kB, where the system tells it.
    fn resident_kb(&self) -> Option<u64> {
        let status = std::fs::read_to_string(format!("/proc/{}/status", self.child.id())).ok()?;
        status
            .lines()
            .find_map(|line| line.strip_prefix("VmRSS:"))
            .and_then(|value| value.trim().trim_end_matches("kB").trim().parse().ok())
    }
}

impl Client {
    /// Processor time the server has used so far, in milliseconds, where
    /// the system tells it (Linux counts it in ticks of 10 ms).
    fn cpu_ms(&self) -> Option<f64> {
        let stat = std::fs::read_to_string(format!("/proc/{}/stat", self.child.id())).ok()?;
        // Fields after the parenthesised command name; utime and stime are the 12th and 13th.
        let after_name = stat.rsplit_once(')')?.1;
        let fields: Vec<&str> = after_name.split_whitespace().collect();
        let user: f64 = fields.get(11)?.parse().ok()?;
        let system: f64 = fields.get(12)?.parse().ok()?;
        Some((user + system) * 10.0)
    }
}

fn server_binary() -> PathBuf {
    if let Some(path) = std::env::var_os("TRIALYST_BIN") {
        return PathBuf::from(path);
    }
    let exe = std::env::current_exe().unwrap_or_default();
    // target/<profile>/examples/reference_client -> target/<profile>/trialyst
    exe.parent()
        .and_then(Path::parent)
        .map(|profile| profile.join(format!("trialyst{}", std::env::consts::EXE_SUFFIX)))
        .unwrap_or_else(|| PathBuf::from("trialyst"))
}

/// Prints a JSON answer, cut to `limit` characters.
fn show(title: &str, answer: &Value, limit: usize) {
    let text = serde_json::to_string_pretty(answer).unwrap_or_default();
    let shown: String = text.chars().take(limit).collect();
    println!(
        "== {title}\n{shown}{}\n",
        if text.len() > limit { "\n  ..." } else { "" }
    );
}

/// Cell values as an add-in reads them: a header row of `n_conditions`
/// conditions and `n_rows` rows of values below it.
fn cell_block(n_conditions: usize, n_rows: usize) -> Value {
    let mut rows = vec![Value::Array(
        (1..=n_conditions)
            .map(|condition| json!(format!("Setting {condition}")))
            .collect(),
    )];
    // A fixed-seed generator, so every run sends the same values.
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
    Value::Array(rows)
}

fn percentile(sorted: &[f64], fraction: f64) -> f64 {
    if sorted.is_empty() {
        return f64::NAN;
    }
    let rank = ((sorted.len() as f64) * fraction).ceil() as usize;
    sorted[rank.clamp(1, sorted.len()) - 1]
}

/// The number after `--name` on the command line, or `default`.
fn option(name: &str, default: usize) -> usize {
    std::env::args()
        .skip_while(|arg| arg != name)
        .nth(1)
        .and_then(|text| text.parse().ok())
        .unwrap_or(default)
}

fn main() -> std::io::Result<()> {
    let n_requests = option("--requests", 1_000).max(1);
    let n_conditions = option("--conditions", 8).max(2);
    let binary = server_binary();
    println!("server: {}", binary.display());

    // A copy of a demo workbook, so that results are written beside the copy.
    let folder = tempfile::tempdir()?;
    let demo = Path::new(env!("CARGO_MANIFEST_DIR")).join("../sample-workbooks/resin-supplier-tensile.xlsx");
    let workbook = folder.path().join("resin-supplier-tensile.xlsx");
    std::fs::copy(&demo, &workbook)?;
    let workbook_text = workbook.display().to_string();

    let started = Instant::now();
    let mut client = Client::start(&binary)?;
    let initialized = client.request(
        "initialize",
        json!({"processId": std::process::id(), "capabilities": {"window": {"workDoneProgress": true}}}),
    )?;
    let start_to_initialize = started.elapsed();
    client.notify("initialized", json!({}))?;
    show("initialize", &initialized["result"], 1_200);

    std::thread::sleep(Duration::from_millis(300));
    let idle_kb = client.resident_kb();

    let inspected = client.request("trialyst/inspectWorkbook", json!({"path": workbook_text}))?;
    show("trialyst/inspectWorkbook", &inspected, 1_500);
    let analysed = client.request(
        "trialyst/analyseWorkbook",
        json!({"path": workbook_text, "settings": {"confidence": "95%"}, "workDoneToken": "analyse-1"}),
    )?;
    let headline: Vec<Value> = analysed["result"]["responses"]
        .as_array()
        .map(|responses| {
            responses
                .iter()
                .map(|response| json!({"response": response["name"], "headline": response["verdict"]["headline"]}))
                .collect()
        })
        .unwrap_or_default();
    show("trialyst/analyseWorkbook (verdicts)", &Value::Array(headline), 1_500);
    let small = json!([
        ["Old die", "New die"],
        [12.1, 12.6],
        [12.0, "#N/A"],
        [12.3, 12.8],
        [11.9, 12.7]
    ]);
    let cells = client.request(
        "trialyst/analyseCells",
        json!({"cells": small, "origin": "B3", "sheet": "Die trial"}),
    )?;
    show(
        "trialyst/analyseCells (findings)",
        &cells["result"]["results"]["findings"],
        800,
    );
    if let Some(first) = cells["result"]["tables"].get(1) {
        show("trialyst/analyseCells (second result table)", first, 1_500);
    }
    let written = client.request("trialyst/writeResults", json!({"path": workbook_text}))?;
    show("trialyst/writeResults", &written, 600);

    // Latency of analysing 10,000 values, on a warm server.
    let block = cell_block(n_conditions, 10_000 / n_conditions);
    let params = json!({"cells": block, "origin": "A1", "sheet": "Timing"});
    for _ in 0..(n_requests / 20).clamp(1, 50) {
        let _ = client.request("trialyst/analyseCells", params.clone())?;
    }
    let cpu_before = client.cpu_ms();
    let mut times_ms = Vec::with_capacity(n_requests);
    let mut outside_engine_ms = Vec::with_capacity(n_requests);
    for _ in 0..n_requests {
        let sent = Instant::now();
        let answer = client.request("trialyst/analyseCells", params.clone())?;
        let elapsed_ms = sent.elapsed().as_secs_f64() * 1e3;
        if answer.get("error").is_some() {
            show("unexpected error", &answer, 800);
            break;
        }
        let engine_ms = answer["result"]["results"]["timings"]["analysis_ms"]
            .as_f64()
            .unwrap_or(0.0);
        times_ms.push(elapsed_ms);
        outside_engine_ms.push(elapsed_ms - engine_ms);
    }
    let cpu_per_request = match (cpu_before, client.cpu_ms()) {
        (Some(before), Some(after)) => Some((after - before) / times_ms.len().max(1) as f64),
        _ => None,
    };
    let engine_mean_ms = times_ms
        .iter()
        .zip(&outside_engine_ms)
        .map(|(all, outside)| all - outside)
        .sum::<f64>()
        / times_ms.len().max(1) as f64;
    times_ms.sort_by(f64::total_cmp);
    outside_engine_ms.sort_by(f64::total_cmp);
    let busy_kb = client.resident_kb();

    let shutdown = client.request("shutdown", Value::Null)?;
    client.notify("exit", Value::Null)?;
    let status = client.child.wait()?;

    println!("== measurements");
    println!(
        "start to initialize reply: {:.1} ms (target < 50 ms)",
        start_to_initialize.as_secs_f64() * 1e3
    );
    match idle_kb {
        Some(kb) => println!("idle resident memory: {:.1} MB (target < 20 MB)", kb as f64 / 1024.0),
        None => println!("idle resident memory: not available on this system"),
    }
    if let Some(kb) = busy_kb {
        println!("resident memory after the timed requests: {:.1} MB", kb as f64 / 1024.0);
    }
    println!(
        "trialyst/analyseCells, 10,000 values in {n_conditions} conditions, {} requests: p50 {:.2} ms, p99 {:.2} ms, max {:.2} ms (targets: p50 < 2 ms, p99 < 5 ms)",
        times_ms.len(),
        percentile(&times_ms, 0.50),
        percentile(&times_ms, 0.99),
        times_ms.last().copied().unwrap_or(f64::NAN)
    );
    println!(
        "  of which outside the engine (latency less analysis_ms): p50 {:.2} ms, p99 {:.2} ms",
        percentile(&outside_engine_ms, 0.50),
        percentile(&outside_engine_ms, 0.99)
    );
    println!("  engine time (analysis_ms) per request: mean {engine_mean_ms:.2} ms");
    if let Some(cpu) = cpu_per_request {
        println!("  server processor time per request: {cpu:.2} ms (all threads; a busy machine inflates wall-clock figures, not this one)");
    }
    println!("notifications seen: {:?}", client.notifications);
    println!("shutdown answer: {shutdown}; exit status: {:?}", status.code());
    Ok(())
}
