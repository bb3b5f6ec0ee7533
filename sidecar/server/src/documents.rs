//! The one owner of the document state: which workbooks the client has open
//! or watches, and the diagnostics published for each.
//!
//! Protocol handlers run concurrently, so none of them touches this state:
//! they send a [`DocumentEvent`] and the owner task applies the events one at
//! a time. Each check of a workbook runs on a blocking thread and comes back
//! as an event tagged with the generation it was started for; a check that
//! has been overtaken by a newer change is dropped, so diagnostics never go
//! back to an older state of the file.

use std::collections::HashMap;
use std::path::PathBuf;

use tokio::sync::mpsc;
use tower_lsp_server::ls_types::{Diagnostic, Uri};
use tower_lsp_server::Client;

use super::to_proto::{failure_diagnostic, finding_diagnostic};
use service::{self, AnalysisRequest, CancelFlag, ServiceError};

/// A change to the document state.
#[derive(Debug)]
pub enum DocumentEvent {
    /// The client opened a workbook.
    Opened {
        /// Its URI.
        uri: Uri,
        /// Its local path.
        path: PathBuf,
    },
    /// The client closed a workbook.
    Closed {
        /// Its URI.
        uri: Uri,
    },
    /// A workbook changed, appeared or vanished on disk.
    ChangedOnDisk {
        /// Its URI.
        uri: Uri,
        /// Its local path.
        path: PathBuf,
        /// True when it was deleted.
        deleted: bool,
    },
    /// A check finished.
    Checked {
        /// The workbook's URI.
        uri: Uri,
        /// The generation the check was started for.
        generation: u64,
        /// What it found.
        diagnostics: Vec<Diagnostic>,
    },
    /// The server is shutting down: stop every check under way.
    Shutdown,
}

#[derive(Debug, Default)]
struct DocumentState {
    /// Bumped on every change; checks carry the value they started with.
    generation: u64,
    /// Whether the client has the workbook open.
    open: bool,
    /// Stops the check under way when a newer one starts.
    cancel: CancelFlag,
    /// Whether the last publication was non-empty.
    has_diagnostics: bool,
}

/// Starts the owner task; returns the sender handlers use.
pub fn start(client: Client) -> mpsc::UnboundedSender<DocumentEvent> {
    let (sender, receiver) = mpsc::unbounded_channel();
    tokio::spawn(run(client, sender.clone(), receiver));
    sender
}

async fn run(
    client: Client,
    sender: mpsc::UnboundedSender<DocumentEvent>,
    mut receiver: mpsc::UnboundedReceiver<DocumentEvent>,
) {
    let mut documents: HashMap<String, DocumentState> = HashMap::new();
    while let Some(event) = receiver.recv().await {
        match event {
            DocumentEvent::Opened { uri, path } => {
                let state = documents.entry(uri.to_string()).or_default();
                state.open = true;
                start_check(state, uri, path, &sender);
            }
            DocumentEvent::ChangedOnDisk { uri, path, deleted } => {
                let state = documents.entry(uri.to_string()).or_default();
                if deleted {
                    state.generation += 1;
                    state.cancel.cancel();
                    if state.has_diagnostics {
                        state.has_diagnostics = false;
                        client.publish_diagnostics(uri.clone(), Vec::new(), None).await;
                    }
                    if !state.open {
                        documents.remove(uri.as_str());
                    }
                } else {
                    start_check(state, uri, path, &sender);
                }
            }
            DocumentEvent::Closed { uri } => {
                if let Some(mut state) = documents.remove(uri.as_str()) {
                    state.cancel.cancel();
                    state.open = false;
                    if state.has_diagnostics {
                        client.publish_diagnostics(uri, Vec::new(), None).await;
                    }
                }
            }
            DocumentEvent::Checked {
                uri,
                generation,
                diagnostics,
            } => {
                let Some(state) = documents.get_mut(uri.as_str()) else {
                    continue;
                };
                if state.generation != generation {
                    continue;
                }
                // An empty list clears what was shown before; publish it only
                // when something was shown.
                if diagnostics.is_empty() && !state.has_diagnostics {
                    continue;
                }
                state.has_diagnostics = !diagnostics.is_empty();
                client.publish_diagnostics(uri, diagnostics, None).await;
            }
            DocumentEvent::Shutdown => {
                for state in documents.values() {
                    state.cancel.cancel();
                }
            }
        }
    }
}

fn start_check(state: &mut DocumentState, uri: Uri, path: PathBuf, sender: &mpsc::UnboundedSender<DocumentEvent>) {
    state.generation += 1;
    state.cancel.cancel();
    state.cancel = CancelFlag::new();
    let generation = state.generation;
    let cancel = state.cancel.clone();
    let sender = sender.clone();
    tokio::spawn(async move {
        let checked = tokio::task::spawn_blocking(move || check_workbook(&path, cancel)).await;
        let diagnostics = match checked {
            Ok(Some(diagnostics)) => diagnostics,
            // Cancelled: a newer check replaces this one.
            Ok(None) => return,
            Err(_) => vec![failure_diagnostic(
                "internal error while checking the workbook; please report it",
                "internal-error",
            )],
        };
        let _ = sender.send(DocumentEvent::Checked {
            uri,
            generation,
            diagnostics,
        });
    });
}

/// The diagnostics of a workbook: its data findings, or one diagnostic
/// saying why it could not be checked. `None` when cancelled.
fn check_workbook(path: &std::path::Path, cancel: CancelFlag) -> Option<Vec<Diagnostic>> {
    let request = AnalysisRequest {
        cancel,
        ..AnalysisRequest::default()
    };
    // The folder settings file beside the workbook applies, as for every request.
    let request = match request.with_folder_settings_for(path, None) {
        Ok(request) => request,
        Err(error) => {
            return Some(vec![failure_diagnostic(
                &service::error_chain(&error),
                super::server::error_kind(&error),
            )])
        }
    };
    match service::analyse_workbook(path, &request) {
        Ok(results) => Some(results.findings.iter().map(finding_diagnostic).collect()),
        Err(ServiceError::Cancelled) => None,
        Err(error @ ServiceError::NothingAnalysable { .. }) => {
            // The table's findings usually say why; show them with the reason.
            let mut diagnostics = match service::inspect_workbook(path, &request) {
                Ok(inspection) => inspection.findings.iter().map(finding_diagnostic).collect(),
                Err(_) => Vec::new(),
            };
            diagnostics.push(failure_diagnostic(&service::error_chain(&error), "nothing-analysable"));
            Some(diagnostics)
        }
        Err(error) => Some(vec![failure_diagnostic(
            &service::error_chain(&error),
            super::server::error_kind(&error),
        )]),
    }
}
