//! What a column or row is for, beyond what it holds: record identifiers and context
//! (dates and times, operators, shifts, run and standard-order numbers, replicates,
//! panel and sample numbers, batches and lots, notes) recognised from header words and
//! values; summary rows and columns (averages, totals and the like); and numeric
//! columns holding a few repeated settings, read as factors of a design.

use super::header::HeaderColumn;
use super::TrialTable;

/// Header words that mark a column as context wherever they stand in the header.
const CONTEXT_WORDS: &[&str] = &[
    "date",
    "dates",
    "datum",
    "timestamp",
    "day",
    "days",
    "weekday",
    "operator",
    "operators",
    "technician",
    "analyst",
    "inspector",
    "observer",
    "initials",
    "shift",
    "replicate",
    "replicates",
    "replication",
    "notes",
    "note",
    "comment",
    "comments",
    "remark",
    "remarks",
];

/// Header words that mark a column as an identifier when the header holds only such
/// words ("Run", "Std order", "Sample no.", "Lot ID"), not when they qualify a
/// measurement ("Run time", "Sample mass").
const IDENTIFIER_WORDS: &[&str] = &[
    "run", "runs", "std", "standard", "order", "rep", "reps", "repeat", "panel", "sample", "samples", "specimen",
    "batch", "lot", "id", "no", "nr", "num", "number", "serial", "seq", "sequence", "key", "index", "row", "of",
];

/// Labels of summary rows and headers of summary columns.
const SUMMARY_WORDS: &[&str] = &[
    "average",
    "avg",
    "mean",
    "grand mean",
    "overall mean",
    "sd",
    "s.d",
    "stdev",
    "std dev",
    "std. dev",
    "standard deviation",
    "st dev",
    "total",
    "grand total",
    "subtotal",
    "sum",
    "min",
    "max",
    "minimum",
    "maximum",
    "range",
    "median",
    "count",
    "cv",
    "cv%",
    "%cv",
    "variance",
];

fn words(header: &str) -> Vec<String> {
    header
        .to_lowercase()
        .split(|character: char| !character.is_alphanumeric())
        .filter(|word| !word.is_empty())
        .map(str::to_string)
        .collect()
}

/// The reason given for a column the sheet hides: a helper column, kept as context.
pub(super) const HIDDEN_REASON: &str = "is hidden in the sheet (a helper column)";

/// Why a column is context rather than a condition or a measurement, if it is: dates and
/// times by their values; notes, operators, shifts and replicates by their header words;
/// run, order, sample, panel, batch and lot numbers by a header of such words alone,
/// unless their labels repeat like a factor's levels (three rows or more each).
pub(super) fn context_reason(column: &HeaderColumn, n_rows: usize) -> Option<&'static str> {
    let counts = &column.counts;
    let filled = counts.non_empty();
    if counts.summary_formulas > 0 && counts.summary_formulas == counts.numbers {
        return Some("holds formulas that summarise other cells (AVERAGE, SUM and the like), not measurements");
    }
    if counts.dates > 0 && counts.dates * 2 >= filled {
        return Some("holds dates or times");
    }
    if is_notes_column(column) {
        return Some(if filled * 2 < n_rows {
            "is filled on fewer than half of the rows (notes)"
        } else {
            "is headed as notes or comments"
        });
    }
    let header_words = words(&column.name);
    if header_words.iter().any(|word| CONTEXT_WORDS.contains(&word.as_str())) {
        return Some("is headed like a record of context (date, day, operator, shift, replicate)");
    }
    let name = column.name.trim();
    let identifier_header = name.contains('#')
        || (!header_words.is_empty()
            && header_words
                .iter()
                .all(|word| IDENTIFIER_WORDS.contains(&word.as_str())));
    if !identifier_header {
        return None;
    }
    if counts.is_numeric() {
        return Some(if counts.counts_up && counts.numbers >= 2 {
            "counts up by one on every row (a run number)"
        } else {
            "is headed like a record identifier (run, order, sample, panel, batch or lot number)"
        });
    }
    if counts.texts >= 8 && column.distinct_labels * 10 > counts.texts * 8 {
        return Some("has a different label on almost every row (an identifier)");
    }
    if column.distinct_labels * 3 <= counts.texts {
        return None;
    }
    Some("is headed like a record identifier (run, order, sample, panel, batch or lot number)")
}

