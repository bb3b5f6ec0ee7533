//! Readings of the k-way model and the manager's sentences, and the helpers that say which
//! value is better for the response's direction.

use std::collections::BTreeSet;

use crate::analysis::verdict::{p_equals, round_for_text};
use crate::options::Direction;
use crate::stats::linear_model::FactorialFit;

use super::coding::UsedFactor;
use super::results::{AnovaLine, KWayModel, ObservedCombination, ReducedModel, TwoLevelEffect, TwoLevelOutcome};

pub(super) fn better(direction: Direction, candidate: f64, incumbent: f64) -> bool {
    match direction {
        Direction::HigherIsBetter => candidate > incumbent,
        Direction::LowerIsBetter => candidate < incumbent,
        Direction::Target(target) => (candidate - target).abs() < (incumbent - target).abs(),
    }
}

pub(super) fn best_index(values: &[Option<f64>], direction: Direction) -> Option<usize> {
    let mut best: Option<(usize, f64)> = None;
    for (index, value) in values.iter().enumerate() {
        if let Some(value) = value {
            if best.is_none_or(|(_, incumbent)| better(direction, *value, incumbent)) {
                best = Some((index, *value));
            }
        }
    }
    best.map(|(index, _)| index)
}

/// What a two-level effect was judged against, in words: its p-value against the
/// pure error or pooled interactions, or where it stands against Lenth's margin.
fn two_level_grounds(two: &TwoLevelOutcome, effect: &TwoLevelEffect) -> String {
    match effect.p_value {
        Some(p) => format!("{} against the error from {}", p_equals(p), two.error.source),
        None if effect.beyond_margin => "beyond Lenth's margin of error".to_string(),
        None => "within Lenth's margin of error".to_string(),
    }
}

pub(super) fn direction_words(direction: Direction) -> String {
    match direction {
        Direction::HigherIsBetter => "highest".into(),
        Direction::LowerIsBetter => "lowest".into(),
        Direction::Target(target) => format!("nearest the target {}", round_for_text(target, 4)),
    }
}

