//! Power and sample size for the next trial: the one-way F test, all-pairs
//! intervals of a wanted half-width, and the t test of one effect of a
//! two-level factorial.
//!
//! Pure computation over [`crate::stats::dist`]; no I/O.
//!
//! # Remarks
//!
//! One-way F test (fixed effects, `k` conditions, `n` runs each, SD `sigma`):
//! the F statistic is noncentral F with `k - 1` and `k(n - 1)` degrees of
//! freedom and noncentrality `lambda = n * sum (mu_i - mu_bar)^2 / sigma^2`
//! (Scheffe 1959, The Analysis of Variance, section 2.8). For a smallest
//! difference `delta` worth detecting between any two conditions, the least
//! favourable means put two conditions at `+-delta/2` and the rest at the
//! centre, giving `lambda = n delta^2 / (2 sigma^2)` (the usual planning
//! rule, e.g. Montgomery, Design and Analysis of Experiments, section 3.7).
//! Power is `P(F' > F_crit)` from [`f_test_power`], whose noncentral F is a
//! Poisson mixture of incomplete beta functions accurate to about 1e-14
//! relative; noncentrality 0 is the central F (power equals alpha).
//!
//! Two-level factorial: an effect is the difference of the averages at the
//! high and low levels, each over half of the `N` factorial runs, so its
//! variance is `4 sigma^2 / N`. Its t test with the residual degrees of
//! freedom `nu` of the planned model has power
//! `P(|T'| > t_crit) = P(F'(1, nu, lambda) > t_crit^2)` with
//! `lambda = N Delta^2 / (4 sigma^2)`, computed exactly as a noncentral F.
//!
//! All-pairs intervals: the Tukey-Kramer half-width for equal `n` is
//! `q(1 - alpha; k, k(n-1)) sigma / sqrt(n)` with `q` the studentized range
//! quantile ([`studentized_range_quantile`], within about 1e-13 of mpmath).
//! The runs needed start from the bound the infinite-df quantile gives (the
//! finite-df quantile is larger) and gallop upward, each step one
//! evaluation of the studentized range distribution function. The
//! Bonferroni t bound `t(1 - alpha / (2m); k(n - 1)) sigma sqrt(2 / n)`,
//! `m = k(k-1)/2` pairs, is kept as a check: it is never narrower.
//! The planning SD is taken as known, so the half-width is the one the
//! trial will show if its pooled SD comes out at the planning value.
//!
//! Sample sizes are the smallest whole numbers that reach the target,
//! found by doubling and then bisection (power grows with `n`).

use serde::Serialize;

use crate::stats::dist::{f_test_power, t_isf};
use crate::stats::studentized_range::{studentized_range_cdf, studentized_range_quantile};
use crate::stats::StatsError;

/// The largest runs per condition (or replicates) a search will go to.
pub const MAX_SEARCH_N: usize = 1_000_000;

/// What the one-way trial should detect.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(rename_all = "kebab-case", tag = "kind", content = "value")]
pub enum OneWayEffect {
    /// The smallest difference between any two conditions worth detecting.
    SmallestDifference(f64),
    /// Supposed means of the conditions.
    Means(Vec<f64>),
}

/// The spread of the means' supposed values: `sum (mu_i - mu_bar)^2`.
fn spread_of_means(effect: &OneWayEffect) -> f64 {
    match effect {
        OneWayEffect::SmallestDifference(delta) => delta * delta / 2.0,
        OneWayEffect::Means(means) => {
            let centre = means.iter().sum::<f64>() / means.len() as f64;
            means.iter().map(|mean| (mean - centre).powi(2)).sum()
        }
    }
}

fn check_positive(name: &'static str, value: f64) -> Result<f64, StatsError> {
    if value.is_finite() && value > 0.0 {
        Ok(value)
    } else {
        Err(StatsError::InvalidParameter {
            name,
            rule: "a finite number above 0",
            value,
        })
    }
}

