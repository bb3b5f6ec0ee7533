//! The protocol handlers: the standard lifecycle, workbook diagnostics, and
//! our own requests, each a thin caller of [`service`].
//!
//! Every handler body runs in a task of its own, so that a panic in one
//! request becomes an `InternalError` answer instead of ending the server.
//! Analyses run on blocking threads with a [`CancelFlag`]; when the client
//! cancels a request the library drops the handler's future, and the flag,
//! raised on drop, stops the computation itself.

use std::future::Future;
use std::path::Path;
use std::sync::atomic::{AtomicBool, AtomicU64, Ordering};
use std::sync::{Arc, OnceLock};
use std::time::{Duration, Instant};

use serde_json::{json, Value as Json};
use tokio::sync::mpsc;
use tower_lsp_server::jsonrpc::{Error, ErrorCode, Result};
use tower_lsp_server::ls_types::{
    DidChangeWatchedFilesParams, DidCloseTextDocumentParams, DidOpenTextDocumentParams, FileChangeType,
    InitializeParams, InitializeResult, InitializedParams, MessageType, NumberOrString, ProgressToken, Registration,
    ServerCapabilities, ServerInfo, TextDocumentSyncCapability, TextDocumentSyncKind, TextDocumentSyncOptions,
};
use tower_lsp_server::{Client, LanguageServer, LspService};
use workbook_io::ReadError;

use super::documents::{self, DocumentEvent};
use super::from_proto::{self, ParamsError};
use super::planning;
use super::side_channel::{self, Stash};

mod next_plan;
use super::to_proto;
use service::{self, AnalysisRequest, CancelFlag, ServiceError};

/// Our request methods, as announced under `experimental` in the
/// capabilities and documented in `sidecar/docs/protocol.md`.
pub mod methods {
    /// Detected tables and findings of a workbook, no analysis.
    pub const INSPECT_WORKBOOK: &str = "trialyst/inspectWorkbook";
    /// The results document of a workbook.
    pub const ANALYSE_WORKBOOK: &str = "trialyst/analyseWorkbook";
    /// The results document and result tables of cell values sent by the client.
    pub const ANALYSE_CELLS: &str = "trialyst/analyseCells";
    /// Writes the results workbook beside the workbook or in a folder.
    pub const WRITE_RESULTS: &str = "trialyst/writeResults";
    /// Detected table and findings of cell values sent by the client, no analysis.
    pub const INSPECT_CELLS: &str = "trialyst/inspectCells";
    /// A plan for the next trial, as tables to paste.
    pub const PLAN_TRIAL: &str = "trialyst/planTrial";
    /// Power and runs needed for the next trial, as tables to paste.
    pub const SIZE_TRIAL: &str = "trialyst/sizeTrial";
    /// Writes the recommended next trial as a plan workbook beside the workbook.
    pub const NEXT_PLAN: &str = "trialyst/nextPlan";
    /// Every one of them.
    pub const ALL: [&str; 8] = [
        INSPECT_WORKBOOK,
        ANALYSE_WORKBOOK,
        ANALYSE_CELLS,
        WRITE_RESULTS,
        INSPECT_CELLS,
        PLAN_TRIAL,
        SIZE_TRIAL,
        NEXT_PLAN,
    ];
}

/// The reply for an answer: when its cells came through the stash, its JSON
/// is written here, in the library's key order, and kept for the output
/// merger; the reply is then the placeholder. When the stash has no entry
/// for the key any more, the request was answered already (cancelled, past
/// its time limit; or an answer to another request with the same id, which
/// JSON-RPC forbids, settled it): the reply is the answer itself, so that no
/// placeholder can ever reach the client.
pub(crate) fn stash_answer(stash: Option<&Stash>, key: Option<&str>, answer: CellsAnswer) -> CellsReply {
    let (Some(stash), Some(key)) = (stash, key) else {
        return CellsReply::Answer(Box::new(answer));
    };
    match crate::sorted_json::to_vec_sorted(&answer) {
        Ok(mut bytes) => {
            // The writer starts with room for a large answer; a small one gives it back.
            if bytes.len() < bytes.capacity() / 2 {
                bytes.shrink_to_fit();
            }
            if stash.put_answer(key, bytes) {
                CellsReply::Stashed(Stash::placeholder(key))
            } else {
                CellsReply::Answer(Box::new(answer))
            }
        }
        // Not expected; the library then writes the answer itself.
        Err(_) => CellsReply::Answer(Box::new(answer)),
    }
}

