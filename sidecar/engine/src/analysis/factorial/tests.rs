//! Unit tests of the factorial analysis (end-to-end checks against published examples
//! are in the integration tests).

use super::coding::code_factor;
use super::{analyse_any, analyse_factorial, FactorData, FactorialData, FactorialOptions};
use crate::analysis::oneway::fit_one_way;
use crate::options::Direction;

/// Small deterministic generator (xorshift64*) for property tests.
struct Rng(u64);
impl Rng {
    fn next(&mut self) -> u64 {
        self.0 ^= self.0 >> 12;
        self.0 ^= self.0 << 25;
        self.0 ^= self.0 >> 27;
        self.0.wrapping_mul(0x2545_F491_4F6C_DD1D)
    }
    fn below(&mut self, n: usize) -> usize {
        (self.next() % n as u64) as usize
    }
    fn uniform(&mut self) -> f64 {
        (self.next() >> 11) as f64 / (1u64 << 53) as f64
    }
}

/// A long-layout table: one label column per factor, one response column.
struct Table {
    factors: Vec<(String, Vec<String>, Vec<u32>, bool)>,
    values: Vec<f64>,
}

impl Table {
    fn data(&self) -> FactorialData<'_> {
        FactorialData {
            factors: self
                .factors
                .iter()
                .map(|(name, levels, level_of_record, is_block)| FactorData {
                    name,
                    levels,
                    level_of_record,
                    is_block: *is_block,
                })
                .collect(),
            response_name: "y",
            values: &self.values,
        }
    }
}

fn table(factors: &[(&str, Vec<String>, bool)], values: Vec<f64>) -> Table {
    let mut built = Vec::new();
    for (name, labels, is_block) in factors {
        let mut levels: Vec<String> = Vec::new();
        let mut level_of_record = Vec::new();
        for label in labels {
            let index = match levels.iter().position(|level| level == label) {
                Some(index) => index,
                None => {
                    levels.push(label.clone());
                    levels.len() - 1
                }
            };
            level_of_record.push(index as u32);
        }
        built.push((name.to_string(), levels, level_of_record, *is_block));
    }
    Table { factors: built, values }
}

fn close(a: f64, b: f64, tolerance: f64) -> bool {
    (a - b).abs() <= tolerance * (1.0 + b.abs())
}

#[test]
fn balanced_data_give_equal_types_of_sums_of_squares() {
    // Property: with every combination run equally often, Types I, II and III agree
    // (Searle 1987, ch. 4; common practice).
    let mut rng = Rng(0x5EED_1234_ABCD_0001);
    for trial in 0..20 {
        let n_a = 2 + rng.below(3);
        let n_b = 2 + rng.below(3);
        let n_c = 1 + rng.below(2);
        let replicates = 2 + rng.below(2);
        let mut a = Vec::new();
        let mut b = Vec::new();
        let mut c = Vec::new();
        let mut values = Vec::new();
        for i in 0..n_a {
            for j in 0..n_b {
                for k in 0..n_c {
                    for _ in 0..replicates {
                        a.push(format!("a{i}"));
                        b.push(format!("b{j}"));
                        c.push(format!("c{k}"));
                        values.push(10.0 + i as f64 - 0.5 * j as f64 + 3.0 * rng.uniform());
                    }
                }
            }
        }
        let mut factors = vec![("A", a, false), ("B", b, false)];
        if n_c > 1 {
            factors.push(("C", c, false));
        }
        let table = table(&factors, values);
        let outcome = analyse_factorial(&table.data(), &FactorialOptions::default()).expect("outcome");
        let model = outcome.model.expect("model");
        assert!(outcome.cells.balanced, "trial {trial}");
        assert!(model.types_coincide, "trial {trial}");
        for (first, third) in model.type_i.iter().zip(&model.type_iii) {
            assert!(
                close(first.sum_sq, third.sum_sq, 1e-9),
                "trial {trial} {}",
                first.source
            );
        }
        assert!(model.types_note.contains("balanced"));
    }
}

#[test]
fn one_factor_reproduces_the_one_way_model() {
    // Property: a k-way model with one factor is the one-way model: same between and
    // within sums of squares, F, p, and least-squares means equal to the condition
    // means with the same intervals (compared with `fit_one_way`).
    let mut rng = Rng(0x0DD_BA11_2024);
    for trial in 0..20 {
        let n_levels = 2 + rng.below(5);
        let mut labels = Vec::new();
        let mut values = Vec::new();
        for level in 0..n_levels {
            for _ in 0..(2 + rng.below(5)) {
                labels.push(format!("condition {level}"));
                values.push(50.0 + 2.0 * level as f64 + 5.0 * rng.uniform());
            }
        }
        let table = table(&[("Condition", labels.clone(), false)], values.clone());
        assert!(analyse_factorial(&table.data(), &FactorialOptions::default()).is_none());
        let outcome = analyse_any(&table.data(), &FactorialOptions::default()).expect("outcome");
        let model = outcome.model.expect("model");
        let names: Vec<String> = table.factors[0].1.clone();
        let groups = &table.factors[0].2;
        let one_way = fit_one_way(&names, groups, &values, 0.95, &[]).expect("one-way");
        let between = &model.type_i[0];
        assert!(close(between.sum_sq, one_way.anova[0].ss, 1e-12), "trial {trial}");
        assert_eq!(between.df as f64, one_way.anova[0].df);
        assert!(close(
            between.f_value.expect("F"),
            one_way.anova[0].f.expect("F"),
            1e-10
        ));
        assert!(close(between.p_value.expect("p"), one_way.anova[0].p.expect("p"), 1e-9));
        let residual = &model.error_lines[0];
        assert!(close(residual.sum_sq, one_way.anova[1].ss, 1e-12));
        assert!(close(model.residual_sd.expect("sd"), one_way.pooled_sd, 1e-12));
        for (line, condition) in model.ls_means[0].means.iter().zip(&one_way.conditions) {
            assert_eq!(line.label, condition.name);
            assert!(close(line.estimate.expect("mean"), condition.mean, 1e-12));
            assert!(close(line.low.expect("low"), condition.mean_low, 1e-10));
            assert!(close(line.high.expect("high"), condition.mean_high, 1e-10));
        }
    }
}

