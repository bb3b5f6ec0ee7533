//! Claims: how watchers on one shared folder keep out of each other's way.
//!
//! Before analysing a workbook a watcher creates
//! `.trialyst/claims/<key>.claim` with an exclusive create (`create_new`,
//! `O_EXCL`); the key is a digest of the workbook's path within the folder,
//! so one workbook has one claim whatever its content. The file records the
//! host, process and time. Whoever creates it analyses; the others pass the
//! workbook over and look again later. The claim is removed when the work is
//! done. A claim older than the expiry is taken to be left by a watcher that
//! died: it is moved aside under a unique name (a rename, so only one
//! watcher wins the take-over), checked to be still the stale one, and
//! replaced.
//!
//! What this promises rests on the file system honouring exclusive create
//! and rename, as local disks and SMB and NFSv3+ shares do.

use std::io::Write;
use std::path::{Path, PathBuf};
use std::time::Duration;

use sha2::{Digest, Sha256};

use crate::owner::{Liveness, Owner};

/// The claims folder inside the hidden folder.
pub const CLAIMS_FOLDER: &str = "claims";

/// A claim file with no readable owner older than this is taken over.
const UNREADABLE_GRACE: Duration = Duration::from_secs(5);

/// A claim held by this process; removed when dropped.
#[derive(Debug)]
pub struct Claim {
    path: PathBuf,
    record: String,
}

impl Drop for Claim {
    fn drop(&mut self) {
        // Only while it is still ours: a claim taken over after expiry is left alone.
        if std::fs::read_to_string(&self.path).is_ok_and(|text| text == self.record) {
            let _ = std::fs::remove_file(&self.path);
        }
    }
}

/// The outcome of trying to claim a workbook.
#[derive(Debug)]
pub enum ClaimAttempt {
    /// Ours.
    Mine(Claim),
    /// Another watcher holds it; the text says who.
    Held(String),
}

/// This machine's name, as other watchers on a shared folder should see it
/// in a claim file.
pub fn host_name() -> String {
    system_host_name()
        .or_else(|| {
            // Windows sets COMPUTERNAME; some Unix shells export HOSTNAME.
            ["COMPUTERNAME", "HOSTNAME"]
                .iter()
                .find_map(|name| std::env::var(name).ok().filter(|value| !value.trim().is_empty()))
        })
        .unwrap_or_else(|| "unknown host".into())
}

#[cfg(unix)]
#[allow(unsafe_code)]
fn system_host_name() -> Option<String> {
    let mut buffer = [0u8; 256];
    // SAFETY: the buffer is valid for its length; gethostname writes at most that.
    let status = unsafe { libc::gethostname(buffer.as_mut_ptr().cast(), buffer.len()) };
    if status != 0 {
        return None;
    }
    let end = buffer.iter().position(|byte| *byte == 0).unwrap_or(buffer.len());
    Some(String::from_utf8_lossy(&buffer[..end]).into_owned()).filter(|name| !name.is_empty())
}

#[cfg(not(unix))]
fn system_host_name() -> Option<String> {
    None
}

/// The claim key of a workbook's path within the watched folder.
pub fn claim_key(relative: &str) -> String {
    let digest = Sha256::digest(relative.as_bytes());
    digest.iter().take(12).map(|byte| format!("{byte:02x}")).collect()
}

fn age_of(path: &Path) -> Option<Duration> {
    std::fs::metadata(path).ok()?.modified().ok()?.elapsed().ok()
}

/// Tries to claim the workbook at `relative` (its path in the folder).
///
/// # Errors
///
/// When the claims folder cannot be used.
pub fn try_claim(state_folder: &Path, relative: &str, expiry: Duration) -> std::io::Result<ClaimAttempt> {
    let folder = state_folder.join(CLAIMS_FOLDER);
    std::fs::create_dir_all(&folder)?;
    let path = folder.join(format!("{}.claim", claim_key(relative)));
    for _ in 0..3 {
        match std::fs::OpenOptions::new().write(true).create_new(true).open(&path) {
            Ok(mut file) => {
                let me = Owner::me();
                let record = serde_json::json!({
                    "file": relative,
                    "host": me.host,
                    "pid": me.pid,
                    "process_start": me.process_start,
                    "since": service::now_rfc3339(),
                });
                let record = format!("{record}\n");
                if let Err(error) = file.write_all(record.as_bytes()) {
                    // A full disk: an empty claim would hold the workbook until it expires.
                    drop(file);
                    let _ = std::fs::remove_file(&path);
                    return Err(error);
                }
                let _ = file.sync_all();
                return Ok(ClaimAttempt::Mine(Claim { path, record }));
            }
            Err(error) if error.kind() == std::io::ErrorKind::AlreadyExists => {
                let text = std::fs::read_to_string(&path).unwrap_or_default();
                let parsed = serde_json::from_str::<serde_json::Value>(&text).ok();
                let holder = parsed
                    .as_ref()
                    .map(|record| {
                        format!(
                            "{} (process {}, since {})",
                            record["host"].as_str().unwrap_or("?"),
                            record["pid"],
                            record["since"].as_str().unwrap_or("?")
                        )
                    })
                    .unwrap_or_else(|| "another watcher".into());
                let owner_dead = parsed
                    .as_ref()
                    .and_then(|record| serde_json::from_value::<Owner>(record.clone()).ok())
                    .is_some_and(|owner| owner.liveness() == Liveness::Dead);
                // Dead owner on this host, or no owner written (a crash or a
                // full disk between creation and write) after a short grace.
                let expiry = if owner_dead {
                    Duration::ZERO
                } else if parsed.is_none() {
                    expiry.min(UNREADABLE_GRACE)
                } else {
                    expiry
                };
                match age_of(&path) {
                    Some(age) if age > expiry => {
                        // Take the stale claim over: only one watcher's rename succeeds.
                        let aside = folder.join(format!(
                            "{}.expired-{}-{}",
                            claim_key(relative),
                            host_name(),
                            std::process::id()
                        ));
                        if std::fs::rename(&path, &aside).is_ok() {
                            let still_stale = age_of(&aside).is_some_and(|age| age > expiry);
                            if !still_stale {
                                // A fresh claim was moved by mistake: put it back if nobody took the name.
                                let _ = std::fs::hard_link(&aside, &path);
                            }
                            let _ = std::fs::remove_file(&aside);
                        }
                    }
                    None => {} // vanished meanwhile: try again
                    Some(_) => return Ok(ClaimAttempt::Held(holder)),
                }
            }
            Err(error) => return Err(error),
        }
    }
    Ok(ClaimAttempt::Held("another watcher".into()))
}

