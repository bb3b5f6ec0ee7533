//! `trialyst watch` end to end: simulated drops into a watched folder, each
//! test with its own folder and watcher process, outcomes polled for with a
//! bound of a few seconds (no fixed sleeps to wait for results).

use std::io::Write;
use std::path::{Path, PathBuf};
use std::process::{Child, Command, Stdio};
use std::time::{Duration, Instant};

use crate::common::{long_rows, read_all_sheets, sha256_of, temp_folder, trialyst_path, write_rows};

/// Longest wait for one outcome; generous for a loaded 2-core machine.
const PATIENCE: Duration = Duration::from_secs(20);

pub(crate) struct Watching {
    child: Option<Child>,
    log: PathBuf,
}

impl Watching {
    pub(crate) fn start(folder: &Path, log: &Path, extra: &[&str], env: &[(&str, &str)]) -> Self {
        let mut command = Command::new(trialyst_path());
        command
            .arg("watch")
            .arg(folder)
            .arg("--log")
            .arg(log)
            .args(extra)
            .stdin(Stdio::null())
            .stdout(Stdio::null())
            .stderr(Stdio::null());
        for (key, value) in env {
            command.env(key, value);
        }
        let child = command.spawn().expect("the watcher starts");
        let watching = Self {
            child: Some(child),
            log: log.to_path_buf(),
        };
        watching.wait_for_log("watching", 1);
        watching
    }

    pub(crate) fn log_text(&self) -> String {
        std::fs::read_to_string(&self.log).unwrap_or_default()
    }

    /// Waits until `needle` occurs at least `count` times in the log.
    pub(crate) fn wait_for_log(&self, needle: &str, count: usize) {
        let log = self.log.clone();
        wait_until(&format!("{count} log line(s) with '{needle}'"), || {
            std::fs::read_to_string(&log)
                .unwrap_or_default()
                .matches(needle)
                .count()
                >= count
        })
        .unwrap_or_else(|message| panic!("{message}\n--- log\n{}", self.log_text()));
    }

    pub(crate) fn signal(&self, name: &str) {
        let pid = self.child.as_ref().expect("running").id().to_string();
        let status = Command::new("kill")
            .args([&format!("-{name}"), &pid])
            .status()
            .expect("kill runs");
        assert!(status.success());
    }

    /// Sends SIGTERM and returns the exit code.
    fn stop(&mut self) -> i32 {
        self.signal("TERM");
        let mut child = self.child.take().expect("running");
        let deadline = Instant::now() + Duration::from_secs(10);
        loop {
            if let Some(status) = child.try_wait().expect("waitable") {
                return status.code().unwrap_or(-1);
            }
            if Instant::now() > deadline {
                let _ = child.kill();
                let _ = child.wait();
                panic!("the watcher did not stop on SIGTERM\n--- log\n{}", self.log_text());
            }
            std::thread::sleep(Duration::from_millis(20));
        }
    }
}

impl Drop for Watching {
    fn drop(&mut self) {
        if let Some(mut child) = self.child.take() {
            let _ = child.kill();
            let _ = child.wait();
        }
    }
}

fn wait_until(what: &str, mut done: impl FnMut() -> bool) -> Result<(), String> {
    let deadline = Instant::now() + PATIENCE;
    while Instant::now() < deadline {
        if done() {
            return Ok(());
        }
        std::thread::sleep(Duration::from_millis(20));
    }
    Err(format!("timed out waiting for {what}"))
}

/// A small trial workbook; `shift` changes the data (and so the content).
fn trial_workbook(path: &Path, shift: f64) {
    let a = [10.1 + shift, 10.4, 9.9, 10.2];
    let b = [11.0, 11.3 + shift, 10.8, 11.1];
    let c = [10.0, 10.2, 10.1 + shift, 9.8];
    write_rows(
        path,
        "Runs",
        &long_rows("Oven", "Hardness (HV)", &[("North", &a), ("South", &b), ("East", &c)]),
    );
}

struct Setup {
    _root: tempfile::TempDir,
    folder: PathBuf,
    staging: PathBuf,
    log: PathBuf,
}

fn setup() -> Setup {
    let root = temp_folder();
    let folder = root.path().join("drop");
    let staging = root.path().join("staging");
    std::fs::create_dir_all(&folder).expect("a drop folder");
    std::fs::create_dir_all(&staging).expect("a staging folder");
    let log = root.path().join("watch.log");
    Setup {
        folder,
        staging,
        log,
        _root: root,
    }
}

