//! The watcher's memory, kept in the watched folder so that a restart (or
//! another watcher on the same shared folder) knows what was analysed: the
//! SHA-256 of each workbook's analysed content.
//!
//! Two files in `.trialyst/`:
//! - `state.json`, a snapshot of every entry, with a generation number;
//! - `state.journal`, one JSON line per entry recorded since that snapshot,
//!   after a first line naming the same generation.
//!
//! Recording a workbook appends one line (cost independent of how many
//! workbooks the folder holds); a watcher reads only the lines added since it
//! last looked. The journal is folded into a new snapshot (compaction) at
//! start and whenever it grows larger than the snapshot, keeping only files
//! that still exist, so the state stays proportional to the folder and each
//! record costs amortised constant time. A line torn by a crash is ignored.
//!
//! Every read and write happens under `.trialyst/state.lock`, created
//! exclusively and holding its owner ([`Owner`]: host, process, process start)
//! and the time it was taken. A lock is never skipped: a watcher waits,
//! retrying with growing pauses, and takes a lock over only when its owner is
//! dead (same host) or it is older than [`LOCK_STALE`]; a lock that cannot be
//! taken within the patience is an error (the entry is kept in memory and
//! the problem logged), never a write without it.

use std::collections::BTreeMap;
use std::io::{Read, Seek, SeekFrom, Write};
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::Arc;
use std::time::{Duration, Instant, SystemTime};

use serde::{Deserialize, Serialize};

use crate::owner::{Liveness, Owner};

/// Our hidden folder inside a watched folder.
pub const STATE_FOLDER: &str = ".trialyst";
/// The snapshot's name inside it.
pub const STATE_FILE: &str = "state.json";
/// The journal's name inside it.
pub const JOURNAL_FILE: &str = "state.journal";
/// The lock's name inside it.
pub const LOCK_FILE: &str = "state.lock";
/// A state lock older than this is taken to be left by a watcher that hangs
/// or died on another host (the lock is held for milliseconds).
pub const LOCK_STALE: Duration = Duration::from_secs(30);
/// A lock file with no readable owner older than this was left by a crash
/// between its creation and its first write.
const LOCK_UNREADABLE_GRACE: Duration = Duration::from_secs(2);
/// The journal is compacted once it is larger than the snapshot and this.
const COMPACT_AT_LEAST: u64 = 64 * 1024;
/// Longest pause between two attempts at the lock.
const LONGEST_PAUSE: Duration = Duration::from_millis(100);

/// What was done with one workbook.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Entry {
    /// SHA-256 of the content analysed, hex.
    pub sha256: String,
    /// Its size in bytes.
    pub bytes: u64,
    /// Its modification time, nanoseconds since 1970.
    pub modified_ns: u64,
    /// "analysed" or "problem".
    pub outcome: String,
    /// When, RFC 3339.
    pub at: String,
    /// The file written (results or problems), as a path.
    pub output: String,
}

/// The whole state.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
pub struct State {
    /// Format of the snapshot.
    pub format: u32,
    /// Which compaction wrote the snapshot; the journal names the same.
    #[serde(default)]
    pub generation: u64,
    /// By path relative to the watched folder, with `/`.
    pub files: BTreeMap<String, Entry>,
}

#[derive(Serialize, Deserialize)]
struct JournalHeader {
    generation: u64,
}

