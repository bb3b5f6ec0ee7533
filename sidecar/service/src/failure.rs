//! Failures: why a workbook could not be analysed ([`ServiceError`], with
//! a stable kind), and the same in plain words with places and fixes
//! ([`describe_failure`]) for problems workbooks and protocol errors.

use std::path::PathBuf;

use serde::Serialize;
use workbook_io::layout::Finding;
use workbook_io::ReadError;

/// Why a workbook could not be analysed.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum ServiceError {
    /// The workbook could not be read.
    #[error(transparent)]
    Read(#[from] ReadError),
    /// No sheet holds an analysable table.
    #[error("'{}': no trial table found: {reasons}", path.display())]
    NoTable {
        /// The workbook.
        path: PathBuf,
        /// What each sheet lacked.
        reasons: String,
    },
    /// A table was found but no response could be analysed.
    #[error("'{}': nothing could be analysed: {reasons}", path.display())]
    NothingAnalysable {
        /// The workbook.
        path: PathBuf,
        /// Why each response failed.
        reasons: String,
        /// The data findings, each with its place, that explain it.
        findings: Vec<Finding>,
    },
    /// A setting given by the caller is unusable.
    #[error("{0}")]
    Settings(String),
    /// The folder settings file that applies to the workbook is unusable.
    #[error(transparent)]
    FolderSettings(#[from] crate::folder_settings::FolderSettingsError),
    /// The folder for the results could not be made.
    #[error("cannot create the output folder '{}': {source}", folder.display())]
    OutputFolder {
        /// The folder.
        folder: PathBuf,
        /// The system's error.
        source: std::io::Error,
    },
    /// The `output folder` setting points outside the workbook's folder and
    /// every folder allowed by the caller.
    #[error("the output folder '{setting}' ('{}') is outside the workbook's folder; results go only into the workbook's folder or a folder allowed on the command line (--allow-output-root)", folder.display())]
    OutputOutsideFolder {
        /// The folder the setting names.
        folder: PathBuf,
        /// The setting as written.
        setting: String,
    },
    /// Another input of the same run already wrote this output.
    #[error("'{}' was already written for '{}' in this run; not replaced", destination.display(), other.display())]
    OutputCollision {
        /// The output.
        destination: PathBuf,
        /// The input that wrote it.
        other: PathBuf,
    },
    /// The results workbook could not be written.
    #[error(transparent)]
    Write(#[from] workbook_io::write::WriteError),
    /// The caller cancelled the work.
    #[error("cancelled")]
    Cancelled,
}

impl ServiceError {
    /// A short, stable name for the kind of failure: sent in protocol error
    /// data and diagnostic codes, and used to sort failures.
    pub fn kind(&self) -> &'static str {
        match self {
            Self::Read(read) => match read {
                ReadError::Io { .. } => "unreadable",
                ReadError::NotAWorkbook { .. } => "not-a-workbook",
                ReadError::PasswordProtected { .. } => "password-protected",
                ReadError::TooLarge { .. } | ReadError::TooManyCells { .. } => "too-large",
                ReadError::Corrupt { .. } => "damaged",
                ReadError::SheetNotFound { .. } => "no-such-sheet",
                ReadError::BadReference { .. } => "bad-range",
                _ => "unreadable",
            },
            Self::NoTable { .. } => "no-table",
            Self::NothingAnalysable { .. } => "nothing-analysable",
            Self::Settings(_) | Self::FolderSettings(_) => "bad-setting",
            Self::OutputFolder { .. } | Self::Write(_) | Self::OutputCollision { .. } => "write-failed",
            Self::OutputOutsideFolder { .. } => "bad-setting",
            Self::Cancelled => "cancelled",
        }
    }
}

/// One thing wrong with a workbook that could not be analysed, in plain words.
#[derive(Debug, Clone, PartialEq, Serialize, serde::Deserialize)]
pub struct Problem {
    /// Where: `Sheet!B7`, a sheet, or empty for the whole file.
    pub place: String,
    /// What is wrong.
    pub what: String,
    /// How to fix it.
    pub fix: String,
}

/// Why a workbook failed, for a problems workbook and for retrying.
#[derive(Debug, Clone, PartialEq, Serialize, serde::Deserialize)]
pub struct FailureReport {
    /// The message on one line.
    pub message: String,
    /// The problems, each with its place where known.
    pub problems: Vec<Problem>,
    /// True when the bytes look cut short or unreadable in a way that a
    /// file still being copied also shows: worth trying again once the file
    /// has settled.
    pub maybe_incomplete: bool,
}

/// An error and all its sources on one line, joined by ": ".
pub fn error_chain(error: &dyn std::error::Error) -> String {
    let mut text = error.to_string();
    let mut source = error.source();
    while let Some(cause) = source {
        let cause_text = cause.to_string();
        if !text.contains(&cause_text) {
            text.push_str(": ");
            text.push_str(&cause_text);
        }
        source = cause.source();
    }
    text
}

/// Describes a failure in plain words, with places and fixes.
pub fn describe_failure(error: &ServiceError) -> FailureReport {
    let message = error_chain(error);
    let whole = |what: String, fix: &str| Problem {
        place: String::new(),
        what,
        fix: fix.to_string(),
    };
    let (problems, maybe_incomplete) = match error {
        ServiceError::Read(read) => match read {
            ReadError::Io { .. } => (
                vec![whole(message.clone(), "Check that the file is still there and can be opened; copy it again if it was being copied.")],
                true,
            ),
            ReadError::NotAWorkbook { detail, .. } => (
                vec![whole(
                    format!("the file is not a workbook that can be read ({detail})"),
                    "Open it in your spreadsheet program and save it again as an .xlsx workbook; if it came by e-mail or a download, fetch it again.",
                )],
                true,
            ),
            ReadError::Corrupt { detail, .. } => (
                vec![whole(
                    format!("the file is damaged or cut short ({detail})"),
                    "Copy the file again from where it was made, or open it in your spreadsheet program and save a fresh copy.",
                )],
                true,
            ),
            ReadError::PasswordProtected { .. } => (
                vec![whole(
                    "the workbook is protected by a password".into(),
                    "Save a copy without a password and drop that copy in the folder.",
                )],
                false,
            ),
            ReadError::TooLarge { what, limit, .. } => (
                vec![whole(
                    format!("the file was refused as unsafe to read: {what} (the limit is {limit})"),
                    "Copy the trial table alone into a new workbook and save that; very large used areas often come from formatting applied to whole columns.",
                )],
                false,
            ),
            ReadError::TooManyCells { sheet, limit, .. } => (
                vec![Problem {
                    place: sheet.clone(),
                    what: format!("the sheet has more than {limit} non-empty cells"),
                    fix: "Copy the trial table alone into a new workbook and save that.".into(),
                }],
                false,
            ),
            ReadError::SheetNotFound { sheet, available, .. } => (
                vec![whole(
                    format!("there is no sheet named '{sheet}' (the sheets are: {available})"),
                    "Correct the sheet name in the settings (the trialyst settings sheet, the folder's trialyst.toml or the command line).",
                )],
                false,
            ),
            ReadError::BadReference { reference, .. } => (
                vec![whole(
                    format!("'{reference}' is not a range, defined name or table of this workbook"),
                    "Give the table's cells as an A1 range such as B2:D40, or the name of a defined name or table in the workbook.",
                )],
                false,
            ),
            _ => (vec![whole(message.clone(), "Open the workbook and save a fresh copy.")], false),
        },
        ServiceError::NoTable { reasons, .. } => (
            sheet_reasons(reasons)
                .into_iter()
                .map(|reason| {
                    let place = reason
                        .strip_prefix("sheet '")
                        .and_then(|rest| rest.split_once('\''))
                        .map(|(sheet, _)| sheet.to_string())
                        .unwrap_or_default();
                    Problem {
                        place,
                        what: reason,
                        fix: "Put the trial table on one sheet with a single header row: a column naming the condition of each run and at least one column of measured numbers (or one column per condition). To point at it, add a 'trialyst settings' sheet with 'sheet' or 'range'.".into(),
                    }
                })
                .collect(),
            false,
        ),
        ServiceError::NothingAnalysable { reasons, findings, .. } => {
            let mut problems = vec![Problem {
                place: String::new(),
                what: reasons.clone(),
                fix: "Each response needs numbers for at least two conditions, with at least one condition holding two or more values.".into(),
            }];
            problems.extend(findings.iter().map(|finding| Problem {
                place: finding.place(),
                what: finding.message.clone(),
                fix: format!("Correct the cell if it is a typing slip (what was done: {}).", finding.action),
            }));
            (problems, false)
        }
        ServiceError::Settings(text) => (
            vec![whole(text.clone(), "Correct the setting named in the message.")],
            false,
        ),
        ServiceError::FolderSettings(_) => (
            vec![whole(
                message.clone(),
                "Correct the key named in the folder's trialyst.toml.",
            )],
            false,
        ),
        ServiceError::OutputFolder { .. } => (
            vec![whole(
                message.clone(),
                "Check the output folder setting and that the folder can be written to.",
            )],
            false,
        ),
        ServiceError::Write(_) => (
            vec![whole(message.clone(), "Check that the output folder exists and can be written to; a file trialyst did not write, or a read-only one, is never replaced: move it away or choose another output folder.")],
            false,
        ),
        ServiceError::OutputOutsideFolder { .. } => (
            vec![whole(
                message.clone(),
                "Set 'output folder' to a folder inside the workbook's folder, or allow the folder when starting trialyst (--allow-output-root).",
            )],
            false,
        ),
        ServiceError::OutputCollision { .. } => (
            vec![whole(
                message.clone(),
                "Give the workbooks different names or different output folders.",
            )],
            false,
        ),
        ServiceError::Cancelled => (vec![whole("the analysis was stopped".into(), "Nothing to fix.")], false),
    };
    FailureReport {
        message,
        problems,
        maybe_incomplete,
    }
}

/// Splits the joined reasons of a failed table search into one per sheet
/// (a sheet's own reason may hold "; " too).
fn sheet_reasons(reasons: &str) -> Vec<String> {
    let mut out: Vec<String> = Vec::new();
    for piece in reasons.split("; ").filter(|piece| !piece.is_empty()) {
        match out.last_mut() {
            Some(last) if !piece.starts_with("sheet '") => {
                last.push_str("; ");
                last.push_str(piece);
            }
            _ => out.push(piece.to_string()),
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use workbook_io::layout::FindingKind;

    #[test]
    fn failures_are_described_with_their_places() {
        let error = ServiceError::NoTable {
            path: PathBuf::from("w.xlsx"),
            reasons: "sheet 'Notes': no trial table found; looked for a header row; sheet 'Runs': no column headed 'Gloss' in the header row 1 (headers: Oven, Haze)".into(),
        };
        let report = describe_failure(&error);
        assert_eq!(report.problems.len(), 2, "{report:?}");
        assert_eq!(report.problems[0].place, "Notes");
        assert!(report.problems[0].what.ends_with("looked for a header row"));
        assert_eq!(report.problems[1].place, "Runs");
        assert!(!report.maybe_incomplete);
        let error = ServiceError::NothingAnalysable {
            path: PathBuf::from("w.xlsx"),
            reasons: "only 1 condition has values for 'Gloss'; at least two are needed".into(),
            findings: vec![Finding {
                kind: FindingKind::TextInNumbers,
                sheet: "Runs".into(),
                cell: Some("B3".into()),
                found: "n/a".into(),
                action: "left out".into(),
                message: "the cell holds text where a number belongs".into(),
            }],
        };
        let report = describe_failure(&error);
        assert_eq!(report.problems.len(), 2);
        assert_eq!(report.problems[1].place, "Runs!B3");
    }
}
