//! The `trialyst` program's command line: argument parsing and output over
//! the `service` crate, and the front ends `server` and `watch`. Nothing
//! here computes statistics or reads workbooks itself.

pub mod cli;
