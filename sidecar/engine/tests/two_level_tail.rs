//! The two-level analysis deep in the tail: effects with their t and p from pure error
//! (p from about 0.9 down to 1e-269, pure-error df 11 to 56), the centre-point curvature
//! test (difference, sum of squares, t, p down to 1e-182) and Lenth's method for an
//! unreplicated 2^5 and 2^4 (pseudo standard error, t ratios, the individual and
//! simultaneous t quantiles at df 31/3 with confidence 0.95 and at df 5 with confidence
//! 1 - 1e-12, margins).
//!
//! Reference values: `two_level_tail_reference.py` beside this file (cell means,
//! effects, pure error, curvature contrast and Lenth's medians in exact rational
//! arithmetic with Python fractions; square roots, t tails and t quantiles in mpmath
//! 1.3.0 at 50 significant digits; Lenth's quantiles at the double nearest the decimal
//! confidence, which is what the engine is given).

// The tests print the accuracy they measured.
#![allow(clippy::print_stdout)]
// Reference values keep the 17 digits mpmath printed.
#![allow(clippy::excessive_precision)]

mod common;
use common::check;

use engine::stats::two_level_analysis::{analyse_two_level, AnalysisOptions};

/// One trial: k factors, every corner run `replicates` times, `centre_runs` centre
/// runs; integer responses (see [`trial`]), and the reference figures from mpmath 1.3.0.
struct Case {
    factors: u32,
    replicates: u32,
    centre_runs: u32,
    scale: i64,
    curvature: i64,
    /// (word as a bit mask of factors, coefficient).
    coefficients: &'static [(u32, i64)],
    confidence: f64,
    pure_error_df: usize,
    /// (word, [effect, t, p]); with no pure error, t is the effect over Lenth's PSE.
    effects: &'static [(u32, [f64; 3])],
    /// [difference, sum of squares, t, p].
    curvature_figures: Option<[f64; 4]>,
    /// [PSE, t individual, t simultaneous, margin of error, simultaneous margin].
    lenth_figures: Option<[f64; 5]>,
}

