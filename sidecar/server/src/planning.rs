//! The params of the plan and size requests (`trialyst/planTrial`,
//! `trialyst/sizeTrial`), checked by hand into the service's request types.
//!
//! The plans and answers themselves come from [`service::plan`]; this module
//! only reads fields, naming the field in every error.

use serde_json::{Map, Value};
use tower_lsp_server::ls_types::ProgressToken;

use super::from_proto::{describe, error, params_object, work_done_token, ParamsError};
use service::plan::size::{OneWayEffect, SdSource, SizeDesign};
use service::plan::surface_choice::{read_axial, read_design, size_surface, SurfaceWordsError};
use service::plan::{FactorLimits, FactorSpec, PlanRequest, SizeRequest, SurfaceChoice};

/// Level of the test when the client gives none (as `trialyst size`).
pub const DEFAULT_ALPHA: f64 = 0.05;
/// Wanted power when the client gives none (as `trialyst size`).
pub const DEFAULT_POWER: f64 = 0.8;

/// What `trialyst/planTrial` carries.
#[derive(Debug, Clone)]
pub struct PlanParams {
    /// The plan asked for.
    pub request: PlanRequest,
    /// The response-surface plan, when `design` is given.
    pub surface: Option<SurfaceChoice>,
    /// Whether `centrePoints` was given (a response-surface plan gets some when not).
    pub centre_points_given: bool,
    /// The client's progress token.
    pub work_done_token: Option<ProgressToken>,
}

/// What `trialyst/sizeTrial` carries.
#[derive(Debug, Clone)]
pub struct SizeParams {
    /// The question asked.
    pub request: SizeRequest,
    /// The client's progress token.
    pub work_done_token: Option<ProgressToken>,
}

fn optional_count(map: &Map<String, Value>, key: &str) -> Result<Option<usize>, ParamsError> {
    match map.get(key) {
        None | Some(Value::Null) => Ok(None),
        Some(Value::Number(number)) => match number.as_u64().and_then(|whole| usize::try_from(whole).ok()) {
            Some(whole) => Ok(Some(whole)),
            None => Err(error(
                format!("params.{key}"),
                format!("expected a whole number of 0 or more, got {}", describe(&map[key])),
            )),
        },
        Some(other) => Err(error(
            format!("params.{key}"),
            format!("expected a whole number, got {}", describe(other)),
        )),
    }
}

fn optional_number(map: &Map<String, Value>, key: &str) -> Result<Option<f64>, ParamsError> {
    match map.get(key) {
        None | Some(Value::Null) => Ok(None),
        Some(Value::Number(number)) => Ok(number.as_f64()),
        Some(Value::String(text)) if text.trim().parse::<f64>().is_ok() => Ok(text.trim().parse::<f64>().ok()),
        Some(other) => Err(error(
            format!("params.{key}"),
            format!("expected a number, got {}", describe(other)),
        )),
    }
}

fn optional_flag(map: &Map<String, Value>, key: &str) -> Result<Option<bool>, ParamsError> {
    match map.get(key) {
        None | Some(Value::Null) => Ok(None),
        Some(Value::Bool(flag)) => Ok(Some(*flag)),
        Some(other) => Err(error(
            format!("params.{key}"),
            format!("expected true or false, got {}", describe(other)),
        )),
    }
}

/// A value of a list as text (a level may be sent as a number).
fn item_text(value: &Value, field: &str) -> Result<String, ParamsError> {
    match value {
        Value::String(text) => Ok(text.trim().to_string()),
        Value::Number(number) => Ok(number.to_string()),
        other => Err(error(
            field,
            format!("expected text or a number, got {}", describe(other)),
        )),
    }
}

fn text_list(map: &Map<String, Value>, key: &str) -> Result<Vec<String>, ParamsError> {
    match map.get(key) {
        None | Some(Value::Null) => Ok(Vec::new()),
        Some(Value::Array(items)) => items
            .iter()
            .enumerate()
            .map(|(index, item)| item_text(item, &format!("params.{key}[{index}]")))
            .collect(),
        Some(Value::String(text)) => Ok(vec![text.trim().to_string()]),
        Some(other) => Err(error(
            format!("params.{key}"),
            format!("expected a list of texts, got {}", describe(other)),
        )),
    }
}

