//! Findings for cells: unusable numbers, labels, labels that differ only in case or
//! spacing, and hidden rows and columns of the table.

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
            found: format!("{} hidden {}", rows.len(), super::noun(rows.len(), "row")),
            action: "their values were used like any other".into(),
            message: format!(
                "{} {} of the table {} hidden in the sheet; their values were used like any other; unhide {} to check, and delete the runs that should not count",
                super::noun(rows.len(), "row"),
                number_list(&rows),
                if rows.len() == 1 { "is" } else { "are" },
                if rows.len() == 1 { "it" } else { "them" }
            ),
        });
    }
    // Hidden columns left out as helper columns have a finding of their own; these
    // are the hidden columns whose values the table uses.
    let used = |col: u32| {
        table.level_columns.contains(&col)
            || table.factors.iter().any(|factor| factor.column == Some(col))
            || table.responses.iter().any(|response| response.column == Some(col))
    };
    let cols: Vec<u32> = grid
        .hidden_cols
        .iter()
        .copied()
        .filter(|col| (area.first.col..=area.last.col).contains(col) && used(*col))
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
            found: format!("{} hidden {}", cols.len(), super::noun(cols.len(), "column")),
            action: "their values were used like any other".into(),
            message: format!(
                "{} {}{} of the table {} hidden in the sheet; their values were used like any other; unhide {} to check",
                super::noun(cols.len(), "column"),
                letters.join(", "),
                if cols.len() > 20 { ", ..." } else { "" },
                if cols.len() == 1 { "is" } else { "are" },
                if cols.len() == 1 { "it" } else { "them" }
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
            let text = value_text(grid, other).trim().to_string();
            (!text.is_empty()).then_some(text)
        }
    }
}

/// A cell's value as a person reads it: dates and times as dates, the rest as shown.
pub(super) fn value_text(grid: &SheetGrid, value: CellValue) -> String {
    match value {
        CellValue::Date(serial) if serial.is_finite() => date_text(serial),
        other => grid.display(other),
    }
}

/// A spreadsheet date serial (days since 1899-12-30, the 1900 date system as stored by
/// current spreadsheet files) as `2026-11-24`, `2026-11-24 08:30` or `08:30`.
pub(super) fn date_text(serial: f64) -> String {
    if !(0.0..3_000_000.0).contains(&serial) {
        return format!("date serial {serial}");
    }
    let days = serial.floor();
    let minutes = ((serial - days) * 1440.0).round() as i64;
    let (days, minutes) = (days as i64 + minutes / 1440, minutes % 1440);
    let time = format!("{:02}:{:02}", minutes / 60, minutes % 60);
    if days == 0 {
        return time;
    }
    // Civil date from a day count (H. Hinnant, "chrono-Compatible Low-Level Date
    // Algorithms", days_from_civil inverse); 1899-12-30 is day -25,569 from 1970-01-01.
    let z = days - 25_569 + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z - era * 146_097;
    let yoe = (doe - doe / 1_460 + doe / 36_524 - doe / 146_096) / 365;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let day = doy - (153 * mp + 2) / 5 + 1;
    let month = if mp < 10 { mp + 3 } else { mp - 9 };
    let year = yoe + era * 400 + i64::from(month <= 2);
    if minutes == 0 {
        format!("{year:04}-{month:02}-{day:02}")
    } else {
        format!("{year:04}-{month:02}-{day:02} {time}")
    }
}

