//! Simultaneous comparisons of condition means, for the one-way model and
//! for unequal spreads.
//!
//! Remarks:
//! - Tukey-Kramer: intervals `diff ± q(1-α; k, ν)/√2 · s·√(1/nᵢ + 1/nⱼ)`,
//!   adjusted p from the studentized range survival function at
//!   `√2·|t|` (Tukey 1953; Kramer 1956).
//! - Bonferroni: t intervals at `1 - α/(2m)` for m pairs; p times m, capped at 1.
//! - Scheffé: `√((k-1) F(1-α; k-1, ν))` for every contrast; p from the F
//!   survival function at `t²/(k-1)` (Scheffé 1953).
//! - Games-Howell (1976): each pair with its own SE `√(sᵢ²/nᵢ + sⱼ²/nⱼ)` and
//!   Welch-Satterthwaite df, studentized range critical values.
//! - Dunnett (1955) against a control: product-correlation probability
//!   (`stats::dunnett`), two- and one-sided.
//! - Multiple comparisons with the best (Hsu 1981; Hsu 1996, *Multiple
//!   Comparisons*, ch. 4): constrained intervals for each mean minus the best
//!   of the others, one-sided Dunnett critical values with each condition in
//!   turn as the control; conditions whose upper bound is above zero could be best.
//! - Holm (1979) step-down for the user's contrasts.
//! - Welch (1951) ANOVA for unequal variances.

use crate::stats::accumulate::{magnitude_exponent, scale_by_power_of_two};
use serde::Serialize;

use crate::analysis::letters::grouping_letters;
use crate::analysis::oneway::{difference_over, ConditionSummary, OneWayFit};
use crate::options::Direction;
use crate::stats::dunnett::{mcb_critical_values, ProductCorrelation, Sides};
use crate::stats::ranks::holm_adjust;
use crate::stats::studentized_range::{studentized_range_quantile, studentized_range_quantiles, studentized_range_sf};
use crate::stats::{dist, StatsError};

/// The simultaneous methods for all pairs.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum PairMethod {
    /// Tukey-Kramer (studentized range, pooled SD).
    TukeyKramer,
    /// Bonferroni t intervals.
    Bonferroni,
    /// Scheffé's intervals.
    Scheffe,
    /// Games-Howell (each pair's own SE and df).
    GamesHowell,
}

impl PairMethod {
    /// The method's usual name.
    pub fn label(self) -> &'static str {
        match self {
            PairMethod::TukeyKramer => "Tukey-Kramer",
            PairMethod::Bonferroni => "Bonferroni",
            PairMethod::Scheffe => "Scheffé",
            PairMethod::GamesHowell => "Games-Howell",
        }
    }
}

/// One pair within a simultaneous family.
#[derive(Debug, Clone, Serialize)]
pub struct SimultaneousPair {
    /// First condition: the one with the higher average.
    pub first: String,
    /// Second condition (the difference is first minus second, never negative).
    pub second: String,
    /// Difference of means.
    pub difference: f64,
    /// Standard error used.
    pub se: f64,
    /// Degrees of freedom used.
    pub df: f64,
    /// Lower end of the simultaneous interval.
    pub low: f64,
    /// Upper end.
    pub high: f64,
    /// Adjusted p-value.
    pub p_adjusted: f64,
    /// True when the interval excludes zero.
    pub differ: bool,
}

impl SimultaneousPair {
    /// The pair with the condition of the higher average first, so that the difference
    /// and its interval read as the higher minus the lower (the convention of every
    /// sheet, the roll-up and the JSON).
    #[must_use]
    pub fn higher_first(self) -> Self {
        if self.difference >= 0.0 || self.difference.is_nan() {
            return self;
        }
        let (low, high) = reversed_interval(self.low, self.high);
        Self {
            first: self.second,
            second: self.first,
            difference: -self.difference,
            low,
            high,
            ..self
        }
    }
}

/// The interval of the opposite difference: (low, high) of a - b gives that of b - a.
pub(crate) fn reversed_interval(low: f64, high: f64) -> (f64, f64) {
    (-high, -low)
}

