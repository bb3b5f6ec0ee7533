//! Checks of the equal-variance assumption of the one-way model: Levene's test and its
//! Brown-Forsythe (median-centred) variant, Bartlett's test, and the ratio of the largest
//! to the smallest group standard deviation.

use super::StatsError;
use crate::stats::accumulate::{compensated_sum, magnitude_exponent, scale_by_power_of_two};
use crate::stats::dist;

/// The groups divided by a power of two when their magnitude would make squares
/// overflow or underflow (see [`magnitude_exponent`]), with that exponent; `None` when
/// no scaling is needed. Dividing by a power of two is exact, so the test statistics
/// below, which do not depend on the unit, are those of the data at scale 1.
fn at_unit_scale(groups: &[&[f64]]) -> Option<(Vec<Vec<f64>>, i32)> {
    let exponent = magnitude_exponent(groups.iter().flat_map(|group| group.iter()));
    (exponent != 0).then(|| {
        let down = -i64::from(exponent);
        let scaled = groups
            .iter()
            .map(|group| group.iter().map(|&value| scale_by_power_of_two(value, down)).collect())
            .collect();
        (scaled, exponent)
    })
}

fn slices(groups: &[Vec<f64>]) -> Vec<&[f64]> {
    groups.iter().map(Vec::as_slice).collect()
}

/// Where the absolute deviations of Levene's test are measured from.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Centre {
    /// Group means (Levene's original test).
    Mean,
    /// Group medians (the Brown-Forsythe variant, robust to skewness).
    Median,
}

/// Result of Levene's test (or the Brown-Forsythe variant).
#[derive(Debug, Clone, PartialEq)]
pub struct LeveneTest {
    /// Centre the deviations were taken from.
    pub centre: Centre,
    /// The F statistic of the one-way analysis of the absolute deviations.
    pub statistic: f64,
    /// Numerator degrees of freedom, k - 1.
    pub df_between: f64,
    /// Denominator degrees of freedom, N - k.
    pub df_within: f64,
    /// Upper-tail p-value from the F distribution.
    pub p_value: f64,
    /// Number of groups k.
    pub n_groups: usize,
    /// Total number of values N.
    pub n_total: usize,
}

/// Result of Bartlett's test of equal variances.
#[derive(Debug, Clone, PartialEq)]
pub struct BartlettTest {
    /// The corrected statistic, approximately chi-square with k - 1 degrees of freedom.
    pub statistic: f64,
    /// Degrees of freedom, k - 1.
    pub df: f64,
    /// Upper-tail chi-square p-value.
    pub p_value: f64,
    /// Pooled within-group variance.
    pub pooled_variance: f64,
    /// Bartlett's scaling constant C (the statistic is the likelihood-ratio form / C).
    pub correction: f64,
}

/// Ratio of the largest to the smallest group standard deviation.
#[derive(Debug, Clone, PartialEq)]
pub struct SdRatio {
    /// largest_sd / smallest_sd, at least 1.
    pub ratio: f64,
    /// Largest group standard deviation (divisor n - 1).
    pub largest_sd: f64,
    /// Smallest group standard deviation (divisor n - 1).
    pub smallest_sd: f64,
    /// Index of the group with the largest SD (first such group on a tie).
    pub largest_group: usize,
    /// Index of the group with the smallest SD (first such group on a tie).
    pub smallest_group: usize,
}

/// Checks there are at least two groups, each with at least two finite values.
fn validate_groups(groups: &[&[f64]], what: &'static str) -> Result<usize, StatsError> {
    if groups.len() < 2 {
        return Err(StatsError::TooFewValues {
            what,
            needed: 2,
            got: groups.len(),
        });
    }
    let mut n_total = 0;
    for group in groups {
        if group.len() < 2 {
            return Err(StatsError::TooFewValues {
                what: "values in each group",
                needed: 2,
                got: group.len(),
            });
        }
        if let Some(bad) = group.iter().find(|v| !v.is_finite()) {
            return Err(StatsError::InvalidParameter {
                name: "value",
                rule: "finite",
                value: *bad,
            });
        }
        n_total += group.len();
    }
    Ok(n_total)
}

