//! Short codes for a chart's categories, with a key to them on the sheet.
//!
//! Combined condition labels ("60 / 20 / 4 / 1") and long text labels stack into
//! columns or overlap an axis title when a chart shows them on its category axis. When
//! any label is longer than [`LONGEST_AXIS_LABEL`] characters, or a chart has more than
//! [`MOST_AXIS_CATEGORIES`] categories with labels longer than their codes, the chart
//! shows codes (`C1`, `C2`, ... in the order of the categories) and a key under the
//! chart gives each code's full label. The key stands in the rows right under the
//! chart, with no blank row between, so that the print planner keeps chart and key on
//! one page (see [`super::print`]).

use super::{Look, Sheet, Value};

/// The longest category label, in characters, a chart shows as it is (common practice:
/// about what stands level under a point of a 500-pixel chart of eight categories).
pub const LONGEST_AXIS_LABEL: usize = 12;

/// The most categories a chart shows by their labels; more get codes when the codes
/// are shorter than the labels.
pub const MOST_AXIS_CATEGORIES: usize = 10;

/// The most lines a key takes; a longer key puts several codes on a line.
pub const MOST_KEY_LINES: usize = 20;

/// Whether a chart over categories `labels` should show codes and a key.
pub fn needs_codes(labels: &[String]) -> bool {
    let longest = labels.iter().map(|label| label.chars().count()).max().unwrap_or(0);
    let code_length = code(labels.len()).chars().count();
    longest > LONGEST_AXIS_LABEL || (labels.len() > MOST_AXIS_CATEGORIES && longest > code_length)
}

/// The code of the category at `position` (1-based).
pub fn code(position: usize) -> String {
    format!("C{position}")
}

/// Codes for `count` categories, in order.
pub fn codes(count: usize) -> Vec<String> {
    (1..=count).map(code).collect()
}

/// The key's lines: `code  label` for each category, several to a line (in columns of
/// equal width, read across) when there are more than [`MOST_KEY_LINES`].
pub fn key_lines(labels: &[String]) -> Vec<String> {
    let entries: Vec<String> = labels
        .iter()
        .enumerate()
        .map(|(index, label)| format!("{} = {}", code(index + 1), label))
        .collect();
    let per_line = entries.len().div_ceil(MOST_KEY_LINES).max(1);
    entries.chunks(per_line).map(|chunk| chunk.join(";   ")).collect()
}

impl Sheet {
    /// Writes the key to a chart's codes at `row` in column `col`, `width` characters
    /// wide: a line naming what the codes stand for (`what`), then the key's lines (see
    /// [`key_lines`]). Place it right under the chart, with no blank row between.
    /// Returns the first row after the key.
    pub fn chart_key(&mut self, row: u32, col: u16, what: &str, labels: &[String], width: f64) -> u32 {
        self.put(
            row,
            col,
            Value::text(format!("Key to the chart's codes ({what}):")),
            Look::Key,
        );
        let mut next = row + 1;
        for line in key_lines(labels) {
            self.paragraph(next, col, line, Look::Plain, width);
            next += 1;
        }
        next
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn strings(labels: &[&str]) -> Vec<String> {
        labels.iter().map(|label| (*label).to_string()).collect()
    }

    #[test]
    fn long_or_many_labels_get_codes_and_short_few_do_not() {
        assert!(!needs_codes(&strings(&["160", "180", "200"])));
        assert!(!needs_codes(&strings(&["supplier A", "supplier B"])));
        assert!(needs_codes(&strings(&["60 / 20 / 4 / 1", "60 / 20 / 4 / 2"])));
        assert!(needs_codes(&strings(&["a label 13 ch"])));
        let many: Vec<String> = (0..11).map(|i| format!("level {i}")).collect();
        assert!(needs_codes(&many));
        // Eleven labels no longer than their codes keep their labels.
        let short: Vec<String> = (0..11).map(|i| format!("{i}")).collect();
        assert!(!needs_codes(&short));
    }

    #[test]
    fn the_key_names_every_code_once_and_packs_a_long_key() {
        let labels: Vec<String> = (1..=45).map(|i| format!("{i} / {}", i * 2)).collect();
        let lines = key_lines(&labels);
        assert!(lines.len() <= MOST_KEY_LINES, "{}", lines.len());
        let joined = lines.join(";   ");
        for (index, label) in labels.iter().enumerate() {
            let entry = format!("C{} = {label}", index + 1);
            assert_eq!(joined.split(";   ").filter(|e| *e == entry).count(), 1, "{entry}");
        }
        let few = key_lines(&labels[..3]);
        assert_eq!(few, vec!["C1 = 1 / 2", "C2 = 2 / 4", "C3 = 3 / 6"]);
    }
}