#[test]
fn coding_rules_and_centre_points() {
    // Text labels: first in sorted order is -1; numbers: the lower is -1; three
    // numbers with the middle half-way: a centre point (the module's rule).
    let present = [true, true];
    let (coded, info) = code_factor(&["wet".into(), "dry".into()], &present).expect("two labels");
    assert_eq!(coded, [Some(1.0), Some(-1.0)]);
    assert_eq!(info.low, "dry");
    let (coded, _) = code_factor(&["10".into(), "-5".into()], &present).expect("numbers");
    assert_eq!(coded, [Some(1.0), Some(-1.0)]);
    let (coded, info) = code_factor(&["160".into(), "200".into(), "180".into()], &[true, true, true]).expect("centre");
    assert_eq!(coded, [Some(-1.0), Some(1.0), Some(0.0)]);
    assert_eq!(info.centre.as_deref(), Some("180"));
    assert!(code_factor(&["1".into(), "2".into(), "4".into()], &[true, true, true]).is_none());
    assert!(code_factor(&["a".into(), "b".into(), "c".into()], &[true, true, true]).is_none());

    // A 2^2 with five centre points (hand example of the two-level unit tests:
    // scipy 1.17.1 / numpy 2.4.6 give the curvature p-value 0.01150068587105579).
    let temperature = ["160", "180", "200", "180", "160", "180", "200", "180", "180"];
    let time = ["10", "15", "10", "15", "20", "15", "20", "15", "15"];
    let values = vec![40.9, 40.3, 41.5, 40.5, 40.0, 40.7, 41.9, 40.2, 40.6];
    let table = table(
        &[
            (
                "Temperature",
                temperature.iter().map(|s| s.to_string()).collect(),
                false,
            ),
            ("Time", time.iter().map(|s| s.to_string()).collect(), false),
        ],
        values,
    );
    let outcome = analyse_factorial(&table.data(), &FactorialOptions::default()).expect("outcome");
    assert_eq!(outcome.cells.n_centre_points, 5);
    assert_eq!(outcome.cells.n_present, 4);
    let two = outcome.two_level.expect("two-level");
    let curvature = two.curvature.expect("curvature");
    assert!(close(curvature.p_value.expect("p"), 0.01150068587105579, 1e-8));
    assert_eq!(two.pure_error_df, 4);
    assert!(outcome.cautions.iter().any(|c| c.contains("curves")));
    // The reduced model keeps the curvature column.
    let reduced = outcome.reduced.expect("reduced");
    assert!(
        reduced.coefficients.iter().any(|c| c.name.contains("curvature")),
        "{:?}",
        reduced.coefficients
    );
}

#[test]
fn interaction_that_changes_the_best_level_is_read_out() {
    // Catalyst X is best at low temperature, Y at high temperature: a crossing
    // interaction built into the data (hand-made example).
    let mut catalyst = Vec::new();
    let mut temperature = Vec::new();
    let mut values = Vec::new();
    let means = [
        (("X", "low"), 30.0),
        (("X", "high"), 22.0),
        (("Y", "low"), 24.0),
        (("Y", "high"), 31.0),
    ];
    for ((c, t), mean) in means {
        for offset in [-0.4, 0.1, 0.3] {
            catalyst.push(c.to_string());
            temperature.push(t.to_string());
            values.push(mean + offset);
        }
    }
    let table = table(
        &[("Catalyst", catalyst, false), ("Temperature", temperature, false)],
        values,
    );
    // A direction is needed for a best setting (with none, nothing is called best).
    let options = FactorialOptions {
        direction: Some(Direction::HigherIsBetter),
        ..FactorialOptions::default()
    };
    let outcome = analyse_factorial(&table.data(), &options).expect("outcome");
    assert!(
        outcome.reading.iter().any(|line| line.contains("depends on")),
        "{:?}",
        outcome.reading
    );
    let best = outcome.reduced.expect("reduced").best.expect("best");
    let chosen: Vec<&str> = best.settings.iter().map(|(_, level)| level.as_str()).collect();
    assert_eq!(chosen, ["Y", "high"]);
    assert!(close(best.mean, 31.0, 1e-12));
}

#[test]
fn missing_combination_is_listed_by_name() {
    let a = ["p", "p", "p", "p", "q", "q", "r", "r", "r", "r"];
    let b = ["u", "u", "v", "v", "u", "u", "u", "u", "v", "v"];
    let values = vec![1.0, 1.2, 2.0, 2.1, 3.0, 3.3, 4.0, 4.1, 5.2, 5.0];
    let table = table(
        &[
            ("A", a.iter().map(|s| s.to_string()).collect(), false),
            ("B", b.iter().map(|s| s.to_string()).collect(), false),
        ],
        values,
    );
    let outcome = analyse_factorial(&table.data(), &FactorialOptions::default()).expect("outcome");
    assert_eq!(outcome.cells.missing, [vec!["q".to_string(), "v".to_string()]]);
    let model = outcome.model.expect("model");
    let interaction = model.terms.iter().find(|t| t.term == "A:B").expect("A:B");
    assert_eq!(interaction.estimability, "partial");
    assert!(model.type_iii_depends_on_coding);
}

