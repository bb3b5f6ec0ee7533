//! Runs made at a setting the rest of the trial does not use: a run typed at 175 where
//! every other run of that factor is at 160 or 180.
//!
//! Left in, such a run turns a two-level factor into a three-level one, breaks the
//! two-level analysis and can make a combination look best that was hardly run. The
//! factorial analysis therefore leaves it out and the caller reports it at its cell, so
//! the engineer can correct the cell or confirm the setting.
//!
//! A level of a numeric treatment factor is taken as off plan when all of these hold
//! (rules of our own, stated here and in the finding):
//! - the factor has at least two planned levels, each used by at least two runs, and at
//!   most three of them (a two-level factor, perhaps with centre runs, or three levels);
//! - the level is used by at most two runs, and by at most a quarter of the runs of a
//!   typical planned level (the median count);
//! - it is not the centre (half-way between the lowest and highest planned levels);
//! - it has no mirror image about the centre among the levels (the axial runs of a
//!   central composite plan come in such pairs), and its runs do not hold every other
//!   numeric factor at its centre (as axial runs do).

/// One factor column of the trial, as the factorial analysis receives it.
#[derive(Debug, Clone, Copy)]
pub struct SettingsColumn<'a> {
    /// Level labels; numeric factors have labels that read as numbers.
    pub levels: &'a [String],
    /// For each record, an index into `levels`.
    pub level_of_record: &'a [u32],
}

/// A level found off plan.
#[derive(Debug, Clone, PartialEq)]
pub struct OffPlanLevel {
    /// The factor (index into the columns given).
    pub factor: usize,
    /// The level (index into that factor's labels).
    pub level: usize,
    /// The planned settings of that factor, in increasing order.
    pub planned: Vec<f64>,
}

struct NumericColumn {
    values: Vec<f64>,
    counts: Vec<usize>,
    planned: Vec<usize>,
    centre: f64,
    tolerance: f64,
}

fn numeric_column(column: &SettingsColumn<'_>) -> Option<NumericColumn> {
    let values: Option<Vec<f64>> = column
        .levels
        .iter()
        .map(|label| label.trim().parse::<f64>().ok().filter(|value| value.is_finite()))
        .collect();
    let values = values?;
    let mut counts = vec![0usize; values.len()];
    for &level in column.level_of_record {
        if let Some(count) = counts.get_mut(level as usize) {
            *count += 1;
        }
    }
    let planned: Vec<usize> = (0..values.len()).filter(|&level| counts[level] >= 2).collect();
    if planned.len() < 2 {
        return None;
    }
    let low = planned.iter().map(|&level| values[level]).fold(f64::INFINITY, f64::min);
    let high = planned
        .iter()
        .map(|&level| values[level])
        .fold(f64::NEG_INFINITY, f64::max);
    Some(NumericColumn {
        centre: 0.5 * (low + high),
        tolerance: 1e-9 * (high - low).abs().max(f64::MIN_POSITIVE),
        values,
        counts,
        planned,
    })
}

