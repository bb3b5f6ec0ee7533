//! Times the whole one-way assessment, and Games-Howell's pairs alone, on an invented
//! trial of many small conditions (200 conditions of 3 values by default).
//!
//! Run: `cargo run -p engine --release --example many_conditions_timing [CONDITIONS [VALUES]]`.

// Examples report on the terminal.
#![allow(clippy::print_stdout, clippy::print_stderr)]

use std::time::Instant;

use engine::analysis::assessment::{assess, AssessmentOptions};
use engine::analysis::comparisons::unequal_spread_pairs;
use engine::analysis::oneway::fit_one_way;

fn main() {
    let mut args = std::env::args().skip(1);
    let conditions: usize = args.next().and_then(|text| text.parse().ok()).unwrap_or(200);
    let per_condition: usize = args.next().and_then(|text| text.parse().ok()).unwrap_or(3);
    let names: Vec<String> = (0..conditions).map(|index| format!("line {index}")).collect();
    // A fixed linear congruential stream gives each condition its own spread, so the
    // pairs' Welch df differ.
    let mut state = 7u64;
    let mut next = || {
        state = state
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        (state >> 11) as f64 / (1u64 << 53) as f64
    };
    let mut groups = Vec::new();
    let mut values = Vec::new();
    let mut group_values = vec![Vec::new(); conditions];
    let mut group_records = vec![Vec::new(); conditions];
    for condition in 0..conditions {
        let spread = 0.2 + 3.0 * next();
        for _ in 0..per_condition {
            let value = ((20.0 + 0.01 * condition as f64 + spread * (next() - 0.5)) * 1000.0).round() / 1000.0;
            group_records[condition].push(values.len());
            group_values[condition].push(value);
            groups.push(condition as u32);
            values.push(value);
        }
    }
    let fit = fit_one_way(&names, &groups, &values, 0.95, &[]).expect("the invented trial fits");
    let started = Instant::now();
    let pairs = unequal_spread_pairs(&fit, 0.95).expect("Games-Howell pairs");
    let games_howell = started.elapsed();
    let started = Instant::now();
    let assessment = assess(&fit, &group_values, &group_records, &AssessmentOptions::default());
    let whole = started.elapsed();
    println!(
        "{conditions} conditions of {per_condition} values: Games-Howell {} pairs {:.3} s; whole assessment {:.3} s ({} notes)",
        pairs.pairs.len(),
        games_howell.as_secs_f64(),
        whole.as_secs_f64(),
        assessment.notes.len()
    );
}