/// Reading of the largest effects and of interactions that change which level is best.
///
/// When a two-level analysis judges the effects (its own error: replicates, centre
/// points, pooled interactions or Lenth's method), a term's verdict is that one, so
/// that the reading never calls an effect clear that the lead calls unclear, nor the
/// other way round; the k-way model's own p-value is then said beside it.
pub(super) fn read_model(
    model: &KWayModel,
    fit: Option<&FactorialFit>,
    used: &[UsedFactor],
    direction: Direction,
    alpha: f64,
    response: &str,
    two_level: Option<&TwoLevelOutcome>,
) -> Vec<String> {
    let mut reading = Vec::new();
    let Some(fit) = fit else {
        return reading;
    };
    let table = if fit.is_balanced {
        &model.type_i
    } else {
        &model.type_iii
    };
    let mut terms: Vec<&AnovaLine> = table.iter().collect();
    // Shares and order from the scaled sums of squares of the fit (the sums themselves
    // may be beyond the arithmetic at extreme magnitudes).
    let fit_table = if fit.is_balanced { &fit.type_i } else { &fit.type_iii };
    let scaled_of = |line: &AnovaLine| fit_table.row(&line.source).map_or(line.sum_sq, |row| row.sum_sq_scaled);
    terms.sort_by(|a, b| scaled_of(b).total_cmp(&scaled_of(a)));
    let blocks: BTreeSet<&str> = used
        .iter()
        .filter(|factor| factor.is_block)
        .map(|factor| factor.name.as_str())
        .collect();
    let total = fit.total_ss_scaled;
    for line in terms
        .iter()
        .filter(|line| !blocks.contains(line.source.as_str()))
        .take(3)
    {
        let share = if total > 0.0 {
            scaled_of(line) / total * 100.0
        } else {
            f64::NAN
        };
        let judged = two_level.filter(|two| two.grand_mean.is_some()).and_then(|two| {
            two.effects
                .iter()
                .find(|effect| effect.term == line.source)
                .map(|effect| (two, effect))
        });
        let kway_clear = line.p_value.map(|p| p < alpha);
        let mut sentence = match judged {
            Some((two, effect)) if !effect.in_error && kway_clear.is_some_and(|clear| clear != effect.active) => {
                format!(
                    "{} accounts for {}% of the variation in {response} but {} counted as an effect: {} ({}; the k-way model, whose error pools the terms it leaves out, gives {}).",
                    line.source.replace(':', " × "),
                    round_for_text(share, 2),
                    if effect.active { "is" } else { "is not" },
                    if effect.active { "it is clear" } else { "it is not clear" },
                    two_level_grounds(two, effect),
                    p_equals(line.p_value.unwrap_or(f64::NAN))
                )
            }
            _ => {
                let shown = match line.p_value {
                    Some(p) if p < alpha => "clearly",
                    Some(_) => "not clearly",
                    None => "without a test",
                };
                format!(
                    "{} accounts for {}% of the variation in {response} ({shown} beyond chance, {}).",
                    line.source.replace(':', " × "),
                    round_for_text(share, 2),
                    p_equals(line.p_value.unwrap_or(f64::NAN))
                )
            }
        };
        if !line.source.contains(':') {
            if let Some(means) = model.ls_means.iter().find(|means| means.factor == line.source) {
                let values: Vec<Option<f64>> = means.means.iter().map(|m| m.estimate).collect();
                let high = best_index(&values, Direction::HigherIsBetter);
                let low = best_index(&values, Direction::LowerIsBetter);
                if let (Some(high), Some(low)) = (high, low) {
                    sentence.push_str(&format!(
                        " Its averages run from {} at {} to {} at {}.",
                        round_for_text(values[low].unwrap_or(f64::NAN), 4),
                        means.means[low].label,
                        round_for_text(values[high].unwrap_or(f64::NAN), 4),
                        means.means[high].label
                    ));
                }
            }
        }
        reading.push(sentence);
    }
    for table in &model.two_way_means {
        if !table.interaction_p.is_some_and(|p| p < alpha) {
            continue;
        }
        // Best x level for each trace level, and best trace level for each x level.
        let mut best_x: Vec<Option<usize>> = Vec::new();
        for row in &table.means {
            best_x.push(best_index(row, direction));
        }
        let distinct_x: BTreeSet<usize> = best_x.iter().flatten().copied().collect();
        if distinct_x.len() > 1 {
            let parts: Vec<String> = best_x
                .iter()
                .enumerate()
                .filter_map(|(trace, best)| {
                    best.map(|x| {
                        format!(
                            "at {} {} it is {}",
                            table.trace_factor, table.trace_levels[trace], table.x_levels[x]
                        )
                    })
                })
                .collect();
            reading.push(format!(
                "The {} level of {} depends on {} ({} × {} interaction, {}): {}.",
                direction_words(direction),
                table.x_factor,
                table.trace_factor,
                table.x_factor,
                table.trace_factor,
                p_equals(table.interaction_p.unwrap_or(f64::NAN)),
                parts.join("; ")
            ));
            continue;
        }
        let columns = table.x_levels.len();
        let best_trace: Vec<Option<usize>> = (0..columns)
            .map(|x| {
                let column: Vec<Option<f64>> = table.means.iter().map(|row| row[x]).collect();
                best_index(&column, direction)
            })
            .collect();
        let distinct_trace: BTreeSet<usize> = best_trace.iter().flatten().copied().collect();
        if distinct_trace.len() > 1 {
            let parts: Vec<String> = best_trace
                .iter()
                .enumerate()
                .filter_map(|(x, best)| {
                    best.map(|trace| {
                        format!(
                            "at {} {} it is {}",
                            table.x_factor, table.x_levels[x], table.trace_levels[trace]
                        )
                    })
                })
                .collect();
            reading.push(format!(
                "The {} level of {} depends on {} ({} × {} interaction, {}): {}.",
                direction_words(direction),
                table.trace_factor,
                table.x_factor,
                table.trace_factor,
                table.x_factor,
                p_equals(table.interaction_p.unwrap_or(f64::NAN)),
                parts.join("; ")
            ));
        } else {
            reading.push(format!(
                "{} and {} interact ({}), but the {} level of each is the same whatever the other is set to.",
                table.x_factor,
                table.trace_factor,
                p_equals(table.interaction_p.unwrap_or(f64::NAN)),
                direction_words(direction)
            ));
        }
    }
    reading
}

