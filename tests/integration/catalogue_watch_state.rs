//! The hostile catalogue, watcher state: what a watcher killed outright
//! leaves (a claim, temporary files), a lock left by a dead or hung watcher,
//! a lock held by a live one (waited for, never skipped), and a state that
//! would otherwise grow without bound. Each case runs the real program on its
//! own folder; waits are bounded polls, far below the claim expiry (10
//! minutes) the leftovers would otherwise cost.

use std::path::{Path, PathBuf};
use std::time::{Duration, Instant, SystemTime};

use crate::common::{long_rows, sha256_of, temp_folder, write_rows};
use crate::watch::{state_text, wait_for_file, Watching};

fn trial(path: &Path, shift: f64) {
    let a = [10.1 + shift, 10.4, 9.9, 10.2];
    let b = [11.0, 11.3, 10.8, 11.1];
    write_rows(
        path,
        "Runs",
        &long_rows("Press", "Thickness (mm)", &[("Left", &a), ("Right", &b)]),
    );
}

/// A process number that was in use and is not any more.
fn dead_pid() -> u32 {
    let mut child = std::process::Command::new("true").spawn().expect("true runs");
    let pid = child.id();
    child.wait().expect("waited");
    pid
}

fn host() -> String {
    std::fs::read_to_string("/proc/sys/kernel/hostname")
        .map(|name| name.trim().to_string())
        .unwrap_or_default()
}

fn now_ns() -> u64 {
    SystemTime::now()
        .duration_since(SystemTime::UNIX_EPOCH)
        .map_or(0, |elapsed| elapsed.as_nanos() as u64)
}

fn entries(folder: &Path) -> Vec<String> {
    let mut names: Vec<String> = std::fs::read_dir(folder)
        .map(|entries| {
            entries
                .filter_map(Result::ok)
                .map(|entry| entry.file_name().to_string_lossy().into_owned())
                .collect()
        })
        .unwrap_or_default();
    names.sort();
    names
}

fn poll(what: &str, limit: Duration, mut done: impl FnMut() -> bool) -> bool {
    let deadline = Instant::now() + limit;
    while Instant::now() < deadline {
        if done() {
            return true;
        }
        std::thread::sleep(Duration::from_millis(50));
    }
    eprintln!("gave up waiting for {what}");
    false
}

struct Place {
    _root: tempfile::TempDir,
    folder: PathBuf,
    staging: PathBuf,
    log: PathBuf,
}

fn place() -> Place {
    let root = temp_folder();
    let folder = root.path().join("drop");
    let staging = root.path().join("staging");
    std::fs::create_dir_all(folder.join(".trialyst")).expect("made");
    std::fs::create_dir_all(&staging).expect("made");
    Place {
        folder,
        staging,
        log: root.path().join("watch.log"),
        _root: root,
    }
}

fn drop_in(place: &Place, name: &str, shift: f64) -> String {
    let staged = place.staging.join(name);
    trial(&staged, shift);
    let hidden = place.folder.join(format!(".{name}.copying"));
    std::fs::copy(&staged, &hidden).expect("copied");
    std::fs::rename(&hidden, place.folder.join(name)).expect("renamed into place");
    sha256_of(&staged)
}

#[cfg(target_os = "linux")]
#[test]
fn a_watcher_killed_outright_leaves_nothing_that_holds_a_workbook() {
    let place = place();
    let watching = Watching::start(
        &place.folder,
        &place.log,
        &[],
        &[("TRIALYST_TEST_WORKER_PAUSE_MS", "30000")],
    );
    drop_in(&place, "line 4.xlsx", 0.0);
    watching.wait_for_log("received line 4.xlsx", 1);
    let claims = place.folder.join(".trialyst/claims");
    assert!(
        poll("the claim", Duration::from_secs(20), || entries(&claims)
            .iter()
            .any(|name| name.ends_with(".claim"))),
        "{}",
        watching.log_text()
    );
    watching.signal("KILL");
    drop(watching);
    assert_eq!(entries(&claims).len(), 1, "the killed watcher's claim stays behind");
    // What a writer killed mid-write leaves: a results file and a state
    // snapshot under their temporary names, and the lock it held.
    let gone = dead_pid();
    let results_temporary = place.folder.join(format!(".line 4.results.xlsx.{gone}-1.tmp"));
    let state_temporary = place.folder.join(format!(".trialyst/.state.json.{gone}-1.tmp"));
    std::fs::write(&results_temporary, b"partial").expect("written");
    std::fs::write(&state_temporary, b"{\"part").expect("written");
    let lock = serde_json::json!({"host": host(), "pid": gone, "process_start": 0, "since_ns": now_ns()});
    std::fs::write(place.folder.join(".trialyst/state.lock"), lock.to_string()).expect("written");
    let started = Instant::now();
    let watching = Watching::start(&place.folder, &place.log, &[], &[]);
    wait_for_file(&place.folder.join("line 4.results.xlsx"), &watching);
    let waited = started.elapsed();
    println!(
        "killed watcher's workbook analysed {:.1} s after the restart",
        waited.as_secs_f64()
    );
    assert!(waited < Duration::from_secs(60), "not held until the claim expiry");
    assert!(!results_temporary.exists() && !state_temporary.exists());
    assert!(
        poll("the claim to go", Duration::from_secs(20), || entries(&claims)
            .is_empty()),
        "{:?}",
        entries(&claims)
    );
    let log = watching.log_text();
    assert!(
        log.contains("claim and 1 temporary file(s) left by a stopped watcher removed"),
        "{log}"
    );
    assert!(log.contains("removed 1 temporary state file(s)"), "{log}");
    assert!(!log.contains("cannot save"), "{log}");
}