/// `a + b` as the rounded sum and its exact error (TwoSum, Knuth; common practice).
fn two_sum(a: f64, b: f64) -> (f64, f64) {
    let sum = a + b;
    let virtual_b = sum - a;
    (sum, (a - (sum - virtual_b)) + (b - virtual_b))
}

/// The mean of numbers each given as an unevaluated sum `hi + lo`, itself as such a pair
/// (about twice the digits of a double): the compensated sum and its error term, divided
/// with the exact remainder of the division (one fused multiply-add).
fn mean_of_pairs(values: impl ExactSizeIterator<Item = (f64, f64)>) -> (f64, f64) {
    let n = values.len() as f64;
    let mut sum = 0.0_f64;
    let mut error = 0.0_f64;
    for (hi, lo) in values {
        let (total, rounding) = two_sum(sum, hi);
        error += rounding + lo;
        sum = total;
    }
    let hi = (sum + error) / n;
    // sum + error - hi n, its first part exact by the fused multiply-add.
    let remainder = (-hi).mul_add(n, sum) + error;
    (hi, remainder / n)
}

fn mean_parts(values: &[f64]) -> (f64, f64) {
    mean_of_pairs(values.iter().map(|&value| (value, 0.0)))
}

/// Each value's deviation from the centre `hi + lo`, as a pair: the rounded difference
/// `value - hi` and what it leaves out (its rounding error less `lo`). The rounding of the
/// centre no longer shifts every deviation of a group by the same amount.
fn deviation_pairs(values: &[(f64, f64)], (hi, lo): (f64, f64)) -> Vec<(f64, f64)> {
    values
        .iter()
        .map(|&(value, value_lo)| {
            let (difference, rounding) = two_sum(value, -hi);
            (difference, rounding + (value_lo - lo))
        })
        .collect()
}

/// The sum of squared deviations about the mean by the corrected two-pass algorithm
/// (Chan, Golub & LeVeque 1983), for numbers given as pairs `hi + lo`: compensated sums
/// of the squares and of the deviations, less (sum of deviations)^2 / n.
fn sum_of_squares_of_pairs(values: &[(f64, f64)]) -> f64 {
    let centre = mean_of_pairs(values.iter().copied());
    let deviations: Vec<f64> = deviation_pairs(values, centre)
        .into_iter()
        .map(|(hi, lo)| hi + lo)
        .collect();
    let squares = compensated_sum(deviations.iter().map(|d| d * d));
    let first = compensated_sum(deviations.iter().copied());
    (squares - first * first / values.len() as f64).max(0.0)
}

fn sum_of_squares(values: &[f64]) -> f64 {
    let pairs: Vec<(f64, f64)> = values.iter().map(|&value| (value, 0.0)).collect();
    sum_of_squares_of_pairs(&pairs)
}

/// Sample variance with divisor n - 1; needs at least two values.
fn variance(values: &[f64]) -> f64 {
    sum_of_squares(values) / (values.len() as f64 - 1.0)
}

/// The median as a pair `hi + lo`: the midpoint of the two middle values of an even count
/// is their exact sum halved.
fn median_parts(values: &[f64]) -> (f64, f64) {
    // Selection instead of a full sort (common practice): the upper middle value by
    // select_nth_unstable, the lower one as the largest value below it.
    let mut copy = values.to_vec();
    let n = copy.len();
    let (below, upper, _) = copy.select_nth_unstable_by(n / 2, f64::total_cmp);
    let upper = *upper;
    if n % 2 == 1 {
        (upper, 0.0)
    } else {
        let lower = below.iter().copied().fold(f64::NEG_INFINITY, f64::max);
        let (sum, error) = two_sum(lower, upper);
        (0.5 * sum, 0.5 * error)
    }
}