#[derive(Serialize, Deserialize)]
struct JournalLine {
    file: String,
    entry: Entry,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
struct LockRecord {
    #[serde(flatten)]
    owner: Owner,
    /// When the lock was taken, nanoseconds since 1970.
    since_ns: u64,
}

/// Where a watched folder's state lives, and how far this watcher has read it.
#[derive(Debug, Clone)]
pub struct StateStore {
    watched: PathBuf,
    folder: PathBuf,
    /// The generation this watcher's copy is of.
    generation: u64,
    /// Bytes of the journal already applied to this watcher's copy.
    offset: u64,
    /// How long to wait for the lock before giving up.
    patience: Duration,
    stop: Option<Arc<AtomicBool>>,
}

/// Nanoseconds since 1970 of a time (0 before then).
pub fn nanos(time: SystemTime) -> u64 {
    time.duration_since(SystemTime::UNIX_EPOCH)
        .map_or(0, |elapsed| elapsed.as_nanos().min(u128::from(u64::MAX)) as u64)
}

struct LockGuard {
    path: PathBuf,
    record: Vec<u8>,
}

impl Drop for LockGuard {
    fn drop(&mut self) {
        // Only while it is still ours (an expired lock may have been taken over).
        if std::fs::read(&self.path).is_ok_and(|bytes| bytes == self.record) {
            let _ = std::fs::remove_file(&self.path);
        }
    }
}

/// What reading the whole state found besides the entries.
#[derive(Debug, Default)]
struct ReadNotes {
    notes: Vec<String>,
}

impl StateStore {
    /// The store of `watched`, creating its hidden folder.
    ///
    /// # Errors
    ///
    /// When the hidden folder cannot be made.
    pub fn open(watched: &Path) -> std::io::Result<Self> {
        let folder = watched.join(STATE_FOLDER);
        std::fs::create_dir_all(&folder)?;
        Ok(Self {
            watched: watched.to_path_buf(),
            folder,
            generation: 0,
            offset: 0,
            patience: LOCK_STALE + Duration::from_secs(5),
            stop: None,
        })
    }

    /// Waits for the lock no longer than `patience`.
    #[must_use]
    pub fn with_patience(mut self, patience: Duration) -> Self {
        self.patience = patience;
        self
    }

    /// Gives up waiting for the lock once `stop` is raised.
    #[must_use]
    pub fn with_stop(mut self, stop: Arc<AtomicBool>) -> Self {
        self.stop = Some(stop);
        self
    }

    /// The hidden folder.
    pub fn folder(&self) -> &Path {
        &self.folder
    }

    /// Reads the state at start, keeps only files that still exist, and
    /// writes it back as a fresh snapshot with an empty journal. A snapshot
    /// that cannot be read is moved aside to `state.json.corrupt` and the
    /// state rebuilt from the folder; temporary files left by a killed writer
    /// are removed. Returns the state and what the watcher should log.
    pub fn load_at_start(&mut self) -> (State, Vec<String>) {
        let guard = match self.lock() {
            Ok(guard) => guard,
            Err(error) => {
                let (state, notes) = self.read_all();
                let mut said = notes.notes;
                said.push(format!("the state was read without compaction: {error}"));
                return (state, said);
            }
        };
        let (mut state, mut notes) = self.read_all();
        let removed = remove_state_temporaries(&self.folder);
        if removed > 0 {
            notes.notes.push(format!(
                "removed {removed} temporary state file(s) left by a stopped watcher"
            ));
        }
        let before = state.files.len();
        if let Err(error) = self.compact(&mut state) {
            notes.notes.push(format!("the state could not be compacted: {error}"));
        } else if state.files.len() < before {
            notes.notes.push(format!(
                "forgot {} workbook(s) no longer in the folder",
                before - state.files.len()
            ));
        }
        drop(guard);
        (state, notes.notes)
    }

    /// Brings `state` up to date with what other watchers recorded,
    /// reading only the journal lines added since this watcher last looked.
    ///
    /// # Errors
    ///
    /// When the lock cannot be had or the journal cannot be read.
    pub fn refresh(&mut self, state: &mut State) -> std::io::Result<()> {
        let _guard = self.lock()?;
        self.refresh_locked(state)
    }

