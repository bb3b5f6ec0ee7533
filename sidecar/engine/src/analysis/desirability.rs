//! Several responses at once: Derringer-Suich desirability over fitted
//! second-order surfaces, maximised within the region of the runs.
//!
//! # Remarks
//!
//! Each response gets a desirability d in [0, 1] from its goal (Derringer
//! and Suich 1980, "Simultaneous optimization of several response
//! variables", Journal of Quality Technology 12): higher is better,
//! d = ((y - L) / (U - L))^w between the acceptable low L and the wanted
//! U (0 below L, 1 above U); lower is better, the mirror image; a target T,
//! ((y - L) / (T - L))^w below it and ((U - y) / (U - T))^w above it. The
//! overall desirability is the weighted geometric mean
//! D = (Π d_i^(r_i))^(1 / Σ r_i) with importances r_i.
//!
//! D is maximised over the region of the runs in coded units (the ball of the
//! farthest run cut by the box of the settings run, `surface::Region`): the
//! centre and [`RANDOM_STARTS`] points drawn from the seed are scored, and the
//! best [`LOCAL_SEARCHES`] are refined by compass search (steps halved from
//! 0.25 of the radius down to 1e-7), each trial point pulled back into the
//! region. The response whose d is lowest at the answer is
//! the one that limits the compromise.

use serde::Serialize;

use crate::analysis::surface::{SurfaceOutcome, SurfacePrediction};
use crate::design::random::SplitMix64;

/// Random starting points scored before the local searches.
pub const RANDOM_STARTS: usize = 400;
/// Best starting points refined by compass search.
pub const LOCAL_SEARCHES: usize = 6;

/// The goal of one response.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum Goal {
    /// Higher is better: unacceptable below `low`, fully desirable from `high`.
    Higher {
        /// Acceptable low.
        low: f64,
        /// Fully desirable from here.
        high: f64,
    },
    /// Lower is better: fully desirable up to `low`, unacceptable above `high`.
    Lower {
        /// Fully desirable up to here.
        low: f64,
        /// Acceptable high.
        high: f64,
    },
    /// A target with acceptable limits either side.
    Target {
        /// Acceptable low.
        low: f64,
        /// The target.
        target: f64,
        /// Acceptable high.
        high: f64,
    },
}

/// A response's goal with its weight (shape) and importance.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct ResponseGoal {
    /// The goal.
    pub goal: Goal,
    /// Shape exponent w (1 = straight line).
    pub weight: f64,
    /// Importance r in the overall mean.
    pub importance: f64,
}

impl ResponseGoal {
    /// The desirability of a value.
    pub fn desirability(&self, value: f64) -> f64 {
        let w = self.weight;
        let d = match self.goal {
            Goal::Higher { low, high } => {
                if value <= low {
                    0.0
                } else if value >= high {
                    1.0
                } else {
                    ((value - low) / (high - low)).powf(w)
                }
            }
            Goal::Lower { low, high } => {
                if value <= low {
                    1.0
                } else if value >= high {
                    0.0
                } else {
                    ((high - value) / (high - low)).powf(w)
                }
            }
            Goal::Target { low, target, high } => {
                if value <= low || value >= high {
                    0.0
                } else if value <= target {
                    ((value - low) / (target - low)).powf(w)
                } else {
                    ((high - value) / (high - target)).powf(w)
                }
            }
        };
        if d.is_finite() {
            d
        } else {
            0.0
        }
    }
}

/// One response at the compromise settings.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ResponseAtCompromise {
    /// Which response (position in the input).
    pub response: usize,
    /// The prediction with its intervals (the mean only when no error estimate).
    pub prediction: Option<SurfacePrediction>,
    /// The predicted mean.
    pub predicted: f64,
    /// Its desirability.
    pub desirability: f64,
}

/// The compromise.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Compromise {
    /// Settings in coded units.
    pub coded: Vec<f64>,
    /// Settings in real units.
    pub real: Vec<f64>,
    /// Overall desirability.
    pub overall: f64,
    /// Each response there.
    pub responses: Vec<ResponseAtCompromise>,
    /// The response whose desirability is lowest (it limits the compromise).
    pub limiting: usize,
    /// Points scored in the search.
    pub evaluations: usize,
}

