//! The k-way model: its ANOVA tables, intervals, least-squares means, effects and the
//! two-factor tables of model means.

use crate::stats::dist::t_quantile;
use crate::stats::linear_model::{
    fit_factorial, CellSummary, Estimability, Estimate, FactorSpec, FactorialFit, ModelSpec,
};

use super::coding::UsedFactor;
use super::results::{
    AnovaLine, CellLine, IntervalLine, KWayModel, LsMeansLine, TermEffectsLine, TermLine, TwoWayMeans,
};
use super::{FactorialOptions, MAX_TWO_WAY_TABLES};

pub(super) fn t_multiplier(confidence: f64, df: usize) -> Option<f64> {
    if df == 0 {
        return None;
    }
    t_quantile(0.5 + 0.5 * confidence, df as f64).ok()
}

pub(super) fn interval(
    label: String,
    levels: Vec<String>,
    estimate: &Estimate,
    multiplier: Option<f64>,
) -> IntervalLine {
    let half = match (estimate.standard_error, multiplier) {
        (Some(se), Some(t)) => Some(se * t),
        _ => None,
    };
    IntervalLine {
        label,
        levels,
        estimate: estimate.value,
        se: estimate.standard_error,
        low: estimate.value.zip(half).map(|(value, half)| value - half),
        high: estimate.value.zip(half).map(|(value, half)| value + half),
    }
}

pub(super) fn anova_lines(table: &crate::stats::linear_model::AnovaTable) -> Vec<AnovaLine> {
    table
        .rows
        .iter()
        .map(|row| AnovaLine {
            source: row.term.clone(),
            df: row.df,
            sum_sq: row.sum_sq,
            mean_sq: Some(row.mean_sq),
            f_value: row.f_value,
            p_value: row.p_value,
        })
        .collect()
}

/// Whether two tables of the fit hold the same terms with the same df and sums of squares
/// (to 1e-9 of the total), compared in the fit's scaled units.
pub(super) fn tables_agree(
    first: &crate::stats::linear_model::AnovaTable,
    second: &crate::stats::linear_model::AnovaTable,
    scale: f64,
) -> bool {
    first.rows.len() == second.rows.len()
        && first.rows.iter().zip(&second.rows).all(|(a, b)| {
            a.term == b.term
                && a.df == b.df
                && (a.sum_sq_scaled - b.sum_sq_scaled).abs() <= 1e-9 * (scale + a.sum_sq_scaled.abs())
        })
}

