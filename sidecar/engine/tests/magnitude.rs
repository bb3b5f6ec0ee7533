//! The one-way analysis at any magnitude: the same invented trial (3 conditions, 5 runs
//! each, about 1 % spread) written near 1e-300, 1e-170, 1e160 and 1e300 must give the
//! statistics of the trial at scale 1, with SDs in the data's own unit; degenerate trials
//! (every condition constant, one value per condition) give neither F nor p at any
//! magnitude.
//!
//! Reference values: `magnitude_reference.py` beside this file (mpmath 1.3.0, 50
//! significant digits, on the exact doubles of the data).

// The tests print the accuracy they measured.
#![allow(clippy::print_stdout)]
// Reference values keep the 17 digits mpmath printed.
#![allow(clippy::excessive_precision)]

mod common;
use common::check;

use engine::analysis::assessment::{assess, Assessment, AssessmentOptions};
use engine::analysis::oneway::{fit_one_way, OneWayFit};
use engine::analysis::verdict::read_fit;

const BASE: [[&str; 5]; 3] = [
    ["1.012", "0.994", "1.003", "1.021", "0.987"],
    ["1.031", "1.018", "1.044", "1.026", "1.009"],
    ["0.978", "1.002", "0.969", "0.991", "0.985"],
];

struct Run {
    fit: OneWayFit,
    assessment: Assessment,
}

fn analyse(groups: &[Vec<f64>]) -> Run {
    let names: Vec<String> = (0..groups.len())
        .map(|index| format!("condition {}", index + 1))
        .collect();
    let mut labels = Vec::new();
    let mut values = Vec::new();
    let mut records = Vec::new();
    for (index, group) in groups.iter().enumerate() {
        let mut own = Vec::new();
        for &value in group {
            own.push(values.len());
            labels.push(index as u32);
            values.push(value);
        }
        records.push(own);
    }
    let fit = fit_one_way(&names, &labels, &values, 0.95, &[]).expect("the trial fits");
    let assessment = assess(&fit, groups, &records, &AssessmentOptions::default());
    Run { fit, assessment }
}

fn trial_at(exponent: &str) -> Vec<Vec<f64>> {
    BASE.iter()
        .map(|group| {
            group
                .iter()
                .map(|text| format!("{text}e{exponent}").parse::<f64>().expect("a number"))
                .collect()
        })
        .collect()
}

/// The figures compared: (name, value) for every unit-free statistic of a run.
fn unit_free(run: &Run) -> Vec<(&'static str, f64)> {
    let checks = &run.assessment.checks;
    let welch = run.assessment.welch.as_ref().expect("Welch's ANOVA");
    let ranks = run.assessment.rank_based.as_ref().expect("rank analysis");
    let games_howell = run.assessment.games_howell.as_ref().expect("Games-Howell");
    let tukey = run.assessment.tukey_kramer.as_ref().expect("Tukey-Kramer");
    let normality = checks.normality.as_ref().expect("normality check");
    vec![
        ("F", run.fit.between().f.expect("F")),
        ("p", run.fit.between().p.expect("p")),
        ("R squared", run.fit.r_squared),
        ("omega squared", run.fit.omega_squared),
        ("Welch F", welch.f),
        ("Welch p", welch.p),
        ("Welch df", welch.df_within),
        ("Levene F", checks.levene.as_ref().expect("Levene").statistic),
        ("Levene p", checks.levene.as_ref().expect("Levene").p),
        (
            "Brown-Forsythe F",
            checks.brown_forsythe_spread.as_ref().expect("Brown-Forsythe").statistic,
        ),
        ("Bartlett", checks.bartlett.as_ref().expect("Bartlett").statistic),
        ("Bartlett p", checks.bartlett.as_ref().expect("Bartlett").p),
        ("SD ratio", checks.sd_ratio.expect("SD ratio")),
        ("normality statistic", normality.statistic),
        ("normality p", normality.p),
        ("Kruskal-Wallis H", ranks.h),
        ("Games-Howell p (1, 2)", games_howell.pairs[0].p_adjusted),
        ("Games-Howell df (1, 2)", games_howell.pairs[0].df),
        ("Tukey-Kramer p (1, 2)", tukey.pairs[0].p_adjusted),
    ]
}

