//! The one-way normal model: each condition has its own mean, all share one
//! standard deviation.
//!
//! Input is a response's values with the condition of each; the values are
//! reduced in one pass to per-condition sufficient statistics by
//! [`crate::stats::accumulate`] (exact decimal accumulation where the values
//! allow, compensated binary arithmetic otherwise), and every quantity below
//! is derived from those statistics.

use serde::Serialize;

use crate::analysis::contrast::Contrast;
use crate::stats::accumulate::{mean_difference, oneway_sums, scale_by_power_of_two, GroupAccumulator};
use crate::stats::dist;
use crate::stats::StatsError;

/// Summary of one condition.
#[derive(Debug, Clone, Serialize)]
pub struct ConditionSummary {
    /// The condition's name.
    pub name: String,
    /// Number of values.
    pub n: u64,
    /// Mean.
    pub mean: f64,
    /// The condition's own standard deviation (n - 1 divisor); NaN when n < 2.
    pub sd: f64,
    /// Standard error of the mean from the condition's own SD.
    pub se: f64,
    /// Smallest value.
    pub min: f64,
    /// Median.
    pub median: f64,
    /// Largest value.
    pub max: f64,
    /// Lower end of the interval for the mean, on the pooled SD.
    pub mean_low: f64,
    /// Upper end of the interval for the mean, on the pooled SD.
    pub mean_high: f64,
    /// Half-width of that interval.
    pub mean_half_width: f64,
}

/// One line of the ANOVA table.
#[derive(Debug, Clone, Serialize)]
pub struct AnovaLine {
    /// Source of variation.
    pub source: String,
    /// Degrees of freedom.
    pub df: f64,
    /// Sum of squares.
    pub ss: f64,
    /// Mean square (absent for the total line).
    pub ms: Option<f64>,
    /// F statistic (between line only).
    pub f: Option<f64>,
    /// p-value from the F survival function (between line only).
    pub p: Option<f64>,
}

/// The difference between two condition means, with an individual t interval.
#[derive(Debug, Clone, Serialize)]
pub struct PairDifference {
    /// First condition: the one with the higher average (the difference is first minus
    /// second, never negative).
    pub first: String,
    /// Second condition.
    pub second: String,
    /// Difference of means.
    pub difference: f64,
    /// Standard error on the pooled SD.
    pub se: f64,
    /// Lower end of the individual interval.
    pub low: f64,
    /// Upper end of the individual interval.
    pub high: f64,
    /// t statistic.
    pub t: f64,
    /// Two-sided p-value, not adjusted for multiplicity.
    pub p: f64,
    /// The difference in pooled-SD units.
    pub standardized: f64,
}

impl PairDifference {
    /// The pair with the condition of the higher average first: the difference, its
    /// interval, t and the standardized difference read as the higher minus the lower.
    #[must_use]
    pub fn higher_first(self) -> Self {
        if self.difference.is_nan() || self.difference >= 0.0 {
            return self;
        }
        let (low, high) = crate::analysis::comparisons::reversed_interval(self.low, self.high);
        Self {
            difference: -self.difference,
            t: -self.t,
            standardized: -self.standardized,
            low,
            high,
            first: self.second,
            second: self.first,
            ..self
        }
    }
}

/// A linear combination of condition means with its interval.
#[derive(Debug, Clone, Serialize)]
pub struct ContrastEstimate {
    /// The combination's name.
    pub name: String,
    /// The expression as written.
    pub expression: String,
    /// Coefficients by condition.
    pub coefficients: Vec<f64>,
    /// True when the coefficients sum to zero.
    pub is_contrast: bool,
    /// The estimate.
    pub estimate: f64,
    /// Its standard error on the pooled SD.
    pub se: f64,
    /// Lower end of the individual interval.
    pub low: f64,
    /// Upper end of the individual interval.
    pub high: f64,
    /// t statistic for the hypothesis that the combination is zero.
    pub t: f64,
    /// Two-sided p-value.
    pub p: f64,
}