    /// Records one workbook's entry: one line appended to the journal under
    /// the lock, after taking in what other watchers recorded; the journal
    /// is compacted when it has grown larger than the snapshot.
    ///
    /// # Errors
    ///
    /// When the lock cannot be had or the journal cannot be written; the
    /// entry is then in `state` only.
    pub fn record(&mut self, state: &mut State, relative: &str, entry: Entry) -> std::io::Result<()> {
        let _guard = self.lock()?;
        self.refresh_locked(state)?;
        let line = JournalLine {
            file: relative.to_string(),
            entry: entry.clone(),
        };
        let mut bytes = serde_json::to_vec(&line).map_err(std::io::Error::other)?;
        bytes.push(b'\n');
        let journal = self.folder.join(JOURNAL_FILE);
        if !journal.exists() {
            self.start_journal()?;
        }
        let mut file = std::fs::OpenOptions::new().append(true).open(&journal)?;
        file.write_all(&bytes)?;
        file.sync_data()?;
        self.offset += bytes.len() as u64;
        state.files.insert(relative.to_string(), entry);
        let snapshot_bytes = std::fs::metadata(self.folder.join(STATE_FILE)).map_or(0, |meta| meta.len());
        if self.offset > COMPACT_AT_LEAST.max(snapshot_bytes) {
            self.compact(state)?;
        }
        Ok(())
    }

    /// Writes `state`, pruned to files that still exist, as the next
    /// generation's snapshot and starts its empty journal. Under the lock.
    fn compact(&mut self, state: &mut State) -> std::io::Result<()> {
        let watched = self.watched.clone();
        state.files.retain(|relative, _| watched.join(relative).exists());
        state.format = 2;
        state.generation = self.generation.max(state.generation) + 1;
        let bytes = serde_json::to_vec(&state).map_err(std::io::Error::other)?;
        workbook_io::write::write_atomically(&bytes, &self.folder.join(STATE_FILE)).map_err(std::io::Error::other)?;
        self.generation = state.generation;
        self.start_journal()
    }

    /// Replaces the journal with one holding only the current generation's header.
    fn start_journal(&mut self) -> std::io::Result<()> {
        let mut header = serde_json::to_vec(&JournalHeader {
            generation: self.generation,
        })
        .map_err(std::io::Error::other)?;
        header.push(b'\n');
        workbook_io::write::write_atomically(&header, &self.folder.join(JOURNAL_FILE))
            .map_err(std::io::Error::other)?;
        self.offset = header.len() as u64;
        Ok(())
    }

    /// Under the lock: the journal's new lines, or the whole state when
    /// another watcher compacted it meanwhile.
    fn refresh_locked(&mut self, state: &mut State) -> std::io::Result<()> {
        let journal = self.folder.join(JOURNAL_FILE);
        let mut file = match std::fs::File::open(&journal) {
            Ok(file) => file,
            Err(error) if error.kind() == std::io::ErrorKind::NotFound => return Ok(()),
            Err(error) => return Err(error),
        };
        let mut first = Vec::new();
        (&mut file).take(256).read_to_end(&mut first)?;
        let header = first
            .split(|byte| *byte == b'\n')
            .next()
            .and_then(|line| serde_json::from_slice::<JournalHeader>(line).ok());
        if header.is_none_or(|header| header.generation != self.generation) {
            let (whole, _) = self.read_all();
            *state = whole;
            return Ok(());
        }
        file.seek(SeekFrom::Start(self.offset))?;
        let mut added = Vec::new();
        file.read_to_end(&mut added)?;
        let (applied, _) = apply_lines(&added, state);
        self.offset += applied;
        Ok(())
    }