/// Figures in the data's unit: (name, value) for SDs, means and interval ends.
fn in_unit(run: &Run) -> Vec<(String, f64)> {
    let mut figures = vec![("pooled SD".to_string(), run.fit.pooled_sd)];
    for condition in &run.fit.conditions {
        figures.push((format!("SD of {}", condition.name), condition.sd));
        figures.push((format!("mean of {}", condition.name), condition.mean));
        figures.push((
            format!("interval half-width of {}", condition.name),
            condition.mean_half_width,
        ));
    }
    let games_howell = run.assessment.games_howell.as_ref().expect("Games-Howell");
    figures.push(("Games-Howell se (1, 2)".into(), games_howell.pairs[0].se));
    figures
}

/// Data multiplied by a power of two are the same trial in another unit: every unit-free
/// statistic must agree with scale 1, and every figure in the unit must be the scale-1
/// figure times the power (common practice: the analysis does not depend on the unit).
#[test]
fn powers_of_two_give_the_scale_one_answers() {
    let base = analyse(&trial_at("0"));
    for power in [-997_i32, -565, 531, 997] {
        let factor = |x: f64| x * 2f64.powi(power / 2) * 2f64.powi(power - power / 2);
        let scaled: Vec<Vec<f64>> = trial_at("0")
            .iter()
            .map(|group| group.iter().map(|&value| factor(value)).collect())
            .collect();
        let run = analyse(&scaled);
        assert!(run.assessment.notes.is_empty(), "2^{power}: {:?}", run.assessment.notes);
        for ((name, value), (_, reference)) in unit_free(&run).into_iter().zip(unit_free(&base)) {
            check(&format!("2^{power} {name}"), value, reference, 13.0);
        }
        for ((name, value), (_, reference)) in in_unit(&run).into_iter().zip(in_unit(&base)) {
            check(&format!("2^{power} {name}"), value, factor(reference), 13.0);
        }
    }
}

/// Reference values: mpmath 1.3.0 (`magnitude_reference.py`), on the doubles nearest the
/// decimals; order: F, p, pooled SD, the three SDs, Welch F, Welch p, Levene F, Bartlett.
const MPMATH: [(&str, [f64; 10]); 5] = [
    (
        "0",
        [
            1.1965643698127757e+1,
            1.3875569221110238e-3,
            1.3141537200799616e-2,
            1.3612494260788482e-2,
            1.3240090634130906e-2,
            1.2549900398011144e-2,
            1.1434690595927035e+1,
            4.523554529108988e-3,
            3.9725367991689506e-2,
            2.4363259105347956e-2,
        ],
    ),
    (
        "-300",
        [
            1.1965643698127779e+1,
            1.3875569221110136e-3,
            1.3141537200799612e-302,
            1.3612494260788508e-302,
            1.324009063413085e-302,
            1.2549900398011164e-302,
            1.1434690595927086e+1,
            4.5235545291089287e-3,
            3.9725367991688817e-2,
            2.4363259105347499e-2,
        ],
    ),
    (
        "-170",
        [
            1.1965643698127781e+1,
            1.3875569221110128e-3,
            1.3141537200799604e-172,
            1.3612494260788512e-172,
            1.3240090634130907e-172,
            1.2549900398011075e-172,
            1.1434690595927095e+1,
            4.5235545291089211e-3,
            3.9725367991691486e-2,
            2.4363259105352621e-2,
        ],
    ),
    (
        "160",
        [
            1.1965643698127757e+1,
            1.3875569221110236e-3,
            1.3141537200799625e+158,
            1.3612494260788497e+158,
            1.3240090634130904e+158,
            1.254990039801116e+158,
            1.143469059592704e+1,
            4.5235545291089824e-3,
            3.9725367991687723e-2,
            2.436325910534771e-2,
        ],
    ),
    (
        "300",
        [
            1.1965643698127769e+1,
            1.3875569221110183e-3,
            1.3141537200799605e+298,
            1.3612494260788521e+298,
            1.3240090634130877e+298,
            1.2549900398011099e+298,
            1.1434690595927093e+1,
            4.5235545291089226e-3,
            3.9725367991692956e-2,
            2.4363259105351509e-2,
        ],
    ),
];