/// The LSP code for a request that was well-formed but failed (LSP 3.17).
const REQUEST_FAILED: i64 = -32803;

/// Tunables of the server.
#[derive(Debug, Clone)]
pub struct ServerOptions {
    /// Workbooks at least this large (bytes) get server-started progress.
    pub progress_above_bytes: u64,
    /// Cell blocks with at least this many values get server-started progress.
    pub progress_above_cells: usize,
    /// How often progress is reported while work goes on.
    pub progress_interval: Duration,
    /// The largest message accepted, announced to the client.
    pub max_message_bytes: usize,
    /// A request still running after this long is stopped through its cancel flag and
    /// answered with a `time-limit` error; `None` sets no limit. Announced to the client.
    pub request_time_limit: Option<Duration>,
    /// Carries the cells of cell requests, and the answer of `trialyst/analyseCells`,
    /// around the library's JSON trees (see [`crate::side_channel`]). Off only to
    /// compare with the library's own way.
    pub side_channel: bool,
    /// Registers a panicking request, for tests of the panic guard.
    #[cfg(test)]
    pub with_panic_method: bool,
}

impl Default for ServerOptions {
    fn default() -> Self {
        Self {
            progress_above_bytes: 1 << 20,
            progress_above_cells: 200_000,
            progress_interval: Duration::from_millis(250),
            max_message_bytes: super::framing::DEFAULT_MAX_MESSAGE_BYTES,
            request_time_limit: Some(DEFAULT_REQUEST_TIME_LIMIT),
            side_channel: true,
            #[cfg(test)]
            with_panic_method: false,
        }
    }
}

/// How long a request may run by default before it is stopped: 120 seconds.
pub const DEFAULT_REQUEST_TIME_LIMIT: Duration = Duration::from_secs(120);

/// What the client said it supports, recorded at initialize.
#[derive(Debug, Default, Clone, Copy)]
struct ClientFeatures {
    work_done_progress: bool,
    watched_files_registration: bool,
}

struct Shared {
    client: Client,
    options: ServerOptions,
    features: OnceLock<ClientFeatures>,
    shutdown_received: Arc<AtomicBool>,
    documents: mpsc::UnboundedSender<DocumentEvent>,
    next_token: AtomicU64,
    /// The session's stash, when the side channel is on.
    stash: Option<Stash>,
}

/// The language server: a handle on the shared parts.
#[derive(Clone)]
pub struct Backend {
    shared: Arc<Shared>,
}

/// Builds the service; `shutdown_received` is set when the client sends
/// `shutdown`, so the caller can choose the exit code. `stash` is the
/// session's, shared with its framing guard and output merger.
pub fn build_service(
    options: ServerOptions,
    shutdown_received: Arc<AtomicBool>,
    stash: Option<Stash>,
) -> (LspService<Backend>, tower_lsp_server::ClientSocket) {
    #[cfg(test)]
    let with_panic_method = options.with_panic_method;
    let builder = LspService::build(move |client| Backend {
        shared: Arc::new(Shared {
            documents: documents::start(client.clone()),
            client,
            options,
            features: OnceLock::new(),
            shutdown_received,
            next_token: AtomicU64::new(1),
            stash,
        }),
    })
    .custom_method(methods::INSPECT_WORKBOOK, Backend::inspect_workbook)
    .custom_method(methods::ANALYSE_WORKBOOK, Backend::analyse_workbook)
    .custom_method(methods::ANALYSE_CELLS, Backend::analyse_cells)
    .custom_method(methods::WRITE_RESULTS, Backend::write_results)
    .custom_method(methods::INSPECT_CELLS, Backend::inspect_cells)
    .custom_method(methods::PLAN_TRIAL, Backend::plan_trial)
    .custom_method(methods::SIZE_TRIAL, Backend::size_trial)
    .custom_method(methods::NEXT_PLAN, Backend::next_plan);
    #[cfg(test)]
    let builder = if with_panic_method {
        builder.custom_method("test/panic", Backend::panic_for_test)
    } else {
        builder
    };
    builder.finish()
}

