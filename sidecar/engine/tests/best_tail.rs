//! Comparisons with the best deep in the tail: the adjusted p-value that a condition is
//! not the best keeps 12 or more digits from about 1e-5 down to 1e-227, taken from the
//! product-correlation family's survival function (never as one minus a probability near
//! one).
//!
//! Reference values: `best_tail_reference.py` beside this file (mpmath 1.3.0; the means
//! and pooled SD from exact fractions of the decimals below; the tail by the inner
//! integral of the Dunnett tail test, `inner_tail` of
//! `src/stats/testdata/dunnett_reference.py`, under fixed Gauss-Legendre panels over the
//! chi variable, at 25 digits, agreeing with half as many nodes to 15 digits).

// The tests print the accuracy they measured.
#![allow(clippy::print_stdout)]
// Reference values keep the 17 digits mpmath printed.
#![allow(clippy::excessive_precision)]

mod common;
use common::check;

use engine::analysis::comparisons::with_the_best;
use engine::analysis::oneway::fit_one_way;
use engine::options::Direction;

/// The spread every condition shares, in units of 1e-4 (the first `size` entries).
const PATTERN: [i64; 8] = [-12, 7, 4, -3, 11, -9, 2, 5];

/// Each condition's size and mean in units of 1e-4 (the first is the best).
///
/// The means lie near 0: at an offset such as 100 the means, each correctly rounded, differ
/// by 0.0028 with an error of 1e-14, and the lead of the second condition (t = 5.6) keeps
/// about 12 digits, its p-value about 11 (p moves by about df times the relative error of
/// t). Every figure here is unchanged by a shift, and the reference is the same at any.
const CONDITIONS: [(usize, i64); 6] = [
    (5, 30),
    (6, 2),
    (8, -104),
    (6, -1_718),
    (7, -122_970),
    (5, -569_999_970),
];

/// mpmath 1.3.0: the adjusted p-value that each condition after the first is not the
/// best (higher is better); the quadrature with half the nodes agrees to 15.2 digits or
/// more (printed by the script).
const P_NOT_BEST: [f64; 5] = [
    8.7026636860101172e-6,
    9.8881315041942602e-23,
    1.2568831136303115e-56,
    1.6191174613661394e-115,
    7.0552205047426725e-228,
];

/// The trial's names, labels and values, each value the decimal a cell would hold at
/// `offset` (read as the nearest double).
fn trial_at(offset: i64) -> (Vec<String>, Vec<u32>, Vec<f64>) {
    let mut names = Vec::new();
    let mut labels = Vec::new();
    let mut values = Vec::new();
    for (index, &(size, mean)) in CONDITIONS.iter().enumerate() {
        names.push(format!("condition {}", index + 1));
        for &spread in &PATTERN[..size] {
            let text = if offset == 0 {
                format!("{}e-4", mean + spread)
            } else {
                let units = offset * 10_000 + mean + spread;
                format!("{}.{:04}", units / 10_000, units % 10_000)
            };
            values.push(text.parse::<f64>().expect("a number"));
            labels.push(index as u32);
        }
    }
    (names, labels, values)
}

#[test]
fn p_not_best_keeps_its_digits_at_an_offset() {
    // The same trial typed at 1e6 and 1e9 (e.g. 1000000000.0030): every figure is
    // unchanged by a shift, so the reference is the same. The leads come from the gaps
    // between means of the exact sums; from the rounded means they kept about 10.7
    // digits at 1e9.
    for offset in [1_000_000, 1_000_000_000] {
        let (names, labels, values) = trial_at(offset);
        let fit = fit_one_way(&names, &labels, &values, 0.95, &[]).expect("the trial fits");
        let best = with_the_best(&fit, Direction::HigherIsBetter, 0.95).expect("comparisons with the best");
        for (row, &p) in best.rows[1..].iter().zip(&P_NOT_BEST) {
            check(
                &format!("offset {offset}, {}: p not best", row.condition),
                row.p_not_best,
                p,
                12.0,
            );
        }
        assert_eq!(best.could_be_best, vec!["condition 1".to_string()]);
    }
}

#[test]
fn p_not_best_keeps_its_digits_deep_in_the_tail() {
    let (names, labels, values) = trial_at(0);
    let fit = fit_one_way(&names, &labels, &values, 0.95, &[]).expect("the trial fits");
    let best = with_the_best(&fit, Direction::HigherIsBetter, 0.95).expect("comparisons with the best");
    for (row, &p) in best.rows[1..].iter().zip(&P_NOT_BEST) {
        check(&format!("{}: p not best", row.condition), row.p_not_best, p, 12.0);
    }
    // The best trails no one: every other condition's lead over it is negative (about
    // -7.6 standard errors), so its p-value lies just below 1.
    let first = &best.rows[0];
    println!("condition 1: p not best {:e}", first.p_not_best);
    assert!(
        first.p_not_best > 0.999_999 && first.p_not_best <= 1.0,
        "{}",
        first.p_not_best
    );
    assert_eq!(best.could_be_best, vec!["condition 1".to_string()]);
}
