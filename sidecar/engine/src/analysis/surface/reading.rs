//! The second-order analysis read in plain sentences, for when it leads a response:
//! whether the fitted surface explains the response (the linear, interaction and square
//! parts tested together against the residual), where it peaks or bottoms out, the
//! recommended settings with their intervals, whether the model fits (lack of fit
//! against pure error) and the parts one by one.

use super::{StationaryKind, SurfaceOutcome};
use crate::analysis::verdict::{p_equals, round_for_text, with_unit, Verdict};
use crate::options::Direction;
use crate::stats::dist::f_sf;

/// The second-order model's test as a whole: every term but the intercept and the
/// blocks against the residual. `(F, df of the terms, p)` when it can be made.
pub fn model_test(outcome: &SurfaceOutcome) -> Option<(f64, usize, f64)> {
    let parts: Vec<_> = outcome
        .anova
        .iter()
        .filter(|line| matches!(line.source.as_str(), "Linear" | "Interaction" | "Square"))
        .collect();
    let df: usize = parts.iter().map(|line| line.df).sum();
    let residual = outcome.anova.iter().find(|line| line.source == "Residual")?;
    if df == 0 || residual.df == 0 {
        return None;
    }
    // Each part's F is its mean square over the residual one, formed on the scaled
    // deviations, so the model's F = Σ F_part df_part / df holds at any magnitude
    // (the sums of squares themselves may be beyond the range of the arithmetic).
    let mut weighted = 0.0;
    for line in &parts {
        weighted += line.f_value? * line.df as f64;
    }
    let f = weighted / df as f64;
    let p = f_sf(f, df as f64, residual.df as f64).ok()?;
    Some((f, df, p))
}

/// Settings in words: "Cure temp (C) 155.2, Cure time (min) 32.36".
fn settings_in_words(outcome: &SurfaceOutcome, real: &[f64]) -> String {
    outcome
        .factor_names
        .iter()
        .zip(real)
        .map(|(name, value)| format!("{name} {}", round_for_text(*value, 4)))
        .collect::<Vec<_>>()
        .join(", ")
}