/// Raises the cancel flag when the request's future is dropped, which is
/// what the library does on `$/cancelRequest`.
struct CancelOnDrop(CancelFlag);

impl Drop for CancelOnDrop {
    fn drop(&mut self) {
        self.0.cancel();
    }
}

/// Why planning work ended without an answer: stopped by its cancel flag, or failed.
enum Stopped<E> {
    Cancelled,
    Failed(E),
}

impl<E> Stopped<E> {
    /// A cancel point of planning work.
    fn check(cancel: &CancelFlag) -> std::result::Result<(), Self> {
        if cancel.is_cancelled() {
            Err(Self::Cancelled)
        } else {
            Ok(())
        }
    }
}

fn internal_error(message: &str) -> Error {
    Error {
        code: ErrorCode::InternalError,
        message: message.to_string().into(),
        data: None,
    }
}

fn params_error(error: ParamsError) -> Error {
    Error {
        code: ErrorCode::InvalidParams,
        message: error.to_string().into(),
        data: Some(json!({ "field": error.field })),
    }
}

/// A short name for the kind of failure, sent in error `data` and diagnostic codes.
pub fn error_kind(error: &ServiceError) -> &'static str {
    error.kind()
}

/// A service failure as a JSON-RPC error.
fn service_error(error: &ServiceError) -> Error {
    let message = service::error_chain(error);
    let kind = error_kind(error);
    let field = match error {
        ServiceError::Read(ReadError::SheetNotFound { .. }) => Some("params.sheet"),
        ServiceError::Read(ReadError::BadReference { .. }) => Some("params.range"),
        ServiceError::Settings(_) => Some("params.settings"),
        _ => None,
    };
    match (error, field) {
        (ServiceError::Cancelled, _) => Error::request_cancelled(),
        (_, Some(field)) => Error {
            code: ErrorCode::InvalidParams,
            message: format!("{field}: {message}").into(),
            data: Some(json!({ "field": field, "kind": kind })),
        },
        _ => Error {
            code: ErrorCode::ServerError(REQUEST_FAILED),
            message: message.into(),
            data: Some(json!({ "kind": kind })),
        },
    }
}

/// The answer to `trialyst/analyseCells`: the results document and the
/// result tables, serialised once, by the library, into the reply (no JSON
/// tree built and copied on the way).
#[derive(serde::Serialize)]
pub struct CellsAnswer {
    /// The results document.
    pub results: service::WorkbookResults,
    /// The result tables, written straight from the report model.
    pub tables: crate::answer_tables::BookTables,
}

/// The reply to `trialyst/analyseCells`: the answer itself, or, when the
/// cells came around the library, the placeholder that the output merger
/// replaces with the answer's JSON (see [`crate::side_channel`]).
#[derive(serde::Serialize)]
#[serde(untagged)]
pub enum CellsReply {
    /// The answer, serialised by the library.
    Answer(Box<CellsAnswer>),
    /// The placeholder of an answer in the stash.
    Stashed(Json),
}

/// A request that was valid in form but could not be answered, with its kind.
fn request_failed(message: &str, kind: &str) -> Error {
    Error {
        code: ErrorCode::ServerError(REQUEST_FAILED),
        message: message.to_string().into(),
        data: Some(json!({ "kind": kind })),
    }
}

/// The answer to a request stopped at its time limit.
fn time_limit_error(limit: Duration) -> Error {
    request_failed(
        &format!(
            "the request ran longer than the time limit of {} s and was stopped; \
             start the server with a larger --request-time-limit (seconds, 0 for none) to allow more",
            limit.as_secs_f64()
        ),
        "time-limit",
    )
}