/// The fitted one-way model.
#[derive(Debug, Clone, Serialize)]
pub struct OneWayFit {
    /// Confidence level of every interval.
    pub confidence: f64,
    /// Conditions with at least one value, in order of first appearance.
    pub conditions: Vec<ConditionSummary>,
    /// Total number of values.
    pub n_total: u64,
    /// Grand mean.
    pub grand_mean: f64,
    /// Pooled SD (root of the within mean square); NaN without within df.
    pub pooled_sd: f64,
    /// Its degrees of freedom.
    pub pooled_df: f64,
    /// Between, within and total lines.
    pub anova: Vec<AnovaLine>,
    /// Between SS over total SS.
    pub r_squared: f64,
    /// Eta squared (equal to R² in the one-way model).
    pub eta_squared: f64,
    /// Omega squared, a less biased estimate of explained variance.
    pub omega_squared: f64,
    /// Every pairwise difference with an individual t interval.
    pub pairs: Vec<PairDifference>,
    /// The user's linear combinations.
    pub contrasts: Vec<ContrastEstimate>,
    /// True when every value took the exact decimal path.
    pub exact_decimal: bool,
    /// In a trial run in blocks: how each block's shift was taken out before the
    /// conditions were compared (see [`crate::analysis::blocks`]); absent otherwise.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub blocks: Option<crate::analysis::blocks::BlocksRemoved>,
    /// The values of each condition, sorted (for medians and model checks).
    #[serde(skip)]
    pub sorted_values: Vec<Vec<f64>>,
    /// Each condition's mean minus the first condition's, as a pair `hi + lo` formed from
    /// the exact or compensated sums rather than from the rounded means, so a gap between
    /// means at a large offset keeps its digits; empty when not formed.
    #[serde(skip)]
    pub mean_gaps: Vec<(f64, f64)>,
}

impl OneWayFit {
    /// The between-conditions line.
    pub fn between(&self) -> &AnovaLine {
        &self.anova[0]
    }

    /// The variance of the difference of the means of conditions `first` and
    /// `second` (positions in [`Self::conditions`]) over the error variance:
    /// `1/n₁ + 1/n₂`, or in a trial run in blocks the blocked model's own factor.
    pub fn difference_variance_factor(&self, first: usize, second: usize) -> f64 {
        match &self.blocks {
            Some(blocks) => blocks.difference_variance_factor(first, second),
            None => 1.0 / self.conditions[first].n as f64 + 1.0 / self.conditions[second].n as f64,
        }
    }

    /// The standard error of the difference of two conditions' means on the pooled SD.
    pub fn difference_se(&self, first: usize, second: usize) -> f64 {
        self.pooled_sd * self.difference_variance_factor(first, second).sqrt()
    }

    /// `mean(first) - mean(second)` to full precision where the sums allow (see
    /// [`Self::mean_gaps`]), else the difference of the rounded means.
    pub fn mean_difference(&self, first: usize, second: usize) -> f64 {
        match (self.mean_gaps.get(first), self.mean_gaps.get(second)) {
            (Some(&(first_hi, first_lo)), Some(&(second_hi, second_lo))) => {
                (first_hi - second_hi) + (first_lo - second_lo)
            }
            _ => self.conditions[first].mean - self.conditions[second].mean,
        }
    }
}

/// The error a one-way fit shares with a larger model: degrees of freedom the larger
/// model spends besides the conditions, and the covariance of the conditions' means
/// over the error variance (row-major, conditions with values in their order).
#[derive(Debug, Clone)]
pub(crate) struct SharedError {
    /// Degrees of freedom spent on terms other than the conditions (blocks).
    pub removed_df: f64,
    /// Covariance of the means over σ², `k × k`.
    pub mean_covariance: Vec<f64>,
}

