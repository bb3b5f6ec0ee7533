//! The rank-based analysis deep in the tail: Kruskal-Wallis H and p, and Dunn's z, p and
//! Holm and Bonferroni adjusted p for every pair, with p from about 0.99 down to 1e-296,
//! on tied integer data (2 to 4 groups, 30 to 2450 values).
//!
//! Reference values: `rank_tail_reference.py` beside this file (ranks, mean ranks, tie
//! sum and H in exact rational arithmetic with Python fractions; square roots and tails
//! in mpmath 1.3.0 at 50 significant digits).

// The tests print the accuracy they measured.
#![allow(clippy::print_stdout)]
// Reference values keep the 17 digits mpmath printed.
#![allow(clippy::excessive_precision)]

mod common;
use common::check;

use engine::stats::ranks::rank_analysis;

/// (groups as (n, low, high), mpmath 1.3.0: [H, p], per pair in the order (0,1), (0,2),
/// ..., (1,2), ...: [z, p, Holm p, Bonferroni p]).
type Case = (&'static [(u64, u64, u64)], [f64; 2], &'static [[f64; 4]]);

const CASES: [Case; 5] = [
    (
        &[(10, 0, 9), (12, 0, 10), (8, 1, 9)],
        [5.9630626588903843e-4, 9.9970189131028375e-1],
        &[
            [-2.4419382995666341e-2, 9.8051808754041077e-1, 1.0, 1.0],
            [-1.2023273046927738e-2, 9.9040704719085833e-1, 1.0, 1.0],
            [1.0412459895276152e-2, 9.9169220913069234e-1, 1.0, 1.0],
        ],
    ),
    (
        &[(30, 0, 20), (30, 10, 30), (25, 5, 25)],
        [2.6433941540840191e+1, 1.8194600614564643e-6],
        &[
            [
                -5.1323975521660872,
                2.8607444795923332e-7,
                8.5822334387769995e-7,
                8.5822334387769995e-7,
            ],
            [
                -2.7140356739956433,
                6.6469007932385952e-3,
                1.329380158647719e-2,
                1.9940702379715786e-2,
            ],
            [
                2.1795133851303741,
                2.9293551416078848e-2,
                2.9293551416078848e-2,
                8.7880654248236543e-2,
            ],
        ],
    ),
    (
        &[(200, 0, 99), (200, 100, 199), (150, 50, 149)],
        [3.8897343956665173e+2, 3.4315536615353031e-85],
        &[
            [
                -1.9664810489130603e+1,
                4.3177768237018757e-86,
                1.2953330471105627e-85,
                1.2953330471105627e-85,
            ],
            [
                -7.7679261051968903,
                7.9781579300749826e-15,
                7.9781579300749826e-15,
                2.3934473790224948e-14,
            ],
            [
                1.0438150703858321e+1,
                1.6601318342375996e-25,
                3.3202636684751992e-25,
                4.9803955027127988e-25,
            ],
        ],
    ),
    (
        &[(400, 0, 399), (400, 400, 799)],
        [5.9925093632958801e+2, 2.4362761245483528e-132],
        &[[
            -2.4479602454484183e+1,
            2.4362761245483528e-132,
            2.4362761245483528e-132,
            2.4362761245483528e-132,
        ]],
    ),
    (
        &[(800, 0, 199), (700, 100, 299), (900, 150, 349), (50, 0, 499)],
        [1.3697644909393195e+3, 1.0715187219838928e-296],
        &[
            [
                -2.0631909847180373e+1,
                1.419324355170323e-94,
                7.0966217758516151e-94,
                8.5159461310219381e-94,
            ],
            [
                -3.5112986914663446e+1,
                4.2711290984380589e-270,
                2.5626774590628354e-269,
                2.5626774590628354e-269,
            ],
            [
                4.3638694899696802,
                1.2778182794815814e-5,
                1.2778182794815814e-5,
                7.6669096768894887e-5,
            ],
            [
                -1.2667494131932761e+1,
                8.9528906748094901e-37,
                2.685867202442847e-36,
                5.3717344048856941e-36,
            ],
            [
                1.1640130341838362e+1,
                2.576216096824452e-31,
                5.152432193648904e-31,
                1.5457296580946712e-30,
            ],
            [
                1.6120967728240542e+1,
                1.8174083621772693e-58,
                7.2696334487090772e-58,
                1.0904450173063616e-57,
            ],
        ],
    ),
];

/// The values of a group: low + (i mod (high - low + 1)) for i = 0..n - 1.
fn values(&(n, low, high): &(u64, u64, u64)) -> Vec<f64> {
    (0..n).map(|i| (low + i % (high - low + 1)) as f64).collect()
}

#[test]
fn kruskal_wallis_and_dunn_keep_their_digits_deep_in_the_tail() {
    for (groups, [h, p], pairs) in CASES {
        let data: Vec<Vec<f64>> = groups.iter().map(values).collect();
        let slices: Vec<&[f64]> = data.iter().map(Vec::as_slice).collect();
        let analysis = rank_analysis(&slices)
            .expect("rank analysis")
            .tested()
            .expect("not all tied");
        let label = format!(
            "{} groups, {} values",
            groups.len(),
            data.iter().map(Vec::len).sum::<usize>()
        );
        check(&format!("{label}: H"), analysis.kruskal_wallis.h, h, 12.0);
        check(
            &format!("{label}: Kruskal-Wallis p"),
            analysis.kruskal_wallis.p_value,
            p,
            12.0,
        );
        assert_eq!(analysis.comparisons.len(), pairs.len());
        for (comparison, &[z, p, holm, bonferroni]) in analysis.comparisons.iter().zip(pairs) {
            let pair = format!("{label}, pair ({}, {})", comparison.group_a + 1, comparison.group_b + 1);
            check(&format!("{pair}: z"), comparison.z, z, 12.0);
            check(&format!("{pair}: p"), comparison.p_value, p, 12.0);
            check(&format!("{pair}: Holm p"), comparison.p_holm, holm, 12.0);
            check(
                &format!("{pair}: Bonferroni p"),
                comparison.p_bonferroni,
                bonferroni,
                12.0,
            );
        }
    }
}
