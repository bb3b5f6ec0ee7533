//! Several responses at once: when two or more responses of a response-surface
//! trial have goals (the `goal` setting), the engine's desirability
//! (`engine::analysis::desirability`, Derringer-Suich) is maximised over their
//! fitted second-order models within the region of the runs, and the answer is
//! said in one paragraph: the compromise settings, each response's prediction with
//! its interval, the overall desirability and the response that limits it.

use serde::Serialize;
use workbook_io::layout::{Finding, FindingKind};

use crate::results::ResponseResult;
use crate::settings::{names_response, Settings};

/// The seed of the desirability search's random starting points (one seed, one
/// answer on every platform).
pub const COMPROMISE_SEED: u64 = 18;

/// One response at the compromise settings.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CompromiseLine {
    /// The response's header.
    pub response: String,
    /// Its goal, in the words of the settings.
    pub goal: String,
    /// The predicted mean.
    pub predicted: f64,
    /// Confidence interval of the mean (absent without an error estimate).
    pub mean_interval: Option<(f64, f64)>,
    /// Prediction interval of one new run (absent without an error estimate).
    pub new_run_interval: Option<(f64, f64)>,
    /// Its desirability, 0 to 1.
    pub desirability: f64,
}

/// The compromise over several responses.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CompromiseResult {
    /// The factors, in the order of `settings`.
    pub factors: Vec<String>,
    /// The compromise settings in real units.
    pub settings: Vec<f64>,
    /// The same in coded units.
    pub coded: Vec<f64>,
    /// Overall desirability (weighted geometric mean), 0 to 1.
    pub overall: f64,
    /// Each response with a goal.
    pub responses: Vec<CompromiseLine>,
    /// The response whose desirability is lowest: it limits the compromise.
    pub limiting: String,
    /// Confidence level of the intervals.
    pub confidence: f64,
    /// The paragraph for the Summary.
    pub sentence: String,
}

fn note(findings: &mut Vec<Finding>, found: String, message: String) {
    findings.push(Finding {
        kind: FindingKind::Setting,
        sheet: String::new(),
        cell: None,
        found,
        action: "the goal was not used".into(),
        message,
    });
}

/// Four significant figures, plainly written.
fn figures(value: f64) -> String {
    if value == 0.0 || !value.is_finite() {
        return format!("{value}");
    }
    let decimals = (3 - value.abs().log10().floor() as i32).clamp(0, 12) as usize;
    format!("{value:.decimals$}")
}

/// Points each weighed response's confirmation runs at the compromise settings, so
/// that the Summary and `trialyst next` ask for one set of runs, not one per response
/// at settings the other goals would not accept. A response whose next trial is
/// not a confirmation (more replicates, say) keeps its own.
pub fn confirm_the_compromise(compromise: &CompromiseResult, responses: &mut [ResponseResult]) {
    for response in responses.iter_mut() {
        if !compromise.responses.iter().any(|line| line.response == response.name) {
            continue;
        }
        if !response.next_runs.as_ref().is_some_and(|runs| runs.confirmation) {
            continue;
        }
        let Some(surface) = response.surface.as_deref() else {
            continue;
        };
        let Some(recommendation) = engine::analysis::next_trial::recommend_confirming_compromise(
            surface,
            &compromise.settings,
            &format!("'{}'", response.name),
        ) else {
            continue;
        };
        let runs = crate::plan::next::NextRuns::new(surface.factor_names.clone(), &recommendation);
        response.next_trial = Some(runs.reason.clone());
        response.next_runs = Some(runs);
    }
}