/// P(F > f) for the F distribution with (d1, d2) degrees of freedom, from the engine's
/// F survival function ([`dist::f_sf`]).
fn f_upper_tail(f: f64, d1: f64, d2: f64) -> Result<f64, StatsError> {
    if f <= 0.0 {
        return Ok(1.0);
    }
    if f == f64::INFINITY {
        return Ok(0.0);
    }
    dist::f_sf(f, d1, d2).map_err(|_| StatsError::InvalidParameter {
        name: "F statistic",
        rule: "finite and non-negative",
        value: f,
    })
}

/// P(X > x) for chi-square with `df` degrees of freedom, from the engine's chi-square
/// survival function ([`dist::chi2_sf`]).
fn chi_square_upper_tail(x: f64, df: f64) -> Result<f64, StatsError> {
    if x <= 0.0 {
        return Ok(1.0);
    }
    if x == f64::INFINITY {
        return Ok(0.0);
    }
    dist::chi2_sf(x, df).map_err(|_| StatsError::InvalidParameter {
        name: "chi-square statistic",
        rule: "finite and non-negative",
        value: x,
    })
}

/// Levene's test of equal variances (with `Centre::Median`, the Brown-Forsythe test).
///
/// # Remarks
/// Levene (1960); Brown & Forsythe (1974), JASA 69, 364-367. Each value is replaced by
/// its absolute deviation from its group's mean or median, and the one-way ANOVA F of
/// those deviations is referred to F(k - 1, N - k); the upper tail comes from the
/// regularized incomplete beta function. No observations are dropped for odd-sized
/// groups under the median centre. Checked against scipy 1.17.1 `scipy.stats.levene`
/// with `center='mean'` and `center='median'` (agreement within 1e-12 relative).
///
/// # Errors
/// `TooFewValues` for fewer than two groups or a group with fewer than two values;
/// `InvalidParameter` for non-finite values, or when the absolute deviations do not vary
/// within groups (for instance every group has two values, or every group is constant),
/// which leaves the F ratio undefined.
pub fn levene(groups: &[&[f64]], centre: Centre) -> Result<LeveneTest, StatsError> {
    match at_unit_scale(groups) {
        Some((scaled, _)) => levene_at_scale(&slices(&scaled), centre),
        None => levene_at_scale(groups, centre),
    }
}

fn levene_at_scale(groups: &[&[f64]], centre: Centre) -> Result<LeveneTest, StatsError> {
    let n_total = validate_groups(groups, "groups for Levene's test")?;
    let n_groups = groups.len();
    // Absolute deviations as pairs `hi + lo` (the rounding of a deviation is as large as
    // the spread of the deviations times the ratio of their size to their spread, which
    // is large when the test finds a difference), and their one-way analysis with means
    // to twice the digits of a double: deep in the tail the p-value moves by about df/2
    // times the relative error of F.
    let deviations: Vec<Vec<(f64, f64)>> = groups
        .iter()
        .map(|group| {
            let location = match centre {
                Centre::Mean => mean_parts(group),
                Centre::Median => median_parts(group),
            };
            let values: Vec<(f64, f64)> = group.iter().map(|&value| (value, 0.0)).collect();
            deviation_pairs(&values, location)
                .into_iter()
                .map(|(hi, lo)| if hi + lo < 0.0 { (-hi, -lo) } else { (hi, lo) })
                .collect()
        })
        .collect();
    let group_means: Vec<(f64, f64)> = deviations.iter().map(|d| mean_of_pairs(d.iter().copied())).collect();
    let (grand_hi, grand_lo) = mean_of_pairs(deviations.iter().flatten().copied().collect::<Vec<_>>().into_iter());
    let between = compensated_sum(deviations.iter().zip(&group_means).map(|(d, &(hi, lo))| {
        let gap = (hi - grand_hi) + (lo - grand_lo);
        d.len() as f64 * gap * gap
    }));
    let within = compensated_sum(deviations.iter().map(|d| sum_of_squares_of_pairs(d)));
    let total_squares = compensated_sum(deviations.iter().flatten().map(|&(hi, lo)| (hi + lo) * (hi + lo)));
    if within <= 1e-24 * total_squares {
        return Err(StatsError::InvalidParameter {
            name: "within-group variation of the absolute deviations",
            rule: "greater than zero",
            value: within,
        });
    }
    let df_between = (n_groups - 1) as f64;
    let df_within = (n_total - n_groups) as f64;
    let statistic = (between / df_between) / (within / df_within);
    Ok(LeveneTest {
        centre,
        statistic,
        df_between,
        df_within,
        p_value: f_upper_tail(statistic, df_between, df_within)?,
        n_groups,
        n_total,
    })
}

