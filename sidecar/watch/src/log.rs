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
            line.push_str(&escape_controls(subject));
        }
        if !detail.is_empty() {
            line.push_str(": ");
            line.push_str(&escape_controls(detail));
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

/// Text made safe for one log line on a terminal: every control character
/// (a newline in a file name that would forge a second line, an escape code
/// that would drive the terminal) is written as `\u{..}`.
pub fn escape_controls(text: &str) -> String {
    let mut escaped = String::with_capacity(text.len());
    for character in text.chars() {
        if character.is_control() || matches!(character, '\u{2028}' | '\u{2029}') {
            escaped.push_str(&format!("\\u{{{:x}}}", u32::from(character)));
        } else {
            escaped.push(character);
        }
    }
    escaped
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

#[cfg(test)]
mod tests {
    use super::escape_controls;

    #[test]
    fn control_characters_cannot_forge_a_line_or_reach_the_terminal() {
        assert_eq!(escape_controls("week 1.xlsx"), "week 1.xlsx");
        assert_eq!(
            escape_controls("a.xlsx\n2026-01-01T00:00:00.000Z analysed b.xlsx"),
            "a.xlsx\\u{a}2026-01-01T00:00:00.000Z analysed b.xlsx"
        );
        assert_eq!(escape_controls("\u{1b}[31mred"), "\\u{1b}[31mred");
        assert_eq!(escape_controls("line\r"), "line\\u{d}");
    }
}
