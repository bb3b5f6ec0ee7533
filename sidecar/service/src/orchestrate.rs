//! The per-response orchestration: the conditions of the table, the engine's
//! one-way fit, comparisons, checks, reading and factorial analysis for
//! each response, with the engine's record numbers mapped to cells.

use std::collections::HashMap;
use std::path::{Path, PathBuf};
use std::time::Instant;

use workbook_io::layout::{detect_table, Finding, FindingKind, TrialTable};
use workbook_io::{SheetGrid, SheetInfo};

use crate::failure::ServiceError;
use crate::load::{load, settings_sources, stop_if_cancelled, summarise_table, table_request, CancelFlag, Loaded};
use crate::results::{
    now_rfc3339, standard_cautions, Inspection, LeadChoice, LeadKind, ResponseOutcome, ResponseResult, SourceInfo,
    Timings, WorkbookResults, RESULTS_FORMAT_VERSION, TOOL_NAME, TOOL_VERSION,
};
use crate::settings::Settings;
use crate::AnalysisRequest;
use engine::analysis::contrast::parse_contrasts;

use crate::settings::NAMES_NOTHING;
use engine::analysis::oneway::{fit_one_way, OneWayError, OneWayFit};

/// Most conditions compared in one response. Every pair of conditions is
/// compared, so the work and the tables grow with the square of the count:
/// 200 conditions are 19,900 pairs. A table with more is almost always a
/// sheet read in the wrong layout (a row of thousands of headers), and
/// comparing it would exhaust the machine.
pub const MAX_CONDITIONS: usize = 200;

/// Most responses analysed from one table; the rest are left out with a
/// finding. Each response gets its own section, chart and tables, and a
/// sheet of thousands of numeric columns is rarely one trial.
pub const MAX_RESPONSES: usize = 250;

/// The unit at the end of a header: `Thickness (mm)` gives `mm`.
pub fn unit_of(header: &str) -> Option<String> {
    let trimmed = header.trim();
    for (open, close) in [('(', ')'), ('[', ']')] {
        if trimmed.ends_with(close) {
            if let Some(start) = trimmed.rfind(open) {
                let unit = trimmed[start + 1..trimmed.len() - 1].trim();
                // "(2)" is the number given to a repeated header, not a unit: the unit,
                // if any, is in the header before it ("Tensile strength (MPa) (2)").
                if !unit.is_empty() && unit.chars().all(|c| c.is_ascii_digit()) {
                    return unit_of(&trimmed[..start]);
                }
                if !unit.is_empty() && unit.len() <= 20 {
                    return Some(unit.to_string());
                }
            }
        }
    }
    None
}

/// Reads and analyses a workbook.
///
/// # Errors
///
/// [`ServiceError`] when the workbook cannot be read, holds no table, or no
/// response in it can be analysed. Problems with single cells are findings
/// in the result, not errors.
pub fn analyse_workbook(path: &Path, request: &AnalysisRequest) -> Result<WorkbookResults, ServiceError> {
    let loaded = load(path, request)?;
    analyse_loaded(path, loaded, &request.cancel)
}

/// Analyses cells that a client sent (a 2-D block as read from its sheet).
///
/// # Errors
///
/// As [`analyse_workbook`].
pub fn analyse_grid(
    grid: &SheetGrid,
    settings: &Settings,
    source_name: &str,
    cancel: &CancelFlag,
) -> Result<WorkbookResults, ServiceError> {
    let loaded = load_grid(grid, settings, source_name, cancel)?;
    analyse_loaded(Path::new(source_name), loaded, cancel)
}

/// What would be analysed in cells that a client sent: the table found and
/// every data problem with its cell, without analysing (the add-in's
/// "findings only" command).
///
/// # Errors
///
/// [`ServiceError::NoTable`] when the cells hold no trial table;
/// [`ServiceError::Cancelled`] when `cancel` was set before the table was read.
pub fn inspect_grid(
    grid: &SheetGrid,
    settings: &Settings,
    source_name: &str,
    cancel: &CancelFlag,
) -> Result<Inspection, ServiceError> {
    let loaded = load_grid(grid, settings, source_name, cancel)?;
    Ok(Inspection {
        source: loaded.source,
        sheets: loaded.sheets,
        table: summarise_table(&loaded.table),
        settings: loaded.settings,
        findings: loaded.findings,
    })
}

/// The table of cells sent by a client, as loading a workbook would give it.
fn load_grid(
    grid: &SheetGrid,
    settings: &Settings,
    source_name: &str,
    cancel: &CancelFlag,
) -> Result<Loaded, ServiceError> {
    stop_if_cancelled(cancel)?;
    let table = detect_table(grid, &table_request(settings, None)).map_err(|error| ServiceError::NoTable {
        path: PathBuf::from(source_name),
        reasons: error.to_string(),
    })?;
    // Finding the table is the long stage for a large block of cells.
    stop_if_cancelled(cancel)?;
    let mut table = table;
    let findings = std::mem::take(&mut table.findings);
    let source = SourceInfo {
        path: source_name.to_string(),
        file_name: source_name.to_string(),
        sha256: String::new(),
        bytes: 0,
        format: "cells".into(),
        sheet: table.sheet.clone(),
        range: table.area.a1(),
    };
    Ok(Loaded {
        source,
        sheets: vec![SheetInfo {
            name: grid.name.clone(),
            visible: true,
        }],
        table,
        settings: settings.clone(),
        settings_sources: settings_sources(settings, &Settings::default(), &Settings::default()),
        // Cells sent with their settings: every setting is the caller's own.
        requested_directions: settings
            .response_directions
            .iter()
            .map(|named| named.response.clone())
            .collect(),
        findings,
        timings: Timings::default(),
    })
}

