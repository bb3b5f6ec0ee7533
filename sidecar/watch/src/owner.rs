//! Who holds a lock or a claim: host, process and the process's start, so
//! that a watcher can tell a holder that is still working from one that died
//! (killed, power lost) and take its lock or claim over at once instead of
//! waiting out an expiry.
//!
//! A holder on another host cannot be asked; its lock or claim is taken over
//! only after the expiry. On this host a holder is dead when its process is
//! gone, or when the process now under its number started at another time
//! (the number was reused).

use serde::{Deserialize, Serialize};

/// The holder of a lock or claim, as written in its file.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct Owner {
    /// The holder's host name.
    pub host: String,
    /// Its process number.
    pub pid: u32,
    /// When its process started, in the system's own units (clock ticks
    /// since boot on Linux); 0 when unknown.
    #[serde(default)]
    pub process_start: u64,
}

/// What can be said of an owner from this machine.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Liveness {
    /// Its process runs here.
    Alive,
    /// It ran here and is gone.
    Dead,
    /// It runs elsewhere, or this system cannot tell.
    Unknown,
}

impl Owner {
    /// This process.
    pub fn me() -> Self {
        let pid = std::process::id();
        Self {
            host: crate::claim::host_name(),
            pid,
            process_start: process_start(pid).unwrap_or(0),
        }
    }

    /// Whether the owner still runs, as far as this machine can tell.
    pub fn liveness(&self) -> Liveness {
        if self.host != crate::claim::host_name() {
            return Liveness::Unknown;
        }
        process_liveness(self.pid, self.process_start)
    }

    /// As shown in a log line.
    pub fn describe(&self) -> String {
        format!("{} (process {})", self.host, self.pid)
    }
}

/// Whether process `pid` that started at `started` (0: unknown) still runs here.
pub fn process_liveness(pid: u32, started: u64) -> Liveness {
    if pid == 0 {
        return Liveness::Unknown;
    }
    if !process_exists(pid) {
        return Liveness::Dead;
    }
    match (started, process_start(pid)) {
        (0, _) | (_, None) => Liveness::Alive,
        (recorded, Some(now)) if recorded == now => Liveness::Alive,
        _ => Liveness::Dead,
    }
}

#[cfg(unix)]
#[allow(unsafe_code)]
fn process_exists(pid: u32) -> bool {
    let Ok(pid) = libc::pid_t::try_from(pid) else {
        return false;
    };
    // SAFETY: signal 0 sends nothing; it only checks that the process exists.
    let status = unsafe { libc::kill(pid, 0) };
    // EPERM: it exists but belongs to another user.
    status == 0 || std::io::Error::last_os_error().raw_os_error() == Some(libc::EPERM)
}

#[cfg(not(unix))]
fn process_exists(_pid: u32) -> bool {
    // Cannot tell: treated as alive, so only the expiry takes over.
    true
}

/// The start time of process `pid` (field 22 of `/proc/PID/stat`, clock
/// ticks since boot), where the system shows it.
fn process_start(pid: u32) -> Option<u64> {
    let stat = std::fs::read_to_string(format!("/proc/{pid}/stat")).ok()?;
    // The command name (field 2) is in parentheses and may hold spaces.
    let after_name = &stat[stat.rfind(')')? + 1..];
    // Fields from 3 on; the start time is field 22.
    after_name.split_whitespace().nth(19)?.parse().ok()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn this_process_is_alive_and_a_finished_one_is_dead() {
        let me = Owner::me();
        assert_eq!(me.liveness(), Liveness::Alive);
        let mut child = std::process::Command::new("true").spawn().expect("true runs");
        let pid = child.id();
        child.wait().expect("waited");
        let gone = Owner { pid, ..Owner::me() };
        assert_eq!(gone.liveness(), Liveness::Dead);
        let elsewhere = Owner {
            host: format!("{}-elsewhere", me.host),
            ..Owner::me()
        };
        assert_eq!(elsewhere.liveness(), Liveness::Unknown);
        // The same number with another start time is a reused number.
        if me.process_start != 0 {
            let reused = Owner {
                process_start: me.process_start + 1,
                ..Owner::me()
            };
            assert_eq!(reused.liveness(), Liveness::Dead);
        }
    }
}
