//! `trialyst size`: how many runs the next trial needs, and the power of
//! the runs one can afford, with the SD given or read from the results
//! workbook of the last trial.
//!
//! The computations are in [`engine::analysis::power`]; this module gathers
//! the inputs, builds the table of runs against power and its workbook.

use std::path::{Path, PathBuf};

use serde::Serialize;
use workbook_io::write::{Book, ChartKind, ChartSpec, Look, NumberFormat, Series, Sheet, SheetRange, Value};

use crate::load::CancelFlag;
use crate::report::document::{read_results_document, DocumentError};
/// What a one-factor size question should detect (re-exported for front ends).
pub use engine::analysis::power::OneWayEffect;
use engine::analysis::power::{
    check_one_way, one_way_power, one_way_runs_needed, pairs_plan, two_level_effect_power, PAIRS_METHOD,
};
use engine::stats::two_level::{minimum_aberration_design, DefiningRelation, DEFAULT_SEARCH_BUDGET};
use engine::stats::StatsError;

/// Most rows of the table of runs against power.
pub const MAX_TABLE_ROWS: usize = 40;

/// The trial being sized.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(rename_all = "kebab-case", tag = "kind")]
pub enum SizeDesign {
    /// Several conditions of one factor, the same number of runs each.
    OneWay {
        /// Number of conditions.
        conditions: usize,
        /// What should be detected.
        effect: OneWayEffect,
    },
    /// A two-level factorial or fraction, replicated.
    TwoLevel {
        /// Number of factors.
        factors: usize,
        /// Runs of one replicate (a power of two); `None` for the full factorial.
        runs_per_replicate: Option<usize>,
        /// Centre runs added to the whole plan.
        centre_points: usize,
        /// True when the planned model has the two-factor interactions.
        interactions: bool,
        /// The effect (difference of averages, high minus low) worth detecting.
        effect: f64,
    },
    /// A response-surface plan (central composite or Box-Behnken), replicated whole,
    /// for the tests of its square terms (see [`super::size_surface`]).
    Surface {
        /// Which plan.
        plan: engine::design::surface::SurfaceKind,
        /// Number of factors.
        factors: usize,
        /// Centre runs in one replicate.
        centre_points: usize,
        /// The axial distance of a central composite plan in coded units; `None` for the
        /// rotatable distance.
        axial: Option<f64>,
        /// The curvature worth detecting: a square term's coefficient in coded units.
        curvature: f64,
    },
}

/// Where the planning SD comes from.
#[derive(Debug, Clone, PartialEq)]
pub enum SdSource {
    /// Given by the user.
    Given(f64),
    /// The pooled SD of a response in a results workbook written by trialyst.
    LastTrial {
        /// The results workbook.
        path: PathBuf,
        /// The response, when the results hold several.
        response: Option<String>,
    },
}

/// A power and sample size question.
#[derive(Debug, Clone, PartialEq)]
pub struct SizeRequest {
    /// The trial.
    pub design: SizeDesign,
    /// The SD.
    pub sd: SdSource,
    /// Level of the test (default 0.05).
    pub alpha: f64,
    /// Wanted power (default 0.80).
    pub power: f64,
    /// For one-way trials: the wanted half-width of all-pairs intervals.
    pub half_width: Option<f64>,
}

/// Why a size question could not be answered.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum SizeError {
    /// An input is outside what the computation accepts.
    #[error("{0}")]
    Stats(#[from] StatsError),
    /// The results of the last trial could not be read, or hold no results document.
    #[error(transparent)]
    Document(#[from] DocumentError),
    /// The results lack the SD asked for.
    #[error("'{}': {reason}", path.display())]
    NotResults {
        /// The workbook.
        path: PathBuf,
        /// What is missing.
        reason: String,
    },
    /// The workbook could not be written.
    #[error(transparent)]
    Write(#[from] workbook_io::write::WriteError),
    /// The plan to be sized cannot be made.
    #[error("{0}")]
    Plan(String),
    /// The caller asked to stop before the answer was complete.
    #[error("the size question was cancelled before it was answered")]
    Cancelled,
}

/// The SD of the last trial, as read from its results.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LastTrialSd {
    /// The response.
    pub response: String,
    /// The pooled SD.
    pub sd: f64,
    /// Its degrees of freedom.
    pub df: f64,
}

/// One row of the table of runs against power.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PowerRow {
    /// Runs per condition (one-way) or replicates (two-level).
    pub count: usize,
    /// Runs in the whole trial.
    pub total_runs: usize,
    /// Residual degrees of freedom.
    pub residual_df: usize,
    /// Power; NaN where the test cannot be made (no residual df).
    pub power: f64,
    /// For a response-surface plan: the power of the test of all square terms together
    /// (`power` is then the least power among the tests of single square terms).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub group_power: Option<f64>,
}