/// Runs a handler body in a task of its own, turning a panic into an
/// `InternalError` answer. The body gets a cancel flag that is raised if
/// the request is cancelled (its future dropped) or outlives `limit`; past
/// the limit the request is answered with a `time-limit` error at once, and
/// the computation stops at its next check of the flag.
async fn guarded<F, Fut, T>(limit: Option<Duration>, body: F) -> Result<T>
where
    F: FnOnce(CancelFlag) -> Fut,
    Fut: Future<Output = Result<T>> + Send + 'static,
    T: Send + 'static,
{
    let cancel = CancelFlag::new();
    let _raise_on_drop = CancelOnDrop(cancel.clone());
    let task = tokio::spawn(body(cancel.clone()));
    let joined = match limit {
        Some(limit) => match tokio::time::timeout(limit, task).await {
            Ok(joined) => joined,
            // The task is left to end itself: the flag stops its computation, and it
            // still ends its progress and logs that it stopped.
            Err(_) => {
                cancel.cancel();
                return Err(time_limit_error(limit));
            }
        },
        None => task.await,
    };
    match joined {
        Ok(answer) => answer,
        Err(_) => Err(internal_error(
            "internal error while answering this request; the server goes on; please report it",
        )),
    }
}

/// Work-done progress for one request, when there is a token for it.
struct Progress {
    ongoing: Option<tower_lsp_server::OngoingProgress<tower_lsp_server::Unbounded, tower_lsp_server::NotCancellable>>,
}

impl Progress {
    async fn report(&self, message: String) {
        if let Some(ongoing) = &self.ongoing {
            ongoing.report(message).await;
        }
    }

    async fn finish(self, message: String) {
        if let Some(ongoing) = self.ongoing {
            ongoing.finish_with_message(message).await;
        }
    }
}

impl Shared {
    fn features(&self) -> ClientFeatures {
        self.features.get().copied().unwrap_or_default()
    }

    /// Begins progress on the client's token, or on one of ours for large
    /// work when the client supports it.
    async fn begin_progress(&self, token: Option<ProgressToken>, large: bool, title: String) -> Progress {
        let token = match token {
            Some(token) => Some(token),
            None if large && self.features().work_done_progress => {
                let number = self.next_token.fetch_add(1, Ordering::SeqCst);
                let token = NumberOrString::String(format!("trialyst/work/{number}"));
                match self.client.create_work_done_progress(token.clone()).await {
                    Ok(()) => Some(token),
                    Err(_) => None,
                }
            }
            None => None,
        };
        let ongoing = match token {
            Some(token) => Some(
                self.client
                    .progress(token, title)
                    .with_message("starting")
                    .begin()
                    .await,
            ),
            None => None,
        };
        Progress { ongoing }
    }

    /// Runs `work` on a blocking thread, reporting progress while it runs.
    async fn run_blocking<T, W>(&self, progress: &Progress, work: W) -> Result<T>
    where
        T: Send + 'static,
        W: FnOnce() -> T + Send + 'static,
    {
        let started = Instant::now();
        let mut handle = tokio::task::spawn_blocking(work);
        let mut ticker = tokio::time::interval(self.options.progress_interval);
        ticker.tick().await;
        loop {
            tokio::select! {
                joined = &mut handle => {
                    return joined.map_err(|_| internal_error(
                        "internal error during the analysis; the server goes on; please report it",
                    ));
                }
                _ = ticker.tick(), if progress.ongoing.is_some() => {
                    progress.report(format!("working, {:.1} s", started.elapsed().as_secs_f64())).await;
                }
            }
        }
    }

    /// Ends progress with the outcome and tells the client when work stopped
    /// because it was cancelled.
    async fn finish<T>(&self, progress: Progress, what: &str, outcome: &std::result::Result<T, ServiceError>) {
        let message = match outcome {
            Ok(_) => "done".to_string(),
            Err(ServiceError::Cancelled) => "cancelled".to_string(),
            Err(error) => format!("failed: {}", service::error_chain(error)),
        };
        if matches!(outcome, Err(ServiceError::Cancelled)) {
            self.client
                .log_message(MessageType::INFO, format!("stopped {what}: the request was cancelled"))
                .await;
        }
        progress.finish(message).await;
    }

    fn is_large_file(&self, path: &Path) -> bool {
        std::fs::metadata(path)
            .map(|metadata| metadata.len() >= self.options.progress_above_bytes)
            .unwrap_or(false)
    }