/// Bounded deterministic noise in [-0.05, 0.05] for the generated trials below.
fn small_noise(index: usize) -> f64 {
    0.05 * (((index * 7919) % 13) as f64 - 6.0) / 6.0
}

fn number_labels(values: &[f64]) -> Vec<String> {
    values.iter().map(|value| format!("{value}")).collect()
}

/// Treatment factors named `names`, with the coded columns written as numbers.
fn coded_factors<'a>(names: &[&'a str], columns: &[Vec<f64>]) -> Vec<(&'a str, Vec<String>, bool)> {
    names
        .iter()
        .zip(columns)
        .map(|(name, column)| (*name, number_labels(column), false))
        .collect()
}

fn with_direction(direction: Option<Direction>) -> FactorialOptions {
    FactorialOptions {
        direction,
        ..FactorialOptions::default()
    }
}

/// A 2^(5-1) fraction (E = ABCD) in two blocks split on ABC (so DE, its alias, is
/// confounded with blocks), with four centre points in each block. Model with known
/// effects: y = 50 + 4 A + 3 B - 2.5 C + 1.5 AB + 6 [block 2] - 2 [centre] + noise, so
/// the effects are A 8, B 6, C -5, AB 3 (effect = twice the coefficient, common
/// practice), curvature (corners minus centre) +2, every other effect 0.
fn blocked_fraction(with_blocks: bool) -> Table {
    let mut columns: Vec<Vec<f64>> = vec![Vec::new(); 5];
    let mut block = Vec::new();
    let mut values = Vec::new();
    for run in 0..16usize {
        let level = |bit: usize| if run & (1 << bit) != 0 { 1.0 } else { -1.0 };
        let (a, b, c, d) = (level(0), level(1), level(2), level(3));
        let e = a * b * c * d;
        for (column, value) in columns.iter_mut().zip([a, b, c, d, e]) {
            column.push(value);
        }
        let second = a * b * c > 0.0;
        block.push(if second { "2" } else { "1" }.to_string());
        values
            .push(50.0 + 4.0 * a + 3.0 * b - 2.5 * c + 1.5 * a * b + if second { 6.0 } else { 0.0 } + small_noise(run));
    }
    for centre in 0..8usize {
        for column in columns.iter_mut() {
            column.push(0.0);
        }
        let second = centre >= 4;
        block.push(if second { "2" } else { "1" }.to_string());
        values.push(50.0 - 2.0 + if second { 6.0 } else { 0.0 } + small_noise(16 + centre));
    }
    let names = ["Temperature", "Pressure", "Speed", "Feed", "Coolant"];
    let mut factors = coded_factors(&names, &columns);
    if with_blocks {
        factors.push(("Shift", block, true));
    }
    table(&factors, values)
}

#[test]
fn blocks_enter_pure_error_curvature_and_confounding() {
    let table = blocked_fraction(true);
    let outcome = analyse_factorial(&table.data(), &with_direction(Some(Direction::HigherIsBetter))).expect("outcome");
    let two = outcome.two_level.as_ref().expect("two-level");
    assert_eq!(two.design.name, "2^(5-1) resolution V");
    // Pure error within blocks, by its definition (common practice): the centre points'
    // variance about their own block's mean, 3 df in each block.
    let centre = &table.values[16..];
    let within = |group: &[f64]| {
        let mean = group.iter().sum::<f64>() / group.len() as f64;
        group.iter().map(|y| (y - mean).powi(2)).sum::<f64>()
    };
    let expected = (within(&centre[..4]) + within(&centre[4..])) / 6.0;
    assert_eq!(two.pure_error_df, 6);
    assert!(close(two.pure_error_variance.expect("pure error"), expected, 1e-9));
    assert!(two.pure_error_variance.expect("pure error") < 0.01);
    // DE (= ABC) is constant within each block: named, never an effect.
    assert_eq!(two.confounded_with_blocks, ["Feed × Coolant (DE)"]);
    assert!(two.effects.iter().all(|effect| effect.name != "DE"));
    assert!(outcome.cautions.iter().any(|c| c.contains("Confounded with blocks")));
    let effect = |name: &str| two.effects.iter().find(|e| e.name == name).expect(name);
    for (name, value) in [("A", 8.0), ("B", 6.0), ("C", -5.0), ("AB", 3.0)] {
        assert!((effect(name).effect - value).abs() < 0.11, "{name}");
        assert!(effect(name).active, "{name}");
    }
    // Curvature within blocks, judged by all the pure error.
    let curvature = two.curvature.as_ref().expect("curvature");
    assert!((curvature.difference - 2.0).abs() < 0.11);
    assert_eq!(curvature.df, 6);
    assert!(curvature.p_value.expect("p") < 0.001);
    assert_eq!(two.error.source, "centre points");
    assert!(two.error.sentence.contains("within blocks"), "{}", two.error.sentence);
    // The combinations a blocked fraction leaves out are left out by design.
    assert!(
        outcome.cautions.iter().all(|c| !c.contains("were not run")),
        "{:?}",
        outcome.cautions
    );
    assert!(outcome
        .cautions
        .iter()
        .any(|c| c.contains("left out by design") && c.contains("A + BCDE")));
    let reduced = outcome.reduced.as_ref().expect("reduced");
    assert!(reduced.active_terms.iter().all(|term| term != "Feed:Coolant"));
    assert!(reduced.terms.iter().any(|term| term == "Shift"), "{:?}", reduced.terms);
    let best = reduced.best.as_ref().expect("best");
    for setting in [("Temperature", "1"), ("Pressure", "1"), ("Speed", "-1")] {
        assert!(
            best.settings.contains(&(setting.0.to_string(), setting.1.to_string())),
            "{:?}",
            best.settings
        );
    }
    assert!(best.was_run);
    // Without the block column the shift of 6 falls into the "pure error" (the fault
    // this guards against): the blocked analysis is what keeps it out.
    let unblocked = analyse_factorial(&blocked_fraction(false).data(), &FactorialOptions::default()).expect("outcome");
    let pooled = unblocked
        .two_level
        .expect("two-level")
        .pure_error_variance
        .expect("pure error");
    assert!(pooled > 5.0, "{pooled}");
}

