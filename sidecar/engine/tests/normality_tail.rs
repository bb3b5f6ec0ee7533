//! The normality checks deep in the tail: Shapiro-Wilk p from about 0.9 down to 1e-95 and
//! Anderson-Darling p from about 0.96 down to 1e-190 keep 12 or more digits of the
//! published formulas they evaluate, as do W and A².
//!
//! Both p-values are published approximations (Royston 1992/1995 for Shapiro-Wilk,
//! D'Agostino & Stephens 1986 Table 4.9 for Anderson-Darling): the reference is each
//! published formula itself, evaluated in mpmath 1.3.0 at 50 significant digits on the
//! exact data by `normality_tail_reference.py` beside this file. The digits checked are
//! those of the arithmetic, not of the approximation to the true null distribution.

// The tests print the accuracy they measured.
#![allow(clippy::print_stdout)]
// Reference values keep the 17 digits mpmath printed.
#![allow(clippy::excessive_precision)]

mod common;
use common::check;

use engine::stats::normality::{anderson_darling, shapiro_wilk};

/// (data kind, n, parameter, mpmath 1.3.0: W, Shapiro-Wilk p, A², Anderson-Darling p).
/// "power": x_i = i^k for i = 1..n; "outlier": 1, 2, ..., n - 1 and the parameter.
type Case = (&'static str, u64, u64, [f64; 4]);

const CASES: [Case; 14] = [
    (
        "power",
        8,
        1,
        [
            9.7485825629368441e-1,
            9.3316519158339125e-1,
            1.3400045881773767e-1,
            9.6145569293857936e-1,
        ],
    ),
    (
        "power",
        10,
        3,
        [
            8.5266415573657143e-1,
            6.2482899720519607e-2,
            6.0393037903841909e-1,
            8.3564924990575556e-2,
        ],
    ),
    (
        "power",
        20,
        1,
        [
            9.6037518310643495e-1,
            5.5137174304008615e-1,
            2.2073784165630366e-1,
            8.0635506132837078e-1,
        ],
    ),
    (
        "power",
        30,
        2,
        [
            9.0142053481910237e-1,
            9.0997874713901138e-3,
            9.5127217118470543e-1,
            1.4000108090191337e-2,
        ],
    ),
    (
        "power",
        100,
        4,
        [
            7.6245336560199202e-1,
            2.0243741637678885e-11,
            9.1280461552592359,
            2.745058937039294e-22,
        ],
    ),
    (
        "power",
        300,
        3,
        [
            8.2440307279715312e-1,
            9.3201730818526836e-18,
            1.9135741681400373e+1,
            9.3330068142226161e-45,
        ],
    ),
    (
        "power",
        1000,
        4,
        [
            7.608125960048174e-1,
            9.8684415597723928e-36,
            9.2204944448807197e+1,
            3.6106477296911459e-160,
        ],
    ),
    (
        "power",
        5000,
        4,
        [
            7.607731752604281e-1,
            5.0903497452792805e-65,
            4.6146688252312092e+2,
            2.0364300798538217e-190,
        ],
    ),
    (
        "outlier",
        30,
        200,
        [
            3.91343817227239e-1,
            4.517708753478203e-10,
            5.8331385828447629,
            9.8105777019807747e-15,
        ],
    ),
    (
        "outlier",
        200,
        1000000,
        [
            4.43717133706282e-2,
            1.8259445446832051e-30,
            7.6758286064592104e+1,
            3.0231921306546304e-143,
        ],
    ),
    (
        "outlier",
        5000,
        1000000000000,
        [
            3.0157864433632952e-3,
            8.818918357224819e-96,
            1.9311998041372536e+3,
            2.0364300798538217e-190,
        ],
    ),
    (
        "power",
        12,
        1,
        [
            9.6689636329140475e-1,
            8.7573144336587616e-1,
            1.5302352885304137e-1,
            9.4154726011156687e-1,
        ],
    ),
    (
        "power",
        15,
        2,
        [
            9.1115464245337795e-1,
            1.4104421947058551e-1,
            4.6753072164652921e-1,
            2.1398942865767247e-1,
        ],
    ),
    (
        "outlier",
        100,
        10000,
        [
            9.0721483240210574e-2,
            4.8533661946820558e-22,
            3.5692560615793957e+1,
            6.8081909319760893e-79,
        ],
    ),
];

/// The data of a case, every value an exact double (integers below 2^53).
fn data(kind: &str, n: u64, parameter: u64) -> Vec<f64> {
    match kind {
        "power" => (1..=n).map(|i| i.pow(parameter as u32) as f64).collect(),
        "outlier" => (1..n).chain([parameter]).map(|i| i as f64).collect(),
        other => panic!("unknown data kind {other}"),
    }
}

#[test]
fn normality_statistics_and_p_keep_their_digits_deep_in_the_tail() {
    for (kind, n, parameter, [w, p_w, a_squared, p_a]) in CASES {
        let values = data(kind, n, parameter);
        let label = format!("{kind} n {n} ({parameter})");
        let sw = shapiro_wilk(&values).expect("Shapiro-Wilk");
        check(&format!("{label}: W"), sw.w, w, 12.0);
        check(&format!("{label}: Shapiro-Wilk p"), sw.p_value, p_w, 12.0);
        let ad = anderson_darling(&values).expect("Anderson-Darling");
        check(&format!("{label}: A²"), ad.a_squared, a_squared, 12.0);
        check(&format!("{label}: Anderson-Darling p"), ad.p_value, p_a, 12.0);
    }
}
