//! The factorial analyses at any magnitude: three invented trials (a replicated 2^3, a
//! replicated 3x2 and a 2^(4-1) screen with three centre points) written at scale factors
//! 1e-300, 1e-150, 1, 1e150 and 1e300 and at offsets 1e6 and 1e9 must give the k-way
//! model's sums of squares, F and p, the two-level effects, t and p, the curvature test
//! and the means of the exact arithmetic, at every scale. A sum of squares beyond the
//! largest double is reported infinite (said "beyond the range of the arithmetic"), one
//! below the smallest normal double is left empty (NaN), while F and p stand.
//!
//! Reference values: `factorial_magnitude_reference.py` beside this file (Python
//! fractions on the exact doubles, or on the typed decimals at an offset; mpmath 1.3.0
//! for the tail probabilities), written to `factorial_magnitude/reference_values.rs`.

// The tests print the accuracy they measured.
#![allow(clippy::print_stdout)]
// Reference values keep the 17 digits mpmath printed.
#![allow(clippy::excessive_precision)]

mod common;
#[path = "factorial_magnitude/reference_values.rs"]
mod reference_values;

use common::{check, lre};
use engine::analysis::factorial::{analyse_factorial, FactorData, FactorialData, FactorialOptions, FactorialOutcome};
use reference_values::REFERENCE;

const TWO_CUBED: [[&str; 8]; 2] = [
    ["1.012", "1.031", "0.994", "1.044", "1.003", "1.026", "0.978", "1.021"],
    ["1.009", "1.035", "0.991", "1.047", "1.006", "1.022", "0.981", "1.018"],
];
const THREE_BY_TWO: [[[&str; 3]; 2]; 3] = [
    [["1.021", "1.014", "1.027"], ["0.987", "0.995", "0.979"]],
    [["1.048", "1.041", "1.036"], ["1.002", "1.011", "0.996"]],
    [["0.969", "0.981", "0.974"], ["0.958", "0.951", "0.966"]],
];
const SCREEN: [&str; 8] = ["1.004", "1.037", "0.989", "1.052", "1.011", "1.029", "0.983", "1.046"];
const SCREEN_CENTRE: [&str; 3] = ["1.031", "1.024", "1.036"];

/// The value typed in a variant: the base with an exponent appended, or an offset added
/// to the typed decimal (as a workbook would hold it).
fn typed(variant: &str, base: &str) -> f64 {
    if let Some(exponent) = variant.strip_prefix("scale 1e") {
        let text = if exponent == "0" {
            base.to_string()
        } else {
            format!("{base}e{exponent}")
        };
        return text.parse().expect("a number");
    }
    let offset: u64 = variant
        .strip_prefix("offset ")
        .expect("a variant")
        .parse()
        .expect("an offset");
    let (whole, fraction) = base.split_once('.').expect("a decimal");
    let whole: u64 = whole.parse().expect("digits");
    format!("{}.{fraction}", offset + whole).parse().expect("a number")
}

