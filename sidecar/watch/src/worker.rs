//! The isolated worker: each workbook is read and analysed in a child
//! process (`trialyst __analyse-one`) with an address-space limit and a
//! wall-time limit, so that an allocation abort, a crash or a hang on a
//! hostile file costs that file, not the watcher.
//!
//! The child prints JSON lines on stdout: `writing` (with the results path,
//! before the atomic write starts, so that the parent can remove the
//! temporary file if it has to stop the child), then `analysed` or
//! `failed`. The child never writes a problems workbook; the parent does,
//! after deciding whether a failure is final or worth a retry.

use std::ffi::OsString;
use std::io::{BufRead, BufReader, Read, Write};
use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};
use std::sync::atomic::{AtomicBool, Ordering};
use std::time::{Duration, Instant};

use serde::{Deserialize, Serialize};

use service::settings::Settings;
use service::{AnalysisRequest, FailureReport};

/// Test hook: the worker first allocates this many MiB (an allocation abort
/// under the memory limit, as a hostile file could cause).
pub const TEST_ALLOCATE_MIB: &str = "TRIALYST_TEST_WORKER_ALLOCATE_MIB";
/// Test hook: the worker pauses this many milliseconds before writing results.
pub const TEST_PAUSE_MS: &str = "TRIALYST_TEST_WORKER_PAUSE_MS";

/// One line from the worker.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(tag = "status", rename_all = "kebab-case")]
pub enum WorkerMessage {
    /// About to write the results workbook here.
    Writing {
        /// The results workbook.
        results_file: String,
    },
    /// Analysed and written.
    Analysed {
        /// The results workbook.
        results_file: String,
        /// One headline per response.
        verdicts: Vec<String>,
        /// Number of data findings.
        findings: usize,
    },
    /// Could not be analysed.
    Failed {
        /// What is wrong.
        report: FailureReport,
        /// Where its problems workbook belongs.
        problems_file: String,
    },
}

fn emit(message: &WorkerMessage) {
    let mut stdout = std::io::stdout().lock();
    let _ = writeln!(stdout, "{}", serde_json::to_string(message).unwrap_or_default());
    let _ = stdout.flush();
}

/// What the watcher asks of one worker: sent as JSON, the worker command's one argument.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct WorkerRequest {
    /// The workbook.
    pub file: PathBuf,
    /// Folder for the results workbook given on the watcher's command line.
    pub out_dir: Option<PathBuf>,
    /// The folder settings file to apply, found by the watcher with
    /// [`service::folder_settings::settings_file_for`].
    pub folder_settings: Option<PathBuf>,
    /// The settings given on the watcher's command line.
    pub settings: Settings,
    /// Folders beyond the workbook's own that an `output folder` setting may
    /// point into (the watched folder).
    #[serde(default)]
    pub allowed_output_roots: Vec<PathBuf>,
}

/// The hidden worker command's name.
pub const WORKER_COMMAND: &str = "__analyse-one";

/// The worker command, the child side: `request` is the JSON of a
/// [`WorkerRequest`]. Prints its outcome as JSON lines on stdout and
/// returns; anything else (a signal, an abort) is a crash to the parent.
pub fn analyse_one(request: &str) {
    let args: WorkerRequest = match serde_json::from_str(request) {
        Ok(args) => args,
        Err(error) => {
            emit(&WorkerMessage::Failed {
                report: FailureReport {
                    message: format!("the worker's request could not be read: {error}"),
                    problems: Vec::new(),
                    maybe_incomplete: false,
                },
                problems_file: String::new(),
            });
            return;
        }
    };
    // Fault injection for the tests of the isolation (see DEVELOPERS.md):
    // an allocation of this many MiB, as a hostile file could cause.
    if let Some(mib) = std::env::var(TEST_ALLOCATE_MIB)
        .ok()
        .and_then(|text| text.parse::<usize>().ok())
    {
        let block = vec![1u8; mib << 20];
        std::hint::black_box(&block);
    }
    let output_name = service::output_name_among_siblings(&args.file);
    // A failure's problems workbook goes where the settings known so far
    // (without the workbook's own) put the results.
    let fail = |error: &service::ServiceError, known: &Settings| {
        let folder = service::output_folder_for(&args.file, args.out_dir.as_deref(), known, &args.allowed_output_roots)
            .ok()
            .flatten();
        emit(&WorkerMessage::Failed {
            report: service::describe_failure(error),
            problems_file: service::problems_path_named(&args.file, folder.as_deref(), &output_name)
                .display()
                .to_string(),
        });
    };
    let settings = args.settings.clone();
    let folder_settings = match &args.folder_settings {
        Some(path) => match service::folder_settings::read_settings_file(path) {
            Ok(found) => Some(found),
            Err(error) => return fail(&error.into(), &settings),
        },
        None => None,
    };
    let layered = settings.clone().over(&folder_settings.clone().unwrap_or_default());
    let request = AnalysisRequest {
        settings,
        folder_settings,
        output: service::OutputRules {
            name: output_name.clone(),
            allowed_roots: args.allowed_output_roots.clone(),
            claimed: None,
        },
        ..AnalysisRequest::default()
    };
    let announce = &mut |destination: &Path| {
        emit(&WorkerMessage::Writing {
            results_file: destination.display().to_string(),
        });
        // Fault injection for the tests of stopping mid-analysis.
        if let Some(pause) = std::env::var(TEST_PAUSE_MS)
            .ok()
            .and_then(|text| text.parse::<u64>().ok())
        {
            std::thread::sleep(Duration::from_millis(pause));
        }
    };
    match service::analyse_and_write(&args.file, &request, args.out_dir.as_deref(), announce) {
        Ok(written) => emit(&WorkerMessage::Analysed {
            results_file: written.results_file.display().to_string(),
            verdicts: written
                .results
                .responses
                .iter()
                .map(|response| match &response.verdict {
                    Some(verdict) => verdict.headline.clone(),
                    None => format!("{}: not analysed", response.name),
                })
                .collect(),
            findings: written.results.findings.len(),
        }),
        Err(error) => fail(&error, &layered),
    }
}