/// The reading of a response-surface trial led by its second-order model.
pub fn reading_in_words(
    response: &str,
    unit: Option<&str>,
    outcome: &SurfaceOutcome,
    confidence: f64,
    direction: Option<Direction>,
) -> Verdict {
    let percent = round_for_text(confidence * 100.0, 3);
    let alpha = 1.0 - confidence;
    let test = model_test(outcome);
    let explains = test.map(|(_, _, p)| p < alpha);
    let headline = match (test, explains) {
        (Some((_, _, p)), Some(true)) => {
            let mut sentence = format!(
                "The fitted second-order surface explains {response} at {percent}% confidence ({}, R² {})",
                p_equals(p),
                round_for_text(outcome.r_squared, 3)
            );
            match &outcome.stationary {
                Some(point) if point.inside_region && point.kind != StationaryKind::Saddle => {
                    sentence.push_str(&format!(
                        "; it has {} at {}, predicted {}, inside the region of the runs.",
                        point.kind.words(),
                        settings_in_words(outcome, &point.real),
                        with_unit(point.predicted, unit)
                    ));
                }
                Some(point) => {
                    sentence.push_str(&format!(
                        "; its stationary point is {}{}.",
                        point.kind.words(),
                        if point.inside_region {
                            ", inside the region of the runs"
                        } else {
                            ", outside the region of the runs"
                        }
                    ));
                }
                None => sentence.push_str("; it has no single stationary point."),
            }
            sentence
        }
        (Some((_, _, p)), _) => format!(
            "The second-order model does not show that the factors affect {response} at {percent}% confidence ({}); differences this size could be chance.",
            p_equals(p)
        ),
        (None, _) => format!(
            "Whether the factors affect {response} cannot be judged: the second-order model has no residual to test against (add centre runs or replicates)."
        ),
    };
    let mut details = Vec::new();
    if explains == Some(true) {
        match (&outcome.recommended, direction) {
            (Some(best), Some(_)) => {
                details.push(format!(
                    "Recommended settings: {}; predicted {response} {} ({percent}% interval for the average {} to {}; a single run {} to {}){}.",
                    settings_in_words(outcome, &best.real),
                    with_unit(best.predicted, unit),
                    with_unit(best.mean_low, unit),
                    with_unit(best.mean_high, unit),
                    with_unit(best.new_run_low, unit),
                    with_unit(best.new_run_high, unit),
                    outcome
                        .recommended_reason
                        .as_deref()
                        .map(|why| format!(", because {why}"))
                        .unwrap_or_default()
                ));
            }
            (_, None) => details.push(format!(
                "No settings are recommended without a direction: set one for {response} (higher, lower or a target)."
            )),
            (None, Some(_)) => {}
        }
    }
    let line = |source: &str| outcome.anova.iter().find(|line| line.source == source);
    let parts: Vec<String> = ["Linear", "Interaction", "Square"]
        .iter()
        .filter_map(|source| line(source))
        .filter_map(|line| {
            line.p_value.map(|p| {
                let word = match line.source.as_str() {
                    "Linear" => "straight-line (linear) terms",
                    "Interaction" => "interactions",
                    _ => "curvature (square) terms",
                };
                format!("{word} {}", p_equals(p))
            })
        })
        .collect();
    if !parts.is_empty() {
        details.push(format!("The model's parts: {}.", parts.join("; ")));
    }
    match line("Lack of fit").and_then(|line| line.p_value) {
        Some(p) if p < alpha => details.push(format!(
            "The model does not fit well: the runs depart from the fitted surface by more than the repeated runs vary (lack of fit {}); read its predictions with care.",
            p_equals(p)
        )),
        Some(p) => details.push(format!(
            "No sign that the second-order model misses the shape of the data (lack of fit {}).",
            p_equals(p)
        )),
        None => details.push(
            "Lack of fit could not be tested: no runs were repeated at the same settings to measure pure error."
                .into(),
        ),
    }
    if let Some(point) = &outcome.stationary {
        details.push(format!(
            "Canonical analysis: eigenvalues {}: {}.",
            point
                .eigenvalues
                .iter()
                .map(|value| round_for_text(*value, 4))
                .collect::<Vec<_>>()
                .join(", "),
            point.kind.words()
        ));
    }
    if let Some(sd) = outcome.residual_sd {
        details.push(format!(
            "Run-to-run spread about the surface (residual SD): {} on {} degrees of freedom.",
            with_unit(sd, unit),
            outcome.residual_df
        ));
    }
    Verdict {
        conditions_differ: explains,
        headline,
        details,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::analysis::surface::{analyse_surface, SurfaceData, SurfaceOptions};

    /// An invented rotatable composite trial in two factors (cure temperature and
    /// time, 5 centre runs, axial settings rounded to one decimal as typed by hand).
    /// Reference: statsmodels 0.15.0 `ols("y ~ a + b + a:b + I(a**2) + I(b**2)")` on
    /// the coded settings (a = (T - 150)/10, b = (t - 30)/5), numpy 2.4 eigvalsh.
    pub(crate) const CURE_TRIAL: [(f64, f64, f64); 13] = [
        (150.0, 30.0, 41.48),
        (140.0, 35.0, 36.73),
        (150.0, 37.1, 40.51),
        (135.9, 30.0, 35.32),
        (150.0, 30.0, 41.25),
        (140.0, 25.0, 36.32),
        (150.0, 30.0, 41.95),
        (150.0, 30.0, 41.88),
        (150.0, 22.9, 38.07),
        (160.0, 25.0, 38.76),
        (160.0, 35.0, 41.68),
        (164.1, 30.0, 40.22),
        (150.0, 30.0, 41.98),
    ];

    fn cure_outcome(direction: Option<Direction>) -> SurfaceOutcome {
        let data = SurfaceData {
            factor_names: vec!["Cure temp (C)".into(), "Cure time (min)".into()],
            coding: vec![(150.0, 10.0), (30.0, 5.0)],
            settings: CURE_TRIAL.iter().map(|run| vec![run.0, run.1]).collect(),
            blocks: Vec::new(),
            values: CURE_TRIAL.iter().map(|run| run.2).collect(),
        };
        analyse_surface(
            &data,
            &SurfaceOptions {
                confidence: 0.95,
                direction,
            },
        )
        .expect("fits")
    }

    fn lre(value: f64, reference: f64) -> f64 {
        -((value - reference).abs() / reference.abs()).log10()
    }

    #[test]
    fn the_model_test_matches_the_reference_library() {
        let outcome = cure_outcome(None);
        let (f, df, p) = model_test(&outcome).expect("a residual to test against");
        assert_eq!(df, 5);
        // statsmodels 0.15.0: fvalue 190.95542583086356, f_pvalue 2.530961151132794e-07.
        assert!(lre(f, 190.955_425_830_863_56) >= 10.0, "F {f}");
        assert!(lre(p, 2.530_961_151_132_794e-7) >= 9.0, "p {p}");
    }

    #[test]
    fn a_maximum_inside_the_region_is_read_with_its_settings_and_interval() {
        let outcome = cure_outcome(Some(Direction::HigherIsBetter));
        let verdict = reading_in_words(
            "Peel strength (N)",
            Some("N"),
            &outcome,
            0.95,
            Some(Direction::HigherIsBetter),
        );
        assert_eq!(verdict.conditions_differ, Some(true));
        assert!(
            verdict
                .headline
                .contains("a maximum at Cure temp (C) 155.2, Cure time (min) 32.36"),
            "{}",
            verdict.headline
        );
        // statsmodels 0.15.0 prediction at the stationary point: mean 42.37150275814021,
        // mean interval 42.0910249068221 to 42.65198060945832, single run
        // 41.681336984122986 to 43.061668532157434.
        let best = outcome.recommended.as_ref().expect("recommended settings");
        assert!(lre(best.predicted, 42.371_502_758_140_21) >= 10.0);
        assert!(lre(best.mean_low, 42.091_024_906_822_1) >= 10.0);
        assert!(lre(best.new_run_high, 43.061_668_532_157_434) >= 10.0);
        assert!(
            verdict.details[0]
                .contains("42.37 N (95% interval for the average 42.09 N to 42.65 N; a single run 41.68 N to 43.06 N)"),
            "{}",
            verdict.details[0]
        );
        // statsmodels lack of fit against the 5 centre runs: p = 0.8696145508202248.
        assert!(verdict.details.iter().any(|line| line.contains("lack of fit p = 0.87")));
        // numpy 2.4 eigvalsh of B: -2.130386652465179, -1.1271911333284703.
        assert!(verdict
            .details
            .iter()
            .any(|line| line.contains("eigenvalues -1.127, -2.13") || line.contains("eigenvalues -2.13, -1.127")));
    }

    #[test]
    fn without_a_direction_no_settings_are_recommended() {
        let outcome = cure_outcome(None);
        let verdict = reading_in_words("Peel strength (N)", Some("N"), &outcome, 0.95, None);
        assert!(verdict
            .details
            .iter()
            .any(|line| line.starts_with("No settings are recommended without a direction")));
        assert!(!verdict
            .details
            .iter()
            .any(|line| line.starts_with("Recommended settings")));
    }

    #[test]
    fn pure_noise_is_not_read_as_a_surface() {
        let mut outcome_data: Vec<(f64, f64, f64)> = CURE_TRIAL.to_vec();
        // The same plan with responses that do not depend on the settings (a fixed
        // alternating pattern around 40, no trend).
        for (index, run) in outcome_data.iter_mut().enumerate() {
            run.2 = 40.0 + if index % 2 == 0 { 0.3 } else { -0.3 } * ((index % 3) as f64 + 1.0);
        }
        let data = SurfaceData {
            factor_names: vec!["A".into(), "B".into()],
            coding: vec![(150.0, 10.0), (30.0, 5.0)],
            settings: outcome_data.iter().map(|run| vec![run.0, run.1]).collect(),
            blocks: Vec::new(),
            values: outcome_data.iter().map(|run| run.2).collect(),
        };
        let outcome = analyse_surface(
            &data,
            &SurfaceOptions {
                confidence: 0.95,
                direction: None,
            },
        )
        .expect("fits");
        let (_, _, p) = model_test(&outcome).expect("testable");
        let verdict = reading_in_words("Y", None, &outcome, 0.95, None);
        if p >= 0.05 {
            assert_eq!(verdict.conditions_differ, Some(false));
            assert!(
                verdict.headline.starts_with("The second-order model does not show"),
                "{}",
                verdict.headline
            );
        } else {
            panic!("the alternating pattern was read as a surface (p = {p}); choose another pattern");
        }
    }
}
