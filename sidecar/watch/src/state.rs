//! The watcher's memory, kept in the watched folder so that a restart (or
//! another watcher on the same shared folder) knows what was analysed:
//! `.trialyst/state.json`, the SHA-256 of each workbook's analysed content.
//!
//! Read-modify-write happens under a short lock (`.trialyst/state.lock`,
//! created exclusively; a lock older than [`LOCK_STALE`] is taken over), and
//! the file is replaced atomically (temporary file, then rename).

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use std::time::{Duration, SystemTime};

use serde::{Deserialize, Serialize};

/// Our hidden folder inside a watched folder.
pub const STATE_FOLDER: &str = ".trialyst";
/// The state file's name inside it.
pub const STATE_FILE: &str = "state.json";
const LOCK_FILE: &str = "state.lock";
/// A state lock older than this is taken to be left by a crashed watcher.
pub const LOCK_STALE: Duration = Duration::from_secs(30);

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

/// The whole state file.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
pub struct State {
    /// Format of this file.
    pub format: u32,
    /// By path relative to the watched folder, with `/`.
    pub files: BTreeMap<String, Entry>,
}

/// Where a watched folder's state lives.
#[derive(Debug, Clone)]
pub struct StateStore {
    folder: PathBuf,
}

/// Nanoseconds since 1970 of a time (0 before then).
pub fn nanos(time: SystemTime) -> u64 {
    time.duration_since(SystemTime::UNIX_EPOCH)
        .map_or(0, |elapsed| elapsed.as_nanos().min(u128::from(u64::MAX)) as u64)
}

struct LockGuard(PathBuf);

impl Drop for LockGuard {
    fn drop(&mut self) {
        let _ = std::fs::remove_file(&self.0);
    }
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
        Ok(Self { folder })
    }

    /// The hidden folder.
    pub fn folder(&self) -> &Path {
        &self.folder
    }

    /// Reads the state at start: a missing file reads as empty; a file that
    /// cannot be read as state is moved aside to `state.json.corrupt` and
    /// the state is rebuilt from the folder, with the reason returned so the
    /// watcher logs it.
    pub fn load_at_start(&self) -> (State, Option<String>) {
        let path = self.folder.join(STATE_FILE);
        let bytes = match std::fs::read(&path) {
            Ok(bytes) => bytes,
            Err(error) if error.kind() == std::io::ErrorKind::NotFound => return (State::default(), None),
            Err(error) => {
                return (
                    State::default(),
                    Some(format!("the state file cannot be read ({error})")),
                )
            }
        };
        match serde_json::from_slice::<State>(&bytes) {
            Ok(state) => (state, None),
            Err(error) => {
                let aside = self.folder.join(format!("{STATE_FILE}.corrupt"));
                let _ = std::fs::rename(&path, &aside);
                (
                    State::default(),
                    Some(format!(
                        "the state file was not valid ({error}); it was moved to {} and the state is rebuilt from the folder",
                        aside.display()
                    )),
                )
            }
        }
    }

    /// Reads the state; a missing or unreadable file reads as empty.
    pub fn load(&self) -> State {
        std::fs::read(self.folder.join(STATE_FILE))
            .ok()
            .and_then(|bytes| serde_json::from_slice(&bytes).ok())
            .unwrap_or_default()
    }

    fn lock(&self) -> Option<LockGuard> {
        let path = self.folder.join(LOCK_FILE);
        let deadline = std::time::Instant::now() + Duration::from_secs(5);
        loop {
            match std::fs::OpenOptions::new().write(true).create_new(true).open(&path) {
                Ok(_) => return Some(LockGuard(path)),
                Err(error) if error.kind() == std::io::ErrorKind::AlreadyExists => {
                    let stale = std::fs::metadata(&path)
                        .and_then(|meta| meta.modified())
                        .ok()
                        .and_then(|modified| modified.elapsed().ok())
                        .is_some_and(|age| age > LOCK_STALE);
                    // A stale lock that cannot be removed (a read-only
                    // folder) falls through to the wait below instead of
                    // spinning.
                    if stale && std::fs::remove_file(&path).is_ok() {
                        continue;
                    }
                    if std::time::Instant::now() > deadline {
                        return None;
                    }
                    std::thread::sleep(Duration::from_millis(5));
                }
                Err(_) => return None,
            }
        }
    }

    /// Records one workbook's entry (merged with what other watchers wrote)
    /// and returns the state as now stored.
    ///
    /// # Errors
    ///
    /// When the state file cannot be written.
    pub fn record(&self, relative: &str, entry: Entry) -> std::io::Result<State> {
        let _guard = self.lock();
        let mut state = self.load();
        state.format = 1;
        state.files.insert(relative.to_string(), entry);
        let bytes = serde_json::to_vec_pretty(&state).map_err(std::io::Error::other)?;
        let destination = self.folder.join(STATE_FILE);
        workbook_io::write::write_atomically(&bytes, &destination).map_err(std::io::Error::other)?;
        Ok(state)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn records_survive_a_reload() {
        let folder = tempfile::tempdir().expect("a temporary folder");
        let store = StateStore::open(folder.path()).expect("a state folder");
        assert!(store.load().files.is_empty());
        let entry = Entry {
            sha256: "ab".into(),
            bytes: 3,
            modified_ns: 7,
            outcome: "analysed".into(),
            at: "now".into(),
            output: "x.results.xlsx".into(),
        };
        store.record("sub/x.xlsx", entry.clone()).expect("written");
        let other = StateStore::open(folder.path()).expect("the same folder");
        assert_eq!(other.load().files.get("sub/x.xlsx"), Some(&entry));
        assert!(!folder.path().join(STATE_FOLDER).join(LOCK_FILE).exists());
    }

    #[test]
    fn a_corrupt_state_is_moved_aside_and_said() {
        let folder = tempfile::tempdir().expect("a temporary folder");
        let store = StateStore::open(folder.path()).expect("a state folder");
        assert_eq!(store.load_at_start().1, None);
        std::fs::write(store.folder().join(STATE_FILE), b"{not json").expect("written");
        let (state, said) = store.load_at_start();
        assert!(state.files.is_empty());
        assert!(said.is_some_and(|text| text.contains("not valid")));
        assert!(store.folder().join(format!("{STATE_FILE}.corrupt")).is_file());
        assert!(!store.folder().join(STATE_FILE).exists());
    }
}