fn overall(fits: &[&SurfaceOutcome], goals: &[ResponseGoal], coded: &[f64]) -> f64 {
    let mut log_sum = 0.0;
    let mut importance = 0.0;
    for (fit, goal) in fits.iter().zip(goals) {
        let d = goal.desirability(fit.predict_coded(coded));
        if d <= 0.0 {
            return 0.0;
        }
        log_sum += goal.importance * d.ln();
        importance += goal.importance;
    }
    if importance > 0.0 {
        (log_sum / importance).exp()
    } else {
        0.0
    }
}

/// Maximises the overall desirability of fitted surfaces that share their
/// factors and coding; `None` without responses or when the goals and fits disagree.
pub fn maximise_desirability(fits: &[&SurfaceOutcome], goals: &[ResponseGoal], seed: u64) -> Option<Compromise> {
    let first = fits.first()?;
    if fits.len() != goals.len() || fits.iter().any(|fit| fit.coding != first.coding) {
        return None;
    }
    let k = first.factor_names.len();
    let region = fits
        .iter()
        .skip(1)
        .fold(first.region(), |region, fit| region.meet(&fit.region()));
    let radius = region.radius;
    let mut evaluations = 0usize;
    let mut score = |point: &[f64]| {
        evaluations += 1;
        overall(fits, goals, point)
    };
    let mut starts: Vec<(f64, Vec<f64>)> = Vec::new();
    let mut generator = SplitMix64::new(seed);
    starts.push((0.0, vec![0.0; k]));
    for _ in 0..RANDOM_STARTS {
        // A point in the cube around the ball, pulled onto the ball.
        let mut point: Vec<f64> = (0..k)
            .map(|_| radius * (2.0 * (generator.next_u64() >> 11) as f64 / (1u64 << 53) as f64 - 1.0))
            .collect();
        region.pull_in(&mut point);
        starts.push((0.0, point));
    }
    for start in &mut starts {
        start.0 = score(&start.1);
    }
    starts.sort_by(|a, b| b.0.total_cmp(&a.0));
    let mut best: (f64, Vec<f64>) = starts[0].clone();
    for (_, start) in starts.into_iter().take(LOCAL_SEARCHES) {
        let (current, point) = region.climb(start, &mut score);
        if current > best.0 {
            best = (current, point);
        }
    }
    let (value, coded) = best;
    let real = first.to_real(&coded);
    let responses: Vec<ResponseAtCompromise> = fits
        .iter()
        .zip(goals)
        .enumerate()
        .map(|(response, (fit, goal))| {
            let predicted = fit.predict_coded(&coded);
            ResponseAtCompromise {
                response,
                prediction: fit.predict(&real),
                predicted,
                desirability: goal.desirability(predicted),
            }
        })
        .collect();
    let limiting = responses
        .iter()
        .min_by(|a, b| a.desirability.total_cmp(&b.desirability))
        .map_or(0, |line| line.response);
    Some(Compromise {
        coded,
        real,
        overall: value,
        responses,
        limiting,
        evaluations,
    })
}

#[cfg(test)]
mod tests {
    //! Desirability functions checked at points known by arithmetic from
    //! their definitions (Derringer and Suich 1980), and the compromise on
    //! surfaces whose best settings are known by construction.

    use super::*;
    use crate::analysis::surface::{analyse_surface, SurfaceData, SurfaceOptions};
    use crate::design::surface::{make_central_composite, AxialDistance, CompositeRequest, CubePart, SurfaceFactor};

    #[test]
    fn desirability_functions_follow_their_definitions() {
        let higher = ResponseGoal {
            goal: Goal::Higher { low: 10.0, high: 20.0 },
            weight: 1.0,
            importance: 1.0,
        };
        assert_eq!(higher.desirability(5.0), 0.0);
        assert_eq!(higher.desirability(15.0), 0.5);
        assert_eq!(higher.desirability(25.0), 1.0);
        let lower = ResponseGoal {
            goal: Goal::Lower { low: 1.0, high: 3.0 },
            weight: 2.0,
            importance: 1.0,
        };
        assert_eq!(lower.desirability(2.0), 0.25);
        let target = ResponseGoal {
            goal: Goal::Target {
                low: 60.0,
                target: 65.0,
                high: 75.0,
            },
            weight: 1.0,
            importance: 1.0,
        };
        assert_eq!(target.desirability(62.5), 0.5);
        assert_eq!(target.desirability(70.0), 0.5);
        assert_eq!(target.desirability(65.0), 1.0);
        assert_eq!(target.desirability(76.0), 0.0);
    }