/// A replicated 2^3 (two runs per corner) with three centre points. Model with known
/// effects: y = 20 + 2 A + B + noise, no curvature.
#[test]
fn curvature_uses_all_the_pure_error() {
    let mut columns: Vec<Vec<f64>> = vec![Vec::new(); 3];
    let mut values = Vec::new();
    for replicate in 0..2 {
        for run in 0..8usize {
            let level = |bit: usize| if run & (1 << bit) != 0 { 1.0 } else { -1.0 };
            for (bit, column) in columns.iter_mut().enumerate() {
                column.push(level(bit));
            }
            values.push(20.0 + 2.0 * level(0) + level(1) + small_noise(8 * replicate + run));
        }
    }
    for centre in 0..3 {
        for column in columns.iter_mut() {
            column.push(0.0);
        }
        values.push(20.0 + small_noise(16 + centre));
    }
    let factors = coded_factors(&["A", "B", "C"], &columns);
    let table = table(&factors, values.clone());
    let outcome = analyse_factorial(&table.data(), &FactorialOptions::default()).expect("outcome");
    let two = outcome.two_level.as_ref().expect("two-level");
    // Pure error by its definition (common practice): corners about their cell means
    // (8 df) and centre points about theirs (2 df), pooled.
    let mut ss = 0.0;
    for run in 0..8 {
        let pair = [values[run], values[8 + run]];
        let mean = 0.5 * (pair[0] + pair[1]);
        ss += pair.iter().map(|y| (y - mean).powi(2)).sum::<f64>();
    }
    let centre_mean = values[16..].iter().sum::<f64>() / 3.0;
    ss += values[16..].iter().map(|y| (y - centre_mean).powi(2)).sum::<f64>();
    let variance = ss / 10.0;
    assert_eq!(two.pure_error_df, 10);
    assert_eq!(two.error.source, "replicates and centre points");
    assert!(close(two.error.df, 10.0, 1e-12));
    assert!(two.error.sentence.contains("10 degrees of freedom"));
    let curvature = two.curvature.as_ref().expect("curvature");
    assert_eq!(curvature.df, 10);
    // se = s sqrt(1/n_F + 1/n_C) (Montgomery, section on centre points).
    assert!(close(
        curvature.se.expect("se"),
        (variance * (1.0 / 16.0 + 1.0 / 3.0)).sqrt(),
        1e-9
    ));
    let factorial_mean = values[..16].iter().sum::<f64>() / 16.0;
    assert!(close(curvature.difference, factorial_mean - centre_mean, 1e-12));
    let effect = |name: &str| two.effects.iter().find(|e| e.name == name).expect(name);
    assert!((effect("A").effect - 4.0).abs() < 0.11 && effect("A").active);
    assert!((effect("B").effect - 2.0).abs() < 0.11 && effect("B").active);
}

/// An unreplicated 2^4. Model with known effects: y = 20 + 5 A + 3 B + 2 AC + noise,
/// so A 10, B 6, AC 4; the interactions of three or more factors are pooled as error.
#[test]
fn unreplicated_full_factorial_pools_high_order_interactions() {
    let mut columns: Vec<Vec<f64>> = vec![Vec::new(); 4];
    let mut values = Vec::new();
    for run in 0..16usize {
        let level = |bit: usize| if run & (1 << bit) != 0 { 1.0 } else { -1.0 };
        for (bit, column) in columns.iter_mut().enumerate() {
            column.push(level(bit));
        }
        values.push(20.0 + 5.0 * level(0) + 3.0 * level(1) + 2.0 * level(0) * level(2) + small_noise(run));
    }
    let factors = coded_factors(&["A", "B", "C", "D"], &columns);
    let outcome = analyse_factorial(&table(&factors, values).data(), &FactorialOptions::default()).expect("outcome");
    let two = outcome.two_level.as_ref().expect("two-level");
    assert_eq!(two.error.source, "pooled high-order interactions");
    assert!(close(two.error.df, 5.0, 1e-12));
    let pooled: Vec<&str> = two
        .effects
        .iter()
        .filter(|e| e.in_error)
        .map(|e| e.name.as_str())
        .collect();
    assert_eq!(pooled, ["ABC", "ABD", "ACD", "BCD", "ABCD"]);
    // Pooled standard error of an effect: sqrt(sum e^2 / m) over the pooled effects
    // (SS = N e^2 / 4 and Var(e) = 4 sigma^2 / N for N runs; common practice).
    let sum_sq: f64 = two
        .effects
        .iter()
        .filter(|e| e.in_error)
        .map(|e| e.effect * e.effect)
        .sum();
    let se = (sum_sq / 5.0).sqrt();
    let effect = |name: &str| two.effects.iter().find(|e| e.name == name).expect(name);
    assert!(close(effect("A").se.expect("se"), se, 1e-12));
    for (name, value) in [("A", 10.0), ("B", 6.0), ("AC", 4.0)] {
        assert!(
            (effect(name).effect - value).abs() < 0.11 && effect(name).active,
            "{name}"
        );
    }
    assert!(two
        .effects
        .iter()
        .filter(|e| e.in_error)
        .all(|e| !e.active && e.p_value.is_none()));
}

