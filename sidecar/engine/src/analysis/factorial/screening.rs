//! Two-level screening: the design found in the runs, effects with alias chains, Lenth's
//! method, curvature from centre points and advice on aliasing.

use crate::analysis::verdict::{p_equals, round_for_text};
use crate::stats::accumulate::{binary_exponent, scale_by_power_of_two};
use crate::stats::two_level::{detect_design, resolution_numeral, DesignKind, DesignSummary, Word, FACTOR_LETTERS};
use crate::stats::two_level_analysis::{
    analyse_two_level_in_layout, contrast_effect, AnalysisOptions, RunLayout, TwoLevelAnalysis,
};

use super::coding::Coding;
use super::kway::t_multiplier;
use super::results::{
    CurvatureLine, DesignLine, EffectPlotPoint, ErrorBasis, LenthLine, TwoLevelEffect, TwoLevelOutcome,
};
use super::{FactorialData, ALIAS_DISPLAY_ORDER};

pub(super) fn word_names(word: Word, names: &[String]) -> String {
    word.factors()
        .iter()
        .map(|&factor| names.get(factor).cloned().unwrap_or_else(|| "?".into()))
        .collect::<Vec<_>>()
        .join(":")
}

pub(super) fn chain_named(chain: &crate::stats::two_level::AliasChain, names: &[String], max_order: usize) -> String {
    let mut text = String::new();
    let mut omitted = false;
    for (position, member) in chain.members.iter().enumerate() {
        if member.word.order() > max_order && position > 0 {
            omitted = true;
            continue;
        }
        if position > 0 {
            text.push_str(if member.negative { " - " } else { " + " });
        }
        text.push_str(&word_names(member.word, names));
    }
    if omitted {
        text.push_str(" + ...");
    }
    text
}

pub(super) fn design_line(design: &DesignSummary) -> DesignLine {
    let relation = &design.relation;
    let fraction = relation.n_generators();
    let kind = match design.kind {
        DesignKind::FullFactorial => "full factorial",
        DesignKind::RegularFraction => "regular fraction",
        DesignKind::Irregular => "irregular",
    };
    let resolution = relation.resolution();
    let name = match design.kind {
        DesignKind::FullFactorial => format!("2^{} full factorial", design.n_factors),
        DesignKind::RegularFraction => format!(
            "2^({}-{}) resolution {}",
            design.n_factors,
            fraction,
            resolution_numeral(resolution)
        ),
        DesignKind::Irregular => format!(
            "{} runs of a 2^{} design, not a regular fraction",
            design.n_distinct_runs, design.n_factors
        ),
    };
    let words = relation.words();
    let defining_relation = if words.is_empty() {
        "I (no words: every effect has its own column)".to_string()
    } else {
        let mut text = "I".to_string();
        for word in &words {
            text.push_str(" = ");
            text.push_str(&word.to_string());
        }
        text
    };
    DesignLine {
        kind: kind.into(),
        n_factors: design.n_factors,
        fraction,
        name,
        n_runs: design.n_runs,
        n_distinct_runs: design.n_distinct_runs,
        replication: design.replication,
        resolution,
        resolution_numeral: resolution_numeral(resolution),
        generators: if design.kind == DesignKind::RegularFraction {
            relation.generator_equations_text()
        } else {
            Vec::new()
        },
        defining_relation,
        word_length_pattern: relation.word_length_pattern().counts().to_vec(),
    }
}

/// The runs of the two-level analysis: the treatment factors, the blocks (table
/// indices), the coding, the usable records and which of them are centre runs.
pub(super) struct TwoLevelInput<'a> {
    pub(super) table: &'a FactorialData<'a>,
    pub(super) treatments: &'a [usize],
    pub(super) blocks: &'a [usize],
    pub(super) coding: &'a Coding,
    pub(super) usable: &'a [usize],
    pub(super) centre_records: &'a [usize],
    pub(super) confidence: f64,
}

