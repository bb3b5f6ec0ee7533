//! Levene's and the Brown-Forsythe test, Bartlett's test and the F tests of a two-factor
//! model, end to end through the engine (the one-way fit and its model checks; the
//! factorial analysis), on invented trials whose p-values lie from about 1e-6 down to
//! 1e-299: each statistic and p-value keeps 12 or more digits.
//!
//! Reference values: `spread_kway_tail_reference.py` beside this file, which makes the same
//! doubles by the same formula and computes the statistics from their exact rational
//! values (Python fractions), the logarithms and tail probabilities with mpmath 1.3.0 at
//! 50 significant digits. The two-factor trials are balanced, so Type I, II and III sums
//! of squares coincide and the classical formulas give the reference.

// The tests print the accuracy they measured.
#![allow(clippy::print_stdout)]
// Reference values keep the 17 digits mpmath printed.
#![allow(clippy::excessive_precision)]

mod common;
use common::check;
use common::model_checks::assessed;

use engine::analysis::factorial::{analyse_factorial, FactorData, FactorialData, FactorialOptions};

/// (case, centre, scales, runs, step, reference values).
type SpreadCase = (&'static str, f64, &'static [f64], usize, f64, [f64; 4]);
/// (case, centre, scales, runs, step, reference values).
type BartlettCase = (&'static str, f64, &'static [f64], usize, f64, [f64; 2]);
/// (case, centre, A effects, B effects, interaction scale, replicates, noise step,
/// residual SS, SS, F and p of each term).
type TwoFactorCase = (
    &'static str,
    f64,
    &'static [f64],
    &'static [f64],
    f64,
    usize,
    f64,
    f64,
    [[f64; 3]; 3],
);

/// Levene and Brown-Forsythe: (case, centre, scales, runs, step; mpmath 1.3.0 on the exact
/// values: Levene F, p, Brown-Forsythe F, p).
const SPREAD: [SpreadCase; 4] = [
    (
        "p near 1e-6",
        10.0,
        &[1.0, 1.5, 2.0],
        14,
        0.1,
        [
            1.819685190886699e+1,
            2.6165304533071398e-6,
            1.797463797782248e+1,
            2.9362614508996918e-6,
        ],
    ),
    (
        "p near 1e-36",
        250.0,
        &[1.0, 2.0, 3.0],
        24,
        0.02,
        [
            3.4716108722358531e+2,
            9.7022355097306326e-37,
            3.4561467788117197e+2,
            1.1161015276807506e-36,
        ],
    ),
    (
        "p near 1e-97",
        1000.0,
        &[0.5, 1.0, 2.0, 3.0],
        32,
        0.01,
        [
            1.5196386469510654e+3,
            1.4644009556055199e-97,
            1.5157402272631956e+3,
            1.7099209658220411e-97,
        ],
    ),
    (
        "p near 1e-205",
        40.0,
        &[0.25, 1.0, 4.0],
        74,
        0.004,
        [
            8.0119750905091991e+3,
            1.6248851898598851e-205,
            8.0079779854196989e+3,
            1.7148789331628981e-205,
        ],
    ),
];

/// Bartlett: (case, centre, scales, runs, step; mpmath 1.3.0: statistic, p).
const BARTLETT: [BartlettCase; 4] = [
    (
        "p near 1e-19",
        10.0,
        &[1.0, 4.0, 16.0],
        18,
        0.5,
        [8.6393165157413809e+1, 1.7376509774530788e-19],
    ),
    (
        "p near 1e-46",
        250.0,
        &[1.0, 8.0, 64.0],
        24,
        0.2,
        [2.0822145524990782e+2, 6.0993771095216788e-46],
    ),
    (
        "p near 1e-112",
        1000.0,
        &[0.5, 8.0, 128.0],
        40,
        0.1,
        [5.1483893213900299e+2, 1.6000971494866778e-112],
    ),
    (
        "p near 1e-299",
        40.0,
        &[0.25, 8.0, 256.0],
        80,
        0.04,
        [1.3748843307448277e+3, 2.8032443218741585e-299],
    ),
];

/// Two factors: (case, centre, A effects, B effects, interaction scale, replicates, noise
/// step; mpmath 1.3.0 and exact fractions: residual SS, then SS, F, p of A, B and A x B).
const TWO_FACTOR: [TwoFactorCase; 3] = [
    (
        "p near 1e-19",
        50.0,
        &[-0.5, 0.5],
        &[-0.4, 0.1, 0.3],
        0.15,
        5,
        0.05,
        2.40625e-1,
        [
            [7.5, 7.4805194805194805e+2, 1.3317154768329823e-19],
            [6.7624999999999062, 3.3724675324674857e+2, 2.7076119591537758e-18],
            [1.1249999999999787e-1, 5.6103896103895041, 1.0021838047199628e-2],
        ],
    ),
    (
        "p near 1e-54",
        120.0,
        &[-0.8, 0.8],
        &[-0.6, 0.2, 0.4],
        0.3,
        9,
        0.02,
        2.3100000000000671e-1,
        [
            [3.4559999999999754e+1, 7.1812987012984417e+3, 6.1933815920232528e-54],
            [3.3569999999999688e+1, 3.4877922077920741e+3, 1.0774033970210766e-52],
            [8.0999999999998465e-1, 8.4155844155840118e+1, 2.0317487870826745e-16],
        ],
    ),
    (
        "p near 1e-141",
        300.0,
        &[-1.0, 1.0],
        &[-0.9, 0.3, 0.6],
        0.5,
        20,
        0.01,
        6.4006249999998681e-1,
        [
            [1.2e+2, 2.137291280148467e+4, 1.5252033208856297e-131],
            [1.8539999999999973e+2, 1.6510575139146884e+4, 3.8646189969540767e-141],
            [5.0, 4.452690166975973e+2, 1.3536070616869326e-54],
        ],
    ),
];

