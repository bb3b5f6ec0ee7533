//! Times the planning work: the generator search for a 2^(11-5) fraction
//! (target: under 1 s), a whole 2^(11-5) plan with blocks, and the answers
//! of `trialyst size` (target: under 20 ms each).
//!
//! Run: `cargo run --release -p sidecar --example plan_timing`

use std::time::Instant;

use engine::analysis::power::OneWayEffect;
use engine::stats::two_level::{minimum_aberration_design, DEFAULT_SEARCH_BUDGET};
use service::plan::size::{SdSource, SizeDesign};
use service::plan::{make_plan, size_answer, FactorSpec, PlanRequest, SizeRequest};

/// Runs `work` `repeats` times and returns the slowest and median times in ms.
fn time_ms(repeats: usize, mut work: impl FnMut()) -> (f64, f64) {
    let mut times: Vec<f64> = (0..repeats)
        .map(|_| {
            let started = Instant::now();
            work();
            started.elapsed().as_secs_f64() * 1e3
        })
        .collect();
    times.sort_by(f64::total_cmp);
    (times[times.len() - 1], times[times.len() / 2])
}

fn main() {
    let (slowest, median) = time_ms(5, || {
        let found = minimum_aberration_design(11, 5, DEFAULT_SEARCH_BUDGET).expect("design");
        assert_eq!(found.relation.n_runs(), 64);
    });
    println!("generator search 2^(11-5): median {median:.2} ms, slowest {slowest:.2} ms (target 1000 ms)");

    let letters = ["A", "B", "C", "D", "E", "F", "G", "H", "J", "K", "L"];
    let request = PlanRequest {
        factors: letters.iter().map(|name| FactorSpec::new(name, &["-1", "1"])).collect(),
        responses: vec!["Strength".into()],
        fraction_runs: Some(64),
        blocks: 4,
        centre_points: 2,
        seed: Some(1),
        ..PlanRequest::default()
    };
    let (slowest, median) = time_ms(5, || {
        let plan = make_plan(&request).expect("plan");
        assert_eq!(plan.runs.len(), 64 + 8);
    });
    println!("whole 2^(11-5) plan in 4 blocks: median {median:.2} ms, slowest {slowest:.2} ms");

    let questions = [
        (
            "one-way, smallest difference, with half-width",
            SizeRequest {
                design: SizeDesign::OneWay {
                    conditions: 5,
                    effect: OneWayEffect::SmallestDifference(0.8),
                },
                sd: SdSource::Given(1.0),
                alpha: 0.05,
                power: 0.9,
                half_width: Some(0.5),
            },
        ),
        (
            "one-way, tiny difference (large n)",
            SizeRequest {
                design: SizeDesign::OneWay {
                    conditions: 8,
                    effect: OneWayEffect::SmallestDifference(0.05),
                },
                sd: SdSource::Given(1.0),
                alpha: 0.01,
                power: 0.95,
                half_width: None,
            },
        ),
        (
            "two-level 2^(7-3), effect 1 SD",
            SizeRequest {
                design: SizeDesign::TwoLevel {
                    factors: 7,
                    runs_per_replicate: Some(16),
                    centre_points: 4,
                    interactions: true,
                    effect: 1.0,
                },
                sd: SdSource::Given(1.0),
                alpha: 0.05,
                power: 0.8,
                half_width: None,
            },
        ),
    ];
    for (name, question) in &questions {
        let (slowest, median) = time_ms(20, || {
            size_answer(question).expect("answer");
        });
        println!("size: {name}: median {median:.3} ms, slowest {slowest:.3} ms (target 20 ms)");
    }
}