/// The conditions of a table: one factor's levels, or the observed
/// combinations of several treatment factors' levels.
pub fn conditions_of(table: &TrialTable) -> (String, Vec<String>, Vec<u32>) {
    let treatment: Vec<&workbook_io::layout::Factor> = table.factors.iter().filter(|factor| !factor.is_block).collect();
    let treatment = if treatment.is_empty() {
        table.factors.iter().collect()
    } else {
        treatment
    };
    if treatment.len() == 1 {
        let factor = treatment[0];
        return (
            factor.name.clone(),
            factor.levels.clone(),
            factor.level_of_record.clone(),
        );
    }
    let name = treatment
        .iter()
        .map(|factor| factor.name.as_str())
        .collect::<Vec<_>>()
        .join(" × ");
    let mut combination_index: HashMap<Vec<u32>, u32> = HashMap::new();
    let mut names = Vec::new();
    let mut groups = Vec::with_capacity(table.n_records());
    for record in 0..table.n_records() {
        let key: Vec<u32> = treatment.iter().map(|factor| factor.level_of_record[record]).collect();
        let next = combination_index.len() as u32;
        let index = *combination_index.entry(key.clone()).or_insert_with(|| {
            names.push(
                treatment
                    .iter()
                    .zip(&key)
                    .map(|(factor, level)| factor.levels[*level as usize].as_str())
                    .collect::<Vec<_>>()
                    .join(" / "),
            );
            next
        });
        groups.push(index);
    }
    // The combinations in the order of their factors' levels (numeric levels are in
    // numeric order), the first factor changing slowest, rather than in the order the
    // rows happen to list them.
    let mut order: Vec<(Vec<u32>, u32)> = combination_index.into_iter().collect();
    order.sort();
    let mut new_index = vec![0u32; names.len()];
    let mut sorted_names = Vec::with_capacity(names.len());
    for (position, (_, old)) in order.iter().enumerate() {
        new_index[*old as usize] = position as u32;
        sorted_names.push(names[*old as usize].clone());
    }
    let groups = groups.into_iter().map(|group| new_index[group as usize]).collect();
    (name, sorted_names, groups)
}

