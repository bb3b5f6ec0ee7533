//! Times the studentized range distribution function, upper tail and quantile over
//! a grid of group counts and degrees of freedom, and a Games-Howell-like sequence
//! of 190 quantile and upper-tail calls, each at its own df, and the first calls on a
//! thread (before the per-thread cache of range distributions is filled). Run in release:
//! `cargo run --release -p sidecar --example srange_timing`

use std::hint::black_box;
use std::time::Instant;

use engine::stats::studentized_range::{studentized_range_cdf, studentized_range_quantile, studentized_range_sf};

/// Best time in microseconds of `repeats` runs of `run`, the run index passed in.
fn best_of(repeats: usize, mut run: impl FnMut(usize) -> f64) -> f64 {
    let mut best = f64::MAX;
    for index in 0..repeats {
        let started = Instant::now();
        black_box(run(index));
        best = best.min(started.elapsed().as_secs_f64());
    }
    best * 1e6
}

fn main() {
    let group_counts = [2usize, 3, 5, 10, 20, 50, 100];
    let dfs = [2.0, 5.0, 10.0, 30.0, 120.0, 1000.0, f64::INFINITY];
    println!("best of 20 calls, in microseconds");
    println!("    k       df       cdf        sf  quantile  sf tail  quantile tail");
    let mut worst = [0.0f64; 5];
    for &k in &group_counts {
        for &df in &dfs {
            let cdf = best_of(20, |i| {
                studentized_range_cdf(2.0 + 0.01 * i as f64, k, df).unwrap_or(0.0)
            });
            let sf = best_of(20, |i| {
                studentized_range_sf(4.0 + 0.01 * i as f64, k, df).unwrap_or(0.0)
            });
            let quantile = best_of(20, |i| {
                studentized_range_quantile(0.95 + 0.0001 * i as f64, k, df).unwrap_or(0.0)
            });
            // Far upper tail: sf near 1e-6 and the 0.999999 quantile.
            let start = studentized_range_quantile(0.999_999, k, df).unwrap_or(10.0);
            let sf_tail = best_of(20, |i| {
                studentized_range_sf(start + 0.01 * i as f64, k, df).unwrap_or(0.0)
            });
            let quantile_tail = best_of(20, |i| {
                studentized_range_quantile(0.999_999 - 1e-8 * i as f64, k, df).unwrap_or(0.0)
            });
            for (slot, value) in worst.iter_mut().zip([cdf, sf, quantile, sf_tail, quantile_tail]) {
                if df.is_finite() {
                    *slot = slot.max(value);
                }
            }
            println!("{k:5} {df:8} {cdf:9.1} {sf:9.1} {quantile:9.1} {sf_tail:8.1} {quantile_tail:14.1}");
        }
    }
    println!(
        "largest for finite df: cdf {:.1}, sf {:.1}, quantile {:.1}, sf tail {:.1}, quantile tail {:.1}",
        worst[0], worst[1], worst[2], worst[3], worst[4]
    );
    // First calls on a fresh thread, whose cache of range tables is empty.
    for &(k, df) in &[(3usize, 10.0), (20, 10.0), (100, 10.0), (20, 2.0), (20, 1000.0)] {
        let (cold_quantile, next_sf) = std::thread::spawn(move || {
            let started = Instant::now();
            black_box(studentized_range_quantile(0.95, k, df).unwrap_or(0.0));
            let cold_quantile = started.elapsed().as_secs_f64() * 1e6;
            let started = Instant::now();
            black_box(studentized_range_sf(4.5, k, df).unwrap_or(0.0));
            (cold_quantile, started.elapsed().as_secs_f64() * 1e6)
        })
        .join()
        .unwrap_or((f64::NAN, f64::NAN));
        println!("fresh thread, k {k}, df {df}: first quantile {cold_quantile:.1} us, then sf {next_sf:.1} us");
    }
    // Games-Howell-like: 20 conditions, 190 pairs, each with its own df.
    for &(k, low_df, high_df) in &[(20usize, 8.0, 60.0), (20, 500.0, 50_000.0), (7, 3.0, 12.0)] {
        let started = Instant::now();
        let mut total = 0.0;
        let n_pairs = k * (k - 1) / 2;
        for pair in 0..n_pairs {
            let df = low_df + (high_df - low_df) * pair as f64 / n_pairs as f64;
            total += studentized_range_quantile(0.95, k, df).unwrap_or(0.0);
            total += studentized_range_sf(1.0 + 0.03 * pair as f64, k, df).unwrap_or(0.0);
        }
        println!(
            "{n_pairs} pairs at k {k}, df {low_df} to {high_df} (quantile + sf each): {:.2} ms ({total:.3})",
            started.elapsed().as_secs_f64() * 1e3
        );
    }
    // Tukey-Kramer-like: one quantile and 190 sf at one df.
    let started = Instant::now();
    let mut total = studentized_range_quantile(0.95, 20, 45.0).unwrap_or(0.0);
    for pair in 0..190 {
        total += studentized_range_sf(1.0 + 0.03 * pair as f64, 20, 45.0).unwrap_or(0.0);
    }
    println!(
        "1 quantile and 190 sf at k 20, df 45: {:.2} ms ({total:.3})",
        started.elapsed().as_secs_f64() * 1e3
    );
}
