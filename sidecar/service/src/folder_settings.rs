//! The folder settings file, `trialyst.toml`, in a watched or batch folder.
//!
//! It holds defaults for every workbook of the folder, with the same keys as
//! a workbook's settings sheet ([`crate::settings::KNOWN_KEYS`]); in TOML a
//! key with a space is quoted or written with `_` or `-`:
//!
//! ```toml
//! confidence = 0.90            # or "90%"
//! direction = "lower"          # higher, lower, "target 12.5": every response
//! # or per response (a plain value among them still means every other response):
//! # direction = ["Leak rate: lower", "Strength: higher"]
//! # direction = { "Leak rate" = "lower", Strength = "higher" }
//! family_confidence = "95%"
//! control = "Current recipe"
//! contrast = ["new vs old: (A + B)/2 - C"]
//! output_folder = "results"    # relative to each workbook's folder
//! # several responses at once (response-surface trials): one goal per response
//! # goal = ["Peel strength (N): higher, acceptable 38 to 45", "Haze (%): lower, acceptable 0.8 to 2.5"]
//! ```
//!
//! Precedence: the command line, then the workbook's settings sheet, then
//! this file, then the built-in defaults. A bad file is an error naming the
//! file, the key and the line; nothing is analysed with a half-read file.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

use toml::Spanned;

use crate::plan::file::{line_of, LineStarts};
use crate::settings::{Settings, SettingsError};

/// The file name looked for in a folder.
pub const FOLDER_SETTINGS_FILE: &str = "trialyst.toml";

/// Why a folder settings file could not be used.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum FolderSettingsError {
    /// The file exists but cannot be read.
    #[error("cannot read the folder settings file '{file}': {message}")]
    Unreadable {
        /// The file.
        file: String,
        /// The system's message.
        message: String,
    },
    /// Not valid TOML.
    #[error("the folder settings file {file} is not valid TOML: {message}")]
    Syntax {
        /// The file.
        file: String,
        /// The parser's message, with the line.
        message: String,
    },
    /// A key or value that is not one of ours.
    #[error("the folder settings file {0}")]
    Setting(SettingsError),
    /// A value of a kind the key cannot take.
    #[error("the folder settings file {file}, line {line}: '{key}' {rule}")]
    BadKind {
        /// The file.
        file: String,
        /// The line, from 1.
        line: usize,
        /// The key.
        key: String,
        /// What is accepted.
        rule: String,
    },
}

fn scalar_text(value: &toml::Value) -> Option<String> {
    match value {
        toml::Value::String(text) => Some(text.clone()),
        toml::Value::Integer(number) => Some(number.to_string()),
        toml::Value::Float(number) if number.is_finite() => Some(format!("{number}")),
        _ => None,
    }
}

/// Keys whose value is a list (an array joins into the comma-separated form).
const LIST_KEYS: &[&str] = &["response", "responses", "factor", "factors", "block", "blocks"];

/// Reads folder settings from TOML text; `file` names it in messages.
///
/// # Errors
///
/// [`FolderSettingsError`] naming the key and line of the first problem.
pub fn parse_folder_settings(text: &str, file: &str) -> Result<Settings, FolderSettingsError> {
    let raw: BTreeMap<Spanned<String>, Spanned<toml::Value>> =
        toml::from_str(text).map_err(|error| FolderSettingsError::Syntax {
            file: file.to_string(),
            message: match error.span() {
                Some(span) => format!("line {}: {}", line_of(text, span.start), error.message().trim()),
                None => error.message().trim().to_string(),
            },
        })?;
    // Keys in the order written, so that the first problem reported is the first in the file.
    let mut entries: Vec<(&Spanned<String>, &Spanned<toml::Value>)> = raw.iter().collect();
    entries.sort_by_key(|(key, _)| key.span().start);
    let mut pairs: Vec<(String, String, String)> = Vec::new();
    let lines = LineStarts::new(text);
    for (key, value) in entries {
        let line = lines.line(key.span().start);
        let normal = key.get_ref().trim().to_lowercase().replace(['_', '-'], " ");
        let bad = |rule: &str| FolderSettingsError::BadKind {
            file: file.to_string(),
            line,
            key: key.get_ref().clone(),
            rule: rule.to_string(),
        };
        let place = format!("{file}, line {line}");
        match value.get_ref() {
            toml::Value::Array(items) => {
                let mut texts = Vec::new();
                for item in items {
                    texts.push(scalar_text(item).ok_or_else(|| bad("must hold text or numbers"))?);
                }
                if ["contrast", "contrasts", "direction", "directions", "goal", "goals"].contains(&normal.as_str()) {
                    for item in texts {
                        pairs.push((key.get_ref().clone(), item, place.clone()));
                    }
                } else if LIST_KEYS.contains(&normal.as_str()) {
                    pairs.push((key.get_ref().clone(), texts.join(", "), place));
                } else if crate::settings::KNOWN_KEYS.contains(&normal.as_str()) {
                    return Err(bad("takes one value, not a list"));
                } else {
                    pairs.push((key.get_ref().clone(), String::new(), place));
                }
            }
            toml::Value::Table(table) if ["direction", "directions", "goal", "goals"].contains(&normal.as_str()) => {
                // `direction = { "Leak rate" = "lower", Strength = "higher" }`: one per response.
                for (response, direction) in table {
                    let text = scalar_text(direction)
                        .ok_or_else(|| bad("must give each response its direction or goal as text"))?;
                    pairs.push((key.get_ref().clone(), format!("{response}: {text}"), place.clone()));
                }
            }
            toml::Value::Table(_) => return Err(bad("must be a value, not a table of keys")),
            toml::Value::Boolean(_) | toml::Value::Datetime(_) => {
                if crate::settings::KNOWN_KEYS.contains(&normal.as_str()) {
                    return Err(bad("must be text or a number"));
                }
                pairs.push((key.get_ref().clone(), String::new(), place));
            }
            other => {
                let text = scalar_text(other).ok_or_else(|| bad("must be a finite number or text"))?;
                pairs.push((key.get_ref().clone(), text, place));
            }
        }
    }
    Settings::from_pairs(
        pairs
            .iter()
            .map(|(key, value, place)| (key.as_str(), value.as_str(), place.clone())),
    )
    .map_err(FolderSettingsError::Setting)
}