/// The runs needed for the wanted power.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Needed {
    /// Runs per condition or replicates.
    pub count: usize,
    /// Runs in the whole trial.
    pub total_runs: usize,
    /// The power reached.
    pub power: f64,
}

/// The runs needed for intervals of a wanted half-width.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct HalfWidthAnswer {
    /// The half-width wanted.
    pub wanted: f64,
    /// Runs per condition needed.
    pub per_condition: usize,
    /// Runs in the whole trial.
    pub total_runs: usize,
    /// The half-width reached at that number of runs.
    pub reached: f64,
    /// How the half-width was computed.
    pub method: String,
}

/// The answer to a size question.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SizeAnswer {
    /// The trial, in a sentence.
    pub question: String,
    /// The trial.
    pub design: SizeDesign,
    /// The planning SD.
    pub sd: f64,
    /// Where it came from.
    pub sd_from: String,
    /// Its degrees of freedom, when read from the last trial.
    pub sd_df: Option<f64>,
    /// Level of the test.
    pub alpha: f64,
    /// Wanted power.
    pub target_power: f64,
    /// What `count` means in the table: runs per condition or replicates.
    pub count_means: String,
    /// The runs needed for the wanted power.
    pub needed: Needed,
    /// The runs needed for intervals of the wanted half-width.
    pub half_width: Option<HalfWidthAnswer>,
    /// Runs against power.
    pub table: Vec<PowerRow>,
    /// Remarks for the reader.
    pub notes: Vec<String>,
}

/// Reads the pooled SD of each analysed response from the results of the
/// last trial: a results workbook written by trialyst (its hidden results
/// document) or a `.json` file holding one results document (a line of
/// `trialyst run --json`).
///
/// # Errors
///
/// [`SizeError::Document`] when the file cannot be read or holds no
/// results document, [`SizeError::NotResults`] when no response in it has
/// a pooled SD.
pub fn read_last_trial(path: &Path) -> Result<Vec<LastTrialSd>, SizeError> {
    let document = read_results_document(path)?;
    let found: Vec<LastTrialSd> = document["responses"]
        .as_array()
        .into_iter()
        .flatten()
        .filter_map(|response| {
            let fit = response.get("one_way")?;
            let sd = fit.get("pooled_sd")?.as_f64()?;
            let df = fit.get("pooled_df")?.as_f64()?;
            let name = response.get("name")?.as_str()?;
            (sd.is_finite() && sd > 0.0 && df > 0.0).then(|| LastTrialSd {
                response: name.to_string(),
                sd,
                df,
            })
        })
        .collect();
    if found.is_empty() {
        return Err(SizeError::NotResults {
            path: path.to_path_buf(),
            reason: "its results hold no pooled SD (no response was analysed with values to spare within conditions)"
                .into(),
        });
    }
    Ok(found)
}

fn resolve_sd(source: &SdSource, notes: &mut Vec<String>) -> Result<(f64, String, Option<f64>), SizeError> {
    match source {
        SdSource::Given(sd) => {
            if !(sd.is_finite() && *sd > 0.0) {
                return Err(StatsError::InvalidParameter {
                    name: "SD",
                    rule: "a finite number above 0",
                    value: *sd,
                }
                .into());
            }
            Ok((*sd, "given".into(), None))
        }
        SdSource::LastTrial { path, response } => {
            let all = read_last_trial(path)?;
            let chosen = match response {
                Some(name) => all
                    .iter()
                    .find(|entry| entry.response.eq_ignore_ascii_case(name.trim())),
                None if all.len() == 1 => all.first(),
                None => None,
            };
            let listed = all
                .iter()
                .map(|entry| entry.response.as_str())
                .collect::<Vec<_>>()
                .join(", ");
            let Some(chosen) = chosen else {
                return Err(SizeError::NotResults {
                    path: path.clone(),
                    reason: match response {
                        Some(name) => format!("no response '{name}' (responses: {listed})"),
                        None => format!("it holds several responses ({listed}); choose one"),
                    },
                });
            };
            notes.push(format!(
                "The SD is the pooled SD of '{}' in the last trial, on {} degrees of freedom; it is itself an estimate, so treat the runs needed as a guide.",
                chosen.response, chosen.df
            ));
            let file = path
                .file_name()
                .map(|name| name.to_string_lossy().into_owned())
                .unwrap_or_default();
            Ok((
                chosen.sd,
                format!("pooled SD of '{}' in {file}", chosen.response),
                Some(chosen.df),
            ))
        }
    }
}