    /// The snapshot with its journal applied; sets how far this watcher has read.
    fn read_all(&mut self) -> (State, ReadNotes) {
        let mut notes = ReadNotes::default();
        let path = self.folder.join(STATE_FILE);
        let mut state = match std::fs::read(&path) {
            Ok(bytes) => match serde_json::from_slice::<State>(&bytes) {
                Ok(state) => state,
                Err(error) => {
                    let aside = self.folder.join(format!("{STATE_FILE}.corrupt"));
                    let _ = std::fs::rename(&path, &aside);
                    notes.notes.push(format!(
                        "the state file was not valid ({error}); it was moved to {} and the state is rebuilt from the folder",
                        aside.display()
                    ));
                    State::default()
                }
            },
            Err(error) if error.kind() == std::io::ErrorKind::NotFound => State::default(),
            Err(error) => {
                notes.notes.push(format!(
                    "the state file cannot be read ({error}); the state is rebuilt from the folder"
                ));
                State::default()
            }
        };
        self.generation = state.generation;
        self.offset = 0;
        let Ok(journal) = std::fs::read(self.folder.join(JOURNAL_FILE)) else {
            return (state, notes);
        };
        let header_end = journal.iter().position(|byte| *byte == b'\n');
        let header = header_end.and_then(|end| serde_json::from_slice::<JournalHeader>(&journal[..end]).ok());
        match (header, header_end) {
            (Some(header), Some(end)) if header.generation == state.generation => {
                let (applied, unreadable) = apply_lines(&journal[end + 1..], &mut state);
                self.offset = (end + 1) as u64 + applied;
                if unreadable > 0 {
                    notes.notes.push(format!(
                        "{unreadable} unreadable line(s) in the state journal were left out"
                    ));
                }
            }
            // A journal of an older generation was folded into the snapshot
            // by a compaction cut short before it replaced the journal.
            _ => {}
        }
        (state, notes)
    }

    fn lock(&self) -> std::io::Result<LockGuard> {
        let path = self.folder.join(LOCK_FILE);
        let started = Instant::now();
        let mut pause = Duration::from_millis(1);
        loop {
            match std::fs::OpenOptions::new().write(true).create_new(true).open(&path) {
                Ok(mut file) => {
                    let record = serde_json::to_vec(&LockRecord {
                        owner: Owner::me(),
                        since_ns: nanos(SystemTime::now()),
                    })
                    .map_err(std::io::Error::other)?;
                    if let Err(error) = file.write_all(&record) {
                        // A full disk: leave no empty lock behind.
                        drop(file);
                        let _ = std::fs::remove_file(&path);
                        return Err(error);
                    }
                    return Ok(LockGuard { path, record });
                }
                Err(error) if error.kind() == std::io::ErrorKind::AlreadyExists => {
                    let held = std::fs::read(&path).unwrap_or_default();
                    if lock_is_stale(&path, &held) && take_over(&path, &held, &self.folder) {
                        continue;
                    }
                    if self.stop.as_ref().is_some_and(|stop| stop.load(Ordering::SeqCst)) {
                        return Err(std::io::Error::new(
                            std::io::ErrorKind::Interrupted,
                            "asked to stop while waiting for the state lock",
                        ));
                    }
                    if started.elapsed() > self.patience {
                        return Err(std::io::Error::other(format!(
                            "the state lock '{}' is held by {} and could not be taken over within {} s",
                            path.display(),
                            describe_lock(&held),
                            self.patience.as_secs()
                        )));
                    }
                    std::thread::sleep(pause);
                    pause = (pause * 2).min(LONGEST_PAUSE);
                }
                Err(error) => return Err(error),
            }
        }
    }
}

/// Applies whole lines (ending in a newline) to `state`; returns the bytes
/// consumed and how many lines could not be read. A last line without its
/// newline is being written, or was torn by a crash: it is left for later.
fn apply_lines(bytes: &[u8], state: &mut State) -> (u64, usize) {
    let mut consumed = 0;
    let mut unreadable = 0;
    let mut rest = bytes;
    while let Some(end) = rest.iter().position(|byte| *byte == b'\n') {
        match serde_json::from_slice::<JournalLine>(&rest[..end]) {
            Ok(line) => {
                state.files.insert(line.file, line.entry);
            }
            Err(_) => unreadable += 1,
        }
        consumed += end + 1;
        rest = &rest[end + 1..];
    }
    (consumed as u64, unreadable)
}

fn lock_is_stale(path: &Path, held: &[u8]) -> bool {
    match serde_json::from_slice::<LockRecord>(held) {
        Ok(record) => {
            let age = nanos(SystemTime::now()).saturating_sub(record.since_ns);
            record.owner.liveness() == Liveness::Dead || Duration::from_nanos(age) > LOCK_STALE
        }
        Err(_) => std::fs::metadata(path)
            .and_then(|meta| meta.modified())
            .ok()
            .and_then(|modified| modified.elapsed().ok())
            .is_some_and(|age| age > LOCK_UNREADABLE_GRACE),
    }
}

/// Moves a stale lock aside (only one watcher's rename succeeds) and checks
/// that what was moved is the lock judged stale; true when the lock is free.
fn take_over(path: &Path, held: &[u8], folder: &Path) -> bool {
    let aside = folder.join(format!(
        "{LOCK_FILE}.stale-{}-{}",
        std::process::id(),
        nanos(SystemTime::now())
    ));
    if std::fs::rename(path, &aside).is_err() {
        return false;
    }
    let moved = std::fs::read(&aside).unwrap_or_default();
    if moved != held {
        // A fresh lock was moved by mistake: put it back unless taken meanwhile.
        let _ = std::fs::hard_link(&aside, path);
    }
    let _ = std::fs::remove_file(&aside);
    true
}

fn describe_lock(held: &[u8]) -> String {
    match serde_json::from_slice::<LockRecord>(held) {
        Ok(record) => {
            let age = Duration::from_nanos(nanos(SystemTime::now()).saturating_sub(record.since_ns));
            format!("{} for {} s", record.owner.describe(), age.as_secs())
        }
        Err(_) => "an unknown owner".into(),
    }
}

/// Removes temporary snapshot and journal files and moved-aside locks (from a
/// writer killed mid-write). Called under the lock, so none is in use.
fn remove_state_temporaries(folder: &Path) -> usize {
    let mut removed = 0;
    let Ok(entries) = std::fs::read_dir(folder) else {
        return 0;
    };
    for entry in entries.filter_map(Result::ok) {
        let name = entry.file_name().to_string_lossy().into_owned();
        let temporary = [STATE_FILE, JOURNAL_FILE]
            .iter()
            .any(|base| name.starts_with(&format!(".{base}.")) && name.ends_with(".tmp"))
            || name.starts_with(&format!("{LOCK_FILE}.stale-"));
        if temporary && std::fs::remove_file(entry.path()).is_ok() {
            removed += 1;
        }
    }
    removed
}

#[cfg(test)]
mod tests {
    use super::*;