fn staged(setup: &Setup, name: &str, shift: f64) -> PathBuf {
    let path = setup.staging.join(name);
    trial_workbook(&path, shift);
    path
}

pub(crate) fn wait_for_file(path: &Path, watching: &Watching) {
    wait_until(&format!("{}", path.display()), || path.is_file())
        .unwrap_or_else(|message| panic!("{message}\n--- log\n{}", watching.log_text()));
    // Results and problems workbooks go to the office check too (when it asks).
    if path.extension().is_some_and(|extension| extension == "xlsx") {
        crate::common::keep_output(path);
    }
}

/// The watcher's state as stored: the snapshot and the journal since it.
pub(crate) fn state_text(folder: &Path) -> String {
    let read = |name: &str| std::fs::read_to_string(folder.join(".trialyst").join(name)).unwrap_or_default();
    let text = format!("{}\n{}", read("state.json"), read("state.journal"));
    assert!(text.trim().len() > 2, "no state stored");
    text
}

fn files_in(folder: &Path) -> Vec<String> {
    let mut names: Vec<String> = std::fs::read_dir(folder)
        .expect("listable")
        .filter_map(Result::ok)
        .map(|entry| entry.file_name().to_string_lossy().into_owned())
        .collect();
    names.sort();
    names
}

fn sheet_text(path: &Path) -> String {
    read_all_sheets(path)
        .iter()
        .flat_map(|(name, range)| {
            std::iter::once(name.clone()).chain(range.rows().flat_map(|row| row.iter().map(|cell| cell.to_string())))
        })
        .collect::<Vec<_>>()
        .join("\n")
}

#[test]
fn a_dropped_workbook_gets_results_and_stays_untouched() {
    let setup = setup();
    let mut watching = Watching::start(&setup.folder, &setup.log, &[], &[]);
    let source = staged(&setup, "week 10.xlsx", 0.0);
    let original = sha256_of(&source);
    let dropped = setup.folder.join("week 10.xlsx");
    std::fs::copy(&source, &dropped).expect("copied in");
    let results = setup.folder.join("week 10.results.xlsx");
    wait_for_file(&results, &watching);
    watching.wait_for_log("analysed week 10.xlsx", 1);
    let text = sheet_text(&results);
    assert!(text.contains("Summary") && text.contains("Hardness (HV)"), "{text}");
    assert_eq!(sha256_of(&dropped), original, "the original's bytes changed");
    let log = watching.log_text();
    assert!(log.contains("received week 10.xlsx"), "{log}");
    assert_eq!(watching.stop(), 0);
    assert_eq!(sha256_of(&dropped), original);
    // Our hidden folder holds the state with the analysed content's SHA-256.
    let state = state_text(&setup.folder);
    assert!(state.contains(&original), "{state}");
}

#[test]
fn a_workbook_written_slowly_is_analysed_once_when_closed() {
    let setup = setup();
    let watching = Watching::start(&setup.folder, &setup.log, &[], &[]);
    let bytes = std::fs::read(staged(&setup, "slow.xlsx", 0.0)).expect("readable");
    let target = setup.folder.join("slow.xlsx");
    let mut file = std::fs::File::create(&target).expect("created");
    for chunk in bytes.chunks(bytes.len() / 4 + 1) {
        file.write_all(chunk).expect("written");
        file.flush().expect("flushed");
        std::thread::sleep(Duration::from_millis(250));
        // While the file is open nothing is written beside it.
        assert!(
            !setup.folder.join("slow.problems.xlsx").exists(),
            "{}",
            watching.log_text()
        );
        assert!(
            !setup.folder.join("slow.results.xlsx").exists(),
            "{}",
            watching.log_text()
        );
    }
    drop(file);
    wait_for_file(&setup.folder.join("slow.results.xlsx"), &watching);
    watching.wait_for_log("analysed slow.xlsx", 1);
    let log = watching.log_text();
    assert_eq!(log.matches("analysed slow.xlsx").count(), 1, "{log}");
    assert!(!log.contains("problem"), "{log}");
    assert_eq!(sha256_of(&target), sha256_of(&setup.staging.join("slow.xlsx")));
}