pub(crate) fn analyse_loaded(
    path: &Path,
    loaded: Loaded,
    cancel: &CancelFlag,
) -> Result<WorkbookResults, ServiceError> {
    let Loaded {
        source,
        mut table,
        settings,
        settings_sources,
        requested_directions,
        mut findings,
        mut timings,
        ..
    } = loaded;
    let started = Instant::now();
    if table.responses.len() > MAX_RESPONSES {
        let first_left_out = &table.responses[MAX_RESPONSES];
        findings.push(Finding {
            kind: FindingKind::Analysis,
            sheet: table.sheet.clone(),
            cell: first_left_out
                .column
                .map(|col| workbook_io::CellPos::new(table.area.first.row, col).a1()),
            found: format!("{} response columns", table.responses.len()),
            action: format!("the first {MAX_RESPONSES} were analysed, the rest left out"),
            message: format!(
                "the table has {} response columns; the first {MAX_RESPONSES} were analysed and the rest, from '{}' on, were left out; name the responses to analyse",
                table.responses.len(),
                first_left_out.name
            ),
        });
        table.responses.truncate(MAX_RESPONSES);
    }
    let (condition_factor, condition_names, groups) = conditions_of(&table);
    let confidence = settings.confidence_level();
    // A contrast, a direction or a control that names nothing in the table is a mistake
    // in the request, not in the data: it stops the analysis with the names that would
    // work (a usage error on the command line, InvalidParams in the protocol).
    let quoted =
        |names: &mut dyn Iterator<Item = &str>| names.map(|name| format!("'{name}'")).collect::<Vec<_>>().join(", ");
    let mut contrasts = Vec::new();
    for text in &settings.contrasts {
        match parse_contrasts(text, &condition_names) {
            Ok(mut parsed) => contrasts.append(&mut parsed),
            Err(error) => {
                // The parser's message names the contrast and lists the conditions.
                return Err(ServiceError::Settings(format!(
                    "{error} (the contrast {NAMES_NOTHING} it can use)"
                )));
            }
        }
    }
    for named in &settings.response_directions {
        if !table
            .responses
            .iter()
            .any(|response| crate::settings::names_response(&named.response, &response.name))
        {
            let responses = quoted(&mut table.responses.iter().map(|response| response.name.as_str()));
            if requested_directions.contains(&named.response) {
                return Err(ServiceError::Settings(format!(
                    "the direction for '{}' {NAMES_NOTHING}: there is no response of that name (the responses are {responses})",
                    named.response,
                )));
            }
            // From a settings sheet or folder file shared by several workbooks: a note.
            findings.push(Finding {
                kind: FindingKind::Setting,
                sheet: String::new(),
                cell: None,
                found: format!("direction for '{}'", named.response),
                action: "the direction was not used".into(),
                message: format!(
                    "a direction was given for '{}', but the table has no response of that name (responses: {responses})",
                    named.response,
                ),
            });
        }
    }
    if let Some(control) = &settings.control {
        if !condition_names.iter().any(|name| name == control) {
            return Err(ServiceError::Settings(format!(
                "the control '{control}' {NAMES_NOTHING}: it is not one of the conditions (the conditions are {})",
                quoted(&mut condition_names.iter().map(String::as_str))
            )));
        }
    }
    let off_plan = off_plan_runs(&table, &mut findings);
    let mut responses = Vec::new();
    for (response_index, response) in table.responses.iter().enumerate() {
        if cancel.is_cancelled() {
            return Err(ServiceError::Cancelled);
        }
        let direction = settings.direction_for(&response.name);
        let factorial = factorial_of(&table, response_index, &settings, direction, &off_plan);
        if let Some(finding) = factorial
            .as_ref()
            .and_then(|outcome| sums_out_of_range(&table, &response.name, &response.values, outcome))
        {
            findings.push(finding);
        }
        // Conditions with fewer than two usable values are reported here, per response;
        // in a factorial trial one run per combination is the design, so only
        // combinations with no usable value are (see `replication_finding` for the rest).
        let mut counts = vec![0usize; condition_names.len()];
        let mut first_record: Vec<Option<usize>> = vec![None; condition_names.len()];
        // The first row of each condition, usable or not: where a condition with no
        // usable value is pointed to.
        let mut first_row: Vec<Option<usize>> = vec![None; condition_names.len()];
        for (record, (&group, value)) in groups.iter().zip(&response.values).enumerate() {
            first_row[group as usize].get_or_insert(record);
            if value.is_finite() {
                counts[group as usize] += 1;
                first_record[group as usize].get_or_insert(record);
            }
        }
        for (condition, &count) in counts.iter().enumerate() {
            if count < 2 && !(factorial.is_some() && count == 1) {
                let cell = first_record[condition]
                    .or(first_row[condition])
                    .map(|record| table.value_cell(response_index, record).a1());
                let (action, detail, consequence) = if count == 0 {
                    (
                        "the condition was left out of this response",
                        "has no usable value",
                        "it was left out of the comparison",
                    )
                } else {
                    (
                        "kept; it adds no within-condition degrees of freedom",
                        "has only one value",
                        "its spread cannot be judged on its own",
                    )
                };
                findings.push(Finding {
                    kind: FindingKind::TooFewValues,
                    sheet: table.sheet.clone(),
                    cell,
                    found: engine::analysis::verdict::count_of(count, "value"),
                    action: action.into(),
                    message: format!(
                        "condition '{}' {detail} for '{}'; {consequence}",
                        condition_names[condition], response.name
                    ),
                });
            }
        }
        let with_values = counts.iter().filter(|&&count| count > 0).count();
        // In a trial run in blocks, the values with their block's shift taken off.
        let mut block_adjusted: Option<Vec<f64>> = None;
        let outcome = if with_values > MAX_CONDITIONS {
            ResponseOutcome::NotAnalysed {
                reason: format!(
                    "'{}' has {with_values} conditions with values in sheet '{}' ({}), more than the {MAX_CONDITIONS} that are compared pair by pair; check that the table was read in the right layout or choose the columns to use",
                    response.name,
                    table.sheet,
                    table.area.a1()
                ),
            }
        } else {
            let fitted = fit_conditions(
                &table,
                &condition_names,
                &groups,
                &response.values,
                confidence,
                &contrasts,
                &mut findings,
            );
            match fitted {
                Ok((fit, adjusted)) => {
                    block_adjusted = adjusted;
                    ResponseOutcome::Analysed { one_way: Box::new(fit) }
                }
                Err(OneWayError::TooFewConditions { found }) => ResponseOutcome::NotAnalysed {
                    reason: format!(
                        "only {} {} values for '{}'; at least two are needed",
                        engine::analysis::verdict::count_of(found, "condition"),
                        if found == 1 { "has" } else { "have" },
                        response.name
                    ),
                },
                Err(error) => ResponseOutcome::NotAnalysed {
                    reason: error.to_string(),
                },
            }
        };
        let assessment = match &outcome {
            ResponseOutcome::Analysed { one_way } => {
                let assessment_started = Instant::now();
                let checked_values = block_adjusted.as_deref().unwrap_or(&response.values);
                let mut assessment = assess_response(one_way, &groups, &counts, checked_values, &settings, direction);
                timings.assessment_ms += assessment_started.elapsed().as_secs_f64() * 1e3;
                for outlier in &mut assessment.checks.outliers {
                    // The value as typed, not with its block's shift taken off.
                    outlier.value = response.values[outlier.record];
                    let cell = table.value_cell(response_index, outlier.record).a1();
                    findings.push(Finding {
                        kind: FindingKind::Analysis,
                        sheet: table.sheet.clone(),
                        cell: Some(cell.clone()),
                        found: format!("{}", outlier.value),
                        action: "kept in the analysis; flagged for checking".into(),
                        message: format!(
                            "the value {} of condition '{}' in '{}' stands out (externally studentized residual {:.2}, Bonferroni p = {:.3}); check it",
                            outlier.value, outlier.condition, response.name, outlier.studentized, outlier.p_bonferroni
                        ),
                    });
                    outlier.cell = Some(cell);
                }
                Some(Box::new(assessment))
            }
            ResponseOutcome::NotAnalysed { .. } => None,
        };
        let unit = unit_of(&response.name);
        let one_way_verdict = match &outcome {
            ResponseOutcome::Analysed { one_way } => Some(engine::analysis::verdict::read_fit(
                &response.name,
                unit.as_deref(),
                one_way,
                assessment.as_deref(),
            )),
            ResponseOutcome::NotAnalysed { .. } => None,
        };
        let outcome_fit: Option<&OneWayFit> = match &outcome {
            ResponseOutcome::Analysed { one_way } => Some(one_way),
            ResponseOutcome::NotAnalysed { .. } => None,
        };
        let factorial_reading = factorial.as_ref().and_then(|outcome| {
            engine::analysis::verdict::read_factorial(&response.name, unit.as_deref(), outcome, direction)
        });
        let lead = lead_choice(
            &table,
            factorial.as_ref(),
            factorial_reading.is_some(),
            condition_names.len(),
        );
        if let Some(finding) = factorial_reading
            .as_ref()
            .and_then(|reading| replication_finding(&table, &response.name, reading))
        {
            findings.push(finding);
        }
        let (verdict, one_way_verdict) = match factorial_reading.as_ref() {
            Some(reading) => {
                let mut verdict = reading.verdict.clone();
                if let Some(one_way) = &one_way_verdict {
                    verdict.details.push(one_way_detail(
                        condition_names.len(),
                        one_way,
                        verdict.conditions_differ,
                        outcome_fit,
                        assessment.as_deref(),
                    ));
                }
                (Some(verdict), one_way_verdict)
            }
            None => (one_way_verdict, None),
        };
        let (second_order, after_surface, surface) = match second_order_of(&table, response_index, &settings, direction)
        {
            Some((sentence, next, outcome)) => (Some(sentence), Some(next), Some(Box::new(outcome))),
            None => (None, None, None),
        };
        // A response-surface trial (composite or Box-Behnken: settings beyond two levels
        // that do not form a full grid) is led by its second-order model.
        let (lead, verdict, one_way_verdict) = match surface.as_deref().filter(|outcome| surface_leads(&table, outcome))
        {
            Some(outcome) => {
                let mut reading = engine::analysis::surface::reading_in_words(
                    &response.name,
                    unit.as_deref(),
                    outcome,
                    settings.confidence_level(),
                    direction,
                );
                let one_way = one_way_verdict.or_else(|| verdict.clone().filter(|_| factorial_reading.is_none()));
                if let Some(one_way) = &one_way {
                    reading.details.push(one_way_detail(
                        condition_names.len(),
                        one_way,
                        reading.conditions_differ,
                        outcome_fit,
                        assessment.as_deref(),
                    ));
                }
                let lead = LeadChoice {
                    analysis: LeadKind::SecondOrder,
                    reason: format!(
                        "The second-order model leads because the trial is a response-surface plan ({} factors at three or five numeric settings with centre runs): it fits the surface's slopes, interactions and curvature, which the factorial model of the {} combinations cannot separate; the other analyses are kept as details.",
                        outcome.factor_names.len(),
                        condition_names.len()
                    ),
                };
                (lead, Some(reading), one_way)
            }
            None => (lead, verdict, one_way_verdict),
        };
        let next_runs = factorial
            .as_ref()
            .and_then(|outcome| next_trial_after_screen(&table, outcome, direction))
            .or(after_surface);
        responses.push(ResponseResult {
            next_trial: next_runs.as_ref().map(|runs| runs.reason.clone()),
            next_runs,
            second_order,
            surface,
            name: response.name.clone(),
            assessment,
            unit,
            verdict,
            factorial,
            lead,
            factorial_reading,
            one_way_verdict,
            condition_factor: condition_factor.clone(),
            outcome,
        });
    }
    let compromise = crate::compromise::compromise_of(&settings, &responses, &mut findings);
    if let Some(found) = &compromise {
        crate::compromise::confirm_the_compromise(found, &mut responses);
    }
    timings.analysis_ms = started.elapsed().as_secs_f64() * 1e3;
    if responses.iter().all(|response| response.fit().is_none()) {
        let reasons = responses
            .iter()
            .map(|response| match &response.outcome {
                ResponseOutcome::NotAnalysed { reason } => reason.clone(),
                ResponseOutcome::Analysed { .. } => String::new(),
            })
            .collect::<Vec<_>>()
            .join("; ");
        return Err(ServiceError::NothingAnalysable {
            path: path.to_path_buf(),
            reasons,
            findings,
        });
    }
    Ok(WorkbookResults {
        format_version: RESULTS_FORMAT_VERSION,
        tool: TOOL_NAME,
        tool_version: TOOL_VERSION,
        created_at: now_rfc3339(),
        source,
        table: summarise_table(&table),
        settings,
        settings_sources,
        responses,
        compromise,
        cautions: cautions_with(&findings),
        findings,
        timings,
    })
}

