//! Plain-language reading of a one-way fit, for managers.
//!
//! The sentences say whether the conditions differ at the chosen
//! confidence, which condition is highest and lowest, and the largest
//! difference with its interval in the response's units.

use serde::Serialize;

use crate::analysis::assessment::{Assessment, LeadAnalysis, Outlier};
use crate::analysis::comparisons::{ControlFamily, PairFamily, SimultaneousPair};
use crate::analysis::factorial::{CellLine, FactorInfo, FactorialOutcome, TwoLevelEffect};
use crate::analysis::letters::alike_sets;
use crate::analysis::oneway::{OneWayFit, PairDifference};
use crate::options::Direction;

/// The reading of one response.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Verdict {
    /// True when the F test rejects equal means at the confidence level; None when undefined.
    pub conditions_differ: Option<bool>,
    /// One sentence: do the conditions differ.
    pub headline: String,
    /// Further sentences.
    pub details: Vec<String>,
}

/// What a sentence says of a figure too large in magnitude for the arithmetic (beyond
/// about 1.8e308): the figure exists but cannot be held, so it is said in words.
pub const BEYOND_RANGE: &str = "beyond the range of the arithmetic";

/// Formats a number with about `digits` significant digits, for sentences.
pub fn round_for_text(value: f64, digits: usize) -> String {
    if !value.is_finite() {
        return if value.is_nan() {
            "not defined".into()
        } else if value > 0.0 {
            BEYOND_RANGE.into()
        } else {
            format!("{BEYOND_RANGE} (negative)")
        };
    }
    if value == 0.0 {
        return "0".into();
    }
    let magnitude = value.abs().log10().floor() as i32;
    // Very large or very small figures in powers of ten ("1.66e308"), never as hundreds
    // of digits or as a bare "0".
    if !(-12..15).contains(&magnitude) {
        let text = format!("{value:.precision$e}", precision = digits.saturating_sub(1));
        return match text.split_once('e') {
            Some((mantissa, exponent)) if mantissa.contains('.') => {
                format!("{}e{exponent}", mantissa.trim_end_matches('0').trim_end_matches('.'))
            }
            _ => text,
        };
    }
    let decimals = (digits as i32 - 1 - magnitude).clamp(0, 12) as usize;
    let text = format!("{value:.decimals$}");
    if text.contains('.') {
        text.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        text
    }
}

/// A p-value for a sentence, with its relation: "p = 0.032", "p < 0.0001" (below what
/// four decimals show), or "p not defined".
pub fn p_equals(p: f64) -> String {
    if p.is_nan() {
        "p not defined".into()
    } else if p < 0.0001 {
        "p < 0.0001".into()
    } else {
        format!("p = {}", round_for_text(p, 2))
    }
}

/// "1 value", "2 values": a count with its noun in the singular or the plural (the
/// plural made by adding "s").
pub fn count_of(count: impl TryInto<u64>, noun: &str) -> String {
    let count: u64 = count.try_into().unwrap_or(u64::MAX);
    if count == 1 {
        format!("1 {noun}")
    } else {
        format!("{count} {noun}s")
    }
}