    async fn inspect(&self, params: Json, cancel: CancelFlag) -> Result<Json> {
        let read = from_proto::workbook_params(&params).map_err(params_error)?;
        let what = format!("inspecting '{}'", read.path.display());
        let progress = self
            .begin_progress(
                read.work_done_token.clone(),
                self.is_large_file(&read.path),
                what.clone(),
            )
            .await;
        let request = AnalysisRequest {
            settings: read.settings,
            cancel,
            ..AnalysisRequest::default()
        };
        let path = read.path;
        let outcome = self
            .run_blocking(&progress, move || {
                // The folder settings file beside the workbook applies, as for `run` and `watch`.
                let request = request.with_folder_settings_for(&path, None)?;
                service::inspect_workbook(&path, &request)
            })
            .await?;
        progress.report("inspected; preparing the answer".into()).await;
        self.finish(progress, &what, &outcome).await;
        let inspection = outcome.map_err(|error| service_error(&error))?;
        serde_json::to_value(&inspection).map_err(|_| internal_error("the inspection could not be encoded"))
    }

    async fn analyse(&self, params: Json, cancel: CancelFlag) -> Result<Json> {
        let read = from_proto::workbook_params(&params).map_err(params_error)?;
        let what = format!("analysing '{}'", read.path.display());
        let progress = self
            .begin_progress(
                read.work_done_token.clone(),
                self.is_large_file(&read.path),
                what.clone(),
            )
            .await;
        let request = AnalysisRequest {
            settings: read.settings,
            cancel,
            ..AnalysisRequest::default()
        };
        let path = read.path;
        let outcome = self
            .run_blocking(&progress, move || {
                // The folder settings file beside the workbook applies, as for `run` and `watch`.
                let request = request.with_folder_settings_for(&path, None)?;
                service::analyse_workbook(&path, &request)
            })
            .await?;
        progress.report("analysed; preparing the answer".into()).await;
        self.finish(progress, &what, &outcome).await;
        let results = outcome.map_err(|error| service_error(&error))?;
        serde_json::to_value(&results).map_err(|_| internal_error("the results could not be encoded"))
    }

    /// The params of a cell request; the cells from the stash when the guard kept them.
    /// Returns the stash key with them.
    fn read_cells(&self, params: &Json) -> Result<(from_proto::CellsParams, Option<String>)> {
        let Some(field) = params.as_object().and_then(|map| map.get(side_channel::CELLS_FIELD)) else {
            return Ok((from_proto::cells_params(params).map_err(params_error)?, None));
        };
        let key = field.as_str().unwrap_or_default();
        let stashed = self.stash.as_ref().and_then(|stash| stash.take_cells(key));
        let Some(raw) = stashed else {
            return Err(params_error(from_proto::error(
                format!("params.{}", side_channel::CELLS_FIELD),
                "this field is the server's own and is not accepted from a client; send the cells in params.cells",
            )));
        };
        let read = from_proto::cells_params_with(params, Some(&raw)).map_err(params_error)?;
        Ok((read, Some(key.to_string())))
    }

    async fn analyse_cells(&self, params: Json, cancel: CancelFlag) -> Result<CellsReply> {
        let (read, key) = self.read_cells(&params)?;
        // The request's cells are in the grid now; the JSON tree goes.
        drop(params);
        let what = format!("analysing {} cell values", read.n_cells);
        let large = read.n_cells >= self.options.progress_above_cells;
        let progress = self
            .begin_progress(read.work_done_token.clone(), large, what.clone())
            .await;
        let stash = self.stash.clone();
        let outcome = self
            .run_blocking(&progress, move || {
                let results = service::analyse_grid(&read.grid, &read.settings, &read.source_name, &cancel)?;
                drop(read);
                // The tables come from the report model, the one place that lays them out.
                let tables = crate::answer_tables::BookTables(service::report::build_shown_sheets(&results));
                let answer = CellsAnswer { results, tables };
                Ok::<CellsReply, ServiceError>(stash_answer(stash.as_ref(), key.as_deref(), answer))
            })
            .await?;
        progress.report("analysed; preparing the answer".into()).await;
        self.finish(progress, &what, &outcome).await;
        outcome.map_err(|error| service_error(&error))
    }

