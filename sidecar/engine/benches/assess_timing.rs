//! Times the one-way fit, each comparison and check, and the full assessment
//! (comparisons, checks, rank-based analysis) on 1,000,000 values in 20 conditions of
//! unequal sizes (the comparisons' benchmark), and on 10,000 values in 8 conditions.
//!
//! Run in release (the bench profile): `cargo bench -p engine --bench assess_timing`;
//! `-- "20 conditions"` runs the large case only.

// Benchmarks and examples report on the terminal.
#![allow(clippy::print_stdout, clippy::print_stderr)]

use std::fmt;

use divan::Bencher;
use engine::analysis::assessment::{assess, AssessmentOptions};
use engine::analysis::comparisons::{
    against_control, pooled_pairs, unequal_spread_pairs, welch_anova, with_the_best, PairMethod,
};
use engine::analysis::oneway::{fit_one_way, OneWayFit};
use engine::options::Direction;
use engine::stats::spread::{levene, Centre};

fn main() {
    divan::main();
}

/// The size of a timed trial.
#[derive(Clone, Copy)]
struct TrialSize {
    conditions: usize,
    values: usize,
}

impl fmt::Display for TrialSize {
    fn fmt(&self, formatter: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(formatter, "{} conditions, {} values", self.conditions, self.values)
    }
}

const SIZES: [TrialSize; 2] = [
    TrialSize {
        conditions: 20,
        values: 1_000_000,
    },
    TrialSize {
        conditions: 8,
        values: 10_000,
    },
];

/// An invented trial: the values, their conditions, and the one-way fit.
struct Trial {
    names: Vec<String>,
    groups: Vec<u32>,
    values: Vec<f64>,
    fit: OneWayFit,
    group_values: Vec<Vec<f64>>,
    group_records: Vec<Vec<usize>>,
}

/// Draws the trial from a fixed linear congruential stream: condition c gets a share
/// of the values proportional to c + 1, values to two decimals.
fn trial(size: TrialSize) -> Trial {
    let n_conditions = size.conditions;
    let names: Vec<String> = (0..n_conditions).map(|index| format!("condition {index}")).collect();
    let mut state = 2026u64;
    let mut groups = Vec::with_capacity(size.values);
    let mut values = Vec::with_capacity(size.values);
    let triangle = (n_conditions * (n_conditions + 1) / 2) as f64;
    for _ in 0..size.values {
        state = state
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        let share = ((state >> 33) as f64 / (1u64 << 31) as f64) * triangle;
        let condition = ((((8.0 * share + 1.0).sqrt() - 1.0) / 2.0) as usize).min(n_conditions - 1);
        let noise = ((state >> 11) % 10_000) as f64 / 1000.0 - 5.0;
        groups.push(condition as u32);
        values.push(((50.0 + condition as f64 * 0.01 + noise) * 100.0).round() / 100.0);
    }
    let fit = fit_one_way(&names, &groups, &values, 0.95, &[]).expect("fits");
    let mut group_values = vec![Vec::new(); n_conditions];
    let mut group_records = vec![Vec::new(); n_conditions];
    for (record, (&group, &value)) in groups.iter().zip(&values).enumerate() {
        group_values[group as usize].push(value);
        group_records[group as usize].push(record);
    }
    Trial {
        names,
        groups,
        values,
        fit,
        group_values,
        group_records,
    }
}

#[divan::bench(args = SIZES, sample_count = 20)]
fn one_way_fit(bencher: Bencher<'_, '_>, size: TrialSize) {
    let trial = trial(size);
    bencher.bench(|| fit_one_way(&trial.names, &trial.groups, &trial.values, 0.95, &[]).expect("fits"));
}

#[divan::bench(args = SIZES, sample_count = 20)]
fn tukey_kramer(bencher: Bencher<'_, '_>, size: TrialSize) {
    let trial = trial(size);
    bencher.bench(|| pooled_pairs(&trial.fit, PairMethod::TukeyKramer, 0.95));
}