/// NIST/SEMATECH e-Handbook of Statistical Methods, eddy current probe sensitivity case
/// study (2^3 full factorial, responses from memory as in the two-level unit tests): an
/// unreplicated 2^3 leaves one three-factor interaction, too few to pool, so Lenth's
/// method judges the effects. Effects from the same section (from memory): X1 3.1025,
/// X2 -0.8675, X3 0.2125.
#[test]
fn saturated_design_is_judged_by_lenth_and_says_so() {
    let responses = [1.70, 4.57, 0.55, 3.39, 1.51, 4.59, 0.67, 4.29];
    let mut columns: Vec<Vec<f64>> = vec![Vec::new(); 3];
    for run in 0..8usize {
        for (bit, column) in columns.iter_mut().enumerate() {
            column.push(if run & (1 << bit) != 0 { 1.0 } else { -1.0 });
        }
    }
    let factors = coded_factors(&["X1", "X2", "X3"], &columns);
    let outcome = analyse_factorial(
        &table(&factors, responses.to_vec()).data(),
        &FactorialOptions::default(),
    )
    .expect("outcome");
    let two = outcome.two_level.as_ref().expect("two-level");
    assert_eq!(two.error.source, "Lenth's method");
    assert!(close(two.error.df, 7.0 / 3.0, 1e-12));
    assert!(outcome.cautions.iter().any(|c| c.contains("Lenth's method")));
    let effect = |name: &str| two.effects.iter().find(|e| e.name == name).expect(name).effect;
    assert!(close(effect("A"), 3.1025, 1e-12));
    assert!(close(effect("B"), -0.8675, 1e-12));
    assert!(close(effect("C"), 0.2125, 1e-12));
}

/// A 2^(4-1) fraction with D = ABC, unreplicated. Model with known effects:
/// y = 10 + 2 A - 1.5 B + noise.
#[test]
fn fraction_says_what_is_aliased_not_what_was_not_run() {
    let mut columns: Vec<Vec<f64>> = vec![Vec::new(); 4];
    let mut values = Vec::new();
    for run in 0..8usize {
        let level = |bit: usize| if run & (1 << bit) != 0 { 1.0 } else { -1.0 };
        let (a, b, c) = (level(0), level(1), level(2));
        for (column, value) in columns.iter_mut().zip([a, b, c, a * b * c]) {
            column.push(value);
        }
        values.push(10.0 + 2.0 * a - 1.5 * b + small_noise(run));
    }
    let factors = coded_factors(&["A", "B", "C", "D"], &columns);
    let outcome = analyse_factorial(&table(&factors, values).data(), &FactorialOptions::default()).expect("outcome");
    let two = outcome.two_level.as_ref().expect("two-level");
    assert_eq!(two.design.kind, "regular fraction");
    assert_eq!(outcome.cells.n_missing, 8);
    assert!(
        outcome.cautions.iter().all(|c| !c.contains("were not run")),
        "{:?}",
        outcome.cautions
    );
    let caution = outcome
        .cautions
        .iter()
        .find(|c| c.contains("left out by design"))
        .expect("aliasing caution");
    assert!(caution.contains("A + BCD") && caution.contains("D = ABC"), "{caution}");
    assert!((two.effects.iter().find(|e| e.name == "A").expect("A").effect - 4.0).abs() < 0.11);
}

/// A replicated 2^3 (Supplier East/West, Temperature 170/180, Time 10/20) where one run
/// planned at 180 was made at 175. Model with known effects: y = 80 + 3 [East] - 3
/// [West] + 2 T + Time + noise (T, Time coded ±1; the 175 run at T = 0).
#[test]
fn off_plan_run_gives_no_best_equal_to_worst_and_settings_within_the_runs() {
    let mut supplier = Vec::new();
    let mut temperature = Vec::new();
    let mut time = Vec::new();
    let mut values = Vec::new();
    let mut index = 0;
    for _ in 0..2 {
        for run in 0..8usize {
            let level = |bit: usize| if run & (1 << bit) != 0 { 1.0 } else { -1.0 };
            let (s, mut t, m) = (level(0), level(1), level(2));
            if index == 15 {
                t = 0.0;
            }
            supplier.push(if s > 0.0 { "East" } else { "West" }.to_string());
            temperature.push(format!("{}", 175.0 + 5.0 * t));
            time.push(format!("{}", 15.0 + 5.0 * m));
            values.push(80.0 + 3.0 * s + 2.0 * t + m + small_noise(index));
            index += 1;
        }
    }
    let table = table(
        &[
            ("Supplier", supplier, false),
            ("Temperature", temperature, false),
            ("Time", time, false),
        ],
        values,
    );
    let outcome = analyse_factorial(&table.data(), &with_direction(Some(Direction::HigherIsBetter))).expect("outcome");
    assert!(outcome.two_level.is_none());
    for line in &outcome.summary {
        if let (Some(best), Some(worst)) = (line.find(" is best ("), line.find(" worst (")) {
            let head = &line[..best];
            let best_label = head.rsplit(": ").next().unwrap_or(head);
            let middle = &line[..worst];
            let worst_label = middle.rsplit("), ").next().unwrap_or(middle);
            assert_ne!(best_label, worst_label, "{line}");
        }
    }
    let reduced = outcome.reduced.as_ref().expect("reduced");
    let best = reduced.best.as_ref().expect("best");
    assert!(best.was_run);
    let observed: Vec<Vec<(String, String)>> = outcome
        .model
        .as_ref()
        .expect("model")
        .cells
        .iter()
        .map(|cell| {
            ["Supplier", "Temperature", "Time"]
                .iter()
                .zip(&cell.levels)
                .map(|(f, l)| (f.to_string(), l.clone()))
                .collect()
        })
        .collect();
    assert!(
        observed
            .iter()
            .any(|cell| best.settings.iter().all(|setting| cell.contains(setting))),
        "{:?}",
        best.settings
    );
    if let Some(outside) = &reduced.outside_trial {
        assert!(!outside.was_run);
        assert!(outcome
            .cautions
            .iter()
            .any(|c| c.contains("prediction outside the trial")));
    }
    // The 175 run leaves the averages at 175 (and those that need it) not estimable:
    // the summary says so instead of naming one level both best and worst.
    assert!(
        outcome.summary.iter().any(|line| line.contains("cannot be estimated")),
        "{:?}",
        outcome.summary
    );
}

