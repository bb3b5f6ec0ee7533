//! Times the one-way fit and the full assessment (comparisons, checks,
//! rank-based analysis) on 1,000,000 values in 20 conditions of unequal
//! sizes, as the comparisons' benchmark. Run in release:
//! `cargo run --release -p sidecar --example assess_timing`

use std::time::Instant;

use engine::analysis::assessment::{assess, AssessmentOptions};
use engine::analysis::oneway::fit_one_way;
use service::settings::Direction;

fn main() {
    let arg = |index: usize, default: usize| {
        std::env::args()
            .nth(index)
            .and_then(|text| text.parse().ok())
            .unwrap_or(default)
    };
    let n_conditions: usize = arg(1, 20);
    let n_values: usize = arg(2, 1_000_000);
    let names: Vec<String> = (0..n_conditions).map(|index| format!("condition {index}")).collect();
    let mut state = 2026u64;
    let mut groups = Vec::with_capacity(n_values);
    let mut values = Vec::with_capacity(n_values);
    for index in 0..n_values {
        state = state
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        // Unequal sizes: condition c gets a share proportional to c + 1.
        let triangle = (n_conditions * (n_conditions + 1) / 2) as f64;
        let share = ((state >> 33) as f64 / (1u64 << 31) as f64) * triangle;
        let condition = ((((8.0 * share + 1.0).sqrt() - 1.0) / 2.0) as usize).min(n_conditions - 1);
        let noise = ((state >> 11) % 10_000) as f64 / 1000.0 - 5.0;
        groups.push(condition as u32);
        values.push(((50.0 + condition as f64 * 0.01 + noise) * 100.0).round() / 100.0);
        let _ = index;
    }
    let started = Instant::now();
    let fit = fit_one_way(&names, &groups, &values, 0.95, &[]).expect("fits");
    let fit_time = started.elapsed();
    let mut group_values = vec![Vec::new(); n_conditions];
    let mut group_records = vec![Vec::new(); n_conditions];
    for (record, (&group, &value)) in groups.iter().zip(&values).enumerate() {
        group_values[group as usize].push(value);
        group_records[group as usize].push(record);
    }
    {
        use engine::analysis::comparisons::*;
        let time = |label: &str, run: &dyn Fn()| {
            let started = Instant::now();
            run();
            println!("  {label}: {:.1} ms", started.elapsed().as_secs_f64() * 1e3);
        };
        time("tukey-kramer", &|| {
            drop(pooled_pairs(&fit, PairMethod::TukeyKramer, 0.95))
        });
        time("bonferroni", &|| drop(pooled_pairs(&fit, PairMethod::Bonferroni, 0.95)));
        time("scheffe", &|| drop(pooled_pairs(&fit, PairMethod::Scheffe, 0.95)));
        time("games-howell", &|| drop(unequal_spread_pairs(&fit, 0.95)));
        time("welch", &|| drop(welch_anova(&fit.conditions)));
        time("control", &|| drop(against_control(&fit, "condition 0", None, 0.95)));
        time("best", &|| drop(with_the_best(&fit, Direction::HigherIsBetter, 0.95)));
        let slices: Vec<&[f64]> = group_values.iter().map(Vec::as_slice).collect();
        time("ranks", &|| drop(engine::stats::ranks::rank_analysis(&slices)));
        time("levene median", &|| {
            drop(engine::stats::spread::levene(
                &slices,
                engine::stats::spread::Centre::Median,
            ))
        });
        time("normality 1M", &|| {
            drop(engine::stats::normality::check_normality_thinned(&values, 2_000))
        });
    }
    for round in 0..3 {
        let started = Instant::now();
        drop(assess(
            &fit,
            &group_values,
            &group_records,
            &AssessmentOptions::default(),
        ));
        println!(
            "repeat {round}: assessment {:.2} ms",
            started.elapsed().as_secs_f64() * 1e3
        );
    }
    for round in 0..3 {
        let started = Instant::now();
        std::thread::scope(|scope| {
            scope.spawn(|| {
                drop(assess(
                    &fit,
                    &group_values,
                    &group_records,
                    &AssessmentOptions::default(),
                ))
            });
        });
        println!(
            "fresh thread {round}: assessment {:.2} ms",
            started.elapsed().as_secs_f64() * 1e3
        );
    }
    for (label, options) in [
        ("no direction, no control", AssessmentOptions::default()),
        (
            "direction and control",
            AssessmentOptions {
                direction: Some(Direction::HigherIsBetter),
                control: Some("condition 0".into()),
                family_confidence: None,
            },
        ),
    ] {
        let started = Instant::now();
        let assessment = assess(&fit, &group_values, &group_records, &options);
        println!(
            "fit {:.1} ms; assessment ({label}) {:.1} ms; lead {:?}; notes {:?}",
            fit_time.as_secs_f64() * 1e3,
            started.elapsed().as_secs_f64() * 1e3,
            assessment.lead,
            assessment.notes
        );
    }
}