    fn entry(sha: &str) -> Entry {
        Entry {
            sha256: sha.into(),
            bytes: 3,
            modified_ns: 7,
            outcome: "analysed".into(),
            at: "now".into(),
            output: "x.results.xlsx".into(),
        }
    }

    #[test]
    fn records_survive_a_reload_and_reach_another_watcher() {
        let folder = tempfile::tempdir().expect("a temporary folder");
        std::fs::create_dir_all(folder.path().join("sub")).expect("made");
        std::fs::write(folder.path().join("sub/x.xlsx"), b"x").expect("written");
        let mut store = StateStore::open(folder.path()).expect("a state folder");
        let (mut state, notes) = store.load_at_start();
        assert!(state.files.is_empty() && notes.is_empty(), "{notes:?}");
        let mut other = StateStore::open(folder.path()).expect("the same folder");
        let (mut other_state, _) = other.load_at_start();
        store.record(&mut state, "sub/x.xlsx", entry("ab")).expect("written");
        other.refresh(&mut other_state).expect("read");
        assert_eq!(other_state.files.get("sub/x.xlsx"), Some(&entry("ab")));
        let (reloaded, _) = StateStore::open(folder.path()).expect("again").load_at_start();
        assert_eq!(reloaded.files.get("sub/x.xlsx"), Some(&entry("ab")));
        assert!(!folder.path().join(STATE_FOLDER).join(LOCK_FILE).exists());
    }

    #[test]
    fn a_corrupt_state_is_moved_aside_and_said() {
        let folder = tempfile::tempdir().expect("a temporary folder");
        let mut store = StateStore::open(folder.path()).expect("a state folder");
        std::fs::write(store.folder().join(STATE_FILE), b"{not json").expect("written");
        let (state, said) = store.load_at_start();
        assert!(state.files.is_empty());
        assert!(said.iter().any(|text| text.contains("not valid")), "{said:?}");
        assert!(store.folder().join(format!("{STATE_FILE}.corrupt")).is_file());
    }

