//! Benchmark of `trialyst run` on a large long-layout workbook.
//!
//! It writes a workbook of N data rows (default 1,000,000) × 3 columns: a
//! condition label (8 conditions) and two numeric responses, in
//! rust_xlsxwriter's constant-memory mode. Then it times, each in its own
//! child process so each has its own peak memory:
//!
//! 1. inflate only: the sheet's XML entry decompressed into a sink, the floor
//!    for any reader of the file;
//! 2. scan: the same plus one pass over the bytes looking for cell tags;
//! 3. the bare streaming read: every cell of the sheet through calamine's
//!    `worksheet_cells_reader`, counted and nothing else;
//! 4. `trialyst run --json --jobs 1` on the file, results workbook written.
//!
//! Wall time is measured around each child. CPU time (user + system) and
//! peak memory, the child's resident high-water mark, are read from
//! /proc/<pid>/stat and /proc/<pid>/status, polled every few milliseconds
//! while it runs (Linux only, else not shown; the last few milliseconds of
//! CPU time can be missed). On a shared machine the CPU-time ratio is the
//! steadier one. The targets: run ≤ 2 × inflate only (and ≤ 1.5 × the
//! streaming read), peak ≤ 300 MB.
//!
//! With `--comparisons` the workbook instead has 20 conditions of unequal sizes
//! (condition c gets a share proportional to c + 1) and one response, and a
//! settings sheet asks for comparisons with a control and with the best
//! (direction higher): everything the comparisons and checks can do. The run's
//! `assessment_ms` against the rest of its wall time is then the cost the
//! comparisons add to the skeleton (target ≤ 20%).
//!
//! Build and run (release, so the binary is there too):
//!
//! ```text
//! cargo build --release -p sidecar --bin trialyst --example bench_run
//! target/release/examples/bench_run [--rows N] [--keep FOLDER]
//! ```

// Benchmarks and examples report on the terminal.
#![allow(clippy::print_stdout, clippy::print_stderr, clippy::exit)]

use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

use calamine::{Reader, Xlsx};

/// Condition labels of the generated trial.
const CONDITIONS: [&str; 8] = [
    "line 1 / supplier A",
    "line 1 / supplier B",
    "line 2 / supplier A",
    "line 2 / supplier B",
    "line 3 / supplier A",
    "line 3 / supplier B",
    "line 4 / supplier A",
    "line 4 / supplier B",
];

