//! Times the factorial analysis: a 4 × 3 × 5 trial with 1,000,000 records (and the
//! cell sums alone, for comparison), and a 2^(8-3) screening design (effects, Lenth,
//! aliases; the two-level core and the whole analysis), both built in memory so that
//! only the analysis after reading is timed.
//!
//! Run in release (the bench profile): `cargo bench -p engine --bench factorial_speed`.

// Benchmarks and examples report on the terminal.
#![allow(clippy::print_stdout, clippy::print_stderr)]

use std::sync::LazyLock;

use divan::Bencher;
use engine::analysis::factorial::{analyse_factorial, FactorData, FactorialData, FactorialOptions};
use engine::stats::accumulate::GroupAccumulator;
use engine::stats::two_level_analysis::{analyse_two_level, AnalysisOptions};

fn main() {
    divan::main();
}

/// A small deterministic generator (xorshift64*).
struct Draws(u64);

impl Draws {
    fn next(&mut self) -> u64 {
        self.0 ^= self.0 >> 12;
        self.0 ^= self.0 << 25;
        self.0 ^= self.0 >> 27;
        self.0.wrapping_mul(0x2545_F491_4F6C_DD1D)
    }
    fn unit(&mut self) -> f64 {
        (self.next() >> 11) as f64 / (1u64 << 53) as f64
    }
}

/// A factor column of a table.
struct Factor {
    name: String,
    levels: Vec<String>,
    level_of_record: Vec<u32>,
}

/// A trial table held in memory.
struct Table {
    factors: Vec<Factor>,
    values: Vec<f64>,
}

impl Table {
    fn data(&self) -> FactorialData<'_> {
        FactorialData {
            factors: self
                .factors
                .iter()
                .map(|factor| FactorData {
                    name: &factor.name,
                    levels: &factor.levels,
                    level_of_record: &factor.level_of_record,
                    is_block: false,
                })
                .collect(),
            response_name: "Yield",
            values: &self.values,
        }
    }
}

/// The two workloads, drawn from one stream in a fixed order.
struct Workloads {
    /// The 4 × 3 × 5 trial of 1,000,000 records.
    large: Table,
    /// The cell (0..60) of each record of the large trial.
    cell_of: Vec<usize>,
    /// The 32 runs of the 2^(8-3) design, coded -1/+1, and their responses.
    screening_runs: Vec<Vec<f64>>,
    screening: Table,
}

static WORKLOADS: LazyLock<Workloads> = LazyLock::new(workloads);

fn workloads() -> Workloads {
    let mut draws = Draws(0x1234_5678_9ABC_DEF1);
    let n_records = 1_000_000usize;
    let shape = [4usize, 3, 5];
    let mut columns: Vec<Vec<u32>> = (0..3).map(|_| Vec::with_capacity(n_records)).collect();
    let mut values = Vec::with_capacity(n_records);
    for _ in 0..n_records {
        let levels: Vec<u32> = shape.iter().map(|&n| (draws.next() % n as u64) as u32).collect();
        let y = 50.0 + 1.5 * levels[0] as f64 - 0.7 * levels[1] as f64
            + 0.2 * (levels[0] * levels[2]) as f64
            + 4.0 * (draws.unit() - 0.5);
        for (column, level) in columns.iter_mut().zip(&levels) {
            column.push(*level);
        }
        values.push((y * 100.0).round() / 100.0);
    }
    let names = ["Supplier", "Line", "Shift"];
    let factors: Vec<Factor> = names
        .iter()
        .zip(shape)
        .zip(columns)
        .map(|((name, n), column)| Factor {
            name: name.to_string(),
            levels: (0..n).map(|level| format!("{name} {}", level + 1)).collect(),
            level_of_record: column,
        })
        .collect();
    let cell_of: Vec<usize> = (0..n_records)
        .map(|record| {
            factors.iter().fold(0usize, |index, factor| {
                index * factor.levels.len() + factor.level_of_record[record] as usize
            })
        })
        .collect();
    let large = Table { factors, values };

    // 2^(8-3) with F = ABC, G = ABD, H = BCDE (resolution IV), 32 runs, unreplicated.
    let mut runs = Vec::new();
    let mut responses = Vec::new();
    for run in 0..32usize {
        let mut levels: Vec<f64> = (0..5)
            .map(|bit| if run & (1 << bit) != 0 { 1.0 } else { -1.0 })
            .collect();
        levels.push(levels[0] * levels[1] * levels[2]);
        levels.push(levels[0] * levels[1] * levels[3]);
        levels.push(levels[1] * levels[2] * levels[3] * levels[4]);
        responses.push(20.0 + 3.0 * levels[0] - 2.0 * levels[2] + 1.5 * levels[0] * levels[2] + draws.unit());
        runs.push(levels);
    }
    let letters = ["A", "B", "C", "D", "E", "F", "G", "H"];
    let screening_factors: Vec<Factor> = (0..8)
        .map(|factor| Factor {
            name: letters[factor].to_string(),
            levels: vec!["-1".into(), "1".into()],
            level_of_record: runs.iter().map(|run| u32::from(run[factor] > 0.0)).collect(),
        })
        .collect();
    Workloads {
        large,
        cell_of,
        screening_runs: runs,
        screening: Table {
            factors: screening_factors,
            values: responses,
        },
    }
}

/// The cell sums alone: the exact decimal accumulator over the 60 cells of the large trial.
#[divan::bench(sample_count = 10)]
fn cell_sums_of_the_4x3x5_trial(bencher: Bencher<'_, '_>) {
    let workloads = &*WORKLOADS;
    bencher.bench(|| {
        let mut accumulator = GroupAccumulator::new(60);
        for (&cell, &value) in workloads.cell_of.iter().zip(&workloads.large.values) {
            let _ = accumulator.push(cell, value);
        }
        accumulator.finish()
    });
}

/// The whole factorial analysis of the 4 × 3 × 5 trial of 1,000,000 records.
#[divan::bench(sample_count = 10)]
fn factorial_analysis_of_the_4x3x5_trial(bencher: Bencher<'_, '_>) {
    let workloads = &*WORKLOADS;
    let options = FactorialOptions::default();
    bencher.bench(|| analyse_factorial(&workloads.large.data(), &options).expect("outcome"));
}

/// The two-level core on the 2^(8-3) screening design: effects, Lenth, aliases.
#[divan::bench]
fn screening_two_level_core(bencher: Bencher<'_, '_>) {
    let workloads = &*WORKLOADS;
    let options = AnalysisOptions::default();
    bencher.bench(|| {
        analyse_two_level(&workloads.screening_runs, &workloads.screening.values, &options).expect("analysis")
    });
}

/// The whole factorial analysis of the 2^(8-3) screening design (k-way model,
/// two-level analysis, reduced model, text).
#[divan::bench]
fn screening_whole_factorial_analysis(bencher: Bencher<'_, '_>) {
    let workloads = &*WORKLOADS;
    let options = FactorialOptions::default();
    bencher.bench(|| analyse_factorial(&workloads.screening.data(), &options).expect("outcome"));
}