/// How much the response's finite values differ from one another, in words ("differ by
/// about 1e158"); `None` when they do not differ.
fn spread_in_words(values: &[f64]) -> Option<String> {
    let mut finite = values.iter().copied().filter(|value| value.is_finite());
    let first = finite.next()?;
    let (mut low, mut high) = (first, first);
    for value in finite {
        low = low.min(value);
        high = high.max(value);
    }
    // Halved, so that values near the largest double of both signs give a finite spread.
    let spread = 0.5 * high - 0.5 * low;
    (spread > 0.0).then(|| format!("differ by about {:.0e}", 2.0 * spread))
}

/// A finding when the factorial model's sums of squares (or mean squares) cannot be held
/// in the arithmetic: beyond the largest double (values that differ by more than about
/// 1e154) or, with spread, below the smallest normal one (values that differ by less than
/// about 1e-154). The model is fitted on deviations divided by a power of two, so F, p,
/// effects, means and intervals stand; the finding names the figures that cannot be shown
/// and says why.
fn sums_out_of_range(
    table: &TrialTable,
    response: &str,
    values: &[f64],
    outcome: &engine::analysis::factorial::FactorialOutcome,
) -> Option<Finding> {
    let model = outcome.model.as_ref()?;
    let mut beyond: Vec<&str> = Vec::new();
    let mut below: Vec<&str> = Vec::new();
    for line in model
        .type_i
        .iter()
        .chain(&model.type_ii)
        .chain(&model.type_iii)
        .chain(&model.error_lines)
    {
        for figure in [Some(line.sum_sq), line.mean_sq].into_iter().flatten() {
            let list = if figure.is_infinite() {
                &mut beyond
            } else if figure.is_nan() {
                &mut below
            } else {
                continue;
            };
            if !list.contains(&line.source.as_str()) {
                list.push(line.source.as_str());
            }
        }
    }
    // The two-level analysis's pure-error variance, quoted in its note.
    let two_level_variance = outcome.two_level.as_ref().and_then(|two| two.pure_error_variance);
    if let Some(variance) = two_level_variance.filter(|variance| !variance.is_finite()) {
        let list = if variance.is_nan() { &mut below } else { &mut beyond };
        list.push("the two-level pure error");
    }
    if beyond.is_empty() && below.is_empty() {
        return None;
    }
    let spread = spread_in_words(values)?;
    let (list, where_, shown) = if beyond.is_empty() {
        (
            &below,
            "below the smallest number the arithmetic holds at full precision",
            "left empty (they read 'not defined')",
        )
    } else {
        (
            &beyond,
            "beyond the largest number the arithmetic holds",
            "said 'beyond the range of the arithmetic'",
        )
    };
    let named = match list.split_last() {
        Some((last, rest)) if !rest.is_empty() => format!("{} and {last}", rest.join(", ")),
        _ => list.join(""),
    };
    Some(Finding {
        kind: FindingKind::Analysis,
        sheet: table.sheet.clone(),
        cell: Some(table.area.a1()),
        found: format!("values {spread}"),
        action: format!("the sums of squares that cannot be held are {shown}; F, p and every other figure are given"),
        message: format!(
            "'{response}': the values {spread}, so the factorial model's sums of squares and mean squares of {named} are {where_}; they are {shown}. F, p, effects, means and intervals are worked from the same sums divided by a power of two, which is exact, and are right; express the response in other units (a power of ten nearer its size) to see those sums"
        ),
    })
}

/// The one-way comparison of the combinations run, said as a detail under another
/// lead, naming the analysis it used. When it finds no clear difference where the
/// lead finds one, the reason is said beside it, so that the Summary does not seem
/// to contradict itself: the one-way comparison treats every combination as a
/// condition of its own and judges them by the repeats within combinations, while
/// the lead fits a few terms to all the runs together (common practice).
fn one_way_detail(
    combinations: usize,
    one_way: &engine::analysis::verdict::Verdict,
    lead_finds: Option<bool>,
    fit: Option<&OneWayFit>,
    assessment: Option<&engine::analysis::assessment::Assessment>,
) -> String {
    let mut detail = format!(
        "Detail, not the lead: the one-way comparison of the {combinations} combinations run ({}) says: {}",
        engine::analysis::verdict::lead_name(assessment),
        one_way.headline
    );
    if one_way.conditions_differ == Some(false) && lead_finds == Some(true) {
        if let Some(fit) = fit.filter(|fit| fit.pooled_df.is_finite()) {
            let within = fit.pooled_df.round() as usize;
            detail.push_str(&format!(
                " That comparison treats each of the {combinations} combinations as a condition of its own and has only the repeats within them to judge by ({within} degree{} of freedom), so it is weaker than the lead's model, which fits a few terms to all the runs together.",
                if within == 1 { "" } else { "s" }
            ));
        }
    }
    detail
}

/// The standard cautions, then one for each context column that changes with a
/// factor (a shift or day that cannot be told apart from a factor's effect bears on
/// how every reading of that factor is taken, so it is said beside them, not only
/// among the data problems).
fn cautions_with(findings: &[Finding]) -> Vec<String> {
    let mut cautions = standard_cautions();
    for finding in findings
        .iter()
        .filter(|finding| finding.kind == workbook_io::layout::FindingKind::ContextWithFactor)
    {
        let place = match &finding.cell {
            Some(cell) => format!("{}!{cell}", finding.sheet),
            None => finding.sheet.clone(),
        };
        let mut message = finding.message.clone();
        if let Some(first) = message.get_mut(0..1) {
            first.make_ascii_uppercase();
        }
        cautions.push(format!("{message}; see {place}."));
    }
    cautions
}