fn check_probability(name: &'static str, value: f64) -> Result<f64, StatsError> {
    if value > 0.0 && value < 1.0 {
        Ok(value)
    } else {
        Err(StatsError::InvalidParameter {
            name,
            rule: "strictly between 0 and 1",
            value,
        })
    }
}

/// Checks a one-way effect against the number of conditions.
///
/// # Errors
///
/// `InvalidParameter` for fewer than two conditions, a difference that is
/// not finite and positive, or means that are not finite or do not match
/// the number of conditions.
pub fn check_one_way(n_conditions: usize, effect: &OneWayEffect) -> Result<(), StatsError> {
    if n_conditions < 2 {
        return Err(StatsError::TooFewValues {
            what: "conditions of a one-way trial",
            needed: 2,
            got: n_conditions,
        });
    }
    match effect {
        OneWayEffect::SmallestDifference(delta) => {
            check_positive("smallest difference", *delta)?;
        }
        OneWayEffect::Means(means) => {
            if means.len() != n_conditions || means.iter().any(|mean| !mean.is_finite()) {
                return Err(StatsError::InvalidParameter {
                    name: "means",
                    rule: "one finite mean per condition (count shown)",
                    value: means.len() as f64,
                });
            }
        }
    }
    Ok(())
}

/// The noncentrality of the one-way F test with `n` runs per condition.
pub fn one_way_noncentrality(n_per_condition: usize, effect: &OneWayEffect, sd: f64) -> f64 {
    n_per_condition as f64 * spread_of_means(effect) / (sd * sd)
}

/// Power of the level-`alpha` one-way F test with `n` runs per condition.
///
/// # Errors
///
/// `InvalidParameter` or `TooFewValues` for unusable input (see
/// [`check_one_way`]; `n` must be at least 2, `sd` positive, `alpha` in (0, 1)).
pub fn one_way_power(
    n_per_condition: usize,
    n_conditions: usize,
    effect: &OneWayEffect,
    sd: f64,
    alpha: f64,
) -> Result<f64, StatsError> {
    check_one_way(n_conditions, effect)?;
    let sd = check_positive("SD", sd)?;
    let alpha = check_probability("alpha", alpha)?;
    if n_per_condition < 2 {
        return Err(StatsError::TooFewValues {
            what: "runs per condition",
            needed: 2,
            got: n_per_condition,
        });
    }
    let d1 = (n_conditions - 1) as f64;
    let d2 = (n_conditions * (n_per_condition - 1)) as f64;
    f_test_power(alpha, d1, d2, one_way_noncentrality(n_per_condition, effect, sd))
}

/// The smallest `n >= start` for which `meets(n)` holds, with `meets`
/// monotone in `n`.
fn smallest_meeting(
    start: usize,
    mut meets: impl FnMut(usize) -> Result<bool, StatsError>,
) -> Result<usize, StatsError> {
    if meets(start)? {
        return Ok(start);
    }
    let mut low = start;
    let mut high = start.max(1) * 2;
    while !meets(high)? {
        low = high;
        high *= 2;
        if high > MAX_SEARCH_N {
            return Err(StatsError::NoConvergence {
                what: "sample size search (more than a million runs per condition needed)",
                iterations: high,
            });
        }
    }
    while high - low > 1 {
        let middle = low + (high - low) / 2;
        if meets(middle)? {
            high = middle;
        } else {
            low = middle;
        }
    }
    Ok(high)
}

/// The fewest runs per condition for the one-way F test to reach `power`.
///
/// # Errors
///
/// As [`one_way_power`]; `NoConvergence` when more than a million runs
/// per condition would be needed.
pub fn one_way_runs_needed(
    n_conditions: usize,
    effect: &OneWayEffect,
    sd: f64,
    alpha: f64,
    power: f64,
) -> Result<usize, StatsError> {
    let power = check_probability("power", power)?;
    if spread_of_means(effect) == 0.0 {
        return Err(StatsError::InvalidParameter {
            name: "means",
            rule: "not all equal (equal means cannot be told apart)",
            value: 0.0,
        });
    }
    smallest_meeting(2, |n| Ok(one_way_power(n, n_conditions, effect, sd, alpha)? >= power))
}

