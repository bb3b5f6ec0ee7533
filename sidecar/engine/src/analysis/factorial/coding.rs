//! Preparing the data: the factors as used (levels with usable values, in display order) and
//! the two-level coding of the treatment factors (the rule is in the parent module's documentation).

use crate::stats::two_level::FACTOR_LETTERS;

use super::results::{FactorInfo, TwoLevelCoding};
use super::FactorialData;

/// A factor as used here: its levels after dropping those without usable values.
pub(super) struct UsedFactor {
    pub(super) table_index: usize,
    pub(super) name: String,
    pub(super) is_block: bool,
    /// raw level index -> used level index
    pub(super) remap: Vec<Option<usize>>,
    pub(super) level_names: Vec<String>,
}

/// How the treatment factors code to ±1.
pub(super) struct Coding {
    /// for each treatment factor (in `treatments` order): raw level -> coded value
    pub(super) coded: Vec<Vec<Option<f64>>>,
    pub(super) info: Vec<TwoLevelCoding>,
}

/// The coding rule of a factor with text labels.
pub(super) const TEXT_CODING_RULE: &str = "first label in sorted order";

pub(super) fn parse_number(label: &str) -> Option<f64> {
    label.trim().parse::<f64>().ok().filter(|value| value.is_finite())
}

/// Codes one factor's present levels to ±1 (and 0), or `None` when it is not two-level.
pub(super) fn code_factor(levels: &[String], present: &[bool]) -> Option<(Vec<Option<f64>>, TwoLevelCoding)> {
    let present_levels: Vec<usize> = (0..levels.len()).filter(|&level| present[level]).collect();
    let numbers: Option<Vec<f64>> = present_levels
        .iter()
        .map(|&level| parse_number(&levels[level]))
        .collect();
    let mut coded = vec![None; levels.len()];
    match (present_levels.len(), numbers) {
        (2, Some(numbers)) => {
            let (low, high) = if numbers[0] < numbers[1] { (0, 1) } else { (1, 0) };
            if numbers[0] == numbers[1] {
                return None;
            }
            coded[present_levels[low]] = Some(-1.0);
            coded[present_levels[high]] = Some(1.0);
            Some((
                coded,
                TwoLevelCoding {
                    low: levels[present_levels[low]].clone(),
                    high: levels[present_levels[high]].clone(),
                    centre: None,
                    rule: "lower number".into(),
                },
            ))
        }
        (2, None) => {
            let mut order = present_levels.clone();
            order.sort_by_key(|&level| (levels[level].to_lowercase(), levels[level].clone()));
            coded[order[0]] = Some(-1.0);
            coded[order[1]] = Some(1.0);
            Some((
                coded,
                TwoLevelCoding {
                    low: levels[order[0]].clone(),
                    high: levels[order[1]].clone(),
                    centre: None,
                    rule: TEXT_CODING_RULE.into(),
                },
            ))
        }
        (3, Some(numbers)) => {
            let mut order: Vec<usize> = (0..3).collect();
            order.sort_by(|&a, &b| numbers[a].total_cmp(&numbers[b]));
            let (low, middle, high) = (numbers[order[0]], numbers[order[1]], numbers[order[2]]);
            let half_way = 0.5 * (low + high);
            if !(low < middle && middle < high) || (middle - half_way).abs() > 1e-9 * (high - low) {
                return None;
            }
            coded[present_levels[order[0]]] = Some(-1.0);
            coded[present_levels[order[1]]] = Some(0.0);
            coded[present_levels[order[2]]] = Some(1.0);
            Some((
                coded,
                TwoLevelCoding {
                    low: levels[present_levels[order[0]]].clone(),
                    high: levels[present_levels[order[2]]].clone(),
                    centre: Some(levels[present_levels[order[1]]].clone()),
                    rule: "lower number; the middle number is a centre point".into(),
                },
            ))
        }
        _ => None,
    }
}

pub(super) fn present_levels(table: &FactorialData<'_>, factor: usize, records: &[usize]) -> Vec<bool> {
    let mut present = vec![false; table.factors[factor].levels.len()];
    for &record in records {
        if let Some(slot) = present.get_mut(table.factors[factor].level_of_record[record] as usize) {
            *slot = true;
        }
    }
    present
}

/// Levels of a factor in display order: numeric labels by value, others as first seen.
pub(super) fn used_factor(table: &FactorialData<'_>, factor: usize, records: &[usize]) -> UsedFactor {
    let source = &table.factors[factor];
    let present = present_levels(table, factor, records);
    let mut order: Vec<usize> = (0..source.levels.len()).filter(|&level| present[level]).collect();
    let numbers: Option<Vec<f64>> = order.iter().map(|&level| parse_number(&source.levels[level])).collect();
    if let Some(numbers) = numbers {
        let mut paired: Vec<(f64, usize)> = numbers.into_iter().zip(order.iter().copied()).collect();
        paired.sort_by(|a, b| a.0.total_cmp(&b.0));
        order = paired.into_iter().map(|(_, level)| level).collect();
    }
    let mut remap = vec![None; source.levels.len()];
    for (used, &raw) in order.iter().enumerate() {
        remap[raw] = Some(used);
    }
    UsedFactor {
        table_index: factor,
        name: source.name.to_string(),
        is_block: source.is_block,
        remap,
        level_names: order.iter().map(|&level| source.levels[level].clone()).collect(),
    }
}