/// Factor columns (name, label of each record) and the responses.
struct Trial {
    columns: Vec<(&'static str, Vec<String>)>,
    values: Vec<f64>,
}

impl Trial {
    fn analyse(&self) -> FactorialOutcome {
        let mut levels: Vec<Vec<String>> = Vec::new();
        let mut indices: Vec<Vec<u32>> = Vec::new();
        for (_, labels) in &self.columns {
            let mut own: Vec<String> = Vec::new();
            let mut index = Vec::new();
            for label in labels {
                let position = own.iter().position(|known| known == label).unwrap_or_else(|| {
                    own.push(label.clone());
                    own.len() - 1
                });
                index.push(position as u32);
            }
            levels.push(own);
            indices.push(index);
        }
        let data = FactorialData {
            factors: self
                .columns
                .iter()
                .zip(levels.iter().zip(&indices))
                .map(|((name, _), (levels, level_of_record))| FactorData {
                    name,
                    levels,
                    level_of_record,
                    is_block: false,
                })
                .collect(),
            response_name: "yield",
            values: &self.values,
        };
        analyse_factorial(&data, &FactorialOptions::default()).expect("a factorial outcome")
    }
}

fn two_cubed(variant: &str) -> Trial {
    let mut columns = vec![("A", Vec::new()), ("B", Vec::new()), ("C", Vec::new())];
    let mut values = Vec::new();
    for replicate in TWO_CUBED {
        for (run, base) in replicate.iter().enumerate() {
            for (bit, (_, labels)) in columns.iter_mut().enumerate() {
                labels.push(if run >> bit & 1 == 1 { "20" } else { "10" }.to_string());
            }
            values.push(typed(variant, base));
        }
    }
    Trial { columns, values }
}

fn three_by_two(variant: &str) -> Trial {
    let mut columns = vec![("P", Vec::new()), ("Q", Vec::new())];
    let mut values = Vec::new();
    for (p, row) in THREE_BY_TWO.iter().enumerate() {
        for (q, cell) in row.iter().enumerate() {
            for base in cell {
                columns[0].1.push(format!("mix {}", p + 1));
                columns[1].1.push(["left", "right"][q].to_string());
                values.push(typed(variant, base));
            }
        }
    }
    Trial { columns, values }
}

fn screen(variant: &str) -> Trial {
    let mut columns = vec![
        ("A", Vec::new()),
        ("B", Vec::new()),
        ("C", Vec::new()),
        ("D", Vec::new()),
    ];
    let mut values = Vec::new();
    for (run, base) in SCREEN.iter().enumerate() {
        let high: Vec<bool> = (0..3).map(|bit| run >> bit & 1 == 1).collect();
        let d = high.iter().filter(|&&h| !h).count() % 2 == 0;
        for (factor, is_high) in high.iter().chain([d].iter()).enumerate() {
            columns[factor].1.push(if *is_high { "20" } else { "10" }.to_string());
        }
        values.push(typed(variant, base));
    }
    for base in SCREEN_CENTRE {
        for column in &mut columns {
            column.1.push("15".to_string());
        }
        values.push(typed(variant, base));
    }
    Trial { columns, values }
}

/// The engine's figure of that name, `None` when the outcome has none.
fn figure(outcome: &FactorialOutcome, trial: &str, name: &str) -> Option<f64> {
    let model = outcome.model.as_ref();
    let two = outcome.two_level.as_ref();
    let line = |source: &str| model.and_then(|m| m.type_iii.iter().find(|line| line.source == source));
    let effect = |term: &str| two.and_then(|t| t.effects.iter().find(|e| e.term == term));
    if name == "residual SS" {
        return model.map(|m| m.error_lines[0].sum_sq);
    }
    if name == "grand mean" {
        return if trial == "2^(4-1)" {
            two.and_then(|t| t.grand_mean)
        } else {
            model.and_then(|m| m.grand_mean)
        };
    }
    if let Some(level) = name.strip_prefix("P mean ") {
        let level: usize = level.parse().ok()?;
        let means = &model?.ls_means.iter().find(|m| m.factor == "P")?.means;
        return means.iter().find(|m| m.label == format!("mix {}", level + 1))?.estimate;
    }
    if let Some(what) = name.strip_prefix("curvature ") {
        let curvature = two?.curvature.as_ref()?;
        return match what {
            "difference" => Some(curvature.difference),
            "t" => curvature.t_value,
            _ => curvature.p_value,
        };
    }
    let (term, what) = match name.strip_suffix(" t p") {
        Some(term) => (term, "t p"),
        None => name.rsplit_once(' ').expect("a term and a figure"),
    };
    match (trial, what) {
        ("2^(4-1)", "effect") => effect(term).map(|e| e.effect),
        ("2^(4-1)", "t") => effect(term).and_then(|e| e.t_value),
        ("2^(4-1)", "p") => effect(term).and_then(|e| e.p_value),
        (_, "effect") => effect(term).map(|e| e.effect),
        (_, "t") => effect(term).and_then(|e| e.t_value),
        (_, "t p") => effect(term).and_then(|e| e.p_value),
        (_, "SS") => line(term).map(|l| l.sum_sq),
        (_, "F") => line(term).and_then(|l| l.f_value),
        (_, "p") => line(term).and_then(|l| l.p_value),
        _ => None,
    }
}

#[test]
fn factorial_figures_are_right_at_every_scale_and_offset() {
    let mut worst = f64::INFINITY;
    let mut cache: Vec<(String, String, FactorialOutcome)> = Vec::new();
    for &(trial, variant, name, reference) in REFERENCE {
        if !cache.iter().any(|(t, v, _)| t == trial && v == variant) {
            let built = match trial {
                "2^3" => two_cubed(variant),
                "3x2" => three_by_two(variant),
                _ => screen(variant),
            };
            cache.push((trial.to_string(), variant.to_string(), built.analyse()));
        }
        let outcome = &cache
            .iter()
            .find(|(t, v, _)| t == trial && v == variant)
            .expect("analysed")
            .2;
        let actual = figure(outcome, trial, name).unwrap_or_else(|| panic!("{trial} {variant}: no {name}"));
        let label = format!("{trial} at {variant}: {name}");
        if reference.is_infinite() {
            println!("{label}: {actual:e}, beyond the largest double as expected");
            assert_eq!(actual, reference, "{label}");
        } else if reference.is_nan() {
            println!("{label}: {actual:e}, below the smallest normal double as expected");
            assert!(actual.is_nan(), "{label}: {actual:e} where the sum is below the range");
        } else {
            check(&label, actual, reference, 12.0);
            worst = worst.min(lre(actual, reference));
        }
    }
    println!("lowest LRE over {} figures: {worst:.1}", REFERENCE.len());
}

#[test]
fn f_and_p_are_the_same_at_every_scale() {
    // Scale invariance: F and p of the k-way model and the two-level t of the same trial
    // written at 1e-300 and at 1e300 agree with those at scale 1 (the doubles of the
    // data are not exactly proportional, so to 12 digits, not to the bit).
    for build in [two_cubed, three_by_two] {
        let unit = build("scale 1e0").analyse();
        for variant in ["scale 1e-300", "scale 1e300"] {
            let scaled = build(variant).analyse();
            let (unit_model, scaled_model) = (
                unit.model.as_ref().expect("model"),
                scaled.model.as_ref().expect("model"),
            );
            for (a, b) in unit_model.type_iii.iter().zip(&scaled_model.type_iii) {
                for (x, y) in [(a.f_value, b.f_value), (a.p_value, b.p_value)] {
                    let (x, y) = (x.expect("a figure at scale 1"), y.expect("a figure when scaled"));
                    assert!(lre(y, x) >= 12.0, "{variant} {}: {y:e} against {x:e}", a.source);
                }
            }
            assert!(scaled_model.residual_sd.is_some_and(|sd| sd.is_finite() && sd > 0.0));
        }
    }
}
