//! The `trialyst` binary: parses the command line and hands over to the library.

#![allow(clippy::print_stdout, clippy::print_stderr)]

use std::process::ExitCode;

use clap::Parser;

fn main() -> ExitCode {
    let cli = sidecar::cli::Cli::parse();
    let code = sidecar::cli::main_with(cli);
    ExitCode::from(u8::try_from(code).unwrap_or(1))
}