fn two_level_relation(factors: usize, runs_per_replicate: Option<usize>) -> Result<DefiningRelation, StatsError> {
    match runs_per_replicate {
        None => DefiningRelation::full_factorial(factors),
        Some(runs) => {
            if !runs.is_power_of_two() || runs < 2 || factors > 15 || runs > (1usize << factors) {
                return Err(StatsError::InvalidParameter {
                    name: "runs per replicate",
                    rule: "a power of two, at most 2^factors",
                    value: runs as f64,
                });
            }
            let n_generators = factors - runs.trailing_zeros() as usize;
            Ok(minimum_aberration_design(factors, n_generators, DEFAULT_SEARCH_BUDGET)?.relation)
        }
    }
}

/// Answers a size question.
///
/// # Errors
///
/// [`SizeError`] for unusable inputs or an unreadable results workbook.
pub fn size_answer(request: &SizeRequest) -> Result<SizeAnswer, SizeError> {
    size_answer_until(request, &CancelFlag::default())
}

/// Answers a size question, stopping at the next stage once `cancel` is set: after
/// the SD is read, after each power computed for the search and the table, and after
/// the half-width search.
///
/// # Errors
///
/// As [`size_answer`]; [`SizeError::Cancelled`] once `cancel` is set.
pub fn size_answer_until(request: &SizeRequest, cancel: &CancelFlag) -> Result<SizeAnswer, SizeError> {
    let stop = || {
        if cancel.is_cancelled() {
            Err(SizeError::Cancelled)
        } else {
            Ok(())
        }
    };
    let mut notes = Vec::new();
    let (sd, sd_from, sd_df) = resolve_sd(&request.sd, &mut notes)?;
    stop()?;
    let alpha = request.alpha;
    let target = request.power;
    match &request.design {
        SizeDesign::OneWay { conditions, effect } => {
            check_one_way(*conditions, effect)?;
            let needed_count = one_way_runs_needed(*conditions, effect, sd, alpha, target)?;
            stop()?;
            let half_width = match request.half_width {
                Some(wanted) => {
                    let confidence = 1.0 - alpha;
                    let (per_condition, reached) = pairs_plan(*conditions, sd, confidence, wanted)?;
                    stop()?;
                    notes.push(
                        "The all-pairs half-width is the Tukey-Kramer one the trial will show if its pooled SD comes out at the planning SD; a larger SD widens it.".into(),
                    );
                    Some(HalfWidthAnswer {
                        wanted,
                        per_condition,
                        total_runs: per_condition * conditions,
                        reached,
                        method: PAIRS_METHOD.into(),
                    })
                }
                None => None,
            };
            let last = (needed_count * 3 / 2)
                .max(needed_count + 4)
                .max(8)
                .min(needed_count + MAX_TABLE_ROWS);
            let first = 2usize.max(last.saturating_sub(MAX_TABLE_ROWS - 1));
            let mut table = Vec::new();
            for count in first..=last {
                stop()?;
                table.push(PowerRow {
                    count,
                    total_runs: count * conditions,
                    residual_df: conditions * (count - 1),
                    power: one_way_power(count, *conditions, effect, sd, alpha)?,
                    group_power: None,
                });
            }
            let what = match effect {
                OneWayEffect::SmallestDifference(delta) => format!(
                    "a difference of {delta} between any two of {conditions} conditions (the least favourable case: two means {} either side of the centre, the rest at the centre)",
                    delta / 2.0
                ),
                OneWayEffect::Means(means) => format!(
                    "means of {} across {conditions} conditions",
                    means.iter().map(|mean| mean.to_string()).collect::<Vec<_>>().join(", ")
                ),
            };
            Ok(SizeAnswer {
                question: format!("Runs per condition for the F test to detect {what}"),
                design: request.design.clone(),
                sd,
                sd_from,
                sd_df,
                alpha,
                target_power: target,
                count_means: "runs per condition".into(),
                needed: Needed {
                    count: needed_count,
                    total_runs: needed_count * conditions,
                    power: one_way_power(needed_count, *conditions, effect, sd, alpha)?,
                },
                half_width,
                table,
                notes,
            })
        }
        SizeDesign::TwoLevel {
            factors,
            runs_per_replicate,
            centre_points,
            interactions,
            effect,
        } => {
            let relation = two_level_relation(*factors, *runs_per_replicate)?;
            let base_runs = relation.n_runs();
            let terms = relation.alias_chains(if *interactions { 2 } else { 1 }).len();
            let curvature = usize::from(*centre_points > 0);
            let row_for = |replicates: usize| -> Result<PowerRow, StatsError> {
                let factorial_runs = replicates * base_runs;
                let total_runs = factorial_runs + centre_points;
                let residual_df = total_runs.saturating_sub(1 + terms + curvature);
                let power = if residual_df == 0 {
                    f64::NAN
                } else {
                    two_level_effect_power(factorial_runs, residual_df, *effect, sd, alpha)?
                };
                Ok(PowerRow {
                    count: replicates,
                    total_runs,
                    residual_df,
                    power,
                    group_power: None,
                })
            };
            let mut needed_count = None;
            let mut replicates = 1;
            while replicates <= 100_000 {
                stop()?;
                let row = row_for(replicates)?;
                if row.power >= target {
                    needed_count = Some(row);
                    break;
                }
                replicates = if replicates < 64 {
                    replicates + 1
                } else {
                    replicates * 2
                };
            }
            let Some(needed_row) = needed_count else {
                return Err(StatsError::NoConvergence {
                    what: "replicates search (more than 100000 replicates needed)",
                    iterations: replicates,
                }
                .into());
            };
            let last = (needed_row.count + 3).max(4);
            let first = 1usize.max(last.saturating_sub(MAX_TABLE_ROWS - 1));
            let table = (first..=last)
                .map(|replicates| {
                    stop()?;
                    Ok(row_for(replicates)?)
                })
                .collect::<Result<Vec<_>, SizeError>>()?;
            if table.iter().any(|row| row.power.is_nan()) {
                notes.push(
                    "Where the residual df is 0 the planned model uses every run, so no test can be made; add replicates or centre points, or drop the interactions from the model.".into(),
                );
            }
            notes.push(format!(
                "The planned model has {} ({}); an effect is the difference between the averages at the high and low levels.",
                engine::analysis::verdict::count_of(terms, "effect"),
                if *interactions {
                    "main effects and two-factor interactions"
                } else {
                    "main effects"
                }
            ));
            Ok(SizeAnswer {
                question: format!(
                    "Replicates of a {base_runs}-run two-level plan in {factors} factors for the t test to detect an effect of {effect}"
                ),
                design: request.design.clone(),
                sd,
                sd_from,
                sd_df,
                alpha,
                target_power: target,
                count_means: "replicates".into(),
                needed: Needed {
                    count: needed_row.count,
                    total_runs: needed_row.total_runs,
                    power: needed_row.power,
                },
                half_width: None,
                table,
                notes,
            })
        }
        SizeDesign::Surface {
            plan,
            factors,
            centre_points,
            axial,
            curvature,
        } => super::size_surface::surface_answer(
            request,
            super::size_surface::SurfaceQuestion {
                plan: *plan,
                factors: *factors,
                centre_points: *centre_points,
                axial: *axial,
                curvature: *curvature,
            },
            (sd, sd_from, sd_df),
            notes,
            &stop,
        ),
    }
}

