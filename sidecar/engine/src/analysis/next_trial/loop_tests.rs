//! The whole loop end to end, at the engine's level: a resolution III
//! screen, the fold-over it asks for, the path of steepest ascent, a new
//! factorial with centre runs around the best point of the path, the axial
//! runs completing a central composite plan, the second-order analysis and
//! the confirmation runs. Every stage is filled from a known model (a
//! quadratic with its maximum at Temperature 180, Time 40, Catalyst 2, an
//! invented process) plus noise of SD 0.2 drawn from a fixed seed, and the
//! settings reached must lie within 0.25 coded units of the true optimum.

use super::*;
use crate::analysis::surface::{analyse_surface, SurfaceData, SurfaceOptions};
use crate::design::random::SplitMix64;
use crate::stats::dist::t_sf;

const OPTIMUM: [f64; 3] = [180.0, 40.0, 2.0];

fn truth(real: &[f64]) -> f64 {
    let (t, time, c) = (real[0] - OPTIMUM[0], real[1] - OPTIMUM[1], real[2] - OPTIMUM[2]);
    90.0 - 0.01 * t * t - 0.05 * time * time - 4.0 * c * c + 0.004 * t * time
}

struct Noise(SplitMix64);

impl Noise {
    /// Normal draws of SD 0.2 by the Box-Muller transform.
    fn draw(&mut self) -> f64 {
        let unit = |generator: &mut SplitMix64| ((generator.next_u64() >> 11) as f64 + 0.5) / (1u64 << 53) as f64;
        let (u, v) = (unit(&mut self.0), unit(&mut self.0));
        0.2 * (-2.0 * u.ln()).sqrt() * (std::f64::consts::TAU * v).cos()
    }
    fn run(&mut self, real: &[f64]) -> f64 {
        truth(real) + self.draw()
    }
}

fn factors_around(centre: &[f64], half: &[f64]) -> Vec<SurfaceFactor> {
    let names = ["Temperature", "Time", "Catalyst"];
    let limits = [(100.0, 260.0), (10.0, 90.0), (0.5, 4.0)];
    (0..3)
        .map(|i| {
            SurfaceFactor::new(names[i], centre[i] - half[i], centre[i] + half[i])
                .with_limits(Some(limits[i].0), Some(limits[i].1))
        })
        .collect()
}

/// Main effects (mean at +1 minus mean at -1) of coded runs.
fn main_effects(coded: &[Vec<f64>], values: &[f64]) -> Vec<f64> {
    (0..coded[0].len())
        .map(|factor| {
            let (mut high, mut low, mut n_high, mut n_low) = (0.0, 0.0, 0.0, 0.0);
            for (run, value) in coded.iter().zip(values) {
                if run[factor] > 0.5 {
                    high += value;
                    n_high += 1.0;
                } else if run[factor] < -0.5 {
                    low += value;
                    n_low += 1.0;
                }
            }
            high / n_high - low / n_low
        })
        .collect()
}

fn screen_of(factors: Vec<SurfaceFactor>, relation: DefiningRelation, effects: &[f64]) -> ScreenSummary {
    ScreenSummary {
        cube_runs: relation.n_runs(),
        relation,
        effects: effects
            .iter()
            .enumerate()
            .map(|(factor, &effect)| ScreenEffect {
                word: Word::factor(factor).expect("factor"),
                effect,
                active: effect.abs() > 1.0,
            })
            .collect(),
        factors,
        effect_se: None,
        error_df: 0.0,
        curvature_p: None,
        centre_runs: 0,
        blocks: 1,
        direction: Some(Direction::HigherIsBetter),
        alpha: 0.05,
    }
}

