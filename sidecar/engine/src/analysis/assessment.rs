//! Everything an engineer needs before acting on a one-way trial: the
//! simultaneous comparisons, the checks of the model's assumptions, the
//! analyses that do without them, and which analysis to lead with.
//!
//! Which analysis leads (thresholds also shown in every results workbook):
//! - clearly non-normal residuals with small groups — normality p below
//!   [`NON_NORMAL_P`] and the smallest condition under [`SMALL_GROUP_N`]
//!   values — lead with the rank-based analysis (Kruskal-Wallis, Dunn/Holm);
//! - otherwise unequal spreads — Brown-Forsythe p below [`UNEQUAL_SPREAD_P`]
//!   and largest SD over smallest above [`UNEQUAL_SPREAD_RATIO`] — lead with
//!   Welch's ANOVA and Games-Howell pairs;
//! - otherwise the one-way model with Tukey-Kramer pairs.

use serde::Serialize;

use crate::analysis::comparisons::{
    adjusted_contrasts, against_control, pooled_pairs, unequal_spread_pairs, welch_anova, with_the_best,
    AdjustedContrast, BestFamily, ControlFamily, PairFamily, PairMethod, WelchAnova,
};
use crate::analysis::oneway::OneWayFit;
use crate::options::Direction;
use crate::stats::accumulate::{centre_values, compensated_sum};
use crate::stats::normality::check_normality_thinned;
use crate::stats::ranks::{rank_analysis, RankOutcome};
use crate::stats::spread::{bartlett, levene, sd_ratio, Centre};
use crate::stats::{dist, StatsError};

/// Normality p-value below which residuals count as clearly non-normal.
pub const NON_NORMAL_P: f64 = 0.01;
/// Groups smaller than this are "small" for the normality rule.
pub const SMALL_GROUP_N: u64 = 15;
/// Brown-Forsythe p-value below which spreads count as unequal...
pub const UNEQUAL_SPREAD_P: f64 = 0.05;
/// ...when the largest SD is also more than this many times the smallest.
pub const UNEQUAL_SPREAD_RATIO: f64 = 1.5;
/// Family error rate used to flag outliers (Bonferroni over all values).
pub const OUTLIER_FAMILY_ALPHA: f64 = 0.05;
/// Samples at least this large run the rank-based analysis and model checks on a second
/// thread beside the comparisons.
const PARALLEL_MIN_VALUES: u64 = 50_000;
/// With at least this many pairs of conditions (64 conditions and more) the Games-Howell
/// pairs are computed on a second thread beside the pooled families.
const PARALLEL_MIN_PAIRS: usize = 2_000;
/// Points kept for residual charts.
pub const MAX_CHART_POINTS: usize = 2_000;

/// Which analysis leads the summary.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum LeadAnalysis {
    /// One-way ANOVA with Tukey-Kramer pairs.
    OneWay,
    /// Welch's ANOVA with Games-Howell pairs.
    UnequalSpreads,
    /// Kruskal-Wallis with Dunn's pairs (Holm).
    RankBased,
}

/// A spread test's result.
#[derive(Debug, Clone, Serialize)]
pub struct SpreadTest {
    /// Test name.
    pub test: String,
    /// Statistic.
    pub statistic: f64,
    /// Degrees of freedom (numerator, denominator if any).
    pub df: Vec<f64>,
    /// p-value.
    pub p: f64,
}

/// The normality check on the residuals.
#[derive(Debug, Clone, Serialize)]
pub struct NormalityResult {
    /// Which test was used.
    pub test: String,
    /// Its statistic (W or A²*).
    pub statistic: f64,
    /// p-value.
    pub p: f64,
    /// Number of residuals.
    pub n: usize,
}

/// A value flagged as a possible outlier.
#[derive(Debug, Clone, Serialize)]
pub struct Outlier {
    /// Index of the record (row of the long form) it came from.
    pub record: usize,
    /// Its condition.
    pub condition: String,
    /// The value.
    pub value: f64,
    /// Externally studentized residual.
    pub studentized: f64,
    /// Bonferroni-adjusted two-sided p over all values.
    pub p_bonferroni: f64,
    /// The sheet cell, filled in by the service.
    pub cell: Option<String>,
}

/// The checks of the one-way model.
#[derive(Debug, Clone, Serialize)]
pub struct ModelChecks {
    /// Levene's test (deviations from condition means).
    pub levene: Option<SpreadTest>,
    /// Brown-Forsythe's spread test (deviations from condition medians), not the
    /// Brown-Forsythe test for means.
    pub brown_forsythe_spread: Option<SpreadTest>,
    /// Bartlett's test.
    pub bartlett: Option<SpreadTest>,
    /// Largest over smallest condition SD.
    pub sd_ratio: Option<f64>,
    /// Normality of residuals.
    pub normality: Option<NormalityResult>,
    /// Possible outliers.
    pub outliers: Vec<Outlier>,
    /// Plain-language readings.
    pub readings: Vec<String>,
    /// (fitted, residual) pairs for a chart, thinned to at most MAX_CHART_POINTS.
    pub residual_points: Vec<(f64, f64)>,
    /// (normal quantile, residual) pairs for a probability plot, thinned likewise.
    pub probability_points: Vec<(f64, f64)>,
}