pub(super) fn two_level_coding(table: &FactorialData<'_>, treatments: &[usize], usable: &[usize]) -> Option<Coding> {
    if treatments.len() < 2 || treatments.len() > FACTOR_LETTERS.len() {
        return None;
    }
    if treatments.iter().any(|&factor| table.factors[factor].levels.len() > 3) {
        // Levels without usable values are rare; a factor with more than three labels
        // is not treated as two-level.
        return None;
    }
    let mut coded = Vec::with_capacity(treatments.len());
    let mut info = Vec::with_capacity(treatments.len());
    for &factor in treatments {
        let present = present_levels(table, factor, usable);
        let (levels, coding) = code_factor(table.factors[factor].levels, &present)?;
        coded.push(levels);
        info.push(coding);
    }
    Some(Coding { coded, info })
}

/// The two-level coding of the treatment factors and the records that are centre points
/// (every treatment factor that has a middle level at it; a factor without one, such as a
/// text factor, may stand at either level, so centre runs repeated at each level of a
/// text factor are centre points too). When a record has some but not all
/// treatment factors at their middle level there is no coding, and the first such record
/// is returned last (the analysis then says why the two-level part was left out).
pub(super) fn coding_and_centre_points(
    table: &FactorialData<'_>,
    treatments: &[usize],
    usable: &[usize],
) -> (Option<Coding>, Vec<usize>, Option<usize>) {
    let mut mixed_levels_record = None;
    let coding = two_level_coding(table, treatments, usable);
    let (coding, centre_records) = match coding {
        Some(coding) => {
            let mut centre = Vec::new();
            let mut mixed = None;
            for &record in usable {
                let values: Vec<f64> = treatments
                    .iter()
                    .enumerate()
                    .map(|(position, &factor)| {
                        coding.coded[position][table.factors[factor].level_of_record[record] as usize]
                            .unwrap_or(f64::NAN)
                    })
                    .collect();
                let zeros = values.iter().filter(|value| **value == 0.0).count();
                // A centre run has every numeric factor at its middle level; text factors
                // (which have none) may stand at either of their two labels.
                let at_centre = (0..values.len())
                    .all(|position| values[position] == 0.0 || coding.info[position].rule == TEXT_CODING_RULE);
                if zeros > 0 && at_centre {
                    centre.push(record);
                } else if zeros > 0 && mixed.is_none() {
                    mixed = Some(record);
                }
            }
            match mixed {
                Some(record) => {
                    mixed_levels_record = Some(record);
                    (None, Vec::new())
                }
                None => (Some(coding), centre),
            }
        }
        None => (None, Vec::new()),
    };
    (coding, centre_records, mixed_levels_record)
}

/// The factors of the model, treatments first and then blocks, each with the levels that
/// have usable values among `model_records`; a factor left with fewer than two such
/// levels is left out, with a note.
pub(super) fn used_factors(
    table: &FactorialData<'_>,
    treatments: &[usize],
    blocks: &[usize],
    model_records: &[usize],
    notes: &mut Vec<String>,
) -> Vec<UsedFactor> {
    let mut used: Vec<UsedFactor> = Vec::new();
    for factor in treatments.iter().chain(blocks) {
        let candidate = used_factor(table, *factor, model_records);
        if candidate.level_names.len() < 2 {
            notes.push(format!(
                "'{}' has only {} level with usable values of '{}', so it was left out of the factorial model",
                candidate.name,
                candidate.level_names.len(),
                table.response_name
            ));
            continue;
        }
        used.push(candidate);
    }
    used
}

/// How each used factor entered the analysis (in the order of `used`): its levels, its
/// letter and its two-level coding when it is a treatment.
pub(super) fn factor_infos(used: &[UsedFactor], treatments: &[usize], coding: Option<&Coding>) -> Vec<FactorInfo> {
    used.iter()
        .map(|factor| {
            let treatment_position = treatments.iter().position(|&t| t == factor.table_index);
            FactorInfo {
                name: factor.name.clone(),
                levels: factor.level_names.clone(),
                is_block: factor.is_block,
                letter: treatment_position.and_then(|position| FACTOR_LETTERS.get(position).copied()),
                coding: match (coding, treatment_position) {
                    (Some(coding), Some(position)) => Some(coding.info[position].clone()),
                    _ => None,
                },
            }
        })
        .collect()
}

/// The level names of one combination of levels of the used factors.
pub(super) fn level_names_of(used: &[UsedFactor], levels: &[usize]) -> Vec<String> {
    levels
        .iter()
        .zip(used)
        .map(|(&level, factor)| factor.level_names[level].clone())
        .collect()
}