/// One factor: `{"name": "Temperature", "levels": [160, 180]}`, with the
/// settings the process can reach (`lowest`, `highest`) when given.
fn factor(value: &Value, field: &str) -> Result<(FactorSpec, Option<FactorLimits>), ParamsError> {
    let Value::Object(map) = value else {
        return Err(error(
            field,
            format!(
                "expected an object with a name and levels, such as {{\"name\": \"Temperature\", \"levels\": [160, 180]}}, got {}",
                describe(value)
            ),
        ));
    };
    let name = match map.get("name") {
        Some(Value::String(text)) if !text.trim().is_empty() => text.clone(),
        _ => return Err(error(format!("{field}.name"), "missing; every factor needs a name")),
    };
    let levels = match map.get("levels") {
        Some(Value::Array(items)) => items
            .iter()
            .enumerate()
            .map(|(index, item)| item_text(item, &format!("{field}.levels[{index}]")))
            .collect::<Result<Vec<String>, ParamsError>>()?,
        Some(other) => {
            return Err(error(
                format!("{field}.levels"),
                format!("expected a list of levels, got {}", describe(other)),
            ))
        }
        None => return Err(error(format!("{field}.levels"), "missing; give the factor's levels")),
    };
    let level_texts: Vec<&str> = levels.iter().map(String::as_str).collect();
    let spec = FactorSpec::new(&name, &level_texts);
    let lower = optional_number(map, "lowest").map_err(|bad| within(bad, field))?;
    let upper = optional_number(map, "highest").map_err(|bad| within(bad, field))?;
    if let (Some(low), Some(high)) = (lower, upper) {
        if low >= high {
            return Err(error(format!("{field}.highest"), "must be above lowest"));
        }
    }
    let limits = (lower.is_some() || upper.is_some()).then(|| FactorLimits {
        factor: spec.name.clone(),
        lower,
        upper,
    });
    Ok((spec, limits))
}

/// An error about `params.<key>` of a factor, moved to `<field>.<key>`.
fn within(bad: ParamsError, field: &str) -> ParamsError {
    ParamsError {
        field: bad.field.replacen("params", field, 1),
        ..bad
    }
}

/// Reads the params of `trialyst/planTrial`: `factors` (each a name and its
/// levels), `responses`, and optional `replicates`, `centrePoints`,
/// `blocks`, `fractionRuns`, `generators`, `seed`, `date`.
///
/// # Errors
///
/// [`ParamsError`] naming the field.
pub fn plan_params(params: &Value) -> Result<PlanParams, ParamsError> {
    let map = params_object(params)?;
    let read_factors = match map.get("factors") {
        Some(Value::Array(items)) => items
            .iter()
            .enumerate()
            .map(|(index, item)| factor(item, &format!("params.factors[{index}]")))
            .collect::<Result<Vec<_>, ParamsError>>()?,
        Some(other) => {
            return Err(error(
                "params.factors",
                format!("expected a list of factors, got {}", describe(other)),
            ))
        }
        None => return Err(error("params.factors", "missing; give the factors and their levels")),
    };
    let seed = match map.get("seed") {
        None | Some(Value::Null) => None,
        Some(Value::Number(number)) if number.as_u64().is_some() => number.as_u64(),
        Some(other) => {
            return Err(error(
                "params.seed",
                format!("expected a whole number of 0 or more, got {}", describe(other)),
            ))
        }
    };
    let date = match map.get("date") {
        None | Some(Value::Null) => None,
        Some(value) => Some(item_text(value, "params.date")?),
    };
    let mut factors = Vec::with_capacity(read_factors.len());
    let mut limits = Vec::new();
    for (spec, limit) in read_factors {
        factors.push(spec);
        limits.extend(limit);
    }
    let axial = match map.get("axial") {
        None | Some(Value::Null) => None,
        Some(value) => {
            let words = item_text(value, "params.axial")?;
            Some(read_axial(&words).map_err(|bad| error("params.axial", bad.to_string()))?)
        }
    };
    let surface = match map.get("design") {
        None | Some(Value::Null) => {
            if axial.is_some() {
                return Err(error("params.axial", "goes with \"design\": \"central-composite\""));
            }
            if !limits.is_empty() {
                return Err(error(
                    "params.factors",
                    "lowest and highest go with a response-surface plan: add \"design\": \"central-composite\" or \"box-behnken\"",
                ));
            }
            None
        }
        Some(value) => {
            let words = item_text(value, "params.design")?;
            let design = read_design(&words, axial).map_err(|bad| match bad {
                SurfaceWordsError::AxialForBoxBehnken => error("params.axial", bad.to_string()),
                other => error("params.design", other.to_string()),
            })?;
            Some(SurfaceChoice { design, limits })
        }
    };
    let centre_points_given = !matches!(map.get("centrePoints"), None | Some(Value::Null));
    let request = PlanRequest {
        factors,
        responses: text_list(map, "responses")?,
        replicates: optional_count(map, "replicates")?.unwrap_or(1),
        centre_points: optional_count(map, "centrePoints")?.unwrap_or(0),
        blocks: optional_count(map, "blocks")?.unwrap_or(1),
        fraction_runs: optional_count(map, "fractionRuns")?,
        generators: text_list(map, "generators")?,
        seed,
        date,
    };
    Ok(PlanParams {
        request,
        surface,
        centre_points_given,
        work_done_token: work_done_token(map)?,
    })
}