/// The Brown-Forsythe test: Levene's test with deviations from group medians.
///
/// # Errors
/// As [`levene`].
pub fn brown_forsythe(groups: &[&[f64]]) -> Result<LeveneTest, StatsError> {
    levene(groups, Centre::Median)
}

/// Bartlett's test of equal variances for normal data.
///
/// # Remarks
/// Bartlett (1937), Proc. Royal Society A 160, 268-282. With v_i = n_i - 1,
/// s_p² = Σ v_i s_i² / (N - k), the statistic is
/// [(N - k) ln s_p² - Σ v_i ln s_i²] / C, C = 1 + (Σ 1/v_i - 1/(N - k)) / (3(k - 1)),
/// referred to chi-square with k - 1 degrees of freedom (upper tail from the regularized
/// incomplete gamma function). Sensitive to non-normality; prefer Levene or
/// Brown-Forsythe when normality is doubtful. Checked against scipy 1.17.1
/// `scipy.stats.bartlett` (agreement within 1e-12 relative).
///
/// # Errors
/// `TooFewValues` for fewer than two groups or a group with fewer than two values;
/// `InvalidParameter` for non-finite values or a group whose values are all equal
/// (its variance is zero and the logarithm undefined).
pub fn bartlett(groups: &[&[f64]]) -> Result<BartlettTest, StatsError> {
    match at_unit_scale(groups) {
        Some((scaled, exponent)) => bartlett_at_scale(&slices(&scaled)).map(|test| BartlettTest {
            pooled_variance: scale_by_power_of_two(test.pooled_variance, 2 * i64::from(exponent)),
            ..test
        }),
        None => bartlett_at_scale(groups),
    }
}

fn bartlett_at_scale(groups: &[&[f64]]) -> Result<BartlettTest, StatsError> {
    let n_total = validate_groups(groups, "groups for Bartlett's test")?;
    let n_groups = groups.len();
    let variances: Vec<f64> = groups.iter().map(|g| variance(g)).collect();
    if let Some(&zero) = variances.iter().find(|&&v| v <= 0.0) {
        return Err(StatsError::InvalidParameter {
            name: "group variance for Bartlett's test",
            rule: "greater than zero",
            value: zero,
        });
    }
    let df_within = (n_total - n_groups) as f64;
    let pooled_variance = compensated_sum(groups.iter().map(|g| sum_of_squares(g))) / df_within;
    // df_within ln(s_p^2) - sum (n_i - 1) ln(s_i^2) is a small difference of large
    // logarithms (about 4000 times smaller on a trial with 1 % spread, so it kept 12
    // digits). With u_i = s_i^2 / s_p^2 - 1 and sum (n_i - 1) u_i = 0 it equals
    // sum (n_i - 1) (u_i - ln(1 + u_i)), a sum of non-negative terms of second order in
    // u_i that no longer depends on the rounding of s_p^2 to first order.
    let numerator = compensated_sum(groups.iter().zip(&variances).map(|(g, v)| {
        (g.len() as f64 - 1.0) * excess_over_log(v / pooled_variance, (v - pooled_variance) / pooled_variance)
    }));
    let reciprocal_sum: f64 = groups.iter().map(|g| 1.0 / (g.len() as f64 - 1.0)).sum();
    let df = (n_groups - 1) as f64;
    let correction = 1.0 + (reciprocal_sum - 1.0 / df_within) / (3.0 * df);
    let statistic = (numerator / correction).max(0.0);
    Ok(BartlettTest {
        statistic,
        df,
        p_value: chi_square_upper_tail(statistic, df)?,
        pooled_variance,
        correction,
    })
}

