//! The blocked one-way analysis (conditions compared within blocks) at any magnitude: the
//! same invented trial (four conditions in four blocks, unbalanced, about 1 % spread)
//! written near 1e-300, 1e-170, 1e160 and 1e300, and at an offset of 1e9, must give the
//! statistics of the trial at scale 1: F and p, the pooled SD, the least-squares means
//! and the SE of every difference, the unit figures in the data's own unit.
//!
//! Reference values: `blocked_magnitude_reference.py` beside this file (mpmath 1.3.0, 50
//! significant digits; on the exact doubles of the data at the magnitudes, on the typed
//! decimals at the offset).

// The tests print the accuracy they measured.
#![allow(clippy::print_stdout)]
// Reference values keep the 17 digits mpmath printed.
#![allow(clippy::excessive_precision)]

mod common;
use common::check;

use engine::analysis::blocks::{fit_one_way_in_blocks, Blocks};
use engine::analysis::oneway::OneWayFit;
use engine::analysis::verdict::read_fit;

/// (condition, block, value in thousandths): the same table as the reference script.
const TRIAL: [(u32, u32, i64); 19] = [
    (0, 0, 1012),
    (0, 0, 1006),
    (0, 1, 1021),
    (0, 2, 998),
    (0, 3, 1009),
    (1, 0, 1031),
    (1, 1, 1044),
    (1, 1, 1039),
    (1, 2, 1018),
    (2, 0, 978),
    (2, 1, 995),
    (2, 2, 969),
    (2, 2, 974),
    (2, 3, 985),
    (3, 0, 1052),
    (3, 1, 1060),
    (3, 2, 1041),
    (3, 3, 1055),
    (3, 3, 1049),
];

/// The trial's values, each the double nearest the decimal `x.xxx e{exponent}`, or with
/// `exponent` "offset 1e9" the decimal `1000000000 + x.xxx` as it would be typed.
fn values_at(case: &str) -> Vec<f64> {
    TRIAL
        .iter()
        .map(|&(_, _, thousandths)| {
            let text = if case == "offset 1e9" {
                format!("{}.{:03}", 1_000_000_000 + thousandths / 1000, thousandths % 1000)
            } else {
                format!("{}.{:03}e{case}", thousandths / 1000, thousandths % 1000)
            };
            text.parse::<f64>().expect("a number")
        })
        .collect()
}

fn fit(values: &[f64]) -> OneWayFit {
    let conditions: Vec<String> = (1..=4).map(|index| format!("condition {index}")).collect();
    let blocks: Vec<String> = (1..=4).map(|index| format!("batch {index}")).collect();
    let groups: Vec<u32> = TRIAL.iter().map(|&(condition, _, _)| condition).collect();
    let block_of_value: Vec<u32> = TRIAL.iter().map(|&(_, block, _)| block).collect();
    let laid = Blocks {
        factor: "batch",
        names: &blocks,
        block_of_value: &block_of_value,
    };
    fit_one_way_in_blocks(&conditions, &groups, &laid, values, 0.95, &[]).expect("the blocked trial fits")
}

/// mpmath 1.3.0 (`blocked_magnitude_reference.py`): F, p, pooled SD, the four
/// least-squares means, the SEs of the six differences (1-2, 1-3, 1-4, 2-3, 2-4, 3-4).
struct Reference {
    case: &'static str,
    f: f64,
    p: f64,
    pooled_sd: f64,
    means: [f64; 4],
    ses: [f64; 6],
}