/// The response-surface plan of a size question: `design` ("central-composite" or
/// "box-behnken"), `curvature`, optional `centrePoints` and (central composite) `axial`
/// ("rotatable", "faces" or a distance in coded units).
fn surface_size_design(map: &Map<String, Value>, factors: usize) -> Result<SizeDesign, ParamsError> {
    let design = match map.get("design") {
        Some(value) => item_text(value, "params.design")?,
        None => return Err(error("params.design", "missing")),
    };
    let curvature = optional_number(map, "curvature")?.ok_or_else(|| {
        error(
            "params.curvature",
            "missing; a response-surface plan needs the curvature worth detecting (a square term's coefficient in coded units)",
        )
    })?;
    let axial = match map.get("axial") {
        None | Some(Value::Null) => None,
        Some(value) => {
            let words = item_text(value, "params.axial")?;
            Some(read_axial(&words).map_err(|bad| error("params.axial", bad.to_string()))?)
        }
    };
    let (plan, axial) = read_design(&design, axial)
        .and_then(size_surface)
        .map_err(|bad| match bad {
            SurfaceWordsError::UnknownDesign(_) => error("params.design", bad.to_string()),
            other => error("params.axial", other.to_string()),
        })?;
    Ok(SizeDesign::Surface {
        plan,
        factors,
        centre_points: optional_count(map, "centrePoints")?.unwrap_or(0),
        axial,
        curvature,
    })
}