/// A word or two for a context reason, for the one-line choice.
pub(super) fn short_reason(reason: &str) -> &'static str {
    if reason.starts_with("holds dates") {
        "dates or times"
    } else if reason.starts_with("is hidden") {
        "hidden helper column"
    } else if reason.contains("summarise other cells") {
        "summary formulas"
    } else if reason.contains("notes") {
        "notes"
    } else if reason.starts_with("counts up") {
        "run number"
    } else if reason.starts_with("has a different label") {
        "identifier"
    } else if reason.contains("record of context") {
        "context"
    } else {
        "record number"
    }
}

/// Whether a column is headed as notes or comments (never a condition unless named).
pub(super) fn is_notes_column(column: &HeaderColumn) -> bool {
    words(&column.name).iter().any(|word| {
        matches!(
            word.as_str(),
            "note" | "notes" | "comment" | "comments" | "remark" | "remarks"
        )
    })
}

/// Whether a text is the label of a summary row or the header of a summary column.
pub(super) fn is_summary_word(text: &str) -> bool {
    let folded = text.trim().trim_end_matches([':', '.']).trim().to_lowercase();
    let folded = folded.split_whitespace().collect::<Vec<_>>().join(" ");
    SUMMARY_WORDS.contains(&folded.as_str())
}

/// Numeric columns that hold a few repeated settings, as a design's factor columns do:
/// two to five distinct values, each value on two rows or more on average, standing left
/// of a measured column (a numeric column with more distinct values) that stays the
/// response. `candidates` are the numeric columns that are neither context nor named.
pub(super) fn design_columns(columns: &[HeaderColumn], candidates: &[usize]) -> Vec<usize> {
    let is_setting = |index: usize| {
        let counts = &columns[index].counts;
        let distinct = counts.distinct_numbers().len();
        !counts.many_numbers && (2..=5).contains(&distinct) && counts.numbers >= 2 * distinct && counts.numbers >= 4
    };
    // Columns headed alike ("Line 1", "Line 2", ...) are the conditions of a wide table.
    let first_words: Vec<Option<String>> = candidates
        .iter()
        .map(|&index| words(&columns[index].name).into_iter().next())
        .collect();
    if candidates.len() >= 2 && first_words.iter().all(|word| word.is_some() && *word == first_words[0]) {
        return Vec::new();
    }
    let measured_cols: Vec<u32> = candidates
        .iter()
        .filter(|&&index| !is_setting(index))
        .map(|&index| columns[index].col)
        .collect();
    let Some(&last_measured) = measured_cols.iter().max() else {
        return Vec::new();
    };
    candidates
        .iter()
        .copied()
        .filter(|&index| is_setting(index) && columns[index].col < last_measured)
        .collect()
}

/// Whether numeric settings columns form a design, as full and fractional factorials,
/// Plackett-Burman screens, central composite and Box-Behnken plans do: for every pair
/// of columns, the rows where both stand at one of their two cube settings (the lowest
/// and highest of two to four settings; the second and fourth of five, inside a
/// composite plan's axial settings) show all four combinations of them, whatever the
/// other columns hold (common practice: a two-level orthogonal array has every pair's
/// combinations, and a Box-Behnken plan has them with the third factor at its middle; a
/// plan that varies one column at a time from a base has never both columns away from
/// it). One column is a design by itself. On failure, the first pair and combination
/// missing, in words.
pub(super) fn design_pattern(
    columns: &[HeaderColumn],
    design: &[usize],
    data_cells: &[(crate::cell::CellPos, crate::cell::CellValue)],
) -> Result<(), String> {
    if design.len() < 2 {
        return Ok(());
    }
    let cube: Vec<(f64, f64)> = design
        .iter()
        .map(|&index| {
            let mut settings = columns[index].counts.distinct_numbers().to_vec();
            settings.sort_by(f64::total_cmp);
            if settings.len() == 5 {
                (settings[1], settings[3])
            } else {
                (settings[0], settings[settings.len() - 1])
            }
        })
        .collect();
    let slot_of_col: std::collections::HashMap<u32, usize> = design
        .iter()
        .enumerate()
        .map(|(slot, &index)| (columns[index].col, slot))
        .collect();
    // Each row's side (0 low, 1 high, 2 elsewhere or missing) of each column.
    let mut seen = vec![[false; 4]; design.len() * design.len()];
    let mut sides = vec![2u8; design.len()];
    let mut row = None;
    let mut note_row = |sides: &mut Vec<u8>| {
        for first in 0..sides.len() {
            for second in first + 1..sides.len() {
                if sides[first] < 2 && sides[second] < 2 {
                    seen[first * sides.len() + second][(2 * sides[first] + sides[second]) as usize] = true;
                }
            }
        }
        sides.iter_mut().for_each(|side| *side = 2);
    };
    for (pos, value) in data_cells {
        if row != Some(pos.row) {
            if row.is_some() {
                note_row(&mut sides);
            }
            row = Some(pos.row);
        }
        let (Some(&slot), crate::cell::CellValue::Number(number)) = (slot_of_col.get(&pos.col), value) else {
            continue;
        };
        let (low, high) = cube[slot];
        sides[slot] = if *number == low {
            0
        } else if *number == high {
            1
        } else {
            2
        };
    }
    if row.is_some() {
        note_row(&mut sides);
    }
    for first in 0..design.len() {
        for second in first + 1..design.len() {
            let combinations = &seen[first * design.len() + second];
            if let Some(missing) = combinations.iter().position(|found| !found) {
                let setting = |slot: usize, high: bool| {
                    let (low_value, high_value) = cube[slot];
                    if high {
                        high_value
                    } else {
                        low_value
                    }
                };
                return Err(format!(
                    "{} = {} never meets {} = {}",
                    columns[design[first]].name,
                    setting(first, missing >= 2),
                    columns[design[second]].name,
                    setting(second, missing % 2 == 1)
                ));
            }
        }
    }
    Ok(())
}

