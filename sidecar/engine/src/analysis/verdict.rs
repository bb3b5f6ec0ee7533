//! Plain-language reading of a one-way fit, for managers.
//!
//! The sentences say whether the conditions differ at the chosen
//! confidence, which condition is highest and lowest, and the largest
//! difference with its interval in the response's units.

use serde::Serialize;

use crate::analysis::assessment::{Assessment, LeadAnalysis};
use crate::analysis::comparisons::PairFamily;
use crate::analysis::letters::alike_sets;
use crate::analysis::oneway::{OneWayFit, PairDifference};

/// The reading of one response.
#[derive(Debug, Clone, Serialize)]
pub struct Verdict {
    /// True when the F test rejects equal means at the confidence level; None when undefined.
    pub conditions_differ: Option<bool>,
    /// One sentence: do the conditions differ.
    pub headline: String,
    /// Further sentences.
    pub details: Vec<String>,
}

/// Formats a number with about `digits` significant digits, for sentences.
pub fn round_for_text(value: f64, digits: usize) -> String {
    if !value.is_finite() {
        return if value.is_nan() {
            "not defined".into()
        } else {
            format!("{value}")
        };
    }
    if value == 0.0 {
        return "0".into();
    }
    let magnitude = value.abs().log10().floor() as i32;
    let decimals = (digits as i32 - 1 - magnitude).clamp(0, 12) as usize;
    let text = format!("{value:.decimals$}");
    if text.contains('.') {
        text.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        text
    }
}

/// Formats a p-value for a sentence.
pub fn p_for_text(p: f64) -> String {
    if p.is_nan() {
        "not defined".into()
    } else if p < 0.0001 {
        "below 0.0001".into()
    } else {
        round_for_text(p, 2)
    }
}

fn with_unit(value: f64, unit: Option<&str>) -> String {
    match unit {
        Some("%") => format!("{}%", round_for_text(value, 4)),
        Some(unit) => format!("{} {unit}", round_for_text(value, 4)),
        None => round_for_text(value, 4),
    }
}

/// The pair family of the lead analysis, when it could be computed.
pub fn lead_family(assessment: &Assessment) -> Option<&PairFamily> {
    match assessment.lead {
        LeadAnalysis::UnequalSpreads => assessment.games_howell.as_ref(),
        _ => assessment.tukey_kramer.as_ref(),
    }
}

/// The lead analysis's p-value for "all conditions alike".
pub fn lead_p(fit: &OneWayFit, assessment: Option<&Assessment>) -> f64 {
    match assessment.map(|assessment| (assessment.lead, assessment)) {
        Some((LeadAnalysis::UnequalSpreads, assessment)) => assessment.welch.as_ref().map_or(f64::NAN, |welch| welch.p),
        Some((LeadAnalysis::RankBased, assessment)) => assessment.rank_based.as_ref().map_or(f64::NAN, |ranks| ranks.p),
        _ => fit.between().p.unwrap_or(f64::NAN),
    }
}

/// The lead analysis's name, for sentences and tables.
pub fn lead_name(assessment: Option<&Assessment>) -> &'static str {
    match assessment.map(|assessment| assessment.lead) {
        Some(LeadAnalysis::UnequalSpreads) => "Welch's ANOVA with Games-Howell pairs",
        Some(LeadAnalysis::RankBased) => "Kruskal-Wallis with Dunn's pairs",
        _ => "one-way ANOVA with Tukey-Kramer pairs",
    }
}