/// A 2^3 design with numeric A (10/15/20) and B (1/2/3) and a text factor C (blue/red),
/// with centre runs (A 15, B 2) repeated twice at each label of C. Model with known
/// effects: y = 30 + 4 A - 2 B + 3 C - 2.5 [centre] + noise (C = +1 for red, the second
/// label in sorted order), so the effects are A 8, B -4, C 6 and corners minus centre 2.5.
#[test]
fn centre_runs_at_each_level_of_a_text_factor() {
    let (mut a, mut b, mut c, mut values) = (Vec::new(), Vec::new(), Vec::new(), Vec::new());
    for run in 0..8usize {
        let level = |bit: usize| if run & (1 << bit) != 0 { 1.0 } else { -1.0 };
        a.push(format!("{}", 15.0 + 5.0 * level(0)));
        b.push(format!("{}", 2.0 + level(1)));
        c.push(if level(2) > 0.0 { "red" } else { "blue" }.to_string());
        values.push(30.0 + 4.0 * level(0) - 2.0 * level(1) + 3.0 * level(2) + small_noise(run));
    }
    for centre in 0..4usize {
        let red = centre % 2 == 1;
        a.push("15".into());
        b.push("2".into());
        c.push(if red { "red" } else { "blue" }.to_string());
        values.push(30.0 + if red { 3.0 } else { -3.0 } - 2.5 + small_noise(8 + centre));
    }
    let table = table(&[("A", a, false), ("B", b, false), ("C", c, false)], values);
    let outcome = analyse_factorial(&table.data(), &FactorialOptions::default()).expect("outcome");
    assert_eq!(outcome.mixed_levels_record, None);
    assert_eq!(outcome.cells.n_centre_points, 4);
    assert_eq!(outcome.cells.n_missing, 0);
    let two = outcome.two_level.as_ref().expect("two-level");
    assert_eq!(two.design.name, "2^3 full factorial");
    let effect = |name: &str| two.effects.iter().find(|e| e.name == name).expect(name).effect;
    assert!((effect("A") - 8.0).abs() < 0.11);
    assert!((effect("B") + 4.0).abs() < 0.11);
    assert!((effect("C") - 6.0).abs() < 0.11);
    // Pure error: the two centre runs at each label of C (1 df each).
    assert_eq!(two.pure_error_df, 2);
    let curvature = two.curvature.as_ref().expect("curvature");
    assert!((curvature.difference - 2.5).abs() < 0.11, "{}", curvature.difference);
    assert_eq!(curvature.df, 2);
    assert!(curvature.p_value.expect("p") < 0.05);
}

/// A replicated 2^2. Model with known effects: y = 10 + 2 A - 3 B + noise: the highest
/// cell is A high, B low (about 15), the lowest A low, B high (about 5).
#[test]
fn no_direction_means_no_best_settings() {
    let (mut a, mut b, mut values) = (Vec::new(), Vec::new(), Vec::new());
    for run in 0..12usize {
        let level = |bit: usize| if run & (1 << bit) != 0 { 1.0 } else { -1.0 };
        a.push(format!("{}", level(0)));
        b.push(format!("{}", level(1)));
        values.push(10.0 + 2.0 * level(0) - 3.0 * level(1) + small_noise(run));
    }
    let table = table(&[("A", a, false), ("B", b, false)], values);
    let outcome = analyse_factorial(&table.data(), &FactorialOptions::default()).expect("outcome");
    let reduced = outcome.reduced.as_ref().expect("reduced");
    assert!(reduced.best.is_none() && reduced.outside_trial.is_none());
    let highest = outcome.highest_observed.as_ref().expect("highest");
    assert_eq!(
        highest.settings,
        [("A".to_string(), "1".to_string()), ("B".to_string(), "-1".to_string())]
    );
    assert!((highest.mean - 15.0).abs() < 0.06);
    let lowest = outcome.lowest_observed.as_ref().expect("lowest");
    assert_eq!(
        lowest.settings,
        [("A".to_string(), "-1".to_string()), ("B".to_string(), "1".to_string())]
    );
    assert!(outcome
        .summary
        .iter()
        .any(|line| line.contains("No direction was given")));
    assert!(outcome.summary.iter().all(|line| !line.contains("Recommended")));
    // With a direction, the lowest corner is recommended for lower-is-better.
    let lower = analyse_factorial(&table.data(), &with_direction(Some(Direction::LowerIsBetter))).expect("outcome");
    let best = lower.reduced.expect("reduced").best.expect("best");
    assert_eq!(best.settings, lowest.settings);
    assert!((best.mean - 5.0).abs() < 0.06);
}

