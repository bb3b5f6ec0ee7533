//! Times the response-surface work after reading: a seven-factor central
//! composite plan (resolution V cube of 64 runs, 14 axial runs, 6 centre
//! runs) with three responses, each fitted by the second-order analysis, and
//! the desirability compromise over the three (target under 50 ms); and the
//! fold-over choice for a 2^(11-7) screen with five aliased active effects
//! (target under 100 ms).
//!
//! Run in release (the bench profile): `cargo bench -p engine --bench surface_timing`.

// Benchmarks and examples report on the terminal.
#![allow(clippy::print_stdout, clippy::print_stderr)]

use std::sync::LazyLock;

use engine::analysis::desirability::{maximise_desirability, Goal, ResponseGoal};
use engine::analysis::next_trial::{choose_fold_over, ScreenEffect, ScreenSummary};
use engine::analysis::surface::{analyse_surface, SurfaceData, SurfaceOptions};
use engine::design::random::SplitMix64;
use engine::design::surface::{make_central_composite, AxialDistance, CompositeRequest, CubePart, SurfaceFactor};
use engine::options::Direction;
use engine::stats::two_level::{minimum_aberration_design, Word, DEFAULT_SEARCH_BUDGET};

fn main() {
    divan::main();
}

/// Three responses of a seven-factor composite plan, filled from known quadratics with noise.
static SEVEN_FACTORS: LazyLock<Vec<SurfaceData>> = LazyLock::new(|| {
    let factors: Vec<SurfaceFactor> = (0..7)
        .map(|index| SurfaceFactor::new(&format!("Factor {index}"), 10.0, 20.0 + index as f64))
        .collect();
    let plan = make_central_composite(&CompositeRequest {
        factors: factors.clone(),
        axial: AxialDistance::Rotatable,
        cube: CubePart::ResolutionFive,
        cube_blocks: 1,
        axial_block: false,
        cube_centre_points: 6,
        axial_centre_points: 0,
        seed: Some(1),
    })
    .expect("plan");
    let mut draws = SplitMix64::new(42);
    let mut noise = move || ((draws.next_u64() >> 11) as f64 / (1u64 << 53) as f64) - 0.5;
    (0..3)
        .map(|response| {
            let values = plan
                .runs
                .iter()
                .map(|run| {
                    let x = &run.coded;
                    let linear: f64 = x
                        .iter()
                        .enumerate()
                        .map(|(i, v)| (i as f64 - 3.0 + response as f64) * v)
                        .sum();
                    let square: f64 = x.iter().map(|v| v * v).sum();
                    50.0 + linear - (1.0 + response as f64) * square + x[0] * x[1] + noise()
                })
                .collect();
            SurfaceData {
                factor_names: factors.iter().map(|factor| factor.name.clone()).collect(),
                coding: factors
                    .iter()
                    .map(|factor| (factor.centre(), factor.half_range()))
                    .collect(),
                settings: plan.runs.iter().map(|run| run.real.clone()).collect(),
                blocks: Vec::new(),
                values,
            }
        })
        .collect()
});

#[divan::bench]
fn seven_factor_composite_three_responses_with_desirability() {
    let options = SurfaceOptions {
        confidence: 0.95,
        direction: Some(Direction::HigherIsBetter),
    };
    let fits: Vec<_> = SEVEN_FACTORS
        .iter()
        .map(|data| analyse_surface(divan::black_box(data), &options).expect("fit"))
        .collect();
    let goals = [
        ResponseGoal {
            goal: Goal::Higher { low: 40.0, high: 60.0 },
            weight: 1.0,
            importance: 1.0,
        },
        ResponseGoal {
            goal: Goal::Lower { low: 30.0, high: 55.0 },
            weight: 1.0,
            importance: 1.0,
        },
        ResponseGoal {
            goal: Goal::Target {
                low: 40.0,
                target: 48.0,
                high: 56.0,
            },
            weight: 1.0,
            importance: 1.0,
        },
    ];
    let refs: Vec<_> = fits.iter().collect();
    divan::black_box(maximise_desirability(&refs, &goals, 7).expect("compromise"));
}

/// The 2^(11-7) screen with five active main effects, each aliased with two-factor interactions.
static SCREEN: LazyLock<ScreenSummary> = LazyLock::new(|| {
    let design = minimum_aberration_design(11, 7, DEFAULT_SEARCH_BUDGET).expect("design");
    let factors = (0..11)
        .map(|index| SurfaceFactor::new(&format!("Factor {index}"), 0.0, 1.0 + index as f64))
        .collect();
    let effects = ["A", "B", "C", "D", "E"]
        .iter()
        .map(|text| ScreenEffect {
            word: Word::parse(text).expect("word"),
            effect: 3.0,
            active: true,
        })
        .collect();
    ScreenSummary {
        factors,
        cube_runs: design.relation.n_runs(),
        relation: design.relation,
        effects,
        effect_se: Some(0.4),
        error_df: 4.0,
        curvature_p: None,
        centre_runs: 0,
        blocks: 1,
        direction: Some(Direction::HigherIsBetter),
        alpha: 0.05,
    }
});

#[divan::bench]
fn fold_over_choice_for_a_2_11_7_screen() {
    divan::black_box(choose_fold_over(divan::black_box(&SCREEN)).expect("fold-over"));
}