/// The one-way fit of the conditions; in a trial run in blocks, with the blocks' shifts
/// taken out and the blocked model's error (a finding says so when the blocks cannot be
/// separated from the conditions and the comparisons ignore them).
fn fit_conditions(
    table: &TrialTable,
    condition_names: &[String],
    groups: &[u32],
    values: &[f64],
    confidence: f64,
    contrasts: &[engine::analysis::contrast::Contrast],
    findings: &mut Vec<Finding>,
) -> Result<(OneWayFit, Option<Vec<f64>>), OneWayError> {
    let block_factors: Vec<&workbook_io::layout::Factor> =
        table.factors.iter().filter(|factor| factor.is_block).collect();
    let has_treatment = table.factors.iter().any(|factor| !factor.is_block);
    if block_factors.is_empty() || !has_treatment {
        return fit_one_way(condition_names, groups, values, confidence, contrasts).map(|fit| (fit, None));
    }
    // Several blocking columns make one block per combination of their labels.
    let mut block_index: HashMap<Vec<u32>, u32> = HashMap::new();
    let mut block_names = Vec::new();
    let block_of_value: Vec<u32> = (0..table.n_records())
        .map(|record| {
            let key: Vec<u32> = block_factors
                .iter()
                .map(|factor| factor.level_of_record[record])
                .collect();
            let next = block_index.len() as u32;
            *block_index.entry(key.clone()).or_insert_with(|| {
                block_names.push(
                    block_factors
                        .iter()
                        .zip(&key)
                        .map(|(factor, &level)| factor.levels[level as usize].as_str())
                        .collect::<Vec<_>>()
                        .join(" / "),
                );
                next
            })
        })
        .collect();
    let factor_name = block_factors
        .iter()
        .map(|factor| factor.name.as_str())
        .collect::<Vec<_>>()
        .join(" × ");
    let blocks = engine::analysis::blocks::Blocks {
        factor: &factor_name,
        names: &block_names,
        block_of_value: &block_of_value,
    };
    match engine::analysis::blocks::fit_one_way_in_blocks(
        condition_names,
        groups,
        &blocks,
        values,
        confidence,
        contrasts,
    ) {
        Ok(fit) => {
            // The values with their block's shift taken off, for the model checks.
            let shift_of_block: Vec<f64> = match &fit.blocks {
                Some(removed) => block_names
                    .iter()
                    .map(|name| {
                        removed
                            .shifts
                            .iter()
                            .find(|shift| &shift.block == name)
                            .map_or(f64::NAN, |shift| shift.shift)
                    })
                    .collect(),
                None => vec![0.0; block_names.len()],
            };
            let adjusted = values
                .iter()
                .zip(&block_of_value)
                .map(|(value, &block)| value - shift_of_block[block as usize])
                .collect();
            Ok((fit, Some(adjusted)))
        }
        Err(engine::analysis::blocks::BlockedFitError::OneWay(error)) => Err(error),
        Err(reason) => {
            findings.push(Finding {
                kind: FindingKind::Analysis,
                sheet: table.sheet.clone(),
                cell: None,
                found: format!("blocks '{factor_name}'"),
                action: "the comparisons of conditions do not take out the blocks".into(),
                message: format!(
                    "{reason}; the comparisons of conditions use the spread within conditions across blocks (the factorial analysis still takes the blocks into account)"
                ),
            });
            fit_one_way(condition_names, groups, values, confidence, contrasts).map(|fit| (fit, None))
        }
    }
}

/// Runs made at a setting the rest of the trial does not use (see
/// [`engine::analysis::off_plan`]): a finding at each one's cell, and their records, which
/// the factorial model leaves out (the comparison of the combinations run keeps them).
fn off_plan_runs(table: &TrialTable, findings: &mut Vec<Finding>) -> Vec<usize> {
    use engine::analysis::off_plan::{off_plan_levels, SettingsColumn};
    let treatments: Vec<&workbook_io::layout::Factor> =
        table.factors.iter().filter(|factor| !factor.is_block).collect();
    if treatments.len() < 2 {
        return Vec::new();
    }
    let columns: Vec<SettingsColumn<'_>> = treatments
        .iter()
        .map(|factor| SettingsColumn {
            levels: &factor.levels,
            level_of_record: &factor.level_of_record,
        })
        .collect();
    let mut records = Vec::new();
    for found in off_plan_levels(&columns) {
        let factor = treatments[found.factor];
        let planned = found
            .planned
            .iter()
            .map(|value| value.to_string())
            .collect::<Vec<_>>()
            .join(", ");
        for record in (0..table.n_records()).filter(|&record| factor.level_of_record[record] as usize == found.level) {
            records.push(record);
            let cell = factor.column.and_then(|column| {
                table
                    .record_rows
                    .get(record)
                    .map(|&row| workbook_io::CellPos::new(row, column).a1())
            });
            // The trial plan's own check may already have reported this cell.
            if let Some(reported) = findings.iter_mut().find(|finding| {
                finding.kind == FindingKind::PlanDeparture && finding.sheet == table.sheet && finding.cell == cell
            }) {
                reported.message = format!(
                    "{}; the factorial model leaves this run out, since no other run has '{}' at {} (the comparison of the combinations run keeps it)",
                    reported.message.trim_end_matches('.').replace("; the analysis uses ", "; the comparison of combinations uses "),
                    factor.name,
                    factor.levels[found.level]
                );
                continue;
            }
            findings.push(Finding {
                kind: FindingKind::PlanDeparture,
                sheet: table.sheet.clone(),
                cell,
                found: format!("{} = {}", factor.name, factor.levels[found.level]),
                action: "left out of the factorial model; kept in the comparison of the combinations run".into(),
                message: format!(
                    "this run has '{}' at {}, a setting no other run uses (the others use {planned}); it was left out of the factorial model so that it does not count as a level of its own. Correct the cell if the run was made at a planned setting",
                    factor.name, factor.levels[found.level]
                ),
            });
        }
    }
    records.sort_unstable();
    records
}

