//! Several tables on one sheet: the sheet's cells are cut into blocks at blank columns
//! (tables side by side) and at blank rows where the part below starts with a header
//! of its own (tables stacked). Parts without numbers (titles, notes) are left out; a
//! part of numbers without a header below a blank row (a gap in the records, summary
//! rows) stays with the table above it; a column group without numbers (labels set off
//! by a blank spacer column) joins its neighbour.

use crate::cell::{CellPos, CellValue};

use super::header::row_spans;

/// At most this many blocks of a sheet are tried as tables, the largest first.
pub(super) const MAX_BLOCKS: usize = 16;

type Cells = Vec<(CellPos, CellValue)>;

/// The blocks of a sheet's cells, or `None` when they form one block as they are.
pub(super) fn split_blocks(cells: &[(CellPos, CellValue)]) -> Option<Vec<Cells>> {
    let max_col = cells.iter().map(|(pos, _)| pos.col).max()? as usize;
    let mut occupied = vec![false; max_col + 1];
    let mut numeric = vec![false; max_col + 1];
    for (pos, value) in cells {
        occupied[pos.col as usize] = true;
        if matches!(value, CellValue::Number(_)) {
            numeric[pos.col as usize] = true;
        }
    }
    // Runs of occupied columns.
    let mut groups: Vec<(u32, u32, bool)> = Vec::new();
    for col in 0..=max_col {
        if !occupied[col] {
            continue;
        }
        match groups.last_mut() {
            Some(last) if last.1 as usize + 1 == col => {
                last.1 = col as u32;
                last.2 |= numeric[col];
            }
            _ => groups.push((col as u32, col as u32, numeric[col])),
        }
    }
    // A group without numbers joins the group to its right (or the last group).
    let mut merged: Vec<(u32, u32, bool)> = Vec::new();
    let mut pending: Option<u32> = None;
    for (first, last, has_numbers) in groups {
        if !has_numbers {
            pending.get_or_insert(first);
            continue;
        }
        merged.push((pending.take().unwrap_or(first), last, true));
    }
    if let Some(first) = pending {
        match merged.last_mut() {
            Some(last) => last.1 = max_col as u32,
            None => merged.push((first, max_col as u32, false)),
        }
    }
    let merged = join_spacer_groups(cells, merged);
    let mut blocks: Vec<Cells> = Vec::new();
    let single_group = merged.len() <= 1;
    for (first, last, _) in &merged {
        let group: Cells;
        let group_cells: &[(CellPos, CellValue)] = if single_group {
            cells
        } else {
            group = cells
                .iter()
                .copied()
                .filter(|(pos, _)| (*first..=*last).contains(&pos.col))
                .collect();
            &group
        };
        let ranges = stacked_blocks(group_cells);
        if single_group && ranges.len() == 1 && ranges[0] == [(0, cells.len())] {
            return None;
        }
        for block in ranges {
            blocks.push(
                block
                    .iter()
                    .flat_map(|&(start, end)| group_cells[start..end].iter().copied())
                    .collect(),
            );
        }
    }
    if blocks.len() > MAX_BLOCKS {
        blocks.sort_by_key(|block| std::cmp::Reverse(block.len()));
        blocks.truncate(MAX_BLOCKS);
        blocks.sort_by_key(|block| (block[0].0.col, block[0].0.row));
    }
    Some(blocks)
}

/// Joins neighbouring column groups that span the same rows and share no header text:
/// one table with a blank spacer column, not two tables side by side (those repeat
/// their headers or differ in length).
fn join_spacer_groups(cells: &[(CellPos, CellValue)], groups: Vec<(u32, u32, bool)>) -> Vec<(u32, u32, bool)> {
    // Only for a handful of groups: each cell looks its group up among them.
    if groups.len() < 2 || groups.len() > 64 {
        return groups;
    }
    // First row, last row and first-row texts of each group.
    let mut extents: Vec<(u32, u32, Vec<CellValue>)> = vec![(u32::MAX, 0, Vec::new()); groups.len()];
    for (pos, value) in cells {
        let Some(index) = groups
            .iter()
            .position(|(first, last, _)| (*first..=*last).contains(&pos.col))
        else {
            continue;
        };
        let extent = &mut extents[index];
        if pos.row < extent.0 {
            *extent = (pos.row, pos.row, Vec::new());
        }
        if pos.row == extent.0 {
            extent.2.push(*value);
        }
        extent.1 = extent.1.max(pos.row);
    }
    let mut joined: Vec<(u32, u32, bool)> = Vec::new();
    let mut previous: Option<usize> = None;
    for (index, group) in groups.iter().enumerate() {
        let joins = previous.is_some_and(|before: usize| {
            let (a, b) = (&extents[before], &extents[index]);
            a.0 == b.0 && a.1 == b.1 && !b.2.iter().any(|value| a.2.contains(value))
        });
        match joined.last_mut() {
            Some(last) if joins => last.1 = group.1,
            _ => joined.push(*group),
        }
        previous = Some(index);
    }
    joined
}

/// Cuts one column group at blank rows into tables: each block as ranges of `cells`.
fn stacked_blocks(cells: &[(CellPos, CellValue)]) -> Vec<Vec<(usize, usize)>> {
    let rows = row_spans(cells);
    // Segments of consecutive rows: (first row span index, end span index).
    let mut segments: Vec<(usize, usize)> = Vec::new();
    for (index, span) in rows.iter().enumerate() {
        let row = cells[span.0].0.row;
        match segments.last_mut() {
            Some(segment) if cells[rows[segment.1 - 1].0].0.row + 1 == row => segment.1 = index + 1,
            _ => segments.push((index, index + 1)),
        }
    }
    let is_number = |value: &CellValue| matches!(value, CellValue::Number(_));
    let mut blocks: Vec<Vec<(usize, usize)>> = Vec::new();
    let mut current: Option<Vec<(usize, usize)>> = None;
    for (start, end) in segments {
        let segment_rows = &rows[start..end];
        let first_number_row = segment_rows
            .iter()
            .position(|span| cells[span.0..span.1].iter().any(|(_, value)| is_number(value)));
        let Some(first_number_row) = first_number_row else {
            continue;
        };
        let has_header = segment_rows[..first_number_row].iter().any(|span| {
            let row_cells = &cells[span.0..span.1];
            row_cells.len() >= 2 && row_cells.iter().all(|(_, value)| matches!(value, CellValue::Text(_)))
        });
        let segment_cells = (segment_rows[0].0, segment_rows[segment_rows.len() - 1].1);
        match current.as_mut() {
            Some(open) if !has_header => match open.last_mut() {
                Some(last) if last.1 == segment_cells.0 => last.1 = segment_cells.1,
                _ => open.push(segment_cells),
            },
            _ => {
                if let Some(done) = current.take() {
                    blocks.push(done);
                }
                current = Some(vec![segment_cells]);
            }
        }
    }
    blocks.extend(current);
    blocks
}
