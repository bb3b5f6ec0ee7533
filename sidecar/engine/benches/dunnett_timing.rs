//! Times the product-correlation probabilities and critical values behind comparisons
//! with a control (Dunnett) and with the best (Hsu) for 20 conditions of unequal sizes
//! (sizes proportional to c + 1 for c = 0..20, 1,000,000 values in all; an invented
//! layout, as in the assessment benchmark), at several df.
//!
//! Run in release (the bench profile): `cargo bench -p engine --bench dunnett_timing`.

// Benchmarks and examples report on the terminal.
#![allow(clippy::print_stdout, clippy::print_stderr)]

use std::fmt;
use std::sync::atomic::{AtomicUsize, Ordering};

use divan::Bencher;
use engine::stats::dunnett::{
    dunnett_lambdas, mcb_critical_values, product_correlation_cdf, product_correlation_quantile, Sides,
};

fn main() {
    divan::main();
}

/// The sizes of the 20 conditions.
fn sizes() -> Vec<f64> {
    (0..20)
        .map(|condition| (1_000_000.0 * (condition as f64 + 1.0) / 210.0).round())
        .collect()
}

/// The df of the timed cases: the pooled df of the layout, then smaller ones and none.
fn dfs() -> [f64; 5] {
    let total: f64 = sizes().iter().sum();
    [total - 20.0, 200.0, 30.0, 8.0, f64::INFINITY]
}

/// A df and the sides of the comparison with a control.
#[derive(Clone, Copy)]
struct DfAndSides {
    df: f64,
    sides: Sides,
}

impl fmt::Display for DfAndSides {
    fn fmt(&self, formatter: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(formatter, "df {}, {:?}", self.df, self.sides)
    }
}

fn cases() -> impl Iterator<Item = DfAndSides> {
    dfs().into_iter().flat_map(|df| {
        [Sides::Two, Sides::One]
            .into_iter()
            .map(move |sides| DfAndSides { df, sides })
    })
}

/// The critical value of the comparisons with a control at 95%.
#[divan::bench(args = cases(), sample_count = 10)]
fn control_critical_value(bencher: Bencher<'_, '_>, case: DfAndSides) {
    let sizes = sizes();
    let lambdas = dunnett_lambdas(sizes[0], &sizes[1..]).expect("sizes");
    bencher.bench(|| product_correlation_quantile(0.95, &lambdas, case.df, case.sides).expect("quantile"));
}

/// One probability of the comparisons with a control (the workload cycles through 19
/// points, 0.5 to 4.1).
#[divan::bench(args = cases(), sample_count = 10)]
fn control_probability(bencher: Bencher<'_, '_>, case: DfAndSides) {
    let sizes = sizes();
    let lambdas = dunnett_lambdas(sizes[0], &sizes[1..]).expect("sizes");
    let step = AtomicUsize::new(0);
    bencher
        .with_inputs(|| 0.5 + 0.2 * (step.fetch_add(1, Ordering::Relaxed) % 19) as f64)
        .bench_values(|point| product_correlation_cdf(point, &lambdas, case.df, case.sides).expect("cdf"));
}

/// The critical values of the comparisons with the best, one per condition.
#[divan::bench(args = dfs(), sample_count = 10)]
fn best_critical_values(bencher: Bencher<'_, '_>, df: f64) {
    let sizes = sizes();
    bencher.bench(|| mcb_critical_values(&sizes, df, 0.95).expect("critical values"));
}
