//! What to run next: fold-overs checked by recomputing the alias structure
//! of the joined design from its runs, steepest-ascent runs checked to be
//! collinear with the coefficients in coded units, completions checked
//! against the orthogonal-blocking condition (Box and Hunter 1957), and
//! replicates against the normal approximation of power (common practice).

use super::*;
use crate::stats::dist::normal_cdf;

fn factors(count: usize) -> Vec<SurfaceFactor> {
    (0..count)
        .map(|index| SurfaceFactor::new(&format!("F{index}"), 10.0 * index as f64, 10.0 * index as f64 + 4.0))
        .collect()
}

fn screen(relation: DefiningRelation, active: &[&str]) -> ScreenSummary {
    let k = relation.n_factors();
    let effects = active
        .iter()
        .map(|text| ScreenEffect {
            word: Word::parse(text).expect("word"),
            effect: 6.0,
            active: true,
        })
        .collect();
    ScreenSummary {
        factors: factors(k),
        cube_runs: relation.n_runs(),
        relation,
        effects,
        effect_se: Some(0.5),
        error_df: 4.0,
        curvature_p: None,
        centre_runs: 0,
        blocks: 1,
        direction: Some(Direction::HigherIsBetter),
        alpha: 0.05,
    }
}

/// The joined runs (original first) and the block column (+1 original, -1 new).
fn joined_design(summary: &ScreenSummary, fold: &FoldOver) -> (Vec<Vec<f64>>, Vec<f64>) {
    let mut runs = summary.relation.runs();
    let original = runs.len();
    runs.extend(fold.coded_runs.iter().cloned());
    let blocks = (0..runs.len())
        .map(|index| if index < original { 1.0 } else { -1.0 })
        .collect();
    (runs, blocks)
}

#[test]
fn a_fold_over_separates_main_effects_from_two_factor_interactions() {
    // 2^(7-4) of resolution III (D = AB, E = AC, F = BC, G = ABC): A is aliased with
    // BD, CE and FG (alias chains computed by the relation).
    let relation = DefiningRelation::from_text(7, &["D = AB", "E = AC", "F = BC", "G = ABC"]).expect("relation");
    let summary = screen(relation, &["A", "B", "C"]);
    let fold = choose_fold_over(&summary).expect("a fold-over");
    let (runs, blocks) = joined_design(&summary, &fold);
    // Recomputed from the joined runs: every active main effect is clear of
    // every two-factor interaction (block-adjusted columns independent).
    for main in ["A", "B", "C"] {
        let main = Word::parse(main).expect("word");
        for first in 0..7 {
            for second in first + 1..7 {
                let pair = Word::from_factors(&[first, second]).expect("pair");
                assert!(
                    !joined(&runs, &blocks, main, pair),
                    "{main} still joined with {pair} after {:?}",
                    fold.kind
                );
            }
        }
    }
    // The check can fail: in the original runs A and BD are joined.
    let original = summary.relation.runs();
    let ones = vec![1.0; original.len()];
    assert!(joined(
        &original,
        &ones,
        Word::parse("A").expect("A"),
        Word::parse("BD").expect("BD")
    ));
    assert!(fold.broken.iter().any(|pair| pair == "A = BD"), "{:?}", fold.broken);
    assert!(fold.still_joined.is_empty());
    assert!(fold.coded_runs.len() <= 8);
}

#[test]
fn one_ambiguous_effect_is_separated_with_fewer_runs_than_a_full_fold_over() {
    // 2^(5-2) (D = AB, E = AC): with only D active its partners are AB (and CE).
    // Folding D alone, or half of it, separates D; the full fold-over (8 runs)
    // is not the cheapest.
    let relation = DefiningRelation::from_text(5, &["D = AB", "E = AC"]).expect("relation");
    let summary = screen(relation, &["D"]);
    let fold = choose_fold_over(&summary).expect("a fold-over");
    assert!(
        fold.coded_runs.len() < 8,
        "{:?} with {} runs",
        fold.kind,
        fold.coded_runs.len()
    );
    let (runs, blocks) = joined_design(&summary, &fold);
    for partner in ["AB", "CE"] {
        assert!(!joined(
            &runs,
            &blocks,
            Word::parse("D").expect("D"),
            Word::parse(partner).expect("pair")
        ));
    }
    assert!(fold.candidates_tried > 10);
}

#[test]
fn no_fold_over_without_ambiguity() {
    let relation = DefiningRelation::from_text(5, &["E = ABCD"]).expect("relation");
    assert!(choose_fold_over(&screen(relation, &["A", "B"])).is_none());
}