/// The settings file of a folder, if there is one.
pub fn settings_file_in(folder: &Path) -> Option<PathBuf> {
    let path = folder.join(FOLDER_SETTINGS_FILE);
    path.is_file().then_some(path)
}

/// The folder settings file for a workbook: the nearest `trialyst.toml`,
/// looking in the workbook's own folder first and then in each folder
/// above it, up to and including `root`.
///
/// `root` is the folder that was scanned or watched. With no root, or a
/// root that does not hold the workbook, only the workbook's own folder is
/// looked in. This is the one rule for `trialyst run`, the watcher and the
/// protocol server.
pub fn settings_file_for(workbook: &Path, root: Option<&Path>) -> Option<PathBuf> {
    let absolute = std::path::absolute(workbook).unwrap_or_else(|_| workbook.to_path_buf());
    let start = absolute.parent()?.to_path_buf();
    let root = root
        .map(|root| std::path::absolute(root).unwrap_or_else(|_| root.to_path_buf()))
        .filter(|root| start.starts_with(root))
        .unwrap_or_else(|| start.clone());
    let mut folder = start;
    loop {
        if let Some(file) = settings_file_in(&folder) {
            return Some(file);
        }
        if folder == root || !folder.pop() {
            return None;
        }
    }
}

/// Reads one folder settings file.
///
/// # Errors
///
/// [`FolderSettingsError`] when the file cannot be read or used.
pub fn read_settings_file(path: &Path) -> Result<Settings, FolderSettingsError> {
    let text = std::fs::read_to_string(path).map_err(|error| FolderSettingsError::Unreadable {
        file: path.display().to_string(),
        message: error.to_string(),
    })?;
    parse_folder_settings(&text, &path.display().to_string())
}