pub(super) fn two_level_outcome(input: &TwoLevelInput<'_>, notes: &mut Vec<String>) -> Option<TwoLevelOutcome> {
    let TwoLevelInput {
        table,
        treatments,
        blocks,
        coding,
        usable,
        centre_records,
        confidence,
    } = *input;
    let values = table.values;
    let runs: Vec<Vec<f64>> = usable
        .iter()
        .map(|&record| {
            treatments
                .iter()
                .enumerate()
                .map(|(position, &factor)| {
                    coding.coded[position][table.factors[factor].level_of_record[record] as usize].unwrap_or(0.0)
                })
                .collect()
        })
        .collect();
    // Accumulate, centre, solve: the responses enter as deviations from one centre
    // (typed decimals differenced exactly), so effects keep their digits at any offset;
    // the centre is added back to the levels reported (grand and curvature means).
    let raw_responses: Vec<f64> = usable.iter().map(|&record| values[record]).collect();
    let centred = crate::stats::accumulate::centre_values(&raw_responses);
    let responses = centred.deviations;
    let names: Vec<String> = treatments.iter().map(|&f| table.factors[f].name.to_string()).collect();
    let alpha = 1.0 - confidence;
    let options = AnalysisOptions {
        lenth_confidence: confidence,
    };
    // One block index per run: the combination of the block factors' levels.
    let mut block_index: std::collections::BTreeMap<Vec<u32>, usize> = std::collections::BTreeMap::new();
    let block_of_run: Vec<usize> = usable
        .iter()
        .map(|&record| {
            let key: Vec<u32> = blocks
                .iter()
                .map(|&factor| table.factors[factor].level_of_record[record])
                .collect();
            let next = block_index.len();
            *block_index.entry(key).or_insert(next)
        })
        .collect();
    let is_centre: Vec<bool> = usable
        .iter()
        .map(|record| centre_records.binary_search(record).is_ok())
        .collect();
    let layout = RunLayout {
        block_of_run: &block_of_run,
        is_centre: &is_centre,
    };
    match analyse_two_level_in_layout(&runs, &responses, &layout, &options) {
        Ok(mut analysis) => {
            analysis.grand_mean += centred.centre;
            if let Some(curvature) = analysis.curvature.as_mut() {
                curvature.factorial_mean += centred.centre;
                curvature.centre_mean += centred.centre;
            }
            Some(two_level_from_analysis(
                &analysis,
                &names,
                usable,
                confidence,
                alpha,
                !blocks.is_empty(),
            ))
        }
        Err(error) => {
            // Irregular designs: the design, and main effects by direct contrasts.
            let factorial: Vec<(Vec<f64>, f64)> = runs
                .iter()
                .zip(&responses)
                .zip(&is_centre)
                .filter(|(_, centre)| !**centre)
                .map(|((run, &y), _)| (run.clone(), y))
                .collect();
            let factorial_runs: Vec<Vec<f64>> = factorial.iter().map(|(run, _)| run.clone()).collect();
            let factorial_y: Vec<f64> = factorial.iter().map(|(_, y)| *y).collect();
            let design = match detect_design(&factorial_runs) {
                Ok(design) => design,
                Err(_) => {
                    notes.push(format!("the two-level analysis was not done: {error}"));
                    return None;
                }
            };
            notes.push(
                "the runs are not a full factorial or a regular fraction, so Yates's algorithm and alias chains do not apply; main effects are shown as differences of averages, and the k-way model carries the tests".into(),
            );
            let effects = (0..names.len())
                .filter_map(|factor| {
                    let word = Word(1 << factor);
                    let effect = contrast_effect(&factorial_runs, &factorial_y, word).ok()?;
                    Some(TwoLevelEffect {
                        name: word.to_string(),
                        term: names[factor].clone(),
                        aliases: word.to_string(),
                        aliases_named: names[factor].clone(),
                        effect,
                        coefficient: 0.5 * effect,
                        se: None,
                        t_value: None,
                        p_value: None,
                        low: None,
                        high: None,
                        lenth_t: None,
                        beyond_margin: false,
                        beyond_simultaneous_margin: false,
                        active: false,
                        in_error: false,
                    })
                })
                .collect();
            Some(TwoLevelOutcome {
                design: design_line(&design),
                grand_mean: None,
                effects,
                confounded_with_blocks: Vec::new(),
                error: ErrorBasis {
                    source: "none".into(),
                    df: 0.0,
                    sentence: "The runs do not form a regular design, so the effects here carry no test; the k-way model gives the tests.".into(),
                },
                pure_error_variance: None,
                pure_error_df: 0,
                lenth: None,
                curvature: None,
                normal_plot: Vec::new(),
                half_normal_plot: Vec::new(),
                standard_order: Vec::new(),
                aliasing_notes: vec!["The runs do not form a regular design: main effects may be partly mixed with interactions in ways no alias chain describes.".into()],
                follow_up: None,
            })
        }
    }
}