    fn fit(plan_rows: &[Vec<f64>], coding: &[(f64, f64)], truth: impl Fn(&[f64]) -> f64) -> SurfaceOutcome {
        let settings: Vec<Vec<f64>> = plan_rows.to_vec();
        let values = settings
            .iter()
            .enumerate()
            .map(|(index, real)| {
                let coded: Vec<f64> = real.iter().zip(coding).map(|(v, (c, h))| (v - c) / h).collect();
                truth(&coded) + 0.01 * ((index * 7 % 5) as f64 - 2.0)
            })
            .collect();
        analyse_surface(
            &SurfaceData {
                factor_names: vec!["A".into(), "B".into()],
                coding: coding.to_vec(),
                settings,
                blocks: Vec::new(),
                values,
            },
            &SurfaceOptions::default(),
        )
        .expect("fit")
    }

    #[test]
    fn the_compromise_balances_two_responses_and_names_the_limiting_one() {
        let factors = vec![SurfaceFactor::new("A", 90.0, 110.0), SurfaceFactor::new("B", 1.0, 2.0)];
        let plan = make_central_composite(&CompositeRequest {
            factors: factors.clone(),
            axial: AxialDistance::Rotatable,
            cube: CubePart::Full,
            cube_blocks: 1,
            axial_block: false,
            cube_centre_points: 5,
            axial_centre_points: 0,
            seed: Some(1),
        })
        .expect("plan");
        let rows: Vec<Vec<f64>> = plan.runs.iter().map(|run| run.real.clone()).collect();
        let coding = vec![(100.0, 10.0), (1.5, 0.5)];
        // Yield rises with A; cost rises with A too. Yield: 70 + 10 x1 - 2 x1²; cost: 5 + 2 x1 + x2².
        let yield_fit = fit(&rows, &coding, |x| 70.0 + 10.0 * x[0] - 2.0 * x[0] * x[0]);
        let cost_fit = fit(&rows, &coding, |x| 5.0 + 2.0 * x[0] + x[1] * x[1]);
        let goals = [
            ResponseGoal {
                goal: Goal::Higher { low: 60.0, high: 85.0 },
                weight: 1.0,
                importance: 1.0,
            },
            ResponseGoal {
                goal: Goal::Lower { low: 4.0, high: 9.0 },
                weight: 1.0,
                importance: 1.0,
            },
        ];
        let compromise = maximise_desirability(&[&yield_fit, &cost_fit], &goals, 9).expect("compromise");
        // By construction x2 = 0 is best for cost and free for yield.
        assert!(compromise.coded[1].abs() < 1e-2, "{:?}", compromise.coded);
        // Along x1 (no noise): D² = ((10 + 10 x - 2x²)/25) ((4 - 2x)/5), maximised on a grid.
        let exact = (0..=100_000)
            .map(|step| -2f64.sqrt() + 2.0 * 2f64.sqrt() * f64::from(step) / 100_000.0)
            .map(|x| {
                let d1 = ((10.0 + 10.0 * x - 2.0 * x * x) / 25.0).clamp(0.0, 1.0);
                let d2 = ((4.0 - 2.0 * x) / 5.0).clamp(0.0, 1.0);
                (d1 * d2).sqrt()
            })
            .fold(0.0, f64::max);
        assert!(
            (compromise.overall - exact).abs() < 2e-3,
            "{} vs {exact}",
            compromise.overall
        );
        assert_eq!(compromise.responses.len(), 2);
        let lowest = compromise
            .responses
            .iter()
            .map(|line| line.desirability)
            .fold(1.0, f64::min);
        assert_eq!(compromise.responses[compromise.limiting].desirability, lowest);
        assert!(compromise.responses.iter().all(|line| line.prediction.is_some()));
    }
}