/// All pairs under one method.
#[derive(Debug, Clone, Serialize)]
pub struct PairFamily {
    /// The method.
    pub method: PairMethod,
    /// Family confidence.
    pub family_confidence: f64,
    /// Critical multiplier of the SE (for Games-Howell: per pair, so NaN here).
    pub critical_value: f64,
    /// The pairs.
    pub pairs: Vec<SimultaneousPair>,
    /// Letters per condition: two conditions with a letter in common could not be told apart.
    pub letters: Vec<(String, String)>,
}

/// Comparisons with a control.
#[derive(Debug, Clone, Serialize)]
pub struct ControlFamily {
    /// The control condition.
    pub control: String,
    /// "two-sided", "higher" (treatment above control) or "lower".
    pub sides: String,
    /// Family confidence.
    pub family_confidence: f64,
    /// Rows, one per other condition.
    pub rows: Vec<SimultaneousPair>,
}

/// One row of the comparison with the best.
#[derive(Debug, Clone, Serialize)]
pub struct BestRow {
    /// The condition.
    pub condition: String,
    /// Its mean minus the best of the others (signed so that larger is better).
    pub difference: f64,
    /// Lower end of the constrained interval.
    pub low: f64,
    /// Upper end.
    pub high: f64,
    /// True when the condition could be the best at the family confidence.
    pub could_be_best: bool,
    /// Adjusted p-value that the condition is not the best: the smallest family error
    /// rate at which the upper end of its interval reaches 0 (Hsu 1996), the one-sided
    /// product-correlation tail at the largest studentized lead of another condition over
    /// it. Small when another condition is clearly better.
    pub p_not_best: f64,
}

/// Multiple comparisons with the best.
#[derive(Debug, Clone, Serialize)]
pub struct BestFamily {
    /// Which way is better.
    pub direction: Direction,
    /// Family confidence.
    pub family_confidence: f64,
    /// One row per condition.
    pub rows: Vec<BestRow>,
    /// The conditions that could be best.
    pub could_be_best: Vec<String>,
}

/// A contrast with simultaneous adjustments.
#[derive(Debug, Clone, Serialize)]
pub struct AdjustedContrast {
    /// Name.
    pub name: String,
    /// Estimate.
    pub estimate: f64,
    /// Scheffé interval low.
    pub scheffe_low: f64,
    /// Scheffé interval high.
    pub scheffe_high: f64,
    /// Scheffé-adjusted p.
    pub p_scheffe: f64,
    /// Holm-adjusted p over the user's contrasts.
    pub p_holm: f64,
}

/// Welch's ANOVA.
#[derive(Debug, Clone, Serialize)]
pub struct WelchAnova {
    /// F statistic.
    pub f: f64,
    /// Numerator df.
    pub df_between: f64,
    /// Denominator df (Welch's approximation).
    pub df_within: f64,
    /// p-value.
    pub p: f64,
}

fn check_family(confidence: f64) -> Result<(), StatsError> {
    if confidence > 0.0 && confidence < 1.0 {
        Ok(())
    } else {
        Err(StatsError::InvalidParameter {
            name: "family confidence",
            rule: "between 0 and 1",
            value: confidence,
        })
    }
}

fn pair_matrix(n: usize, pairs: &[SimultaneousPair], index: &[(usize, usize)]) -> Vec<Vec<bool>> {
    let mut different = vec![vec![false; n]; n];
    for (pair, &(a, b)) in pairs.iter().zip(index) {
        different[a][b] = pair.differ;
        different[b][a] = pair.differ;
    }
    different
}

fn pair_indices(k: usize) -> Vec<(usize, usize)> {
    let mut index = Vec::new();
    for a in 0..k {
        for b in a + 1..k {
            index.push((a, b));
        }
    }
    index
}

fn with_letters(
    method: PairMethod,
    confidence: f64,
    critical: f64,
    conditions: &[ConditionSummary],
    pairs: Vec<SimultaneousPair>,
) -> PairFamily {
    let index = pair_indices(conditions.len());
    let different = pair_matrix(conditions.len(), &pairs, &index);
    let means: Vec<f64> = conditions.iter().map(|condition| condition.mean).collect();
    let letters = grouping_letters(&means, &different);
    PairFamily {
        method,
        family_confidence: confidence,
        critical_value: critical,
        pairs: pairs.into_iter().map(SimultaneousPair::higher_first).collect(),
        letters: conditions
            .iter()
            .map(|condition| condition.name.clone())
            .zip(letters)
            .collect(),
    }
}