/// An unreplicated design pools its interactions of three or more factors as error when
/// it has at least this many such chains (otherwise Lenth's method judges the effects).
pub const MIN_POOLED_INTERACTION_DF: usize = 3;

/// How the effects are judged: the standard error and df of each effect, which chains are
/// pooled into the error, and the error in words.
struct Judgement {
    se: Option<f64>,
    df: usize,
    pooled: Vec<bool>,
    basis: ErrorBasis,
}

/// Chooses the error from what the design offers: pure error from replicates and centre
/// points (within blocks); else the interactions of three or more factors pooled, when
/// the design estimates at least [`MIN_POOLED_INTERACTION_DF`] chains made only of such
/// interactions; else Lenth's method (common practice: Montgomery, "Design and Analysis
/// of Experiments", chapter on unreplicated two-level designs; Lenth 1989).
///
/// # Remarks
/// For an unreplicated design each effect `e` has `SS = N e^2 / 4` and
/// `Var(e) = 4 sigma^2 / N` (`N` runs), so the pooled standard error of an effect is
/// `sqrt(sum e_j^2 / m)` over the `m` pooled chains.
fn judgement(analysis: &TwoLevelAnalysis, blocked: bool, has_centre: bool) -> Judgement {
    let n_effects = analysis.effects.len();
    let within = if blocked { " within blocks" } else { "" };
    if analysis.pure_error_df > 0 {
        let replicated = analysis.design.n_runs > analysis.design.n_distinct_runs;
        let centre_df = analysis.curvature.as_ref().map_or(0, |c| c.n_centre.saturating_sub(1));
        let (source, what) = match (replicated, has_centre && centre_df > 0) {
            (true, true) => (
                "replicates and centre points",
                "repeated runs at the same settings (replicated corners and centre points pooled)",
            ),
            (true, false) => ("replicates", "repeated runs at the same settings"),
            _ => ("centre points", "repeated centre points"),
        };
        let df = analysis.pure_error_df;
        return Judgement {
            se: analysis.effects.first().and_then(|e| e.standard_error),
            df,
            pooled: vec![false; n_effects],
            basis: ErrorBasis {
                source: source.into(),
                df: df as f64,
                sentence: format!(
                    "Effects are judged against the spread of {what}{within}: pure error on {df} degrees of freedom."
                ),
            },
        };
    }
    let pooled: Vec<bool> = analysis
        .effects
        .iter()
        .map(|e| e.chain.members.iter().all(|member| member.word.order() >= 3))
        .collect();
    let n_pooled = pooled.iter().filter(|p| **p).count();
    if n_pooled >= MIN_POOLED_INTERACTION_DF && n_pooled < n_effects {
        // Root mean square of the pooled effects, each divided by a power of two near the
        // largest first, so no square overflows or underflows at any magnitude.
        let pooled_effects: Vec<f64> = analysis
            .effects
            .iter()
            .zip(&pooled)
            .filter(|(_, p)| **p)
            .map(|(e, _)| e.effect)
            .collect();
        let largest = pooled_effects.iter().fold(0.0_f64, |largest, e| largest.max(e.abs()));
        let exponent = if largest > 0.0 { binary_exponent(largest) } else { 0 };
        let scaled_sum_sq: f64 = pooled_effects
            .iter()
            .map(|&e| scale_by_power_of_two(e, -i64::from(exponent)).powi(2))
            .sum();
        let names: Vec<String> = analysis
            .effects
            .iter()
            .zip(&pooled)
            .filter(|(_, p)| **p)
            .map(|(e, _)| e.chain.leader().to_string())
            .collect();
        return Judgement {
            se: Some(scale_by_power_of_two(
                (scaled_sum_sq / n_pooled as f64).sqrt(),
                i64::from(exponent),
            ))
            .filter(|se| *se > 0.0),
            df: n_pooled,
            pooled,
            basis: ErrorBasis {
                source: "pooled high-order interactions".into(),
                df: n_pooled as f64,
                sentence: format!(
                    "The runs are not repeated, so effects are judged against the interactions of three or more factors ({}) pooled as error on {n_pooled} degrees of freedom; this assumes those interactions are negligible.",
                    names.join(", ")
                ),
            },
        };
    }
    match &analysis.lenth {
        Some(lenth) => Judgement {
            se: None,
            df: 0,
            pooled: vec![false; n_effects],
            basis: ErrorBasis {
                source: "Lenth's method".into(),
                df: lenth.df,
                sentence: format!(
                    "The runs are not repeated and every run goes to estimating an effect, so effects are judged by Lenth's method: a pseudo standard error from the smaller effects on {} degrees of freedom, which assumes most effects are really zero.",
                    round_for_text(lenth.df, 3)
                ),
            },
        },
        None => Judgement {
            se: None,
            df: 0,
            pooled: vec![false; n_effects],
            basis: ErrorBasis {
                source: "none".into(),
                df: 0.0,
                sentence: "The trial offers no estimate of error (no repeated runs, no centre points, too few effects for Lenth's method), so the effects carry no test.".into(),
            },
        },
    }
}