/// Reads a fit in plain words, leading with the analysis whose assumptions hold.
pub fn read_fit(response: &str, unit: Option<&str>, fit: &OneWayFit, assessment: Option<&Assessment>) -> Verdict {
    let percent = round_for_text(fit.confidence * 100.0, 3);
    let alpha = 1.0 - fit.confidence;
    let p = lead_p(fit, assessment);
    let conditions_differ = if p.is_nan() { None } else { Some(p < alpha) };
    let headline = match conditions_differ {
        Some(true) => format!(
            "The conditions differ in {response}: the trial shows it at {percent}% confidence (p = {}).",
            p_for_text(p)
        ),
        Some(false) => format!(
            "The trial does not show that the conditions differ in {response} at {percent}% confidence (p = {}); differences this size could be chance.",
            p_for_text(p)
        ),
        None => format!(
            "Whether the conditions differ in {response} cannot be judged: there is no spread within conditions to compare against (each needs repeated values)."
        ),
    };
    let mut details = Vec::new();
    if let Some(assessment) = assessment {
        details.push(format!(
            "Analysis used: {}. {}",
            lead_name(Some(assessment)),
            assessment.lead_reason
        ));
    }
    if let (Some(highest), Some(lowest)) = (
        fit.conditions.iter().max_by(|a, b| a.mean.total_cmp(&b.mean)),
        fit.conditions.iter().min_by(|a, b| a.mean.total_cmp(&b.mean)),
    ) {
        details.push(format!(
            "Highest average: {} ({}, from {} values). Lowest average: {} ({}, from {} values).",
            highest.name,
            with_unit(highest.mean, unit),
            highest.n,
            lowest.name,
            with_unit(lowest.mean, unit),
            lowest.n
        ));
    }
    let family = assessment.and_then(lead_family);
    if let Some(best) = assessment.and_then(|assessment| assessment.best.as_ref()) {
        let family_percent = round_for_text(best.family_confidence * 100.0, 3);
        details.push(if best.could_be_best.len() == 1 {
            format!("Best condition: {} is the best at {family_percent}% family confidence.", best.could_be_best[0])
        } else {
            format!(
                "Best condition: the trial cannot separate {} — any of them could be the best at {family_percent}% family confidence.",
                best.could_be_best.join(", ")
            )
        });
    }
    if let Some(largest) = largest_difference(fit) {
        let simultaneous = family.and_then(|family| {
            family
                .pairs
                .iter()
                .find(|pair| pair.first == largest.first && pair.second == largest.second)
                .map(|pair| (pair.low, pair.high, family))
        });
        let (low, high, interval_kind) = match simultaneous {
            Some((low, high, family)) => (
                low,
                high,
                format!(
                    "{}% {} interval, allowing for all the pairs",
                    round_for_text(family.family_confidence * 100.0, 3),
                    family.method.label()
                ),
            ),
            None => (
                largest.low,
                largest.high,
                format!("{percent}% interval for this one pair"),
            ),
        };
        let (first, second, difference, low, high) = if largest.difference >= 0.0 {
            (&largest.first, &largest.second, largest.difference, low, high)
        } else {
            (&largest.second, &largest.first, -largest.difference, -high, -low)
        };
        let interval = if low.is_finite() && high.is_finite() {
            format!(
                " ({interval_kind}: {} to {})",
                with_unit(low, unit),
                with_unit(high, unit)
            )
        } else {
            String::new()
        };
        details.push(format!(
            "Largest difference: {first} minus {second} = {}{interval}.",
            with_unit(difference, unit)
        ));
    }
    if let Some(family) = family {
        details.push(told_apart_sentence(fit, family));
    }
    if let Some(assessment) = assessment {
        for reading in &assessment.checks.readings {
            details.push(format!("Check — {reading}"));
        }
    }
    if fit.pooled_sd.is_finite() {
        details.push(format!(
            "Run-to-run spread within a condition (pooled SD): {} on {} degrees of freedom.",
            with_unit(fit.pooled_sd, unit),
            fit.pooled_df
        ));
    }
    Verdict {
        conditions_differ,
        headline,
        details,
    }
}

/// Which conditions the trial could not tell apart, in words: the sets
/// behind the letters of [`PairFamily::letters`], each listed by name, and
/// the conditions found different from every other one named as such.
pub fn told_apart_sentence(fit: &OneWayFit, family: &PairFamily) -> String {
    let names: Vec<&str> = fit.conditions.iter().map(|condition| condition.name.as_str()).collect();
    let means: Vec<f64> = fit.conditions.iter().map(|condition| condition.mean).collect();
    let position = |name: &str| names.iter().position(|candidate| *candidate == name);
    let mut different = vec![vec![false; names.len()]; names.len()];
    for pair in family.pairs.iter().filter(|pair| pair.differ) {
        if let (Some(first), Some(second)) = (position(&pair.first), position(&pair.second)) {
            different[first][second] = true;
            different[second][first] = true;
        }
    }
    let sets = alike_sets(&means, &different);
    let basis = format!(
        "{}, allowing for all {} pairs at {}% confidence together",
        family.method.label(),
        family.pairs.len(),
        round_for_text(family.family_confidence * 100.0, 3)
    );
    let in_words = |set: &[usize]| {
        let members: Vec<&str> = set.iter().map(|&index| names[index]).collect();
        match members.split_last() {
            Some((last, rest)) if !rest.is_empty() => format!("{} and {last}", rest.join(", ")),
            Some((last, _)) => (*last).to_string(),
            None => String::new(),
        }
    };
    if sets.len() == 1 && sets[0].len() == names.len() {
        return format!("Told apart ({basis}): none — this trial could not tell any of the conditions apart.");
    }
    let alone: Vec<usize> = (0..names.len())
        .filter(|&index| {
            let holding: Vec<&Vec<usize>> = sets.iter().filter(|set| set.contains(&index)).collect();
            holding.len() == 1 && holding[0].len() == 1
        })
        .collect();
    if alone.len() == names.len() {
        return format!("Told apart ({basis}): every condition differs from every other.");
    }
    let groups: Vec<String> = sets
        .iter()
        .filter(|set| set.len() > 1)
        .map(|set| in_words(set))
        .collect();
    let mut sentence = format!("Could not be told apart ({basis}): {}.", groups.join("; "));
    match alone.len() {
        0 => {}
        1 => sentence.push_str(&format!(" {} differs from every other condition.", in_words(&alone))),
        _ => sentence.push_str(&format!(
            " {} each differ from every other condition.",
            in_words(&alone)
        )),
    }
    sentence
}