/// Name of the sheet of the size workbook.
pub const SIZE_SHEET: &str = "Power and runs";

/// The size answer as a workbook: the question, the answer, the table of
/// runs against power and its chart.
pub fn size_book(answer: &SizeAnswer) -> Book {
    let mut sheet = Sheet::new(SIZE_SHEET);
    sheet.widths = vec![(0, 30.0), (1, 16.0), (2, 16.0), (3, 12.0)];
    // The question's bracketed detail goes on a note line of its own, so that the title
    // does not run far past the table and shrink the printed page.
    match answer.question.split_once(" (") {
        Some((head, detail)) => {
            sheet.put(0, 0, Value::text(head), Look::Title);
            sheet.put(1, 0, Value::text(format!("({detail}")), Look::Note);
        }
        None => sheet.put(0, 0, Value::text(answer.question.clone()), Look::Title),
    }
    let mut rows = vec![
        vec![Value::text("SD used"), Value::number(answer.sd)],
        vec![Value::text("SD from"), Value::text(answer.sd_from.clone())],
        vec![Value::text("level of the test (alpha)"), Value::number(answer.alpha)],
        vec![Value::text("power wanted"), Value::number(answer.target_power)],
        vec![
            Value::text(format!("{} needed", answer.count_means)),
            Value::integer(answer.needed.count as f64),
        ],
        vec![
            Value::text("runs in all"),
            Value::integer(answer.needed.total_runs as f64),
        ],
        vec![
            Value::text("power reached"),
            Value::Number(answer.needed.power, NumberFormat::Decimals(3)),
        ],
    ];
    if let Some(half) = &answer.half_width {
        rows.push(vec![
            Value::text("runs per condition for the half-width wanted"),
            Value::integer(half.per_condition as f64),
        ]);
        rows.push(vec![Value::text("half-width reached"), Value::number(half.reached)]);
    }
    // Rows a little taller than their text, values at the foot, so that the first row
    // of each table stands clear of its header's border when printed.
    let mut next = sheet.spaced_table(2, 0, &["item", "value"], rows);
    for note in &answer.notes {
        sheet.put(next, 0, Value::text(note.clone()), Look::Note);
        next += 1;
    }
    next += 1;
    let header_row = next;
    let table_rows = answer
        .table
        .iter()
        .map(|row| {
            vec![
                Value::integer(row.count as f64),
                Value::integer(row.total_runs as f64),
                Value::integer(row.residual_df as f64),
                Value::Number(row.power, NumberFormat::Decimals(3)),
            ]
            .into_iter()
            .chain(
                row.group_power
                    .map(|power| Value::Number(power, NumberFormat::Decimals(3))),
            )
            .collect()
        })
        .collect();
    let mut headers = vec![answer.count_means.as_str(), "runs in all", "residual df", "power"];
    let grouped = answer.table.iter().any(|row| row.group_power.is_some());
    if grouped {
        headers[3] = "power, each square";
        headers.push("power, squares together");
    }
    let end = sheet.spaced_table(header_row, 0, &headers, table_rows);
    if !answer.table.is_empty() {
        sheet.charts.push(ChartSpec {
            kind: ChartKind::Lines,
            title: format!("Power against {}", answer.count_means),
            x_title: answer.count_means.clone(),
            y_title: "power".into(),
            series: vec![Series {
                name: "power".into(),
                categories: SheetRange::column(SIZE_SHEET, 0, header_row + 1, end - 1),
                values: SheetRange::column(SIZE_SHEET, 3, header_row + 1, end - 1),
                bar_plus: None,
                bar_minus: None,
                labels: None,
            }],
            anchor: (header_row, if grouped { 5 } else { 4 }),
            size: (520, 320),
            value_limits: Some((0.0, 1.0)),
        });
    }
    Book { sheets: vec![sheet] }
}