/// All pairs on the pooled SD: Tukey-Kramer, Bonferroni or Scheffé.
///
/// # Errors
///
/// [`StatsError`] when the fit has no within-condition df or the confidence is invalid.
pub fn pooled_pairs(fit: &OneWayFit, method: PairMethod, confidence: f64) -> Result<PairFamily, StatsError> {
    check_family(confidence)?;
    let k = fit.conditions.len();
    let df = fit.pooled_df;
    if !(df > 0.0 && fit.pooled_sd > 0.0) {
        return Err(StatsError::TooFewValues {
            what: "simultaneous intervals need spread within conditions",
            needed: 1,
            got: 0,
        });
    }
    let n_pairs = (k * (k - 1) / 2) as f64;
    let critical = match method {
        PairMethod::TukeyKramer => studentized_range_quantile(confidence, k, df)? / std::f64::consts::SQRT_2,
        PairMethod::Bonferroni => dist::t_quantile(1.0 - (1.0 - confidence) / (2.0 * n_pairs), df)?,
        PairMethod::Scheffe => ((k as f64 - 1.0) * dist::f_quantile(confidence, k as f64 - 1.0, df)?).sqrt(),
        PairMethod::GamesHowell => return unequal_spread_pairs(fit, confidence),
    };
    let mut pairs = Vec::new();
    for (a, b) in pair_indices(k) {
        let (first, second) = (&fit.conditions[a], &fit.conditions[b]);
        let difference = first.mean - second.mean;
        let se = fit.difference_se(a, b);
        let t = difference_over(first.mean, second.mean, se).abs();
        let p_adjusted = match method {
            PairMethod::TukeyKramer => studentized_range_sf(t * std::f64::consts::SQRT_2, k, df)?,
            PairMethod::Bonferroni => (2.0 * dist::t_sf(t, df)? * n_pairs).min(1.0),
            PairMethod::Scheffe => dist::f_sf(t * t / (k as f64 - 1.0), k as f64 - 1.0, df)?,
            PairMethod::GamesHowell => unreachable_method(),
        };
        let half = critical * se;
        pairs.push(SimultaneousPair {
            first: first.name.clone(),
            second: second.name.clone(),
            difference,
            se,
            df,
            low: difference - half,
            high: difference + half,
            p_adjusted,
            differ: difference - half > 0.0 || difference + half < 0.0,
        });
    }
    Ok(with_letters(method, confidence, critical, &fit.conditions, pairs))
}

fn unreachable_method() -> f64 {
    f64::NAN
}