/// The factorial analysis of one response, with the engine's record numbers
/// turned into cells.
fn factorial_of(
    table: &TrialTable,
    response_index: usize,
    settings: &Settings,
    direction: Option<engine::options::Direction>,
    off_plan: &[usize],
) -> Option<engine::analysis::factorial::FactorialOutcome> {
    use engine::analysis::factorial::{analyse_factorial, FactorData, FactorialData, FactorialOptions};
    let response = table.responses.get(response_index)?;
    // Runs at a setting off the plan are left out of the factorial model.
    let kept_values: Vec<f64>;
    let values: &[f64] = if off_plan.is_empty() {
        &response.values
    } else {
        kept_values = response
            .values
            .iter()
            .enumerate()
            .map(|(record, &value)| {
                if off_plan.binary_search(&record).is_ok() {
                    f64::NAN
                } else {
                    value
                }
            })
            .collect();
        &kept_values
    };
    let data = FactorialData {
        factors: table
            .factors
            .iter()
            .map(|factor| FactorData {
                name: &factor.name,
                levels: &factor.levels,
                level_of_record: &factor.level_of_record,
                is_block: factor.is_block,
            })
            .collect(),
        response_name: &response.name,
        values,
    };
    let options = FactorialOptions {
        confidence: settings.confidence_level(),
        direction,
        interaction_order: settings.interaction_order,
    };
    let mut outcome = analyse_factorial(&data, &options)?;
    let place = |record: usize| format!("{}!{}", table.sheet, table.value_cell(response_index, record).a1());
    if let Some(record) = outcome.mixed_levels_record {
        outcome.notes.insert(
            0,
            format!(
                "the record at {} has some factors at their middle level and others not, so the runs are not a two-level design with centre points; the factors were analysed with all their levels",
                place(record)
            ),
        );
    }
    if let Some(largest) = outcome
        .reduced
        .as_mut()
        .and_then(|reduced| reduced.residual_check.as_mut())
        .and_then(|check| check.largest.as_mut())
    {
        largest.cell = Some(place(largest.record));
    }
    Some(outcome)
}

/// What to run after a two-level screen, in one sentence (the engine's
/// recommendation and its reason), when the factorial analysis read a full
/// factorial or regular fraction and every treatment factor's low and high
/// levels are numbers. The settings come from the level labels; the direction
/// from the response's direction setting.
fn next_trial_after_screen(
    table: &TrialTable,
    outcome: &engine::analysis::factorial::FactorialOutcome,
    direction: Option<engine::options::Direction>,
) -> Option<crate::plan::next::NextRuns> {
    use engine::analysis::next_trial::{recommend_after_screen, ScreenEffect, ScreenSummary};
    use engine::design::surface::SurfaceFactor;
    use engine::stats::two_level::{DefiningRelation, Word};
    let two = outcome.two_level.as_ref()?;
    let mut treatments: Vec<(char, &engine::analysis::factorial::TwoLevelCoding, &str)> = outcome
        .factors
        .iter()
        .filter(|factor| !factor.is_block)
        .map(|factor| Some((factor.letter?, factor.coding.as_ref()?, factor.name.as_str())))
        .collect::<Option<_>>()?;
    treatments.sort_by_key(|(letter, _, _)| *letter);
    let number = |label: &str| label.trim().parse::<f64>().ok().filter(|value| value.is_finite());
    let factors: Vec<SurfaceFactor> = treatments
        .iter()
        .map(|(_, coding, name)| {
            let (low, high) = (number(&coding.low)?, number(&coding.high)?);
            (low < high).then(|| SurfaceFactor::new(name, low, high))
        })
        .collect::<Option<_>>()?;
    let relation = match two.design.kind.as_str() {
        "full factorial" => DefiningRelation::full_factorial(factors.len()).ok()?,
        "regular fraction" => {
            let generators: Vec<&str> = two.design.generators.iter().map(String::as_str).collect();
            DefiningRelation::from_text(factors.len(), &generators).ok()?
        }
        _ => return None,
    };
    let effects = two
        .effects
        .iter()
        .filter(|effect| !effect.in_error)
        .map(|effect| {
            Some(ScreenEffect {
                word: Word::parse(&effect.name).ok()?,
                effect: effect.effect,
                active: effect.active,
            })
        })
        .collect::<Option<Vec<_>>>()?;
    let effect_se = two
        .effects
        .iter()
        .find_map(|effect| effect.se)
        .or_else(|| two.lenth.as_ref().map(|lenth| lenth.pse));
    let blocks = table
        .factors
        .iter()
        .filter(|factor| factor.is_block)
        .map(|factor| factor.levels.len())
        .max()
        .unwrap_or(1);
    let summary = ScreenSummary {
        factors,
        relation,
        effects,
        effect_se,
        error_df: two.error.df,
        curvature_p: two.curvature.as_ref().and_then(|curvature| curvature.p_value),
        cube_runs: two.design.n_runs,
        centre_runs: two.curvature.as_ref().map_or(0, |curvature| curvature.n_centre),
        blocks,
        direction,
        alpha: 1.0 - outcome.confidence,
    };
    let names: Vec<String> = summary.factors.iter().map(|factor| factor.name.clone()).collect();
    Some(crate::plan::next::NextRuns::new(
        names,
        &recommend_after_screen(&summary),
    ))
}