fn main() {
    let args: Vec<String> = std::env::args().collect();
    if let Some(mode @ ("--stream-only" | "--inflate-only" | "--scan-only" | "--read-only")) =
        args.get(1).map(String::as_str)
    {
        let Some(path) = args.get(2) else {
            eprintln!("bench_run {mode} FILE");
            std::process::exit(2);
        };
        let path = Path::new(path);
        std::process::exit(match mode {
            "--stream-only" => stream_only(path),
            "--inflate-only" => inflate_only(path, false),
            "--read-only" => read_only(path),
            _ => inflate_only(path, true),
        });
    }
    let mut rows: u32 = 1_000_000;
    let mut keep: Option<PathBuf> = None;
    let mut comparisons = false;
    let mut index = 1;
    while index < args.len() {
        match args[index].as_str() {
            "--rows" => {
                rows = args
                    .get(index + 1)
                    .and_then(|text| text.replace('_', "").parse().ok())
                    .unwrap_or_else(|| {
                        eprintln!("--rows needs a whole number");
                        std::process::exit(2)
                    });
                index += 2;
            }
            "--comparisons" => {
                comparisons = true;
                index += 1;
            }
            "--keep" => {
                keep = args.get(index + 1).map(PathBuf::from);
                index += 2;
            }
            other => {
                eprintln!("unknown argument '{other}'; use --rows N, --comparisons or --keep FOLDER");
                std::process::exit(2);
            }
        }
    }
    let temporary = tempfile_folder();
    let folder = keep.unwrap_or_else(|| temporary.clone());
    if let Err(error) = std::fs::create_dir_all(&folder) {
        eprintln!("cannot create {}: {error}", folder.display());
        std::process::exit(1);
    }
    let path = folder.join("bench-long.xlsx");

    let started = Instant::now();
    let generated = if comparisons {
        generate_comparisons(&path, rows)
    } else {
        generate(&path, rows)
    };
    if let Err(error) = generated {
        eprintln!("cannot write the workbook: {error}");
        std::process::exit(1);
    }
    let bytes = std::fs::metadata(&path).map(|metadata| metadata.len()).unwrap_or(0);
    println!(
        "generated {} rows: {:.1} MB in {:.2} s",
        rows,
        bytes as f64 / 1e6,
        started.elapsed().as_secs_f64()
    );

    let exe = std::env::current_exe().expect("the example has a path");
    let inflate = measure(Command::new(&exe).arg("--inflate-only").arg(&path));
    println!("{}", inflate.line("inflate only (sheet XML into a sink)"));
    let scan = measure(Command::new(&exe).arg("--scan-only").arg(&path));
    println!("{}", scan.line("scan (inflate + one pass counting '<c ')"));
    let stream = measure(Command::new(&exe).arg("--stream-only").arg(&path));
    println!("{}", stream.line("streaming read (calamine cells reader)"));
    let read = measure(Command::new(&exe).arg("--read-only").arg(&path));
    println!(
        "{}",
        read.line("our read (open the workbook, read the sheet into its grid)")
    );

    let profile_dir = exe
        .parent()
        .and_then(Path::parent)
        .map(Path::to_path_buf)
        .unwrap_or_default();
    let binary = profile_dir.join(format!("trialyst{}", std::env::consts::EXE_SUFFIX));
    if !binary.is_file() {
        eprintln!(
            "the trialyst binary is not at {}; build it with `cargo build --release -p sidecar --bin trialyst`",
            binary.display()
        );
        std::process::exit(1);
    }
    let out_dir = folder.join("results");
    let run = measure(
        Command::new(&binary)
            .args(["run", "--json", "--jobs", "1", "--out-dir"])
            .arg(&out_dir)
            .arg(&path),
    );
    println!("{}", run.line("trialyst run (read, detect, analyse, write)"));
    if let Some(line) = run.stdout.lines().next() {
        if let Ok(value) = serde_json::from_str::<serde_json::Value>(line) {
            let timing = |key: &str| value["timings"][key].as_f64().unwrap_or(f64::NAN) / 1e3;
            let assessment = timing("assessment_ms");
            let (hash, read, layout, analysis) = (
                timing("hash_ms"),
                timing("read_ms"),
                timing("layout_ms"),
                timing("analysis_ms"),
            );
            // The hash is computed on a second thread beside the read.
            println!(
                "  stages (s): read {read:.2} (hash {hash:.2} beside it), layout {layout:.2}, analysis {analysis:.2}, \
                 rest (start, open, report, write, exit) {:.2}",
                run.wall.as_secs_f64() - read - layout - analysis
            );
            println!("  records {}, status {}", value["table"]["n_records"], value["status"]);
            println!(
                "  comparisons and checks {assessment:.3} s: {:.1}% added to the rest of the run (target ≤ 20% with --comparisons)",
                100.0 * assessment / (run.wall.as_secs_f64() - assessment)
            );
        }
    }
    let ratio = run.wall.as_secs_f64() / inflate.wall.as_secs_f64();
    println!("ratio run / inflate only, wall time: {ratio:.2} (target ≤ 2.0)");
    if let (Some(run_cpu), Some(inflate_cpu)) = (run.cpu_seconds, inflate.cpu_seconds) {
        println!("ratio run / inflate only, CPU time: {:.2}", run_cpu / inflate_cpu);
    }
    println!(
        "ratio run / scan, wall time: {:.2}",
        run.wall.as_secs_f64() / scan.wall.as_secs_f64()
    );
    let ratio = run.wall.as_secs_f64() / stream.wall.as_secs_f64();
    println!("ratio run / streaming read, wall time: {ratio:.2} (target ≤ 1.5)");
    if let (Some(run_cpu), Some(stream_cpu)) = (run.cpu_seconds, stream.cpu_seconds) {
        println!("ratio run / streaming read, CPU time: {:.2}", run_cpu / stream_cpu);
    }
    if let Some(peak) = run.peak_kib {
        println!("peak memory of run: {:.0} MB (target ≤ 300 MB)", peak as f64 / 1024.0);
    }
    if folder == temporary {
        let _ = std::fs::remove_dir_all(&temporary);
    }
}

/// A folder for the generated files, unique to this process.
fn tempfile_folder() -> PathBuf {
    std::env::temp_dir().join(format!("trialyst-bench-{}", std::process::id()))
}