/// How the all-pairs half-width is computed.
pub const PAIRS_METHOD: &str = "Tukey-Kramer (studentized range)";

fn check_pairs_input(
    n_per_condition: usize,
    n_conditions: usize,
    sd: f64,
    confidence: f64,
) -> Result<(f64, f64), StatsError> {
    let sd = check_positive("SD", sd)?;
    let confidence = check_probability("confidence", confidence)?;
    if n_conditions < 2 || n_per_condition < 2 {
        return Err(StatsError::TooFewValues {
            what: "conditions and runs per condition for pairwise intervals",
            needed: 2,
            got: n_conditions.min(n_per_condition),
        });
    }
    Ok((sd, confidence))
}

/// Half-width of Tukey-Kramer simultaneous intervals for all pairs of `k`
/// conditions with `n` runs each, at simultaneous confidence `confidence`,
/// when the pooled SD is `sd`.
///
/// # Errors
///
/// `InvalidParameter` or `TooFewValues` for unusable input; `NoConvergence`
/// from the studentized range quantile (not observed).
pub fn pairs_half_width(
    n_per_condition: usize,
    n_conditions: usize,
    sd: f64,
    confidence: f64,
) -> Result<f64, StatsError> {
    let (sd, confidence) = check_pairs_input(n_per_condition, n_conditions, sd, confidence)?;
    let df = (n_conditions * (n_per_condition - 1)) as f64;
    let critical = studentized_range_quantile(confidence, n_conditions, df)?;
    Ok(critical * sd / (n_per_condition as f64).sqrt())
}

/// The Bonferroni t bound on the all-pairs half-width (never narrower than
/// Tukey-Kramer's).
///
/// # Errors
///
/// As [`pairs_half_width`].
pub fn bonferroni_pairs_half_width(
    n_per_condition: usize,
    n_conditions: usize,
    sd: f64,
    confidence: f64,
) -> Result<f64, StatsError> {
    let (sd, confidence) = check_pairs_input(n_per_condition, n_conditions, sd, confidence)?;
    let n_pairs = (n_conditions * (n_conditions - 1) / 2) as f64;
    let df = (n_conditions * (n_per_condition - 1)) as f64;
    let critical = t_isf((1.0 - confidence) / (2.0 * n_pairs), df)?;
    Ok(critical * sd * (2.0 / n_per_condition as f64).sqrt())
}

/// The fewest runs per condition for Tukey-Kramer all-pairs intervals no
/// wider than `+- half_width`.
///
/// # Errors
///
/// As [`pairs_half_width`]; `InvalidParameter` for a half-width that is not
/// positive.
pub fn pairs_runs_needed(n_conditions: usize, sd: f64, confidence: f64, half_width: f64) -> Result<usize, StatsError> {
    Ok(pairs_plan(n_conditions, sd, confidence, half_width)?.0)
}