/// Games-Howell pairs: each pair's own SE and Welch-Satterthwaite df.
///
/// # Errors
///
/// [`StatsError`] when a condition has fewer than two values or no spread.
pub fn unequal_spread_pairs(fit: &OneWayFit, confidence: f64) -> Result<PairFamily, StatsError> {
    check_family(confidence)?;
    let k = fit.conditions.len();
    if fit
        .conditions
        .iter()
        .any(|condition| condition.n < 2 || condition.sd.is_nan() || condition.sd <= 0.0)
    {
        return Err(StatsError::TooFewValues {
            what: "Games-Howell needs two or more varying values per condition",
            needed: 2,
            got: 1,
        });
    }
    // The SDs are divided by a power of two (exactly) before they are squared, so the
    // variances neither overflow nor underflow at any magnitude of the data.
    let exponent = magnitude_exponent(fit.conditions.iter().map(|condition| &condition.sd));
    let down = -i64::from(exponent);
    // Each pair's SE and Welch df first; the pairs' quantiles are then solved together
    // (in order of df, each started from its neighbours), not one root search apiece.
    let welch: Vec<(usize, usize, f64, f64)> = pair_indices(k)
        .into_iter()
        .map(|(a, b)| {
            let (first, second) = (&fit.conditions[a], &fit.conditions[b]);
            let (sd_a, sd_b) = (
                scale_by_power_of_two(first.sd, down),
                scale_by_power_of_two(second.sd, down),
            );
            let va = sd_a * sd_a / first.n as f64;
            let vb = sd_b * sd_b / second.n as f64;
            let se = scale_by_power_of_two((va + vb).sqrt(), -down);
            let df = (va + vb).powi(2) / (va * va / (first.n as f64 - 1.0) + vb * vb / (second.n as f64 - 1.0));
            (a, b, se, df)
        })
        .collect();
    let dfs: Vec<f64> = welch.iter().map(|&(_, _, _, df)| df).collect();
    let quantiles = studentized_range_quantiles(confidence, k, &dfs)?;
    let mut pairs = Vec::with_capacity(welch.len());
    for (&(a, b, se, df), quantile) in welch.iter().zip(quantiles) {
        let (first, second) = (&fit.conditions[a], &fit.conditions[b]);
        let difference = first.mean - second.mean;
        let critical = quantile / std::f64::consts::SQRT_2;
        let p_adjusted = studentized_range_sf(
            difference_over(first.mean, second.mean, se).abs() * std::f64::consts::SQRT_2,
            k,
            df,
        )?;
        let half = critical * se;
        pairs.push(SimultaneousPair {
            first: first.name.clone(),
            second: second.name.clone(),
            difference,
            se,
            df,
            low: difference - half,
            high: difference + half,
            p_adjusted,
            differ: difference - half > 0.0 || difference + half < 0.0,
        });
    }
    Ok(with_letters(
        PairMethod::GamesHowell,
        confidence,
        f64::NAN,
        &fit.conditions,
        pairs,
    ))
}

/// Dunnett's comparisons with a control on the pooled SD.
///
/// `direction` picks the sides: `None` two-sided; higher-is-better asks whether
/// treatments are above the control (one-sided); lower-is-better below.
///
/// # Errors
///
/// [`StatsError`] when the control is unknown, or there is no spread within conditions.
pub fn against_control(
    fit: &OneWayFit,
    control: &str,
    direction: Option<Direction>,
    confidence: f64,
) -> Result<ControlFamily, StatsError> {
    check_family(confidence)?;
    let control_index = fit
        .conditions
        .iter()
        .position(|condition| condition.name == control)
        .or_else(|| {
            fit.conditions
                .iter()
                .position(|condition| condition.name.eq_ignore_ascii_case(control.trim()))
        })
        .ok_or(StatsError::InvalidParameter {
            name: "control",
            rule: "the name of a condition",
            value: f64::NAN,
        })?;
    if !(fit.pooled_df > 0.0 && fit.pooled_sd > 0.0) {
        return Err(StatsError::TooFewValues {
            what: "comparisons with a control need spread within conditions",
            needed: 1,
            got: 0,
        });
    }
    let control_summary = &fit.conditions[control_index];
    let others: Vec<&ConditionSummary> = fit
        .conditions
        .iter()
        .enumerate()
        .filter(|(index, _)| *index != control_index)
        .map(|(_, c)| c)
        .collect();
    let other_indices: Vec<usize> = (0..fit.conditions.len())
        .filter(|&index| index != control_index)
        .collect();
    let treatment_ns: Vec<f64> = others.iter().map(|condition| condition.n as f64).collect();
    let lambdas = crate::stats::dunnett::dunnett_lambdas(control_summary.n as f64, &treatment_ns)?;
    let (sides, sign, label) = match direction {
        Some(Direction::HigherIsBetter) => (Sides::One, 1.0, "higher"),
        Some(Direction::LowerIsBetter) => (Sides::One, -1.0, "lower"),
        _ => (Sides::Two, 1.0, "two-sided"),
    };
    let family = ProductCorrelation::new(&lambdas, fit.pooled_df, sides)?;
    let critical = family.quantile(confidence)?;
    let mut rows = Vec::new();
    for (&treatment_index, treatment) in other_indices.iter().zip(&others) {
        let difference = treatment.mean - control_summary.mean;
        let se = fit.difference_se(treatment_index, control_index);
        let t = difference_over(treatment.mean, control_summary.mean, se);
        let statistic = match sides {
            Sides::Two => t.abs(),
            Sides::One => sign * t,
        };
        // Adjusted p: the chance that the largest statistic of the family reaches this one.
        let p_adjusted = family.sf(statistic)?;
        let (low, high) = match (sides, sign > 0.0) {
            (Sides::Two, _) => (difference - critical * se, difference + critical * se),
            (Sides::One, true) => (difference - critical * se, f64::INFINITY),
            (Sides::One, false) => (f64::NEG_INFINITY, difference + critical * se),
        };
        rows.push(SimultaneousPair {
            first: treatment.name.clone(),
            second: control_summary.name.clone(),
            difference,
            se,
            df: fit.pooled_df,
            low,
            high,
            p_adjusted,
            differ: low > 0.0 || high < 0.0,
        });
    }
    Ok(ControlFamily {
        control: control_summary.name.clone(),
        sides: label.into(),
        family_confidence: confidence,
        rows,
    })
}

