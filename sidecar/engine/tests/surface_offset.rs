//! The second-order model at a large offset: an invented central composite trial typed
//! at offsets of 1e6 and 1e9 keeps 12 or more digits of its coefficients, sums of squares
//! and F ratios, because the model starts from the exact decimal differences from one
//! centre (`centre_values`), not from the doubles less their mean.
//!
//! Reference values: `surface_offset_reference.py` beside this file, exact rational
//! arithmetic (Python fractions) on the typed decimals; the same at both offsets except
//! the intercept.

// The tests print the accuracy they measured.
#![allow(clippy::print_stdout)]
// Reference values keep the 17 digits printed.
#![allow(clippy::excessive_precision)]

mod common;
use common::check;

use engine::analysis::surface::{analyse_surface, SurfaceData, SurfaceOptions};

/// Coded settings (x1, x2) and the response in thousandths above the offset: four corner
/// runs, four axial runs at 1.5, five centre runs.
const RUNS: [([f64; 2], u64); 13] = [
    ([-1.0, -1.0], 1523),
    ([1.0, -1.0], 2416),
    ([-1.0, 1.0], 1284),
    ([1.0, 1.0], 2617),
    ([-1.5, 0.0], 1158),
    ([1.5, 0.0], 2371),
    ([0.0, -1.5], 2297),
    ([0.0, 1.5], 1779),
    ([0.0, 0.0], 2318),
    ([0.0, 0.0], 2296),
    ([0.0, 0.0], 2331),
    ([0.0, 0.0], 2305),
    ([0.0, 0.0], 2322),
];

/// Exact fractions: the intercept at each offset.
const INTERCEPTS: [(u64, f64); 2] = [
    (1_000_000, 1.0000023150342936e+6),
    (1_000_000_000, 1.0000000023150343e+9),
];

/// Exact fractions: the coefficients of x1, x2, x1 x2, x1², x2².
const SLOPES: [f64; 5] = [
    4.7594117647058824e-1,
    -9.5882352941176471e-2,
    1.1e-1,
    -2.4186282578875171e-1,
    -1.2030727023319616e-1,
];

/// Exact fractions: (source, sum of squares, F against the residual; 0 where none).
const ANOVA: [(&str, f64, f64); 6] = [
    ("Linear", 2.0035641470588235, 6.5812589372890337e+1),
    ("Interaction", 4.84e-2, 3.1796629325034262),
    ("Square", 5.3451798601878232e-1, 1.7557717220044491e+1),
    ("Residual", 1.0655217461470185e-1, 0.0),
    ("Lack of fit", 1.0577897461470185e-1, 0.0),
    ("Pure error", 7.732e-4, 0.0),
];

#[test]
fn second_order_model_keeps_its_digits_at_a_large_offset() {
    for (offset, intercept) in INTERCEPTS {
        let values: Vec<f64> = RUNS
            .iter()
            .map(|&(_, thousandths)| {
                // The decimal a cell would hold, read as the nearest double.
                let text = format!("{}.{:03}", offset + thousandths / 1000, thousandths % 1000);
                text.parse::<f64>().expect("a number")
            })
            .collect();
        let data = SurfaceData {
            factor_names: vec!["Temperature".into(), "Time".into()],
            coding: vec![(0.0, 1.0), (0.0, 1.0)],
            settings: RUNS.iter().map(|(coded, _)| coded.to_vec()).collect(),
            blocks: Vec::new(),
            values,
        };
        let outcome = analyse_surface(&data, &SurfaceOptions::default()).expect("the surface fits");
        assert!(outcome.exact_decimal, "the typed decimals were recognised");
        let at = format!("offset {offset}");
        let estimates: Vec<f64> = outcome.coefficients.iter().map(|line| line.estimate).collect();
        assert_eq!(estimates.len(), 6, "{estimates:?}");
        check(&format!("{at}: intercept"), estimates[0], intercept, 12.0);
        for (line, &reference) in outcome.coefficients[1..].iter().zip(&SLOPES) {
            check(&format!("{at}: {}", line.term), line.estimate, reference, 12.0);
        }
        for (source, ss, f) in ANOVA {
            let line = outcome
                .anova
                .iter()
                .find(|line| line.source == source)
                .unwrap_or_else(|| panic!("{at}: no {source} line"));
            check(&format!("{at}: {source} SS"), line.sum_sq, ss, 12.0);
            if f > 0.0 {
                check(&format!("{at}: {source} F"), line.f_value.expect("F"), f, 12.0);
            }
        }
    }
}
