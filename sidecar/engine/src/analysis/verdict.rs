//! Plain-language reading of a one-way fit, for managers.
//!
//! The sentences say whether the conditions differ at the chosen
//! confidence, which condition is highest and lowest, and the largest
//! difference with its interval in the response's units.

use serde::Serialize;

use crate::analysis::assessment::{Assessment, LeadAnalysis};
use crate::analysis::comparisons::PairFamily;
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
        let groups: Vec<String> = family
            .letters
            .iter()
            .map(|(name, letters)| format!("{name} [{letters}]"))
            .collect();
        details.push(format!(
            "Grouping ({}): conditions sharing a letter were not found different — {}.",
            family.method.label(),
            groups.join(", ")
        ));
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
}
