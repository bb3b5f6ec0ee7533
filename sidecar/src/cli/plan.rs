//! `trialyst plan`: a trial-plan workbook from options or a TOML request.

use std::path::PathBuf;

use service::error_chain;

use super::args::{PlanArgs, UsageError};
use super::{EXIT_OK, EXIT_SOME_FAILED, EXIT_USAGE};

/// Reads `Name=level1,level2,...`.
fn parse_factor_arg(text: &str) -> Result<service::plan::FactorSpec, UsageError> {
    let Some((name, levels)) = text.split_once('=') else {
        return Err(UsageError(format!(
            "--factor '{text}': write the name, '=' and the levels separated by commas, e.g. \"Temperature=160,180\""
        )));
    };
    let levels: Vec<&str> = levels.split(',').map(str::trim).collect();
    Ok(service::plan::FactorSpec::new(name, &levels))
}

/// The plan request: the TOML file given, if any, overridden by the options.
fn plan_request(args: &PlanArgs) -> Result<service::plan::PlanRequest, String> {
    let mut request = match &args.from {
        Some(path) => {
            let text =
                std::fs::read_to_string(path).map_err(|error| format!("cannot read '{}': {error}", path.display()))?;
            service::plan::file::parse_plan_file(&text, &path.display().to_string())
                .map_err(|error| error.to_string())?
        }
        None => service::plan::PlanRequest::default(),
    };
    if !args.factor.is_empty() {
        request.factors = args
            .factor
            .iter()
            .map(|text| parse_factor_arg(text))
            .collect::<Result<_, _>>()
            .map_err(|error| error.to_string())?;
    }
    if !args.response.is_empty() {
        request.responses = args.response.clone();
    }
    if !args.generator.is_empty() {
        request.generators = args.generator.clone();
    }
    request.replicates = args.replicates.unwrap_or(request.replicates);
    request.centre_points = args.centre_points.unwrap_or(request.centre_points);
    request.blocks = args.blocks.unwrap_or(request.blocks);
    request.fraction_runs = args.runs.or(request.fraction_runs);
    request.seed = args.seed.or(request.seed);
    request.date = args.date.clone().or(request.date);
    Ok(request)
}

/// `trialyst plan`: checks the request, writes the plan workbook; returns the exit code.
pub(crate) fn plan_command(args: PlanArgs) -> i32 {
    let request = match plan_request(&args) {
        Ok(request) => request,
        Err(message) => {
            eprintln!("trialyst: {message}");
            return EXIT_USAGE;
        }
    };
    let plan = match service::plan::make_plan(&request) {
        Ok(plan) => plan,
        Err(error) => {
            eprintln!("trialyst: {}", error_chain(&error));
            return EXIT_USAGE;
        }
    };
    let destination = args
        .out
        .clone()
        .unwrap_or_else(|| PathBuf::from(format!("trial-plan-{}.xlsx", plan.id)));
    let replace = if args.force {
        workbook_io::write::ReplaceRule::AnyWritable
    } else {
        workbook_io::write::ReplaceRule::Never
    };
    if let Err(error) = service::plan::write_plan_replacing(&plan, &destination, replace) {
        eprintln!("trialyst: {}", error_chain(&error));
        return EXIT_SOME_FAILED;
    }
    let summary = service::plan::summarise(&plan, Some(&destination));
    if args.json {
        println!("{}", serde_json::to_string(&summary).unwrap_or_default());
    } else {
        println!(
            "plan {}: {} with {} runs{} -> {}",
            summary.id,
            summary.kind,
            summary.runs,
            if summary.blocks > 1 {
                format!(" in {} blocks", summary.blocks)
            } else {
                String::new()
            },
            destination.display()
        );
        if !summary.generators.is_empty() {
            println!(
                "  generators {} (resolution {})",
                summary.generators.join(", "),
                summary.resolution
            );
        }
        println!(
            "  seed {}{}",
            summary.seed,
            if summary.seed_from_clock {
                " (drawn from the clock; give --seed to make the same plan again)"
            } else {
                ""
            }
        );
    }
    EXIT_OK
}