const MPMATH: [Reference; 6] = [
    Reference {
        case: "0",
        f: 5.3028024884106118e+2,
        p: 5.1475739706990516e-13,
        pooled_sd: 2.7953535557244879e-3,
        means: [
            1.0093536036036036,
            1.0304853603603603,
            9.8243693693693692e-1,
            1.0512105855855856,
        ],
        ses: [
            1.9508474854498052e-3,
            1.8043929613471047e-3,
            1.8104786209895018e-3,
            1.9508474854498052e-3,
            2.0119129132737439e-3,
            1.8104786209895018e-3,
        ],
    },
    Reference {
        case: "-300",
        f: 5.3028024884105886e+2,
        p: 5.1475739706991852e-13,
        pooled_sd: 2.7953535557244944e-303,
        means: [
            1.0093536036036036e-300,
            1.0304853603603604e-300,
            9.8243693693693692e-301,
            1.0512105855855856e-300,
        ],
        ses: [
            1.9508474854498097e-303,
            1.8043929613471089e-303,
            1.8104786209895061e-303,
            1.9508474854498097e-303,
            2.0119129132737486e-303,
            1.8104786209895061e-303,
        ],
    },
    Reference {
        case: "-170",
        f: 5.3028024884106414e+2,
        p: 5.1475739706988803e-13,
        pooled_sd: 2.7953535557244788e-173,
        means: [
            1.0093536036036036e-170,
            1.0304853603603604e-170,
            9.8243693693693698e-171,
            1.0512105855855856e-170,
        ],
        ses: [
            1.9508474854497988e-173,
            1.8043929613470988e-173,
            1.810478620989496e-173,
            1.9508474854497988e-173,
            2.0119129132737374e-173,
            1.810478620989496e-173,
        ],
    },
    Reference {
        case: "160",
        f: 5.3028024884105794e+2,
        p: 5.1475739706992388e-13,
        pooled_sd: 2.795353555724498e+157,
        means: [
            1.0093536036036036e+160,
            1.0304853603603604e+160,
            9.8243693693693692e+159,
            1.0512105855855856e+160,
        ],
        ses: [
            1.9508474854498122e+157,
            1.8043929613471112e+157,
            1.8104786209895083e+157,
            1.9508474854498122e+157,
            2.0119129132737512e+157,
            1.8104786209895083e+157,
        ],
    },
    Reference {
        case: "300",
        f: 5.3028024884106016e+2,
        p: 5.1475739706991104e-13,
        pooled_sd: 2.7953535557244889e+297,
        means: [
            1.0093536036036036e+300,
            1.0304853603603604e+300,
            9.8243693693693695e+299,
            1.0512105855855856e+300,
        ],
        ses: [
            1.9508474854498059e+297,
            1.8043929613471054e+297,
            1.8104786209895025e+297,
            1.9508474854498059e+297,
            2.0119129132737447e+297,
            1.8104786209895025e+297,
        ],
    },
    Reference {
        case: "offset 1e9",
        f: 5.3028024884106358e+2,
        p: 5.1475739706989127e-13,
        pooled_sd: 2.7953535557244814e-3,
        means: [
            1.0000000010093536e+9,
            1.0000000010304854e+9,
            1.0000000009824369e+9,
            1.0000000010512106e+9,
        ],
        ses: [
            1.9508474854498006e-3,
            1.8043929613471005e-3,
            1.8104786209894976e-3,
            1.9508474854498006e-3,
            2.0119129132737393e-3,
            1.8104786209894976e-3,
        ],
    },
];

/// mpmath 1.3.0 (`blocked_magnitude_reference.py`): sums of squares for blocks,
/// conditions (adjusted for blocks) and error, where they lie within the range of f64.
const SUMS_OF_SQUARES: [(&str, [f64; 3]); 2] = [
    (
        "0",
        [2.7635052631578932e-3, 1.2430831981981983e-2, 9.3768018018018453e-5],
    ),
    (
        "offset 1e9",
        [2.7635052631578947e-3, 1.2430831981981982e-2, 9.3768018018018018e-5],
    ),
];