/// The compromise over the responses with goals and a second-order fit; `None` when
/// fewer than two such responses. Goals that name no response, or a response without
/// a second-order fit, are noted as findings.
pub fn compromise_of(
    settings: &Settings,
    responses: &[ResponseResult],
    findings: &mut Vec<Finding>,
) -> Option<CompromiseResult> {
    if settings.goals.is_empty() {
        return None;
    }
    let mut chosen = Vec::new();
    for goal in &settings.goals {
        let Some(response) = responses
            .iter()
            .find(|response| names_response(&goal.response, &response.name))
        else {
            let names: Vec<String> = responses
                .iter()
                .map(|response| format!("'{}'", response.name))
                .collect();
            note(
                findings,
                format!("goal for '{}'", goal.response),
                format!(
                    "a goal was given for '{}', but the table has no response of that name (responses: {})",
                    goal.response,
                    names.join(", ")
                ),
            );
            continue;
        };
        match response.surface.as_deref() {
            Some(surface) => chosen.push((response.name.as_str(), goal, surface)),
            None => note(
                findings,
                format!("goal for '{}'", response.name),
                format!(
                    "a goal was given for '{}', but it has no second-order fit (goals are weighed together over the fitted surfaces of a response-surface trial)",
                    response.name
                ),
            ),
        }
    }
    if chosen.len() < 2 {
        if settings.goals.len() >= 2 || !chosen.is_empty() {
            note(
                findings,
                format!("{} goal(s) usable", chosen.len()),
                "goals are weighed together only when two or more responses with a second-order fit have one; no compromise was sought".into(),
            );
        }
        return None;
    }
    let fits: Vec<_> = chosen.iter().map(|(_, _, surface)| *surface).collect();
    let engine_goals: Vec<_> = chosen.iter().map(|(_, goal, _)| goal.to_engine()).collect();
    let Some(found) = engine::analysis::desirability::maximise_desirability(&fits, &engine_goals, COMPROMISE_SEED)
    else {
        note(
            findings,
            "goals".into(),
            "the responses with goals were not fitted on the same factors and coding; no compromise was sought".into(),
        );
        return None;
    };
    let confidence = settings.confidence_level();
    let lines: Vec<CompromiseLine> = found
        .responses
        .iter()
        .map(|line| {
            let (name, goal, _) = chosen[line.response];
            CompromiseLine {
                response: name.to_string(),
                goal: goal.describe(),
                predicted: line.predicted,
                mean_interval: line
                    .prediction
                    .as_ref()
                    .map(|prediction| (prediction.mean_low, prediction.mean_high))
                    .filter(|(low, high)| low.is_finite() && high.is_finite()),
                new_run_interval: line
                    .prediction
                    .as_ref()
                    .map(|prediction| (prediction.new_run_low, prediction.new_run_high))
                    .filter(|(low, high)| low.is_finite() && high.is_finite()),
                desirability: line.desirability,
            }
        })
        .collect();
    let factors = fits[0].factor_names.clone();
    let limiting = chosen[found.limiting].0.to_string();
    let sentence = sentence(&factors, &found.real, found.overall, &lines, &limiting, confidence);
    Some(CompromiseResult {
        factors,
        settings: found.real,
        coded: found.coded,
        overall: found.overall,
        responses: lines,
        limiting,
        confidence,
        sentence,
    })
}

fn sentence(
    factors: &[String],
    real: &[f64],
    overall: f64,
    lines: &[CompromiseLine],
    limiting: &str,
    confidence: f64,
) -> String {
    let at = factors
        .iter()
        .zip(real)
        .map(|(name, value)| format!("{name} {}", figures(*value)))
        .collect::<Vec<_>>()
        .join(", ");
    let each = lines
        .iter()
        .map(|line| {
            let interval = match line.new_run_interval {
                Some((low, high)) => format!(
                    "{:.0}% prediction interval for one new run {} to {}",
                    confidence * 100.0,
                    figures(low),
                    figures(high)
                ),
                None => "no interval: the fit leaves no error estimate".into(),
            };
            format!(
                "'{}' is predicted {} ({interval}; desirability {:.3})",
                line.response,
                figures(line.predicted),
                line.desirability
            )
        })
        .collect::<Vec<_>>()
        .join("; ");
    if overall > 0.0 {
        format!(
            "Several responses at once: the settings that best meet the goals together within the region of the runs are {at}, with overall desirability {overall:.3} (0 = some response outside its acceptable limits, 1 = every goal fully met). There {each}. '{limiting}' limits the compromise: its desirability is the lowest. Confirm these settings with runs before relying on them."
        )
    } else {
        format!(
            "Several responses at once: no settings within the region of the runs keep every response within its acceptable limits (overall desirability 0); at {at}, {each}. '{limiting}' is the response that cannot be met; widen its limits or look outside the region."
        )
    }
}