/// The fewest runs per condition for Tukey-Kramer all-pairs intervals no
/// wider than `+- half_width`, with the half-width they reach.
///
/// # Errors
///
/// As [`pairs_runs_needed`].
///
/// # Remarks
///
/// The reached half-width needs the studentized range quantile at the
/// answer's df. Its bracket is already known (the infinite-df quantile below,
/// `W sqrt(n) / sd` above), so it is solved there by the Illinois variant of
/// regula falsi on the distribution function (Dowell and Jarratt 1971, BIT
/// 11), to 1e-10 relative: a few distribution-function evaluations, cheaper
/// than a quantile from scratch.
pub fn pairs_plan(n_conditions: usize, sd: f64, confidence: f64, half_width: f64) -> Result<(usize, f64), StatsError> {
    let half_width = check_positive("half-width", half_width)?;
    let (sd, confidence) = check_pairs_input(2, n_conditions, sd, confidence)?;
    let q_limit = studentized_range_quantile(confidence, n_conditions, f64::INFINITY)?;
    let n = pairs_n_needed(n_conditions, sd, confidence, half_width, q_limit)?;
    let df = (n_conditions * (n - 1)) as f64;
    let gap = |q: f64| -> Result<f64, StatsError> { Ok(studentized_range_cdf(q, n_conditions, df)? - confidence) };
    let (mut low, mut high) = (q_limit, half_width * (n as f64).sqrt() / sd);
    let (mut gap_low, mut gap_high) = (gap(low)?, gap(high)?);
    let mut side = 0i8;
    for _ in 0..60 {
        if gap_high == 0.0 || (high - low).abs() <= 1e-10 * high || gap_low >= 0.0 {
            break;
        }
        let next = (low * gap_high - high * gap_low) / (gap_high - gap_low);
        let gap_next = gap(next)?;
        if gap_next >= 0.0 {
            high = next;
            gap_high = gap_next;
            if side == 1 {
                gap_low /= 2.0;
            }
            side = 1;
        } else {
            low = next;
            gap_low = gap_next;
            if side == -1 {
                gap_high /= 2.0;
            }
            side = -1;
        }
    }
    let critical = if gap_low >= 0.0 { low } else { high };
    Ok((n, critical * sd / (n as f64).sqrt()))
}

fn pairs_n_needed(
    n_conditions: usize,
    sd: f64,
    confidence: f64,
    half_width: f64,
    q_limit: f64,
) -> Result<usize, StatsError> {
    // The half-width at n is at most W exactly when the studentized range
    // stays below W sqrt(n) / sd with probability at least the confidence:
    // one distribution function per step instead of a quantile (several).
    let meets = |n: usize| -> Result<bool, StatsError> {
        let df = (n_conditions * (n - 1)) as f64;
        let scaled = half_width * (n as f64).sqrt() / sd;
        Ok(studentized_range_cdf(scaled, n_conditions, df)? >= confidence)
    };
    // Below: with infinite df the quantile is smallest, so no n under
    // (q_inf sd / W)^2 can do. The answer is usually that n or the next, so
    // gallop upward from it, then bisect.
    let low_bound = (q_limit * sd / half_width).powi(2).ceil();
    if !low_bound.is_finite() || low_bound > MAX_SEARCH_N as f64 {
        return Err(StatsError::NoConvergence {
            what: "all-pairs sample size search (more than a million runs per condition needed)",
            iterations: 0,
        });
    }
    let mut low = (low_bound as usize).max(2);
    if meets(low)? {
        return Ok(low);
    }
    let mut step = 1;
    let mut high = low + step;
    while !meets(high)? {
        low = high;
        step *= 2;
        high = low + step;
        if high > MAX_SEARCH_N {
            return Err(StatsError::NoConvergence {
                what: "all-pairs sample size search (more than a million runs per condition needed)",
                iterations: high,
            });
        }
    }
    // Now meets(high) holds and meets(low) does not.
    while high - low > 1 {
        let middle = low + (high - low) / 2;
        if meets(middle)? {
            high = middle;
        } else {
            low = middle;
        }
    }
    Ok(high)
}