/// The second-order analysis of a response-surface trial, in two sentences: the
/// stationary point with its kind, and the engine's recommendation after it. Run
/// when there are two or more treatment factors, every one with three or five
/// numeric settings (a Box-Behnken or face-centred plan, or a central composite
/// plan with its axial settings), and at least one record has every factor at its
/// middle setting (a centre run).
fn second_order_of(
    table: &TrialTable,
    response_index: usize,
    settings: &Settings,
    direction: Option<engine::options::Direction>,
) -> Option<(
    String,
    crate::plan::next::NextRuns,
    engine::analysis::surface::SurfaceOutcome,
)> {
    use engine::analysis::next_trial::recommend_after_surface;
    use engine::analysis::surface::{analyse_surface, coding_from_settings, SurfaceData, SurfaceOptions};
    let response = table.responses.get(response_index)?;
    let treatments: Vec<_> = table.factors.iter().filter(|factor| !factor.is_block).collect();
    if treatments.len() < 2 {
        return None;
    }
    let numbers: Vec<Vec<f64>> = treatments
        .iter()
        .map(|factor| {
            factor
                .levels
                .iter()
                .map(|label| label.trim().parse::<f64>().ok().filter(|value| value.is_finite()))
                .collect::<Option<Vec<f64>>>()
        })
        .collect::<Option<_>>()?;
    let all_settings: Vec<Vec<f64>> = (0..response.values.len())
        .map(|record| {
            treatments
                .iter()
                .zip(&numbers)
                .map(|(factor, levels)| levels[factor.level_of_record[record] as usize])
                .collect()
        })
        .collect();
    // Records of the confirmation block (named by the setting) are left out of the fit
    // and judged against the interval it predicts for them.
    let record_blocks = crate::plan::next::record_blocks(table);
    let has_block_column = table.factors.iter().any(|factor| factor.is_block);
    let confirming: Vec<bool> = record_blocks
        .iter()
        .map(|&block| has_block_column && settings.confirmation_block == Some(block))
        .collect();
    let kept: Vec<usize> = (0..all_settings.len()).filter(|&record| !confirming[record]).collect();
    let record_settings: Vec<Vec<f64>> = kept.iter().map(|&record| all_settings[record].clone()).collect();
    let distinct_ok = (0..treatments.len()).all(|column| {
        let mut values: Vec<f64> = record_settings.iter().map(|row| row[column]).collect();
        values.sort_by(f64::total_cmp);
        values.dedup();
        matches!(values.len(), 3 | 5)
    });
    if !distinct_ok {
        return None;
    }
    let coding: Vec<(f64, f64)> = (0..treatments.len())
        .map(|column| {
            let values: Vec<f64> = record_settings.iter().map(|row| row[column]).collect();
            coding_from_settings(&values)
        })
        .collect::<Option<_>>()?;
    let has_centre = record_settings.iter().any(|row| {
        row.iter()
            .zip(&coding)
            .all(|(value, (centre, half))| (value - centre).abs() <= 1e-9 * half.abs().max(1.0))
    });
    if !has_centre {
        return None;
    }
    let blocks = if has_block_column {
        // Blocks numbered from 0 without gaps among the records kept.
        let mut seen: Vec<usize> = kept.iter().map(|&record| record_blocks[record]).collect();
        seen.sort_unstable();
        seen.dedup();
        kept.iter()
            .map(|&record| {
                seen.iter()
                    .position(|&block| block == record_blocks[record])
                    .unwrap_or(0)
            })
            .collect()
    } else {
        Vec::new()
    };
    let data = SurfaceData {
        factor_names: treatments.iter().map(|factor| factor.name.clone()).collect(),
        coding,
        settings: record_settings,
        blocks,
        values: kept.iter().map(|&record| response.values[record]).collect(),
    };
    let options = SurfaceOptions {
        confidence: settings.confidence_level(),
        direction,
    };
    let outcome = analyse_surface(&data, &options).ok()?;
    let point = outcome.stationary.as_ref()?;
    let mut sentence = format!(
        "The second-order fit (R² {:.3}) has its stationary point, {}, at {}, predicted {:.4}, {} the region of the runs.",
        outcome.r_squared,
        point.kind.words(),
        outcome
            .factor_names
            .iter()
            .zip(&point.real)
            .map(|(name, value)| format!("{name} {}", four_figures(*value)))
            .collect::<Vec<_>>()
            .join(", "),
        point.predicted,
        if point.inside_region { "inside" } else { "outside" }
    );
    let mut next = crate::plan::next::NextRuns::new(outcome.factor_names.clone(), &recommend_after_surface(&outcome));
    if let Some(block) = settings.confirmation_block.filter(|_| confirming.contains(&true)) {
        let confirmation: Vec<usize> = (0..all_settings.len()).filter(|&record| confirming[record]).collect();
        let values: Vec<f64> = confirmation.iter().map(|&record| response.values[record]).collect();
        let (judged, inside) = judge_confirmation_block(&outcome, &all_settings, &confirmation, &values, block);
        sentence.push(' ');
        sentence.push_str(&judged);
        if let Some(inside) = inside {
            next = crate::plan::next::NextRuns {
                step: "nothing",
                reason: if inside {
                    "The confirmation runs fell inside the interval predicted for them: the settings are confirmed; no further trial is needed for this response.".into()
                } else {
                    "The confirmation runs fell outside the interval predicted for them: the fitted surface does not hold at these settings; look for what changed (material, equipment, a factor not in the model) before trusting it.".into()
                },
                factors: outcome.factor_names.clone(),
                runs: Vec::new(),
                copies: 0,
                confirmation: false,
            };
        }
    }
    Some((sentence, next, outcome))
}

/// The sentence on a block of confirmation runs and whether their average fell in the
/// interval the fit predicts for the mean of that many runs at their settings
/// (`None` when it could not be judged).
fn judge_confirmation_block(
    outcome: &engine::analysis::surface::SurfaceOutcome,
    all_settings: &[Vec<f64>],
    confirmation: &[usize],
    values: &[f64],
    block: usize,
) -> (String, Option<bool>) {
    use engine::analysis::next_trial::{judge_confirmation, Confirmation};
    let first = &all_settings[confirmation[0]];
    if confirmation.iter().any(|&record| &all_settings[record] != first) {
        return (
            format!(
                "The confirmation runs of block {block} were not all made at one setting, so they were not judged."
            ),
            None,
        );
    }
    let usable = values.iter().filter(|value| value.is_finite()).count();
    let Some(prediction) = outcome.predict(first).filter(|_| usable > 0) else {
        return (
            format!("The confirmation runs of block {block} have no result yet, or the fit has no error estimate to judge them by."),
            None,
        );
    };
    let sigma = outcome.residual_sd.unwrap_or(0.0);
    // The interval of the mean of `usable` new runs: t · sqrt(s²/m + se(mean)²).
    let half_new = (prediction.new_run_high - prediction.predicted)
        / (sigma * sigma + prediction.se_mean * prediction.se_mean).sqrt();
    let half = half_new * (sigma * sigma / usable as f64 + prediction.se_mean * prediction.se_mean).sqrt();
    let plan = Confirmation {
        real: first.clone(),
        runs: usable,
        predicted: prediction.predicted,
        low: prediction.predicted - half,
        high: prediction.predicted + half,
        confidence: prediction.confidence,
    };
    let (inside, words) = judge_confirmation(&plan, values);
    (
        format!(
            "Confirmation (block {block}, {usable} runs, {:.0}% interval): {words}.",
            100.0 * plan.confidence
        ),
        Some(inside),
    )
}