/// At start: removes the claims this host's watchers left when they were
/// killed (their process is gone), and take-over leftovers, so that the
/// workbooks they held are analysed now rather than after the expiry.
/// Returns the workbooks (paths in the folder) whose claims were removed.
pub fn clean_after_restart(state_folder: &Path) -> Vec<String> {
    let folder = state_folder.join(CLAIMS_FOLDER);
    let Ok(entries) = std::fs::read_dir(&folder) else {
        return Vec::new();
    };
    let mut freed = Vec::new();
    for entry in entries.filter_map(Result::ok) {
        let name = entry.file_name().to_string_lossy().into_owned();
        let path = entry.path();
        if name.ends_with(".claim") {
            let Some(record) = std::fs::read_to_string(&path)
                .ok()
                .and_then(|text| serde_json::from_str::<serde_json::Value>(&text).ok())
            else {
                continue;
            };
            let dead =
                serde_json::from_value::<Owner>(record.clone()).is_ok_and(|owner| owner.liveness() == Liveness::Dead);
            if dead && std::fs::remove_file(&path).is_ok() {
                freed.push(record["file"].as_str().unwrap_or_default().to_string());
            }
        } else if name.contains(".expired-") && age_of(&path).is_some_and(|age| age > Duration::from_secs(60)) {
            let _ = std::fs::remove_file(&path);
        }
    }
    freed.sort();
    freed
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn one_claim_at_a_time_and_stale_claims_expire() {
        let folder = tempfile::tempdir().expect("a temporary folder");
        let first = try_claim(folder.path(), "a.xlsx", Duration::from_secs(600)).expect("usable");
        let ClaimAttempt::Mine(claim) = first else {
            panic!("the first claim should be ours")
        };
        match try_claim(folder.path(), "a.xlsx", Duration::from_secs(600)).expect("usable") {
            ClaimAttempt::Held(who) => assert!(who.contains("process"), "{who}"),
            ClaimAttempt::Mine(_) => panic!("a second claim must be refused"),
        }
        assert!(matches!(
            try_claim(folder.path(), "b.xlsx", Duration::from_secs(600)).expect("usable"),
            ClaimAttempt::Mine(_)
        ));
        // With a zero expiry the existing claim counts as abandoned and is taken over.
        std::thread::sleep(Duration::from_millis(20));
        assert!(matches!(
            try_claim(folder.path(), "a.xlsx", Duration::ZERO).expect("usable"),
            ClaimAttempt::Mine(_)
        ));
        drop(claim);
    }

    #[test]
    fn a_dead_watchers_claim_is_taken_over_at_once_and_cleaned_at_start() {
        let folder = tempfile::tempdir().expect("a temporary folder");
        let mut child = std::process::Command::new("true").spawn().expect("true runs");
        let pid = child.id();
        child.wait().expect("waited");
        let me = Owner::me();
        let record =
            serde_json::json!({"file": "a.xlsx", "host": me.host, "pid": pid, "process_start": 0, "since": "earlier"});
        let claims = folder.path().join(CLAIMS_FOLDER);
        std::fs::create_dir_all(&claims).expect("made");
        let path = claims.join(format!("{}.claim", claim_key("a.xlsx")));
        std::fs::write(&path, record.to_string()).expect("written");
        assert!(matches!(
            try_claim(folder.path(), "a.xlsx", Duration::from_secs(600)).expect("usable"),
            ClaimAttempt::Mine(_)
        ));
        std::fs::write(&path, record.to_string()).expect("written");
        let other = claims.join(format!("{}.claim", claim_key("b.xlsx")));
        let live =
            serde_json::json!({"file": "b.xlsx", "host": me.host, "pid": me.pid, "process_start": me.process_start});
        std::fs::write(&other, live.to_string()).expect("written");
        assert_eq!(clean_after_restart(folder.path()), ["a.xlsx"]);
        assert!(!path.exists() && other.exists());
    }
}