/// The pair with the largest absolute difference of means.
pub fn largest_difference(fit: &OneWayFit) -> Option<&PairDifference> {
    fit.pairs
        .iter()
        .max_by(|a, b| a.difference.abs().total_cmp(&b.difference.abs()))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn rounds_for_people() {
        assert_eq!(round_for_text(2.46813, 4), "2.468");
        assert_eq!(round_for_text(1234.5678, 4), "1235");
        assert_eq!(round_for_text(0.00012345, 3), "0.000123");
        assert_eq!(round_for_text(2.0, 4), "2");
        assert_eq!(p_for_text(0.00001), "below 0.0001");
        assert_eq!(p_for_text(0.0321), "0.032");
    }

    #[test]
    fn reads_a_clear_difference() {
        let names = vec!["slow".to_string(), "fast".to_string()];
        let fit = crate::analysis::oneway::fit_one_way(
            &names,
            &[0, 0, 0, 1, 1, 1],
            &[10.0, 10.2, 9.9, 12.0, 12.1, 11.8],
            0.95,
            &[],
        )
        .expect("fits");
        let verdict = read_fit("Hardness (HV)", Some("HV"), &fit, None);
        assert_eq!(verdict.conditions_differ, Some(true));
        assert!(
            verdict.headline.starts_with("The conditions differ"),
            "{}",
            verdict.headline
        );
        assert!(
            verdict.details[0].contains("Highest average: fast"),
            "{:?}",
            verdict.details
        );
        assert!(verdict.details[1].contains("fast minus slow"), "{:?}", verdict.details);
    }

    #[test]
    fn says_in_words_which_conditions_could_not_be_told_apart() {
        // Pooled SD 0.1 on 8 df, 3 runs each: the Tukey-Kramer least
        // significant difference is q(0.95; 4, 8) / sqrt(2) * 0.1 * sqrt(2/3)
        // = 4.529 / 1.414 * 0.0816 = 0.261 (q from the studentized range
        // table of the NIST/SEMATECH e-Handbook, section 7.4.7.1). So A-B
        // (0.2) and B-C (0.2) cannot be told apart, A-C (0.4) can, and D is
        // far from all.
        let names: Vec<String> = ["A", "B", "C", "D"].iter().map(|name| name.to_string()).collect();
        let groups = [0, 0, 0, 1, 1, 1, 2, 2, 2, 3, 3, 3];
        let sentence_for = |values: &[f64]| {
            let fit = crate::analysis::oneway::fit_one_way(&names, &groups, values, 0.95, &[]).expect("fits");
            let family = crate::analysis::comparisons::pooled_pairs(
                &fit,
                crate::analysis::comparisons::PairMethod::TukeyKramer,
                0.95,
            )
            .expect("pairs");
            told_apart_sentence(&fit, &family)
        };
        let values = [10.0, 10.1, 9.9, 10.2, 10.3, 10.1, 10.4, 10.5, 10.3, 20.0, 20.1, 19.9];
        assert_eq!(
            sentence_for(&values),
            "Could not be told apart (Tukey-Kramer, allowing for all 6 pairs at 95% confidence together): \
             B and C; A and B. D differs from every other condition."
        );
        // Far apart in every pair, and all alike.
        let spread = [10.0, 10.1, 9.9, 12.0, 12.1, 11.9, 14.0, 14.1, 13.9, 16.0, 16.1, 15.9];
        assert!(sentence_for(&spread).ends_with("every condition differs from every other."));
        let alike = [10.0, 10.1, 9.9, 10.0, 10.2, 9.8, 10.1, 9.9, 10.0, 9.9, 10.1, 10.0];
        assert!(sentence_for(&alike).ends_with("could not tell any of the conditions apart."));
    }
}
