//! `trialyst plan`: a trial-plan workbook from options or a TOML request.

use std::path::PathBuf;

use service::error_chain;
use service::plan::file::PlanFile;
use service::plan::SurfaceChoice;

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

/// The response-surface plan asked for: the plan file's `design`, `axial` and
/// factor limits, overridden by `--design`, `--axial` and `--limit`; `None`
/// for the factorial plans.
fn surface_design(args: &PlanArgs, from_file: Option<SurfaceChoice>) -> Result<Option<SurfaceChoice>, UsageError> {
    use service::plan::surface_choice::{read_axial, read_design, SurfaceWordsError};
    use service::plan::SurfaceDesign;
    let axial = args
        .axial
        .as_deref()
        .map(|text| read_axial(text).map_err(|error| UsageError(format!("--axial {error}"))))
        .transpose()?;
    let mut choice = match (args.design.as_deref(), from_file) {
        (Some(design), from_file) => SurfaceChoice {
            design: read_design(design, axial).map_err(|error| match error {
                SurfaceWordsError::AxialForBoxBehnken => UsageError(format!("--axial {error}")),
                other => UsageError(format!("--design {other}")),
            })?,
            limits: from_file.map(|choice| choice.limits).unwrap_or_default(),
        },
        (None, Some(mut choice)) => {
            if let Some(axial) = axial {
                match choice.design {
                    SurfaceDesign::CentralComposite(_) => choice.design = SurfaceDesign::CentralComposite(axial),
                    SurfaceDesign::BoxBehnken => {
                        return Err(UsageError(format!("--axial {}", SurfaceWordsError::AxialForBoxBehnken)))
                    }
                }
            }
            choice
        }
        (None, None) => {
            if args.axial.is_some() || !args.limit.is_empty() {
                return Err(UsageError(
                    "--axial and --limit go with --design central-composite or --design box-behnken".into(),
                ));
            }
            return Ok(None);
        }
    };
    for text in &args.limit {
        let limit = parse_limit_arg(text)?;
        choice.limits.retain(|earlier| earlier.factor != limit.factor);
        choice.limits.push(limit);
    }
    Ok(Some(choice))
}

/// Reads `Name=lowest,highest` (either side may be empty).
fn parse_limit_arg(text: &str) -> Result<service::plan::FactorLimits, UsageError> {
    let usage = || {
        UsageError(format!(
            "--limit '{text}': write the name, '=' and the lowest and highest settings the process can reach, e.g. \"Temperature=150,195\" (leave a side empty for no limit)"
        ))
    };
    let (name, bounds) = text.split_once('=').ok_or_else(usage)?;
    let (lower, upper) = bounds.split_once(',').ok_or_else(usage)?;
    let bound = |side: &str| -> Result<Option<f64>, UsageError> {
        match side.trim() {
            "" => Ok(None),
            number => number
                .parse::<f64>()
                .ok()
                .filter(|value| value.is_finite())
                .map(Some)
                .ok_or_else(usage),
        }
    };
    Ok(service::plan::FactorLimits {
        factor: name.trim().to_string(),
        lower: bound(lower)?,
        upper: bound(upper)?,
    })
}

/// The plan request: the TOML file given, if any, overridden by the options.
fn plan_request(args: &PlanArgs) -> Result<PlanFile, String> {
    let mut file = match &args.from {
        Some(path) => {
            let text =
                std::fs::read_to_string(path).map_err(|error| format!("cannot read '{}': {error}", path.display()))?;
            service::plan::file::parse_plan_file(&text, &path.display().to_string())
                .map_err(|error| error.to_string())?
        }
        None => PlanFile {
            request: service::plan::PlanRequest::default(),
            surface: None,
            centre_points_given: false,
        },
    };
    file.centre_points_given |= args.centre_points.is_some();
    let request = &mut file.request;
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
    request.date = args.date.clone().or(request.date.take());
    Ok(file)
}

/// `trialyst plan`: checks the request, writes the plan workbook; returns the exit code.
pub(crate) fn plan_command(args: PlanArgs) -> i32 {
    let file = match plan_request(&args) {
        Ok(file) => file,
        Err(message) => {
            eprintln!("trialyst: {message}");
            return EXIT_USAGE;
        }
    };
    let surface = match surface_design(&args, file.surface) {
        Ok(surface) => surface,
        Err(error) => {
            eprintln!("trialyst: {error}");
            return EXIT_USAGE;
        }
    };
    let made = service::plan::make_any_plan(&file.request, surface.as_ref(), file.centre_points_given);
    let plan = match made {
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