#[divan::bench(args = SIZES, sample_count = 20)]
fn bonferroni(bencher: Bencher<'_, '_>, size: TrialSize) {
    let trial = trial(size);
    bencher.bench(|| pooled_pairs(&trial.fit, PairMethod::Bonferroni, 0.95));
}

#[divan::bench(args = SIZES, sample_count = 20)]
fn scheffe(bencher: Bencher<'_, '_>, size: TrialSize) {
    let trial = trial(size);
    bencher.bench(|| pooled_pairs(&trial.fit, PairMethod::Scheffe, 0.95));
}

#[divan::bench(args = SIZES, sample_count = 20)]
fn games_howell(bencher: Bencher<'_, '_>, size: TrialSize) {
    let trial = trial(size);
    bencher.bench(|| unequal_spread_pairs(&trial.fit, 0.95));
}

#[divan::bench(args = SIZES, sample_count = 20)]
fn welch(bencher: Bencher<'_, '_>, size: TrialSize) {
    let trial = trial(size);
    bencher.bench(|| welch_anova(&trial.fit.conditions));
}

#[divan::bench(args = SIZES, sample_count = 20)]
fn against_a_control(bencher: Bencher<'_, '_>, size: TrialSize) {
    let trial = trial(size);
    bencher.bench(|| against_control(&trial.fit, "condition 0", None, 0.95));
}

#[divan::bench(args = SIZES, sample_count = 20)]
fn with_the_best_higher(bencher: Bencher<'_, '_>, size: TrialSize) {
    let trial = trial(size);
    bencher.bench(|| with_the_best(&trial.fit, Direction::HigherIsBetter, 0.95));
}

#[divan::bench(args = SIZES, sample_count = 20)]
fn ranks(bencher: Bencher<'_, '_>, size: TrialSize) {
    let trial = trial(size);
    let slices: Vec<&[f64]> = trial.group_values.iter().map(Vec::as_slice).collect();
    bencher.bench(|| engine::stats::ranks::rank_analysis(&slices));
}

#[divan::bench(args = SIZES, sample_count = 20)]
fn levene_about_medians(bencher: Bencher<'_, '_>, size: TrialSize) {
    let trial = trial(size);
    let slices: Vec<&[f64]> = trial.group_values.iter().map(Vec::as_slice).collect();
    bencher.bench(|| levene(&slices, Centre::Median));
}

#[divan::bench(args = SIZES, sample_count = 20)]
fn normality_thinned_to_2000(bencher: Bencher<'_, '_>, size: TrialSize) {
    let trial = trial(size);
    bencher.bench(|| engine::stats::normality::check_normality_thinned(&trial.values, 2_000));
}

/// The whole assessment with no direction and no control.
#[divan::bench(args = SIZES, sample_count = 20)]
fn assessment(bencher: Bencher<'_, '_>, size: TrialSize) {
    let trial = trial(size);
    let options = AssessmentOptions::default();
    bencher.bench(|| assess(&trial.fit, &trial.group_values, &trial.group_records, &options));
}

/// The whole assessment on a fresh thread each time (its per-thread caches empty).
#[divan::bench(args = SIZES, sample_count = 20)]
fn assessment_on_a_fresh_thread(bencher: Bencher<'_, '_>, size: TrialSize) {
    let trial = trial(size);
    let options = AssessmentOptions::default();
    bencher.bench(|| {
        std::thread::scope(|scope| {
            scope
                .spawn(|| assess(&trial.fit, &trial.group_values, &trial.group_records, &options))
                .join()
                .map(|assessment| assessment.notes.len())
                .unwrap_or(0)
        })
    });
}

/// The whole assessment with a direction (higher is better) and a control.
#[divan::bench(args = SIZES, sample_count = 20)]
fn assessment_with_direction_and_control(bencher: Bencher<'_, '_>, size: TrialSize) {
    let trial = trial(size);
    let options = AssessmentOptions {
        direction: Some(Direction::HigherIsBetter),
        control: Some("condition 0".into()),
        family_confidence: None,
    };
    bencher.bench(|| assess(&trial.fit, &trial.group_values, &trial.group_records, &options));
}