#[test]
fn steepest_ascent_runs_are_collinear_with_the_coefficients_and_stop_at_limits() {
    let mut factors = factors(3);
    factors[0].upper_limit = Some(factors[0].high + 5.0 * factors[0].half_range());
    let coefficients = [2.0, -1.0, 0.5];
    let path = steepest_path(&factors, &coefficients, true, Some(0.1), 8.0, 0.05).expect("path");
    let norm_b = coefficients.iter().map(|b| b * b).sum::<f64>().sqrt();
    for (step, run) in path.coded_runs.iter().enumerate() {
        let dot: f64 = run.iter().zip(&coefficients).map(|(x, b)| x * b).sum();
        let norm_x = run.iter().map(|x| x * x).sum::<f64>().sqrt();
        assert!((dot / (norm_x * norm_b) - 1.0).abs() < 1e-12, "step {step} not along b");
        // The largest coefficient moves one coded unit per step.
        assert!((run[0] - (step + 1) as f64).abs() < 1e-12);
    }
    // Limit 6 coded units above the centre on factor 0: six steps, then stop.
    assert_eq!(path.coded_runs.len(), 6);
    assert!(path.stop_reason.contains("F0"));
    for run in &path.real_runs {
        assert!(run[0] <= factors[0].upper_limit.expect("limit"));
    }
    // Descent goes the other way.
    let down = steepest_path(&factors, &coefficients, false, None, 0.0, 0.05).expect("path");
    assert!(down.coded_runs[0][0] < 0.0 && down.cone_half_angle_degrees.is_none());
    // Cone: sin²θ = (k-1) s² F / |b|² (Box and Draper 1987), here (2)(0.01) F(0.95; 2, 8) / 5.25.
    let f = crate::stats::dist::f_isf(0.05, 2.0, 8.0).expect("F");
    let expected = (2.0 * 0.01 * f / 5.25f64).sqrt().asin().to_degrees();
    assert!((path.cone_half_angle_degrees.expect("cone") - expected).abs() < 1e-9);
}

#[test]
fn the_completion_blocks_orthogonally_with_the_cube() {
    // 2^3 with 4 centre runs, completed by axial runs and 2 centre runs in a new block.
    let factors = factors(3);
    let completion = complete_composite(&factors, 8, 4, 2);
    let relation = DefiningRelation::full_factorial(3).expect("full");
    let mut first: Vec<Vec<f64>> = relation.runs();
    first.extend(std::iter::repeat_n(vec![0.0; 3], 4));
    for factor in 0..3 {
        let mean_first = first.iter().map(|run| run[factor].powi(2)).sum::<f64>() / first.len() as f64;
        let second = &completion.coded_runs;
        let mean_second = second.iter().map(|run| run[factor].powi(2)).sum::<f64>() / second.len() as f64;
        assert!((mean_first - mean_second).abs() < 1e-12, "factor {factor}");
    }
    assert!(!completion.shortened_by_limits);
    // A limit closer than α shortens it, never past the limit.
    let mut tight = factors.clone();
    tight[1].upper_limit = Some(tight[1].to_real(1.2));
    let short = complete_composite(&tight, 8, 4, 2);
    assert!(short.shortened_by_limits && (short.alpha - 1.2).abs() < 1e-12);
    assert!(short
        .real_runs
        .iter()
        .all(|run| run[1] <= tight[1].upper_limit.expect("limit") + 1e-9));
}

#[test]
fn replicates_reach_the_power_asked() {
    // 8-run design, 8 already made, 4 model terms, effect 1.5 SD.
    let more = replicates_for_power(8, 8, 4, 1.5, 1.0, 0.05).expect("sized");
    assert!(more.power >= TARGET_POWER);
    // Normal approximation (common practice): power ≈ Φ(δ √N / (2σ) - z_0.975).
    let total = 8.0 + 8.0 * more.replicates as f64;
    let approx = normal_cdf(1.5 * total.sqrt() / 2.0 - 1.959_964).expect("cdf");
    assert!((more.power - approx).abs() < 0.06, "{} vs {approx}", more.power);
    if more.replicates > 1 {
        let fewer = 8 + 8 * (more.replicates - 1);
        let lambda = fewer as f64 * 1.5 * 1.5 / 4.0;
        let power = f_test_power(0.05, 1.0, (fewer - 4) as f64, lambda).expect("power");
        assert!(power < TARGET_POWER);
    }
}

#[test]
fn the_screen_recommendation_follows_the_order_of_the_decision() {
    // Aliased actives: fold-over.
    let relation = DefiningRelation::from_text(7, &["D = AB", "E = AC", "F = BC", "G = ABC"]).expect("relation");
    assert!(matches!(
        recommend_after_screen(&screen(relation, &["A"])).step,
        NextStep::FoldOver(_)
    ));
    // Clear main effects, no curvature: the path.
    let full = DefiningRelation::full_factorial(3).expect("full");
    let clear = screen(full.clone(), &["A", "B"]);
    let recommendation = recommend_after_screen(&clear);
    assert!(
        matches!(recommendation.step, NextStep::SteepestPath(_)),
        "{}",
        recommendation.reason
    );
    assert!(recommendation.reason.contains("steepest ascent"));
    // Curvature: complete the composite.
    let mut curved = clear.clone();
    curved.curvature_p = Some(0.001);
    curved.centre_runs = 4;
    assert!(matches!(
        recommend_after_screen(&curved).step,
        NextStep::CompleteComposite(_)
    ));
    // Nothing active but an error estimate: more replicates.
    let mut quiet = screen(full, &[]);
    quiet.effects.push(ScreenEffect {
        word: Word::parse("A").expect("A"),
        effect: 0.8,
        active: false,
    });
    let recommendation = recommend_after_screen(&quiet);
    assert!(
        matches!(recommendation.step, NextStep::MoreReplicates(_)),
        "{}",
        recommendation.reason
    );
}