pub(crate) fn with_unit(value: f64, unit: Option<&str>) -> String {
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
    // With one value per condition there is nothing within conditions to judge by, and a
    // rank test over single values must not decide it either.
    let single_values = fit.conditions.iter().all(|condition| condition.n <= 1);
    let p = if single_values {
        f64::NAN
    } else {
        lead_p(fit, assessment)
    };
    let conditions_differ = if p.is_nan() { None } else { Some(p < alpha) };
    let headline = match conditions_differ {
        Some(true) => format!(
            "The conditions differ in {response}: the trial shows it at {percent}% confidence ({}).",
            p_equals(p)
        ),
        Some(false) => format!(
            "The trial does not show that the conditions differ in {response} at {percent}% confidence ({}); differences this size could be chance.",
            p_equals(p)
        ),
        None if single_values => format!(
            "Whether the conditions differ in {response} cannot be judged: there is no spread within conditions to compare against (each condition needs repeated runs)."
        ),
        None if fit.conditions.iter().all(|condition| condition.sd == 0.0 || condition.n <= 1) => {
            let all_alike = fit
                .conditions
                .windows(2)
                .all(|pair| pair[0].mean == pair[1].mean);
            if all_alike {
                format!(
                    "Whether the conditions differ in {response} cannot be judged: every value in the column is the same, so there is nothing to compare. Check that the column holds the measurements (the 'responses' setting names the columns to analyse)."
                )
            } else {
                format!(
                    "Whether the conditions differ in {response} cannot be judged: the values repeat exactly within each condition, so there is no run-to-run spread to compare the differences against. Check the measurement's resolution or that the values were not copied down."
                )
            }
        }
        None => format!(
            "Whether the conditions differ in {response} cannot be judged: the analysis could not give a p-value (the notes of the analysis say which part failed and why)."
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
            "Highest average: {} ({}, from {}). Lowest average: {} ({}, from {}).",
            highest.name,
            with_unit(highest.mean, unit),
            count_of(highest.n, "value"),
            lowest.name,
            with_unit(lowest.mean, unit),
            count_of(lowest.n, "value")
        ));
    }
    let family = assessment.and_then(lead_family);
    if let Some(control) = assessment.and_then(|assessment| assessment.control.as_ref()) {
        if let Some(sentence) = control_sentence(control, unit) {
            details.push(sentence);
        }
    }
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
        // Pairs come with the higher average first: the difference reads as a positive amount.
        let (first, second, difference) = (&largest.first, &largest.second, largest.difference);
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
            match outliers_with_cells(&assessment.checks.outliers) {
                Some(named) if reading.starts_with("Outliers:") => details.push(format!("Check — {named}")),
                _ => details.push(format!("Check — {reading}")),
            }
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

/// The comparison with the control in one sentence: which conditions differ from it
/// and by how much, or, when none does, the nearest to doing so with its adjusted p.
/// `None` when the family has no rows.
pub fn control_sentence(control: &ControlFamily, unit: Option<&str>) -> Option<String> {
    if control.rows.is_empty() {
        return None;
    }
    let percent = round_for_text(control.family_confidence * 100.0, 3);
    let asking = match control.sides.as_str() {
        "higher" => "asking only which are higher, ",
        "lower" => "asking only which are lower, ",
        _ => "",
    };
    let opening = format!(
        "Against the control {} (Dunnett, {asking}{percent}% family confidence):",
        control.control
    );
    let moved = |row: &SimultaneousPair| {
        format!(
            "{} is {} by {}",
            row.first,
            if row.difference >= 0.0 { "higher" } else { "lower" },
            with_unit(row.difference.abs(), unit)
        )
    };
    let interval = |row: &SimultaneousPair| match (row.low.is_finite(), row.high.is_finite()) {
        (true, true) => format!("interval {} to {}", with_unit(row.low, unit), with_unit(row.high, unit)),
        (true, false) => format!("at least {} higher", with_unit(row.low, unit)),
        (false, true) => format!("at least {} lower", with_unit(-row.high, unit)),
        (false, false) => String::new(),
    };
    let differing: Vec<&SimultaneousPair> = control.rows.iter().filter(|row| row.differ).collect();
    let clearly = match control.sides.as_str() {
        "higher" => "is clearly higher than",
        "lower" => "is clearly lower than",
        _ => "differs clearly from",
    };
    if differing.is_empty() {
        // One-sided, the nearest is the nearest among those on the side asked about.
        let side_asked = |row: &&SimultaneousPair| match control.sides.as_str() {
            "higher" => row.difference > 0.0,
            "lower" => row.difference < 0.0,
            _ => true,
        };
        let Some(nearest) = control
            .rows
            .iter()
            .filter(side_asked)
            .min_by(|a, b| a.p_adjusted.total_cmp(&b.p_adjusted))
        else {
            let side = if control.sides == "lower" { "lower" } else { "higher" };
            return Some(format!("{opening} no condition {clearly} it; none averages {side}."));
        };
        let p = if nearest.p_adjusted.is_finite() {
            format!(" (adjusted {})", p_equals(nearest.p_adjusted))
        } else {
            String::new()
        };
        return Some(format!(
            "{opening} no condition {clearly} it; the nearest: {}{p}.",
            moved(nearest)
        ));
    }
    let listed: Vec<String> = differing
        .iter()
        .map(|row| {
            let range = interval(row);
            if range.is_empty() {
                moved(row)
            } else {
                format!("{} ({range})", moved(row))
            }
        })
        .collect();
    let others = control.rows.len() - differing.len();
    let rest = match others {
        0 => String::new(),
        1 => "; the other condition does not differ clearly from it".to_string(),
        _ => format!("; the other {others} conditions do not differ clearly from it"),
    };
    Some(format!("{opening} {}{rest}.", listed.join("; ")))
}

