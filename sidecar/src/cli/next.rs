//! `trialyst next`: the recommended next trial written as a plan workbook that
//! holds the runs already made as earlier blocks.

use std::path::PathBuf;

use clap::Args;
use service::error_chain;
use service::plan::next::{next_plan_path_for, write_next_plan, NextPlanError, NextPlanRequest};
use service::AnalysisRequest;

use super::args::{analysis_settings, AnalysisArgs};
use super::{EXIT_OK, EXIT_SOME_FAILED, EXIT_USAGE};

/// `trialyst next`.
#[derive(Debug, Args)]
pub struct NextArgs {
    /// The workbook of the trial already made.
    pub file: PathBuf,
    /// Where to write the plan (default: "<workbook name> next trial.xlsx" beside it).
    #[arg(long, short)]
    pub out: Option<PathBuf>,
    /// The response whose recommendation to follow (default: the first that has one).
    #[arg(long)]
    pub follow: Option<String>,
    /// Seed of the new runs' order (default: drawn from the clock and printed).
    #[arg(long)]
    pub seed: Option<u64>,
    /// The plan's date, YYYY-MM-DD (recorded as the file's creation date).
    #[arg(long)]
    pub date: Option<String>,
    /// Replace an existing file at the destination.
    #[arg(long)]
    pub force: bool,
    /// Print what was written as JSON.
    #[arg(long)]
    pub json: bool,
    /// Analysis options.
    #[command(flatten)]
    pub analysis: AnalysisArgs,
}

/// Runs `trialyst next`; returns the exit code.
pub(crate) fn next_command(args: NextArgs) -> i32 {
    let settings = match analysis_settings(&args.analysis) {
        Ok(settings) => settings,
        Err(error) => {
            eprintln!("trialyst: {error}");
            return EXIT_USAGE;
        }
    };
    let request = AnalysisRequest {
        settings,
        ..AnalysisRequest::default()
    };
    let request = match request.with_folder_settings_for(&args.file, None) {
        Ok(request) => request,
        Err(error) => {
            eprintln!("trialyst: {}", error_chain(&error));
            return EXIT_SOME_FAILED;
        }
    };
    let destination = args.out.clone().unwrap_or_else(|| next_plan_path_for(&args.file));
    let next = NextPlanRequest {
        response: args.follow.clone(),
        seed: args.seed,
        date: args.date.clone(),
        replace: if args.force {
            workbook_io::write::ReplaceRule::AnyWritable
        } else {
            workbook_io::write::ReplaceRule::Never
        },
    };
    match write_next_plan(&args.file, &request, &next, &destination) {
        Ok(summary) => {
            if args.json {
                println!("{}", serde_json::to_string(&summary).unwrap_or_default());
            } else {
                println!("{}", summary.reason);
                println!(
                    "wrote {} (plan {}, seed {}): {} runs already made with their results, then {} new runs ({}) as block {}",
                    destination.display(),
                    summary.plan.id,
                    summary.plan.seed,
                    summary.earlier_runs,
                    summary.new_runs,
                    summary.step,
                    summary.block
                );
                if summary.confirmation {
                    println!(
                        "when the confirmation runs are filled in, `trialyst run` says whether their average fell in the interval predicted for them"
                    );
                }
            }
            EXIT_OK
        }
        Err(error @ (NextPlanError::UnknownResponse { .. } | NextPlanError::Plan(_))) => {
            eprintln!("trialyst: {}", error_chain(&error));
            EXIT_USAGE
        }
        Err(error) => {
            eprintln!("trialyst: {}", error_chain(&error));
            EXIT_SOME_FAILED
        }
    }
}