#[cfg(test)]
mod tests {
    //! The compromise through the whole service, on a rotatable central composite
    //! plan whose responses follow known quadratics exactly apart from the centre
    //! replicates, whose deviations sum to zero (so the least-squares fit is the
    //! quadratic itself and there is an error estimate).

    use workbook_io::write::{Book, Look, Sheet, Value};

    /// Yield: 70 + 10 x1 - 2 x1²; cost: 5 + 2 x1 + x2² (x coded, A = 100 + 10 x1,
    /// B = 1.5 + 0.5 x2).
    fn truth(x1: f64, x2: f64) -> (f64, f64) {
        (70.0 + 10.0 * x1 - 2.0 * x1 * x1, 5.0 + 2.0 * x1 + x2 * x2)
    }

    fn analysed(goals: &[&str]) -> crate::WorkbookResults {
        let folder = tempfile::tempdir().expect("a temporary folder");
        let source = folder.path().join("coating trial.xlsx");
        let alpha = 2f64.sqrt();
        let mut coded: Vec<(f64, f64)> = vec![(-1.0, -1.0), (1.0, -1.0), (-1.0, 1.0), (1.0, 1.0)];
        coded.extend([(-alpha, 0.0), (alpha, 0.0), (0.0, -alpha), (0.0, alpha)]);
        let centre_shifts = [-0.2, 0.1, 0.3, -0.1, -0.1];
        coded.extend(centre_shifts.iter().map(|_| (0.0, 0.0)));
        let mut runs = Sheet::new("Runs");
        for (col, name) in ["Temperature (C)", "Time (h)", "Yield (%)", "Cost (EUR)"]
            .iter()
            .enumerate()
        {
            runs.put(0, col as u16, Value::text(*name), Look::ColumnHeader);
        }
        let mut centre = 0;
        for (index, (x1, x2)) in coded.iter().enumerate() {
            let (mut y, mut c) = truth(*x1, *x2);
            if *x1 == 0.0 && *x2 == 0.0 {
                y += centre_shifts[centre];
                c += 0.5 * centre_shifts[centre];
                centre += 1;
            }
            let row = index as u32 + 1;
            runs.put(row, 0, Value::number(100.0 + 10.0 * x1), Look::Plain);
            runs.put(row, 1, Value::number(1.5 + 0.5 * x2), Look::Plain);
            runs.put(row, 2, Value::number(y), Look::Plain);
            runs.put(row, 3, Value::number(c), Look::Plain);
        }
        let mut settings = Sheet::new("trialyst settings");
        settings.put(0, 0, Value::text("setting"), Look::ColumnHeader);
        settings.put(0, 1, Value::text("value"), Look::ColumnHeader);
        for (index, goal) in goals.iter().enumerate() {
            settings.put(index as u32 + 1, 0, Value::text("goal"), Look::Plain);
            settings.put(index as u32 + 1, 1, Value::text(*goal), Look::Plain);
        }
        workbook_io::write::write_book(
            &Book {
                sheets: vec![runs, settings],
            },
            &source,
        )
        .expect("written");
        crate::analyse_workbook(&source, &crate::AnalysisRequest::default()).expect("analysed")
    }

