//! Welch's ANOVA deep in the tail: p-values from about 1e-30 to 1e-100 keep 12 or more
//! digits (the upper tail is taken directly, never as one minus a
//! probability near one). Each case is a set of condition summaries.
//!
//! Reference values: `welch_tail_reference.py` beside this file (mpmath 1.3.0, 60
//! significant digits, regularized incomplete beta; with two conditions the p-value of
//! Welch's t through the t distribution agrees with that of Welch's F to every digit
//! printed).

// The tests print the accuracy they measured.
#![allow(clippy::print_stdout)]
// Reference values keep the 17 digits mpmath printed.
#![allow(clippy::excessive_precision)]

mod common;
use common::check;

use engine::analysis::comparisons::welch_anova;
use engine::analysis::oneway::ConditionSummary;

/// (case, summaries as (count, mean, SD), mpmath 1.3.0: Welch's F, its denominator df, p).
type Case = (&'static str, &'static [(u64, f64, f64)], [f64; 3]);

const CASES: [Case; 7] = [
    (
        "two, df 33, p near 1e-30",
        &[(20, 10.0, 1.0), (20, 27.45, 1.5)],
        [1.8738615384615383e+3, 3.3103092783505155e+1, 1.0086546349127902e-30],
    ),
    (
        "two, df 33, p near 1e-60",
        &[(20, 10.0, 1.0), (20, 151.8, 1.5)],
        [1.2373686153846156e+5, 3.3103092783505155e+1, 1.0099468270002601e-60],
    ),
    (
        "two, df 33, p near 1e-100",
        &[(20, 10.0, 1.0), (20, 2302.0, 1.5)],
        [3.2327778461538462e+7, 3.3103092783505155e+1, 9.9954229743508601e-101],
    ),
    (
        "two, df 6, p near 1e-30",
        &[(4, 5.0, 0.01), (5, 1744.0, 0.02)],
        [2.880115238095238e+10, 6.0967741935483871, 1.0014241591364222e-30],
    ),
    (
        "two, df 1853, p near 1e-100",
        &[(1000, 100.0, 3.0), (1000, 103.59, 4.0)],
        [5.1552400000000098e+2, 1.8527448071216617e+3, 6.8025538215151374e-101],
    ),
    (
        "three, p near 1e-50",
        &[(12, 3.0, 0.2), (15, 95.94, 0.3), (10, 3.2, 0.25)],
        [5.1162657812470052e+5, 2.1366440186723281e+1, 9.9943012047597016e-51],
    ),
    (
        "three, p near 1e-100",
        &[(30, 3.0, 0.2), (40, 26.46, 0.3), (25, 3.2, 0.25)],
        [8.6690237164617314e+4, 5.7478753459637212e+1, 9.9404757568067869e-101],
    ),
];

/// A condition known only by its summary (the figures Welch's ANOVA reads: count, mean,
/// SD); the order statistics are not known.
fn summary(index: usize, &(n, mean, sd): &(u64, f64, f64)) -> ConditionSummary {
    ConditionSummary {
        name: format!("condition {}", index + 1),
        n,
        mean,
        sd,
        se: sd / (n as f64).sqrt(),
        min: f64::NAN,
        median: f64::NAN,
        max: f64::NAN,
        mean_low: f64::NAN,
        mean_high: f64::NAN,
        mean_half_width: f64::NAN,
    }
}

#[test]
fn welch_p_keeps_its_digits_deep_in_the_tail() {
    for (case, summaries, [f, df, p]) in CASES {
        let conditions: Vec<ConditionSummary> = summaries
            .iter()
            .enumerate()
            .map(|(index, row)| summary(index, row))
            .collect();
        let welch = welch_anova(&conditions).expect("Welch's ANOVA");
        check(&format!("{case}: F"), welch.f, f, 12.0);
        check(&format!("{case}: df"), welch.df_within, df, 12.0);
        check(&format!("{case}: p"), welch.p, p, 12.0);
    }
}