/// Why the one-way model could not be fitted at all.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum OneWayError {
    /// Fewer than two conditions have values.
    #[error("only {} {} values; comparing conditions needs at least two", crate::analysis::verdict::count_of(*.found, "condition"), if *.found == 1 { "has" } else { "have" })]
    TooFewConditions {
        /// How many conditions had values.
        found: usize,
    },
    /// A numerical routine failed.
    #[error(transparent)]
    Stats(#[from] StatsError),
}

fn median_of_sorted(sorted: &[f64]) -> f64 {
    let n = sorted.len();
    if n == 0 {
        f64::NAN
    } else if n % 2 == 1 {
        sorted[n / 2]
    } else {
        0.5 * (sorted[n / 2 - 1] + sorted[n / 2])
    }
}

/// `(first - second) / scale`, also when the difference lies beyond the largest double
/// (means near ±1.8e308 of opposite sign): the halved figures are used then, so a t
/// statistic stands although the difference itself is beyond the range of the arithmetic.
pub fn difference_over(first: f64, second: f64, scale: f64) -> f64 {
    let difference = first - second;
    if difference.is_finite() {
        difference / scale
    } else {
        (0.5 * first - 0.5 * second) / (0.5 * scale)
    }
}

/// Two-sided t multiplier for a confidence level, NaN when df is zero.
pub fn t_multiplier(confidence: f64, df: f64) -> Result<f64, StatsError> {
    if df <= 0.0 {
        return Ok(f64::NAN);
    }
    dist::t_quantile(0.5 + confidence / 2.0, df)
}

fn two_sided_t_p(t: f64, df: f64) -> Result<f64, StatsError> {
    if df <= 0.0 || t.is_nan() {
        return Ok(f64::NAN);
    }
    if t.is_infinite() {
        return Ok(0.0);
    }
    Ok((2.0 * dist::t_sf(t.abs(), df)?).min(1.0))
}

/// Fits the one-way model.
///
/// `group_of_value[i]` is the condition index of `values[i]`; non-finite
/// values are skipped (the reader has already reported them). Conditions
/// without values are left out of the fit.
///
/// # Errors
///
/// [`OneWayError::TooFewConditions`] with fewer than two conditions holding values.
pub fn fit_one_way(
    condition_names: &[String],
    group_of_value: &[u32],
    values: &[f64],
    confidence: f64,
    contrasts: &[Contrast],
) -> Result<OneWayFit, OneWayError> {
    fit_one_way_sharing(condition_names, group_of_value, values, confidence, contrasts, None)
}

