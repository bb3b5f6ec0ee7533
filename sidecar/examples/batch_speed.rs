//! Times the weekly batch and the watcher.
//!
//! 1. Writes N small workbooks (60 rows: 6 conditions × 10 runs, invented
//!    data), then times `trialyst run FOLDER --jobs J --rollup ...` with every
//!    results workbook (charts included) written. Target: at least 100
//!    workbooks per second on 2 cores.
//! 2. Starts `trialyst watch` on an empty folder and drops workbooks one at
//!    a time (written elsewhere, then renamed into place, so that the file is
//!    closed at the moment of the drop), timing each drop until its results
//!    file appears. Target: under 1 s.
//!
//! ```text
//! cargo build --release -p sidecar --bin trialyst --example batch_speed
//! target/release/examples/batch_speed [--workbooks N] [--jobs J] [--drops D]
//! ```

// Benchmarks and examples report on the terminal.
#![allow(clippy::print_stdout, clippy::print_stderr, clippy::exit)]

use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

fn argument(name: &str, default: usize) -> usize {
    let args: Vec<String> = std::env::args().collect();
    args.iter()
        .position(|arg| arg == name)
        .and_then(|index| args.get(index + 1))
        .and_then(|text| text.parse().ok())
        .unwrap_or(default)
}

/// A small deterministic generator (SplitMix64) for invented data.
struct Mix(u64);

impl Mix {
    fn next(&mut self) -> f64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^= z >> 31;
        (z >> 11) as f64 / (1u64 << 53) as f64
    }
}

fn write_workbook(path: &Path, seed: u64) {
    let mut mix = Mix(seed);
    let mut book = rust_xlsxwriter::Workbook::new();
    let sheet = book.add_worksheet();
    sheet.write_string(0, 0, "Nozzle setting").expect("writable");
    sheet.write_string(0, 1, "Seal strength (N)").expect("writable");
    let settings = ["S1", "S2", "S3", "S4", "S5", "S6"];
    let mut row = 1;
    for (index, setting) in settings.iter().enumerate() {
        for _ in 0..10 {
            let value = 40.0 + index as f64 * 0.6 + (mix.next() - 0.5) * 4.0;
            sheet.write_string(row, 0, *setting).expect("writable");
            sheet
                .write_number(row, 1, (value * 100.0).round() / 100.0)
                .expect("writable");
            row += 1;
        }
    }
    book.save(path).expect("saved");
}

fn trialyst_binary() -> PathBuf {
    let exe = std::env::current_exe().expect("the example has a path");
    let binary = exe
        .parent()
        .and_then(Path::parent)
        .map(|dir| dir.join("trialyst"))
        .expect("a profile folder");
    if !binary.is_file() {
        eprintln!(
            "the trialyst binary is not at {}; build it with `cargo build --release -p sidecar --bin trialyst`",
            binary.display()
        );
        std::process::exit(1);
    }
    binary
}

fn main() {
    let workbooks = argument("--workbooks", 1000);
    let jobs = argument("--jobs", 2);
    let drops = argument("--drops", 20);
    let binary = trialyst_binary();
    let root = tempfile::Builder::new()
        .prefix("trialyst-batch-speed-")
        .tempdir()
        .expect("a temporary folder");
    let batch = root.path().join("week");
    std::fs::create_dir_all(&batch).expect("a batch folder");
    let started = Instant::now();
    for index in 0..workbooks {
        write_workbook(&batch.join(format!("line trial {index:04}.xlsx")), index as u64 + 1);
    }
    println!(
        "wrote {workbooks} workbooks (60 rows, 6 conditions) in {:.1} s",
        started.elapsed().as_secs_f64()
    );

    let started = Instant::now();
    let output = Command::new(&binary)
        .arg("run")
        .arg(&batch)
        .args(["--jobs", &jobs.to_string()])
        .arg("--rollup")
        .arg(root.path().join("week.rollup.xlsx"))
        .stdout(Stdio::null())
        .output()
        .expect("trialyst runs");
    let seconds = started.elapsed().as_secs_f64();
    let summary = String::from_utf8_lossy(&output.stderr);
    println!(
        "batch: {workbooks} workbooks, --jobs {jobs}: {seconds:.2} s wall, {:.0} workbooks/s (target >= 100); exit {}",
        workbooks as f64 / seconds,
        output.status.code().unwrap_or(-1)
    );
    if let Some(line) = summary.lines().last() {
        println!("  {line}");
    }
    let written = std::fs::read_dir(&batch)
        .expect("listable")
        .filter_map(Result::ok)
        .filter(|entry| entry.file_name().to_string_lossy().ends_with(".results.xlsx"))
        .count();
    println!("  results workbooks written: {written}");

    // The watcher: drop-to-results latency.
    let watched = root.path().join("drop");
    let staging = root.path().join("staging");
    std::fs::create_dir_all(&watched).expect("a watched folder");
    std::fs::create_dir_all(&staging).expect("a staging folder");
    let mut watcher = Command::new(&binary)
        .arg("watch")
        .arg(&watched)
        .stderr(Stdio::null())
        .spawn()
        .expect("the watcher starts");
    std::thread::sleep(Duration::from_millis(500));
    let mut latencies = Vec::new();
    for index in 0..drops {
        let name = format!("drop {index:02}.xlsx");
        let staged = staging.join(&name);
        write_workbook(&staged, 10_000 + index as u64);
        let results = watched.join(format!("drop {index:02}.results.xlsx"));
        let dropped_at = Instant::now();
        std::fs::rename(&staged, watched.join(&name)).expect("renamed into place");
        while !results.is_file() {
            if dropped_at.elapsed() > Duration::from_secs(30) {
                eprintln!("no results for {name} after 30 s");
                break;
            }
            std::thread::sleep(Duration::from_millis(2));
        }
        latencies.push(dropped_at.elapsed().as_secs_f64() * 1e3);
    }
    let _ = Command::new("kill").arg("-TERM").arg(watcher.id().to_string()).status();
    let _ = watcher.wait();
    latencies.sort_by(f64::total_cmp);
    if !latencies.is_empty() {
        println!(
            "watch: {} drops, drop to results: median {:.0} ms, worst {:.0} ms (target < 1000 ms)",
            latencies.len(),
            latencies[latencies.len() / 2],
            latencies[latencies.len() - 1]
        );
    }
}