pub(super) fn kway_model(
    fit: &FactorialFit,
    cells: &[CellSummary],
    used: &[UsedFactor],
    options: &FactorialOptions,
    confidence: f64,
    level_names: &dyn Fn(&[usize]) -> Vec<String>,
) -> KWayModel {
    let multiplier = t_multiplier(confidence, fit.residual.df);
    let type_i = anova_lines(&fit.type_i);
    let type_ii = anova_lines(&fit.type_ii);
    let type_iii = anova_lines(&fit.type_iii);
    let scale = fit.total_ss_scaled.abs();
    let types_coincide =
        tables_agree(&fit.type_i, &fit.type_ii, scale) && tables_agree(&fit.type_ii, &fit.type_iii, scale);
    let types_note = if fit.is_balanced {
        "Every combination of levels has the same number of values (balanced data), so the Type I, II and III sums of squares are the same; read any of them.".to_string()
    } else if types_coincide {
        "The data are not balanced, but the Type I, II and III sums of squares happen to agree here.".to_string()
    } else {
        "The data are not balanced, so the three types differ. Type I adds terms in the order listed (blocks first); Type II tests each term after every term that does not contain it, the better test of main effects when their interactions are small; Type III tests each term after all the others, the usual choice when interactions matter.".to_string()
    };
    let order_reason = match options.interaction_order {
        Some(order) => format!("the setting 'interaction order' is {order}"),
        None if fit.max_order < used.iter().filter(|factor| !factor.is_block).count() => format!(
            "interactions of more than {} factors would leave no residual degrees of freedom, so they were pooled into the residual",
            fit.max_order
        ),
        None => "every order of interaction the data allow".to_string(),
    };
    let mut error_lines = vec![AnovaLine {
        source: "residual".into(),
        df: fit.residual.df,
        sum_sq: fit.residual.sum_sq,
        mean_sq: fit.residual.mean_sq,
        f_value: None,
        p_value: None,
    }];
    if fit.lack_of_fit.df > 0 && fit.pure_error.df > 0 {
        let pure_ms = fit.pure_error.sum_sq / fit.pure_error.df as f64;
        let lack_ms = fit.lack_of_fit.sum_sq / fit.lack_of_fit.df as f64;
        // From the scaled sums: the mean squares themselves may be beyond the arithmetic.
        let (f_value, p_value) = match fit.lack_of_fit_test {
            Some((f_value, p_value)) => (Some(f_value), p_value),
            None => (None, None),
        };
        error_lines.push(AnovaLine {
            source: "lack of fit".into(),
            df: fit.lack_of_fit.df,
            sum_sq: fit.lack_of_fit.sum_sq,
            mean_sq: Some(lack_ms),
            f_value,
            p_value,
        });
        error_lines.push(AnovaLine {
            source: "pure error".into(),
            df: fit.pure_error.df,
            sum_sq: fit.pure_error.sum_sq,
            mean_sq: Some(pure_ms),
            f_value: None,
            p_value: None,
        });
    }
    error_lines.push(AnovaLine {
        source: "total".into(),
        df: fit.total.df,
        sum_sq: fit.total.sum_sq,
        mean_sq: None,
        f_value: None,
        p_value: None,
    });
    let cell_lines = fit
        .cells
        .iter()
        .zip(cells)
        .map(|(cell_fit, cell)| CellLine {
            levels: level_names(&cell_fit.levels),
            n: cell_fit.n,
            mean: cell_fit.observed_mean,
            sd: cell.sd(),
            fitted: cell_fit.fitted.value,
            fitted_se: cell_fit.fitted.standard_error,
        })
        .collect();
    let ls_means = fit
        .ls_means
        .iter()
        .map(|factor_means| LsMeansLine {
            factor: factor_means.factor.clone(),
            means: factor_means
                .means
                .iter()
                .enumerate()
                .map(|(level, estimate)| {
                    let name = used[factor_means.factor_index].level_names[level].clone();
                    interval(name.clone(), vec![name], estimate, multiplier)
                })
                .collect(),
        })
        .collect();
    let effects = fit
        .effects
        .iter()
        .map(|term| TermEffectsLine {
            term: term.term.clone(),
            effects: term
                .effects
                .iter()
                .map(|effect| {
                    let names: Vec<String> = term
                        .factors
                        .iter()
                        .zip(&effect.levels)
                        .map(|(&factor, &level)| used[factor].level_names[level].clone())
                        .collect();
                    interval(names.join(" / "), names, &effect.estimate, multiplier)
                })
                .collect(),
        })
        .collect();
    KWayModel {
        interaction_order: fit.max_order,
        order_reason,
        terms: fit
            .terms
            .iter()
            .map(|term| TermLine {
                term: term.name.clone(),
                df_full: term.df_full,
                df_estimable: term.df_estimable,
                estimability: match term.estimability {
                    Estimability::Full => "full",
                    Estimability::Partial => "partial",
                    Estimability::NotEstimable => "not estimable",
                }
                .into(),
            })
            .collect(),
        type_i,
        type_ii,
        type_iii,
        error_lines,
        types_coincide,
        types_note,
        residual_sd: fit.residual_sd,
        residual_df: fit.residual.df,
        r_squared: fit.r_squared,
        type_iii_depends_on_coding: fit.type_iii_depends_on_coding,
        grand_mean: fit.grand_mean.value,
        cells: cell_lines,
        ls_means,
        effects,
        two_way_means: two_way_means(fit, used),
    }
}