/// The outlier check with the cells of the values that stand out (the service fills
/// them in), so that the Summary says where to look. `None` when there are none or
/// their cells are not known.
fn outliers_with_cells(outliers: &[Outlier]) -> Option<String> {
    const LISTED: usize = 5;
    if outliers.is_empty() || outliers.iter().any(|outlier| outlier.cell.is_none()) {
        return None;
    }
    let mut places: Vec<String> = outliers
        .iter()
        .take(LISTED)
        .map(|outlier| {
            format!(
                "{} at {} ({})",
                round_for_text(outlier.value, 6),
                outlier.cell.as_deref().unwrap_or_default(),
                outlier.condition
            )
        })
        .collect();
    if outliers.len() > LISTED {
        places.push(format!("{} more listed with the model checks", outliers.len() - LISTED));
    }
    Some(if outliers.len() == 1 {
        format!(
            "Outliers: 1 value stands out beyond what chance allows: {}; check it before trusting the comparison.",
            places[0]
        )
    } else {
        format!(
            "Outliers: {} values stand out beyond what chance allows: {}; check them before trusting the comparison.",
            outliers.len(),
            places.join(", ")
        )
    })
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

/// The size of the largest effect a factorial reading found, in the response's units.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct EffectSize {
    /// What moves: a factor from one level to another, or an interaction.
    pub label: String,
    /// The change in the response's units.
    pub size: f64,
    /// Lower end of its interval, when there is one.
    pub low: Option<f64>,
    /// Upper end of its interval.
    pub high: Option<f64>,
}

/// The reading of a factorial outcome: the verdict and the figures a roll-up row shows.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FactorialReading {
    /// The verdict: headline and details.
    pub verdict: Verdict,
    /// Which analysis gave the tests: `two-level effects` or `factorial model (Type III)`.
    pub analysis: String,
    /// The factors and interactions found to matter, in the user's words.
    pub matter: Vec<String>,
    /// The smallest p-value among the treatment terms tested; `None` when none was tested.
    pub smallest_p: Option<f64>,
    /// The largest effect found to matter, with its interval.
    pub largest: Option<EffectSize>,
    /// The best settings among the combinations run, for the direction given; `None`
    /// with no direction (the reading then asks for one) or no cell means.
    pub best_settings: Option<String>,
}