/// u - ln(1 + u) for u = ratio - 1 > -1, without the cancellation of the direct form
/// near 0: there the series u^2/2 - u^3/3 + u^4/4 - ... (alternating, each term below the
/// last for |u| < 1/4; common practice). Away from 0 the logarithm is taken of the ratio
/// itself: 1 + u formed from a u near -1 would keep only the digits of u's rounding.
fn excess_over_log(ratio: f64, u: f64) -> f64 {
    if u.abs() >= 0.25 {
        return u - ratio.ln();
    }
    let mut total = 0.0_f64;
    let mut power = u * u;
    let mut k = 2.0_f64;
    loop {
        let term = power / k;
        total += if k % 2.0 == 0.0 { term } else { -term };
        if term.abs() <= 1e-17 * total.abs() {
            return total;
        }
        power *= u;
        k += 1.0;
    }
}

/// Ratio of the largest to the smallest group standard deviation (a rule-of-thumb check;
/// ratios above about 2 are commonly taken as a warning, common practice).
///
/// # Remarks
/// Group SDs use the divisor n - 1 and a two-pass mean. Checked against numpy 2.4.6
/// `np.std(g, ddof=1)` ratios (agreement within 1e-13 relative).
///
/// # Errors
/// `TooFewValues` for fewer than two groups or a group with fewer than two values;
/// `InvalidParameter` for non-finite values or when the smallest SD is zero.
pub fn sd_ratio(groups: &[&[f64]]) -> Result<SdRatio, StatsError> {
    match at_unit_scale(groups) {
        Some((scaled, exponent)) => sd_ratio_at_scale(&slices(&scaled)).map(|ratio| SdRatio {
            largest_sd: scale_by_power_of_two(ratio.largest_sd, i64::from(exponent)),
            smallest_sd: scale_by_power_of_two(ratio.smallest_sd, i64::from(exponent)),
            ..ratio
        }),
        None => sd_ratio_at_scale(groups),
    }
}