    async fn inspect_cells(&self, params: Json, cancel: CancelFlag) -> Result<Json> {
        let (read, _) = self.read_cells(&params)?;
        drop(params);
        let what = format!("inspecting {} cell values", read.n_cells);
        let large = read.n_cells >= self.options.progress_above_cells;
        let progress = self
            .begin_progress(read.work_done_token.clone(), large, what.clone())
            .await;
        let outcome = self
            .run_blocking(&progress, move || {
                let inspection = service::inspect_grid(&read.grid, &read.settings, &read.source_name, &cancel)?;
                Ok::<Json, ServiceError>(serde_json::to_value(&inspection).unwrap_or(Json::Null))
            })
            .await?;
        self.finish(progress, &what, &outcome).await;
        outcome.map_err(|error| service_error(&error))
    }

    async fn plan_trial(&self, params: Json, cancel: CancelFlag) -> Result<Json> {
        let read = planning::plan_params(&params).map_err(params_error)?;
        let request = read.request;
        let surface = read.surface;
        let centre_points_given = read.centre_points_given;
        let stop = cancel.clone();
        self.planning_work(
            read.work_done_token,
            "planning a trial",
            "bad-plan",
            cancel,
            move || {
                // Cancel points between the stages: the plan, its workbook, the answer.
                let plan = service::plan::make_any_plan(&request, surface.as_ref(), centre_points_given)
                    .map_err(Stopped::Failed)?;
                Stopped::check(&stop)?;
                let book = service::plan::book::plan_book(&plan);
                Stopped::check(&stop)?;
                let tables = to_proto::book_tables(&book);
                Stopped::check(&stop)?;
                Ok(json!({
                    "plan": serde_json::to_value(service::plan::summarise(&plan, None)).unwrap_or(Json::Null),
                    "tables": tables,
                }))
            },
        )
        .await
    }

    async fn size_trial(&self, params: Json, cancel: CancelFlag) -> Result<Json> {
        let read = planning::size_params(&params).map_err(params_error)?;
        let request = read.request;
        let stop = cancel.clone();
        self.planning_work(
            read.work_done_token,
            "sizing a trial",
            "bad-size-question",
            cancel,
            move || {
                let answer = match service::plan::size_answer_until(&request, &stop) {
                    Ok(answer) => answer,
                    Err(service::plan::SizeError::Cancelled) => return Err(Stopped::Cancelled),
                    Err(error) => return Err(Stopped::Failed(error)),
                };
                let book = service::plan::size_book(&answer);
                Stopped::check(&stop)?;
                let tables = to_proto::book_tables(&book);
                Stopped::check(&stop)?;
                Ok(json!({
                    "answer": serde_json::to_value(&answer).unwrap_or(Json::Null),
                    "tables": tables,
                }))
            },
        )
        .await
    }

    /// A planning request (plan or size): the work off the protocol's thread with
    /// progress, and a failure answered with its kind; work stopped by its cancel flag
    /// says so in the log and its progress, as an analysis does.
    async fn planning_work<E, W>(
        &self,
        token: Option<ProgressToken>,
        what: &str,
        failure_kind: &str,
        cancel: CancelFlag,
        work: W,
    ) -> Result<Json>
    where
        E: std::fmt::Display + Send + 'static,
        W: FnOnce() -> std::result::Result<Json, Stopped<E>> + Send + 'static,
    {
        let progress = self.begin_progress(token, false, what.to_string()).await;
        let outcome = self
            .run_blocking(&progress, move || {
                Stopped::check(&cancel)?;
                work()
            })
            .await?;
        let message = match &outcome {
            Ok(_) => "done",
            Err(Stopped::Cancelled) => {
                self.client
                    .log_message(MessageType::INFO, format!("stopped {what}: the request was cancelled"))
                    .await;
                "cancelled"
            }
            Err(Stopped::Failed(_)) => "failed",
        };
        progress.finish(message.into()).await;
        match outcome {
            Ok(answer) => Ok(answer),
            Err(Stopped::Cancelled) => Err(Error::request_cancelled()),
            Err(Stopped::Failed(error)) => Err(request_failed(&error.to_string(), failure_kind)),
        }
    }

