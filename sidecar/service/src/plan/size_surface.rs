//! `trialyst size` for response-surface plans: the power of the tests of the square
//! terms of a central composite or Box-Behnken plan, replicated whole, and the
//! replicates (or, with one replicate, the centre runs) that reach the wanted power.
//!
//! The plan's coded runs come from the plan makers of `engine::design::surface`, the
//! power from `engine::analysis::surface_power` (the noncentral F of the plan's own model
//! matrix). The table's `power` is the least power among the tests of single square
//! terms (they are equal in a symmetric plan); `group_power` the power of the test of the
//! squares together, the 'Square' line of the second-order analysis.

use engine::analysis::surface_power::{second_order_power, SecondOrderPower};
/// Which response-surface plan (re-exported for front ends).
pub use engine::design::surface::SurfaceKind;
use engine::design::surface::{
    make_box_behnken, make_central_composite, AxialDistance, BoxBehnkenRequest, CompositeRequest, CubePart,
    SurfaceFactor,
};
use engine::stats::StatsError;

use super::size::{Needed, PowerRow, SizeAnswer, SizeError, SizeRequest, MAX_TABLE_ROWS};

/// The plan being sized.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SurfaceQuestion {
    /// Which plan.
    pub plan: SurfaceKind,
    /// Number of factors.
    pub factors: usize,
    /// Centre runs in one replicate.
    pub centre_points: usize,
    /// Axial distance (coded) of a central composite plan; `None` for rotatable.
    pub axial: Option<f64>,
    /// A square term's coefficient worth detecting, in coded units.
    pub curvature: f64,
}

/// Most replicates searched.
const MOST_REPLICATES: usize = 200;

/// Most centre runs added to one replicate in the search for the alternative.
const MOST_EXTRA_CENTRES: usize = 60;

/// The coded runs of one replicate with `centre_points` centre runs.
fn one_replicate(question: &SurfaceQuestion, centre_points: usize) -> Result<Vec<Vec<f64>>, SizeError> {
    let factors: Vec<SurfaceFactor> = (0..question.factors)
        .map(|index| SurfaceFactor::new(&format!("factor {}", index + 1), -1.0, 1.0))
        .collect();
    let plan = match question.plan {
        SurfaceKind::CentralComposite => make_central_composite(&CompositeRequest {
            factors,
            axial: question.axial.map_or(AxialDistance::Rotatable, AxialDistance::Given),
            cube: CubePart::Full,
            cube_blocks: 1,
            axial_block: false,
            cube_centre_points: centre_points,
            axial_centre_points: 0,
            seed: Some(1),
        }),
        SurfaceKind::BoxBehnken => make_box_behnken(&BoxBehnkenRequest {
            factors,
            blocks: 1,
            centre_points,
            seed: Some(1),
        }),
    }
    .map_err(|error| SizeError::Plan(error.to_string()))?;
    Ok(plan.runs.into_iter().map(|run| run.coded).collect())
}

fn power_of(
    runs: &[Vec<f64>],
    replicates: usize,
    curvature: f64,
    sd: f64,
    alpha: f64,
) -> Result<SecondOrderPower, StatsError> {
    let all: Vec<Vec<f64>> = (0..replicates).flat_map(|_| runs.iter().cloned()).collect();
    second_order_power(&all, &[], curvature, sd, alpha)
}