/// True when the second-order model should lead: it has a residual to test against,
/// and the trial is a response-surface plan rather than a full grid of levels (a
/// composite or Box-Behnken plan runs some combinations of the levels only), or some
/// factor has five settings (a composite plan's axial runs).
fn surface_leads(table: &TrialTable, outcome: &engine::analysis::surface::SurfaceOutcome) -> bool {
    if outcome.residual_df == 0 {
        return false;
    }
    let treatments: Vec<_> = table.factors.iter().filter(|factor| !factor.is_block).collect();
    if treatments.iter().any(|factor| factor.levels.len() >= 5) {
        return true;
    }
    let n_records = treatments.first().map_or(0, |factor| factor.level_of_record.len());
    let mut combinations: Vec<Vec<u32>> = (0..n_records)
        .map(|record| treatments.iter().map(|factor| factor.level_of_record[record]).collect())
        .collect();
    combinations.sort_unstable();
    combinations.dedup();
    let grid: usize = treatments
        .iter()
        .map(|factor| factor.levels.len())
        .try_fold(1usize, |product, levels| product.checked_mul(levels))
        .unwrap_or(usize::MAX);
    combinations.len() < grid
}

/// A setting to four significant figures, for a sentence.
fn four_figures(value: f64) -> String {
    let decimals = if value == 0.0 {
        0
    } else {
        (3 - value.abs().log10().floor() as i32).max(0) as usize
    };
    format!("{value:.decimals$}")
}

/// Which analysis leads a response, and why, in one sentence: the factorial model
/// when the table crosses two or more treatment factors or has a factor beside blocks
/// (and the model could be read), otherwise the one-way comparison.
fn lead_choice(
    table: &TrialTable,
    factorial: Option<&engine::analysis::factorial::FactorialOutcome>,
    factorial_read: bool,
    n_conditions: usize,
) -> LeadChoice {
    let treatments: Vec<&str> = table
        .factors
        .iter()
        .filter(|factor| !factor.is_block)
        .map(|factor| factor.name.as_str())
        .collect();
    let blocks: Vec<&str> = table
        .factors
        .iter()
        .filter(|factor| factor.is_block)
        .map(|factor| factor.name.as_str())
        .collect();
    let quoted = |names: &[&str]| {
        names
            .iter()
            .map(|name| format!("'{name}'"))
            .collect::<Vec<_>>()
            .join(", ")
    };
    match factorial {
        Some(outcome) if factorial_read => {
            let design = outcome
                .two_level
                .as_ref()
                .map(|two| format!(" in a {} design", two.design.name))
                .unwrap_or_default();
            let blocked = if blocks.is_empty() {
                String::new()
            } else {
                format!(" with {} as blocks", quoted(&blocks))
            };
            let reason = if treatments.len() >= 2 {
                format!(
                    "The factorial model leads because the trial crosses {} factors ({}){design}{blocked}: it separates each factor's effect and their interactions, which the comparison of all {n_conditions} combinations cannot; that comparison is kept as a detail.",
                    treatments.len(),
                    quoted(&treatments)
                )
            } else {
                format!(
                    "The factorial model leads because the trial has {} beside blocks ({}): the differences between blocks are taken out before the factor is judged; the one-way comparison is kept as a detail.",
                    quoted(&treatments),
                    quoted(&blocks)
                )
            };
            LeadChoice {
                analysis: LeadKind::Factorial,
                reason,
            }
        }
        Some(outcome) => LeadChoice {
            analysis: LeadKind::OneWay,
            reason: format!(
                "The one-way comparison of the {n_conditions} combinations leads because the factorial model could not be fitted{}.",
                outcome
                    .notes
                    .first()
                    .map(|note| format!(" ({note})"))
                    .unwrap_or_default()
            ),
        },
        None => LeadChoice {
            analysis: LeadKind::OneWay,
            reason: if treatments.len() == 1 && blocks.is_empty() {
                format!(
                    "The one-way comparison leads because the trial has one factor ({}).",
                    quoted(&treatments)
                )
            } else {
                "The one-way comparison leads because the trial's factors do not form a factorial design.".to_string()
            },
        },
    }
}

/// The one finding on replication a factorial trial can get: when the design offers no
/// error to test the effects against (one run per combination, no centre points, no
/// spare degrees of freedom and too few effects for Lenth's method).
fn replication_finding(
    table: &TrialTable,
    response: &str,
    reading: &engine::analysis::verdict::FactorialReading,
) -> Option<Finding> {
    if reading.verdict.conditions_differ.is_some() {
        return None;
    }
    Some(Finding {
        kind: FindingKind::TooFewValues,
        sheet: table.sheet.clone(),
        cell: None,
        found: "no error to test against".into(),
        action: "the effects are listed without tests".into(),
        message: format!(
            "the design has one run per combination and leaves no error for '{response}': repeat some runs, add centre points, or set 'interaction order' so that high-order interactions are pooled as error"
        ),
    })
}

/// Builds the per-condition values (in record order, with their records)
/// that the comparisons and checks need, and runs them.
fn assess_response(
    fit: &OneWayFit,
    groups: &[u32],
    counts: &[usize],
    values: &[f64],
    settings: &Settings,
    direction: Option<engine::options::Direction>,
) -> engine::analysis::assessment::Assessment {
    // The fit keeps conditions with at least one value, in their original order.
    let kept: Vec<usize> = (0..counts.len()).filter(|&index| counts[index] > 0).collect();
    let mut position_of = vec![usize::MAX; counts.len()];
    for (position, &index) in kept.iter().enumerate() {
        position_of[index] = position;
    }
    let mut group_values: Vec<Vec<f64>> = kept.iter().map(|&index| Vec::with_capacity(counts[index])).collect();
    let mut group_records: Vec<Vec<usize>> = kept.iter().map(|&index| Vec::with_capacity(counts[index])).collect();
    for (record, (&group, &value)) in groups.iter().zip(values).enumerate() {
        let position = position_of[group as usize];
        if value.is_finite() && position != usize::MAX {
            group_values[position].push(value);
            group_records[position].push(record);
        }
    }
    let options = engine::analysis::assessment::AssessmentOptions {
        family_confidence: settings.family_confidence,
        direction,
        control: settings.control.clone(),
    };
    engine::analysis::assessment::assess(fit, &group_values, &group_records, &options)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn units_come_from_the_end_of_the_header() {
        assert_eq!(unit_of("Thickness (mm)"), Some("mm".into()));
        assert_eq!(unit_of("Yield [%]"), Some("%".into()));
        assert_eq!(unit_of("Yield"), None);
        // A repeated header renamed with a number keeps the unit of the header it repeats.
        assert_eq!(unit_of("Tensile strength (MPa) (2)"), Some("MPa".into()));
        assert_eq!(unit_of("Yield (2)"), None);
    }
}