pub(super) struct SummaryInput<'a> {
    pub(super) response: &'a str,
    pub(super) used: &'a [UsedFactor],
    pub(super) model: Option<&'a KWayModel>,
    pub(super) two_level: Option<&'a TwoLevelOutcome>,
    pub(super) reduced: Option<&'a ReducedModel>,
    pub(super) direction: Option<Direction>,
    pub(super) confidence: f64,
    pub(super) reading: &'a [String],
    pub(super) highest: Option<&'a ObservedCombination>,
    pub(super) lowest: Option<&'a ObservedCombination>,
}

pub(super) fn manager_summary(input: &SummaryInput<'_>) -> Vec<String> {
    let mut lines = Vec::new();
    let treatments: Vec<&UsedFactor> = input.used.iter().filter(|f| !f.is_block).collect();
    let percent = round_for_text(input.confidence * 100.0, 3);
    let mut matter: Vec<String> = Vec::new();
    let mut effect_sentences = Vec::new();
    if let Some(two) = input.two_level.filter(|two| two.grand_mean.is_some()) {
        let mut active: Vec<&TwoLevelEffect> = two.effects.iter().filter(|e| e.active).collect();
        active.sort_by(|a, b| b.effect.abs().total_cmp(&a.effect.abs()));
        for effect in &active {
            matter.push(effect.term.replace(':', " × "));
            let letters = effect.name.chars().count();
            if letters == 1 {
                let change = if effect.effect >= 0.0 { "raises" } else { "lowers" };
                // A lowering is said as a positive amount, and so is its interval.
                let bounds = match (effect.low, effect.high) {
                    (Some(low), Some(high)) if effect.effect < 0.0 => (Some(-high), Some(-low)),
                    other => other,
                };
                let interval = match bounds {
                    (Some(low), Some(high)) => format!(
                        " ({percent}% interval {} to {})",
                        round_for_text(low, 3),
                        round_for_text(high, 3)
                    ),
                    _ => String::new(),
                };
                effect_sentences.push(format!(
                    "Moving {} from its low to its high level {change} {} by {} on average{interval}.",
                    effect.term,
                    input.response,
                    round_for_text(effect.effect.abs(), 3)
                ));
            } else {
                effect_sentences.push(format!(
                    "The interaction {} changes {} by {} (effect); the effect of each of these factors depends on the others' settings.",
                    effect.term.replace(':', " × "),
                    input.response,
                    round_for_text(effect.effect, 3)
                ));
            }
        }
    } else if let Some(model) = input.model {
        let alpha = 1.0 - input.confidence;
        let table = &model.type_iii;
        for line in table {
            let is_block = input.used.iter().any(|f| f.is_block && f.name == line.source);
            if !is_block && line.p_value.is_some_and(|p| p < alpha) {
                matter.push(line.source.replace(':', " × "));
            }
        }
        for means in &model.ls_means {
            if !matter.contains(&means.factor) {
                continue;
            }
            effect_sentences.push(ls_means_sentence(means, input.direction));
        }
    }
    let quiet: Vec<String> = treatments
        .iter()
        .filter(|factor| !matter.iter().any(|m| m.split(" × ").any(|part| part == factor.name)))
        .map(|factor| factor.name.clone())
        .collect();
    if matter.is_empty() {
        lines.push(format!(
            "None of the {} factors shows a clear effect on {} at {percent}% confidence; differences this size could be chance.",
            treatments.len(),
            input.response
        ));
    } else {
        let mut sentence = format!("What matters for {}: {}.", input.response, matter.join(", "));
        if !quiet.is_empty() {
            sentence.push_str(&format!(" No clear effect from {}.", quiet.join(", ")));
        }
        lines.push(sentence);
    }
    lines.extend(effect_sentences);
    lines.extend(input.reading.iter().filter(|line| line.contains("depends on")).cloned());
    if input.direction.is_none() {
        if let (Some(high), Some(low)) = (input.highest, input.lowest) {
            lines.push(format!(
                "No direction was given for {}, so no settings are called best or recommended. Among the combinations run, the highest average {} was {} at {} and the lowest {} at {}. Say whether higher, lower or a target value is better to get recommended settings.",
                input.response,
                input.response,
                round_for_text(high.mean, 4),
                settings_text(&high.settings),
                round_for_text(low.mean, 4),
                settings_text(&low.settings)
            ));
        }
    }
    if let Some(best) = input.reduced.and_then(|reduced| reduced.best.as_ref()) {
        let settings: Vec<String> = best
            .settings
            .iter()
            .map(|(factor, level)| format!("{factor} {level}"))
            .collect();
        let direction = input.direction.unwrap_or(Direction::HigherIsBetter);
        let mut sentence = format!(
            "Recommended settings ({} {} among the combinations run): {}; predicted {} {}",
            direction_words(direction),
            input.response,
            settings.join(", "),
            input.response,
            round_for_text(best.mean, 4)
        );
        if let (Some(mean), Some(single)) = (best.mean_interval, best.single_run_interval) {
            sentence.push_str(&format!(
                " ({percent}% interval for the average {} to {}; a single run {} to {})",
                round_for_text(mean.0, 4),
                round_for_text(mean.1, 4),
                round_for_text(single.0, 4),
                round_for_text(single.1, 4)
            ));
        }
        sentence.push('.');
        if !quiet.is_empty() {
            sentence.push_str(" Set the other factors for cost or convenience.");
        }
        lines.push(sentence);
    }
    lines
}