/// Writes the benchmark workbook in constant-memory mode.
fn generate(path: &Path, rows: u32) -> Result<(), rust_xlsxwriter::XlsxError> {
    let mut book = rust_xlsxwriter::Workbook::new();
    let sheet = book.add_worksheet_with_constant_memory()?;
    sheet.set_name("Trial")?;
    sheet.write_string(0, 0, "Condition")?;
    sheet.write_string(0, 1, "Thickness (mm)")?;
    sheet.write_string(0, 2, "Weight (g)")?;
    // A fixed linear congruential sequence (Knuth's MMIX constants) for the noise.
    let mut state: u64 = 0x2545_F491_4F6C_DD1D;
    let mut noise = move || {
        state = state
            .wrapping_mul(6_364_136_223_846_793_005)
            .wrapping_add(1_442_695_040_888_963_407);
        ((state >> 11) as f64 / (1u64 << 53) as f64) - 0.5
    };
    for row in 1..=rows {
        let condition = (row as usize * 7 + row as usize / 13) % CONDITIONS.len();
        sheet.write_string(row, 0, CONDITIONS[condition])?;
        let thickness = 2.0 + 0.01 * condition as f64 + 0.05 * noise();
        let weight = 150.0 + 0.3 * condition as f64 + 2.0 * noise();
        // Three decimals, as a gauge would record them.
        sheet.write_number(row, 1, (thickness * 1000.0).round() / 1000.0)?;
        sheet.write_number(row, 2, (weight * 1000.0).round() / 1000.0)?;
    }
    book.save(path)
}

/// Writes the comparisons benchmark workbook: 20 conditions of unequal sizes, one
/// response, and a settings sheet asking for a control and a direction.
fn generate_comparisons(path: &Path, rows: u32) -> Result<(), rust_xlsxwriter::XlsxError> {
    let mut book = rust_xlsxwriter::Workbook::new();
    let sheet = book.add_worksheet_with_constant_memory()?;
    sheet.set_name("Trial")?;
    sheet.write_string(0, 0, "Oven setting")?;
    sheet.write_string(0, 1, "Hardness (HV)")?;
    let mut state: u64 = 0x2545_F491_4F6C_DD1D;
    for row in 1..=rows {
        state = state
            .wrapping_mul(6_364_136_223_846_793_005)
            .wrapping_add(1_442_695_040_888_963_407);
        // Condition c with probability (c + 1) / 210: invert the triangular numbers.
        let share = ((state >> 33) as f64 / (1u64 << 31) as f64) * 210.0;
        let condition = ((((8.0 * share + 1.0).sqrt() - 1.0) / 2.0) as usize).min(19);
        let noise = ((state >> 11) % 10_000) as f64 / 1000.0 - 5.0;
        sheet.write_string(row, 0, format!("setting {:02}", condition + 1))?;
        sheet.write_number(
            row,
            1,
            ((200.0 + 0.02 * condition as f64 + noise) * 100.0).round() / 100.0,
        )?;
    }
    let settings = book.add_worksheet();
    settings.set_name("trialyst settings")?;
    settings.write_string(0, 0, "direction")?;
    settings.write_string(0, 1, "higher")?;
    settings.write_string(1, 0, "control")?;
    settings.write_string(1, 1, "setting 01")?;
    book.save(path)
}

/// Streams every cell of the first sheet and prints the count.
fn stream_only(path: &Path) -> i32 {
    let mut book: Xlsx<_> = match calamine::open_workbook(path) {
        Ok(book) => book,
        Err(error) => {
            eprintln!("cannot open {}: {error}", path.display());
            return 1;
        }
    };
    let Some(sheet) = book.sheet_names().first().cloned() else {
        eprintln!("no sheet");
        return 1;
    };
    let mut reader = match book.worksheet_cells_reader(&sheet) {
        Ok(reader) => reader,
        Err(error) => {
            eprintln!("cannot read the sheet: {error}");
            return 1;
        }
    };
    let mut cells: u64 = 0;
    loop {
        match reader.next_cell() {
            Ok(Some(_)) => cells += 1,
            Ok(None) => break,
            Err(error) => {
                eprintln!("read error: {error}");
                return 1;
            }
        }
    }
    println!("{cells} cells");
    0
}

/// Opens the workbook and reads its first sheet as the run does, nothing else.
fn read_only(path: &Path) -> i32 {
    let limits = workbook_io::ReadLimits::default();
    let mut workbook = match workbook_io::open_workbook(path, &limits) {
        Ok(workbook) => workbook,
        Err(error) => {
            eprintln!("{error}");
            return 1;
        }
    };
    let Some(sheet) = workbook.sheets().first().map(|info| info.name.clone()) else {
        eprintln!("no sheet");
        return 1;
    };
    match workbook.read_sheet(&sheet, None) {
        Ok(grid) => {
            println!("{} cells", grid.cells.len());
            0
        }
        Err(error) => {
            eprintln!("{error}");
            1
        }
    }
}

