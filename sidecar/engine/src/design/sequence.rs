//! A sequence of trials as one plan: the runs already made, each in its own
//! block, followed by the next trial's runs as a new block, so that the whole
//! sequence is written, filled, checked and analysed as one plan.
//!
//! The runs already made keep their order and settings exactly as they were
//! read; the new runs come after them in an order drawn from the seed
//! (Fisher-Yates with SplitMix64, as every other plan).

use super::random::{seed_from_clock, SplitMix64};
use super::{format_number, DesignKind, FactorSpec, Plan, PlanError, PlannedRun, Setting, MAX_PLAN_RUNS};

/// What a sequence plan is made from.
#[derive(Debug, Clone, PartialEq)]
pub struct SequenceRequest {
    /// Factor names, in the order of the settings.
    pub factors: Vec<String>,
    /// Response names.
    pub responses: Vec<String>,
    /// The runs already made, in real units.
    pub made: Vec<Vec<f64>>,
    /// The block of each run already made, from 1 (all 1 when the trial had no blocks).
    pub made_blocks: Vec<usize>,
    /// The next trial's runs, in real units.
    pub next: Vec<Vec<f64>>,
    /// The seed of the new runs' order; `None` draws one from the clock.
    pub seed: Option<u64>,
    /// The plan's date.
    pub date: Option<(u16, u8, u8)>,
}

/// The block the next trial's runs take: one after the highest block already made.
pub fn next_block(made_blocks: &[usize]) -> usize {
    made_blocks.iter().copied().max().unwrap_or(0) + 1
}

