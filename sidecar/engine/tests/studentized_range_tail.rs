//! The studentized range far into the tail (the adjusted p-values of Tukey-Kramer, and
//! of Games-Howell at fractional df): upper tails from about 9e-3 down to 1e-175, 3 to
//! 10 groups, df 5 to 10000 (37.5, as a Welch df may be) and infinite, keep 12 or more
//! digits.
//!
//! Reference values: `studentized_range_tail_reference.py` beside this file (mpmath
//! 1.3.0 at 25 significant digits; the tail integrated directly as a sum of positive
//! terms by Gauss-Legendre panels, checked there against erfc for two groups and
//! against scipy 1.17.1 at a moderate point).

// The tests print the accuracy they measured.
#![allow(clippy::print_stdout)]
// Reference values keep the 17 digits mpmath printed.
#![allow(clippy::excessive_precision)]

mod common;
use common::check;

use engine::stats::studentized_range::studentized_range_sf;

/// (q, groups, df, mpmath 1.3.0 upper tail P(Q > q)).
const CASES: [(f64, usize, f64, f64); 11] = [
    (9.0, 3, f64::INFINITY, 5.8974364166049210e-10),
    (20.0, 3, f64::INFINITY, 6.2654627512876328e-45),
    (28.0, 10, f64::INFINITY, 1.3667534314876402e-85),
    (40.0, 5, f64::INFINITY, 5.3958656116079009e-175),
    (12.0, 3, 20.0, 1.3530668531259978e-7),
    (30.0, 5, 120.0, 2.0427484105368312e-41),
    (25.0, 10, 1000.0, 2.0684094683044494e-59),
    (8.0, 4, 5.0, 8.9865422911742970e-3),
    (30.0, 3, 10000.0, 3.0171055683997872e-97),
    (18.0, 6, 37.5, 5.1993657953164294e-14),
    (60.0, 3, 40.0, 2.1105340587580801e-34),
];

#[test]
fn studentized_range_keeps_its_digits_far_into_the_tail() {
    for (q, groups, df, tail) in CASES {
        let actual = studentized_range_sf(q, groups, df).expect("upper tail");
        check(&format!("q {q}, {groups} groups, df {df}"), actual, tail, 12.0);
    }
}
