//! Checking the runs of a filled plan against the plan kept in its
//! workbook: runs missing, runs added, settings changed and run order not
//! followed, each a finding with its cell.
//!
//! The runs sheet is written in run order, so run `k` is expected on the
//! `k`-th row below the header. A row is matched to a planned run by its
//! factor settings (and block): first the run planned for that very row,
//! then any other planned run with the same settings that is still
//! unmatched (the order was not followed). A row that matches no planned
//! run, next to a planned run that no row matches, had its settings changed;
//! what is left over was added or is missing.

use workbook_io::layout::{Finding, FindingKind, TrialTable};
use workbook_io::CellPos;

use crate::plan::book::KeptPlan;

/// Two settings are the same when they are equal numbers (to 1e-9
/// relative), when the one found is the planned number as the plan's runs sheet
/// shows it (rounded to [`crate::plan::book::SHOWN_FIGURES`] significant figures),
/// or when they are the same text apart from case and surrounding spaces.
pub fn same_setting(planned: &str, found: &str) -> bool {
    let (planned, found) = (planned.trim(), found.trim());
    let equal = |a: f64, b: f64| (a - b).abs() <= 1e-9 * a.abs().max(b.abs()).max(1.0);
    match (planned.parse::<f64>(), found.parse::<f64>()) {
        (Ok(a), Ok(b)) => equal(a, b) || equal(crate::plan::book::shown_number(a), b),
        _ => planned.eq_ignore_ascii_case(found),
    }
}