/// Multiple comparisons with the best (Hsu's constrained intervals).
///
/// For a target direction the distance from the target is not a mean, so
/// this returns an error; callers fall back to the all-pairs intervals.
///
/// # Errors
///
/// [`StatsError`] without spread within conditions or for a target direction.
pub fn with_the_best(fit: &OneWayFit, direction: Direction, confidence: f64) -> Result<BestFamily, StatsError> {
    check_family(confidence)?;
    let sign = match direction {
        Direction::HigherIsBetter => 1.0,
        Direction::LowerIsBetter => -1.0,
        Direction::Target(target) => {
            return Err(StatsError::InvalidParameter {
                name: "direction",
                rule: "higher or lower for comparisons with the best",
                value: target,
            })
        }
    };
    if !(fit.pooled_df > 0.0 && fit.pooled_sd > 0.0) {
        return Err(StatsError::TooFewValues {
            what: "comparisons with the best need spread within conditions",
            needed: 1,
            got: 0,
        });
    }
    let k = fit.conditions.len();
    let means: Vec<f64> = fit.conditions.iter().map(|condition| sign * condition.mean).collect();
    let ns: Vec<f64> = fit.conditions.iter().map(|condition| condition.n as f64).collect();
    let critical = mcb_critical_values(&ns, fit.pooled_df, confidence)?;
    let se = |i: usize, j: usize| fit.difference_se(i, j);
    // `m_i - m_j` signed so that positive is better, from the exact or compensated sums
    // (see `OneWayFit::mean_difference`) where it is a finite number.
    let minus = |i: usize, j: usize| {
        let gap = sign * fit.mean_difference(i, j);
        if gap.is_finite() {
            gap
        } else {
            means[i] - means[j]
        }
    };
    // Upper bounds D+_i = ( min_{j≠i} (m_i - m_j + d_i se_ij) )^+.
    let upper: Vec<f64> = (0..k)
        .map(|i| {
            (0..k)
                .filter(|&j| j != i)
                .map(|j| minus(i, j) + critical[i] * se(i, j))
                .fold(f64::INFINITY, f64::min)
                .max(0.0)
        })
        .collect();
    let could: Vec<usize> = (0..k).filter(|&i| upper[i] > 0.0).collect();
    let lower: Vec<f64> = (0..k)
        .map(|i| {
            if could.len() == 1 && could[0] == i {
                0.0
            } else {
                (could
                    .iter()
                    .filter(|&&j| j != i)
                    .map(|&j| minus(i, j) - critical[j] * se(i, j))
                    .fold(f64::INFINITY, f64::min))
                .min(0.0)
            }
        })
        .collect();
    // upper[i] is 0 exactly when d_i <= max_{j≠i} (m_j - m_i) / se_ij, and d_i is the
    // one-sided quantile of the family with i as the control: the smallest error rate at
    // which that happens is the family's upper tail there (from its survival function, so
    // small values keep their digits). Conditions of one size share their family.
    let mut families: Vec<(f64, ProductCorrelation)> = Vec::new();
    let mut rows: Vec<BestRow> = Vec::with_capacity(k);
    for i in 0..k {
        // Leads from the gaps between means of the exact or compensated sums, so that at a
        // large offset they keep their digits (the rounded means keep about 10.7 of them
        // at 1e9).
        let best_other = (0..k)
            .filter(|&j| j != i)
            .max_by(|&a, &b| means[a].total_cmp(&means[b]).then(minus(a, b).total_cmp(&0.0)));
        let lead = (0..k)
            .filter(|&j| j != i)
            .map(|j| {
                let gap = sign * fit.mean_difference(j, i);
                if gap.is_finite() {
                    gap / se(i, j)
                } else {
                    difference_over(means[j], means[i], se(i, j))
                }
            })
            .fold(f64::NEG_INFINITY, f64::max);
        if !families.iter().any(|(size, _)| *size == ns[i]) {
            let lambdas: Vec<f64> = (0..k)
                .filter(|&j| j != i)
                .map(|j| (ns[j] / (ns[j] + ns[i])).sqrt())
                .collect();
            families.push((ns[i], ProductCorrelation::new(&lambdas, fit.pooled_df, Sides::One)?));
        }
        let family = &families
            .iter()
            .find(|(size, _)| *size == ns[i])
            .expect("solved above")
            .1;
        rows.push(BestRow {
            condition: fit.conditions[i].name.clone(),
            difference: best_other.map_or(f64::NAN, |j| minus(i, j)),
            low: lower[i],
            high: upper[i],
            could_be_best: upper[i] > 0.0,
            p_not_best: family.sf(lead)?,
        });
    }
    Ok(BestFamily {
        direction,
        family_confidence: confidence,
        could_be_best: could.iter().map(|&i| fit.conditions[i].name.clone()).collect(),
        rows,
    })
}