    async fn write(&self, params: Json, cancel: CancelFlag) -> Result<Json> {
        let read = from_proto::write_params(&params).map_err(params_error)?;
        let what = format!("writing the results of '{}'", read.workbook.path.display());
        let progress = self
            .begin_progress(
                read.workbook.work_done_token.clone(),
                self.is_large_file(&read.workbook.path),
                what.clone(),
            )
            .await;
        let request = AnalysisRequest {
            settings: read.workbook.settings,
            cancel,
            ..AnalysisRequest::default()
        };
        let path = read.workbook.path;
        // A relative folder in the request is taken from the workbook's folder,
        // not from the server's working folder (see docs/protocol.md).
        let output_folder = read.output_folder;
        let outcome = self
            .run_blocking(&progress, move || {
                let mut request = request.with_folder_settings_for(&path, None)?;
                // A folder from a request, like one from a settings sheet, stays
                // inside the workbook's folder or a folder the server was given.
                request.output = service::OutputRules {
                    name: service::output_name_among_siblings(&path),
                    allowed_roots: from_proto::allowed_roots().to_vec(),
                    claimed: None,
                };
                let output_folder = match output_folder {
                    Some(folder) => {
                        let settings = service::settings::Settings {
                            out_dir: Some(folder.display().to_string()),
                            ..service::settings::Settings::default()
                        };
                        service::output_folder_for(&path, None, &settings, &request.output.allowed_roots)?
                    }
                    None => None,
                };
                let written = service::analyse_and_write(&path, &request, output_folder.as_deref(), &mut |_| {})?;
                let (results, destination) = (written.results, written.results_file);
                Ok(json!({
                    "resultsFile": destination.display().to_string(),
                    "source": path.display().to_string(),
                    "analysed": results
                        .responses
                        .iter()
                        .filter(|response| response.fit().is_some())
                        .map(|response| response.name.clone())
                        .collect::<Vec<_>>(),
                    "findings": results.findings.len(),
                }))
            })
            .await?;
        progress.report("written".into()).await;
        self.finish(progress, &what, &outcome).await;
        outcome.map_err(|error| service_error(&error))
    }
}

impl Backend {
    async fn inspect_workbook(&self, params: Json) -> Result<Json> {
        let shared = self.shared.clone();
        guarded(self.shared.options.request_time_limit, move |cancel| async move {
            shared.inspect(params, cancel).await
        })
        .await
    }

    async fn analyse_workbook(&self, params: Json) -> Result<Json> {
        let shared = self.shared.clone();
        guarded(self.shared.options.request_time_limit, move |cancel| async move {
            shared.analyse(params, cancel).await
        })
        .await
    }

    async fn analyse_cells(&self, params: Json) -> Result<CellsReply> {
        let shared = self.shared.clone();
        guarded(self.shared.options.request_time_limit, move |cancel| async move {
            shared.analyse_cells(params, cancel).await
        })
        .await
    }

    async fn write_results(&self, params: Json) -> Result<Json> {
        let shared = self.shared.clone();
        guarded(self.shared.options.request_time_limit, move |cancel| async move {
            shared.write(params, cancel).await
        })
        .await
    }

    async fn inspect_cells(&self, params: Json) -> Result<Json> {
        let shared = self.shared.clone();
        guarded(self.shared.options.request_time_limit, move |cancel| async move {
            shared.inspect_cells(params, cancel).await
        })
        .await
    }

    async fn plan_trial(&self, params: Json) -> Result<Json> {
        let shared = self.shared.clone();
        guarded(self.shared.options.request_time_limit, move |cancel| async move {
            shared.plan_trial(params, cancel).await
        })
        .await
    }

    async fn size_trial(&self, params: Json) -> Result<Json> {
        let shared = self.shared.clone();
        guarded(self.shared.options.request_time_limit, move |cancel| async move {
            shared.size_trial(params, cancel).await
        })
        .await
    }

    #[cfg(test)]
    async fn panic_for_test(&self, params: Json) -> Result<Json> {
        guarded(self.shared.options.request_time_limit, move |_| async move {
            if params.is_object() {
                panic!("a deliberate panic to test the guard");
            }
            Ok(Json::Null)
        })
        .await
    }