/// Writes the size workbook atomically.
///
/// # Errors
///
/// [`SizeError::Write`].
pub fn write_size(answer: &SizeAnswer, destination: &Path) -> Result<(), SizeError> {
    workbook_io::write::write_book(&size_book(answer), destination)?;
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn two_level_answer_counts_model_terms() {
        // 2^3 full factorial with the two-factor interactions: 6 effects, so
        // one replicate of 8 runs leaves 8 - 1 - 6 = 1 residual df (the
        // three-factor interaction), common practice.
        let request = SizeRequest {
            design: SizeDesign::TwoLevel {
                factors: 3,
                runs_per_replicate: None,
                centre_points: 0,
                interactions: true,
                effect: 2.0,
            },
            sd: SdSource::Given(1.0),
            alpha: 0.05,
            power: 0.8,
            half_width: None,
        };
        let answer = size_answer(&request).expect("answer");
        assert_eq!(answer.table[0].residual_df, 1);
        assert_eq!(answer.table[1].residual_df, 9);
        let needed = &answer.needed;
        assert!(needed.power >= 0.8);
        let previous = answer
            .table
            .iter()
            .find(|row| row.count + 1 == needed.count)
            .expect("row before");
        assert!(previous.power < 0.8 || previous.power.is_nan());
        let book = size_book(&answer);
        assert_eq!(book.sheets[0].charts.len(), 1);
    }

    #[test]
    fn a_set_cancel_flag_stops_the_answer() {
        let one_way = SizeRequest {
            design: SizeDesign::OneWay {
                conditions: 4,
                effect: OneWayEffect::SmallestDifference(1.0),
            },
            sd: SdSource::Given(0.8),
            alpha: 0.05,
            power: 0.9,
            half_width: Some(0.5),
        };
        let two_level = SizeRequest {
            design: SizeDesign::TwoLevel {
                factors: 4,
                runs_per_replicate: None,
                centre_points: 2,
                interactions: false,
                effect: 1.5,
            },
            ..one_way.clone()
        };
        for request in [one_way, two_level] {
            let cancel = CancelFlag::new();
            let answered = size_answer_until(&request, &cancel).expect("answer");
            assert_eq!(answered, size_answer(&request).expect("answer"));
            cancel.cancel();
            assert!(matches!(
                size_answer_until(&request, &cancel),
                Err(SizeError::Cancelled)
            ));
        }
    }
}