/// The rank-based analysis.
#[derive(Debug, Clone, Serialize)]
pub struct RankSummary {
    /// Kruskal-Wallis H (tie-corrected).
    pub h: f64,
    /// Degrees of freedom.
    pub df: f64,
    /// p-value (chi-square).
    pub p: f64,
    /// Mean rank per condition.
    pub mean_ranks: Vec<(String, f64)>,
    /// Dunn's pairs: first, second, z, raw p, Holm p.
    pub pairs: Vec<RankPair>,
}

/// One of Dunn's pairs.
#[derive(Debug, Clone, Serialize)]
pub struct RankPair {
    /// First condition.
    pub first: String,
    /// Second condition.
    pub second: String,
    /// z statistic.
    pub z: f64,
    /// Unadjusted p.
    pub p: f64,
    /// Holm-adjusted p.
    pub p_holm: f64,
}

/// An interval for an effect size.
#[derive(Debug, Clone, Serialize)]
pub struct EffectInterval {
    /// Point estimate.
    pub estimate: f64,
    /// Lower end.
    pub low: f64,
    /// Upper end.
    pub high: f64,
}

/// Everything beyond the basic fit.
#[derive(Debug, Clone, Serialize)]
pub struct Assessment {
    /// Family confidence of the simultaneous intervals.
    pub family_confidence: f64,
    /// Why that family confidence.
    pub family_confidence_reason: String,
    /// The analysis the summary leads with.
    pub lead: LeadAnalysis,
    /// One sentence saying why.
    pub lead_reason: String,
    /// Tukey-Kramer pairs.
    pub tukey_kramer: Option<PairFamily>,
    /// Bonferroni pairs.
    pub bonferroni: Option<PairFamily>,
    /// Scheffé pairs.
    pub scheffe: Option<PairFamily>,
    /// Games-Howell pairs.
    pub games_howell: Option<PairFamily>,
    /// Welch's ANOVA.
    pub welch: Option<WelchAnova>,
    /// The rank-based analysis.
    pub rank_based: Option<RankSummary>,
    /// Comparisons with the control, when one is set.
    pub control: Option<ControlFamily>,
    /// Comparisons with the best, when a direction is set.
    pub best: Option<BestFamily>,
    /// The user's contrasts, adjusted.
    pub contrasts: Vec<AdjustedContrast>,
    /// Eta squared with its interval (from the noncentral F).
    pub eta_squared: Option<EffectInterval>,
    /// Checks of the model.
    pub checks: ModelChecks,
    /// Parts that could not be computed, with why.
    pub notes: Vec<String>,
}

/// What the assessment needs beyond the fit.
#[derive(Debug, Clone, Default)]
pub struct AssessmentOptions {
    /// Family confidence (default: the fit's confidence).
    pub family_confidence: Option<f64>,
    /// Which way is better.
    pub direction: Option<Direction>,
    /// The control condition.
    pub control: Option<String>,
}

fn note<T>(notes: &mut Vec<String>, what: &str, outcome: Result<T, StatsError>) -> Option<T> {
    match outcome {
        Ok(value) => Some(value),
        Err(error) => {
            notes.push(format!("{what}: {error}"));
            None
        }
    }
}

/// Interval for eta squared by inverting the noncentral F in its
/// noncentrality (the usual confidence-interval inversion; Steiger 2004,
/// Psychological Methods 9): eta² = λ / (λ + N).
fn eta_squared_interval(fit: &OneWayFit, confidence: f64) -> Result<EffectInterval, StatsError> {
    let f = fit.between().f.unwrap_or(f64::NAN);
    let (d1, d2) = (fit.between().df, fit.pooled_df);
    if !f.is_finite() || d2 <= 0.0 {
        return Err(StatsError::TooFewValues {
            what: "an interval for eta² needs a finite F",
            needed: 1,
            got: 0,
        });
    }
    let n = fit.n_total as f64;
    let alpha = 1.0 - confidence;
    // Find λ with P(F' <= f; λ) = target; the cdf falls as λ grows.
    let solve = |target: f64| -> Result<f64, StatsError> {
        let at_zero = dist::noncentral_f_cdf(f, d1, d2, 0.0)?;
        if at_zero <= target {
            return Ok(0.0);
        }
        let mut high = (f * d1).max(1.0);
        while dist::noncentral_f_cdf(f, d1, d2, high)? > target {
            high *= 2.0;
            if high > 1e9 {
                return Ok(high);
            }
        }
        let mut low = 0.0;
        for _ in 0..200 {
            let middle = 0.5 * (low + high);
            if dist::noncentral_f_cdf(f, d1, d2, middle)? > target {
                low = middle;
            } else {
                high = middle;
            }
            if high - low <= 1e-10 * high.max(1.0) {
                break;
            }
        }
        Ok(0.5 * (low + high))
    };
    let lambda_low = solve(1.0 - alpha / 2.0)?;
    let lambda_high = solve(alpha / 2.0)?;
    Ok(EffectInterval {
        estimate: fit.eta_squared,
        low: lambda_low / (lambda_low + n),
        high: lambda_high / (lambda_high + n),
    })
}