/// Montgomery, *Design and Analysis of Experiments* (pilot-plant filtration rate, an
/// unreplicated 2^4, example 6.2 in the 5th and later editions), rates in standard order
/// of A, B, C, D from memory (as in the integration tests). Its published three- and
/// four-factor effects (from memory) are ABC 1.875, ABD 4.125, ACD -1.625, BCD -2.625,
/// ABCD 1.375; pooled as error on 5 df they give an effect standard error
/// sqrt(31.953125 / 5) (hand arithmetic), against which A, C, D, AC and AD stand out.
#[test]
fn filtration_rate_pools_its_high_order_interactions() {
    let rates = [
        45.0, 71.0, 48.0, 65.0, 68.0, 60.0, 80.0, 65.0, 43.0, 100.0, 45.0, 104.0, 75.0, 86.0, 70.0, 96.0,
    ];
    let mut columns: Vec<Vec<f64>> = vec![Vec::new(); 4];
    for run in 0..16usize {
        for (bit, column) in columns.iter_mut().enumerate() {
            column.push(if run & (1 << bit) != 0 { 1.0 } else { -1.0 });
        }
    }
    let factors = coded_factors(&["A", "B", "C", "D"], &columns);
    let outcome =
        analyse_factorial(&table(&factors, rates.to_vec()).data(), &FactorialOptions::default()).expect("outcome");
    let two = outcome.two_level.as_ref().expect("two-level");
    assert_eq!(two.error.source, "pooled high-order interactions");
    let effect = |name: &str| two.effects.iter().find(|e| e.name == name).expect(name);
    for (name, value) in [
        ("ABC", 1.875),
        ("ABD", 4.125),
        ("ACD", -1.625),
        ("BCD", -2.625),
        ("ABCD", 1.375),
    ] {
        assert!(close(effect(name).effect, value, 1e-12), "{name}");
        assert!(effect(name).in_error);
    }
    let se = (31.953125f64 / 5.0).sqrt();
    assert!(close(effect("A").se.expect("se"), se, 1e-12));
    let mut active: Vec<&str> = two
        .effects
        .iter()
        .filter(|e| e.active)
        .map(|e| e.name.as_str())
        .collect();
    active.sort();
    assert_eq!(active, ["A", "AC", "AD", "C", "D"]);
}

/// Number of correct significant digits of `actual` against `expected`, capped at 16.
fn log_relative_error(actual: f64, expected: f64) -> f64 {
    if actual == expected {
        return 16.0;
    }
    (-((actual - expected).abs() / expected.abs()).log10()).min(16.0)
}

#[test]
#[allow(clippy::print_stdout)] // the test prints the accuracy it measured
fn offset_data_keep_every_digit_of_effects_and_sums_of_squares() {
    // A replicated 2^3 at offsets 1e6 and 1e9 whose effects are 1e-4 to 2e-2: the values
    // are typed decimals `offset + k / 10^4` with integer k. Reference: exact integer
    // arithmetic in units of 1e-4 (a +-1 contrast C = sum s_i k_i gives the effect
    // 2 C / N and the sum of squares C^2 / N, N = 16 runs; each reference is one
    // correctly rounded division of exact integers). Type III sums of squares and
    // two-level effects must carry at least 12 digits (LRE >= 12).
    let names = ["a", "b", "c"];
    // coefficients in units of 1e-4 (half effects): a, b, c, ab, ac, bc, abc
    let half_effects: [i64; 7] = [100, 37, 1, 13, 2, 7, 1];
    let mut rng = Rng(0x0FF5_E7DA_7A00_0016);
    let mut checked_coefficients = 0;
    for offset in [1_000_000_i64, 1_000_000_000] {
        let mut labels: Vec<Vec<String>> = vec![Vec::new(); 3];
        let mut units: Vec<i64> = Vec::new();
        let mut signs_of_run: Vec<[i64; 3]> = Vec::new();
        for _replicate in 0..2 {
            for run in 0..8 {
                let signs = [0, 1, 2].map(|factor| if run >> factor & 1 == 1 { 1 } else { -1 });
                for (factor, sign) in signs.iter().enumerate() {
                    labels[factor].push(if *sign > 0 { "high" } else { "low" }.to_string());
                }
                let products = [
                    signs[0],
                    signs[1],
                    signs[2],
                    signs[0] * signs[1],
                    signs[0] * signs[2],
                    signs[1] * signs[2],
                    signs[0] * signs[1] * signs[2],
                ];
                let noise = rng.below(41) as i64 - 20;
                let k = 5_000 + noise + products.iter().zip(&half_effects).map(|(s, e)| s * e).sum::<i64>();
                units.push(k);
                signs_of_run.push(signs);
            }
        }
        let values: Vec<f64> = units
            .iter()
            .map(|k| format!("{offset}.{k:04}").parse::<f64>().expect("decimal"))
            .collect();
        let factors: Vec<(&str, Vec<String>, bool)> = names
            .iter()
            .zip(&labels)
            .map(|(name, labels)| (*name, labels.clone(), false))
            .collect();
        let data = table(&factors, values);
        let outcome = analyse_factorial(&data.data(), &FactorialOptions::default()).expect("outcome");
        let model = outcome.model.as_ref().expect("k-way model");
        let two_level = outcome.two_level.as_ref().expect("two-level analysis");
        let reduced = outcome.reduced.as_ref().expect("reduced model");
        let n = units.len() as i64;
        for word in 1..8usize {
            let members: Vec<usize> = (0..3).filter(|f| word >> f & 1 == 1).collect();
            let contrast: i64 = units
                .iter()
                .zip(&signs_of_run)
                .map(|(k, signs)| k * members.iter().map(|&f| signs[f]).product::<i64>())
                .sum();
            let expected_ss = (contrast * contrast) as f64 / (n * 100_000_000) as f64;
            let expected_effect = (2 * contrast) as f64 / (n * 10_000) as f64;
            let term_name = members.iter().map(|&f| names[f]).collect::<Vec<_>>();
            // Term names join factor names with a separator; compare the names alone.
            let names_of = |text: &str| -> Vec<String> {
                text.split(|c: char| !c.is_alphanumeric())
                    .filter(|part| !part.is_empty())
                    .map(str::to_string)
                    .collect()
            };
            let line = model
                .type_iii
                .iter()
                .find(|line| names_of(&line.source) == term_name)
                .unwrap_or_else(|| panic!("type III line for {term_name:?}"));
            let effect = two_level
                .effects
                .iter()
                .find(|effect| names_of(&effect.term) == term_name)
                .unwrap_or_else(|| panic!("effect of {term_name:?}"));
            let ss_lre = log_relative_error(line.sum_sq, expected_ss);
            let effect_lre = log_relative_error(effect.effect.abs(), expected_effect.abs());
            println!(
                "offset {offset:e} term {}: SS {:e} (exact {expected_ss:e}) LRE {ss_lre:.1}; effect {:e} (exact {expected_effect:e}) LRE {effect_lre:.1}",
                line.source, line.sum_sq, effect.effect
            );
            assert!(ss_lre >= 12.0 && effect_lre >= 12.0, "offset {offset}, {term_name:?}");
            // The reduced model is fitted to the exactly accumulated deviations: each of
            // its coefficients (coded -1/+1) is half the effect, C / N in units of 1e-4.
            if let Some(coefficient) = reduced
                .coefficients
                .iter()
                .find(|line| names_of(line.name.split('(').nth(1).unwrap_or("")) == term_name)
            {
                let expected = contrast as f64 / (n * 10_000) as f64;
                let lre = log_relative_error(coefficient.estimate.abs(), expected.abs());
                println!(
                    "offset {offset:e} reduced-model coefficient {}: {:e} (exact {expected:e}) LRE {lre:.1}",
                    coefficient.name, coefficient.estimate
                );
                assert!(lre >= 12.0, "offset {offset}, reduced coefficient {}", coefficient.name);
                checked_coefficients += 1;
            }
        }
        // The intercept is the grand mean, offset + sum k / (N 10^4): one correctly rounded
        // division of exact integers (both below 2^53).
        let intercept = &reduced.coefficients[0];
        let numerator = offset * n * 10_000 + units.iter().sum::<i64>();
        let expected = numerator as f64 / (n * 10_000) as f64;
        let lre = log_relative_error(intercept.estimate, expected);
        println!(
            "offset {offset:e} reduced-model intercept: {:e} (exact {expected:e}) LRE {lre:.1}",
            intercept.estimate
        );
        assert!(lre >= 15.0, "offset {offset}, intercept");
    }
    assert!(
        checked_coefficients >= 4,
        "the reduced models kept {checked_coefficients} coefficients"
    );
}