    #[test]
    fn the_compromise_matches_the_hand_computed_optimum() {
        let results = analysed(&[
            "Yield (%): higher, acceptable 60 to 85",
            "Cost: lower, acceptable 4 to 9",
        ]);
        let compromise = results.compromise.as_ref().expect("a compromise");
        // By hand (common practice: calculus on the definitions of Derringer and Suich
        // 1980): cost is best at x2 = 0, which costs yield nothing. Along x1,
        // D² = ((10 + 10x - 2x²)/25)·((4 - 2x)/5) ∝ 40 + 20x - 28x² + 4x³, whose
        // derivative 20 - 56x + 12x² vanishes at x = (14 - √136)/6 = 0.3896827, inside
        // the region (radius √2). There d_yield = 0.5437249, d_cost = 0.6441269 and
        // D = √(d_yield·d_cost) = 0.5918005 (the same to 10 digits from mpmath 1.3.0,
        // and from scipy 1.17.1's bounded scalar minimiser on -D over [-√2, √2]).
        let x = (14.0 - 136f64.sqrt()) / 6.0;
        let d_yield = (10.0 + 10.0 * x - 2.0 * x * x) / 25.0;
        let d_cost = (4.0 - 2.0 * x) / 5.0;
        assert!((x - 0.389_682_7).abs() < 1e-7 && (d_yield - 0.543_724_9).abs() < 1e-7);
        assert!((d_cost - 0.644_126_9).abs() < 1e-7);
        assert!(
            (compromise.overall - 0.591_800_5).abs() < 1e-6,
            "{}",
            compromise.overall
        );
        assert_eq!(compromise.factors, vec!["Temperature (C)", "Time (h)"]);
        assert!(
            (compromise.settings[0] - (100.0 + 10.0 * x)).abs() < 1e-3,
            "{:?}",
            compromise.settings
        );
        assert!((compromise.settings[1] - 1.5).abs() < 1e-3, "{:?}", compromise.settings);
        let (yield_line, cost_line) = (&compromise.responses[0], &compromise.responses[1]);
        assert!((yield_line.desirability - d_yield).abs() < 1e-5);
        assert!((cost_line.desirability - d_cost).abs() < 1e-5);
        assert!((yield_line.predicted - truth(x, 0.0).0).abs() < 1e-4);
        // Yield has the lower desirability: it limits the compromise.
        assert_eq!(compromise.limiting, "Yield (%)");
        let (low, high) = yield_line.new_run_interval.expect("an interval");
        assert!(low < yield_line.predicted && yield_line.predicted < high);
        assert!(compromise.sentence.contains("'Yield (%)' limits the compromise"));
        assert!(
            compromise.sentence.contains("overall desirability 0.592"),
            "{}",
            compromise.sentence
        );
        // Each weighed response's next trial confirms the compromise, not its own best
        // settings: three runs there, and an interval for their average that is wider
        // than the interval of the mean and narrower than one new run's (t·sqrt(s²/3 +
        // se²) lies between t·se and t·sqrt(s² + se²)).
        for (response, line) in results.responses.iter().zip([yield_line, cost_line]) {
            let next = response.next_runs.as_ref().expect("a next trial");
            assert!(next.confirmation, "{}", next.reason);
            assert_eq!(next.runs.len(), 3);
            for run in &next.runs {
                assert_eq!(run, &compromise.settings);
            }
            let sentence = response.next_trial.as_deref().unwrap_or("");
            assert!(
                sentence.contains("weighed together") && sentence.contains(&format!("'{}'", response.name)),
                "{sentence}"
            );
            let Some(engine::analysis::next_trial::NextStep::Confirm(confirm)) =
                engine::analysis::next_trial::recommend_confirming_compromise(
                    response.surface.as_deref().expect("a fit"),
                    &compromise.settings,
                    "",
                )
                .map(|recommendation| recommendation.step)
            else {
                panic!("a confirmation");
            };
            let (mean_low, mean_high) = line.mean_interval.expect("a mean interval");
            let (run_low, run_high) = line.new_run_interval.expect("a new-run interval");
            assert!(run_low < confirm.low && confirm.low < mean_low, "{confirm:?} {line:?}");
            assert!(
                mean_high < confirm.high && confirm.high < run_high,
                "{confirm:?} {line:?}"
            );
        }
        // The Summary carries the paragraph, and the surface sheet the table.
        let book = crate::report::build_results_book(&results);
        let texts = |name: &str| -> Vec<String> {
            book.sheets
                .iter()
                .find(|sheet| sheet.name == name)
                .unwrap_or_else(|| panic!("no sheet {name}"))
                .cells
                .iter()
                .filter_map(|placed| match &placed.value {
                    Value::Text(text) => Some(text.clone()),
                    _ => None,
                })
                .collect()
        };
        assert!(texts("Summary").iter().any(|text| text == &compromise.sentence));
        // The provenance names the arithmetic of each second-order fit.
        let provenance = texts("Provenance");
        for name in ["Yield (%)", "Cost (EUR)"] {
            let item = format!("arithmetic for '{name}' (second-order model)");
            assert!(provenance.contains(&item), "{provenance:?}");
        }
        // And the direction each goal gives its response.
        let at = provenance
            .iter()
            .position(|text| text == "direction for 'Cost (EUR)'")
            .expect("the direction from the goal");
        assert_eq!(provenance[at + 1], "lower is better (from its goal)");
        let surface = texts(crate::report::surface::SURFACE_SHEET);
        assert!(surface.iter().any(|text| text.starts_with("Several responses at once")));
        assert!(surface.iter().any(|text| text == "lower, acceptable 4 to 9"));
    }