    fn send(&self, event: DocumentEvent) {
        let _ = self.shared.documents.send(event);
    }
}

/// Whether a path names a workbook we check (not a lock file or one of our outputs).
fn is_checked_workbook(path: &Path) -> bool {
    let name = path
        .file_name()
        .map(|name| name.to_string_lossy().into_owned())
        .unwrap_or_default();
    service::has_workbook_extension(&name) && !service::is_ignored_file_name(&name)
}

impl LanguageServer for Backend {
    async fn initialize(&self, params: InitializeParams) -> Result<InitializeResult> {
        let capabilities = &params.capabilities;
        let features = ClientFeatures {
            work_done_progress: capabilities
                .window
                .as_ref()
                .and_then(|window| window.work_done_progress)
                .unwrap_or(false),
            watched_files_registration: capabilities
                .workspace
                .as_ref()
                .and_then(|workspace| workspace.did_change_watched_files.as_ref())
                .and_then(|watched| watched.dynamic_registration)
                .unwrap_or(false),
        };
        let _ = self.shared.features.set(features);
        Ok(InitializeResult {
            server_info: Some(ServerInfo {
                name: service::TOOL_NAME.into(),
                version: Some(service::TOOL_VERSION.into()),
            }),
            capabilities: ServerCapabilities {
                text_document_sync: Some(TextDocumentSyncCapability::Options(TextDocumentSyncOptions {
                    open_close: Some(true),
                    change: Some(TextDocumentSyncKind::NONE),
                    ..TextDocumentSyncOptions::default()
                })),
                experimental: Some(json!({
                    "trialyst": {
                        "requests": methods::ALL,
                        "resultsFormatVersion": service::RESULTS_FORMAT_VERSION,
                        "workbookDiagnostics": true,
                        "workDoneProgress": true,
                        "maxMessageBytes": self.shared.options.max_message_bytes,
                        "requestTimeLimitSeconds": self.shared.options.request_time_limit.map(|limit| limit.as_secs_f64()),
                    }
                })),
                ..ServerCapabilities::default()
            },
            ..InitializeResult::default()
        })
    }

    async fn initialized(&self, _: InitializedParams) {
        if !self.shared.features().watched_files_registration {
            return;
        }
        // Registering waits for the client's answer; do it aside so that a
        // slow client holds up nothing.
        let client = self.shared.client.clone();
        tokio::spawn(async move {
            let registration = Registration {
                id: "trialyst-workbooks".into(),
                method: "workspace/didChangeWatchedFiles".into(),
                register_options: Some(json!({
                    "watchers": [{ "globPattern": "**/*.{xlsx,xlsm,xlsb,xls,ods}" }]
                })),
            };
            if let Err(error) = client.register_capability(vec![registration]).await {
                client
                    .log_message(MessageType::WARNING, format!("could not watch workbooks: {error}"))
                    .await;
            }
        });
    }

    async fn shutdown(&self) -> Result<()> {
        self.shared.shutdown_received.store(true, Ordering::SeqCst);
        self.send(DocumentEvent::Shutdown);
        Ok(())
    }

    async fn did_open(&self, params: DidOpenTextDocumentParams) {
        let uri = params.text_document.uri;
        match from_proto::file_path_of(&uri) {
            Some(path) if is_checked_workbook(&path) => self.send(DocumentEvent::Opened { uri, path }),
            _ => {
                self.shared
                    .client
                    .log_message(
                        MessageType::WARNING,
                        format!("'{}' is not a workbook file; it is not checked", uri.as_str()),
                    )
                    .await;
            }
        }
    }

    async fn did_close(&self, params: DidCloseTextDocumentParams) {
        self.send(DocumentEvent::Closed {
            uri: params.text_document.uri,
        });
    }

    async fn did_change_watched_files(&self, params: DidChangeWatchedFilesParams) {
        for change in params.changes {
            let Some(path) = from_proto::file_path_of(&change.uri) else {
                continue;
            };
            if !is_checked_workbook(&path) {
                continue;
            }
            self.send(DocumentEvent::ChangedOnDisk {
                uri: change.uri,
                path,
                deleted: change.typ == FileChangeType::DELETED,
            });
        }
    }
}