/// Power of the two-sided level-`alpha` t test of one two-level effect of
/// size `effect` (difference of averages), with `factorial_runs` runs at the
/// corners and `residual_df` residual degrees of freedom.
///
/// # Errors
///
/// `InvalidParameter` for an effect or SD that is not positive, alpha out of
/// (0, 1), or fewer than two runs; `TooFewValues` when the residual df is 0.
pub fn two_level_effect_power(
    factorial_runs: usize,
    residual_df: usize,
    effect: f64,
    sd: f64,
    alpha: f64,
) -> Result<f64, StatsError> {
    let effect = check_positive("effect", effect)?;
    let sd = check_positive("SD", sd)?;
    let alpha = check_probability("alpha", alpha)?;
    if factorial_runs < 2 {
        return Err(StatsError::TooFewValues {
            what: "factorial runs",
            needed: 2,
            got: factorial_runs,
        });
    }
    if residual_df == 0 {
        return Err(StatsError::TooFewValues {
            what: "residual degrees of freedom of the planned model",
            needed: 1,
            got: 0,
        });
    }
    let lambda = factorial_runs as f64 * effect * effect / (4.0 * sd * sd);
    f_test_power(alpha, 1.0, residual_df as f64, lambda)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn noncentral_f_matches_the_reference_library() {
        use crate::stats::dist::{noncentral_f_cdf, noncentral_f_sf};
        // scipy 1.17.1: (stats.ncf.cdf(f, d1, d2, nc), stats.ncf.sf(f, d1, d2, nc));
        // the last row (nc = 0) is stats.f.cdf / stats.f.sf, the central F.
        let cases: [(f64, f64, f64, f64, f64, f64); 7] = [
            (2.5, 3.0, 16.0, 10.0, 0.232_633_293_792_257_56, 0.767_366_706_207_742_5),
            (1.0, 1.0, 5.0, 0.5, 0.535_629_998_223_293_7, 0.464_370_001_776_706_34),
            (4.0, 4.0, 20.0, 25.0, 0.122_394_619_569_313_98, 0.877_605_380_430_686),
            (0.3, 2.0, 10.0, 3.0, 0.071_620_226_231_100_36, 0.928_379_773_768_899_6),
            (
                12.0,
                3.0,
                30.0,
                2.0,
                0.999_579_722_441_338_5,
                0.000_420_277_558_661_387_16,
            ),
            (
                50.0,
                5.0,
                40.0,
                200.0,
                0.757_933_520_102_263_9,
                0.242_066_479_897_736_83,
            ),
            (3.2, 4.0, 20.0, 0.0, 0.965_168_376_271_217_4, 0.034_831_623_728_782_526),
        ];
        for (f, d1, d2, lambda, cdf, sf) in cases {
            let our_cdf = noncentral_f_cdf(f, d1, d2, lambda).expect("cdf");
            let our_sf = noncentral_f_sf(f, d1, d2, lambda).expect("sf");
            // Relative agreement; the survival function is summed directly,
            // so its small values keep their digits too.
            assert!(
                (our_cdf - cdf).abs() <= 1e-9 * cdf,
                "cdf {f} {d1} {d2} {lambda}: {our_cdf} vs {cdf}"
            );
            assert!(
                (our_sf - sf).abs() <= 1e-9 * sf,
                "sf {f} {d1} {d2} {lambda}: {our_sf} vs {sf}"
            );
        }
    }

    #[test]
    fn one_way_power_matches_the_reference_library() {
        // statsmodels 0.15.0: FTestAnovaPower().power(effect_size=f,
        // nobs=k*n, alpha, k_groups=k), which uses noncentrality
        // f^2 * nobs; with f^2 = delta^2 / (2 k sigma^2) that is
        // n delta^2 / (2 sigma^2).
        // k = 4, n = 5, delta = 2, sigma = 1: f = sqrt(4/8), alpha 0.05.
        let power = one_way_power(5, 4, &OneWayEffect::SmallestDifference(2.0), 1.0, 0.05).expect("power");
        assert!((power - 0.644_233_216_554_937_8).abs() < 1e-9, "{power}");
        // k = 3, n = 10, delta = 1.5, sigma = 1.2, alpha 0.05.
        let power = one_way_power(10, 3, &OneWayEffect::SmallestDifference(1.5), 1.2, 0.05).expect("power");
        assert!((power - 0.654_253_101_240_885_1).abs() < 1e-9, "{power}");
        // Means 10, 12, 13, sigma 2, n 6, alpha 0.01: f^2 = (14/3) / (3 * 4).
        let power = one_way_power(6, 3, &OneWayEffect::Means(vec![10.0, 12.0, 13.0]), 2.0, 0.01).expect("power");
        assert!((power - 0.282_961_054_813_687_83).abs() < 1e-9, "{power}");
    }

    #[test]
    fn runs_needed_match_the_reference_library() {
        // Four settings, sigma 25, smallest difference 75, alpha 0.05, power
        // 0.90 (the planning question of Montgomery, Design and Analysis of
        // Experiments, section 3.7, here with our own numbers).
        // statsmodels 0.15.0: FTestAnovaPower().solve_power(effect_size =
        // sqrt(75^2 / (2*4*25^2)), alpha=0.05, power=0.9, k_groups=4) gives
        // nobs = 17.11 in all, so 5 per setting; its power() gives 0.8678 at
        // 4 per setting and 0.9536 at 5.
        let effect = OneWayEffect::SmallestDifference(75.0);
        let needed = one_way_runs_needed(4, &effect, 25.0, 0.05, 0.90).expect("n");
        assert_eq!(needed, 5);
        let below = one_way_power(4, 4, &effect, 25.0, 0.05).expect("power");
        let at_needed = one_way_power(5, 4, &effect, 25.0, 0.05).expect("power");
        assert!((below - 0.867_818_789_191_363_6).abs() < 1e-9, "{below}");
        assert!((at_needed - 0.953_577_933_622_421_4).abs() < 1e-9, "{at_needed}");
    }

    #[test]
    fn zero_noncentrality_is_the_central_f() {
        let power = one_way_power(4, 3, &OneWayEffect::Means(vec![5.0, 5.0, 5.0]), 1.0, 0.05).expect("power");
        // With equal means the power is the level itself (definition of the test level).
        assert!((power - 0.05).abs() < 1e-12, "{power}");
        assert!(one_way_runs_needed(3, &OneWayEffect::Means(vec![5.0, 5.0, 5.0]), 1.0, 0.05, 0.8).is_err());
    }

    #[test]
    fn two_level_effect_power_matches_the_noncentral_t() {
        // scipy 1.17.1: 16 runs, residual df 5, effect 2, sigma 1.5:
        // ncp = 2*sqrt(16)/(2*1.5); t = stats.t.isf(0.025, 5);
        // stats.nct.sf(t, 5, ncp) + stats.nct.cdf(-t, 5, ncp).
        let power = two_level_effect_power(16, 5, 2.0, 1.5, 0.05).expect("power");
        assert!((power - 0.574_139_621_014_441_5).abs() < 1e-9, "{power}");
        assert!(two_level_effect_power(16, 0, 2.0, 1.5, 0.05).is_err());
    }

    #[test]
    fn pairs_half_width_matches_the_reference_library() {
        // scipy 1.17.1: stats.studentized_range.ppf(0.95, 3, 27) * 2 / sqrt(10).
        let half = pairs_half_width(10, 3, 2.0, 0.95).expect("half-width");
        assert!((half - 2.217_658_599_382_727_6).abs() < 1e-9, "{half}");
        // scipy 1.17.1: stats.studentized_range.ppf(0.95, 4, 24) * 25 / sqrt(7).
        let half = pairs_half_width(7, 4, 25.0, 0.95).expect("half-width");
        assert!((half - 36.863_462_756_184_16).abs() < 1e-9, "{half}");
        let bound = bonferroni_pairs_half_width(7, 4, 25.0, 0.95).expect("bound");
        assert!(bound > half, "{bound} {half}");
        let needed = pairs_runs_needed(3, 2.0, 0.95, 2.0).expect("n");
        // The bracketed solve for the reached half-width agrees with the quantile.
        let (same, reached) = pairs_plan(3, 2.0, 0.95, 2.0).expect("plan");
        let direct = pairs_half_width(same, 3, 2.0, 0.95).expect("w");
        assert_eq!(same, needed);
        assert!((reached - direct).abs() <= 1e-9 * direct, "{reached} {direct}");
        assert!(pairs_half_width(needed, 3, 2.0, 0.95).expect("w") <= 2.0);
        assert!(pairs_half_width(needed - 1, 3, 2.0, 0.95).expect("w") > 2.0);
    }
}