/// Limits for one worker.
#[derive(Debug, Clone, Copy)]
pub struct WorkerLimits {
    /// Address space, bytes.
    pub memory_bytes: u64,
    /// Wall time.
    pub time: Duration,
}

/// What came of one worker run.
#[derive(Debug)]
pub enum WorkerOutcome {
    /// The worker answered.
    Answered(WorkerMessage),
    /// The worker died without answering (signal, abort, exit code), with a description.
    Crashed(String),
    /// The worker ran past the time limit and was stopped.
    TimedOut,
    /// The watcher was asked to stop; the worker was stopped.
    Stopped,
}

/// The arguments of the worker for one workbook: the hidden command and the request as JSON.
pub fn worker_arguments(request: &WorkerRequest) -> Vec<OsString> {
    vec![
        WORKER_COMMAND.into(),
        serde_json::to_string(request).unwrap_or_default().into(),
    ]
}

/// Removes the temporary files a stopped worker may have left beside `results_file`.
fn remove_worker_temporaries(results_file: &Path, pid: u32) {
    let Some(folder) = results_file.parent() else { return };
    let name = results_file
        .file_name()
        .map(|name| name.to_string_lossy().into_owned())
        .unwrap_or_default();
    let prefix = format!(".{name}.{pid}-");
    if let Ok(entries) = std::fs::read_dir(if folder.as_os_str().is_empty() {
        Path::new(".")
    } else {
        folder
    }) {
        for entry in entries.filter_map(Result::ok) {
            let entry_name = entry.file_name().to_string_lossy().into_owned();
            if entry_name.starts_with(&prefix) && entry_name.ends_with(".tmp") {
                let _ = std::fs::remove_file(entry.path());
            }
        }
    }
}

/// Removes, in `folder`, the temporary results and problems files of the
/// workbook named `stem` whose writing process no longer runs here (a
/// worker killed with its watcher). Returns how many were removed.
pub fn remove_dead_temporaries(folder: &Path, stem: &str) -> usize {
    let Ok(entries) = std::fs::read_dir(folder) else {
        return 0;
    };
    let prefix = format!(".{stem}.");
    let mut removed = 0;
    for entry in entries.filter_map(Result::ok) {
        let name = entry.file_name().to_string_lossy().into_owned();
        let Some(inner) = name.strip_prefix(&prefix).and_then(|rest| rest.strip_suffix(".tmp")) else {
            continue;
        };
        if !(inner.contains(".results.xlsx.")
            || inner.contains(".problems.xlsx.")
            || inner.starts_with("results.xlsx.")
            || inner.starts_with("problems.xlsx."))
        {
            continue;
        }
        // `<output name>.<pid>-<nanoseconds>`
        let pid = inner
            .rsplit('.')
            .next()
            .and_then(|tail| tail.split('-').next())
            .and_then(|pid| pid.parse::<u32>().ok());
        let dead = pid.is_some_and(|pid| crate::owner::process_liveness(pid, 0) == crate::owner::Liveness::Dead);
        if dead && std::fs::remove_file(entry.path()).is_ok() {
            removed += 1;
        }
    }
    removed
}

