//! trialyst's engine: the statistics ([`stats`], [`analysis`]), the results
//! report ([`report`]), the settings ([`settings`]), trial planning
//! ([`plan`]) and the one service API that every front end calls
//! ([`service`]). The command line ([`cli`]) and the protocol server
//! ([`lsp`]) are glue over the service.

pub mod analysis;
pub mod batch;
pub mod cli;
pub mod folder_settings;
pub mod lsp;
pub mod plan;
pub mod report;
pub mod service;
pub mod settings;
pub mod stats;
pub mod watch;