fn thin<T: Copy>(points: &[T]) -> Vec<T> {
    if points.len() <= MAX_CHART_POINTS {
        return points.to_vec();
    }
    let step = points.len() as f64 / MAX_CHART_POINTS as f64;
    (0..MAX_CHART_POINTS)
        .map(|index| points[(index as f64 * step) as usize])
        .collect()
}

/// Runs every comparison and check.
///
/// `group_values[i]` holds condition i's values in record order and
/// `group_records[i]` the record index of each, so outliers can be placed.
pub fn assess(
    fit: &OneWayFit,
    group_values: &[Vec<f64>],
    group_records: &[Vec<usize>],
    options: &AssessmentOptions,
) -> Assessment {
    let mut notes = Vec::new();
    let family_confidence = options.family_confidence.unwrap_or(fit.confidence);
    let family_confidence_reason = if options.family_confidence.is_some() {
        format!("{}% for each family of intervals, as set.", family_confidence * 100.0)
    } else {
        format!(
            "{}% for each family, the same as the individual confidence, so that the chance of any false difference among all the pairs together is at most {}% (common practice).",
            family_confidence * 100.0,
            ((1.0 - family_confidence) * 1000.0).round() / 10.0
        )
    };
    let comparisons = |notes: &mut Vec<String>| {
        // The two families that integrate the studentized range for every pair: with
        // many pairs Games-Howell runs on a second thread beside Tukey-Kramer (the same
        // figures either way; notes keep their order).
        let pooled = || {
            (
                pooled_pairs(fit, PairMethod::TukeyKramer, family_confidence),
                pooled_pairs(fit, PairMethod::Bonferroni, family_confidence),
                pooled_pairs(fit, PairMethod::Scheffe, family_confidence),
            )
        };
        let k = fit.conditions.len();
        let ((tukey_kramer, bonferroni, scheffe), games_howell) = if k * k.saturating_sub(1) / 2 >= PARALLEL_MIN_PAIRS {
            std::thread::scope(|scope| {
                let unequal = scope.spawn(|| unequal_spread_pairs(fit, family_confidence));
                let pooled = pooled();
                let unequal = unequal
                    .join()
                    .unwrap_or_else(|payload| std::panic::resume_unwind(payload));
                (pooled, unequal)
            })
        } else {
            (pooled(), unequal_spread_pairs(fit, family_confidence))
        };
        let tukey_kramer = note(notes, "Tukey-Kramer", tukey_kramer);
        let bonferroni = note(notes, "Bonferroni", bonferroni);
        let scheffe = note(notes, "Scheffé", scheffe);
        let games_howell = note(notes, "Games-Howell", games_howell);
        let welch = note(notes, "Welch's ANOVA", welch_anova(&fit.conditions));
        let control = options.control.as_ref().and_then(|control| {
            note(
                notes,
                "comparisons with the control",
                against_control(fit, control, options.direction, family_confidence),
            )
        });
        let best = match options.direction {
            Some(direction @ (Direction::HigherIsBetter | Direction::LowerIsBetter)) => note(
                notes,
                "comparisons with the best",
                with_the_best(fit, direction, family_confidence),
            ),
            _ => None,
        };
        let contrasts =
            note(notes, "adjusted contrasts", adjusted_contrasts(fit, family_confidence)).unwrap_or_default();
        let eta_squared = note(notes, "interval for eta²", eta_squared_interval(fit, fit.confidence));
        (
            tukey_kramer,
            bonferroni,
            scheffe,
            games_howell,
            welch,
            control,
            best,
            contrasts,
            eta_squared,
        )
    };
    // The rank-based analysis and the model checks (sorts of all values) run beside the
    // comparisons on a second thread when the sample is large; notes keep their order.
    let (comparison_results, (rank_based, checks, later_notes)) = if fit.n_total >= PARALLEL_MIN_VALUES {
        std::thread::scope(|scope| {
            let checks = scope.spawn(|| ranks_and_checks(fit, group_values, group_records));
            let results = comparisons(&mut notes);
            let checked = checks
                .join()
                .unwrap_or_else(|payload| std::panic::resume_unwind(payload));
            (results, checked)
        })
    } else {
        let results = comparisons(&mut notes);
        (results, ranks_and_checks(fit, group_values, group_records))
    };
    notes.extend(later_notes);
    let (tukey_kramer, bonferroni, scheffe, games_howell, welch, control, best, contrasts, eta_squared) =
        comparison_results;

    // Which analysis leads.
    let smallest_n = fit.conditions.iter().map(|condition| condition.n).min().unwrap_or(0);
    let non_normal = checks
        .normality
        .as_ref()
        .is_some_and(|normality| normality.p < NON_NORMAL_P);
    let unequal = checks
        .brown_forsythe_spread
        .as_ref()
        .is_some_and(|test| test.p < UNEQUAL_SPREAD_P)
        && checks.sd_ratio.is_some_and(|ratio| ratio > UNEQUAL_SPREAD_RATIO);
    let (lead, lead_reason) = if non_normal && smallest_n < SMALL_GROUP_N && rank_based.is_some() {
        (
            LeadAnalysis::RankBased,
            format!(
                "The residuals are clearly not normal (p = {:.3}) and the smallest condition has only {smallest_n} values, so the rank-based analysis, which does not assume normal data, leads.",
                checks.normality.as_ref().map_or(f64::NAN, |normality| normality.p)
            ),
        )
    } else if unequal && welch.is_some() && games_howell.is_some() {
        (
            LeadAnalysis::UnequalSpreads,
            format!(
                "The conditions' spreads differ (Brown-Forsythe p = {:.3}, largest SD {:.2} times the smallest), so Welch's ANOVA and Games-Howell pairs, which allow unequal spreads, lead.",
                checks.brown_forsythe_spread.as_ref().map_or(f64::NAN, |test| test.p),
                checks.sd_ratio.unwrap_or(f64::NAN)
            ),
        )
    } else {
        (
            LeadAnalysis::OneWay,
            one_way_lead_reason(&checks, smallest_n, non_normal, unequal),
        )
    };
    Assessment {
        family_confidence,
        family_confidence_reason,
        lead,
        lead_reason,
        tukey_kramer,
        bonferroni,
        scheffe,
        games_howell,
        welch,
        rank_based,
        control,
        best,
        contrasts,
        eta_squared,
        checks,
        notes,
    }
}