#[test]
fn the_reading_never_contradicts_the_two_level_verdict() {
    // Property: a 2^(5-2) fraction (D = AB, E = AC) with four centre points, effects of
    // random sizes, is judged by the two-level analysis against the centre points' pure
    // error; the k-way model of main effects pools the two unused columns as its error
    // and can disagree. Whatever the data, a term the lead does not count as an effect
    // is never "clearly beyond chance" in the reading, and a term it counts is never
    // "not clearly beyond chance" (the headline and the sheets below it agree).
    let mut rng = Rng(0x5EED_0FC0_DE00_0002);
    let mut disagreements = 0;
    for _trial in 0..60 {
        let mut labels: Vec<Vec<String>> = vec![Vec::new(); 5];
        let mut values = Vec::new();
        let sizes: Vec<f64> = (0..5).map(|_| (rng.uniform() - 0.5) * 0.4).collect();
        let noise = 0.005 + 0.05 * rng.uniform();
        let mut runs: Vec<[i32; 5]> = Vec::new();
        for a in [-1, 1] {
            for b in [-1, 1] {
                for c in [-1, 1] {
                    runs.push([a, b, c, a * b, a * c]);
                }
            }
        }
        runs.extend([[0; 5]; 4]);
        for run in &runs {
            for (factor, &x) in run.iter().enumerate() {
                labels[factor].push(format!("{}", 10 * (factor + 1) as i32 + x));
            }
            let mean: f64 = run.iter().zip(&sizes).map(|(&x, size)| f64::from(x) * size).sum();
            values.push(1.0 + mean + noise * (rng.uniform() - 0.5) * 3.4);
        }
        let names = ["A", "B", "C", "D", "E"];
        let factors: Vec<(&str, Vec<String>, bool)> = names
            .iter()
            .zip(labels)
            .map(|(name, labels)| (*name, labels, false))
            .collect();
        let table = table(&factors, values);
        let outcome = analyse_factorial(&table.data(), &FactorialOptions::default()).expect("outcome");
        let two = outcome.two_level.as_ref().expect("a two-level analysis");
        for effect in two.effects.iter().filter(|effect| effect.name.chars().count() == 1) {
            for line in outcome
                .reading
                .iter()
                .filter(|line| line.starts_with(&format!("{} accounts", effect.term)))
            {
                if line.contains("counted as an effect") {
                    disagreements += 1;
                }
                if effect.active {
                    assert!(
                        !line.contains("not clearly beyond chance") && !line.contains("is not counted"),
                        "{line}"
                    );
                } else {
                    assert!(
                        !line.contains("(clearly beyond chance") && !line.contains("but is counted"),
                        "{line}"
                    );
                }
            }
        }
    }
    // The case the rule is for happens in such trials (the k-way error has 2 df).
    assert!(disagreements > 0, "no trial set the two verdicts apart");
}
