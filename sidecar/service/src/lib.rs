//! trialyst's service: the one API that every front end calls (the command
//! line, the protocol server, the folder watcher and the spreadsheet
//! extension through the server).
//!
//! It owns what the front ends share: loading a workbook and layering the
//! settings ([`load`], [`settings`], with the one table of settings keys,
//! and [`folder_settings`], the `trialyst.toml` file and where it is found),
//! the per-response orchestration of the engine's analyses
//! ([`orchestrate`]), the results types that the JSON document and the
//! report are made from ([`results`]), output paths and folder scanning
//! ([`paths`]), "analyse and write" ([`mod@write`]), failure kinds and their
//! wording ([`failure`]), the batch runner and roll-up ([`batch`]), the
//! report builders ([`report`]), and the plan and size use cases
//! ([`plan`]).
//!
//! The items most front ends need are re-exported here by name, so that
//! `service::analyse_workbook`, `service::WorkbookResults` and the like
//! keep one short path.
//!
//! # Invariant
//!
//! The service never imports a front end. It computes no statistics itself:
//! the engine does, on typed inputs, answering in record numbers that the
//! service maps to cells.

pub mod batch;
pub mod beyond_range;
pub mod compromise;
pub mod failure;
pub mod folder_settings;
pub mod goals;
pub mod load;
pub mod orchestrate;
pub mod paths;
pub mod plan;
pub mod report;
pub mod results;
pub mod settings;
pub mod write;

pub use failure::{describe_failure, error_chain, FailureReport, Problem, ServiceError};
pub use load::{inspect_workbook, sha256_file, stop_if_cancelled, AnalysisRequest, CancelFlag};
pub use orchestrate::{
    analyse_grid, analyse_workbook, conditions_of, inspect_grid, unit_of, MAX_CONDITIONS, MAX_RESPONSES,
};
pub use paths::{
    collect_workbooks, has_workbook_extension, inside_any, is_ignored_file_name, output_folder_for,
    output_name_among_siblings, output_names, problems_path_for, problems_path_named, relative_to_workbook,
    results_path_for, results_path_named, OutputName, OutputRules, PROBLEMS_SUFFIX, RESULTS_SUFFIX,
};
pub use results::{
    now_rfc3339, standard_cautions, FactorSummary, Inspection, LeadChoice, LeadKind, ResponseOutcome, ResponseResult,
    SourceInfo, TableSummary, Timings, WorkbookResults, RESULTS_FORMAT_VERSION, TOOL_NAME, TOOL_VERSION,
};
pub use write::{analyse_and_write, write_results, WrittenResults};