#[test]
fn a_copy_under_a_temporary_name_is_taken_up_when_renamed() {
    let setup = setup();
    let watching = Watching::start(&setup.folder, &setup.log, &[], &[]);
    let source = staged(&setup, "moulding.xlsx", 0.0);
    let temporary = setup.folder.join("moulding.xlsx.tmp");
    std::fs::copy(&source, &temporary).expect("copied under a temporary name");
    let partial = setup.folder.join("moulding.xlsx.crdownload");
    std::fs::copy(&source, &partial).expect("a partial download");
    std::fs::rename(&temporary, setup.folder.join("moulding.xlsx")).expect("renamed into place");
    wait_for_file(&setup.folder.join("moulding.results.xlsx"), &watching);
    watching.wait_for_log("analysed moulding.xlsx", 1);
    let log = watching.log_text();
    assert!(!log.contains(".tmp") && !log.contains("crdownload"), "{log}");
    assert_eq!(
        files_in(&setup.folder),
        vec![
            ".trialyst",
            "moulding.results.xlsx",
            "moulding.xlsx",
            "moulding.xlsx.crdownload"
        ]
    );
}

#[test]
fn lock_files_and_our_own_outputs_are_ignored() {
    let setup = setup();
    let watching = Watching::start(&setup.folder, &setup.log, &[], &[]);
    let source = staged(&setup, "cure.xlsx", 0.0);
    std::fs::copy(&source, setup.folder.join("~$cure.xlsx")).expect("an office lock file");
    std::fs::write(setup.folder.join(".~lock.cure.xlsx#"), b"host,user").expect("a lock file");
    std::fs::copy(&source, setup.folder.join("other.results.xlsx")).expect("looks like our output");
    std::fs::copy(&source, setup.folder.join("cure.xlsx")).expect("the real one");
    wait_for_file(&setup.folder.join("cure.results.xlsx"), &watching);
    watching.wait_for_log("analysed cure.xlsx", 1);
    let log = watching.log_text();
    assert!(
        !log.contains("~$") && !log.contains("lock") && !log.contains("other"),
        "{log}"
    );
    // Our own results file, written just now, is not taken up either.
    assert_eq!(log.matches("received").count(), 1, "{log}");
}

#[test]
fn a_corrupt_workbook_gets_a_problems_workbook_in_plain_words() {
    let setup = setup();
    let watching = Watching::start(&setup.folder, &setup.log, &[], &[]);
    let bytes = std::fs::read(staged(&setup, "cut.xlsx", 0.0)).expect("readable");
    let cut = setup.folder.join("cut.xlsx");
    std::fs::write(&cut, &bytes[..bytes.len() / 2]).expect("half a workbook");
    let problems = setup.folder.join("cut.problems.xlsx");
    wait_for_file(&problems, &watching);
    watching.wait_for_log("problem cut.xlsx", 1);
    let text = sheet_text(&problems);
    assert!(text.contains("cut.xlsx could not be analysed"), "{text}");
    assert!(
        text.contains("How to fix it") && text.contains("Copy the file again"),
        "{text}"
    );
    assert!(!setup.folder.join("cut.results.xlsx").exists());
    // Fixing the file (a full copy) replaces the problems workbook by results.
    let fixed_source = setup.staging.join("cut.xlsx");
    std::fs::copy(&fixed_source, &cut).expect("the whole file");
    wait_for_file(&setup.folder.join("cut.results.xlsx"), &watching);
    wait_until("the stale problems workbook to go", || !problems.exists()).expect("removed");
}

#[test]
fn a_hostile_bounding_box_costs_that_file_only() {
    let setup = setup();
    let watching = Watching::start(&setup.folder, &setup.log, &[], &[]);
    // Cells at both corners of the largest sheet: a reader that sizes a grid
    // from the bounding box would need 17 billion cells.
    let staged_box = setup.staging.join("box.xlsx");
    let mut book = rust_xlsxwriter::Workbook::new();
    let sheet = book.add_worksheet();
    sheet.write_string(0, 0, "Oven").expect("writable");
    sheet.write_number(1_048_575, 16_383, 1.0).expect("writable");
    book.save(&staged_box).expect("saved");
    std::fs::copy(&staged_box, setup.folder.join("box.xlsx")).expect("copied in");
    wait_for_file(&setup.folder.join("box.problems.xlsx"), &watching);
    // The watcher goes on.
    std::fs::copy(staged(&setup, "after.xlsx", 0.0), setup.folder.join("after.xlsx")).expect("copied in");
    wait_for_file(&setup.folder.join("after.results.xlsx"), &watching);
}

