//! Unit tests of the factorial analysis (end-to-end checks against published examples
//! are in the integration tests).

use super::coding::code_factor;
use super::{analyse_any, analyse_factorial, FactorData, FactorialData, FactorialOptions};
use crate::analysis::oneway::fit_one_way;

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
    let outcome = analyse_factorial(&table.data(), &FactorialOptions::default()).expect("outcome");
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
