//! `trialyst/nextPlan`: the recommended next trial written as a plan workbook
//! beside the workbook, holding the runs already made as earlier blocks (what
//! `trialyst next` does). Its own handler, so the shared request parsing stays
//! untouched.

use serde_json::{json, Value as Json};
use tower_lsp_server::jsonrpc::Result;

use super::{guarded, params_error, request_failed, service_error, Backend, Shared};
use crate::from_proto::{self, describe, error, params_object, ParamsError};
use service::plan::next::{next_plan_path_for, write_next_plan, NextPlanError, NextPlanRequest};
use service::{AnalysisRequest, CancelFlag};

/// `follow`, `seed` and `date`, as read.
type NextParams = (Option<String>, Option<u64>, Option<String>);

/// The params beyond those of a workbook request: `follow` (the response whose
/// recommendation to follow), `seed` and `date`.
fn next_params(params: &Json) -> std::result::Result<NextParams, ParamsError> {
    let map = params_object(params)?;
    let text = |key: &str| -> std::result::Result<Option<String>, ParamsError> {
        match map.get(key) {
            None | Some(Json::Null) => Ok(None),
            Some(Json::String(text)) if !text.trim().is_empty() => Ok(Some(text.trim().to_string())),
            Some(Json::String(_)) => Ok(None),
            Some(other) => Err(error(
                format!("params.{key}"),
                format!("expected text, got {}", describe(other)),
            )),
        }
    };
    let seed = match map.get("seed") {
        None | Some(Json::Null) => None,
        Some(Json::Number(number)) if number.as_u64().is_some() => number.as_u64(),
        Some(other) => {
            return Err(error(
                "params.seed",
                format!("expected a whole number of 0 or more, got {}", describe(other)),
            ))
        }
    };
    Ok((text("follow")?, seed, text("date")?))
}

impl Shared {
    async fn next_plan(&self, params: Json, cancel: CancelFlag) -> Result<Json> {
        let read = from_proto::workbook_params(&params).map_err(params_error)?;
        let (follow, seed, date) = next_params(&params).map_err(params_error)?;
        let what = format!("planning the next trial after '{}'", read.path.display());
        let progress = self
            .begin_progress(read.work_done_token.clone(), false, what.clone())
            .await;
        let request = AnalysisRequest {
            settings: read.settings,
            cancel,
            ..AnalysisRequest::default()
        };
        let path = read.path;
        let outcome = self
            .run_blocking(&progress, move || {
                let request = request.with_folder_settings_for(&path, None)?;
                let destination = next_plan_path_for(&path);
                // Only a plan this program wrote is replaced.
                let next = NextPlanRequest {
                    response: follow,
                    seed,
                    date,
                    replace: workbook_io::write::ReplaceRule::OnlyOurs,
                };
                write_next_plan(&path, &request, &next, &destination)
            })
            .await?;
        progress
            .finish(if outcome.is_ok() {
                "done".into()
            } else {
                "failed".into()
            })
            .await;
        match outcome {
            Ok(summary) => Ok(json!({
                "planFile": summary.plan.file.clone().unwrap_or_default(),
                "summary": serde_json::to_value(&summary).unwrap_or(Json::Null),
            })),
            Err(NextPlanError::Service(failure)) => Err(service_error(&failure)),
            Err(failure @ NextPlanError::UnknownResponse { .. }) => {
                Err(params_error(error("params.follow", failure.to_string())))
            }
            Err(failure) => Err(request_failed(&service::error_chain(&failure), "no-next-plan")),
        }
    }
}

impl Backend {
    pub(super) async fn next_plan(&self, params: Json) -> Result<Json> {
        let shared = self.shared.clone();
        guarded(self.shared.options.request_time_limit, move |cancel| async move {
            shared.next_plan(params, cancel).await
        })
        .await
    }
}