#[test]
fn decimal_magnitudes_match_mpmath() {
    let names = [
        "F",
        "p",
        "pooled SD",
        "SD 1",
        "SD 2",
        "SD 3",
        "Welch F",
        "Welch p",
        "Levene F",
        "Bartlett",
    ];
    for (exponent, reference) in MPMATH {
        let run = analyse(&trial_at(exponent));
        let welch = run.assessment.welch.as_ref().expect("Welch's ANOVA");
        let checks = &run.assessment.checks;
        let ours = [
            run.fit.between().f.expect("F"),
            run.fit.between().p.expect("p"),
            run.fit.pooled_sd,
            run.fit.conditions[0].sd,
            run.fit.conditions[1].sd,
            run.fit.conditions[2].sd,
            welch.f,
            welch.p,
            checks.levene.as_ref().expect("Levene").statistic,
            checks.bartlett.as_ref().expect("Bartlett").statistic,
        ];
        for ((name, value), expected) in names.iter().zip(ours).zip(reference) {
            check(&format!("1e{exponent} {name}"), value, expected, 12.0);
        }
        let verdict = read_fit("yield", None, &run.fit, Some(&run.assessment));
        assert_eq!(
            verdict.conditions_differ,
            Some(true),
            "1e{exponent}: {}",
            verdict.headline
        );
    }
}

/// Every condition constant but the means differ, and one value per condition: F has no
/// denominator at any magnitude, so neither F nor p is given and the verdict says why
/// (common practice: the ratio is undefined); never a p of 0 or 1 beside an empty F.
#[test]
fn degenerate_trials_give_no_f_and_no_p_at_any_magnitude() {
    for exponent in ["-300", "-170", "0", "160", "300"] {
        let value = |text: &str| format!("{text}e{exponent}").parse::<f64>().expect("a number");
        let names = vec!["a".to_string(), "b".to_string()];
        let constant = [value("1.5"), value("1.5"), value("2.5"), value("2.5")];
        let fit = fit_one_way(&names, &[0, 0, 1, 1], &constant, 0.95, &[]).expect("fits");
        assert_eq!((fit.between().f, fit.between().p), (None, None), "1e{exponent}");
        assert_eq!(fit.conditions[0].sd, 0.0, "1e{exponent}");
        let verdict = read_fit("yield", None, &fit, None);
        assert!(
            verdict.headline.contains("repeat exactly"),
            "1e{exponent}: {}",
            verdict.headline
        );

        let single = [value("1.5"), value("2.5")];
        let fit = fit_one_way(&names, &[0, 1], &single, 0.95, &[]).expect("fits");
        assert_eq!((fit.between().f, fit.between().p), (None, None), "1e{exponent}");
        let verdict = read_fit("yield", None, &fit, None);
        assert!(
            verdict.headline.contains("repeated runs"),
            "1e{exponent}: {}",
            verdict.headline
        );

        // With spread, the verdict never says there is none.
        let spread = [value("1.5"), value("1.52"), value("2.5"), value("2.49")];
        let fit = fit_one_way(&names, &[0, 0, 1, 1], &spread, 0.95, &[]).expect("fits");
        assert!(fit.pooled_sd > 0.0 && fit.pooled_sd.is_finite(), "1e{exponent}");
        assert!(fit.between().p.is_some(), "1e{exponent}");
        let verdict = read_fit("yield", None, &fit, None);
        assert!(
            !verdict.headline.contains("no spread"),
            "1e{exponent}: {}",
            verdict.headline
        );
        assert!(
            !verdict.headline.contains("repeat exactly"),
            "1e{exponent}: {}",
            verdict.headline
        );
    }
}
