//! trialyst's service: the one API that every front end calls (the command
//! line, the protocol server, the folder watcher and the spreadsheet
//! extension through the server).
//!
//! It owns what the front ends share: loading a workbook and layering the
//! settings ([`settings`], with the one table of settings keys, and
//! [`folder_settings`], the `trialyst.toml` file and where it is found), the
//! per-response orchestration of the engine's analyses, the results types
//! that the JSON document and the report are made from, output paths and
//! folder scanning, "analyse and write", failure kinds and their wording, the
//! batch runner and roll-up ([`batch`]), the report builders ([`report`]),
//! and the plan and size use cases ([`plan`]).
//!
//! # Invariant
//!
//! The service never imports a front end. It computes no statistics itself:
//! the engine does, on typed inputs, answering in record numbers that the
//! service maps to cells.

mod analyse;
pub mod batch;
pub mod folder_settings;
pub mod plan;
pub mod report;
pub mod settings;

pub use analyse::*;