const CASES: [Case; 5] = [
    Case {
        factors: 3,
        replicates: 2,
        centre_runs: 4,
        scale: 1,
        curvature: 2,
        coefficients: &[(1, 3), (2, 1), (3, 1)],
        confidence: 0.95,
        pure_error_df: 11,
        effects: &[
            (1, [6.125, 7.0195622179266481, 2.2124469423969103e-5]),
            (2, [2.875, 3.294896551271692, 7.1423825944062292e-3]),
            (3, [2.625, 3.0083838076828492, 1.1900189347418179e-2]),
            (4, [-1.25e-1, -1.4325637179442139e-1, 8.8867826626477711e-1]),
            (5, [6.25e-1, 7.1628185897210695e-1, 4.8874544077798001e-1]),
            (6, [-6.25e-1, -7.1628185897210695e-1, 4.8874544077798001e-1]),
            (7, [6.25e-1, 7.1628185897210695e-1, 4.8874544077798001e-1]),
        ],
        curvature_figures: Some([-2.0625, 1.36125e+1, -2.1141845045792444, 5.8153529115904643e-2]),
        lenth_figures: None,
    },
    Case {
        factors: 3,
        replicates: 3,
        centre_runs: 5,
        scale: 40,
        curvature: 3,
        coefficients: &[(1, 50), (2, 7), (4, 2), (5, 1)],
        confidence: 0.95,
        pure_error_df: 20,
        effects: &[
            (
                1,
                [3.9999166666666667e+3, 5.9627237140006892e+3, 5.5898806024734343e-64],
            ),
            (2, [5.6025e+2, 8.3517138959617145e+2, 6.6170979480002443e-47]),
            (3, [4.1666666666666667e-1, 6.2112999374994158e-1, 5.4152924537189081e-1]),
            (
                4,
                [1.6008333333333333e+2, 2.3863814359872756e+2, 5.0123998896521372e-36],
            ),
            (
                5,
                [7.9583333333333333e+1, 1.1863582880623884e+2, 5.8357210020058672e-30],
            ),
            (
                6,
                [-4.1666666666666667e-1, -6.2112999374994158e-1, 5.4152924537189081e-1],
            ),
            (7, [4.1666666666666667e-1, 6.2112999374994158e-1, 5.4152924537189081e-1]),
        ],
        curvature_figures: Some([
            -1.20125e+2,
            5.9710409482758621e+4,
            -1.4871101665678903e+2,
            6.3927592530561002e-32,
        ]),
        lenth_figures: None,
    },
    Case {
        factors: 4,
        replicates: 4,
        centre_runs: 9,
        scale: 1000,
        curvature: 7,
        coefficients: &[(1, 90), (2, 30), (4, 5), (8, 2), (3, 1)],
        confidence: 0.95,
        pure_error_df: 56,
        effects: &[
            (1, [1.799998125e+5, 4.5135538198001618e+5, 2.0995637623150949e-269]),
            (2, [5.99999375e+4, 1.5045179399333873e+5, 1.0988016589063015e-242]),
            (3, [2.0e+3, 5.015065023804024e+3, 5.749865127652775e-160]),
            (4, [1.00001875e+4, 2.5075795281366102e+4, 4.1391098676381221e-199]),
            (5, [0.0, 0.0, 1.0]),
            (6, [0.0, 0.0, 1.0]),
            (7, [3.125e-1, 7.8360390996937876e-1, 4.3657432904419727e-1]),
            (8, [4.0000625e+3, 1.0030286768390042e+4, 7.9729281906153324e-177]),
            (9, [0.0, 0.0, 1.0]),
            (10, [0.0, 0.0, 1.0]),
            (11, [-3.125e-1, -7.8360390996937876e-1, 4.3657432904419727e-1]),
            (12, [0.0, 0.0, 1.0]),
            (13, [-3.125e-1, -7.8360390996937876e-1, 4.3657432904419727e-1]),
            (14, [3.125e-1, 7.8360390996937876e-1, 4.3657432904419727e-1]),
            (15, [0.0, 0.0, 1.0]),
        ],
        curvature_figures: Some([
            -7.0e+3,
            3.8663013698630137e+8,
            -1.2326348236633469e+4,
            7.7346281622871842e-182,
        ]),
        lenth_figures: None,
    },
    Case {
        factors: 5,
        replicates: 1,
        centre_runs: 0,
        scale: 100,
        curvature: 0,
        coefficients: &[(1, 40), (2, 25), (4, 9), (16, 1), (3, 5)],
        confidence: 0.95,
        pure_error_df: 0,
        effects: &[
            (1, [8.000125e+3, 8.5334666666666667e+3, f64::NAN]),
            (2, [5.00025e+3, 5.3336e+3, f64::NAN]),
            (3, [1.0e+3, 1.0666666666666667e+3, f64::NAN]),
            (4, [1.799875e+3, 1.9198666666666667e+3, f64::NAN]),
            (5, [-6.25e-1, -6.6666666666666667e-1, f64::NAN]),
            (6, [0.0, 0.0, f64::NAN]),
            (7, [0.0, 0.0, f64::NAN]),
            (8, [-2.5e-1, -2.6666666666666667e-1, f64::NAN]),
            (9, [0.0, 0.0, f64::NAN]),
            (10, [-6.25e-1, -6.6666666666666667e-1, f64::NAN]),
            (11, [6.25e-1, 6.6666666666666667e-1, f64::NAN]),
            (12, [0.0, 0.0, f64::NAN]),
            (13, [0.0, 0.0, f64::NAN]),
            (14, [-6.25e-1, -6.6666666666666667e-1, f64::NAN]),
            (15, [-6.25e-1, -6.6666666666666667e-1, f64::NAN]),
            (16, [2.00125e+2, 2.1346666666666667e+2, f64::NAN]),
            (17, [6.25e-1, 6.6666666666666667e-1, f64::NAN]),
            (18, [0.0, 0.0, f64::NAN]),
            (19, [0.0, 0.0, f64::NAN]),
            (20, [-6.25e-1, -6.6666666666666667e-1, f64::NAN]),
            (21, [6.25e-1, 6.6666666666666667e-1, f64::NAN]),
            (22, [0.0, 0.0, f64::NAN]),
            (23, [-1.25, -1.3333333333333333, f64::NAN]),
            (24, [0.0, 0.0, f64::NAN]),
            (25, [0.0, 0.0, f64::NAN]),
            (26, [6.25e-1, 6.6666666666666667e-1, f64::NAN]),
            (27, [6.25e-1, 6.6666666666666667e-1, f64::NAN]),
            (28, [0.0, 0.0, f64::NAN]),
            (29, [1.25, 1.3333333333333333, f64::NAN]),
            (30, [-6.25e-1, -6.6666666666666667e-1, f64::NAN]),
            (31, [6.25e-1, 6.6666666666666667e-1, f64::NAN]),
        ],
        curvature_figures: None,
        lenth_figures: Some([
            9.375e-1,
            2.2184345617272078,
            4.2179660318996553,
            2.0797824016192573,
            3.9543431549059268,
        ]),
    },
    Case {
        factors: 4,
        replicates: 1,
        centre_runs: 0,
        scale: 100,
        curvature: 0,
        coefficients: &[(1, 40), (2, 25), (4, 9), (8, 1), (3, 5), (12, 2)],
        confidence: 0.999999999999,
        pure_error_df: 0,
        effects: &[
            (1, [7.9995e+3, 4.2664e+3, f64::NAN]),
            (2, [5.00025e+3, 2.6668e+3, f64::NAN]),
            (3, [1.0e+3, 5.3333333333333333e+2, f64::NAN]),
            (4, [1.8005e+3, 9.6026666666666667e+2, f64::NAN]),
            (5, [-1.25, -6.6666666666666667e-1, f64::NAN]),
            (6, [0.0, 0.0, f64::NAN]),
            (7, [1.25, 6.6666666666666667e-1, f64::NAN]),
            (8, [1.9975e+2, 1.0653333333333333e+2, f64::NAN]),
            (9, [0.0, 0.0, f64::NAN]),
            (10, [-1.25, -6.6666666666666667e-1, f64::NAN]),
            (11, [0.0, 0.0, f64::NAN]),
            (12, [4.0e+2, 2.1333333333333333e+2, f64::NAN]),
            (13, [-1.25, -6.6666666666666667e-1, f64::NAN]),
            (14, [0.0, 0.0, f64::NAN]),
            (15, [-1.25, -6.6666666666666667e-1, f64::NAN]),
        ],
        curvature_figures: None,
        lenth_figures: Some([
            1.875,
            4.5254122659108977e+2,
            7.778205400104334e+2,
            8.4851479985829331e+2,
            1.4584135125195626e+3,
        ]),
    },
];

