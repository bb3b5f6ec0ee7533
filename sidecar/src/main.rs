//! The `trialyst` binary: parses the command line and hands over to the library.

use clap::Parser;

fn main() {
    let cli = sidecar::cli::Cli::parse();
    std::process::exit(sidecar::cli::main_with(cli));
}