/// The rank-based analysis and the model checks, with their notes.
fn ranks_and_checks(
    fit: &OneWayFit,
    group_values: &[Vec<f64>],
    group_records: &[Vec<usize>],
) -> (Option<RankSummary>, ModelChecks, Vec<String>) {
    let mut notes = Vec::new();
    let slices: Vec<&[f64]> = group_values.iter().map(Vec::as_slice).collect();
    // For a large sample the rank analysis (a sort of all values) runs on a thread of its
    // own beside the model checks (another sort, of the residuals).
    let (ranked, checks, mut check_notes) = if fit.n_total >= PARALLEL_MIN_VALUES {
        std::thread::scope(|scope| {
            let ranked = scope.spawn(|| rank_analysis(&slices));
            let mut check_notes = Vec::new();
            let checks = model_checks(fit, group_values, group_records, &slices, &mut check_notes);
            let ranked = ranked
                .join()
                .unwrap_or_else(|payload| std::panic::resume_unwind(payload));
            (ranked, checks, check_notes)
        })
    } else {
        let ranked = rank_analysis(&slices);
        let mut check_notes = Vec::new();
        let checks = model_checks(fit, group_values, group_records, &slices, &mut check_notes);
        (ranked, checks, check_notes)
    };
    let rank_based = match ranked {
        Ok(RankOutcome::Tested(analysis)) => {
            let names: Vec<String> = fit.conditions.iter().map(|condition| condition.name.clone()).collect();
            Some(RankSummary {
                h: analysis.kruskal_wallis.h,
                df: analysis.kruskal_wallis.df,
                p: analysis.kruskal_wallis.p_value,
                mean_ranks: names
                    .iter()
                    .cloned()
                    .zip(analysis.kruskal_wallis.mean_ranks.iter().copied())
                    .collect(),
                pairs: analysis
                    .comparisons
                    .iter()
                    .map(|pair| {
                        // The condition ranked higher first, as every pair is given.
                        let (first, second, z) = if pair.z < 0.0 {
                            (pair.group_b, pair.group_a, -pair.z)
                        } else {
                            (pair.group_a, pair.group_b, pair.z)
                        };
                        RankPair {
                            first: names.get(first).cloned().unwrap_or_default(),
                            second: names.get(second).cloned().unwrap_or_default(),
                            z,
                            p: pair.p_value,
                            p_holm: pair.p_holm,
                        }
                    })
                    .collect(),
            })
        }
        Ok(RankOutcome::AllValuesEqual { n_values }) => {
            notes.push(format!(
                "rank-based analysis: all {n_values} values are equal, so ranks cannot tell conditions apart"
            ));
            None
        }
        Err(error) => {
            notes.push(format!("rank-based analysis: {error}"));
            None
        }
    };

    notes.append(&mut check_notes);
    (rank_based, checks, notes)
}

