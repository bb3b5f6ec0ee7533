//! The command line: argument parsing and output over the `service` crate.
//!
//! Exit codes: 0 when every workbook was analysed, 1 when at least one
//! failed (each failure is printed on one line and the run goes on), 2 for a
//! usage error. [`args`] holds the options and their checking into settings; each
//! command has its own module.

pub mod args;
mod inspect;
mod next;
mod plan;
mod run;
mod serve;
mod size;
mod watch;

use clap::{Parser, Subcommand};

pub use args::{
    analysis_settings, AnalyseOneArgs, AnalysisArgs, InspectArgs, PlanArgs, RunArgs, ServeArgs, SizeArgs, TableArgs,
    UsageError, WatchArgs,
};
pub use service::batch::{run_one, run_parallel, RunOutcome};
pub use service::{collect_workbooks, error_chain};

/// Exit code when every workbook was analysed.
pub const EXIT_OK: i32 = 0;
/// Exit code when some workbook could not be analysed.
pub const EXIT_SOME_FAILED: i32 = 1;
/// Exit code for a usage error.
pub const EXIT_USAGE: i32 = 2;

/// Compare process conditions from trial workbooks.
#[derive(Debug, Parser)]
#[command(name = "trialyst", version, about, long_about = None)]
pub struct Cli {
    /// What to do.
    #[command(subcommand)]
    pub command: Command,
}

/// The subcommands.
#[derive(Debug, Subcommand)]
pub enum Command {
    /// Analyse workbooks (files or folders) and write a results workbook beside each.
    Run(RunArgs),
    /// Show the table that would be analysed and every data problem, without analysing.
    Inspect(InspectArgs),
    /// Write a trial-plan workbook: runs in a randomized order, blank result columns.
    Plan(PlanArgs),
    /// Power and sample size for the next trial.
    Size(SizeArgs),
    /// Write the recommended next trial as a plan workbook holding the runs already made.
    Next(next::NextArgs),
    /// Watch a folder: analyse each workbook dropped into it, once per content.
    Watch(WatchArgs),
    /// The watcher's isolated worker (not for direct use).
    #[command(name = "__analyse-one", hide = true)]
    AnalyseOne(AnalyseOneArgs),
    /// Answer a spreadsheet add-in or editor over JSON-RPC (Language Server Protocol framing) on stdio.
    Serve(ServeArgs),
}

/// Runs the command line; returns the process exit code.
pub fn main_with(cli: Cli) -> i32 {
    if !matches!(cli.command, Command::Serve(_) | Command::Watch(_)) {
        quiet_on_closed_output();
    }
    match cli.command {
        Command::Run(args) => run::run_command(args),
        Command::Inspect(args) => inspect::inspect_command(args),
        Command::Watch(args) => watch::watch_command(args),
        Command::AnalyseOne(args) => watch::analyse_one_command(&args),
        Command::Plan(args) => plan::plan_command(args),
        Command::Size(args) => size::size_command(args),
        Command::Next(args) => next::next_command(args),
        Command::Serve(args) => serve::serve_command(&args),
    }
}

/// A command whose output is cut short (`trialyst inspect | head -1`) ends
/// quietly, as other command-line programs do, instead of panicking on the
/// failed write: the default action of SIGPIPE is restored. Not for `serve`
/// and `watch`, whose sockets and pipes report a closed peer as an error to
/// handle.
fn quiet_on_closed_output() {
    #[cfg(unix)]
    #[allow(unsafe_code)]
    // SAFETY: setting the disposition of SIGPIPE to its default at start,
    // before any thread is started, affects nothing else in the program.
    unsafe {
        libc::signal(libc::SIGPIPE, libc::SIG_DFL);
    }
}