#[test]
fn screen_fold_over_ascent_composite_and_confirmation_reach_the_optimum() {
    let mut noise = Noise(SplitMix64::new(2026));
    let half = [10.0, 5.0, 0.25];
    // 1. Screen: 2^(3-1) with C = AB around a poor starting point.
    let mut centre = vec![130.0, 25.0, 1.5];
    let relation = DefiningRelation::from_text(3, &["C = AB"]).expect("relation");
    let factors = factors_around(&centre, &half);
    let mut coded = relation.runs();
    let mut values: Vec<f64> = coded.iter().map(|run| noise.run(&to_real(&factors, run))).collect();
    let first = recommend_after_screen(&screen_of(factors.clone(), relation, &main_effects(&coded, &values)));
    let NextStep::FoldOver(fold) = &first.step else {
        panic!("expected a fold-over: {}", first.reason);
    };
    // 2. The fold-over, run as a new block; the joined runs give clear main effects.
    for run in &fold.coded_runs {
        coded.push(run.clone());
        values.push(noise.run(&to_real(&factors, run)));
    }
    let full = DefiningRelation::full_factorial(3).expect("full");
    let mut summary = screen_of(factors.clone(), full.clone(), &main_effects(&coded, &values));
    // 3. Paths of steepest ascent until a factorial around the best point shows curvature.
    let mut completed = None;
    for _stage in 0..4 {
        let recommendation = recommend_after_screen(&summary);
        match recommendation.step {
            NextStep::SteepestPath(path) => {
                let best = path
                    .real_runs
                    .iter()
                    .map(|real| (noise.run(real), real.clone()))
                    .max_by(|a, b| a.0.total_cmp(&b.0))
                    .expect("path runs");
                centre = best.1;
            }
            NextStep::CompleteComposite(completion) => {
                completed = Some((completion, summary.clone()));
                break;
            }
            other => panic!("unexpected step {other:?}: {}", recommendation.reason),
        }
        // A full factorial with 4 centre runs around the new centre.
        let factors = factors_around(&centre, &half);
        let mut cube = full.runs();
        cube.extend(std::iter::repeat_n(vec![0.0; 3], 4));
        let cube_values: Vec<f64> = cube.iter().map(|run| noise.run(&to_real(&factors, run))).collect();
        let effects = main_effects(&cube[..8], &cube_values[..8]);
        // Curvature: factorial mean against centre mean, pure error from the centre runs (common practice).
        let centre_values = &cube_values[8..];
        let centre_mean = centre_values.iter().sum::<f64>() / 4.0;
        let factorial_mean = cube_values[..8].iter().sum::<f64>() / 8.0;
        let pure = centre_values.iter().map(|v| (v - centre_mean).powi(2)).sum::<f64>() / 3.0;
        let t = (factorial_mean - centre_mean) / (pure * (1.0 / 8.0 + 1.0 / 4.0)).sqrt();
        summary = screen_of(factors, full.clone(), &effects);
        summary.curvature_p = Some(2.0 * t_sf(t.abs(), 3.0).expect("t"));
        summary.centre_runs = 4;
        summary.effect_se = Some(2.0 * (pure / 8.0).sqrt());
        summary.error_df = 3.0;
        summary.cube_runs = 8;
        coded = cube;
        values = cube_values;
    }
    let (completion, summary) = completed.expect("curvature was found near the optimum");
    // 4. The axial block, and the second-order analysis of both blocks.
    let mut settings: Vec<Vec<f64>> = coded.iter().map(|run| to_real(&summary.factors, run)).collect();
    let mut blocks = vec![1; settings.len()];
    for real in &completion.real_runs {
        settings.push(real.clone());
        values.push(noise.run(real));
        blocks.push(2);
    }
    let outcome = analyse_surface(
        &SurfaceData {
            factor_names: summary.factors.iter().map(|factor| factor.name.clone()).collect(),
            coding: summary
                .factors
                .iter()
                .map(|factor| (factor.centre(), factor.half_range()))
                .collect(),
            settings,
            blocks,
            values,
        },
        &SurfaceOptions {
            confidence: 0.95,
            direction: Some(Direction::HigherIsBetter),
        },
    )
    .expect("second-order fit");
    // 5. Confirmation runs at the recommended settings.
    let last = recommend_after_surface(&outcome);
    let NextStep::Confirm(confirm) = &last.step else {
        panic!("expected confirmation: {}", last.reason);
    };
    let returned: Vec<f64> = (0..confirm.runs).map(|_| noise.run(&confirm.real)).collect();
    let (inside, words) = judge_confirmation(confirm, &returned);
    assert!(inside, "{words}");
    for (i, factor) in summary.factors.iter().enumerate() {
        let distance = (confirm.real[i] - OPTIMUM[i]) / factor.half_range();
        assert!(
            distance.abs() < 0.25,
            "{}: {} against {} ({distance:.3} coded)",
            factor.name,
            confirm.real[i],
            OPTIMUM[i]
        );
    }
}