/// Values of each condition, one list per condition.
type Groups = Vec<Vec<f64>>;

/// The values of each condition less one common centre, the typed decimals differenced
/// exactly ([`centre_values`]), and the residuals about each condition's mean formed from
/// those deviations. Every model check is unchanged by a shift of all values, and at an
/// offset such as 1e9 the doubles of the values are 1e-7 from the typed decimals, so
/// spreads and residuals of 1e-2 taken from them keep only five digits; from the
/// deviations they keep every digit. `None` when a deviation leaves the range of the
/// arithmetic (values near the largest double of both signs): the values are used as
/// they are.
fn centred_groups(group_values: &[Vec<f64>]) -> Option<(Groups, Groups)> {
    let all: Vec<f64> = group_values.iter().flatten().copied().collect();
    let centred = centre_values(&all);
    if centred.deviations.iter().any(|deviation| !deviation.is_finite()) {
        return None;
    }
    let mut rest = centred.deviations.as_slice();
    let mut deviations = Vec::with_capacity(group_values.len());
    let mut residuals = Vec::with_capacity(group_values.len());
    for values in group_values {
        let (own, after) = rest.split_at(values.len());
        rest = after;
        let mean = compensated_sum(own.iter().copied()) / own.len().max(1) as f64;
        residuals.push(own.iter().map(|deviation| deviation - mean).collect());
        deviations.push(own.to_vec());
    }
    Some((deviations, residuals))
}

fn model_checks(
    fit: &OneWayFit,
    group_values: &[Vec<f64>],
    group_records: &[Vec<usize>],
    slices: &[&[f64]],
    notes: &mut Vec<String>,
) -> ModelChecks {
    let (deviations, centred_residuals) = centred_groups(group_values).unzip();
    let centred_slices: Option<Vec<&[f64]>> = deviations
        .as_ref()
        .map(|deviations| deviations.iter().map(Vec::as_slice).collect());
    let slices: &[&[f64]] = centred_slices.as_deref().unwrap_or(slices);
    // Residuals about each condition's mean.
    let group_residuals: Vec<Vec<f64>> = match centred_residuals {
        Some(residuals) => residuals,
        None => fit
            .conditions
            .iter()
            .zip(group_values)
            .map(|(condition, values)| values.iter().map(|value| value - condition.mean).collect())
            .collect(),
    };
    let spread_test = |name: &str, test: crate::stats::spread::LeveneTest| SpreadTest {
        test: name.to_string(),
        statistic: test.statistic,
        df: vec![test.df_between, test.df_within],
        p: test.p_value,
    };
    let levene_test = note(notes, "Levene's test", levene(slices, Centre::Mean))
        .map(|test| spread_test("Levene (deviations from means)", test));
    let brown_forsythe_spread = note(notes, "Brown-Forsythe spread test", levene(slices, Centre::Median))
        .map(|test| spread_test("Brown-Forsythe spread test (deviations from medians)", test));
    let bartlett_test = note(notes, "Bartlett's test", bartlett(slices)).map(|test| SpreadTest {
        test: "Bartlett".into(),
        statistic: test.statistic,
        df: vec![test.df],
        p: test.p_value,
    });
    let ratio = note(notes, "SD ratio", sd_ratio(slices)).map(|ratio| ratio.ratio);

    let mut residuals = Vec::with_capacity(fit.n_total as usize);
    let mut fitted_residual = Vec::with_capacity(fit.n_total as usize);
    for (condition, own) in fit.conditions.iter().zip(&group_residuals) {
        for &residual in own {
            residuals.push(residual);
            fitted_residual.push((condition.mean, residual));
        }
    }
    let mut probability_points = Vec::new();
    let normality = match check_normality_thinned(&residuals, MAX_CHART_POINTS) {
        Ok(check) => {
            probability_points = thin(
                &check
                    .plot_points
                    .iter()
                    .map(|point| (point.normal_quantile, point.value))
                    .collect::<Vec<_>>(),
            );
            Some(match &check.shapiro_wilk {
                Some(shapiro) => NormalityResult {
                    test: "Shapiro-Wilk (Royston)".into(),
                    statistic: shapiro.w,
                    p: shapiro.p_value,
                    n: shapiro.n,
                },
                None => NormalityResult {
                    test: "Anderson-Darling (small-sample corrected)".into(),
                    statistic: check.anderson_darling.a_squared_adjusted,
                    p: check.anderson_darling.p_value,
                    n: check.anderson_darling.n,
                },
            })
        }
        Err(error) => {
            notes.push(format!("normality of residuals: {error}"));
            None
        }
    };

    // Externally studentized residuals with a Bonferroni bound over all values.
    let mut outliers = Vec::new();
    let n_total = fit.n_total as f64;
    let df_external = fit.pooled_df - 1.0;
    if df_external > 0.0 && fit.pooled_sd > 0.0 {
        for (((condition, values), own), records) in fit
            .conditions
            .iter()
            .zip(group_values)
            .zip(&group_residuals)
            .zip(group_records)
        {
            let leverage = 1.0 / condition.n as f64;
            if leverage >= 1.0 {
                continue;
            }
            for ((value, residual), &record) in values.iter().zip(own).zip(records) {
                let internal = residual / (fit.pooled_sd * (1.0 - leverage).sqrt());
                let denominator = fit.pooled_df - internal * internal;
                if denominator <= 0.0 {
                    continue;
                }
                let external = internal * (df_external / denominator).sqrt();
                if external.abs() < 3.0 {
                    continue;
                }
                let p = dist::t_sf(external.abs(), df_external)
                    .map(|tail| (2.0 * tail * n_total).min(1.0))
                    .unwrap_or(f64::NAN);
                if p < OUTLIER_FAMILY_ALPHA {
                    outliers.push(Outlier {
                        record,
                        condition: condition.name.clone(),
                        value: *value,
                        studentized: external,
                        p_bonferroni: p,
                        cell: None,
                    });
                }
            }
        }
        outliers.sort_by(|a, b| b.studentized.abs().total_cmp(&a.studentized.abs()));
        outliers.truncate(100);
    }

    let mut readings = Vec::new();
    if let (Some(test), Some(ratio)) = (&brown_forsythe_spread, ratio) {
        readings.push(if test.p < UNEQUAL_SPREAD_P {
            format!("Spreads: the conditions' spreads differ (Brown-Forsythe p = {:.3}; largest SD is {:.2} times the smallest).", test.p, ratio)
        } else {
            format!("Spreads: no clear difference in spread between conditions (Brown-Forsythe p = {:.3}; largest SD is {:.2} times the smallest).", test.p, ratio)
        });
    }
    if let Some(normality) = &normality {
        readings.push(if normality.p < NON_NORMAL_P {
            format!("Normality: the residuals are clearly not normal ({} {}); see the probability plot.", normality.test, crate::analysis::verdict::p_equals(normality.p))
        } else if normality.p < 0.05 {
            format!("Normality: the residuals depart a little from normal ({} {}); with moderate groups the ANOVA is robust to this.", normality.test, crate::analysis::verdict::p_equals(normality.p))
        } else {
            format!("Normality: no sign that the residuals are not normal ({} {}).", normality.test, crate::analysis::verdict::p_equals(normality.p))
        });
    }
    readings.push(if outliers.is_empty() {
        "Outliers: no value stands out beyond what chance allows (externally studentized residuals, Bonferroni bound at 5%).".into()
    } else {
        format!("Outliers: {} beyond what chance allows; check {} at {} before trusting the comparison.", if outliers.len() == 1 { "1 value stands out".to_string() } else { format!("{} values stand out", outliers.len()) }, if outliers.len() == 1 { "it" } else { "them" }, if outliers.len() == 1 { "its cell" } else { "their cells" })
    });
    ModelChecks {
        levene: levene_test,
        brown_forsythe_spread,
        bartlett: bartlett_test,
        sd_ratio: ratio,
        normality,
        outliers,
        readings,
        residual_points: thin(&fitted_residual),
        probability_points,
    }
}

