//! Cell summaries: one accumulator per combination of the used factors' levels.

use crate::stats::accumulate::{centre_values, GroupAccumulator};
use crate::stats::linear_model::{CellSummary, FactorialFit};

use super::coding::UsedFactor;
use super::results::CellsSummary;

/// Up to this many combinations of levels, cell sums are accumulated in one pass.
const DIRECT_GRID_MAX: usize = 4096;
use super::FactorialData;

/// Cell summaries over the used factors, the cell (index into the result) of each
/// model record, and whether every sum was held exactly (every value had a short decimal
/// form; otherwise compensated binary sums were used). `None` when the grid of
/// combinations is too large.
pub(super) fn summarise(
    table: &FactorialData<'_>,
    used: &[UsedFactor],
    records: &[usize],
    n_possible: Option<usize>,
) -> Option<(Vec<CellSummary>, Vec<u32>, bool)> {
    let n_possible = n_possible.filter(|&n| n <= crate::stats::linear_model::MAX_LEVEL_COMBINATIONS)?;
    // Accumulate, centre, solve: the cells hold sums of deviations from one centre, typed
    // decimals differenced exactly (see `centre_values`), so a large offset costs nothing.
    let record_values: Vec<f64> = records.iter().map(|&record| table.values[record]).collect();
    let centred = centre_values(&record_values);
    type LevelColumn<'t> = (&'t [u32], &'t [Option<usize>], usize);
    let level_columns: Vec<LevelColumn<'_>> = used
        .iter()
        .map(|factor| {
            (
                table.factors[factor.table_index].level_of_record,
                factor.remap.as_slice(),
                factor.level_names.len(),
            )
        })
        .collect();
    // Mixed-radix index of each record, first factor slowest.
    let mut grid_index: Vec<u32> = vec![0; records.len()];
    for (levels, remap, radix) in &level_columns {
        for (slot, &record) in grid_index.iter_mut().zip(records) {
            let level = remap.get(levels[record] as usize).copied().flatten().unwrap_or(0);
            *slot = *slot * (*radix as u32) + level as u32;
        }
    }
    // Small grids accumulate straight into one group per combination (one pass);
    // large ones number the present combinations first.
    let direct = n_possible <= DIRECT_GRID_MAX;
    let mut compact: Vec<u32> = vec![u32::MAX; n_possible];
    let mut present: Vec<u32> = Vec::new();
    let mut accumulator = if direct {
        let mut accumulator = GroupAccumulator::new(n_possible);
        for (&index, &value) in grid_index.iter().zip(&centred.deviations) {
            accumulator.push(index as usize, value).ok()?;
            compact[index as usize] = 0;
        }
        present.extend((0..n_possible as u32).filter(|&index| compact[index as usize] == 0));
        accumulator
    } else {
        for &index in &grid_index {
            if compact[index as usize] == u32::MAX {
                compact[index as usize] = 0;
                present.push(index);
            }
        }
        present.sort_unstable();
        GroupAccumulator::new(present.len())
    };
    for (position, &index) in present.iter().enumerate() {
        compact[index as usize] = position as u32;
    }
    if !direct {
        for (&index, &value) in grid_index.iter().zip(&centred.deviations) {
            accumulator.push(compact[index as usize] as usize, value).ok()?;
        }
    }
    let all_stats = accumulator.finish();
    let stats: Vec<_> = if direct {
        present.iter().map(|&index| all_stats[index as usize].clone()).collect()
    } else {
        all_stats
    };
    let exact_decimal = centred.exact_decimal && stats.iter().all(|group| group.exact_decimal);
    let mut cell_of_record = grid_index;
    for slot in &mut cell_of_record {
        *slot = compact[*slot as usize];
    }
    let radix: Vec<usize> = used.iter().map(|factor| factor.level_names.len()).collect();
    let cells = present
        .iter()
        .zip(&stats)
        .map(|(&index, group)| {
            let mut levels = vec![0usize; radix.len()];
            let mut rest = index as usize;
            for position in (0..radix.len()).rev() {
                levels[position] = rest % radix[position];
                rest /= radix[position];
            }
            CellSummary {
                levels,
                n: group.n as usize,
                mean: centred.centre + group.mean,
                centred_mean: group.mean,
                centred_ss_scaled: group.centred_ss_scaled.max(0.0),
                scale_exponent: group.scale_exponent,
            }
        })
        .collect();
    Some((cells, cell_of_record, exact_decimal))
}

/// What the cells hold: combinations possible and present, the range of counts, balance
/// (from the fit) and the combinations not run (at most 200 listed).
pub(super) fn cells_summary(
    n_possible: Option<usize>,
    cells: &[CellSummary],
    fit: Option<&FactorialFit>,
    n_centre_points: usize,
    level_names: &dyn Fn(&[usize]) -> Vec<String>,
) -> CellsSummary {
    let counts: Vec<usize> = cells.iter().map(|cell| cell.n).collect();
    let count_range = (
        counts.iter().copied().min().unwrap_or(0),
        counts.iter().copied().max().unwrap_or(0),
    );
    let missing_levels: Vec<Vec<usize>> = fit.map(|fit| fit.missing_cells.clone()).unwrap_or_default();
    CellsSummary {
        n_possible: n_possible.unwrap_or(usize::MAX),
        n_present: cells.len(),
        count_range,
        balanced: fit.is_some_and(|fit| fit.is_balanced),
        missing: missing_levels
            .iter()
            .take(200)
            .map(|levels| level_names(levels))
            .collect(),
        n_missing: missing_levels.len(),
        n_centre_points,
    }
}

/// The cells summary when there are too many combinations of levels to fit the model.
pub(super) fn too_many_cells_summary(n_possible: Option<usize>, n_centre_points: usize) -> CellsSummary {
    CellsSummary {
        n_possible: n_possible.unwrap_or(usize::MAX),
        n_present: 0,
        count_range: (0, 0),
        balanced: false,
        missing: Vec::new(),
        n_missing: 0,
        n_centre_points,
    }
}