/// The sign of word `mask` at corner `cell` (factor f at +1 when bit f of `cell` is set).
fn sign(mask: u32, cell: u32) -> i64 {
    if (mask & !cell).count_ones() % 2 == 1 {
        -1
    } else {
        1
    }
}

/// Runs (coded settings) and integer responses: corner c, replicate j gives
/// scale * sum coefficient * sign + ((7 c + 3 j) mod 5) - 2; centre run i gives
/// scale * curvature + ((3 i) mod 5) - 2 (the same table as the reference script).
fn trial(case: &Case) -> (Vec<Vec<f64>>, Vec<f64>) {
    let mut runs = Vec::new();
    let mut responses = Vec::new();
    for cell in 0..1u32 << case.factors {
        let mean: i64 = case.scale
            * case
                .coefficients
                .iter()
                .map(|&(mask, c)| c * sign(mask, cell))
                .sum::<i64>();
        for j in 0..case.replicates {
            runs.push(
                (0..case.factors)
                    .map(|f| if cell >> f & 1 == 1 { 1.0 } else { -1.0 })
                    .collect(),
            );
            responses.push((mean + i64::from((7 * cell + 3 * j) % 5) - 2) as f64);
        }
    }
    for i in 0..case.centre_runs {
        runs.push(vec![0.0; case.factors as usize]);
        responses.push((case.scale * case.curvature + i64::from((3 * i) % 5) - 2) as f64);
    }
    (runs, responses)
}