/// The worst of the values: lowest, highest, or furthest from the target.
pub(super) fn worst_index(values: &[Option<f64>], direction: Direction) -> Option<usize> {
    match direction {
        Direction::HigherIsBetter => best_index(values, Direction::LowerIsBetter),
        Direction::LowerIsBetter => best_index(values, Direction::HigherIsBetter),
        Direction::Target(target) => {
            let distances: Vec<Option<f64>> = values.iter().map(|v| v.map(|v| (v - target).abs())).collect();
            best_index(&distances, Direction::HigherIsBetter)
        }
    }
}

/// The factor and level pairs of a combination, in words.
fn settings_text(settings: &[(String, String)]) -> String {
    settings
        .iter()
        .map(|(factor, level)| format!("{factor} {level}"))
        .collect::<Vec<_>>()
        .join(", ")
}

/// One factor's least-squares means in a sentence: best and worst for a direction (or
/// highest and lowest without one), and the levels whose mean cannot be estimated from
/// the combinations run; never a best equal to a worst.
pub(super) fn ls_means_sentence(means: &super::results::LsMeansLine, direction: Option<Direction>) -> String {
    let values: Vec<Option<f64>> = means.means.iter().map(|m| m.estimate).collect();
    let not_estimable: Vec<&str> = means
        .means
        .iter()
        .filter(|m| m.estimate.is_none())
        .map(|m| m.label.as_str())
        .collect();
    let n_estimable = values.len() - not_estimable.len();
    if n_estimable < 2 {
        return format!(
            "{}: its averages over the other factors cannot be compared, because the combinations run do not estimate them (not estimable: {}).",
            means.factor,
            not_estimable.join(", ")
        );
    }
    let (top, bottom, top_word, bottom_word) = match direction {
        Some(direction) => (
            best_index(&values, direction),
            worst_index(&values, direction),
            "best",
            "worst",
        ),
        None => (
            best_index(&values, Direction::HigherIsBetter),
            best_index(&values, Direction::LowerIsBetter),
            "highest",
            "lowest",
        ),
    };
    let (Some(top), Some(bottom)) = (top, bottom) else {
        return String::new();
    };
    let mut sentence = if top == bottom {
        format!(
            "{}: every level has the same average ({}).",
            means.factor,
            round_for_text(values[top].unwrap_or(f64::NAN), 4)
        )
    } else {
        format!(
            "{}: {} is {top_word} (average {}), {} {bottom_word} (average {}), a difference of {}.",
            means.factor,
            means.means[top].label,
            round_for_text(values[top].unwrap_or(f64::NAN), 4),
            means.means[bottom].label,
            round_for_text(values[bottom].unwrap_or(f64::NAN), 4),
            round_for_text((values[top].unwrap_or(0.0) - values[bottom].unwrap_or(0.0)).abs(), 3)
        )
    };
    if !not_estimable.is_empty() {
        sentence.push_str(&format!(
            " The average at {} cannot be estimated from the combinations run.",
            not_estimable.join(", ")
        ));
    }
    sentence
}