/// Reads the params of `trialyst/sizeTrial`. A one-factor trial gives
/// `conditions` and `smallestDifference`, or `means`; a two-level trial
/// gives `factors` (a count) and `effect`, with optional
/// `runsPerReplicate`, `centrePoints` and `mainEffectsOnly`; a response-surface plan
/// gives `factors` with `design` and `curvature` (see [`surface_size_design`]). All give
/// `sd`, and optionally `alpha`, `power` and (one factor) `halfWidth`.
///
/// # Errors
///
/// [`ParamsError`] naming the field.
pub fn size_params(params: &Value) -> Result<SizeParams, ParamsError> {
    let map = params_object(params)?;
    let sd = optional_number(map, "sd")?.ok_or_else(|| {
        error(
            "params.sd",
            "missing; give the standard deviation of a single run (from the last trial or a guess)",
        )
    })?;
    let two_level = optional_count(map, "factors")?;
    let design = match two_level {
        Some(factors) if map.get("design").is_some_and(|value| !value.is_null()) => surface_size_design(map, factors)?,
        Some(factors) => SizeDesign::TwoLevel {
            factors,
            runs_per_replicate: optional_count(map, "runsPerReplicate")?,
            centre_points: optional_count(map, "centrePoints")?.unwrap_or(0),
            interactions: !optional_flag(map, "mainEffectsOnly")?.unwrap_or(false),
            effect: optional_number(map, "effect")?.ok_or_else(|| {
                error(
                    "params.effect",
                    "missing; a two-level trial needs the effect worth detecting (high minus low)",
                )
            })?,
        },
        None => {
            let means = match map.get("means") {
                None | Some(Value::Null) => Vec::new(),
                Some(Value::Array(items)) => items
                    .iter()
                    .enumerate()
                    .map(|(index, item)| {
                        item.as_f64().ok_or_else(|| {
                            error(
                                format!("params.means[{index}]"),
                                format!("expected a number, got {}", describe(item)),
                            )
                        })
                    })
                    .collect::<Result<Vec<f64>, ParamsError>>()?,
                Some(other) => {
                    return Err(error(
                        "params.means",
                        format!("expected a list of numbers, got {}", describe(other)),
                    ))
                }
            };
            let difference = optional_number(map, "smallestDifference")?;
            let effect = match (difference, means.is_empty()) {
                (Some(delta), true) => OneWayEffect::SmallestDifference(delta),
                (None, false) => OneWayEffect::Means(means),
                (Some(_), false) => {
                    return Err(error("params.means", "give either smallestDifference or means, not both"))
                }
                (None, true) => {
                    return Err(error(
                        "params.smallestDifference",
                        "missing; give the smallest difference worth detecting, or means, or factors and effect for a two-level trial",
                    ))
                }
            };
            let conditions = match (optional_count(map, "conditions")?, &effect) {
                (Some(count), _) => count,
                (None, OneWayEffect::Means(means)) => means.len(),
                (None, _) => return Err(error("params.conditions", "missing; give the number of conditions")),
            };
            SizeDesign::OneWay { conditions, effect }
        }
    };
    let request = SizeRequest {
        design,
        sd: SdSource::Given(sd),
        alpha: optional_number(map, "alpha")?.unwrap_or(DEFAULT_ALPHA),
        power: optional_number(map, "power")?.unwrap_or(DEFAULT_POWER),
        half_width: optional_number(map, "halfWidth")?,
    };
    Ok(SizeParams {
        request,
        work_done_token: work_done_token(map)?,
    })
}

#[cfg(test)]
mod surface_size_tests {
    use super::*;

    #[test]
    fn a_surface_size_question_is_read_with_its_fields() {
        let params = serde_json::json!({
            "factors": 3, "design": "central-composite", "curvature": 0.8, "centrePoints": 6,
            "axial": "faces", "sd": 1.0
        });
        let read = size_params(&params).expect("read");
        assert_eq!(
            read.request.design,
            SizeDesign::Surface {
                plan: service::plan::size_surface::SurfaceKind::CentralComposite,
                factors: 3,
                centre_points: 6,
                axial: Some(1.0),
                curvature: 0.8,
            }
        );
        let Err(missing) = size_params(&serde_json::json!({ "factors": 3, "design": "box-behnken", "sd": 1.0 })) else {
            panic!("a question without its curvature was read");
        };
        assert!(format!("{missing:?}").contains("params.curvature"), "{missing:?}");
        let Err(wrong) = size_params(&serde_json::json!({
            "factors": 3, "design": "box-behnken", "curvature": 1.0, "axial": 1.5, "sd": 1.0
        })) else {
            panic!("a Box-Behnken question with an axial distance was read");
        };
        assert!(format!("{wrong:?}").contains("params.axial"), "{wrong:?}");
    }

    #[test]
    fn a_surface_size_question_takes_the_words_a_plan_takes() {
        let read = |design: &str, axial: Value| {
            size_params(&serde_json::json!({
                "factors": 2, "design": design, "curvature": 1.0, "axial": axial, "sd": 1.0
            }))
            .map(|params| params.request.design)
        };
        let faces = read("central-composite", Value::from("faces")).expect("hyphenated");
        assert_eq!(
            read("Central composite", Value::from("face centred")).expect("spaced"),
            faces
        );
        assert_eq!(read("central_composite", Value::from(1.0)).expect("a number"), faces);
        let Err(blocks) = read("central-composite", Value::from("orthogonal-blocks")) else {
            panic!("orthogonal blocking was read for a size question, which plans no blocks");
        };
        assert!(format!("{blocks:?}").contains("params.axial"), "{blocks:?}");
        let Err(unknown) = read("simplex", Value::Null) else {
            panic!("an unknown design was read");
        };
        assert!(format!("{unknown:?}").contains("params.design"), "{unknown:?}");
    }
}
