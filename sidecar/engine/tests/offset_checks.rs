//! The model checks of a one-way trial at a large offset: an invented 4 x 6 trial (about
//! 1 % spread) typed as offset + value (1000000002.314 at 1e9), at offsets 1e6 to 1e11.
//! The doubles of such values are up to 6e-8 from the typed decimals, so spreads and
//! residuals of 1e-2 taken from them keep five digits; the checks work on the typed
//! decimals less one centre and must keep at least 12: Levene's and the Brown-Forsythe
//! F and p, Bartlett's statistic and p, the SD ratio, and the Shapiro-Wilk W and p of the
//! residuals, which must also be the residuals of the typed decimals.
//!
//! Reference values: `offset_checks_reference.py` beside this file (mpmath 1.3.0, 50
//! significant digits, on the typed decimals).

// The tests print the accuracy they measured.
#![allow(clippy::print_stdout)]
// Reference values keep the 17 digits mpmath printed.
#![allow(clippy::excessive_precision)]

mod common;
use common::check;
use common::model_checks::assessed;

/// The trial in thousandths: 4 conditions of 6 values near 2.3.
const TRIAL: [[u32; 6]; 4] = [
    [2314, 2297, 2331, 2305, 2322, 2289],
    [2351, 2338, 2366, 2342, 2359, 2347],
    [2301, 2318, 2296, 2327, 2309, 2313],
    [2336, 2329, 2344, 2321, 2352, 2333],
];

/// Up to 1e11: with three places that is 15 significant digits, the most a value can have
/// and still be read as the short decimal it was typed as.
const OFFSETS: [u64; 3] = [1_000_000, 1_000_000_000, 100_000_000_000];

/// mpmath 1.3.0, the same at every offset: Levene F, p, Brown-Forsythe F, p, Bartlett,
/// p, SD ratio, Shapiro-Wilk W and p of the residuals.
const MPMATH: [f64; 9] = [
    6.991005723630417e-1,
    5.6355070563358311e-1,
    6.7830226100753669e-1,
    5.755290579093338e-1,
    1.036072438321015,
    7.9252441253940256e-1,
    1.4939403850670538,
    9.7332850134067481e-1,
    7.490148751055835e-1,
];

/// The trial typed at `offset`: each base decimal plus the offset, as the text a
/// workbook cell would hold, read as the nearest double.
fn trial_at(offset: u64) -> Vec<Vec<f64>> {
    TRIAL
        .iter()
        .map(|group| {
            group
                .iter()
                .map(|&t| {
                    let text = format!("{}.{:03}", offset + u64::from(t / 1000), t % 1000);
                    text.parse::<f64>().expect("a number")
                })
                .collect()
        })
        .collect()
}

#[test]
fn model_checks_keep_their_digits_at_a_large_offset() {
    let [levene_f, levene_p, bf_f, bf_p, bartlett, bartlett_p, ratio, w, w_p] = MPMATH;
    for offset in OFFSETS {
        let groups = trial_at(offset);
        let assessment = assessed(&groups);
        let checks = &assessment.checks;
        let levene = checks.levene.as_ref().expect("Levene");
        let brown_forsythe = checks.brown_forsythe_spread.as_ref().expect("Brown-Forsythe");
        let bartlett_test = checks.bartlett.as_ref().expect("Bartlett");
        let normality = checks.normality.as_ref().expect("normality");
        let at = format!("offset {offset}");
        check(&format!("{at}: Levene F"), levene.statistic, levene_f, 12.0);
        check(&format!("{at}: Levene p"), levene.p, levene_p, 12.0);
        check(&format!("{at}: Brown-Forsythe F"), brown_forsythe.statistic, bf_f, 12.0);
        check(&format!("{at}: Brown-Forsythe p"), brown_forsythe.p, bf_p, 12.0);
        check(&format!("{at}: Bartlett"), bartlett_test.statistic, bartlett, 12.0);
        check(&format!("{at}: Bartlett p"), bartlett_test.p, bartlett_p, 12.0);
        check(
            &format!("{at}: SD ratio"),
            checks.sd_ratio.expect("SD ratio"),
            ratio,
            12.0,
        );
        assert!(normality.test.starts_with("Shapiro-Wilk"), "{}", normality.test);
        check(
            &format!("{at}: Shapiro-Wilk W of the residuals"),
            normality.statistic,
            w,
            12.0,
        );
        check(
            &format!("{at}: Shapiro-Wilk p of the residuals"),
            normality.p,
            w_p,
            12.0,
        );
        // Each residual is the typed decimal less its condition's mean: in thousandths t
        // with condition sum m, residual = (6 t - m) / 6000, one correctly rounded
        // division of exact integers (common practice).
        let exact: Vec<f64> = TRIAL
            .iter()
            .flat_map(|group| {
                let sum: i64 = group.iter().map(|&t| i64::from(t)).sum();
                group.iter().map(move |&t| (6 * i64::from(t) - sum) as f64 / 6000.0)
            })
            .collect();
        assert_eq!(checks.residual_points.len(), exact.len());
        for (index, (&(_, residual), &expected)) in checks.residual_points.iter().zip(&exact).enumerate() {
            if expected == 0.0 {
                // a value equal to its condition's mean: zero to within 1e-14 of the spread
                println!("{at}: residual {}: {residual:e} against 0", index + 1);
                assert!(residual.abs() <= 1e-16, "{at}: residual {}: {residual:e}", index + 1);
            } else {
                check(&format!("{at}: residual {}", index + 1), residual, expected, 12.0);
            }
        }
        assert!(checks.outliers.is_empty(), "{at}: {:?}", checks.outliers);
    }
}