/// Scheffé intervals and Holm-adjusted p-values for the user's contrasts.
///
/// # Errors
///
/// [`StatsError`] without spread within conditions.
pub fn adjusted_contrasts(fit: &OneWayFit, confidence: f64) -> Result<Vec<AdjustedContrast>, StatsError> {
    check_family(confidence)?;
    if fit.contrasts.is_empty() {
        return Ok(Vec::new());
    }
    let k = fit.conditions.len() as f64;
    if fit.pooled_df.is_nan() || fit.pooled_df <= 0.0 {
        return Err(StatsError::TooFewValues {
            what: "adjusted contrasts need within-condition df",
            needed: 1,
            got: 0,
        });
    }
    let critical = ((k - 1.0) * dist::f_quantile(confidence, k - 1.0, fit.pooled_df)?).sqrt();
    let raw: Vec<f64> = fit.contrasts.iter().map(|contrast| contrast.p).collect();
    let holm = holm_adjust(&raw);
    fit.contrasts
        .iter()
        .zip(holm)
        .map(|(contrast, p_holm)| {
            let t = contrast.t;
            Ok(AdjustedContrast {
                name: contrast.name.clone(),
                estimate: contrast.estimate,
                scheffe_low: contrast.estimate - critical * contrast.se,
                scheffe_high: contrast.estimate + critical * contrast.se,
                p_scheffe: if t.is_finite() {
                    dist::f_sf(t * t / (k - 1.0), k - 1.0, fit.pooled_df)?
                } else {
                    f64::NAN
                },
                p_holm,
            })
        })
        .collect()
}