/// Condition i: centre + scale_i * u_j, u_j = ±(1 + step j² / runs), signs alternating;
/// the reference script makes the same doubles by the same operations.
fn spread_trial(centre: f64, scales: &[f64], runs: usize, step: f64) -> Vec<Vec<f64>> {
    scales
        .iter()
        .map(|&scale| {
            (0..runs)
                .map(|j| {
                    let sign = if j % 2 == 0 { 1.0 } else { -1.0 };
                    centre + scale * (sign * (1.0 + step * (j * j) as f64 / runs as f64))
                })
                .collect()
        })
        .collect()
}

#[test]
fn levene_and_brown_forsythe_keep_their_digits_deep_in_the_tail() {
    for (case, centre, scales, runs, step, [levene_f, levene_p, bf_f, bf_p]) in SPREAD {
        let assessment = assessed(&spread_trial(centre, scales, runs, step));
        let levene = assessment.checks.levene.as_ref().expect("Levene");
        let brown_forsythe = assessment
            .checks
            .brown_forsythe_spread
            .as_ref()
            .expect("Brown-Forsythe");
        check(&format!("{case}: Levene F"), levene.statistic, levene_f, 12.0);
        check(&format!("{case}: Levene p"), levene.p, levene_p, 12.0);
        check(
            &format!("{case}: Brown-Forsythe F"),
            brown_forsythe.statistic,
            bf_f,
            12.0,
        );
        check(&format!("{case}: Brown-Forsythe p"), brown_forsythe.p, bf_p, 12.0);
    }
}

#[test]
fn bartlett_keeps_its_digits_deep_in_the_tail() {
    for (case, centre, scales, runs, step, [statistic, p]) in BARTLETT {
        let assessment = assessed(&spread_trial(centre, scales, runs, step));
        let bartlett = assessment.checks.bartlett.as_ref().expect("Bartlett");
        check(
            &format!("{case}: Bartlett statistic"),
            bartlett.statistic,
            statistic,
            12.0,
        );
        check(&format!("{case}: Bartlett p"), bartlett.p, p, 12.0);
    }
}

#[test]
fn two_factor_f_tests_keep_their_digits_deep_in_the_tail() {
    for (case, centre, a_effects, b_effects, interaction, replicates, step, residual_ss, terms) in TWO_FACTOR {
        // Cell (i, j), copy r: centre + a_i + b_j + interaction (i + 1)(j - 1) + noise, as
        // the reference script makes it. Text labels: no level is read as a centre point.
        let mut values = Vec::new();
        let mut a_of_record = Vec::new();
        let mut b_of_record = Vec::new();
        for (i, &a) in a_effects.iter().enumerate() {
            for (j, &b) in b_effects.iter().enumerate() {
                for r in 0..replicates {
                    let noise = step * (r as f64 - (replicates - 1) as f64 / 2.0) * (1.0 + 0.25 * ((i + j) % 3) as f64);
                    values.push(centre + a + b + interaction * ((i as f64 + 1.0) * (j as f64 - 1.0)) + noise);
                    a_of_record.push(i as u32);
                    b_of_record.push(j as u32);
                }
            }
        }
        let a_levels: Vec<String> = (1..=a_effects.len()).map(|index| format!("line {index}")).collect();
        let b_levels: Vec<String> = (1..=b_effects.len()).map(|index| format!("recipe {index}")).collect();
        let data = FactorialData {
            factors: vec![
                FactorData {
                    name: "Line",
                    levels: &a_levels,
                    level_of_record: &a_of_record,
                    is_block: false,
                },
                FactorData {
                    name: "Recipe",
                    levels: &b_levels,
                    level_of_record: &b_of_record,
                    is_block: false,
                },
            ],
            response_name: "Yield",
            values: &values,
        };
        let outcome = analyse_factorial(&data, &FactorialOptions::default()).expect("a factorial analysis");
        let model = outcome.model.as_ref().expect("the k-way model");
        let residual = model
            .error_lines
            .iter()
            .find(|line| line.source.to_lowercase().contains("residual"))
            .expect("a residual line");
        check(&format!("{case}: residual SS"), residual.sum_sq, residual_ss, 12.0);
        assert_eq!(model.type_iii.len(), 3, "{:?}", model.type_iii);
        for (line, [ss, f, p]) in model.type_iii.iter().zip(terms) {
            let term = format!("{case}: {}", line.source);
            check(&format!("{term} SS"), line.sum_sq, ss, 12.0);
            check(&format!("{term} F"), line.f_value.expect("F"), f, 12.0);
            check(&format!("{term} p"), line.p_value.expect("p"), p, 12.0);
        }
    }
}