/// Inflates the first worksheet's XML entry into a sink, nothing else; with
/// `scan`, also counts the cells' opening tags in one pass over each chunk
/// (a tag split across two chunks is missed, which is fine for a timing).
fn inflate_only(path: &Path, scan: bool) -> i32 {
    use std::io::Read;
    let file = match std::fs::File::open(path) {
        Ok(file) => file,
        Err(error) => {
            eprintln!("cannot open {}: {error}", path.display());
            return 1;
        }
    };
    let mut archive = match zip::ZipArchive::new(std::io::BufReader::new(file)) {
        Ok(archive) => archive,
        Err(error) => {
            eprintln!("not a zip: {error}");
            return 1;
        }
    };
    let Some(name) = archive
        .file_names()
        .filter_map(Result::ok)
        .filter(|name| name.starts_with("xl/worksheets/") && name.ends_with(".xml"))
        .min()
        .map(|name| name.into_owned())
    else {
        eprintln!("no worksheet entry");
        return 1;
    };
    let mut entry = match archive.by_name(&name) {
        Ok(entry) => entry,
        Err(error) => {
            eprintln!("cannot open {name}: {error}");
            return 1;
        }
    };
    let mut buffer = vec![0u8; 64 * 1024];
    let (mut bytes, mut cells) = (0u64, 0u64);
    loop {
        match entry.read(&mut buffer) {
            Ok(0) => break,
            Ok(read) => {
                bytes += read as u64;
                if scan {
                    cells += memchr::memmem::find_iter(&buffer[..read], b"<c ").count() as u64;
                }
            }
            Err(error) => {
                eprintln!("inflate error: {error}");
                return 1;
            }
        }
    }
    println!("{bytes} bytes, {cells} cells");
    0
}

/// What one child run took.
struct Measured {
    wall: Duration,
    cpu_seconds: Option<f64>,
    peak_kib: Option<u64>,
    success: bool,
    stdout: String,
}

impl Measured {
    fn line(&self, what: &str) -> String {
        format!(
            "{what}: {:.2} s wall, {} CPU, peak {}{}",
            self.wall.as_secs_f64(),
            self.cpu_seconds
                .map_or_else(|| "not measured".to_string(), |seconds| format!("{seconds:.2} s")),
            self.peak_kib.map_or_else(
                || "not measured".to_string(),
                |kib| format!("{:.0} MB", kib as f64 / 1024.0)
            ),
            if self.success { "" } else { " (FAILED)" }
        )
    }
}

/// Runs a child, polling its resident high-water mark until it exits.
fn measure(command: &mut Command) -> Measured {
    let started = Instant::now();
    let mut child = match command.stdout(Stdio::piped()).stderr(Stdio::inherit()).spawn() {
        Ok(child) => child,
        Err(error) => {
            eprintln!("cannot start the child: {error}");
            std::process::exit(1);
        }
    };
    let status_path = PathBuf::from(format!("/proc/{}/status", child.id()));
    let mut stdout_pipe = child.stdout.take();
    let reader = std::thread::spawn(move || {
        let mut text = String::new();
        if let Some(pipe) = stdout_pipe.as_mut() {
            use std::io::Read;
            let _ = pipe.read_to_string(&mut text);
        }
        text
    });
    let stat_path = PathBuf::from(format!("/proc/{}/stat", child.id()));
    let mut peak_kib: Option<u64> = None;
    let mut cpu_seconds: Option<f64> = None;
    let status = loop {
        if let Some(kib) = high_water_kib(&status_path) {
            peak_kib = Some(peak_kib.map_or(kib, |peak| peak.max(kib)));
        }
        if let Some(seconds) = cpu_time_seconds(&stat_path) {
            cpu_seconds = Some(seconds);
        }
        match child.try_wait() {
            Ok(Some(status)) => break status,
            Ok(None) => std::thread::sleep(Duration::from_millis(5)),
            Err(error) => {
                eprintln!("cannot wait for the child: {error}");
                std::process::exit(1);
            }
        }
    };
    let wall = started.elapsed();
    Measured {
        wall,
        cpu_seconds,
        peak_kib,
        success: status.success(),
        stdout: reader.join().unwrap_or_default(),
    }
}

fn high_water_kib(status_path: &Path) -> Option<u64> {
    let text = std::fs::read_to_string(status_path).ok()?;
    let line = text.lines().find(|line| line.starts_with("VmHWM:"))?;
    line.split_whitespace().nth(1)?.parse().ok()
}

/// User plus system CPU time from /proc/<pid>/stat (fields 14 and 15, in
/// clock ticks of 1/100 s, the fixed USER_HZ of the Linux ABI).
fn cpu_time_seconds(stat_path: &Path) -> Option<f64> {
    let text = std::fs::read_to_string(stat_path).ok()?;
    // The command name (field 2) is in parentheses and may hold spaces.
    let after_name = &text[text.rfind(')')? + 1..];
    let fields: Vec<&str> = after_name.split_whitespace().collect();
    // after_name starts at field 3, so fields 14 and 15 are at 11 and 12.
    let user: f64 = fields.get(11)?.parse().ok()?;
    let system: f64 = fields.get(12)?.parse().ok()?;
    Some((user + system) / 100.0)
}