fn sd_ratio_at_scale(groups: &[&[f64]]) -> Result<SdRatio, StatsError> {
    validate_groups(groups, "groups for the SD ratio")?;
    let sds: Vec<f64> = groups.iter().map(|g| variance(g).sqrt()).collect();
    let mut largest_group = 0;
    let mut smallest_group = 0;
    for (index, sd) in sds.iter().enumerate() {
        if *sd > sds[largest_group] {
            largest_group = index;
        }
        if *sd < sds[smallest_group] {
            smallest_group = index;
        }
    }
    let largest_sd = sds[largest_group];
    let smallest_sd = sds[smallest_group];
    if smallest_sd <= 0.0 {
        return Err(StatsError::InvalidParameter {
            name: "smallest group standard deviation",
            rule: "greater than zero",
            value: smallest_sd,
        });
    }
    Ok(SdRatio {
        ratio: largest_sd / smallest_sd,
        largest_sd,
        smallest_sd,
        largest_group,
        smallest_group,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn assert_close(actual: f64, expected: f64, relative: f64, label: &str) {
        let scale = expected.abs().max(f64::MIN_POSITIVE);
        assert!(
            (actual - expected).abs() <= relative * scale,
            "{label}: got {actual:e}, expected {expected:e}, relative error {:e}",
            (actual - expected).abs() / scale
        );
    }

    const THREE: [&[f64]; 3] = [
        &[4.2, 4.8, 5.1, 3.9, 4.4],
        &[5.9, 6.3, 5.2, 6.8, 7.1, 5.5],
        &[4.9, 5.0, 4.1, 5.6],
    ];
    const TIES: [&[f64]; 4] = [
        &[3., 4., 4., 5., 6., 6.],
        &[5., 6., 6., 7., 8.],
        &[2., 3., 3., 4., 4., 4., 5.],
        &[6., 7., 7., 8., 9.],
    ];

    #[test]
    fn levene_matches_scipy() {
        // scipy 1.17.1: scipy.stats.levene(*THREE, center='mean') and center='median'
        let mean = levene(&THREE, Centre::Mean).expect("valid groups");
        assert_close(mean.statistic, 0.7773685972547699, 1e-12, "F mean");
        assert_close(mean.p_value, 0.48143855412306613, 1e-12, "p mean");
        assert_eq!((mean.df_between, mean.df_within), (2.0, 12.0));
        let median = brown_forsythe(&THREE).expect("valid groups");
        assert_eq!(median.centre, Centre::Median);
        assert_close(median.statistic, 0.7872648335745287, 1e-12, "F median");
        assert_close(median.p_value, 0.4772420804401775, 1e-12, "p median");
        // scipy 1.17.1: scipy.stats.levene(*TIES, center='mean') and center='median'
        let mean = levene(&TIES, Centre::Mean).expect("valid groups");
        assert_close(mean.statistic, 0.18770579981693822, 1e-12, "F mean ties");
        assert_close(mean.p_value, 0.9034479438519342, 1e-12, "p mean ties");
        let median = levene(&TIES, Centre::Median).expect("valid groups");
        assert_close(median.statistic, 0.16588991799893804, 1e-12, "F median ties");
        assert_close(median.p_value, 0.9180364908279907, 1e-12, "p median ties");
        assert_eq!((median.n_groups, median.n_total), (4, 23));
    }

    #[test]
    fn bartlett_and_sd_ratio_match_scipy() {
        // scipy 1.17.1: scipy.stats.bartlett(*THREE)
        let result = bartlett(&THREE).expect("valid groups");
        assert_close(result.statistic, 0.7265435221869223, 1e-12, "T");
        assert_close(result.p_value, 0.695397425852956, 1e-12, "p");
        assert_eq!(result.df, 2.0);
        // scipy 1.17.1: scipy.stats.bartlett(*TIES)
        let result = bartlett(&TIES).expect("valid groups");
        assert_close(result.statistic, 0.25231381269037906, 1e-12, "T ties");
        assert_close(result.p_value, 0.9687323928655984, 1e-12, "p ties");
        // numpy 2.4.6: max / min of np.std(g, ddof=1) over the groups
        let ratio = sd_ratio(&THREE).expect("valid groups");
        assert_close(ratio.ratio, 1.5518450957407908, 1e-13, "SD ratio");
        assert_eq!((ratio.largest_group, ratio.smallest_group), (1, 0));
        let ratio = sd_ratio(&TIES).expect("valid groups");
        assert_close(ratio.ratio, 1.2409673645990853, 1e-13, "SD ratio ties");
    }

    #[test]
    fn equal_spreads_give_zero_statistics() {
        // scipy 1.17.1: levene([1,2,3],[4,5,6]) -> (0.0, 1.0); bartlett(...) -> (0.0, 1.0)
        let groups: [&[f64]; 2] = [&[1.0, 2.0, 3.0], &[4.0, 5.0, 6.0]];
        for centre in [Centre::Mean, Centre::Median] {
            let result = levene(&groups, centre).expect("valid groups");
            assert!(result.statistic.abs() < 1e-15);
            assert_close(result.p_value, 1.0, 1e-15, "Levene p");
        }
        let result = bartlett(&groups).expect("valid groups");
        assert!(result.statistic.abs() < 1e-12);
        assert_close(result.p_value, 1.0, 1e-12, "Bartlett p");
        assert_close(sd_ratio(&groups).expect("valid").ratio, 1.0, 1e-15, "ratio");
    }

    #[test]
    fn upper_tails_match_scipy() {
        // scipy 1.17.1: scipy.stats.f.sf(3.2, 4, 20), f.sf(50, 3, 30), f.sf(0.3, 2, 9)
        assert_close(
            f_upper_tail(3.2, 4.0, 20.0).expect("ok"),
            0.034831623728782526,
            1e-12,
            "F",
        );
        assert_close(
            f_upper_tail(50.0, 3.0, 30.0).expect("ok"),
            8.748902589397343e-12,
            1e-10,
            "F",
        );
        assert_close(f_upper_tail(0.3, 2.0, 9.0).expect("ok"), 0.7479468608922977, 1e-12, "F");
        // scipy 1.17.1: scipy.stats.chi2.sf(7.5, 3), chi2.sf(80, 2), chi2.sf(0.2, 5)
        assert_close(
            chi_square_upper_tail(7.5, 3.0).expect("ok"),
            0.0575584519726364,
            1e-12,
            "chi2",
        );
        assert_close(
            chi_square_upper_tail(80.0, 2.0).expect("ok"),
            4.248354255291595e-18,
            1e-10,
            "chi2",
        );
        assert_close(
            chi_square_upper_tail(0.2, 5.0).expect("ok"),
            0.9991138612111875,
            1e-12,
            "chi2",
        );
    }

    #[test]
    fn bad_or_degenerate_groups_give_errors() {
        let one_group: [&[f64]; 1] = [&[1.0, 2.0, 3.0]];
        assert!(matches!(
            levene(&one_group, Centre::Mean),
            Err(StatsError::TooFewValues { needed: 2, got: 1, .. })
        ));
        let tiny: [&[f64]; 2] = [&[1.0, 2.0], &[3.0]];
        assert!(bartlett(&tiny).is_err());
        assert!(sd_ratio(&tiny).is_err());
        let not_finite: [&[f64]; 2] = [&[1.0, f64::INFINITY], &[3.0, 4.0]];
        assert!(levene(&not_finite, Centre::Median).is_err());
        // Constant groups: zero variance (Bartlett, SD ratio) and no variation of the
        // deviations (Levene).
        let constant: [&[f64]; 2] = [&[2.0, 2.0, 2.0], &[5.0, 7.0, 9.0]];
        assert!(bartlett(&constant).is_err());
        assert!(sd_ratio(&constant).is_err());
        let flat: [&[f64]; 2] = [&[2.0, 2.0, 2.0], &[5.0, 5.0, 5.0]];
        assert!(levene(&flat, Centre::Mean).is_err());
        // Pairs: both deviations from the mean are equal, so F is undefined.
        let pairs: [&[f64]; 3] = [&[1.0, 2.0], &[3.0, 7.0], &[0.5, 0.6]];
        assert!(levene(&pairs, Centre::Mean).is_err());
    }

    #[test]
    fn invariant_to_location_scale_and_group_order() {
        // Common practice: all three checks depend only on spreads, so an affine change
        // of every value (positive scale) or a reordering of groups leaves them unchanged.
        let moved: Vec<Vec<f64>> = THREE
            .iter()
            .map(|g| g.iter().map(|v| 1000.0 + 3.5 * v).collect())
            .collect();
        let moved: Vec<&[f64]> = moved.iter().map(|g| g.as_slice()).collect();
        let reordered: [&[f64]; 3] = [THREE[2], THREE[0], THREE[1]];
        for centre in [Centre::Mean, Centre::Median] {
            let base = levene(&THREE, centre).expect("valid");
            for other in [&moved[..], &reordered[..]] {
                let result = levene(other, centre).expect("valid");
                assert_close(result.statistic, base.statistic, 1e-9, "Levene");
            }
        }
        let base = bartlett(&THREE).expect("valid");
        for other in [&moved[..], &reordered[..]] {
            assert_close(bartlett(other).expect("valid").statistic, base.statistic, 1e-9, "B");
            assert_close(sd_ratio(other).expect("valid").ratio, 1.5518450957407908, 1e-12, "r");
        }
    }
}