/// Why the one-way ANOVA leads, said as the checks found it: the reason never calls
/// the residuals normal when the normality check says they are not (the ANOVA then
/// leads because every condition has enough values for its average to be close to
/// normal, common practice), nor the spreads alike when the spread test says they
/// differ.
fn one_way_lead_reason(checks: &ModelChecks, smallest_n: u64, non_normal: bool, unequal: bool) -> String {
    const LEADS: &str = "the one-way ANOVA with Tukey-Kramer pairs leads";
    let spreads_differ = checks
        .brown_forsythe_spread
        .as_ref()
        .is_some_and(|test| test.p < UNEQUAL_SPREAD_P);
    let spreads = if unequal {
        "The conditions' spreads differ, but the analyses that allow for it could not be made".to_string()
    } else if spreads_differ {
        format!(
            "The conditions' spreads differ only a little (largest SD at most {UNEQUAL_SPREAD_RATIO} times the smallest)"
        )
    } else if checks.sd_ratio.is_some_and(|ratio| ratio > UNEQUAL_SPREAD_RATIO) {
        // A ratio of SDs swollen by a stray value, which the median-based test discounts.
        "The spreads show no clear difference by the Brown-Forsythe test".to_string()
    } else if checks.brown_forsythe_spread.is_none() && checks.sd_ratio.is_none() {
        // Not "alike" when they could not be compared at all.
        if smallest_n < 2 {
            "The spreads could not be compared (a condition has only one value)".to_string()
        } else {
            "The spreads could not be compared (the analysis notes say why)".to_string()
        }
    } else {
        "The spreads look alike".to_string()
    };
    match checks.normality.as_ref() {
        Some(normality) if non_normal && smallest_n >= SMALL_GROUP_N => format!(
            "{spreads}. The residuals are clearly not normal ({}), but the smallest condition has {smallest_n} values, enough for the averages to be compared this way (common practice: averages of {SMALL_GROUP_N} or more values are close to normal whatever the values' shape), so {LEADS}; the rank-based analysis on the sheet 'Other analyses' is there to check it.",
            crate::analysis::verdict::p_equals(normality.p)
        ),
        Some(normality) if non_normal => format!(
            "{spreads}. The residuals are clearly not normal ({}) and the rank-based analysis could not be made, so {LEADS}; read it with care.",
            crate::analysis::verdict::p_equals(normality.p)
        ),
        Some(_) if !unequal && !spreads_differ => format!("{spreads} and the residuals look normal enough, so {LEADS}."),
        Some(_) => format!("{spreads}, and the residuals look normal enough, so {LEADS}."),
        None => format!("{spreads}; the residuals' normality could not be checked, so {LEADS}."),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::analysis::oneway::fit_one_way;

    /// With a condition of one value the spread tests cannot be made (each needs two
    /// values a condition, common practice), and the reason for the lead says so rather
    /// than calling the spreads alike.
    #[test]
    fn spreads_that_cannot_be_compared_are_not_called_alike() {
        let names: Vec<String> = ["140", "150", "160"].iter().map(|name| name.to_string()).collect();
        let group_values = vec![vec![18.2, 18.9, 17.8, 18.5], vec![20.1, 19.7, 20.4, 19.9], vec![21.0]];
        let values: Vec<f64> = group_values.iter().flatten().copied().collect();
        let groups = [0, 0, 0, 0, 1, 1, 1, 1, 2];
        let records = vec![vec![0, 1, 2, 3], vec![4, 5, 6, 7], vec![8]];
        let fit = fit_one_way(&names, &groups, &values, 0.95, &[]).expect("fits");
        let assessment = assess(&fit, &group_values, &records, &AssessmentOptions::default());
        assert!(assessment.checks.brown_forsythe_spread.is_none());
        assert!(
            assessment
                .lead_reason
                .starts_with("The spreads could not be compared (a condition has only one value)"),
            "{}",
            assessment.lead_reason
        );
    }

    /// scipy 1.17.1: inverting `scipy.stats.ncf.cdf(F, 2, 12, nc)` at 0.975 and
    /// 0.025 with `brentq` for F = 7.137827822120864 (f_oneway of the data below)
    /// gives eta² bounds 0.0564538412352678 and 0.7126585795111261 (nc / (nc + 15)).
    #[test]
    fn eta_squared_interval_matches_reference_library() {
        let names: Vec<String> = ["a", "b", "c"].iter().map(|name| name.to_string()).collect();
        let values = [
            24.5, 23.5, 26.4, 27.1, 29.9, 28.4, 34.2, 29.5, 32.2, 30.1, 26.1, 28.3, 24.3, 26.2, 27.8,
        ];
        let groups: Vec<u32> = (0..15).map(|index| index / 5).collect();
        let fit = fit_one_way(&names, &groups, &values, 0.95, &[]).expect("fits");
        let interval = eta_squared_interval(&fit, 0.95).expect("interval");
        assert!((interval.low - 0.0564538412352678).abs() < 1e-7, "{interval:?}");
        assert!((interval.high - 0.7126585795111261).abs() < 1e-7, "{interval:?}");
    }

    /// With many pairs (70 conditions: 2,415 pairs) Games-Howell runs on its own thread:
    /// each family must be exactly what its routine gives when called alone, and a
    /// family that fails must leave its note in the same place as on one thread.
    #[test]
    fn families_of_many_pairs_on_two_threads_are_the_families_alone() {
        let n_conditions = 70;
        assert!(n_conditions * (n_conditions - 1) / 2 >= PARALLEL_MIN_PAIRS);
        let names: Vec<String> = (0..n_conditions).map(|index| format!("setting {index}")).collect();
        let (mut values, mut groups) = (Vec::new(), Vec::new());
        for condition in 0..n_conditions {
            for (replicate, offset) in [-0.4, 0.1, 0.3].into_iter().enumerate() {
                let spread = 1.0 + (condition % 5) as f64 * 0.25;
                values.push(20.0 + 0.03 * condition as f64 + spread * offset * (1.0 + 0.1 * replicate as f64));
                groups.push(condition as u32);
            }
        }
        let group_values: Vec<Vec<f64>> = values.chunks(3).map(<[f64]>::to_vec).collect();
        let records: Vec<Vec<usize>> = (0..n_conditions).map(|c| (3 * c..3 * c + 3).collect()).collect();
        let fit = fit_one_way(&names, &groups, &values, 0.95, &[]).expect("fits");
        let assessment = assess(&fit, &group_values, &records, &AssessmentOptions::default());
        let alone_tukey = pooled_pairs(&fit, PairMethod::TukeyKramer, 0.95).expect("Tukey-Kramer");
        let alone_games_howell = unequal_spread_pairs(&fit, 0.95).expect("Games-Howell");
        assert_eq!(
            format!("{:?}", assessment.tukey_kramer),
            format!("{:?}", Some(alone_tukey))
        );
        assert_eq!(
            format!("{:?}", assessment.games_howell),
            format!("{:?}", Some(alone_games_howell))
        );

        // One condition without spread: Games-Howell refuses, and says so first among
        // the notes (Tukey-Kramer, Bonferroni and Scheffé still stand).
        let mut flat = values.clone();
        flat[..3].fill(20.0);
        let flat_groups: Vec<Vec<f64>> = flat.chunks(3).map(<[f64]>::to_vec).collect();
        let fit = fit_one_way(&names, &groups, &flat, 0.95, &[]).expect("fits");
        let assessment = assess(&fit, &flat_groups, &records, &AssessmentOptions::default());
        assert!(assessment.tukey_kramer.is_some() && assessment.games_howell.is_none());
        assert!(
            assessment
                .notes
                .first()
                .is_some_and(|note| note.starts_with("Games-Howell: ")),
            "{:?}",
            assessment.notes
        );
    }

    #[test]
    fn the_lead_reason_says_what_the_checks_found() {
        // Three conditions of 20 values at normal scores (alike, normal): the usual
        // reason. Then one gross value in one condition: the residuals are clearly not
        // normal, the conditions are large enough for the ANOVA to lead all the same,
        // and the reason says exactly that, never "look normal enough".
        let names: Vec<String> = ["a", "b", "c"].iter().map(|name| name.to_string()).collect();
        let mut values = Vec::new();
        let mut groups = Vec::new();
        for condition in 0..3u32 {
            for index in 0..20 {
                let offset = dist::normal_quantile((index as f64 + 0.5) / 20.0).expect("valid probability");
                values.push(500.0 + 0.4 * f64::from(condition) + 0.45 * offset);
                groups.push(condition);
            }
        }
        let assessed = |values: &[f64]| {
            let fit = fit_one_way(&names, &groups, values, 0.95, &[]).expect("fits");
            let group_values: Vec<Vec<f64>> = values.chunks(20).map(<[f64]>::to_vec).collect();
            let records: Vec<Vec<usize>> = (0..3).map(|c| (20 * c..20 * c + 20).collect()).collect();
            assess(&fit, &group_values, &records, &AssessmentOptions::default())
        };
        let clean = assessed(&values);
        assert_eq!(clean.lead, LeadAnalysis::OneWay);
        assert_eq!(
            clean.lead_reason,
            "The spreads look alike and the residuals look normal enough, so the one-way ANOVA with Tukey-Kramer pairs leads."
        );
        let mut gross = values.clone();
        gross[33] = 512.4;
        let assessment = assessed(&gross);
        let normality = assessment.checks.normality.as_ref().expect("a normality check");
        assert!(normality.p < NON_NORMAL_P, "{}", normality.p);
        assert_eq!(assessment.lead, LeadAnalysis::OneWay, "{}", assessment.lead_reason);
        assert!(
            assessment.lead_reason.contains("The residuals are clearly not normal")
                && assessment.lead_reason.contains("the smallest condition has 20 values")
                && assessment
                    .lead_reason
                    .starts_with("The spreads show no clear difference by the Brown-Forsythe test.")
                && !assessment.lead_reason.contains("look normal enough"),
            "{}",
            assessment.lead_reason
        );
    }

    #[test]
    fn lead_moves_to_unequal_spreads_when_spreads_differ() {
        // Normal scores (Blom-like positions) scaled to a 1:12 SD ratio, 12 values each: the rule picks Welch.
        let names: Vec<String> = ["steady", "wild"].iter().map(|name| name.to_string()).collect();
        let mut values = Vec::new();
        let mut groups = Vec::new();
        for index in 0..12 {
            let offset = dist::normal_quantile((index as f64 + 0.5) / 12.0).expect("valid probability");
            values.push(10.0 + 0.1 * offset);
            groups.push(0);
            values.push(10.5 + 1.2 * offset);
            groups.push(1);
        }
        let fit = fit_one_way(&names, &groups, &values, 0.95, &[]).expect("fits");
        let group_values = vec![
            values.iter().step_by(2).copied().collect::<Vec<_>>(),
            values.iter().skip(1).step_by(2).copied().collect(),
        ];
        let records = vec![(0..12).map(|i| 2 * i).collect(), (0..12).map(|i| 2 * i + 1).collect()];
        let assessment = assess(&fit, &group_values, &records, &AssessmentOptions::default());
        assert_eq!(
            assessment.lead,
            LeadAnalysis::UnequalSpreads,
            "{}",
            assessment.lead_reason
        );
    }
}