/// The folder settings in force for a workbook ([`settings_file_for`]),
/// with the file they came from: `Ok(None)` when no file applies.
///
/// # Errors
///
/// [`FolderSettingsError`] when the file found cannot be used.
pub fn settings_for_workbook(
    workbook: &Path,
    root: Option<&Path>,
) -> Result<Option<(PathBuf, Settings)>, FolderSettingsError> {
    match settings_file_for(workbook, root) {
        Some(file) => read_settings_file(&file).map(|settings| Some((file, settings))),
        None => Ok(None),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::settings::Direction;

    #[test]
    fn reads_every_kind_of_value() {
        let text = r#"
# defaults for the coating line
confidence = 0.9
"family confidence" = "99%"
direction = "lower"
control = "Current"
contrast = ["new vs old: A - B", "C - B"]
response = ["Gloss", "Haze"]
output_folder = "results"
interaction-order = 2
"#;
        let settings = parse_folder_settings(text, "trialyst.toml").expect("a good file");
        assert_eq!(settings.confidence, Some(0.9));
        assert_eq!(settings.family_confidence, Some(0.99));
        assert_eq!(settings.direction, Some(Direction::LowerIsBetter));
        assert_eq!(settings.control.as_deref(), Some("Current"));
        assert_eq!(settings.contrasts, vec!["new vs old: A - B", "C - B"]);
        assert_eq!(settings.responses, vec!["Gloss", "Haze"]);
        assert_eq!(settings.out_dir.as_deref(), Some("results"));
        assert_eq!(settings.interaction_order, Some(2));
    }

    #[test]
    fn errors_name_key_and_line() {
        let unknown = parse_folder_settings("confidence = 0.9\n\ncolour = \"blue\"\n", "f.toml").unwrap_err();
        let text = unknown.to_string();
        assert!(text.contains("line 3") && text.contains("colour"), "{text}");

        let bad_value = parse_folder_settings("direction = \"sideways\"\n", "f.toml").unwrap_err();
        let text = bad_value.to_string();
        assert!(
            text.contains("line 1") && text.contains("direction") && text.contains("sideways"),
            "{text}"
        );

        let bad_kind = parse_folder_settings("\nconfidence = true\n", "f.toml").unwrap_err();
        let text = bad_kind.to_string();
        assert!(text.contains("line 2") && text.contains("confidence"), "{text}");

        let list = parse_folder_settings("control = [\"A\", \"B\"]\n", "f.toml").unwrap_err();
        assert!(list.to_string().contains("one value"), "{list}");

        let syntax = parse_folder_settings("confidence = \n", "f.toml").unwrap_err();
        let text = syntax.to_string();
        assert!(text.contains("line 1") && text.contains("f.toml"), "{text}");
    }

    /// A tree: `root/trialyst.toml`, `root/line 2/trialyst.toml`, and
    /// workbooks at several depths (the files need not be workbooks: the
    /// rule looks at folders only).
    fn tree() -> (tempfile::TempDir, PathBuf) {
        let dir = tempfile::tempdir().expect("a temporary folder");
        let root = dir.path().join("root");
        std::fs::create_dir_all(root.join("line 2").join("week 1")).unwrap();
        std::fs::create_dir_all(root.join("line 3")).unwrap();
        std::fs::write(root.join(FOLDER_SETTINGS_FILE), "confidence = 0.9\n").unwrap();
        std::fs::write(root.join("line 2").join(FOLDER_SETTINGS_FILE), "confidence = 0.99\n").unwrap();
        (dir, root)
    }

    #[test]
    fn the_nearest_file_up_to_the_root_applies() {
        let (_dir, root) = tree();
        let own = root.join("line 2").join(FOLDER_SETTINGS_FILE);
        let top = root.join(FOLDER_SETTINGS_FILE);
        // The workbook's own folder first.
        assert_eq!(
            settings_file_for(&root.join("line 2").join("a.xlsx"), Some(&root)),
            Some(own.clone())
        );
        // A folder without a file takes the nearest above it, not the root's.
        assert_eq!(
            settings_file_for(&root.join("line 2").join("week 1").join("a.xlsx"), Some(&root)),
            Some(own)
        );
        assert_eq!(
            settings_file_for(&root.join("line 3").join("a.xlsx"), Some(&root)),
            Some(top.clone())
        );
        assert_eq!(settings_file_for(&root.join("a.xlsx"), Some(&root)), Some(top));
        let (_, settings) = settings_for_workbook(&root.join("line 3").join("a.xlsx"), Some(&root))
            .expect("a good file")
            .expect("a file applies");
        assert_eq!(settings.confidence, Some(0.9));
    }

    #[test]
    fn the_search_stops_at_the_root() {
        let (_dir, root) = tree();
        let below = root.join("line 3");
        // With the sub-folder as the root, the file above it is not used.
        assert_eq!(settings_file_for(&below.join("a.xlsx"), Some(&below)), None);
        // No root: the workbook's own folder only.
        assert_eq!(settings_file_for(&below.join("a.xlsx"), None), None);
        assert_eq!(
            settings_file_for(&root.join("a.xlsx"), None),
            Some(root.join(FOLDER_SETTINGS_FILE))
        );
        // A root that does not hold the workbook counts as none.
        assert_eq!(
            settings_file_for(&below.join("a.xlsx"), Some(&root.join("line 2"))),
            None
        );
        assert_eq!(
            settings_for_workbook(&below.join("a.xlsx"), Some(&below)).unwrap(),
            None
        );
    }

    #[test]
    fn a_bad_file_found_is_an_error_naming_it() {
        let (_dir, root) = tree();
        std::fs::write(root.join("line 3").join(FOLDER_SETTINGS_FILE), "colour = \"blue\"\n").unwrap();
        let error = settings_for_workbook(&root.join("line 3").join("a.xlsx"), Some(&root)).unwrap_err();
        let text = error.to_string();
        let file = root.join("line 3").join(FOLDER_SETTINGS_FILE).display().to_string();
        assert!(
            text.contains(&file) && text.contains("line 1") && text.contains("colour"),
            "{text}"
        );
    }

    #[test]
    fn directions_per_response_as_a_list_or_a_table() {
        let listed =
            parse_folder_settings("direction = [\"higher\", \"Leak rate: lower\"]\n", "f.toml").expect("valid");
        assert_eq!(listed.direction_for("Leak rate (ccm)"), Some(Direction::LowerIsBetter));
        assert_eq!(listed.direction_for("Strength"), Some(Direction::HigherIsBetter));
        let table = parse_folder_settings(
            "direction = { \"Leak rate\" = \"lower\", Strength = \"target 40\" }\n",
            "f.toml",
        )
        .expect("valid");
        assert_eq!(table.direction, None);
        assert_eq!(table.direction_for("leak rate"), Some(Direction::LowerIsBetter));
        assert_eq!(table.direction_for("Strength"), Some(Direction::Target(40.0)));
        let bad = parse_folder_settings("direction = { Strength = \"up\" }\n", "f.toml").unwrap_err();
        assert!(bad.to_string().contains("line 1"), "{bad}");
    }
}