pub(super) fn two_level_from_analysis(
    analysis: &TwoLevelAnalysis,
    names: &[String],
    usable: &[usize],
    confidence: f64,
    alpha: f64,
    blocked: bool,
) -> TwoLevelOutcome {
    let display_order = ALIAS_DISPLAY_ORDER.min(names.len()).max(2);
    let judged = judgement(analysis, blocked, analysis.curvature.is_some());
    let multiplier = t_multiplier(confidence, judged.df);
    let effects: Vec<TwoLevelEffect> = analysis
        .effects
        .iter()
        .enumerate()
        .map(|(index, estimate)| {
            let leader = estimate.chain.leader();
            let lenth = analysis.lenth.as_ref();
            let in_error = judged.pooled[index];
            let se = judged.se.filter(|_| !in_error);
            let (t_value, p_value) = if analysis.pure_error_df > 0 {
                (estimate.t_value, estimate.p_value)
            } else {
                let t_value = se.map(|se| estimate.effect / se);
                let p_value = t_value.and_then(|t| {
                    crate::stats::dist::t_sf(t.abs(), judged.df as f64)
                        .ok()
                        .map(|tail| (2.0 * tail).min(1.0))
                });
                (t_value, p_value)
            };
            let half = match (se, multiplier, lenth) {
                (Some(se), Some(t), _) => Some(se * t),
                (None, _, Some(lenth)) if judged.se.is_none() => Some(lenth.margin_of_error),
                _ => None,
            };
            let beyond_margin = lenth.is_some_and(|l| l.exceeds_margin.get(index).copied().unwrap_or(false));
            let active = match p_value {
                Some(p) => p < alpha,
                None => judged.se.is_none() && beyond_margin,
            };
            TwoLevelEffect {
                name: leader.to_string(),
                term: word_names(leader, names),
                aliases: estimate.chain.display_up_to(display_order),
                aliases_named: chain_named(&estimate.chain, names, display_order),
                effect: estimate.effect,
                coefficient: estimate.coefficient,
                se,
                t_value,
                p_value,
                low: half.map(|half| estimate.effect - half),
                high: half.map(|half| estimate.effect + half),
                lenth_t: lenth.and_then(|l| l.t_ratios.get(index).copied()),
                beyond_margin,
                beyond_simultaneous_margin: lenth
                    .is_some_and(|l| l.exceeds_simultaneous_margin.get(index).copied().unwrap_or(false)),
                active,
                in_error,
            }
        })
        .collect();
    let confounded_with_blocks: Vec<String> = analysis
        .confounded_with_blocks
        .iter()
        .map(|estimate| {
            let leader = estimate.chain.leader();
            format!("{} ({})", word_names(leader, names).replace(':', " × "), leader)
        })
        .collect();
    let plot = |points: &[crate::stats::two_level_analysis::PlotPoint]| -> Vec<EffectPlotPoint> {
        points
            .iter()
            .map(|point| EffectPlotPoint {
                name: effects.get(point.index).map(|e| e.name.clone()).unwrap_or_default(),
                value: point.value,
                quantile: point.quantile,
            })
            .collect()
    };
    let normal_plot = plot(&analysis.normal_plot);
    let half_normal_plot = plot(&analysis.half_normal_plot);
    let (aliasing_notes, follow_up) = aliasing_advice(analysis, &effects, names);
    TwoLevelOutcome {
        design: design_line(&analysis.design),
        grand_mean: Some(analysis.grand_mean),
        confounded_with_blocks,
        error: judged.basis,
        pure_error_variance: analysis.pure_error_variance,
        pure_error_df: analysis.pure_error_df,
        lenth: analysis.lenth.as_ref().map(|lenth| LenthLine {
            pse: lenth.pseudo_standard_error,
            df: lenth.df,
            margin_of_error: lenth.margin_of_error,
            simultaneous_margin_of_error: lenth.simultaneous_margin_of_error,
            confidence: lenth.confidence,
        }),
        curvature: analysis.curvature.as_ref().map(|curvature| CurvatureLine {
            n_factorial: curvature.n_factorial,
            n_centre: curvature.n_centre,
            factorial_mean: curvature.factorial_mean,
            centre_mean: curvature.centre_mean,
            difference: curvature.difference,
            se: curvature.standard_error,
            df: curvature.pure_error_df,
            t_value: curvature.t_value,
            p_value: curvature.p_value,
        }),
        normal_plot,
        half_normal_plot,
        standard_order: analysis
            .standard_order
            .iter()
            .filter_map(|&run| usable.get(run).copied())
            .collect(),
        effects,
        aliasing_notes,
        follow_up,
    }
}

