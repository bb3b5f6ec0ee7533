//! Games-Howell with many pairs: the pairs' studentized-range quantiles are solved
//! together (in order of their Welch df, each started from its neighbours); each must
//! still be the quantile at its own df.
//!
//! Reference values: SciPy 1.17.1 `scipy.stats.studentized_range` (`ppf`, `sf`),
//! printed with `repr` (17 significant digits).

// The tests print the accuracy they measured.
#![allow(clippy::print_stdout)]
// Reference values keep the digits SciPy printed.
#![allow(clippy::excessive_precision)]

use engine::analysis::comparisons::unequal_spread_pairs;
use engine::analysis::oneway::fit_one_way;
use engine::stats::studentized_range::{studentized_range_quantile, studentized_range_quantiles, studentized_range_sf};

fn relative(actual: f64, reference: f64) -> f64 {
    ((actual - reference) / reference).abs()
}

/// SciPy 1.17.1 `studentized_range.ppf(0.95, k, df)`, non-integer df included.
const PPF_95: [(usize, f64, f64); 7] = [
    (200, 2.37, 20.097660587262197),
    (200, 3.5, 14.39668210072084),
    (200, 3.999, 13.188912069007328),
    (3, 2.2, 7.562835052387109),
    (10, 7.31, 6.0755471002223125),
    (50, 15.75, 6.828647654566615),
    (20, 120.5, 5.125466642210944),
];

/// SciPy 1.17.1 `studentized_range.sf(q, k, df)`.
const SF: [(usize, f64, f64, f64); 4] = [
    (200, 2.6, 9.0, 0.2577958909165601),
    (200, 3.3, 12.0, 0.09672794700113119),
    (10, 4.41, 5.0, 0.1842702051754308),
    (3, 2.75, 3.0, 0.24343645429947647),
];

#[test]
fn quantiles_together_match_scipy() {
    let mut worst: f64 = 0.0;
    for k in [3, 10, 20, 50, 200] {
        let cases: Vec<&(usize, f64, f64)> = PPF_95.iter().filter(|case| case.0 == k).collect();
        // Given in decreasing df order and with a repeat, to exercise the ordering.
        let mut dfs: Vec<f64> = cases.iter().rev().map(|case| case.1).collect();
        dfs.push(cases[0].1);
        let together = studentized_range_quantiles(0.95, k, &dfs).expect("valid df");
        for (df, quantile) in dfs.iter().zip(&together) {
            let expected = cases
                .iter()
                .find(|case| case.1 == *df)
                .map(|case| case.2)
                .expect("case");
            let error = relative(*quantile, expected);
            worst = worst.max(error);
            // Measured: 4.3e-14 at worst.
            assert!(error < 1e-12, "k {k} df {df}: {quantile} vs SciPy {expected}");
        }
    }
    println!("worst relative difference from SciPy ppf: {worst:.1e}");
}

#[test]
fn upper_tail_matches_scipy() {
    for (k, df, q, expected) in SF {
        let got = studentized_range_sf(q, k, df).expect("valid case");
        assert!(
            (got - expected).abs() < 1e-12,
            "k {k} df {df} q {q}: {got} vs SciPy {expected}"
        );
    }
}

#[test]
fn quantiles_together_equal_one_at_a_time() {
    // Welch df of pairs of 3 values lie in [2, 4]; spaced unevenly, with repeats, wide
    // gaps (a fresh solve) and large df (a long walk from neighbour to neighbour).
    let mut dfs = Vec::new();
    let mut state = 11u64;
    for _ in 0..300 {
        state = state
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        dfs.push(2.0 + 2.0 * (state >> 11) as f64 / (1u64 << 53) as f64);
    }
    dfs.extend([4.0, 4.0, 2.0, 17.5, 250.25, 1e5, f64::INFINITY, 1.0]);
    for (k, p) in [(200, 0.95), (7, 0.99), (2, 0.9), (30, 0.3)] {
        let together = studentized_range_quantiles(p, k, &dfs).expect("valid df");
        let mut worst: f64 = 0.0;
        for (&df, &quantile) in dfs.iter().zip(&together) {
            let alone = studentized_range_quantile(p, k, df).expect("valid df");
            worst = worst.max(relative(quantile, alone));
            // Both stop after a Newton step below 1e-7 in ln q, so both are within
            // about 1e-14 of the root.
            assert!(
                relative(quantile, alone) < 1e-12,
                "k {k} p {p} df {df}: {quantile} vs {alone}"
            );
        }
        println!("k {k} p {p}: worst relative difference {worst:.1e}");
    }
    assert!(studentized_range_quantiles(0.95, 5, &[3.0, 0.5]).is_err());
    assert!(studentized_range_quantiles(1.5, 5, &[3.0]).is_err());
    assert_eq!(
        studentized_range_quantiles(0.95, 5, &[]).expect("empty"),
        Vec::<f64>::new()
    );
}

