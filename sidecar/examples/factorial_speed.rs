//! Timing of the factorial analysis (not a test): a 4 × 3 × 5 trial with 1,000,000
//! records, and a 2^(8-3) screening design (effects, Lenth, aliases), both built in
//! memory so that only the analysis after reading is timed.
//!
//! Run: `cargo run --release -p sidecar --example factorial_speed`

use std::time::Instant;

use engine::analysis::factorial::{analyse_factorial, FactorData, FactorialData, FactorialOptions};
use engine::stats::accumulate::GroupAccumulator;
use engine::stats::two_level_analysis::{analyse_two_level, AnalysisOptions};

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

struct Factor {
    name: String,
    levels: Vec<String>,
    level_of_record: Vec<u32>,
}

fn factor(name: &str, levels: Vec<String>, level_of_record: Vec<u32>) -> Factor {
    Factor {
        name: name.into(),
        levels,
        level_of_record,
    }
}

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

fn table(factors: Vec<Factor>, values: Vec<f64>) -> Table {
    Table { factors, values }
}

fn best_of<T>(repeats: usize, mut work: impl FnMut() -> T) -> (f64, T) {
    let mut best = f64::INFINITY;
    let mut last = None;
    for _ in 0..repeats {
        let started = Instant::now();
        let result = work();
        best = best.min(started.elapsed().as_secs_f64() * 1e3);
        last = Some(result);
    }
    (best, last.expect("at least one repeat"))
}

fn main() {
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
        .map(|((name, n), column)| factor(name, (0..n).map(|l| format!("{name} {}", l + 1)).collect(), column))
        .collect();
    // The cell sums alone, for comparison: the one-way accumulator over the 60 cells.
    let cell_of: Vec<usize> = (0..n_records)
        .map(|r| {
            factors.iter().fold(0usize, |index, f| {
                index * f.levels.len() + f.level_of_record[r] as usize
            })
        })
        .collect();
    let (sums_ms, _) = best_of(5, || {
        let mut accumulator = GroupAccumulator::new(60);
        for (&cell, &value) in cell_of.iter().zip(&values) {
            let _ = accumulator.push(cell, value);
        }
        accumulator.finish()
    });
    println!("cell sums alone (exact decimal accumulator, 60 cells): {sums_ms:.1} ms");
    let big = table(factors, values);
    let settings = FactorialOptions::default();
    let (milliseconds, outcome) = best_of(5, || analyse_factorial(&big.data(), &settings));
    let outcome = outcome.expect("outcome");
    println!(
        "4 x 3 x 5 trial, {n_records} records: factorial analysis {milliseconds:.1} ms (best of 5); {} cells, residual df {}",
        outcome.cells.n_present,
        outcome.model.as_ref().map_or(0, |model| model.residual_df)
    );

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
    let options = AnalysisOptions::default();
    let (core_ms, analysis) = best_of(50, || analyse_two_level(&runs, &responses, &options));
    let analysis = analysis.expect("two-level analysis");
    println!(
        "2^(8-3) screening, effects + Lenth + aliases (two-level core): {core_ms:.3} ms (best of 50); {} effects",
        analysis.effects.len()
    );
    let letters = ["A", "B", "C", "D", "E", "F", "G", "H"];
    let screening_factors: Vec<Factor> = (0..8)
        .map(|f| {
            let column: Vec<u32> = runs.iter().map(|run| u32::from(run[f] > 0.0)).collect();
            factor(letters[f], vec!["-1".into(), "1".into()], column)
        })
        .collect();
    let screening = table(screening_factors, responses.clone());
    let (full_ms, outcome) = best_of(20, || analyse_factorial(&screening.data(), &settings));
    let outcome = outcome.expect("outcome");
    println!(
        "2^(8-3) screening, whole factorial analysis (k-way model, two-level, reduced model, text): {full_ms:.2} ms (best of 20); design {}",
        outcome.two_level.as_ref().map_or("none".to_string(), |two| two.design.name.clone())
    );
}