/// Runs the worker `program` with `args` under `limits`; `stop` ends it early.
pub fn run_worker(program: &Path, args: &[OsString], limits: WorkerLimits, stop: &AtomicBool) -> WorkerOutcome {
    let mut command = Command::new(program);
    command
        .args(args)
        .stdin(Stdio::null())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped());
    #[cfg(unix)]
    #[allow(unsafe_code)]
    {
        use std::os::unix::process::CommandExt;
        let memory = limits.memory_bytes;
        // SAFETY: only async-signal-safe calls (setrlimit, setpgid, prctl) between fork and exec.
        unsafe {
            command.pre_exec(move || {
                let address_space = libc::rlimit {
                    rlim_cur: memory as libc::rlim_t,
                    rlim_max: memory as libc::rlim_t,
                };
                if libc::setrlimit(libc::RLIMIT_AS, &address_space) != 0 {
                    return Err(std::io::Error::last_os_error());
                }
                let no_core = libc::rlimit {
                    rlim_cur: 0,
                    rlim_max: 0,
                };
                libc::setrlimit(libc::RLIMIT_CORE, &no_core);
                // Its own process group: a Ctrl-C at the terminal reaches the
                // watcher, which then stops the worker itself.
                libc::setpgid(0, 0);
                // A watcher killed outright takes its worker with it, so no
                // orphan keeps writing after the watcher's restart.
                #[cfg(target_os = "linux")]
                libc::prctl(libc::PR_SET_PDEATHSIG, libc::SIGKILL);
                Ok(())
            });
        }
    }
    let mut child = match command.spawn() {
        Ok(child) => child,
        Err(error) => return WorkerOutcome::Crashed(format!("the worker could not be started: {error}")),
    };
    let pid = child.id();
    let stdout = child.stdout.take();
    let stderr = child.stderr.take();
    let out_reader = std::thread::spawn(move || {
        let mut lines = Vec::new();
        if let Some(stdout) = stdout {
            for line in BufReader::new(stdout).lines() {
                match line {
                    Ok(line) => lines.push(line),
                    Err(_) => break,
                }
            }
        }
        lines
    });
    let err_reader = std::thread::spawn(move || {
        let mut text = Vec::new();
        if let Some(stderr) = stderr {
            let _ = stderr.take(64 * 1024).read_to_end(&mut text);
        }
        String::from_utf8_lossy(&text).into_owned()
    });
    let deadline = Instant::now() + limits.time;
    let mut ended_early = None;
    let status = loop {
        match child.try_wait() {
            Ok(Some(status)) => break Some(status),
            Ok(None) => {}
            Err(_) => break None,
        }
        if stop.load(Ordering::SeqCst) {
            ended_early = Some(WorkerOutcome::Stopped);
        } else if Instant::now() > deadline {
            ended_early = Some(WorkerOutcome::TimedOut);
        }
        if ended_early.is_some() {
            let _ = child.kill();
            let _ = child.wait();
            break None;
        }
        std::thread::sleep(Duration::from_millis(2));
    };
    let lines = out_reader.join().unwrap_or_default();
    let stderr_text = err_reader.join().unwrap_or_default();
    let messages: Vec<WorkerMessage> = lines
        .iter()
        .filter_map(|line| serde_json::from_str(line).ok())
        .collect();
    let writing = messages.iter().rev().find_map(|message| match message {
        WorkerMessage::Writing { results_file } => Some(PathBuf::from(results_file)),
        _ => None,
    });
    let answer = messages
        .iter()
        .rev()
        .find(|message| !matches!(message, WorkerMessage::Writing { .. }))
        .cloned();
    if let Some(outcome) = ended_early {
        if let Some(results_file) = &writing {
            remove_worker_temporaries(results_file, pid);
        }
        return outcome;
    }
    match (status, answer) {
        (Some(status), Some(answer)) if status.success() => WorkerOutcome::Answered(answer),
        (status, _) => {
            if let Some(results_file) = &writing {
                remove_worker_temporaries(results_file, pid);
            }
            let how = match status {
                Some(status) => describe_status(status),
                None => "it could not be waited for".into(),
            };
            let last = stderr_text
                .lines()
                .rev()
                .find(|line| !line.trim().is_empty())
                .unwrap_or("")
                .trim()
                .to_string();
            WorkerOutcome::Crashed(if last.is_empty() {
                how
            } else {
                format!("{how} ({last})")
            })
        }
    }
}

fn describe_status(status: std::process::ExitStatus) -> String {
    #[cfg(unix)]
    {
        use std::os::unix::process::ExitStatusExt;
        if let Some(signal) = status.signal() {
            let name = match signal {
                libc::SIGABRT => "aborted",
                libc::SIGSEGV => "crashed (memory fault)",
                libc::SIGKILL => "was killed",
                libc::SIGBUS => "crashed (bus error)",
                _ => "was stopped by a signal",
            };
            return format!("the reader {name} (signal {signal})");
        }
    }
    match status.code() {
        Some(code) => format!("the reader ended with exit code {code} without an answer"),
        None => "the reader ended without an answer".into(),
    }
}