/// Makes the plan of a sequence.
///
/// # Errors
///
/// [`PlanError::NoFactors`], [`PlanError::NoResponse`], [`PlanError::BadFactor`] for a
/// setting that is not a finite number or a run of the wrong length, and
/// [`PlanError::TooManyRuns`] above [`MAX_PLAN_RUNS`].
pub fn plan_from_sequence(request: &SequenceRequest) -> Result<Plan, PlanError> {
    let k = request.factors.len();
    if k == 0 {
        return Err(PlanError::NoFactors);
    }
    if request.responses.is_empty() {
        return Err(PlanError::NoResponse);
    }
    let total = request.made.len() + request.next.len();
    if total > MAX_PLAN_RUNS {
        return Err(PlanError::TooManyRuns {
            runs: total,
            limit: MAX_PLAN_RUNS,
        });
    }
    for run in request.made.iter().chain(&request.next) {
        if run.len() != k {
            return Err(PlanError::BadFactor {
                factor: request.factors[0].clone(),
                rule: format!("a run has {} settings for {k} factors", run.len()),
            });
        }
        if let Some(column) = run.iter().position(|value| !value.is_finite()) {
            return Err(PlanError::BadFactor {
                factor: request.factors[column].clone(),
                rule: "every setting of a sequence plan must be a number".into(),
            });
        }
    }
    let levels: Vec<Vec<f64>> = (0..k)
        .map(|factor| {
            let mut values: Vec<f64> = request
                .made
                .iter()
                .chain(&request.next)
                .map(|run| run[factor])
                .collect();
            values.sort_by(f64::total_cmp);
            values.dedup();
            values
        })
        .collect();
    // The centre of the runs already made: the midpoint of each factor's lowest and highest.
    let centre: Vec<Option<f64>> = (0..k)
        .map(|factor| {
            let values = request.made.iter().map(|run| run[factor]);
            let low = values.clone().fold(f64::INFINITY, f64::min);
            let high = values.fold(f64::NEG_INFINITY, f64::max);
            (low.is_finite() && high.is_finite()).then_some((low + high) / 2.0)
        })
        .collect();
    let planned = |real: &[f64], block: usize, run_order: usize, standard_order: usize| PlannedRun {
        run_order,
        standard_order,
        replicate: 1,
        block,
        settings: real
            .iter()
            .zip(&levels)
            .map(|(value, values)| Setting::Level(values.iter().position(|level| level == value).unwrap_or(0)))
            .collect(),
        is_centre: real.iter().zip(&centre).all(|(value, middle)| Some(*value) == *middle),
    };
    let made_block = |index: usize| request.made_blocks.get(index).copied().unwrap_or(1).max(1);
    let mut runs: Vec<PlannedRun> = request
        .made
        .iter()
        .enumerate()
        .map(|(index, real)| planned(real, made_block(index), index + 1, index + 1))
        .collect();
    let block = next_block(&(0..request.made.len()).map(made_block).collect::<Vec<_>>());
    let (seed, seed_is_from_clock) = match request.seed {
        Some(seed) => (seed, false),
        None => (seed_from_clock(), true),
    };
    let mut order: Vec<usize> = (0..request.next.len()).collect();
    SplitMix64::new(seed).shuffle(&mut order);
    let first = request.made.len();
    runs.extend(
        order
            .iter()
            .enumerate()
            .map(|(position, &index)| planned(&request.next[index], block, first + position + 1, first + index + 1)),
    );
    let factors = request
        .factors
        .iter()
        .zip(&levels)
        .map(|(name, values)| {
            let texts: Vec<String> = values.iter().map(|value| format_number(*value)).collect();
            let texts: Vec<&str> = texts.iter().map(String::as_str).collect();
            FactorSpec::new(name, &texts)
        })
        .collect();
    let n_blocks = runs.iter().map(|run| run.block).max().unwrap_or(1);
    let mut plan = Plan {
        id: String::new(),
        seed,
        seed_from_clock: seed_is_from_clock,
        date: request.date,
        kind: DesignKind::Sequence,
        factors,
        responses: request.responses.iter().map(|name| name.trim().to_string()).collect(),
        replicates: 1,
        centre_points: runs.iter().filter(|run| run.is_centre).count(),
        n_blocks,
        fraction: None,
        blocking: None,
        runs,
    };
    plan.id = super::plan_id(&plan);
    Ok(plan)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn request() -> SequenceRequest {
        SequenceRequest {
            factors: vec!["Temperature".into(), "Time".into()],
            responses: vec!["Yield".into()],
            made: vec![
                vec![150.0, 10.0],
                vec![170.0, 10.0],
                vec![150.0, 20.0],
                vec![170.0, 20.0],
                vec![160.0, 15.0],
            ],
            made_blocks: vec![1; 5],
            next: vec![
                vec![145.0, 15.0],
                vec![175.0, 15.0],
                vec![160.0, 8.0],
                vec![160.0, 22.0],
            ],
            seed: Some(11),
            date: None,
        }
    }

    #[test]
    fn made_runs_come_first_and_the_next_ones_form_a_new_block() {
        let plan = plan_from_sequence(&request()).expect("plan");
        assert_eq!(plan.runs.len(), 9);
        assert_eq!(plan.n_blocks, 2);
        for (index, run) in plan.runs.iter().enumerate() {
            assert_eq!(run.run_order, index + 1);
            assert_eq!(run.block, if index < 5 { 1 } else { 2 });
        }
        // The made runs keep their settings and order.
        let real = |run: &PlannedRun| -> Vec<f64> {
            (0..2)
                .map(|factor| plan.setting_number(factor, run.settings[factor]).expect("number"))
                .collect()
        };
        for (run, made) in plan.runs.iter().zip(&request().made) {
            assert_eq!(&real(run), made);
        }
        // The new runs are the requested ones, each once, in some order.
        let mut new: Vec<Vec<f64>> = plan.runs[5..].iter().map(real).collect();
        let mut asked = request().next;
        new.sort_by(|a, b| a.partial_cmp(b).expect("finite"));
        asked.sort_by(|a, b| a.partial_cmp(b).expect("finite"));
        assert_eq!(new, asked);
        assert_eq!(plan.centre_points, 1);
        assert_eq!(plan.factors[0].levels.len(), 5);
    }

    #[test]
    fn the_same_request_gives_the_same_plan_and_other_runs_another_id() {
        let first = plan_from_sequence(&request()).expect("plan");
        assert_eq!(first, plan_from_sequence(&request()).expect("plan"));
        let mut other = request();
        other.next[0] = vec![140.0, 15.0];
        assert_ne!(first.id, plan_from_sequence(&other).expect("plan").id);
    }

    #[test]
    fn blocks_already_made_are_kept_and_the_next_block_follows_them() {
        let mut asked = request();
        asked.made_blocks = vec![1, 1, 2, 2, 2];
        let plan = plan_from_sequence(&asked).expect("plan");
        assert_eq!(plan.runs[2].block, 2);
        assert!(plan.runs[5..].iter().all(|run| run.block == 3));
        assert_eq!(plan.n_blocks, 3);
    }

    #[test]
    fn a_setting_that_is_not_a_number_is_refused_by_name() {
        let mut asked = request();
        asked.next[1][1] = f64::NAN;
        let error = plan_from_sequence(&asked).expect_err("refused");
        assert!(error.to_string().contains("Time"), "{error}");
    }
}
