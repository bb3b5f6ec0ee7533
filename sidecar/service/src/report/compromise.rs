//! The compromise over several responses on the 'Response surface' sheet: the
//! settings, each response's goal, prediction, intervals and desirability, the
//! overall desirability and the response that limits it. No I/O.

use workbook_io::write::{Look, NumberFormat, Sheet, Value};

use crate::compromise::CompromiseResult;

fn number(value: f64) -> Value {
    Value::Number(value, NumberFormat::Decimals(4))
}

fn ends(interval: Option<(f64, f64)>) -> [Value; 2] {
    match interval {
        Some((low, high)) => [number(low), number(high)],
        None => [Value::Blank, Value::Blank],
    }
}

/// Writes the compromise from `row` on and moves `row` past it.
pub(super) fn compromise_section(sheet: &mut Sheet, row: &mut u32, compromise: &CompromiseResult) {
    sheet.put(
        *row,
        0,
        Value::text("Several responses at once: the compromise (overall desirability, Derringer-Suich)"),
        Look::Heading,
    );
    *row += 1;
    let setting_rows = compromise
        .factors
        .iter()
        .zip(compromise.settings.iter().zip(&compromise.coded))
        .map(|(name, (real, coded))| vec![Value::text(name.clone()), number(*real), number(*coded)])
        .collect();
    *row = sheet.table(*row, 0, &["factor", "setting", "coded"], setting_rows) + 1;
    let percent = format!("{:.0}%", compromise.confidence * 100.0);
    let mean_low = format!("mean, {percent} low");
    let new_low = format!("one new run, {percent} low");
    let response_rows = compromise
        .responses
        .iter()
        .map(|line| {
            let [mean_from, mean_to] = ends(line.mean_interval);
            let [new_from, new_to] = ends(line.new_run_interval);
            vec![
                Value::text(line.response.clone()),
                Value::text(line.goal.clone()),
                number(line.predicted),
                mean_from,
                mean_to,
                new_from,
                new_to,
                Value::Number(line.desirability, NumberFormat::Decimals(3)),
            ]
        })
        .collect();
    *row = sheet.table(
        *row,
        0,
        &[
            "response",
            "goal",
            "predicted",
            &mean_low,
            "high",
            &new_low,
            "high",
            "desirability",
        ],
        response_rows,
    );
    sheet.put(
        *row,
        0,
        Value::text(format!(
            "Overall desirability {:.3}; '{}' limits the compromise (its desirability is the lowest). Settings searched within the region of the runs; confirm them with runs before relying on them.",
            compromise.overall, compromise.limiting
        )),
        Look::Note,
    );
    *row += 2;
}