/// Compares the table read from a plan's runs sheet with the plan.
///
/// Factor columns are found by name (without regard to case); a planned
/// factor missing from the table is itself a finding and is left out of
/// the comparison.
// The matching walks records and planned runs by index across several
// parallel vectors; index loops read plainer here than zipped iterators.
#[allow(clippy::needless_range_loop)]
pub fn check_runs(table: &TrialTable, plan: &KeptPlan) -> Vec<Finding> {
    let mut findings = Vec::new();
    let header_row = table.area.first.row;
    let finding = |cell: Option<String>, sheet: &str, found: String, action: &str, message: String| Finding {
        kind: FindingKind::PlanDeparture,
        sheet: sheet.to_string(),
        cell,
        found,
        action: action.to_string(),
        message,
    };

    // Which table factor holds each planned factor (and the block).
    let mut columns: Vec<Option<usize>> = Vec::new();
    for name in &plan.factors {
        let index = table
            .factors
            .iter()
            .position(|factor| !factor.is_block && factor.name.trim().eq_ignore_ascii_case(name));
        if index.is_none() {
            findings.push(finding(
                Some(table.area.first.a1()),
                &table.sheet,
                name.clone(),
                "the factor was left out of the check",
                format!("the plan has a factor '{name}' but the runs sheet has no factor column of that name"),
            ));
        }
        columns.push(index);
    }
    let block_column = if plan.blocked {
        table.factors.iter().position(|factor| factor.is_block)
    } else {
        None
    };

    let n_records = table.n_records();
    let record_setting = |record: usize, factor: usize| -> String {
        let level = table.factors[factor].level_of_record[record] as usize;
        table.factors[factor].levels[level].clone()
    };
    let matches = |record: usize, run: usize| -> bool {
        let kept = &plan.runs[run];
        let settings_agree = columns.iter().enumerate().all(|(planned, column)| match column {
            Some(factor) => same_setting(&kept.settings[planned], &record_setting(record, *factor)),
            None => true,
        });
        let block_agrees = block_column.is_none_or(|factor| same_setting(&kept.block, &record_setting(record, factor)));
        settings_agree && block_agrees
    };
    let describe_run = |run: usize| -> String {
        let kept = &plan.runs[run];
        plan.factors
            .iter()
            .zip(&kept.settings)
            .map(|(name, value)| format!("{name} = {value}"))
            .collect::<Vec<_>>()
            .join(", ")
    };
    let factor_cell = |record: usize, factor: usize| -> CellPos {
        CellPos::new(table.record_rows[record], table.factors[factor].column.unwrap_or(0))
    };
    let first_cell = |record: usize| -> String {
        let col = columns
            .iter()
            .flatten()
            .filter_map(|&factor| table.factors[factor].column)
            .min()
            .unwrap_or(table.area.first.col);
        CellPos::new(table.record_rows[record], col).a1()
    };
    // The planned run expected on a record's row, if the row is inside the plan.
    let run_at_row = |record: usize| -> Option<usize> {
        let offset = table.record_rows[record].checked_sub(header_row + 1)? as usize;
        (offset < plan.runs.len()).then_some(offset)
    };

    let mut run_of_record: Vec<Option<usize>> = vec![None; n_records];
    let mut record_of_run: Vec<Option<usize>> = vec![None; plan.runs.len()];
    // First: each row against the run planned for it.
    for record in 0..n_records {
        if let Some(run) = run_at_row(record) {
            if matches(record, run) {
                run_of_record[record] = Some(run);
                record_of_run[run] = Some(record);
            }
        }
    }
    // Then: rows holding another unmatched planned run's settings.
    let mut out_of_order = Vec::new();
    for record in 0..n_records {
        if run_of_record[record].is_some() {
            continue;
        }
        let expected = run_at_row(record);
        let candidate = (0..plan.runs.len())
            .filter(|&run| record_of_run[run].is_none() && Some(run) != expected)
            .filter(|&run| {
                // Leave a run for its own row when that row holds it.
                let own_row = header_row + 1 + run as u32;
                let own_record = table.record_rows.iter().position(|&row| row == own_row);
                !own_record.is_some_and(|other| run_of_record[other].is_none() && matches(other, run))
            })
            .find(|&run| matches(record, run));
        if let Some(run) = candidate {
            run_of_record[record] = Some(run);
            record_of_run[run] = Some(record);
            out_of_order.push(record);
        }
    }
    for record in out_of_order {
        let Some(run) = run_of_record[record] else { continue };
        let kept = &plan.runs[run];
        findings.push(finding(
            Some(first_cell(record)),
            &table.sheet,
            describe_run(run),
            "analysed with its settings; the order of runs is not used by the analysis",
            format!(
                "row {} holds planned run {} ({}), which the plan put on row {}; the run order was not followed, so time trends may be mixed with the factors",
                table.record_rows[record] + 1,
                kept.run_order,
                describe_run(run),
                header_row + 2 + run as u32
            ),
        ));
    }
    // Rows on a planned run's own row with other settings: settings changed.
    for record in 0..n_records {
        if run_of_record[record].is_some() {
            continue;
        }
        let Some(run) = run_at_row(record) else { continue };
        if record_of_run[run].is_some() {
            continue;
        }
        run_of_record[record] = Some(run);
        record_of_run[run] = Some(record);
        let kept = &plan.runs[run];
        for (planned, column) in columns.iter().enumerate() {
            let Some(factor) = column else { continue };
            let found = record_setting(record, *factor);
            if !same_setting(&kept.settings[planned], &found) {
                findings.push(finding(
                    Some(factor_cell(record, *factor).a1()),
                    &table.sheet,
                    found.clone(),
                    "analysed with the setting in the sheet",
                    format!(
                        "run {} was planned with {} = {}, but the sheet says {found}; the analysis uses {found}",
                        kept.run_order, plan.factors[planned], kept.settings[planned]
                    ),
                ));
            }
        }
        if let Some(factor) = block_column {
            let found = record_setting(record, factor);
            if !same_setting(&kept.block, &found) {
                findings.push(finding(
                    Some(factor_cell(record, factor).a1()),
                    &table.sheet,
                    found.clone(),
                    "analysed in the block given in the sheet",
                    format!(
                        "run {} was planned in block {}, but the sheet says {found}",
                        kept.run_order, kept.block
                    ),
                ));
            }
        }
    }
    for record in 0..n_records {
        if run_of_record[record].is_some() {
            continue;
        }
        let settings: Vec<String> = columns
            .iter()
            .zip(&plan.factors)
            .filter_map(|(column, name)| column.map(|factor| format!("{name} = {}", record_setting(record, factor))))
            .collect();
        findings.push(finding(
            Some(first_cell(record)),
            &table.sheet,
            settings.join(", "),
            "analysed as an extra run",
            format!(
                "row {} ({}) is not a run of plan {}; it was analysed as an extra run",
                table.record_rows[record] + 1,
                settings.join(", "),
                plan.id
            ),
        ));
    }
    for (run, record) in record_of_run.iter().enumerate() {
        if record.is_some() {
            continue;
        }
        let kept = &plan.runs[run];
        findings.push(finding(
            Some(CellPos::new(kept.row, 0).a1()),
            &plan.sheet,
            describe_run(run),
            "the analysis has one run fewer",
            format!(
                "planned run {} ({}) is not on the runs sheet '{}'",
                kept.run_order,
                describe_run(run),
                table.sheet
            ),
        ));
    }
    // Planned runs on the sheet without any result.
    let has_result = |record: usize| {
        table
            .responses
            .iter()
            .any(|response| response.values[record].is_finite())
    };
    let pending: Vec<usize> = (0..n_records)
        .filter(|&record| run_of_record[record].is_some() && !has_result(record))
        .collect();
    if !pending.is_empty() && pending.len() == n_records {
        findings.push(finding(
            table
                .record_rows
                .first()
                .map(|&row| CellPos::new(row, table.area.first.col).a1()),
            &table.sheet,
            format!("{} runs without results", pending.len()),
            "nothing to analyse yet",
            format!("no run of plan {} has a result yet", plan.id),
        ));
    } else {
        for record in pending {
            let Some(run) = run_of_record[record] else { continue };
            let cell = table.value_cell(0, record).a1();
            findings.push(finding(
                Some(cell),
                &table.sheet,
                "no result".into(),
                "the run was left out",
                format!(
                    "planned run {} ({}) has no result; it is missing from the analysis",
                    plan.runs[run].run_order,
                    describe_run(run)
                ),
            ));
        }
    }
    findings
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::plan::book::KeptRun;
    use workbook_io::layout::{Factor, Layout, Response};
    use workbook_io::CellRect;

    /// A table like a filled two-factor runs sheet: header on row 3 (index
    /// 2), factors in columns C and D, response in E.
    fn table(rows: &[(&str, &str, f64)], record_rows: Vec<u32>) -> TrialTable {
        let mut temperature = Factor {
            name: "Temperature".into(),
            column: Some(2),
            levels: Vec::new(),
            level_of_record: Vec::new(),
            is_block: false,
        };
        let mut supplier = Factor {
            name: "Supplier".into(),
            column: Some(3),
            ..temperature.clone()
        };
        for (first, second, _) in rows {
            for (factor, text) in [(&mut temperature, first), (&mut supplier, second)] {
                let index = match factor.levels.iter().position(|level| level == text) {
                    Some(index) => index,
                    None => {
                        factor.levels.push(text.to_string());
                        factor.levels.len() - 1
                    }
                };
                factor.level_of_record.push(index as u32);
            }
        }
        TrialTable {
            sheet: "Runs".into(),
            area: CellRect {
                first: CellPos::new(2, 0),
                last: CellPos::new(2 + rows.len() as u32, 4),
            },
            layout: Layout::Long,
            factors: vec![temperature, supplier],
            responses: vec![Response {
                name: "Yield".into(),
                column: Some(4),
                values: rows.iter().map(|row| row.2).collect(),
            }],
            record_rows,
            level_columns: Vec::new(),
            record_cols: Vec::new(),
            findings: Vec::new(),
            choices: Vec::new(),
        }
    }

    fn plan() -> KeptPlan {
        let settings = [("160", "North"), ("180", "South"), ("160", "South"), ("180", "North")];
        KeptPlan {
            sheet: "Plan (do not edit)".into(),
            id: "TP-TEST".into(),
            factors: vec!["Temperature".into(), "Supplier".into()],
            blocked: false,
            runs: settings
                .iter()
                .enumerate()
                .map(|(index, (first, second))| KeptRun {
                    run_order: index + 1,
                    standard_order: index + 1,
                    block: "1".into(),
                    settings: vec![first.to_string(), second.to_string()],
                    row: 12 + index as u32,
                })
                .collect(),
        }
    }

    fn check(rows: &[(&str, &str, f64)], record_rows: Vec<u32>, expect: &[(&str, &str)]) {
        let findings = check_runs(&table(rows, record_rows), &plan());
        let got: Vec<(String, String)> = findings
            .iter()
            .map(|finding| (finding.place(), finding.message.clone()))
            .collect();
        assert_eq!(got.len(), expect.len(), "{got:#?}");
        for ((place, message), (want_place, want_words)) in got.iter().zip(expect) {
            assert_eq!(place, want_place, "{message}");
            assert!(message.contains(want_words), "{message} lacks {want_words}");
        }
    }

    // The expected findings below follow from the plan and the rows by the
    // rules in this module's header (common practice of run sheet checks).

    #[test]
    fn a_run_as_planned_has_no_findings() {
        let rows = [
            ("160", "North", 1.0),
            ("180", "South", 2.0),
            ("160", "south", 3.0),
            ("180.0", "North", 4.0),
        ];
        check(&rows, vec![3, 4, 5, 6], &[]);
    }

    #[test]
    fn changed_settings_point_at_the_cell() {
        let rows = [
            ("160", "North", 1.0),
            ("175", "South", 2.0),
            ("160", "South", 3.0),
            ("180", "North", 4.0),
        ];
        check(
            &rows,
            vec![3, 4, 5, 6],
            &[("Runs!C5", "planned with Temperature = 180")],
        );
    }

    #[test]
    fn swapped_rows_are_out_of_order() {
        let rows = [
            ("160", "North", 1.0),
            ("160", "South", 3.0),
            ("180", "South", 2.0),
            ("180", "North", 4.0),
        ];
        check(
            &rows,
            vec![3, 4, 5, 6],
            &[("Runs!C5", "planned run 3"), ("Runs!C6", "planned run 2")],
        );
    }

    #[test]
    fn missing_added_and_unfinished_runs() {
        let rows = [
            ("160", "North", 1.0),
            ("180", "South", 2.0),
            ("160", "South", f64::NAN),
            ("200", "East", 5.0),
        ];
        // Run 4's row was replaced by a run not in the plan (row 7), and a
        // fifth row was added below; run 3 has no result.
        check(
            &rows,
            vec![3, 4, 5, 7],
            &[
                ("Runs!C8", "not a run of plan TP-TEST"),
                ("Plan (do not edit)!A16", "planned run 4"),
                (
                    "Runs!E6",
                    "planned run 3 (Temperature = 160, Supplier = South) has no result",
                ),
            ],
        );
    }
}