#[test]
fn effects_curvature_and_lenth_keep_their_digits_deep_in_the_tail() {
    for case in &CASES {
        let (runs, responses) = trial(case);
        let options = AnalysisOptions {
            lenth_confidence: case.confidence,
        };
        let analysis = analyse_two_level(&runs, &responses, &options).expect("two-level analysis");
        let label = format!(
            "2^{} x {} with {} centre runs (scale {})",
            case.factors, case.replicates, case.centre_runs, case.scale
        );
        assert_eq!(analysis.pure_error_df, case.pure_error_df, "{label}");
        assert_eq!(analysis.effects.len(), case.effects.len(), "{label}");
        for &(mask, [effect, t, p]) in case.effects {
            let index = analysis
                .effects
                .iter()
                .position(|estimate| estimate.basic_word.0 == mask)
                .expect("effect of the word");
            let estimate = &analysis.effects[index];
            let word = format!("{label}, word {mask:05b}");
            check(&format!("{word}: effect"), estimate.effect, effect, 12.0);
            match case.lenth_figures {
                None => {
                    check(&format!("{word}: t"), estimate.t_value.expect("t"), t, 12.0);
                    check(&format!("{word}: p"), estimate.p_value.expect("p"), p, 12.0);
                }
                Some(_) => {
                    let lenth = analysis.lenth.as_ref().expect("Lenth");
                    check(&format!("{word}: Lenth t ratio"), lenth.t_ratios[index], t, 12.0);
                }
            }
        }
        match (case.curvature_figures, &analysis.curvature) {
            (Some([difference, sum_of_squares, t, p]), Some(curvature)) => {
                check(
                    &format!("{label}: curvature difference"),
                    curvature.difference,
                    difference,
                    12.0,
                );
                check(
                    &format!("{label}: curvature SS"),
                    curvature.sum_of_squares,
                    sum_of_squares,
                    12.0,
                );
                check(&format!("{label}: curvature t"), curvature.t_value.expect("t"), t, 12.0);
                check(&format!("{label}: curvature p"), curvature.p_value.expect("p"), p, 12.0);
            }
            (None, None) => {}
            (expected, got) => panic!("{label}: curvature {expected:?} against {got:?}"),
        }
        match (case.lenth_figures, &analysis.lenth) {
            (Some([pse, t_individual, t_simultaneous, margin, simultaneous]), Some(lenth)) => {
                let at = format!("{label}, Lenth at confidence {}", case.confidence);
                check(&format!("{at}: PSE"), lenth.pseudo_standard_error, pse, 12.0);
                check(&format!("{at}: t individual"), lenth.t_individual, t_individual, 12.0);
                check(
                    &format!("{at}: t simultaneous"),
                    lenth.t_simultaneous,
                    t_simultaneous,
                    12.0,
                );
                check(&format!("{at}: margin"), lenth.margin_of_error, margin, 12.0);
                check(
                    &format!("{at}: simultaneous margin"),
                    lenth.simultaneous_margin_of_error,
                    simultaneous,
                    12.0,
                );
            }
            (None, _) => {}
            (Some(expected), None) => panic!("{label}: Lenth {expected:?} missing"),
        }
    }
}
