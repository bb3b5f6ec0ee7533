//! The watcher's log: one line per event, with a timestamp, to stderr and,
//! when asked, appended to a file.

use std::io::Write;
use std::path::Path;
use std::sync::Mutex;

/// Writes log lines.
pub struct Log {
    file: Option<Mutex<std::fs::File>>,
}

impl Log {
    /// A log to stderr and, if given, appended to `file`.
    ///
    /// # Errors
    ///
    /// When the file cannot be opened for appending.
    pub fn open(file: Option<&Path>) -> std::io::Result<Self> {
        let file = match file {
            Some(path) => Some(Mutex::new(
                std::fs::OpenOptions::new().create(true).append(true).open(path)?,
            )),
            None => None,
        };
        Ok(Self { file })
    }

    /// Logs one event: `2026-03-09T08:15:02.123Z analysed week 10.xlsx: ...`.
    pub fn event(&self, event: &str, subject: &str, detail: &str) {
        let stamp = timestamp();
        let mut line = format!("{stamp} {event}");
        if !subject.is_empty() {
            line.push(' ');
            line.push_str(subject);
        }
        if !detail.is_empty() {
            line.push_str(": ");
            line.push_str(&detail.replace(['\n', '\r'], " "));
        }
        line.push('\n');
        let _ = std::io::stderr().lock().write_all(line.as_bytes());
        if let Some(file) = &self.file {
            if let Ok(mut file) = file.lock() {
                let _ = file.write_all(line.as_bytes());
                let _ = file.flush();
            }
        }
    }
}

fn timestamp() -> String {
    let now = time::OffsetDateTime::now_utc();
    format!(
        "{:04}-{:02}-{:02}T{:02}:{:02}:{:02}.{:03}Z",
        now.year(),
        u8::from(now.month()),
        now.day(),
        now.hour(),
        now.minute(),
        now.second(),
        now.millisecond()
    )
}