/// The key under which labels count as one condition: Unicode canonical composition,
/// case folded, inner runs of spaces made one.
pub(super) fn label_key(label: &str) -> String {
    use unicode_normalization::UnicodeNormalization;
    let composed: String = label.nfc().collect();
    composed.to_lowercase().split_whitespace().collect::<Vec<_>>().join(" ")
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
        // Error values start with '#'; other error-cell texts describe a
        // cell the reader could not read as its type (see `read::sheet_xml`).
        CellValue::Error(index) if !grid.text(index).starts_with('#') => {
            (FindingKind::ErrorValue, "an unreadable cell")
        }
        CellValue::Error(_) => (FindingKind::ErrorValue, "an error value"),
        CellValue::Date(_) => (FindingKind::DateInNumbers, "a date"),
        CellValue::Bool(_) => (FindingKind::BooleanInNumbers, "TRUE/FALSE"),
    };
    let found = value_text(grid, value);
    Some(Finding {
        kind,
        sheet: sheet.to_string(),
        cell: Some(pos.a1()),
        found: found.clone(),
        action: "the value was left out".into(),
        message: if what == "an unreadable cell" {
            format!("found {what} ({found}) in the numbers of '{column_name}'; the value was left out")
        } else {
            format!("found {what} '{found}' in the numbers of '{column_name}'; the value was left out")
        },
    })
}

/// A number stored as text in a column of numbers ("500.9", "500.9 g" under a header
/// whose unit is g): the number, with a finding that says it was read. Only plain
/// decimal numbers are read (a sign, digits, one point, an exponent), followed by
/// nothing or by the column's own unit; a comma, another unit or any other word
/// leaves the value out as before (a decimal comma or a thousands separator cannot
/// be told apart).
pub(super) fn number_in_text(
    grid: &SheetGrid,
    sheet: &str,
    pos: CellPos,
    value: CellValue,
    column_name: &str,
) -> Option<(f64, Finding)> {
    let CellValue::Text(index) = value else {
        return None;
    };
    let typed = grid.text(index);
    let text = typed.trim();
    let unit = column_unit(column_name);
    let bare = match unit {
        Some(unit) if text.ends_with(unit) && text.len() > unit.len() => text[..text.len() - unit.len()].trim_end(),
        _ => text,
    };
    let plain = !bare.is_empty()
        && bare
            .chars()
            .all(|c| c.is_ascii_digit() || matches!(c, '.' | '-' | '+' | 'e' | 'E'))
        && bare.chars().any(|c| c.is_ascii_digit())
        && !bare.contains("..");
    let number = bare.parse::<f64>().ok().filter(|number| plain && number.is_finite())?;
    let with_unit = if bare.len() < text.len() {
        format!(", with the column's unit {}", unit.unwrap_or_default())
    } else {
        String::new()
    };
    Some((
        number,
        Finding {
            kind: FindingKind::TextInNumbers,
            sheet: sheet.to_string(),
            cell: Some(pos.a1()),
            found: typed.to_string(),
            action: format!("read as the number {number}"),
            message: format!(
                "found the number '{text}' stored as text{with_unit} in the numbers of '{column_name}'; it was read as {number}: enter it as a number in the sheet"
            ),
        },
    ))
}

/// The unit a column's name ends with in parentheses: "Fill weight (g)" is in g.
fn column_unit(name: &str) -> Option<&str> {
    let inner = name.trim_end().strip_suffix(')')?;
    let open = inner.rfind('(')?;
    let unit = inner[open + 1..].trim();
    (!unit.is_empty()).then_some(unit)
}

/// Reports each level that was written in more than one way (case, spacing, accents):
/// the variants were merged into the level's first spelling.
pub(super) fn merged_label_findings(sheet: &str, factor: &Factor, variants: &[Vec<String>], findings: &mut Findings) {
    for (level, spellings) in factor.levels.iter().zip(variants) {
        if spellings.len() < 2 {
            continue;
        }
        let listed = spellings
            .iter()
            .map(|label| format!("'{label}'"))
            .collect::<Vec<_>>()
            .join(", ");
        findings.push(Finding {
            kind: FindingKind::SimilarLabels,
            sheet: sheet.to_string(),
            cell: factor.column.map(column_letters),
            found: spellings.join(" | "),
            action: format!("merged into one condition '{level}'"),
            message: format!(
                "in '{}', the labels {listed} differ only in case or spacing, or in how accents are encoded; they were read as one condition '{level}'; correct the labels in the sheet if they are different conditions",
                factor.name
            ),
        });
    }
}
