//! The `trialyst` program's command line: argument parsing and output over
//! the `service` crate, and the front ends `server` and `watch`. Nothing
//! here computes statistics or reads workbooks itself.

// The command line's job is to print: results, usage errors, progress.
#![allow(clippy::print_stdout, clippy::print_stderr)]

pub mod cli;
