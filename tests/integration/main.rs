//! trialyst's integration tests, one module per area: the command line end
//! to end, NIST accuracy through the read path, data findings, hostile
//! files and a catalogue of broken and hostile inputs, factorial trials, trial plans, the protocol server, the
//! three front ends (run, watch, serve) agreeing on one workbook, and guards of the results
//! document's format (a snapshot) and of plan workbooks (golden files). The
//! command-line tests run the real program, built from `sidecar/src/main.rs`
//! as this package's `trialyst-under-test` binary (see tests/Cargo.toml for why).

// Tests print what they measured and, on failure, what the program said.
#![allow(clippy::print_stdout, clippy::print_stderr)]

mod batch;
mod batch_directions;
mod beyond_range_json;
mod catalogue;
mod catalogue_cells;
mod catalogue_legacy_cells;
mod catalogue_safety;
mod catalogue_watch_state;
mod chart_key;
mod cli;
mod common;
mod cost_timing;
mod design_lead;
mod factorial;
mod findings;
mod front_ends;
mod golden_plan;
mod hostile;
mod lsp;
mod next_plan;
mod nist;
mod options;
mod plan;
mod print_layout;
mod results_snapshot;
mod settings_sheet_names;
mod sign_convention;
mod spaced_rows;
mod surface_lead;
mod surface_maps_and_size;
mod table_shapes;
mod watch;