/// The levels of numeric treatment factors that look off plan (see the module
/// documentation for the rule), in factor then level order.
pub fn off_plan_levels(columns: &[SettingsColumn<'_>]) -> Vec<OffPlanLevel> {
    let numeric: Vec<Option<NumericColumn>> = columns.iter().map(numeric_column).collect();
    let mut found = Vec::new();
    for (factor, column) in numeric.iter().enumerate() {
        let Some(column) = column else { continue };
        if column.planned.len() > 3 || column.values.len() < 3 {
            continue;
        }
        let mut planned_counts: Vec<usize> = column.planned.iter().map(|&level| column.counts[level]).collect();
        planned_counts.sort_unstable();
        let typical = planned_counts[planned_counts.len() / 2];
        let near = |a: f64, b: f64| (a - b).abs() <= column.tolerance;
        for level in 0..column.values.len() {
            let count = column.counts[level];
            let value = column.values[level];
            if count == 0 || count > 2 || count * 4 > typical || column.planned.contains(&level) {
                continue;
            }
            if near(value, column.centre) {
                continue;
            }
            let mirror = 2.0 * column.centre - value;
            if column
                .values
                .iter()
                .enumerate()
                .any(|(other, &candidate)| other != level && column.counts[other] > 0 && near(candidate, mirror))
            {
                continue;
            }
            let records: Vec<usize> = (0..columns[factor].level_of_record.len())
                .filter(|&record| columns[factor].level_of_record[record] as usize == level)
                .collect();
            let axial = !records.is_empty()
                && numeric
                    .iter()
                    .enumerate()
                    .any(|(other, column)| other != factor && column.is_some())
                && records.iter().all(|&record| {
                    numeric.iter().enumerate().all(|(other, other_column)| {
                        other == factor
                            || other_column.as_ref().is_none_or(|other_column| {
                                let level = columns[other].level_of_record[record] as usize;
                                other_column.values.get(level).is_some_and(|&setting| {
                                    (setting - other_column.centre).abs() <= other_column.tolerance
                                })
                            })
                    })
                });
            if axial {
                continue;
            }
            let mut planned: Vec<f64> = column.planned.iter().map(|&level| column.values[level]).collect();
            planned.sort_by(f64::total_cmp);
            found.push(OffPlanLevel { factor, level, planned });
        }
    }
    found
}

#[cfg(test)]
mod tests {
    use super::*;

    fn labels(values: &[&str]) -> Vec<String> {
        values.iter().map(|value| value.to_string()).collect()
    }

    /// A 2^2 run twice (common practice for a replicated full factorial) with one run typed
    /// at 175 instead of 180: that level is off plan; nothing else is.
    #[test]
    fn a_run_at_an_unplanned_setting_is_found() {
        let temperature = labels(&["160", "180", "175"]);
        let pressure = labels(&["2", "4"]);
        let temperature_of = [0, 1, 0, 1, 0, 2, 0, 1];
        let pressure_of = [0, 0, 1, 1, 0, 0, 1, 1];
        let columns = [
            SettingsColumn {
                levels: &temperature,
                level_of_record: &temperature_of,
            },
            SettingsColumn {
                levels: &pressure,
                level_of_record: &pressure_of,
            },
        ];
        let found = off_plan_levels(&columns);
        assert_eq!(
            found,
            vec![OffPlanLevel {
                factor: 0,
                level: 2,
                planned: vec![160.0, 180.0]
            }]
        );
    }

    /// Centre runs and the axial runs of a central composite plan (Box & Wilson's design:
    /// cube, axial pairs with the other factors at their centre, centre runs) are planned.
    #[test]
    fn centre_and_axial_runs_are_planned() {
        let a = labels(&["-1", "1", "0", "-1.414", "1.414"]);
        let b = labels(&["-1", "1", "0", "-1.414", "1.414"]);
        // Cube (4), centre (4), axial for A (2), axial for B (2).
        let a_of = [0, 1, 0, 1, 2, 2, 2, 2, 3, 4, 2, 2];
        let b_of = [0, 0, 1, 1, 2, 2, 2, 2, 2, 2, 3, 4];
        let columns = [
            SettingsColumn {
                levels: &a,
                level_of_record: &a_of,
            },
            SettingsColumn {
                levels: &b,
                level_of_record: &b_of,
            },
        ];
        assert!(off_plan_levels(&columns).is_empty());
    }

    /// Text factors and factors whose levels are all well used are left alone.
    #[test]
    fn text_and_well_used_levels_are_left_alone() {
        let supplier = labels(&["North", "South", "East"]);
        let supplier_of = [0, 0, 0, 0, 1, 1, 1, 1, 2];
        let speed = labels(&["10", "20", "30"]);
        let speed_of = [0, 1, 2, 0, 1, 2, 0, 1, 2];
        let columns = [
            SettingsColumn {
                levels: &supplier,
                level_of_record: &supplier_of,
            },
            SettingsColumn {
                levels: &speed,
                level_of_record: &speed_of,
            },
        ];
        assert!(off_plan_levels(&columns).is_empty());
    }
}