#[test]
fn blocked_trial_matches_mpmath_at_every_magnitude() {
    for reference in &MPMATH {
        let case = reference.case;
        let fit = fit(&values_at(case));
        check(&format!("{case}: F"), fit.anova[0].f.expect("F"), reference.f, 12.0);
        check(&format!("{case}: p"), fit.anova[0].p.expect("p"), reference.p, 12.0);
        check(&format!("{case}: pooled SD"), fit.pooled_sd, reference.pooled_sd, 12.0);
        assert_eq!(fit.pooled_df, 12.0, "{case}");
        for (condition, &want) in fit.conditions.iter().zip(&reference.means) {
            check(
                &format!("{case}: least-squares mean of {}", condition.name),
                condition.mean,
                want,
                12.0,
            );
        }
        for (pair, &want) in fit.pairs.iter().zip(&reference.ses) {
            check(
                &format!("{case}: SE of {} - {}", pair.first, pair.second),
                pair.se,
                want,
                12.0,
            );
        }
        let verdict = read_fit("thickness", None, &fit, None);
        assert_eq!(verdict.conditions_differ, Some(true), "{case}: {}", verdict.headline);
    }
    for (case, sums) in SUMS_OF_SQUARES {
        let fit = fit(&values_at(case));
        for (line, want) in [1, 0, 2].into_iter().zip(sums) {
            check(
                &format!("{case}: SS {}", fit.anova[line].source),
                fit.anova[line].ss,
                want,
                12.0,
            );
        }
    }
}

/// Data multiplied by a power of two are the same trial in another unit: F, p and every
/// share of variation agree with scale 1 exactly or nearly so, and every figure in the
/// unit is the scale-1 figure times the power (squared for sums of squares, where the
/// scaled sum is within range). Common practice: the analysis does not depend on the unit.
#[test]
fn powers_of_two_give_the_scale_one_blocked_answers() {
    let base_values = values_at("0");
    let base = fit(&base_values);
    for power in [-997_i32, -565, 531, 997] {
        let factor = |x: f64| x * 2f64.powi(power / 2) * 2f64.powi(power - power / 2);
        let scaled: Vec<f64> = base_values.iter().map(|&value| factor(value)).collect();
        let run = fit(&scaled);
        let label = |what: &str| format!("2^{power} {what}");
        check(
            &label("F"),
            run.anova[0].f.expect("F"),
            base.anova[0].f.expect("F"),
            13.0,
        );
        check(
            &label("p"),
            run.anova[0].p.expect("p"),
            base.anova[0].p.expect("p"),
            13.0,
        );
        check(&label("partial eta squared"), run.r_squared, base.r_squared, 13.0);
        check(&label("omega squared"), run.omega_squared, base.omega_squared, 13.0);
        check(&label("pooled SD"), run.pooled_sd, factor(base.pooled_sd), 13.0);
        for (ours, theirs) in run.conditions.iter().zip(&base.conditions) {
            check(
                &label(&format!("mean of {}", ours.name)),
                ours.mean,
                factor(theirs.mean),
                13.0,
            );
            check(
                &label(&format!("interval half-width of {}", ours.name)),
                ours.mean_half_width,
                factor(theirs.mean_half_width),
                13.0,
            );
        }
        for (ours, theirs) in run.pairs.iter().zip(&base.pairs) {
            check(&label("SE of a difference"), ours.se, factor(theirs.se), 13.0);
            check(&label("t of a difference"), ours.t, theirs.t, 13.0);
        }
        let (ours, theirs) = (
            run.blocks.as_ref().expect("blocks"),
            base.blocks.as_ref().expect("blocks"),
        );
        for (shift, reference) in ours.shifts.iter().zip(&theirs.shifts) {
            check(&label("block shift"), shift.shift, factor(reference.shift), 13.0);
        }
        for (ours, theirs) in run.anova.iter().zip(&base.anova) {
            let want = factor(factor(theirs.ss));
            if want.is_finite() && want >= f64::MIN_POSITIVE {
                check(&label(&format!("SS {}", ours.source)), ours.ss, want, 13.0);
            }
        }
    }
}