#[test]
fn an_allocation_abort_in_the_reader_costs_one_file_not_the_watcher() {
    let setup = setup();
    // The worker's fault-injection hook allocates 4 GiB under a 512 MiB limit: it aborts.
    let watching = Watching::start(
        &setup.folder,
        &setup.log,
        &["--memory-limit", "512"],
        &[("TRIALYST_TEST_WORKER_ALLOCATE_MIB", "4096")],
    );
    std::fs::copy(staged(&setup, "big.xlsx", 0.0), setup.folder.join("big.xlsx")).expect("copied in");
    let problems = setup.folder.join("big.problems.xlsx");
    wait_for_file(&problems, &watching);
    let text = sheet_text(&problems);
    assert!(text.contains("could not be read safely"), "{text}");
    // The log line follows the problems file: wait for it rather than race it.
    watching.wait_for_log("problem big.xlsx", 1);
    let log = watching.log_text();
    assert!(log.contains("512 MiB"), "{log}");
    std::fs::copy(staged(&setup, "next.xlsx", 0.0), setup.folder.join("next.xlsx")).expect("copied in");
    wait_for_file(&setup.folder.join("next.problems.xlsx"), &watching);
}

#[test]
fn the_same_content_is_analysed_once_and_changed_content_again() {
    let setup = setup();
    let watching = Watching::start(&setup.folder, &setup.log, &[], &[]);
    let first = staged(&setup, "line 3.xlsx", 0.0);
    let dropped = setup.folder.join("line 3.xlsx");
    std::fs::copy(&first, &dropped).expect("copied in");
    watching.wait_for_log("analysed line 3.xlsx", 1);
    std::fs::copy(&first, &dropped).expect("dropped again, same bytes");
    watching.wait_for_log("skipped line 3.xlsx: unchanged", 1);
    let changed = setup.staging.join("line 3 changed.xlsx");
    trial_workbook(&changed, 0.7);
    std::fs::copy(&changed, &dropped).expect("changed content");
    watching.wait_for_log("analysed line 3.xlsx", 2);
    let log = watching.log_text();
    assert_eq!(log.matches("analysed line 3.xlsx").count(), 2, "{log}");
    let state = state_text(&setup.folder);
    assert!(state.contains(&sha256_of(&changed)), "{state}");
    // Deleting the results file and dropping the same content again asks for a new analysis.
    std::fs::remove_file(setup.folder.join("line 3.results.xlsx")).expect("removed");
    std::fs::copy(&changed, &dropped).expect("the same content again");
    watching.wait_for_log("analysed line 3.xlsx", 3);
    assert!(setup.folder.join("line 3.results.xlsx").is_file());
}

#[test]
fn a_burst_of_200_drops_gives_200_results() {
    let setup = setup();
    let watching = Watching::start(&setup.folder, &setup.log, &[], &[]);
    let source = staged(&setup, "burst.xlsx", 0.0);
    for index in 0..200 {
        std::fs::copy(&source, setup.folder.join(format!("burst {index:03}.xlsx"))).expect("copied in");
    }
    watching.wait_for_log("analysed burst", 200);
    for index in 0..200 {
        assert!(
            setup.folder.join(format!("burst {index:03}.results.xlsx")).is_file(),
            "results of burst {index:03} missing"
        );
    }
    assert!(!watching.log_text().contains("problem"));
}

#[test]
fn a_restart_catches_up_with_what_arrived_meanwhile() {
    let setup = setup();
    let mut watching = Watching::start(&setup.folder, &setup.log, &[], &[]);
    std::fs::copy(staged(&setup, "monday.xlsx", 0.0), setup.folder.join("monday.xlsx")).expect("copied in");
    watching.wait_for_log("analysed monday.xlsx", 1);
    assert_eq!(watching.stop(), 0);
    // While no watcher runs: a new workbook, and monday's content changes.
    std::fs::copy(staged(&setup, "tuesday.xlsx", 0.0), setup.folder.join("tuesday.xlsx")).expect("copied in");
    let before = std::fs::metadata(setup.folder.join("monday.results.xlsx"))
        .and_then(|meta| meta.modified())
        .expect("a results file");
    let watching = Watching::start(&setup.folder, &setup.log, &[], &[]);
    watching.wait_for_log("analysed tuesday.xlsx", 1);
    watching.wait_for_log("skipped monday.xlsx: unchanged", 1);
    let after = std::fs::metadata(setup.folder.join("monday.results.xlsx"))
        .and_then(|meta| meta.modified())
        .expect("a results file");
    assert_eq!(before, after, "unchanged content must not be analysed again");
}