/// As [`fit_one_way`], with the error of a larger model (blocks) when `shared` is given:
/// the within degrees of freedom lose `removed_df` and every standard error of a mean,
/// a difference or a contrast comes from `mean_covariance` instead of `1/n`.
pub(crate) fn fit_one_way_sharing(
    condition_names: &[String],
    group_of_value: &[u32],
    values: &[f64],
    confidence: f64,
    contrasts: &[Contrast],
    shared: Option<&SharedError>,
) -> Result<OneWayFit, OneWayError> {
    if !(confidence > 0.0 && confidence < 1.0) {
        return Err(StatsError::InvalidParameter {
            name: "confidence",
            rule: "between 0 and 1",
            value: confidence,
        }
        .into());
    }
    let n_groups = condition_names.len();
    let mut accumulator = GroupAccumulator::new(n_groups);
    let mut raw: Vec<Vec<f64>> = vec![Vec::new(); n_groups];
    for (&group, &value) in group_of_value.iter().zip(values) {
        if value.is_finite() && (group as usize) < n_groups {
            accumulator.push(group as usize, value)?;
            raw[group as usize].push(value);
        }
    }
    let stats = accumulator.finish();
    let kept: Vec<usize> = (0..n_groups).filter(|&index| stats[index].n > 0).collect();
    if kept.len() < 2 {
        return Err(OneWayError::TooFewConditions { found: kept.len() });
    }
    let sums = oneway_sums(&stats)?;
    let n_total = sums.n_total;
    let k = kept.len() as f64;
    let df_between = k - 1.0;
    let df_within = n_total as f64 - k - shared.map_or(0.0, |shared| shared.removed_df);
    let k_kept = kept.len();
    // Covariance of two kept conditions' means over the error variance.
    let mean_covariance = |first: usize, second: usize, n_first: u64| match shared {
        Some(shared) => shared.mean_covariance[first * k_kept + second],
        None if first == second => 1.0 / n_first as f64,
        None => 0.0,
    };
    let ms_between = sums.ss_between / df_between;
    let ms_within = if df_within > 0.0 {
        sums.ss_within / df_within
    } else {
        f64::NAN
    };
    // Ratios and roots come from the sums divided by a power of two (exactly), so they
    // are right at any magnitude of the data, where the sums themselves may lie beyond
    // the range of f64 (the ANOVA table then shows them empty).
    let [between_scaled, within_scaled, total_scaled] = sums.scaled;
    let unit = i64::from(sums.scale_exponent);
    let ms_within_scaled = if df_within > 0.0 {
        within_scaled / df_within
    } else {
        f64::NAN
    };
    let pooled_sd = scale_by_power_of_two(ms_within_scaled.sqrt(), unit);
    let (f, p) = if df_within > 0.0 {
        if ms_within_scaled > 0.0 {
            let f = (between_scaled / df_between) / ms_within_scaled;
            (f, dist::f_sf(f, df_between, df_within)?)
        } else {
            // No spread within conditions: F is not defined (whether or not the means
            // differ), so neither F nor p is reported; never a p of 0 beside an empty F.
            (f64::NAN, f64::NAN)
        }
    } else {
        (f64::NAN, f64::NAN)
    };
    let anova = vec![
        AnovaLine {
            source: "between conditions".into(),
            df: df_between,
            ss: sums.ss_between,
            ms: Some(ms_between),
            f: f.is_finite().then_some(f),
            p: p.is_finite().then_some(p),
        },
        AnovaLine {
            source: "within conditions".into(),
            df: df_within,
            ss: sums.ss_within,
            ms: Some(ms_within),
            f: None,
            p: None,
        },
        AnovaLine {
            source: "total".into(),
            df: n_total as f64 - 1.0,
            ss: sums.ss_total,
            ms: None,
            f: None,
            p: None,
        },
    ];
    let r_squared = if total_scaled > 0.0 {
        between_scaled / total_scaled
    } else {
        f64::NAN
    };
    let omega_squared = if total_scaled > 0.0 && ms_within_scaled.is_finite() {
        (between_scaled - df_between * ms_within_scaled) / (total_scaled + ms_within_scaled)
    } else {
        f64::NAN
    };
    let multiplier = t_multiplier(confidence, df_within)?;

    let mut sorted_values = Vec::with_capacity(kept.len());
    let mut conditions = Vec::with_capacity(kept.len());
    for &index in &kept {
        let group = &stats[index];
        let mut sorted = std::mem::take(&mut raw[index]);
        // Radix sort in `f64::total_cmp` order, as `sort_by(f64::total_cmp)` gives.
        crate::stats::sort::sort_floats(&mut sorted);
        let n = group.n as f64;
        let sd = group.sd();
        let half_width = match shared {
            None => multiplier * pooled_sd / n.sqrt(),
            Some(_) => multiplier * pooled_sd * mean_covariance(conditions.len(), conditions.len(), group.n).sqrt(),
        };
        conditions.push(ConditionSummary {
            name: condition_names[index].clone(),
            n: group.n,
            mean: group.mean,
            sd,
            se: sd / n.sqrt(),
            min: group.min,
            median: median_of_sorted(&sorted),
            max: group.max,
            mean_low: group.mean - half_width,
            mean_high: group.mean + half_width,
            mean_half_width: half_width,
        });
        sorted_values.push(sorted);
    }

    let mean_gaps: Vec<(f64, f64)> = kept
        .iter()
        .map(|&index| mean_difference(&stats[index], &stats[kept[0]]))
        .collect();
    let mut pairs = Vec::new();
    for first in 0..conditions.len() {
        for second in first + 1..conditions.len() {
            let (a, b) = (&conditions[first], &conditions[second]);
            let difference = a.mean - b.mean;
            let variance_factor = mean_covariance(first, first, a.n) + mean_covariance(second, second, b.n)
                - 2.0 * mean_covariance(first, second, 0);
            let se = pooled_sd * variance_factor.sqrt();
            let t = difference_over(a.mean, b.mean, se);
            let standardized = difference_over(a.mean, b.mean, pooled_sd);
            pairs.push(
                PairDifference {
                    first: a.name.clone(),
                    second: b.name.clone(),
                    difference,
                    se,
                    low: difference - multiplier * se,
                    high: difference + multiplier * se,
                    t,
                    p: two_sided_t_p(t, df_within)?,
                    standardized,
                }
                .higher_first(),
            );
        }
    }

    let mut contrast_estimates = Vec::new();
    for contrast in contrasts {
        // Coefficients are given over all conditions; those without values must carry zero.
        let mut estimate = 0.0;
        let mut variance_factor = 0.0;
        let coefficient_of = |position: usize| contrast.coefficients.get(kept[position]).copied().unwrap_or(0.0);
        for (position, condition) in conditions.iter().enumerate() {
            let coefficient = coefficient_of(position);
            estimate += coefficient * condition.mean;
            for other in 0..k_kept {
                variance_factor += coefficient * coefficient_of(other) * mean_covariance(position, other, condition.n);
            }
        }
        let se = pooled_sd * variance_factor.sqrt();
        let t = estimate / se;
        contrast_estimates.push(ContrastEstimate {
            name: contrast.name.clone(),
            expression: contrast.expression.clone(),
            coefficients: kept
                .iter()
                .map(|&index| contrast.coefficients.get(index).copied().unwrap_or(0.0))
                .collect(),
            is_contrast: contrast.is_contrast(),
            estimate,
            se,
            low: estimate - multiplier * se,
            high: estimate + multiplier * se,
            t,
            p: two_sided_t_p(t, df_within)?,
        });
    }

    Ok(OneWayFit {
        confidence,
        conditions,
        n_total,
        grand_mean: sums.grand_mean,
        pooled_sd,
        pooled_df: df_within,
        anova,
        r_squared,
        eta_squared: r_squared,
        omega_squared,
        pairs,
        contrasts: contrast_estimates,
        exact_decimal: sums.exact_decimal,
        blocks: None,
        sorted_values,
        mean_gaps,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    /// NIST/SEMATECH e-Handbook of Statistical Methods, section 7.4.3.3
    /// ("The ANOVA table and tests of hypotheses about means"): three levels
    /// of one factor, five observations each. The handbook prints SS
    /// treatments 27.897, SS error 17.452, SS total 45.349, F 9.59 (values as
    /// recalled from memory of the handbook; the exact sums are cross-checked
    /// with scipy 1.17.1 `scipy.stats.f_oneway`: F 9.591107036442809,
    /// p 0.003248222600859306).
    #[test]
    fn handbook_one_way_example() {
        let data: [[f64; 5]; 3] = [
            [6.9, 5.4, 5.8, 4.6, 4.0],
            [8.3, 6.8, 7.8, 9.2, 6.5],
            [8.0, 10.5, 8.1, 6.9, 9.3],
        ];
        let names: Vec<String> = (1..=3).map(|level| format!("level {level}")).collect();
        let mut groups = Vec::new();
        let mut values = Vec::new();
        for (level, row) in data.iter().enumerate() {
            for value in row {
                groups.push(level as u32);
                values.push(*value);
            }
        }
        let fit = fit_one_way(&names, &groups, &values, 0.95, &[]).expect("fits");
        assert!((fit.anova[0].ss - 27.897).abs() < 5e-4);
        assert!((fit.anova[1].ss - 17.452).abs() < 5e-4);
        assert!((fit.anova[2].ss - 45.349).abs() < 5e-4);
        assert!((fit.between().f.unwrap_or(0.0) - 9.59).abs() < 5e-3);
        assert!((fit.between().f.unwrap_or(0.0) - 9.591107036442809).abs() < 1e-12);
        assert_eq!(fit.anova[0].df, 2.0);
        assert_eq!(fit.anova[1].df, 12.0);
        let p = fit.between().p.unwrap_or(f64::NAN);
        assert!((p - 0.003248222600859306).abs() < 1e-12, "{p}");
    }

    /// Two conditions: the pairwise t interval is the pooled two-sample t
    /// interval; checked against scipy 1.17.1
    /// `scipy.stats.ttest_ind([1,2,3,4],[2,4,6,9])`: t -1.690641214609248, p 0.1418603602858507.
    #[test]
    fn two_conditions_match_pooled_t_test() {
        let names = vec!["a".to_string(), "b".to_string()];
        let groups = [0, 0, 0, 0, 1, 1, 1, 1];
        let values = [1.0, 2.0, 3.0, 4.0, 2.0, 4.0, 6.0, 9.0];
        let fit = fit_one_way(&names, &groups, &values, 0.95, &[]).expect("fits");
        // Given higher first: b minus a, so t has scipy's size with the sign of b - a.
        let pair = &fit.pairs[0];
        assert_eq!((pair.first.as_str(), pair.second.as_str()), ("b", "a"));
        assert!((pair.t - 1.690641214609248).abs() < 1e-12, "{}", pair.t);
        assert!((pair.p - 0.1418603602858507).abs() < 1e-12, "{}", pair.p);
        // F equals t squared for two groups (common practice identity).
        assert!((fit.between().f.unwrap_or(0.0) - pair.t * pair.t).abs() < 1e-9);
    }

    #[test]
    fn contrast_reduces_to_pair() {
        let names = vec!["a".to_string(), "b".to_string(), "c".to_string()];
        let groups = [0, 0, 0, 1, 1, 1, 2, 2, 2];
        let values = [1.0, 2.0, 3.0, 2.0, 3.5, 4.0, 7.0, 8.0, 9.5];
        let contrast = crate::analysis::contrast::parse_contrast("a - b", &names).expect("valid");
        let fit = fit_one_way(&names, &groups, &values, 0.9, &[contrast]).expect("fits");
        // The pair is given higher first (b minus a); the contrast as written (a - b).
        let pair = &fit.pairs[0];
        assert_eq!((pair.first.as_str(), pair.second.as_str()), ("b", "a"));
        let estimate = &fit.contrasts[0];
        assert!((estimate.estimate + pair.difference).abs() < 1e-12);
        assert!((estimate.low + pair.high).abs() < 1e-12);
        assert!((estimate.p - pair.p).abs() < 1e-12);
    }

    #[test]
    fn degenerate_inputs_are_values_not_panics() {
        let names = vec!["a".to_string(), "b".to_string()];
        assert!(matches!(
            fit_one_way(&names, &[0, 0], &[1.0, 2.0], 0.95, &[]),
            Err(OneWayError::TooFewConditions { found: 1 })
        ));
        // One value per condition: no within df, intervals undefined, no panic.
        let fit = fit_one_way(&names, &[0, 1], &[1.0, 2.0], 0.95, &[]).expect("fits");
        assert!(fit.pooled_sd.is_nan());
        assert_eq!((fit.between().f, fit.between().p), (None, None));
        // All values equal within conditions but different means: F has no denominator
        // (common practice: the ratio is undefined), so neither F nor p is given, never a
        // p of 0 beside an empty F.
        let fit = fit_one_way(&names, &[0, 0, 1, 1], &[1.0, 1.0, 2.0, 2.0], 0.95, &[]).expect("fits");
        assert_eq!((fit.between().f, fit.between().p), (None, None));
    }
}
