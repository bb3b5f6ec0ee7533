//! Times the planning work: the generator search for a 2^(11-5) fraction (target:
//! under 1 s), a whole 2^(11-5) plan in 4 blocks with 2 centre points per block, and
//! the answers of `trialyst size` (target: under 20 ms each).
//!
//! Run in release (the bench profile): `cargo bench -p service --bench plan_timing`.

// Benchmarks and examples report on the terminal.
#![allow(clippy::print_stdout, clippy::print_stderr)]

use std::fmt;

use divan::Bencher;
use engine::analysis::power::OneWayEffect;
use engine::stats::two_level::{minimum_aberration_design, DEFAULT_SEARCH_BUDGET};
use service::plan::size::{SdSource, SizeDesign};
use service::plan::{make_plan, size_answer, FactorSpec, PlanRequest, SizeRequest};

fn main() {
    divan::main();
}

/// The generator search for a 2^(11-5) fraction of 64 runs.
#[divan::bench(sample_count = 5)]
fn generator_search_2_11_5(bencher: Bencher<'_, '_>) {
    bencher.bench(|| {
        let found = minimum_aberration_design(11, 5, DEFAULT_SEARCH_BUDGET).expect("design");
        assert_eq!(found.relation.n_runs(), 64);
    });
}

/// A whole 2^(11-5) plan in 4 blocks with 2 centre points in each.
#[divan::bench(sample_count = 5)]
fn whole_2_11_5_plan_in_4_blocks(bencher: Bencher<'_, '_>) {
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
    bencher.bench(|| {
        let plan = make_plan(&request).expect("plan");
        assert_eq!(plan.runs.len(), 64 + 8);
    });
}

/// A `trialyst size` question by name.
#[derive(Clone, Copy, Debug)]
enum SizeQuestion {
    OneWaySmallestDifferenceWithHalfWidth,
    OneWayTinyDifference,
    TwoLevel7Factors16RunsEffect1Sd,
}

impl fmt::Display for SizeQuestion {
    fn fmt(&self, formatter: &mut fmt::Formatter<'_>) -> fmt::Result {
        formatter.write_str(match self {
            SizeQuestion::OneWaySmallestDifferenceWithHalfWidth => "one-way, smallest difference, with half-width",
            SizeQuestion::OneWayTinyDifference => "one-way, tiny difference (large n)",
            SizeQuestion::TwoLevel7Factors16RunsEffect1Sd => "two-level 2^(7-3), effect 1 SD",
        })
    }
}

impl SizeQuestion {
    fn request(self) -> SizeRequest {
        match self {
            SizeQuestion::OneWaySmallestDifferenceWithHalfWidth => SizeRequest {
                design: SizeDesign::OneWay {
                    conditions: 5,
                    effect: OneWayEffect::SmallestDifference(0.8),
                },
                sd: SdSource::Given(1.0),
                alpha: 0.05,
                power: 0.9,
                half_width: Some(0.5),
            },
            SizeQuestion::OneWayTinyDifference => SizeRequest {
                design: SizeDesign::OneWay {
                    conditions: 8,
                    effect: OneWayEffect::SmallestDifference(0.05),
                },
                sd: SdSource::Given(1.0),
                alpha: 0.01,
                power: 0.95,
                half_width: None,
            },
            SizeQuestion::TwoLevel7Factors16RunsEffect1Sd => SizeRequest {
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
        }
    }
}

/// The answer to one `trialyst size` question.
#[divan::bench(args = [
    SizeQuestion::OneWaySmallestDifferenceWithHalfWidth,
    SizeQuestion::OneWayTinyDifference,
    SizeQuestion::TwoLevel7Factors16RunsEffect1Sd,
], sample_count = 20)]
fn size_answer_to(bencher: Bencher<'_, '_>, question: SizeQuestion) {
    let request = question.request();
    bencher.bench(|| size_answer(&request).expect("answer"));
}