/// Sentences on what the aliasing leaves open among the active effects, and a fold-over
/// that would separate them.
///
/// # Remarks
/// Two members `u`, `v` of a chain are aliased through the word `uv` of the defining
/// relation. Repeating the runs with every factor reversed (a full fold-over) removes
/// every word of odd length from the combined design's relation; reversing one factor
/// `f` removes every word containing `f` (Box, Hunter and Hunter, *Statistics for
/// Experimenters*, 2nd ed., 2005, section 6.7). So the pair is separated by a full
/// fold-over when `uv` has odd length and by folding on `f` when `f` is in `uv`.
pub(super) fn aliasing_advice(
    analysis: &TwoLevelAnalysis,
    effects: &[TwoLevelEffect],
    names: &[String],
) -> (Vec<String>, Option<String>) {
    let mut notes = Vec::new();
    if analysis.design.relation.n_generators() == 0 {
        return (notes, None);
    }
    let resolution = analysis.design.relation.resolution();
    notes.push(format!(
        "This is a fraction of resolution {}: {}.",
        resolution_numeral(resolution),
        match resolution {
            Some(r) if r <= 3 => "main effects are mixed with two-factor interactions",
            Some(4) => "main effects are clear of two-factor interactions, but two-factor interactions are mixed with each other",
            Some(_) => "main effects and two-factor interactions are clear of each other, mixed only with higher-order interactions",
            None => "no effect is mixed with another",
        }
    ));
    // Ambiguous pairs among active chains: members of order <= 2 beyond the leader, or
    // a main-effect leader aliased with a two-factor interaction.
    let mut pairs: Vec<(Word, Word)> = Vec::new();
    for (estimate, effect) in analysis.effects.iter().zip(effects) {
        if !effect.active {
            continue;
        }
        let low_order: Vec<Word> = estimate
            .chain
            .members
            .iter()
            .map(|member| member.word)
            .filter(|word| word.order() <= 2)
            .collect();
        if low_order.len() > 1 {
            let named: Vec<String> = low_order
                .iter()
                .map(|w| word_names(*w, names).replace(':', " × "))
                .collect();
            notes.push(format!(
                "The estimate {} ({}) could come from any of {}: the trial cannot tell them apart.",
                effect.name,
                round_for_text(effect.effect, 4),
                named.join(", ")
            ));
            for (position, &first) in low_order.iter().enumerate() {
                for &second in &low_order[position + 1..] {
                    pairs.push((first, second));
                }
            }
        } else if estimate.chain.members.len() > 1 {
            notes.push(format!(
                "The estimate {} is read as {} on the assumption that the interactions it is mixed with ({}) are negligible.",
                effect.name,
                effect.term.replace(':', " × "),
                effect.aliases
            ));
        }
    }
    if pairs.is_empty() {
        return (notes, None);
    }
    let n_factors = names.len();
    let full_separates = pairs.iter().filter(|(a, b)| a.product(*b).order() % 2 == 1).count();
    let mut best_single: Option<(usize, usize)> = None;
    for factor in 0..n_factors {
        let separated = pairs.iter().filter(|(a, b)| a.product(*b).contains(factor)).count();
        if best_single.is_none_or(|(_, count)| separated > count) {
            best_single = Some((factor, separated));
        }
    }
    let n_runs = analysis.design.n_distinct_runs;
    let follow_up = match best_single {
        Some((factor, count)) if count >= full_separates && count > 0 => Some(format!(
            "To separate them, run the {n_runs} runs again with only {} ({}) reversed (a fold-over on that factor); this separates {count} of the {} among the active effects, and {} itself from every interaction.",
            names[factor],
            FACTOR_LETTERS[factor],
            crate::analysis::verdict::count_of(pairs.len(), "mixed pair"),
            names[factor]
        )),
        _ if full_separates > 0 => Some(format!(
            "To separate them, run the {n_runs} runs again with every factor reversed (a full fold-over); this clears every main effect of two-factor interactions and separates {full_separates} of the {}.",
            crate::analysis::verdict::count_of(pairs.len(), "mixed pair")
        )),
        _ => Some(format!(
            "No simple fold-over separates these; adding runs that complete a larger fraction (for example the other half of the {}) would.",
            analysis.design.n_factors
        )),
    };
    (notes, follow_up)
}

/// Cautions on the two-level part: effects confounded with blocks, the error of an
/// unreplicated design (pooled interactions or Lenth's method), aliasing (at most three),
/// curvature at the centre.
pub(super) fn two_level_cautions(two: &TwoLevelOutcome, has_blocks: bool, alpha: f64, cautions: &mut Vec<String>) {
    if has_blocks && !two.confounded_with_blocks.is_empty() {
        cautions.push(format!(
            "Confounded with blocks: {}. Each of these is indistinguishable from the difference between blocks, so it is not read as an effect and plays no part in the settings.",
            two.confounded_with_blocks.join(", ")
        ));
    }
    if matches!(
        two.error.source.as_str(),
        "Lenth's method" | "pooled high-order interactions"
    ) {
        cautions.push(two.error.sentence.clone());
    }
    cautions.extend(two.aliasing_notes.iter().take(3).cloned());
    if let Some(curvature) = &two.curvature {
        if curvature.p_value.is_some_and(|p| p < alpha) {
            cautions.push(format!(
                "The centre points differ from the average of the corners ({}): the response curves between the levels, so predictions between the levels are not reliable from this trial.",
                p_equals(curvature.p_value.unwrap_or(f64::NAN))
            ));
        }
    }
}
