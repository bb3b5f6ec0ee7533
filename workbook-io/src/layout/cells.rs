//! Findings for cells: unusable numbers, labels, labels that differ only in case or
//! spacing, and hidden rows and columns of the table.

use std::collections::HashMap;

use crate::cell::{column_letters, CellPos, CellRect, CellValue};
use crate::read::SheetGrid;

use super::{Factor, Finding, FindingKind, Findings, TrialTable};

/// Rows and columns of the table that the sheet hides: their values are
/// used like any other, which the person who hid them may not expect.
pub(super) fn hidden_findings(grid: &SheetGrid, table: &TrialTable) -> Vec<Finding> {
    let area = table.area;
    let mut findings = Vec::new();
    let rows: Vec<u32> = grid
        .hidden_rows
        .iter()
        .copied()
        .filter(|row| (area.first.row..=area.last.row).contains(row))
        .collect();
    if let Some(&first) = rows.first() {
        findings.push(Finding {
            kind: FindingKind::HiddenCells,
            sheet: table.sheet.clone(),
            cell: Some(
                CellRect {
                    first: CellPos::new(first, area.first.col),
                    last: CellPos::new(first, area.last.col),
                }
                .a1(),
            ),
            found: format!("{} hidden row(s)", rows.len()),
            action: "their values were used like any other".into(),
            message: format!(
                "row(s) {} of the table are hidden in the sheet; their values were used like any other; unhide them to check, and delete the runs that should not count",
                number_list(&rows)
            ),
        });
    }
    let cols: Vec<u32> = grid
        .hidden_cols
        .iter()
        .copied()
        .filter(|col| (area.first.col..=area.last.col).contains(col))
        .collect();
    if let Some(&first) = cols.first() {
        let letters: Vec<String> = cols.iter().take(20).map(|&col| column_letters(col)).collect();
        findings.push(Finding {
            kind: FindingKind::HiddenCells,
            sheet: table.sheet.clone(),
            cell: Some(
                CellRect {
                    first: CellPos::new(area.first.row, first),
                    last: CellPos::new(area.last.row, first),
                }
                .a1(),
            ),
            found: format!("{} hidden column(s)", cols.len()),
            action: "their values were used like any other".into(),
            message: format!(
                "column(s) {}{} of the table are hidden in the sheet; their values were used like any other; unhide them to check",
                letters.join(", "),
                if cols.len() > 20 { ", ..." } else { "" }
            ),
        });
    }
    findings
}

/// Zero-based rows as sheet row numbers, runs shortened (`5, 7-9`), at most 20 items.
pub(super) fn number_list(rows: &[u32]) -> String {
    let mut items: Vec<String> = Vec::new();
    let mut index = 0;
    while index < rows.len() {
        let start = rows[index];
        let mut end = start;
        while index + 1 < rows.len() && rows[index + 1] == end + 1 {
            index += 1;
            end += 1;
        }
        items.push(if end > start {
            format!("{}-{}", start + 1, end + 1)
        } else {
            format!("{}", start + 1)
        });
        index += 1;
    }
    if items.len() > 20 {
        items.truncate(20);
        items.push("...".into());
    }
    items.join(", ")
}

pub(super) fn label_text(grid: &SheetGrid, value: CellValue) -> Option<String> {
    match value {
        CellValue::Error(_) => None,
        other => {
            let text = grid.display(other).trim().to_string();
            (!text.is_empty()).then_some(text)
        }
    }
}

pub(super) fn unusable_number(
    grid: &SheetGrid,
    sheet: &str,
    pos: CellPos,
    value: CellValue,
    column_name: &str,
) -> Option<Finding> {
    let (kind, what) = match value {
        CellValue::Number(number) if number.is_finite() => return None,
        CellValue::Number(_) => (FindingKind::TextInNumbers, "a non-finite number"),
        CellValue::Text(_) => (FindingKind::TextInNumbers, "text"),
        CellValue::Error(_) => (FindingKind::ErrorValue, "an error value"),
        CellValue::Date(_) => (FindingKind::DateInNumbers, "a date"),
        CellValue::Bool(_) => (FindingKind::BooleanInNumbers, "TRUE/FALSE"),
    };
    let found = grid.display(value);
    Some(Finding {
        kind,
        sheet: sheet.to_string(),
        cell: Some(pos.a1()),
        found: found.clone(),
        action: "the value was left out".into(),
        message: format!("found {what} '{found}' in the numbers of '{column_name}'; the value was left out"),
    })
}

pub(super) fn similar_label_findings(
    sheet: &str,
    factor: &Factor,
    map: &HashMap<String, u32>,
    findings: &mut Findings,
) {
    let mut by_folded: HashMap<String, Vec<&str>> = HashMap::new();
    for label in map.keys() {
        let folded: String = label.to_lowercase().split_whitespace().collect::<Vec<_>>().join(" ");
        by_folded.entry(folded).or_default().push(label);
    }
    let mut groups: Vec<Vec<&str>> = by_folded.into_values().filter(|group| group.len() > 1).collect();
    groups.sort();
    for mut group in groups {
        group.sort_unstable();
        findings.push(Finding {
            kind: FindingKind::SimilarLabels,
            sheet: sheet.to_string(),
            cell: factor.column.map(column_letters),
            found: group.join(" | "),
            action: "kept as different conditions".into(),
            message: format!(
                "in '{}', the labels {} differ only in case or spacing; they were kept apart; correct them if they are the same condition",
                factor.name,
                group.iter().map(|label| format!("'{label}'")).collect::<Vec<_>>().join(", ")
            ),
        });
    }
}