#[cfg(target_os = "linux")]
#[test]
fn a_stale_lock_is_taken_over_and_a_live_one_waited_for_never_skipped() {
    let place = place();
    let lock = place.folder.join(".trialyst/state.lock");
    // Left by a watcher on another machine 40 s ago: past the 30 s expiry.
    let expired = serde_json::json!({"host": "press-hall-pc", "pid": 4242, "process_start": 0,
        "since_ns": now_ns() - 40_000_000_000});
    std::fs::write(&lock, expired.to_string()).expect("written");
    let watching = Watching::start(&place.folder, &place.log, &[], &[]);
    let first = drop_in(&place, "a.xlsx", 0.0);
    wait_for_file(&place.folder.join("a.results.xlsx"), &watching);
    assert!(poll("a.xlsx in the state", Duration::from_secs(20), || state_text(
        &place.folder
    )
    .contains(&first)));
    // Held by a live process on this host (this test): waited for.
    let live = serde_json::json!({"host": host(), "pid": std::process::id(), "process_start": 0,
        "since_ns": now_ns()});
    std::fs::write(&lock, live.to_string()).expect("written");
    let second = drop_in(&place, "b.xlsx", 0.4);
    watching.wait_for_log("received b.xlsx", 1);
    std::thread::sleep(Duration::from_secs(2));
    assert!(
        !state_text(&place.folder).contains(&second),
        "nothing written under another's lock"
    );
    std::fs::remove_file(&lock).expect("released");
    wait_for_file(&place.folder.join("b.results.xlsx"), &watching);
    // The log line follows the results file.
    watching.wait_for_log("analysed b.xlsx", 1);
    assert!(poll("b.xlsx in the state", Duration::from_secs(20), || state_text(
        &place.folder
    )
    .contains(&second)));
    let log = watching.log_text();
    assert!(
        !log.contains("cannot save") && !log.contains("cannot read the watcher's state"),
        "{log}"
    );
    assert_eq!(log.matches("analysed b.xlsx").count(), 1, "{log}");
}

#[test]
fn the_state_is_pruned_to_the_folder_and_grows_by_a_line_per_workbook() {
    let place = place();
    // A state of 50,000 workbooks long gone (about 10 MB), in the older single-file form.
    let mut files = serde_json::Map::new();
    for index in 0..50_000 {
        files.insert(
            format!("gone/week {index:05}.xlsx"),
            serde_json::json!({"sha256": format!("{index:064x}"), "bytes": 9000, "modified_ns": 1,
                "outcome": "analysed", "at": "2026-01-05T08:00:00Z", "output": "x.results.xlsx"}),
        );
    }
    let old = serde_json::json!({"format": 1, "files": files});
    std::fs::write(place.folder.join(".trialyst/state.json"), old.to_string()).expect("written");
    let watching = Watching::start(&place.folder, &place.log, &[], &[]);
    assert!(
        watching
            .log_text()
            .contains("forgot 50000 workbook(s) no longer in the folder"),
        "{}",
        watching.log_text()
    );
    let size = |name: &str| std::fs::metadata(place.folder.join(".trialyst").join(name)).map_or(0, |meta| meta.len());
    assert!(size("state.json") < 1_000, "snapshot of {} bytes", size("state.json"));
    drop_in(&place, "c.xlsx", 0.0);
    wait_for_file(&place.folder.join("c.results.xlsx"), &watching);
    watching.wait_for_log("analysed c.xlsx", 1);
    let journal = size("state.journal");
    drop_in(&place, "d.xlsx", 0.2);
    wait_for_file(&place.folder.join("d.results.xlsx"), &watching);
    watching.wait_for_log("analysed d.xlsx", 1);
    let grown = size("state.journal") - journal;
    println!("one workbook adds {grown} bytes to the state journal");
    assert!(grown > 0 && grown < 1_000, "{grown} bytes for one workbook");
    assert!(size("state.json") < 1_000);
}