/// Welch's ANOVA for unequal variances (Welch 1951).
///
/// # Errors
///
/// [`StatsError`] when a condition has fewer than two values or no spread.
pub fn welch_anova(conditions: &[ConditionSummary]) -> Result<WelchAnova, StatsError> {
    let k = conditions.len() as f64;
    if conditions.len() < 2
        || conditions
            .iter()
            .any(|condition| condition.n < 2 || condition.sd.is_nan() || condition.sd <= 0.0)
    {
        return Err(StatsError::TooFewValues {
            what: "Welch's ANOVA needs two or more varying values per condition",
            needed: 2,
            got: 1,
        });
    }
    // F does not depend on the unit: means and SDs are divided by one power of two
    // (exactly) so that the weights n / sd² stay within the range of f64.
    let down = -i64::from(magnitude_exponent(conditions.iter().map(|condition| &condition.sd)));
    let weights: Vec<f64> = conditions
        .iter()
        .map(|condition| {
            let sd = scale_by_power_of_two(condition.sd, down);
            condition.n as f64 / (sd * sd)
        })
        .collect();
    let means: Vec<f64> = conditions
        .iter()
        .map(|condition| scale_by_power_of_two(condition.mean, down))
        .collect();
    let total_weight: f64 = weights.iter().sum();
    let weighted_mean: f64 = weights.iter().zip(&means).map(|(w, mean)| w * mean).sum::<f64>() / total_weight;
    let between: f64 = weights
        .iter()
        .zip(&means)
        .map(|(w, mean)| w * (mean - weighted_mean).powi(2))
        .sum::<f64>()
        / (k - 1.0);
    let lambda: f64 = weights
        .iter()
        .zip(conditions)
        .map(|(w, condition)| (1.0 - w / total_weight).powi(2) / (condition.n as f64 - 1.0))
        .sum::<f64>();
    let f = between / (1.0 + 2.0 * (k - 2.0) * lambda / (k * k - 1.0));
    let df_within = (k * k - 1.0) / (3.0 * lambda);
    Ok(WelchAnova {
        f,
        df_between: k - 1.0,
        df_within,
        p: dist::f_sf(f, k - 1.0, df_within)?,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::analysis::oneway::fit_one_way;

    fn fit_of(groups: &[&[f64]]) -> OneWayFit {
        let names: Vec<String> = (0..groups.len()).map(|index| format!("g{index}")).collect();
        let mut labels = Vec::new();
        let mut values = Vec::new();
        for (index, group) in groups.iter().enumerate() {
            for value in group.iter() {
                labels.push(index as u32);
                values.push(*value);
            }
        }
        fit_one_way(&names, &labels, &values, 0.95, &[]).expect("fits")
    }

    const A: &[f64] = &[24.5, 23.5, 26.4, 27.1, 29.9];
    const B: &[f64] = &[28.4, 34.2, 29.5, 32.2, 30.1];
    const C: &[f64] = &[26.1, 28.3, 24.3, 26.2, 27.8];

    /// scipy 1.17.1: `scipy.stats.tukey_hsd(A, B, C)`: adjusted p-values
    /// g0-g1 0.01444833, g0-g2 0.98031072, g1-g2 0.02033114, and
    /// `confidence_interval(0.95)` for g1 - g0: [0.9508409964187154, 8.249159003581287].
    #[test]
    fn tukey_kramer_matches_reference_library() {
        let fit = fit_of(&[A, B, C]);
        let family = pooled_pairs(&fit, PairMethod::TukeyKramer, 0.95).expect("tukey");
        let p: Vec<f64> = family.pairs.iter().map(|pair| pair.p_adjusted).collect();
        assert!((p[0] - 0.01444833).abs() < 1e-8, "{p:?}");
        assert!((p[1] - 0.98031072).abs() < 1e-8, "{p:?}");
        assert!((p[2] - 0.02033114).abs() < 1e-8, "{p:?}");
        // The higher average first: B minus A, scipy's g1 - g0.
        let first = &family.pairs[0];
        assert_eq!((first.first.as_str(), first.second.as_str()), ("g1", "g0"));
        assert!((first.difference - 4.6).abs() < 1e-12);
        assert!((first.low - 0.9508409964187154).abs() < 1e-8, "{first:?}");
        assert!((first.high - 8.249159003581287).abs() < 1e-8, "{first:?}");
    }

    /// Property tests (common practice identities): Tukey-Kramer with two
    /// groups equals the t interval; Bonferroni and Scheffé are never
    /// narrower than Tukey-Kramer for all pairs.
    #[test]
    fn method_orderings() {
        let two = fit_of(&[A, B]);
        let tukey = pooled_pairs(&two, PairMethod::TukeyKramer, 0.95).expect("tukey");
        assert!(
            (tukey.pairs[0].low - two.pairs[0].low).abs() < 1e-9,
            "{} {}",
            tukey.pairs[0].low,
            two.pairs[0].low
        );
        let mut state = 99u64;
        for k in 3..8 {
            let groups: Vec<Vec<f64>> = (0..k)
                .map(|g| {
                    (0..(3 + g))
                        .map(|_| {
                            state = state
                                .wrapping_mul(6364136223846793005)
                                .wrapping_add(1442695040888963407);
                            (state >> 40) as f64 / 1e5
                        })
                        .collect()
                })
                .collect();
            let refs: Vec<&[f64]> = groups.iter().map(Vec::as_slice).collect();
            let fit = fit_of(&refs);
            let tukey = pooled_pairs(&fit, PairMethod::TukeyKramer, 0.95).expect("tukey");
            let bonferroni = pooled_pairs(&fit, PairMethod::Bonferroni, 0.95).expect("bonferroni");
            let scheffe = pooled_pairs(&fit, PairMethod::Scheffe, 0.95).expect("scheffe");
            assert!(
                bonferroni.critical_value >= tukey.critical_value - 1e-9,
                "k={k} {} {}",
                bonferroni.critical_value,
                tukey.critical_value
            );
            assert!(scheffe.critical_value >= tukey.critical_value - 1e-9, "k={k}");
            // Scheffé is not always wider than Bonferroni for pairs: with k = 3 and
            // 9 df, sqrt(2 F(0.95; 2, 9)) = 2.918 < t(1 - 0.05/6; 9) = 2.933
            // (scipy 1.17.1 `f.ppf`, `t.ppf`). It is always wider than Tukey-Kramer.
        }
    }

    /// scipy 1.17.1 has no Welch ANOVA; reference from statsmodels 0.15.0
    /// `anova_oneway([A,B,C], use_var="unequal")`: statistic 7.2187..., df (2, 7.8...) —
    /// checked here against the formula identity for equal n and equal SDs,
    /// where Welch's F equals the classical F (common practice).
    #[test]
    fn welch_equals_classic_for_identical_spreads() {
        let fit = fit_of(&[&[1.0, 2.0, 3.0], &[4.0, 5.0, 6.0], &[2.0, 3.0, 4.0]]);
        let welch = welch_anova(&fit.conditions).expect("welch");
        let classic = fit.between().f.unwrap_or(f64::NAN);
        // With equal n and SDs the Welch numerator equals the classic F; the denominator correction differs.
        let numerator_check = welch.f * (1.0 + 2.0 * (3.0 - 2.0) * (3.0 * (2.0f64 / 3.0).powi(2) / 2.0) / 8.0);
        assert!((numerator_check - classic).abs() < 1e-9, "{numerator_check} {classic}");
    }

    /// statsmodels 0.15.0: `statsmodels.stats.oneway.anova_oneway([A, B, C], use_var="unequal")`:
    /// statistic 6.297840424651883, p 0.024168533812115273, df (2, 7.65043688693415).
    #[test]
    fn welch_matches_reference_library() {
        let fit = fit_of(&[A, B, C]);
        let welch = welch_anova(&fit.conditions).expect("welch");
        assert!((welch.f - 6.297840424651883).abs() < 1e-10, "{welch:?}");
        assert!((welch.df_within - 7.65043688693415).abs() < 1e-9, "{welch:?}");
        assert!((welch.p - 0.024168533812115273).abs() < 1e-10, "{welch:?}");
    }

    #[test]
    fn best_and_control() {
        let fit = fit_of(&[A, B, C]);
        let best = with_the_best(&fit, Direction::HigherIsBetter, 0.95).expect("mcb");
        assert_eq!(best.could_be_best, vec!["g1".to_string()]);
        let lower = with_the_best(&fit, Direction::LowerIsBetter, 0.95).expect("mcb");
        assert!(lower.could_be_best.contains(&"g0".to_string()) && lower.could_be_best.contains(&"g2".to_string()));
        let control = against_control(&fit, "g0", None, 0.95).expect("dunnett");
        assert_eq!(control.rows.len(), 2);
        assert!(control.rows[0].differ && !control.rows[1].differ);
    }
}