/// Answers a size question about a response-surface plan.
///
/// # Errors
///
/// [`SizeError::Plan`] when the plan cannot be made, [`SizeError::Stats`] for unusable
/// inputs or a plan that cannot estimate the model, [`SizeError::Cancelled`].
pub fn surface_answer(
    request: &SizeRequest,
    question: SurfaceQuestion,
    (sd, sd_from, sd_df): (f64, String, Option<f64>),
    mut notes: Vec<String>,
    stop: &dyn Fn() -> Result<(), SizeError>,
) -> Result<SizeAnswer, SizeError> {
    let alpha = request.alpha;
    let target = request.power;
    let runs = one_replicate(&question, question.centre_points)?;
    let per_replicate = runs.len();
    let row_for = |replicates: usize| -> Result<PowerRow, SizeError> {
        // One replicate may leave no residual df; that row says so rather than failing.
        match power_of(&runs, replicates, question.curvature, sd, alpha) {
            Ok(power) => Ok(PowerRow {
                count: replicates,
                total_runs: power.runs,
                residual_df: power.residual_df,
                power: power.least_square_power(),
                group_power: Some(power.group_power),
            }),
            Err(StatsError::TooFewValues { .. }) if replicates == 1 => Ok(PowerRow {
                count: 1,
                total_runs: per_replicate,
                residual_df: 0,
                power: f64::NAN,
                group_power: Some(f64::NAN),
            }),
            Err(error) => Err(error.into()),
        }
    };
    let mut needed = None;
    for replicates in 1..=MOST_REPLICATES {
        stop()?;
        let row = row_for(replicates)?;
        if row.power >= target {
            needed = Some(row);
            break;
        }
    }
    let Some(needed) = needed else {
        return Err(StatsError::NoConvergence {
            what: "replicates search (more than 200 replicates of the plan needed)",
            iterations: MOST_REPLICATES,
        }
        .into());
    };
    let last = (needed.count + 3).max(4);
    let first = 1usize.max(last.saturating_sub(MAX_TABLE_ROWS - 1));
    let mut table = Vec::new();
    for replicates in first..=last {
        stop()?;
        table.push(row_for(replicates)?);
    }
    // With one replicate, how many centre runs would do instead.
    if needed.count > 1 {
        let mut found = None;
        for extra in 1..=MOST_EXTRA_CENTRES {
            stop()?;
            let more = one_replicate(&question, question.centre_points + extra)?;
            if let Ok(power) = power_of(&more, 1, question.curvature, sd, alpha) {
                if power.least_square_power() >= target {
                    found = Some((question.centre_points + extra, power));
                    break;
                }
            }
        }
        notes.push(match found {
            Some((centres, power)) => format!(
                "Instead of replicating: one replicate with {centres} centre runs ({} runs in all) gives each square term's test a power of {:.3}.",
                power.runs,
                power.least_square_power()
            ),
            None => format!(
                "More centre runs alone do not reach the power wanted with one replicate (tried up to {} centre runs); replicate the plan.",
                question.centre_points + MOST_EXTRA_CENTRES
            ),
        });
    }
    if table.iter().any(|row| row.power.is_nan()) {
        notes.push("Where the residual df is 0 the second-order model uses every run, so no test can be made; add centre runs or replicate.".into());
    }
    notes.push(format!(
        "The curvature is a square term's coefficient in coded units: how far the response rises or falls one coded unit from the centre along a factor, beyond the straight line. 'power, each square' is the t test of one square term (the least over the factors); 'power, squares together' the F test of all {} square terms, each of that size.",
        question.factors
    ));
    let axial = match (question.plan, question.axial) {
        (SurfaceKind::BoxBehnken, _) => String::new(),
        (_, None) => ", rotatable".to_string(),
        (_, Some(alpha)) => format!(", axial runs at {alpha} coded units"),
    };
    Ok(SizeAnswer {
        question: format!(
            "Replicates of a {}-run {} in {} factors{axial} with {} centre runs, for the test of a square term to detect a curvature of {}",
            per_replicate, question.plan, question.factors, question.centre_points, question.curvature
        ),
        design: request.design.clone(),
        sd,
        sd_from,
        sd_df,
        alpha,
        target_power: target,
        count_means: "replicates".into(),
        needed: Needed {
            count: needed.count,
            total_runs: needed.total_runs,
            power: needed.power,
        },
        half_width: None,
        table,
        notes,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::plan::size::{size_answer, size_book, SdSource, SizeDesign};

    fn request(plan: SurfaceKind, factors: usize, centre_points: usize, curvature: f64, sd: f64) -> SizeRequest {
        SizeRequest {
            design: SizeDesign::Surface {
                plan,
                factors,
                centre_points,
                axial: None,
                curvature,
            },
            sd: SdSource::Given(sd),
            alpha: 0.05,
            power: 0.8,
            half_width: None,
        }
    }

    /// The rotatable two-factor composite with five centre runs, curvature 1, SD 1.5:
    /// scipy 1.17.1 `stats.ncf.sf` with numpy 2.4.6 noncentralities
    /// (engine `analysis/surface_power/testdata/make_surface_power_reference.py`) gives
    /// each square's power 0.3304659142820107 with one replicate and 0.6576691214268962
    /// with two; the squares together 0.37432098118202606 and 0.7887387007743737.
    #[test]
    fn the_table_holds_the_reference_powers_and_the_replicates_needed() {
        let answer = size_answer(&request(SurfaceKind::CentralComposite, 2, 5, 1.0, 1.5)).expect("answer");
        let one = &answer.table[0];
        assert_eq!((one.count, one.total_runs, one.residual_df), (1, 13, 7));
        assert!((one.power - 0.3304659142820107).abs() < 1e-9, "{}", one.power);
        assert!((one.group_power.expect("group") - 0.37432098118202606).abs() < 1e-9);
        let two = &answer.table[1];
        assert_eq!((two.total_runs, two.residual_df), (26, 20));
        assert!((two.power - 0.6576691214268962).abs() < 1e-9, "{}", two.power);
        assert!((two.group_power.expect("group") - 0.7887387007743737).abs() < 1e-9);
        // The replicates needed: the first row at or above 0.8, the row before below it.
        let at = answer
            .table
            .iter()
            .position(|row| row.count == answer.needed.count)
            .expect("row");
        assert!(answer.table[at].power >= 0.8 && answer.table[at - 1].power < 0.8);
        assert_eq!(answer.needed.count, 3);
        assert!(
            answer.notes.iter().any(|note| note.contains("centre runs")),
            "{:?}",
            answer.notes
        );
        let book = size_book(&answer);
        let sheet = &book.sheets[0];
        assert!(sheet.cells.iter().any(
            |cell| matches!(&cell.value, workbook_io::write::Value::Text(text) if text == "power, squares together")
        ));
    }

    #[test]
    fn box_behnken_plans_are_sized_too() {
        // Box-Behnken in three factors with three centre runs, curvature 1, SD 1.2: each
        // square 0.2568902764515278 with one replicate (same reference script).
        let answer = size_answer(&request(SurfaceKind::BoxBehnken, 3, 3, 1.0, 1.2)).expect("answer");
        assert!(
            (answer.table[0].power - 0.2568902764515278).abs() < 1e-9,
            "{}",
            answer.table[0].power
        );
        assert!(answer.needed.power >= 0.8);
        // Too many factors for a Box-Behnken plan: the plan maker's refusal, in words.
        let error = size_answer(&request(SurfaceKind::BoxBehnken, 9, 3, 1.0, 1.2)).expect_err("refused");
        assert!(error.to_string().contains("factor"), "{error}");
    }
}