    #[test]
    fn goals_that_cannot_be_weighed_together_are_noted() {
        let results = analysed(&["Yield: higher, acceptable 60 to 85", "Gloss: lower, acceptable 1 to 2"]);
        assert!(results.compromise.is_none());
        assert!(results
            .findings
            .iter()
            .any(|finding| finding.message.contains("no response of that name")));
        assert!(results
            .findings
            .iter()
            .any(|finding| finding.message.contains("no compromise was sought")));
    }

    #[test]
    fn a_bad_goal_row_names_its_place() {
        let folder = tempfile::tempdir().expect("a temporary folder");
        let source = folder.path().join("trial.xlsx");
        let mut runs = Sheet::new("Runs");
        runs.put(0, 0, Value::text("Line"), Look::ColumnHeader);
        runs.put(0, 1, Value::text("Yield"), Look::ColumnHeader);
        for (row, (line, value)) in [("a", 1.0), ("a", 2.0), ("b", 3.0), ("b", 4.0)].iter().enumerate() {
            runs.put(row as u32 + 1, 0, Value::text(*line), Look::Plain);
            runs.put(row as u32 + 1, 1, Value::number(*value), Look::Plain);
        }
        let mut settings = Sheet::new("trialyst settings");
        settings.put(0, 0, Value::text("goal"), Look::Plain);
        settings.put(0, 1, Value::text("Yield: higher, acceptable 9 to 3"), Look::Plain);
        workbook_io::write::write_book(
            &Book {
                sheets: vec![runs, settings],
            },
            &source,
        )
        .expect("written");
        // A bad settings row is a finding at its cell; the row is ignored, the rest runs.
        let results = crate::analyse_workbook(&source, &crate::AnalysisRequest::default()).expect("analysed");
        let finding = results
            .findings
            .iter()
            .find(|finding| finding.message.contains("must rise"))
            .expect("a finding for the goal row");
        assert_eq!(finding.sheet, "trialyst settings");
        assert_eq!(finding.cell.as_deref(), Some("B1"));
        assert!(finding.message.contains("'goal'"), "{}", finding.message);
        assert!(results.settings.goals.is_empty());
    }
}