/// Reads a factorial outcome in plain words: which factors and interactions matter, by
/// how much in the response's units with intervals, and the best settings among those
/// run (with no direction: the highest and lowest, and a request for a direction).
///
/// Returns `None` when the outcome holds neither a k-way model nor a two-level analysis
/// to read (the one-way comparison then leads).
///
/// The effects are taken from the two-level analysis when there is one (Yates's effects
/// tested on pure error, or judged by Lenth's method when unreplicated), otherwise from
/// the k-way model's Type III tests, where a factor's size is the spread of its
/// least-squares means. Block terms are never read as effects.
pub fn read_factorial(
    response: &str,
    unit: Option<&str>,
    outcome: &FactorialOutcome,
    direction: Option<Direction>,
) -> Option<FactorialReading> {
    let percent = round_for_text(outcome.confidence * 100.0, 3);
    let alpha = 1.0 - outcome.confidence;
    let two_level = outcome
        .two_level
        .as_ref()
        .filter(|two| two.grand_mean.is_some() && !two.effects.is_empty());
    let model = outcome.model.as_ref();
    if two_level.is_none() && model.is_none() {
        return None;
    }
    let blocks: Vec<&str> = outcome
        .factors
        .iter()
        .filter(|factor| factor.is_block)
        .map(|factor| factor.name.as_str())
        .collect();
    let treatments: Vec<&FactorInfo> = outcome.factors.iter().filter(|factor| !factor.is_block).collect();
    let mut matter: Vec<String> = Vec::new();
    let mut sizes: Vec<EffectSize> = Vec::new();
    let mut smallest_p: Option<f64> = None;
    let mut any_test = false;
    let analysis;
    if let Some(two) = two_level {
        analysis = if two.lenth.is_some() && two.pure_error_df == 0 {
            "two-level effects (Lenth's method)".to_string()
        } else {
            "two-level effects".to_string()
        };
        let mut active: Vec<&TwoLevelEffect> = Vec::new();
        for effect in &two.effects {
            if effect.p_value.is_some() || effect.lenth_t.is_some() {
                any_test = true;
            }
            if let Some(p) = effect.p_value {
                smallest_p = Some(smallest_p.map_or(p, |smallest: f64| smallest.min(p)));
            }
            if effect.active
                && !blocks
                    .iter()
                    .any(|block| effect.term.split(':').any(|part| part == *block))
            {
                active.push(effect);
            }
        }
        active.sort_by(|a, b| b.effect.abs().total_cmp(&a.effect.abs()));
        for effect in active {
            let words = effect.term.replace(':', " × ");
            matter.push(words.clone());
            let coding = treatments
                .iter()
                .find(|factor| factor.name == effect.term)
                .and_then(|factor| factor.coding.as_ref());
            let label = match coding {
                Some(coding) => format!("{} from {} to {}", effect.term, coding.low, coding.high),
                None => format!("the interaction {words}"),
            };
            sizes.push(EffectSize {
                label,
                size: effect.effect,
                low: effect.low,
                high: effect.high,
            });
        }
    } else {
        let model = model?;
        analysis = "factorial model (Type III)".to_string();
        for line in &model.type_iii {
            if blocks.contains(&line.source.as_str()) {
                continue;
            }
            if let Some(p) = line.p_value {
                any_test = true;
                smallest_p = Some(smallest_p.map_or(p, |smallest: f64| smallest.min(p)));
                if p < alpha {
                    matter.push(line.source.replace(':', " × "));
                }
            }
        }
        for means in &model.ls_means {
            if !matter.contains(&means.factor) {
                continue;
            }
            let estimable: Vec<(&str, f64)> = means
                .means
                .iter()
                .filter_map(|line| line.estimate.map(|estimate| (line.label.as_str(), estimate)))
                .collect();
            let lowest = estimable.iter().min_by(|a, b| a.1.total_cmp(&b.1));
            let highest = estimable.iter().max_by(|a, b| a.1.total_cmp(&b.1));
            if let (Some(lowest), Some(highest)) = (lowest, highest) {
                if lowest.0 != highest.0 {
                    sizes.push(EffectSize {
                        label: format!(
                            "{} from {} (lowest average) to {} (highest)",
                            means.factor, lowest.0, highest.0
                        ),
                        size: highest.1 - lowest.1,
                        low: None,
                        high: None,
                    });
                }
            }
        }
        sizes.sort_by(|a, b| b.size.abs().total_cmp(&a.size.abs()));
    }
    let largest = sizes.first().cloned();
    let conditions_differ = if !matter.is_empty() {
        Some(true)
    } else if any_test {
        Some(false)
    } else {
        None
    };
    let size_text = |size: &EffectSize| {
        let change = if size.size >= 0.0 { "raises" } else { "lowers" };
        // A lowering is said as a positive amount, and so is its interval.
        let bounds = match (size.low, size.high) {
            (Some(low), Some(high)) if size.size < 0.0 && !size.label.starts_with("the interaction") => {
                (Some(-high), Some(-low))
            }
            other => other,
        };
        let interval = match bounds {
            (Some(low), Some(high)) => format!(
                " ({percent}% interval {} to {})",
                with_unit(low, unit),
                with_unit(high, unit)
            ),
            _ => String::new(),
        };
        if size.label.starts_with("the interaction") {
            format!("{} changes it by {}{interval}", size.label, with_unit(size.size, unit))
        } else {
            format!(
                "moving {} {change} it by {}{interval}",
                size.label,
                with_unit(size.size.abs(), unit)
            )
        }
    };
    let headline = match conditions_differ {
        Some(true) => {
            let verb = if matter.len() == 1 { "affects" } else { "affect" };
            let mut sentence = format!(
                "{} {verb} {response} at {percent}% confidence (factorial model)",
                join_words(&matter)
            );
            if let Some(largest) = &largest {
                sentence.push_str(&format!("; the largest: {}", size_text(largest)));
            }
            sentence.push('.');
            sentence
        }
        Some(false) => format!(
            "The factorial model does not show that any of the {} factors or their interactions affects {response} at {percent}% confidence{}; differences this size could be chance.",
            treatments.len(),
            smallest_p.map_or_else(String::new, |p| format!(" (smallest {})", p_equals(p)))
        ),
        None => format!(
            "Whether the factors affect {response} cannot be judged: the factorial model has no error to test against (no replicates, centre points or spare degrees of freedom)."
        ),
    };
    let mut details = Vec::new();
    for size in sizes.iter().skip(1) {
        let text = size_text(size);
        let mut chars = text.chars();
        let capitalised = chars
            .next()
            .map(|first| first.to_uppercase().collect::<String>() + chars.as_str())
            .unwrap_or_default();
        details.push(format!("{capitalised}."));
    }
    // The headline gives the largest effect, the lines above give the others with their
    // intervals, and the lines below give the highest and lowest combinations: the
    // reading's own sentences for them are not repeated.
    let said_effects: Vec<String> = sizes
        .iter()
        .map(|size| match size.label.strip_prefix("the interaction ") {
            Some(term) => format!("The interaction {term} changes"),
            None => {
                let factor = size.label.split(" from ").next().unwrap_or(&size.label);
                format!("Moving {factor} from its low to its high level")
            }
        })
        .collect();
    for line in &outcome.summary {
        if direction.is_none() && (line.starts_with("Recommended settings") || line.contains(" is best (")) {
            continue;
        }
        if said_effects.iter().any(|start| line.starts_with(start.as_str())) {
            continue;
        }
        if direction.is_none()
            && (line.starts_with("No direction was given") || line.starts_with("Among the combinations run"))
        {
            continue;
        }
        details.push(line.clone());
    }
    // The combinations run, blocks pooled: (settings in words, average, values).
    let mut cells: Vec<(String, f64, usize)> = Vec::new();
    for cell in model
        .map(|model| {
            model
                .cells
                .iter()
                .filter(|cell| cell.n > 0 && cell.mean.is_finite())
                .collect::<Vec<&CellLine>>()
        })
        .unwrap_or_default()
    {
        let settings = outcome
            .factors
            .iter()
            .zip(&cell.levels)
            .filter(|(factor, _)| !factor.is_block)
            .map(|(factor, level)| format!("{} {level}", factor.name))
            .collect::<Vec<_>>()
            .join(", ");
        match cells.iter_mut().find(|(known, _, _)| *known == settings) {
            Some((_, mean, n)) => {
                let total = *n + cell.n;
                *mean += (cell.mean - *mean) * cell.n as f64 / total as f64;
                *n = total;
            }
            None => cells.push((settings, cell.mean, cell.n)),
        }
    }
    let mut best_settings = None;
    match direction {
        None => {
            let highest = cells.iter().max_by(|a, b| a.1.total_cmp(&b.1));
            let lowest = cells.iter().min_by(|a, b| a.1.total_cmp(&b.1));
            if let (Some(highest), Some(lowest)) = (highest, lowest) {
                details.push(format!(
                    "Highest {response} among the combinations run: {} ({}); lowest: {} ({}). No best settings are chosen without a direction: set one for {response} (higher, lower or a target).",
                    highest.0,
                    with_unit(highest.1, unit),
                    lowest.0,
                    with_unit(lowest.1, unit)
                ));
            }
        }
        Some(direction) => {
            let better = |candidate: f64, incumbent: f64| match direction {
                Direction::HigherIsBetter => candidate > incumbent,
                Direction::LowerIsBetter => candidate < incumbent,
                Direction::Target(target) => (candidate - target).abs() < (incumbent - target).abs(),
            };
            let mut best: Option<&(String, f64, usize)> = None;
            for cell in &cells {
                if best.is_none_or(|incumbent| better(cell.1, incumbent.1)) {
                    best = Some(cell);
                }
            }
            if let Some((settings, mean, n)) = best {
                details.push(format!(
                    "Best settings among the combinations run: {settings} (average {}, from {}).",
                    with_unit(*mean, unit),
                    count_of(*n, "value")
                ));
                best_settings = Some(settings.clone());
            }
            if let Some(prediction) = outcome.reduced.as_ref().and_then(|reduced| reduced.best.as_ref()) {
                if !prediction.was_run {
                    details.push(
                        "The model's recommended settings were not among the runs: their prediction lies outside the trial and needs a confirming run.".to_string(),
                    );
                }
            }
        }
    }
    Some(FactorialReading {
        verdict: Verdict {
            conditions_differ,
            headline,
            details,
        },
        analysis,
        matter,
        smallest_p,
        largest,
        best_settings,
    })
}