/// Header words of a column of batches, lots or blocks ("Batch", "Lot no.", "Block").
const BLOCK_WORDS: &[&str] = &["batch", "batches", "lot", "lots", "block", "blocks"];
const BLOCK_QUALIFIERS: &[&str] = &["no", "nr", "num", "number", "id", "code"];

/// A label column found as a factor but headed as batches, lots or blocks ("Batch",
/// "Lot no.") in which every batch holds every level of every other factor, each
/// combination once (at least two batches and another factor): the randomised complete
/// block plan of a trial run batch by batch, each batch a block (common practice). It is marked a block, so that batch-to-batch differences
/// are taken out of the comparison rather than judged as an effect, and the choice is
/// returned as one line. Only one such column, and only beside a factor that is not one.
pub(super) fn batches_as_blocks(table: &mut TrialTable) -> Option<String> {
    let headed_as_batches = |name: &str| {
        let header_words = words(name);
        header_words.iter().any(|word| BLOCK_WORDS.contains(&word.as_str()))
            && header_words
                .iter()
                .all(|word| BLOCK_WORDS.contains(&word.as_str()) || BLOCK_QUALIFIERS.contains(&word.as_str()))
    };
    let candidates: Vec<usize> = (0..table.factors.len())
        .filter(|&index| !table.factors[index].is_block && headed_as_batches(&table.factors[index].name))
        .collect();
    let [batch] = candidates[..] else {
        return None;
    };
    let others: Vec<usize> = (0..table.factors.len())
        .filter(|&index| index != batch && !table.factors[index].is_block)
        .collect();
    let batches = table.factors[batch].levels.len();
    if batches < 2 || others.is_empty() {
        return None;
    }
    for &other in &others {
        let levels = table.factors[other].levels.len();
        let mut seen = vec![false; batches * levels];
        for (&in_batch, &level) in table.factors[batch]
            .level_of_record
            .iter()
            .zip(&table.factors[other].level_of_record)
        {
            if let Some(slot) = seen.get_mut(in_batch as usize * levels + level as usize) {
                *slot = true;
            }
        }
        if seen.contains(&false) {
            return None;
        }
    }
    // Each batch runs each combination of the other factors once: batches with repeats
    // within a combination may be under study themselves (their interaction with the
    // factors can then be judged), so they stay a factor.
    let mut runs = std::collections::HashSet::new();
    for record in 0..table.factors[batch].level_of_record.len() {
        let key: Vec<u32> = std::iter::once(batch)
            .chain(others.iter().copied())
            .map(|index| {
                table.factors[index]
                    .level_of_record
                    .get(record)
                    .copied()
                    .unwrap_or(u32::MAX)
            })
            .collect();
        if !runs.insert(key) {
            return None;
        }
    }
    table.factors[batch].is_block = true;
    let name = table.factors[batch].name.clone();
    let crossed: Vec<&str> = others.iter().map(|&index| table.factors[index].name.as_str()).collect();
    Some(format!(
        "the column '{name}' is headed as batches or lots and each of its {batches} levels holds every setting of {crossed}, so it was read as blocks: differences between them are taken out of the comparison, not judged as an effect; set `factor` to {name}, {crossed} to judge it as a factor",
        crossed = crossed.join(", ")
    ))
}