/// Model means of every pair of treatment factors: grand mean plus the two main effects
/// plus their interaction (every other term averages to zero in sum-to-zero coding).
pub(super) fn two_way_means(fit: &FactorialFit, used: &[UsedFactor]) -> Vec<TwoWayMeans> {
    let Some(grand) = fit.grand_mean.value else {
        return Vec::new();
    };
    let effect_of = |factors: &[usize], levels: &[usize]| -> Option<Option<f64>> {
        let term = fit.effects.iter().find(|term| term.factors == factors)?;
        let effect = term.effects.iter().find(|effect| effect.levels == levels)?;
        Some(effect.estimate.value)
    };
    let treatments: Vec<usize> = (0..used.len()).filter(|&f| !used[f].is_block).collect();
    let mut tables = Vec::new();
    for (position, &first) in treatments.iter().enumerate() {
        for &second in &treatments[position + 1..] {
            let interaction_name = format!("{}:{}", used[first].name, used[second].name);
            let interaction_p = fit.type_iii.row(&interaction_name).and_then(|row| row.p_value);
            let in_model = fit.effects.iter().any(|term| term.factors == [first, second]);
            // Trace the factor with fewer levels, along the one with more.
            let (x_factor, trace_factor) = if used[first].level_names.len() >= used[second].level_names.len() {
                (first, second)
            } else {
                (second, first)
            };
            let means = (0..used[trace_factor].level_names.len())
                .map(|trace_level| {
                    (0..used[x_factor].level_names.len())
                        .map(|x_level| {
                            let (first_level, second_level) = if x_factor == first {
                                (x_level, trace_level)
                            } else {
                                (trace_level, x_level)
                            };
                            let main_first = effect_of(&[first], &[first_level]).flatten()?;
                            let main_second = effect_of(&[second], &[second_level]).flatten()?;
                            let joint = if in_model {
                                effect_of(&[first, second], &[first_level, second_level]).flatten()?
                            } else {
                                0.0
                            };
                            Some(grand + main_first + main_second + joint)
                        })
                        .collect()
                })
                .collect();
            tables.push(TwoWayMeans {
                x_factor: used[x_factor].name.clone(),
                x_levels: used[x_factor].level_names.clone(),
                trace_factor: used[trace_factor].name.clone(),
                trace_levels: used[trace_factor].level_names.clone(),
                means,
                interaction_p,
            });
        }
    }
    tables.sort_by(|a, b| {
        a.interaction_p
            .unwrap_or(2.0)
            .total_cmp(&b.interaction_p.unwrap_or(2.0))
    });
    tables.truncate(MAX_TWO_WAY_TABLES);
    tables
}

/// Fits the k-way model to the cells with interactions up to `max_order` (every order the
/// replication allows when `None`); a failure is left as a note.
pub(super) fn fit_kway(
    cells: &[CellSummary],
    used: &[UsedFactor],
    max_order: Option<usize>,
    notes: &mut Vec<String>,
) -> Option<FactorialFit> {
    let specs: Vec<FactorSpec> = used
        .iter()
        .map(|factor| FactorSpec {
            name: factor.name.clone(),
            n_levels: factor.level_names.len(),
            is_block: factor.is_block,
        })
        .collect();
    match fit_factorial(cells, &specs, &ModelSpec { max_order }) {
        Ok(fit) => Some(fit),
        Err(error) => {
            notes.push(format!("the factorial model could not be fitted: {error}"));
            None
        }
    }
}

/// Cautions on the k-way fit: no residual degrees of freedom, combinations not run.
/// `missing_by_design` leaves out the caution on combinations not run when the design
/// (a regular fraction, or a full factorial split into blocks) leaves them out on purpose.
pub(super) fn kway_cautions(
    fit: &FactorialFit,
    level_names: &dyn Fn(&[usize]) -> Vec<String>,
    missing_by_design: bool,
) -> Vec<String> {
    let mut cautions = Vec::new();
    if fit.residual.df == 0 {
        cautions.push("The model uses every degree of freedom: there is no residual left to judge the effects by, so no F tests or intervals are given for it.".into());
    }
    if let Some(first) = fit.missing_cells.first().filter(|_| !missing_by_design) {
        cautions.push(format!(
            "{} of levels {} not run (for example {}); effects that need {} cannot be estimated, and the Type III tests depend on how the levels were coded.",
            crate::analysis::verdict::count_of(fit.missing_cells.len(), "combination"),
            if fit.missing_cells.len() == 1 { "was" } else { "were" },
            level_names(first).join(" / "),
            if fit.missing_cells.len() == 1 { "it" } else { "them" }
        ));
    }
    cautions
}