/// Joins words as a list: `a`, `a and b`, `a, b and c`.
fn join_words(words: &[String]) -> String {
    match words {
        [] => String::new(),
        [only] => only.clone(),
        [init @ .., last] => format!("{} and {last}", init.join(", ")),
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

    /// The comparison with a control said in one sentence. Reference: scipy 1.17.1,
    /// `scipy.stats.dunnett(primer, two_coats, control=standard)`: two-sided adjusted p
    /// (6.66194322e-09, see below) and 0.132991726, 95% intervals (2.53759435, 3.51240565) and
    /// (-0.11240565, 0.86240565); with `alternative='greater'` the first's lower bound
    /// is 2.61634882; with the second group lowered (49.6, 49.1, 49.9, 49.3) and
    /// `alternative='less'`, p = (1.0, 0.00736587) and its upper bound -0.21589423.
    #[test]
    fn control_sentence_names_what_differs_from_the_control() {
        use crate::analysis::comparisons::against_control;
        let names: Vec<String> = ["Standard", "Primer", "Two coats"]
            .iter()
            .map(|name| name.to_string())
            .collect();
        let fit_of = |two_coats: [f64; 4]| {
            let values = [50.1, 50.4, 49.8, 50.2, 50.0, 53.0, 53.3, 52.8, 53.4];
            let values: Vec<f64> = values.iter().copied().chain(two_coats).collect();
            let groups = [0, 0, 0, 0, 0, 1, 1, 1, 1, 2, 2, 2, 2];
            crate::analysis::oneway::fit_one_way(&names, &groups, &values, 0.95, &[]).expect("fits")
        };
        let fit = fit_of([50.6, 50.1, 50.9, 50.3]);
        let two_sided = against_control(&fit, "Standard", None, 0.95).expect("dunnett");
        // scipy integrates the multivariate t by randomised quasi-Monte Carlo, good to
        // about 1e-3 in the critical value; the project's own Dunnett values are checked
        // to full precision in `stats::dunnett`.
        let primer = &two_sided.rows[0];
        assert!(
            (primer.low - 2.53759435).abs() < 2e-3 && (primer.high - 3.51240565).abs() < 2e-3,
            "{primer:?}"
        );
        // In the far tail scipy's 6.66e-9 lies below the pair's own unadjusted p
        // (2 * scipy.stats.t.sf(15.99320698, 10) = 1.8853395550745193e-08), which an
        // adjusted p cannot; the adjusted p lies between that and the Bonferroni bound.
        assert!(
            (1.8853395550745193e-08..=3.770679110149039e-08).contains(&primer.p_adjusted),
            "{primer:?}"
        );
        assert!(
            (two_sided.rows[1].p_adjusted - 0.132991726).abs() < 2e-3,
            "{:?}",
            two_sided.rows[1]
        );
        let sentence = control_sentence(&two_sided, Some("GU")).expect("rows");
        assert_eq!(
            sentence,
            format!(
                "Against the control Standard (Dunnett, 95% family confidence): Primer is higher by 3.025 GU (interval {} GU to {} GU); the other condition does not differ clearly from it.",
                round_for_text(primer.low, 4),
                round_for_text(primer.high, 4)
            )
        );
        let higher = against_control(&fit, "Standard", Some(Direction::HigherIsBetter), 0.95).expect("dunnett");
        let sentence = control_sentence(&higher, None).expect("rows");
        assert!(
            sentence.starts_with("Against the control Standard (Dunnett, asking only which are higher, 95% family confidence): Primer is higher by 3.025 (at least 2.616 higher)"),
            "{sentence}"
        );
        // Asking which are lower: none is clearly lower and none averages lower.
        let lower = against_control(&fit, "Standard", Some(Direction::LowerIsBetter), 0.95).expect("dunnett");
        let sentence = control_sentence(&lower, None).expect("rows");
        assert!(
            sentence.ends_with("no condition is clearly lower than it; none averages lower."),
            "{sentence}"
        );
        // Two coats lowered: it is clearly lower, Primer not.
        let fit = fit_of([49.6, 49.1, 49.9, 49.3]);
        let lower = against_control(&fit, "Standard", Some(Direction::LowerIsBetter), 0.95).expect("dunnett");
        let two_coats = &lower.rows[1];
        assert!((two_coats.high + 0.21589423).abs() < 2e-3, "{two_coats:?}");
        assert!((two_coats.p_adjusted - 0.00736587).abs() < 1e-3, "{two_coats:?}");
        let sentence = control_sentence(&lower, None).expect("rows");
        assert!(
            sentence.ends_with(&format!(
                "Two coats is lower by 0.625 (at least {} lower); the other condition does not differ clearly from it.",
                round_for_text(-two_coats.high, 4)
            )),
            "{sentence}"
        );
    }

    #[test]
    fn rounds_for_people() {
        assert_eq!(round_for_text(2.46813, 4), "2.468");
        assert_eq!(round_for_text(1234.5678, 4), "1235");
        assert_eq!(round_for_text(0.00012345, 3), "0.000123");
        assert_eq!(round_for_text(2.0, 4), "2");
        // Far from 1, powers of ten; beyond the largest double, words (never "inf").
        assert_eq!(round_for_text(1.66e308, 4), "1.66e308");
        assert_eq!(round_for_text(-2.795e-303, 4), "-2.795e-303");
        assert_eq!(round_for_text(f64::INFINITY, 4), BEYOND_RANGE);
        assert_eq!(
            round_for_text(f64::NEG_INFINITY, 4),
            format!("{BEYOND_RANGE} (negative)")
        );
        assert_eq!(round_for_text(f64::NAN, 4), "not defined");
        // Wording of p-values in sentences (common practice: "p < 0.0001" below four
        // decimals, two significant digits otherwise).
        assert_eq!(p_equals(0.00001), "p < 0.0001");
        assert_eq!(p_equals(0.0321), "p = 0.032");
        assert_eq!(count_of(1, "value"), "1 value");
        assert_eq!(count_of(3, "value"), "3 values");
        assert_eq!(count_of(1, "value"), "1 value");
        assert_eq!(count_of(3, "value"), "3 values");
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

    #[test]
    fn single_values_are_never_judged_by_a_rank_test() {
        let names = vec!["a".to_string(), "b".to_string(), "c".to_string()];
        let fit = crate::analysis::oneway::fit_one_way(&names, &[0, 1, 2], &[1.0, 5.0, 9.0], 0.95, &[]).expect("fits");
        let verdict = read_fit("Gloss", None, &fit, None);
        assert_eq!(verdict.conditions_differ, None);
        assert!(verdict.headline.contains("cannot be judged"), "{}", verdict.headline);
    }

    /// The factorial outcome of a replicated 2^2 (Temperature 150/180, Pressure 2/4, two
    /// runs a cell) with the given leak rates, records in standard order twice over.
    fn replicated_two_by_two(values: &[f64]) -> crate::analysis::factorial::FactorialOutcome {
        use crate::analysis::factorial::{analyse_factorial, FactorData, FactorialData, FactorialOptions};
        let temperature = vec!["150".to_string(), "180".to_string()];
        let pressure = vec!["2".to_string(), "4".to_string()];
        let temperature_of = [0, 0, 1, 1, 0, 0, 1, 1];
        let pressure_of = [0, 0, 0, 0, 1, 1, 1, 1];
        let data = FactorialData {
            factors: vec![
                FactorData {
                    name: "Temperature",
                    levels: &temperature,
                    level_of_record: &temperature_of,
                    is_block: false,
                },
                FactorData {
                    name: "Pressure",
                    levels: &pressure,
                    level_of_record: &pressure_of,
                    is_block: false,
                },
            ],
            response_name: "Leak rate (ccm)",
            values,
        };
        analyse_factorial(&data, &FactorialOptions::default()).expect("a factorial outcome")
    }

    /// A replicated 2^2 built so that the effects are known by arithmetic: a two-level
    /// effect is the mean at the high level minus the mean at the low level (the
    /// definition used throughout the NIST/SEMATECH e-Handbook's two-level designs; common
    /// practice). Here Temperature's is 4 exactly and
    /// Pressure's and the interaction's are 0 exactly, each cell holding the same two
    /// values apart from Temperature's shift.
    #[test]
    fn reads_a_factorial_by_its_effects_and_its_direction() {
        let outcome = replicated_two_by_two(&[10.0, 10.2, 14.0, 14.2, 10.0, 10.2, 14.0, 14.2]);
        let reading = read_factorial("Leak rate (ccm)", Some("ccm"), &outcome, Some(Direction::LowerIsBetter))
            .expect("a reading");
        assert_eq!(reading.matter, vec!["Temperature".to_string()]);
        assert_eq!(reading.verdict.conditions_differ, Some(true));
        let largest = reading.largest.as_ref().expect("a largest effect");
        assert!((largest.size - 4.0).abs() < 1e-9, "{largest:?}");
        assert!(
            reading
                .verdict
                .headline
                .starts_with("Temperature affects Leak rate (ccm)"),
            "{}",
            reading.verdict.headline
        );
        assert!(
            reading.verdict.headline.contains("4 ccm"),
            "{}",
            reading.verdict.headline
        );
        let best = reading
            .best_settings
            .as_deref()
            .expect("best settings with a direction");
        assert!(best.contains("Temperature 150"), "{best}");
        let undirected = read_factorial("Leak rate (ccm)", Some("ccm"), &outcome, None).expect("a reading");
        assert_eq!(undirected.best_settings, None);
        assert!(
            undirected
                .verdict
                .details
                .iter()
                .any(|line| line.contains("No best settings are chosen without a direction")),
            "{:?}",
            undirected.verdict.details
        );
    }

    /// The same replicated 2^2 turned round, so that Temperature's high level lowers the
    /// response: its effect is -4 exactly (mean at 180 minus mean at 150, the e-Handbook's
    /// definition; common practice), and the reading says it as a lowering by a positive
    /// amount with its interval as positive amounts. The interval: each cell holds 10.0 and
    /// 10.2 (or 6.0 and 6.2), so the pure-error mean square is 0.08 / 4 = 0.02 on 4 df, the
    /// effect's SE is 2·sqrt(0.02 / 8) = 0.1, and t(0.975, 4) = 2.7764451 (scipy 1.17.1
    /// `stats.t.ppf(0.975, 4)`), giving 4 ± 0.27764 = 3.7224 to 4.2776 (scipy 1.17.1).
    #[test]
    fn a_lowering_effect_is_said_as_lowers_it_by_with_a_positive_interval() {
        let outcome = replicated_two_by_two(&[10.0, 10.2, 6.0, 6.2, 10.0, 10.2, 6.0, 6.2]);
        let reading = read_factorial("Leak rate (ccm)", Some("ccm"), &outcome, Some(Direction::LowerIsBetter))
            .expect("a reading");
        let largest = reading.largest.as_ref().expect("a largest effect");
        assert!((largest.size + 4.0).abs() < 1e-9, "{largest:?}");
        let headline = &reading.verdict.headline;
        assert!(
            headline.contains(
                "moving Temperature from 150 to 180 lowers it by 4 ccm (95% interval 3.722 ccm to 4.278 ccm)"
            ),
            "{headline}"
        );
        assert!(!headline.contains("by -"), "{headline}");
        let best = reading
            .best_settings
            .as_deref()
            .expect("best settings with a direction");
        assert!(best.contains("Temperature 180"), "{best}");
    }
}
