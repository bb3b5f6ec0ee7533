//! Times the studentized range distribution function, upper tail and quantile over a
//! grid of group counts and degrees of freedom, the far upper tail, the first calls on
//! a fresh thread (before the per-thread cache of range distributions is filled), and
//! sequences of calls like those of the Games-Howell and Tukey-Kramer comparisons.
//!
//! Run in release (the bench profile): `cargo bench -p engine --bench srange_timing`;
//! pass a filter to run part of it, e.g. `-- quantile`. Each call's argument moves a
//! little from one iteration to the next, as in the workloads this replaced, so that
//! no result is merely repeated.

// Benchmarks and examples report on the terminal.
#![allow(clippy::print_stdout, clippy::print_stderr)]

use std::fmt;
use std::sync::atomic::{AtomicUsize, Ordering};

use divan::{black_box, Bencher};
use engine::stats::studentized_range::{studentized_range_cdf, studentized_range_quantile, studentized_range_sf};

fn main() {
    divan::main();
}

/// One point of the grid: the number of groups and the degrees of freedom.
#[derive(Clone, Copy)]
struct GroupsAndDf {
    groups: usize,
    df: f64,
}

impl fmt::Display for GroupsAndDf {
    fn fmt(&self, formatter: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(formatter, "k {:>3}, df {}", self.groups, self.df)
    }
}

/// The grid of group counts and degrees of freedom (7 × 7 points).
fn grid() -> impl Iterator<Item = GroupsAndDf> {
    const GROUP_COUNTS: [usize; 7] = [2, 3, 5, 10, 20, 50, 100];
    const DFS: [f64; 7] = [2.0, 5.0, 10.0, 30.0, 120.0, 1000.0, f64::INFINITY];
    GROUP_COUNTS
        .into_iter()
        .flat_map(|groups| DFS.into_iter().map(move |df| GroupsAndDf { groups, df }))
}

/// The points at which the first calls on a fresh thread are timed.
const FRESH_THREAD_POINTS: [GroupsAndDf; 5] = [
    GroupsAndDf { groups: 3, df: 10.0 },
    GroupsAndDf { groups: 20, df: 10.0 },
    GroupsAndDf { groups: 100, df: 10.0 },
    GroupsAndDf { groups: 20, df: 2.0 },
    GroupsAndDf { groups: 20, df: 1000.0 },
];

/// A step counter cycling through 20 small moves of the argument.
fn steps() -> impl Fn() -> f64 + Sync {
    let step = AtomicUsize::new(0);
    move || (step.fetch_add(1, Ordering::Relaxed) % 20) as f64
}

#[divan::bench(args = grid())]
fn cdf(bencher: Bencher<'_, '_>, point: GroupsAndDf) {
    bencher
        .with_inputs(steps())
        .bench_values(|step| studentized_range_cdf(2.0 + 0.01 * step, point.groups, point.df).unwrap_or(0.0));
}

#[divan::bench(args = grid())]
fn sf(bencher: Bencher<'_, '_>, point: GroupsAndDf) {
    bencher
        .with_inputs(steps())
        .bench_values(|step| studentized_range_sf(4.0 + 0.01 * step, point.groups, point.df).unwrap_or(0.0));
}

#[divan::bench(args = grid())]
fn quantile(bencher: Bencher<'_, '_>, point: GroupsAndDf) {
    bencher
        .with_inputs(steps())
        .bench_values(|step| studentized_range_quantile(0.95 + 0.0001 * step, point.groups, point.df).unwrap_or(0.0));
}

/// The far upper tail: the upper tail near 1e-6.
#[divan::bench(args = grid())]
fn sf_tail(bencher: Bencher<'_, '_>, point: GroupsAndDf) {
    let start = studentized_range_quantile(0.999_999, point.groups, point.df).unwrap_or(10.0);
    bencher
        .with_inputs(steps())
        .bench_values(|step| studentized_range_sf(start + 0.01 * step, point.groups, point.df).unwrap_or(0.0));
}

/// The far upper tail: the 0.999999 quantile.
#[divan::bench(args = grid())]
fn quantile_tail(bencher: Bencher<'_, '_>, point: GroupsAndDf) {
    bencher.with_inputs(steps()).bench_values(|step| {
        studentized_range_quantile(0.999_999 - 1e-8 * step, point.groups, point.df).unwrap_or(0.0)
    });
}

/// The first quantile and the next upper tail on a fresh thread, whose cache of range
/// tables is empty (the time includes starting the thread).
#[divan::bench(args = FRESH_THREAD_POINTS)]
fn fresh_thread_quantile_then_sf(bencher: Bencher<'_, '_>, point: GroupsAndDf) {
    bencher.bench(|| {
        std::thread::spawn(move || {
            let quantile = studentized_range_quantile(0.95, point.groups, point.df).unwrap_or(0.0);
            black_box(quantile) + studentized_range_sf(4.5, point.groups, point.df).unwrap_or(0.0)
        })
        .join()
        .unwrap_or(f64::NAN)
    });
}

/// A pair sequence: the number of groups and the range of the pairs' df.
#[derive(Clone, Copy)]
struct PairSequence {
    groups: usize,
    low_df: f64,
    high_df: f64,
}

impl fmt::Display for PairSequence {
    fn fmt(&self, formatter: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(formatter, "k {}, df {} to {}", self.groups, self.low_df, self.high_df)
    }
}

/// Games-Howell-like: every pair of k conditions (190 for 20), each with its own df,
/// one quantile and one upper tail per pair.
#[divan::bench(args = [
    PairSequence { groups: 20, low_df: 8.0, high_df: 60.0 },
    PairSequence { groups: 20, low_df: 500.0, high_df: 50_000.0 },
    PairSequence { groups: 7, low_df: 3.0, high_df: 12.0 },
])]
fn pairs_each_at_its_own_df(bencher: Bencher<'_, '_>, sequence: PairSequence) {
    let n_pairs = sequence.groups * (sequence.groups - 1) / 2;
    bencher.bench(|| {
        let mut total = 0.0;
        for pair in 0..n_pairs {
            let df = sequence.low_df + (sequence.high_df - sequence.low_df) * pair as f64 / n_pairs as f64;
            total += studentized_range_quantile(0.95, sequence.groups, df).unwrap_or(0.0);
            total += studentized_range_sf(1.0 + 0.03 * pair as f64, sequence.groups, df).unwrap_or(0.0);
        }
        total
    });
}

/// Tukey-Kramer-like: one quantile and 190 upper tails at k 20, df 45.
#[divan::bench]
fn one_quantile_and_190_sf_at_one_df(bencher: Bencher<'_, '_>) {
    bencher.bench(|| {
        let mut total = studentized_range_quantile(0.95, 20, 45.0).unwrap_or(0.0);
        for pair in 0..190 {
            total += studentized_range_sf(1.0 + 0.03 * pair as f64, 20, 45.0).unwrap_or(0.0);
        }
        total
    });
}
