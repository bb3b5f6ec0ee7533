//! `trialyst size`: power and sample size for the next trial, printed and written.

use std::io::Write;

use service::error_chain;

use super::args::SizeArgs;
use super::{EXIT_OK, EXIT_SOME_FAILED, EXIT_USAGE};

/// The size request from the options.
fn size_request(args: &SizeArgs) -> Result<service::plan::SizeRequest, String> {
    use engine::analysis::power::OneWayEffect;
    use service::plan::size::{SdSource, SizeDesign};
    let sd = match (args.sd, &args.from_results) {
        (Some(sd), None) => SdSource::Given(sd),
        (None, Some(path)) => SdSource::LastTrial {
            path: path.clone(),
            response: args.response.clone(),
        },
        (Some(_), Some(_)) => return Err("give either --sd or --from-results, not both".into()),
        (None, None) => {
            return Err(
                "give the SD of a run with --sd, or --from-results with the last trial's results workbook".into(),
            )
        }
    };
    let design = if args.design.is_some() || args.curvature.is_some() || args.axial.is_some() {
        surface_design(args)?
    } else if args.factors.is_some() || args.effect.is_some() {
        let factors = args.factors.ok_or("a two-level trial needs --factors")?;
        let effect = args
            .effect
            .ok_or("a two-level trial needs --effect, the effect worth detecting")?;
        SizeDesign::TwoLevel {
            factors,
            runs_per_replicate: args.runs,
            centre_points: args.centre_points,
            interactions: !args.main_effects_only,
            effect,
        }
    } else {
        let effect = match (args.difference, args.means.is_empty()) {
            (Some(delta), true) => OneWayEffect::SmallestDifference(delta),
            (None, false) => OneWayEffect::Means(args.means.clone()),
            (Some(_), false) => return Err("give either --difference or --means, not both".into()),
            (None, true) => {
                return Err("give --difference (smallest difference worth detecting) or --means, or --factors and --effect for a two-level trial".into())
            }
        };
        let conditions = match (args.conditions, &effect) {
            (Some(count), _) => count,
            (None, OneWayEffect::Means(means)) => means.len(),
            (None, _) => return Err("give the number of conditions with --conditions".into()),
        };
        SizeDesign::OneWay { conditions, effect }
    };
    Ok(service::plan::SizeRequest {
        design,
        sd,
        alpha: args.alpha,
        power: args.power,
        half_width: args.half_width,
    })
}

/// The response-surface plan of a size question.
fn surface_design(args: &SizeArgs) -> Result<service::plan::size::SizeDesign, String> {
    use service::plan::surface_choice::{read_axial, read_design, size_surface, SurfaceWordsError};
    let Some(design) = args.design.as_deref() else {
        return Err("--curvature and --axial go with --design central-composite or box-behnken".into());
    };
    let axial = args
        .axial
        .as_deref()
        .map(|text| read_axial(text).map_err(|error| format!("--axial {error}")))
        .transpose()?;
    let (plan, axial) = read_design(design, axial)
        .and_then(size_surface)
        .map_err(|error| match error {
            SurfaceWordsError::UnknownDesign(_) => format!("--design {error}"),
            other => format!("--axial {other}"),
        })?;
    let factors = args.factors.ok_or("a response-surface plan needs --factors")?;
    let curvature = args
        .curvature
        .ok_or("a response-surface plan needs --curvature, the square term worth detecting (coded units)")?;
    if args.effect.is_some() || args.runs.is_some() || args.main_effects_only {
        return Err("--effect, --runs and --main-effects-only go with two-level trials, not with --design".into());
    }
    Ok(service::plan::size::SizeDesign::Surface {
        plan,
        factors,
        centre_points: args.centre_points,
        axial,
        curvature,
    })
}

/// `trialyst size`: prints (and writes) the power table; returns the exit code.
pub(crate) fn size_command(args: SizeArgs) -> i32 {
    let request = match size_request(&args) {
        Ok(request) => request,
        Err(message) => {
            eprintln!("trialyst: {message}");
            return EXIT_USAGE;
        }
    };
    let answer = match service::plan::size_answer(&request) {
        Ok(answer) => answer,
        Err(error) => {
            eprintln!("trialyst: {}", error_chain(&error));
            // An input outside what the computation accepts (one condition, a power of
            // 1) is a usage error like any other bad option.
            return if matches!(
                error,
                service::plan::SizeError::Stats(_) | service::plan::SizeError::Plan(_)
            ) {
                EXIT_USAGE
            } else {
                EXIT_SOME_FAILED
            };
        }
    };
    if let Some(out) = &args.out {
        if let Err(error) = service::plan::write_size(&answer, out) {
            eprintln!("trialyst: {}", error_chain(&error));
            return EXIT_SOME_FAILED;
        }
    }
    if args.json {
        println!("{}", serde_json::to_string(&answer).unwrap_or_default());
        return EXIT_OK;
    }
    let stdout = std::io::stdout();
    let mut out = stdout.lock();
    let _ = writeln!(out, "{}", answer.question);
    let _ = writeln!(
        out,
        "SD {} ({}), alpha {}, power wanted {}",
        answer.sd, answer.sd_from, answer.alpha, answer.target_power
    );
    let _ = writeln!(
        out,
        "needed: {} {} ({} runs in all), power {:.3}",
        answer.needed.count, answer.count_means, answer.needed.total_runs, answer.needed.power
    );
    if let Some(half) = &answer.half_width {
        let _ = writeln!(
            out,
            "all-pairs intervals of +-{}: {} runs per condition ({} in all), half-width {:.4}",
            half.wanted, half.per_condition, half.total_runs, half.reached
        );
    }
    let grouped = answer.table.iter().any(|row| row.group_power.is_some());
    let shown = |power: f64| {
        if power.is_nan() {
            "-".to_string()
        } else {
            format!("{power:.3}")
        }
    };
    if grouped {
        let _ = writeln!(
            out,
            "{:>20} {:>12} {:>12} {:>12} {:>12}",
            answer.count_means, "runs in all", "residual df", "each square", "all squares"
        );
    } else {
        let _ = writeln!(
            out,
            "{:>20} {:>12} {:>12} {:>8}",
            answer.count_means, "runs in all", "residual df", "power"
        );
    }
    for row in &answer.table {
        match row.group_power {
            Some(group) => {
                let _ = writeln!(
                    out,
                    "{:>20} {:>12} {:>12} {:>12} {:>12}",
                    row.count,
                    row.total_runs,
                    row.residual_df,
                    shown(row.power),
                    shown(group)
                );
            }
            None => {
                let _ = writeln!(
                    out,
                    "{:>20} {:>12} {:>12} {:>8}",
                    row.count,
                    row.total_runs,
                    row.residual_df,
                    shown(row.power)
                );
            }
        }
    }
    for note in &answer.notes {
        let _ = writeln!(out, "note: {note}");
    }
    if let Some(path) = &args.out {
        let _ = writeln!(out, "table written to {}", path.display());
    }
    EXIT_OK
}