/// An invented trial of 6 conditions of 3 values with unequal spreads.
const TRIAL: [(&str, [f64; 3]); 6] = [
    ("a", [12.1, 13.4, 12.8]),
    ("b", [15.2, 14.1, 16.9]),
    ("c", [11.0, 11.3, 10.6]),
    ("d", [14.8, 19.5, 17.0]),
    ("e", [13.0, 13.1, 12.7]),
    ("f", [16.4, 12.2, 14.9]),
];

/// Each pair's Welch df, interval at 95% and adjusted p, by SciPy 1.17.1 (numpy sample
/// variances, `ppf(0.95, 6, df) / sqrt(2) * se` and `sf(|d| / se * sqrt(2), 6, df)`).
const GAMES_HOWELL: [(&str, &str, f64, f64, f64, f64); 15] = [
    (
        "a",
        "b",
        2.8140807112294604,
        -7.985328731823883,
        2.7186620651572175,
        0.25866348014761775,
    ),
    (
        "a",
        "c",
        3.074179906275005,
        -0.5833584920925095,
        4.183358492092507,
        0.10513183117101377,
    ),
    (
        "a",
        "d",
        2.3044245613908347,
        -14.36877297796711,
        5.7021063113004455,
        0.26945903385134495,
    ),
    (
        "a",
        "e",
        2.405203092403977,
        -2.862381165951791,
        2.529047832618459,
        0.9959295656516102,
    ),
    (
        "a",
        "f",
        2.370568059216,
        -10.637966576203082,
        7.171299909536414,
        0.7575010205187142,
    ),
    (
        "b",
        "c",
        2.2469576105853357,
        -1.6996452998466056,
        10.566311966513268,
        0.09849727599137936,
    ),
    (
        "b",
        "d",
        3.2743927506441612,
        -10.162661787401309,
        6.76266178740131,
        0.8679663818559394,
    ),
    (
        "b",
        "e",
        2.087060895512343,
        -4.041021555133228,
        8.97435488846656,
        0.29948751366259285,
    ),
    (
        "b",
        "f",
        3.472930027368162,
        -6.68615125242324,
        8.486151252423237,
        0.9832642147856565,
    ),
    (
        "c",
        "d",
        2.0891660160151075,
        -16.972324326441026,
        4.705657659774364,
        0.15035011279710042,
    ),
    (
        "c",
        "e",
        3.250975292587776,
        -3.2325953458766286,
        -0.7007379874567017,
        0.013419855101819311,
    ),
    (
        "c",
        "f",
        2.1088229406195054,
        -13.265999052289944,
        6.199332385623277,
        0.32432892786133716,
    ),
    (
        "d",
        "e",
        2.031342258714963,
        -6.941290546716829,
        15.27462388005016,
        0.29498245740130913,
    ),
    (
        "d",
        "f",
        3.9608624353740964,
        -6.129906951204729,
        11.329906951204725,
        0.7213256362468856,
    ),
    (
        "e",
        "f",
        2.0382599279932863,
        -11.589839496969768,
        8.456506163636432,
        0.7901248309741382,
    ),
];

#[test]
fn games_howell_pairs_match_scipy() {
    let names: Vec<String> = TRIAL.iter().map(|(name, _)| (*name).to_string()).collect();
    let mut groups = Vec::new();
    let mut values = Vec::new();
    for (index, (_, row)) in TRIAL.iter().enumerate() {
        for &value in row {
            groups.push(index as u32);
            values.push(value);
        }
    }
    let fit = fit_one_way(&names, &groups, &values, 0.95, &[]).expect("the trial fits");
    let family = unequal_spread_pairs(&fit, 0.95).expect("Games-Howell pairs");
    assert_eq!(family.pairs.len(), GAMES_HOWELL.len());
    for (pair, &(first, second, df, low, high, p)) in family.pairs.iter().zip(&GAMES_HOWELL) {
        // The references are first minus second as listed; pairs are given with the
        // higher average first, so a negative difference comes turned round.
        let (first, second, low, high) = if low + high < 0.0 {
            (second, first, -high, -low)
        } else {
            (first, second, low, high)
        };
        assert_eq!((pair.first.as_str(), pair.second.as_str()), (first, second));
        assert!(relative(pair.df, df) < 1e-12, "{first}-{second} df {} vs {df}", pair.df);
        assert!(
            relative(pair.low, low) < 1e-11,
            "{first}-{second} low {} vs {low}",
            pair.low
        );
        assert!(
            relative(pair.high, high) < 1e-11,
            "{first}-{second} high {} vs {high}",
            pair.high
        );
        assert!(
            (pair.p_adjusted - p).abs() < 1e-12,
            "{first}-{second} p {} vs {p}",
            pair.p_adjusted
        );
        assert_eq!(pair.differ, high < 0.0 || low > 0.0);
    }
}
