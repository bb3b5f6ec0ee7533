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

/// The response-surface plan asked for with `--design`, `--axial` and `--limit`,
/// or `None` for the factorial plans.
fn surface_design(
    args: &PlanArgs,
) -> Result<Option<(service::plan::SurfaceDesign, Vec<service::plan::FactorLimits>)>, UsageError> {
    use engine::design::surface::AxialDistance;
    use service::plan::SurfaceDesign;
    let Some(design) = args.design.as_deref() else {
        if args.axial.is_some() || !args.limit.is_empty() {
            return Err(UsageError(
                "--axial and --limit go with --design central-composite or --design box-behnken".into(),
            ));
        }
        return Ok(None);
    };
    let axial = match args.axial.as_deref().map(str::trim) {
        None | Some("rotatable") => AxialDistance::Rotatable,
        Some("orthogonal-blocks") => AxialDistance::OrthogonalBlocking,
        Some("faces") => AxialDistance::FaceCentred,
        Some(text) => match text.parse::<f64>() {
            Ok(distance) if distance.is_finite() && distance > 0.0 => AxialDistance::Given(distance),
            _ => {
                return Err(UsageError(format!(
                    "--axial '{text}': write rotatable, orthogonal-blocks, faces or a positive distance in coded units, e.g. 1.5"
                )))
            }
        },
    };
    let design = match design.trim() {
        "central-composite" => SurfaceDesign::CentralComposite(axial),
        "box-behnken" if args.axial.is_none() => SurfaceDesign::BoxBehnken,
        "box-behnken" => {
            return Err(UsageError(
                "--axial goes with --design central-composite; a Box-Behnken plan has no axial runs".into(),
            ))
        }
        other => {
            return Err(UsageError(format!(
                "--design '{other}': write central-composite or box-behnken"
            )))
        }
    };
    let limits = args
        .limit
        .iter()
        .map(|text| parse_limit_arg(text))
        .collect::<Result<_, _>>()?;
    Ok(Some((design, limits)))
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

/// Centre runs of a response-surface plan when none are asked for.
const SURFACE_CENTRE_POINTS: usize = 3;

/// `trialyst plan`: checks the request, writes the plan workbook; returns the exit code.
pub(crate) fn plan_command(args: PlanArgs) -> i32 {
    let request = match plan_request(&args) {
        Ok(request) => request,
        Err(message) => {
            eprintln!("trialyst: {message}");
            return EXIT_USAGE;
        }
    };
    let surface = match surface_design(&args) {
        Ok(surface) => surface,
        Err(error) => {
            eprintln!("trialyst: {error}");
            return EXIT_USAGE;
        }
    };
    let mut request = request;
    if surface.is_some() && args.centre_points.is_none() && request.centre_points == 0 {
        // A response-surface plan needs centre runs for its error and its curvature;
        // three to six in all is common practice, and the cube part and the axial part get these each.
        request.centre_points = SURFACE_CENTRE_POINTS;
    }
    let made = match surface {
        Some((design, limits)) => service::plan::make_surface_plan(design, &request, &limits),
        None => service::plan::make_plan(&request),
    };
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