    #[test]
    fn the_state_stays_proportional_to_the_folder() {
        let folder = tempfile::tempdir().expect("a temporary folder");
        for name in ["a.xlsx", "b.xlsx"] {
            std::fs::write(folder.path().join(name), b"x").expect("written");
        }
        let mut store = StateStore::open(folder.path()).expect("a state folder");
        let (mut state, _) = store.load_at_start();
        // 1,500 records of two files and of one that is gone.
        for round in 0..1_500 {
            let name = ["a.xlsx", "b.xlsx", "gone.xlsx"][round % 3];
            store
                .record(&mut state, name, entry(&format!("{round:064}")))
                .expect("written");
        }
        let state_folder = store.folder().to_path_buf();
        let size = |name: &str| std::fs::metadata(state_folder.join(name)).map_or(0, |meta| meta.len());
        assert!(
            size(JOURNAL_FILE) <= COMPACT_AT_LEAST + 1_024 && size(STATE_FILE) < 4_096,
            "journal {} bytes, snapshot {} bytes",
            size(JOURNAL_FILE),
            size(STATE_FILE)
        );
        let (reloaded, _) = StateStore::open(folder.path()).expect("again").load_at_start();
        assert_eq!(reloaded.files.keys().collect::<Vec<_>>(), ["a.xlsx", "b.xlsx"]);
        assert_eq!(reloaded.files["b.xlsx"].sha256, format!("{:064}", 1_498));
    }

    #[test]
    fn a_torn_journal_line_is_left_out() {
        let folder = tempfile::tempdir().expect("a temporary folder");
        std::fs::write(folder.path().join("a.xlsx"), b"x").expect("written");
        let mut store = StateStore::open(folder.path()).expect("a state folder");
        let (mut state, _) = store.load_at_start();
        store.record(&mut state, "a.xlsx", entry("11")).expect("written");
        let journal = store.folder().join(JOURNAL_FILE);
        let mut file = std::fs::OpenOptions::new().append(true).open(&journal).expect("open");
        file.write_all(b"{\"file\":\"a.xlsx\",\"ent").expect("written");
        drop(file);
        let (reloaded, _) = StateStore::open(folder.path()).expect("again").load_at_start();
        assert_eq!(reloaded.files["a.xlsx"].sha256, "11");
    }

    #[test]
    fn a_lock_of_a_dead_owner_is_taken_over_and_a_live_one_waited_for() {
        let folder = tempfile::tempdir().expect("a temporary folder");
        let mut store = StateStore::open(folder.path())
            .expect("a state folder")
            .with_patience(Duration::from_millis(300));
        let lock = store.folder().join(LOCK_FILE);
        let mut child = std::process::Command::new("true").spawn().expect("true runs");
        let dead = Owner {
            pid: child.id(),
            ..Owner::me()
        };
        child.wait().expect("waited");
        let record = |owner: Owner, since_ns| serde_json::to_vec(&LockRecord { owner, since_ns }).expect("serialised");
        std::fs::write(&lock, record(dead, nanos(SystemTime::now()))).expect("written");
        let mut state = State::default();
        store
            .record(&mut state, "a.xlsx", entry("1"))
            .expect("a dead owner's lock is taken over");
        // A live owner (this process, as if another thread) is waited for, then refused.
        std::fs::write(&lock, record(Owner::me(), nanos(SystemTime::now()))).expect("written");
        let refused = store.record(&mut state, "a.xlsx", entry("2")).expect_err("held");
        assert!(refused.to_string().contains("is held by"), "{refused}");
        assert!(lock.exists(), "a live lock is left alone");
        // The same lock past its expiry is taken over.
        let old = nanos(SystemTime::now()) - (LOCK_STALE + Duration::from_secs(1)).as_nanos() as u64;
        std::fs::write(&lock, record(Owner::me(), old)).expect("written");
        store
            .record(&mut state, "a.xlsx", entry("3"))
            .expect("an expired lock is taken over");
        assert!(!lock.exists());
    }
}