#[test]
fn sigterm_mid_analysis_leaves_no_partial_file_and_exits_0() {
    let setup = setup();
    let mut watching = Watching::start(
        &setup.folder,
        &setup.log,
        &[],
        &[("TRIALYST_TEST_WORKER_PAUSE_MS", "20000")],
    );
    let source = staged(&setup, "long.xlsx", 0.0);
    let original = sha256_of(&source);
    std::fs::copy(&source, setup.folder.join("long.xlsx")).expect("copied in");
    watching.wait_for_log("received long.xlsx", 1);
    std::thread::sleep(Duration::from_millis(300));
    assert_eq!(watching.stop(), 0, "{}", watching.log_text());
    let log = watching.log_text();
    assert!(log.contains("stopped long.xlsx: abandoned"), "{log}");
    assert_eq!(files_in(&setup.folder), vec![".trialyst", "long.xlsx"]);
    assert_eq!(files_in(&setup.folder.join(".trialyst/claims")), Vec::<String>::new());
    assert_eq!(sha256_of(&setup.folder.join("long.xlsx")), original);
    // The next start analyses it.
    let watching = Watching::start(&setup.folder, &setup.log, &[], &[]);
    wait_for_file(&setup.folder.join("long.results.xlsx"), &watching);
}

#[test]
fn two_watchers_on_one_folder_analyse_each_workbook_once() {
    let setup = setup();
    let second_log = setup.log.with_file_name("second.log");
    let first = Watching::start(&setup.folder, &setup.log, &[], &[]);
    let second = Watching::start(&setup.folder, &second_log, &[], &[]);
    let source = staged(&setup, "shared.xlsx", 0.0);
    let count = 24;
    for index in 0..count {
        std::fs::copy(&source, setup.folder.join(format!("shared {index:02}.xlsx"))).expect("copied in");
    }
    wait_until("every results file", || {
        (0..count).all(|index| setup.folder.join(format!("shared {index:02}.results.xlsx")).is_file())
    })
    .unwrap_or_else(|message| panic!("{message}\n{}\n{}", first.log_text(), second.log_text()));
    // Let both settle, then count: each workbook analysed exactly once across the two.
    first.wait_for_log("received shared", count);
    second.wait_for_log("received shared", count);
    wait_until("both watchers to pass every workbook", || {
        let both = format!("{}{}", first.log_text(), second.log_text());
        (0..count).all(|index| {
            let name = format!("shared {index:02}.xlsx");
            both.matches(&format!("analysed {name}")).count()
                + both.matches(&format!("skipped {name}: unchanged")).count()
                >= 2
        })
    })
    .unwrap_or_else(|message| panic!("{message}\n{}\n{}", first.log_text(), second.log_text()));
    let both = format!("{}{}", first.log_text(), second.log_text());
    for index in 0..count {
        let name = format!("shared {index:02}.xlsx");
        assert_eq!(
            both.matches(&format!("analysed {name}")).count(),
            1,
            "{name} analysed other than once\n{both}"
        );
    }
    let state = state_text(&setup.folder);
    assert_eq!(state.matches("\"outcome\":\"analysed\"").count(), count, "{state}");
}

#[test]
fn polling_takes_up_a_file_once_it_is_stable() {
    let setup = setup();
    let watching = Watching::start(&setup.folder, &setup.log, &["--poll", "0.2"], &[]);
    std::fs::copy(staged(&setup, "share.xlsx", 0.0), setup.folder.join("share.xlsx")).expect("copied in");
    wait_for_file(&setup.folder.join("share.results.xlsx"), &watching);
    watching.wait_for_log("analysed share.xlsx", 1);
    assert_eq!(watching.log_text().matches("received share.xlsx").count(), 1);
}

#[test]
fn folder_settings_apply_and_a_bad_file_is_refused_with_key_and_line() {
    let setup = setup();
    std::fs::write(
        setup.folder.join("trialyst.toml"),
        "confidence = 0.9\noutput_folder = \"results\"\n",
    )
    .expect("written");
    let watching = Watching::start(&setup.folder, &setup.log, &[], &[]);
    std::fs::copy(staged(&setup, "cfg.xlsx", 0.0), setup.folder.join("cfg.xlsx")).expect("copied in");
    let results = setup.folder.join("results").join("cfg.results.xlsx");
    wait_for_file(&results, &watching);
    let text = sheet_text(&results);
    assert!(text.contains("90%") && text.contains("folder settings file"), "{text}");
    drop(watching);

    std::fs::write(
        setup.folder.join("trialyst.toml"),
        "confidence = 0.9\n\ncolour = \"red\"\n",
    )
    .expect("written");
    let output = Command::new(trialyst_path())
        .arg("watch")
        .arg(&setup.folder)
        .output()
        .expect("runs");
    assert_eq!(output.status.code(), Some(2));
    let stderr = String::from_utf8_lossy(&output.stderr);
    assert!(
        stderr.contains("trialyst.toml") && stderr.contains("line 3") && stderr.contains("colour"),
        "{stderr}"
    );
}
