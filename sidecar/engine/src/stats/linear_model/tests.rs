//! Tests of the factorial linear model against statsmodels and scipy reference runs,
//! plus property tests (balanced designs, additivity of sums of squares).

use super::*;

/// Reference values: made by `testdata/factorial_reference.py` with statsmodels 0.15.0,
/// scipy 1.17.1, pandas 3.1.1, numpy 2.4.6; each block of lines carries the call.
const REFERENCE: &str = include_str!("../testdata/factorial_reference.txt");
const TWO_FACTOR: &str = include_str!("../testdata/two_factor.csv");
const THREE_FACTOR: &str = include_str!("../testdata/three_factor.csv");
const BLOCK_FACTOR: &str = include_str!("../testdata/block_factor.csv");
const MISSING_CELL: &str = include_str!("../testdata/missing_cell.csv");
const ONE_WAY: &str = include_str!("../testdata/one_way.csv");

fn factor(name: &str, n_levels: usize) -> FactorSpec {
    FactorSpec {
        name: name.to_string(),
        n_levels,
        is_block: false,
    }
}

fn block(name: &str, n_levels: usize) -> FactorSpec {
    FactorSpec {
        name: name.to_string(),
        n_levels,
        is_block: true,
    }
}

/// Reads a CSV of level columns followed by `y` and summarises it into cells.
fn cells_from_csv(text: &str) -> Vec<CellSummary> {
    let mut levels = Vec::new();
    let mut values = Vec::new();
    for line in text.lines().skip(1).filter(|line| !line.trim().is_empty()) {
        let fields: Vec<&str> = line.split(',').collect();
        let (level_fields, value_field) = fields.split_at(fields.len() - 1);
        levels.push(
            level_fields
                .iter()
                .map(|field| field.trim().parse::<usize>().expect("level index"))
                .collect::<Vec<_>>(),
        );
        values.push(value_field[0].trim().parse::<f64>().expect("response"));
    }
    summarise_cells(&levels, &values).expect("valid observations")
}

/// Reference lines of one kind for one data set, fields after the first two.
fn reference(kind: &str, dataset: &str) -> Vec<Vec<String>> {
    REFERENCE
        .lines()
        .filter(|line| !line.starts_with('#'))
        .map(|line| line.split_whitespace().map(str::to_string).collect::<Vec<_>>())
        .filter(|fields| fields.len() > 2 && fields[0] == kind && fields[1] == dataset)
        .map(|fields| fields[2..].to_vec())
        .collect()
}

fn number(field: &str) -> f64 {
    field.parse::<f64>().expect("number in reference file")
}

/// Relative error, with an absolute floor for values near zero.
fn relative_error(got: f64, want: f64) -> f64 {
    (got - want).abs() / want.abs().max(1e-300)
}

/// Tracks the largest relative error of a group of comparisons.
struct Agreement {
    label: &'static str,
    worst: f64,
}

impl Agreement {
    fn new(label: &'static str) -> Self {
        Agreement { label, worst: 0.0 }
    }
    fn check(&mut self, what: &str, got: f64, want: f64, tolerance: f64) {
        let error = relative_error(got, want);
        assert!(
            error <= tolerance,
            "{}: {what}: got {got}, want {want}, relative error {error:e}",
            self.label
        );
        self.worst = self.worst.max(error);
    }
    fn report(&self) {
        println!("{}: max relative error {:e}", self.label, self.worst);
    }
}

fn table<'a>(fit: &'a FactorialFit, typ: &str) -> &'a AnovaTable {
    match typ {
        "1" => &fit.type_i,
        "2" => &fit.type_ii,
        _ => &fit.type_iii,
    }
}

/// Compares the ANOVA tables, residual line and R² with the reference lines.
fn check_tables(fit: &FactorialFit, dataset: &str, agreement: &mut Agreement) {
    let rows = reference("anova", dataset);
    assert!(!rows.is_empty(), "reference rows for {dataset}");
    for fields in rows {
        let (typ, term) = (fields[0].as_str(), fields[1].as_str());
        let row = table(fit, typ)
            .row(term)
            .unwrap_or_else(|| panic!("{dataset} type {typ} has no row {term}"));
        assert_eq!(
            row.df,
            fields[2].parse::<usize>().expect("df"),
            "{dataset} {typ} {term} df"
        );
        let what = format!("{dataset} type {typ} {term}");
        agreement.check(&format!("{what} SS"), row.sum_sq, number(&fields[3]), 1e-10);
        agreement.check(&format!("{what} F"), row.f_value.expect("F"), number(&fields[4]), 1e-10);
        agreement.check(&format!("{what} p"), row.p_value.expect("p"), number(&fields[5]), 1e-9);
    }
    let residual = &reference("resid", dataset)[0];
    assert_eq!(fit.residual.df, residual[0].parse::<usize>().expect("df"));
    agreement.check("residual SS", fit.residual.sum_sq, number(&residual[1]), 1e-10);
    if let Some(r_squared) = reference("rsquared", dataset).first() {
        agreement.check("R squared", fit.r_squared.expect("R²"), number(&r_squared[0]), 1e-10);
    }
}

/// Compares grand mean, least-squares means and effects with the `t_test` reference.
fn check_estimates(fit: &FactorialFit, factors: &[FactorSpec], dataset: &str, agreement: &mut Agreement) {
    let check = |agreement: &mut Agreement, what: &str, estimate: &Estimate, fields: &[String]| {
        agreement.check(what, estimate.value.expect("estimable"), number(&fields[0]), 1e-10);
        agreement.check(
            what,
            estimate.standard_error.expect("standard error"),
            number(&fields[1]),
            1e-9,
        );
    };
    let grand = &reference("grand", dataset)[0];
    check(agreement, "grand mean", &fit.grand_mean, grand);
    let ls_rows = reference("lsmean", dataset);
    assert_eq!(ls_rows.len(), factors.iter().map(|f| f.n_levels).sum::<usize>());
    for fields in ls_rows {
        let means = fit
            .ls_means
            .iter()
            .find(|means| means.factor == fields[0])
            .expect("factor has least-squares means");
        let level: usize = fields[1].parse().expect("level");
        check(agreement, "least-squares mean", &means.means[level], &fields[2..]);
    }
    let effect_rows = reference("effect", dataset);
    let expected_count: usize = fit.effects.iter().map(|term| term.effects.len()).sum();
    assert_eq!(effect_rows.len(), expected_count, "{dataset} effect count");
    for fields in effect_rows {
        let term = fit
            .effects
            .iter()
            .find(|term| term.term == fields[0])
            .expect("term has effects");
        let levels: Vec<usize> = fields[1].split(',').map(|v| v.parse().expect("level")).collect();
        let effect = term
            .effects
            .iter()
            .find(|effect| effect.levels == levels)
            .expect("level combination present");
        check(agreement, "effect", &effect.estimate, &fields[2..]);
    }
}

#[test]
fn two_factor_unbalanced_matches_statsmodels() {
    let factors = [factor("a", 3), factor("b", 2)];
    let cells = cells_from_csv(TWO_FACTOR);
    let fit = fit_factorial(&cells, &factors, &ModelSpec::default()).expect("fit");
    assert!(!fit.is_balanced);
    assert_eq!(fit.max_order, 2);
    let mut agreement = Agreement::new("two-factor vs statsmodels 0.15.0");
    check_tables(&fit, "two_factor", &mut agreement);
    check_estimates(&fit, &factors, "two_factor", &mut agreement);
    agreement.report();
}

#[test]
fn three_factor_unbalanced_matches_statsmodels() {
    let factors = [factor("a", 2), factor("b", 3), factor("c", 2)];
    let cells = cells_from_csv(THREE_FACTOR);
    let fit = fit_factorial(&cells, &factors, &ModelSpec::default()).expect("fit");
    assert!(!fit.is_balanced);
    assert_eq!(fit.max_order, 3);
    let names: Vec<&str> = fit.terms.iter().map(|term| term.name.as_str()).collect();
    assert_eq!(names, ["a", "b", "c", "a:b", "a:c", "b:c", "a:b:c"]);
    let mut agreement = Agreement::new("three-factor vs statsmodels 0.15.0");
    check_tables(&fit, "three_factor", &mut agreement);
    check_estimates(&fit, &factors, "three_factor", &mut agreement);
    agreement.report();
}

#[test]
fn block_factor_enters_additively_and_matches_statsmodels() {
    let factors = [block("block", 3), factor("a", 2), factor("b", 3)];
    let cells = cells_from_csv(BLOCK_FACTOR);
    let fit = fit_factorial(&cells, &factors, &ModelSpec::default()).expect("fit");
    let names: Vec<&str> = fit.terms.iter().map(|term| term.name.as_str()).collect();
    assert_eq!(names, ["block", "a", "b", "a:b"]);
    let mut agreement = Agreement::new("block design vs statsmodels 0.15.0");
    check_tables(&fit, "block_factor", &mut agreement);
    check_estimates(&fit, &factors, "block_factor", &mut agreement);
    agreement.report();
}

#[test]
fn missing_cell_is_listed_and_flagged_and_types_i_ii_match_nested_fits() {
    let factors = [factor("a", 3), factor("b", 3)];
    let cells = cells_from_csv(MISSING_CELL);
    let fit = fit_factorial(&cells, &factors, &ModelSpec::default()).expect("fit");
    assert_eq!(fit.missing_cells, vec![vec![2, 2]]);
    assert!(!fit.is_balanced);
    assert!(fit.type_iii_depends_on_coding);
    let interaction = fit.terms.iter().find(|term| term.name == "a:b").expect("a:b");
    assert_eq!((interaction.df_full, interaction.df_estimable), (4, 3));
    assert_eq!(interaction.estimability, Estimability::Partial);
    assert!(fit.terms[..2]
        .iter()
        .all(|term| term.estimability == Estimability::Full));
    // 8 cells, full interaction: saturated on the cells, so observed means are fitted
    assert_eq!(fit.rank, 8);
    assert!(fit.lack_of_fit.sum_sq < 1e-20);
    let mut agreement = Agreement::new("missing cell vs statsmodels 0.15.0 nested fits");
    for fields in reference("anova", "missing_cell") {
        let row = table(&fit, &fields[0]).row(&fields[1]).expect("row");
        assert_eq!(row.df, fields[2].parse::<usize>().expect("df"));
        agreement.check("SS", row.sum_sq, number(&fields[3]), 1e-10);
        agreement.check("F", row.f_value.expect("F"), number(&fields[4]), 1e-10);
        agreement.check("p", row.p_value.expect("p"), number(&fields[5]), 1e-9);
    }
    let residual = &reference("resid", "missing_cell")[0];
    assert_eq!(fit.residual.df, residual[0].parse::<usize>().expect("df"));
    agreement.check("residual SS", fit.residual.sum_sq, number(&residual[1]), 1e-10);
    let r_squared = &reference("rsquared", "missing_cell")[0];
    agreement.check("R squared", fit.r_squared.expect("R²"), number(&r_squared[0]), 1e-10);
    agreement.report();
    // least-squares means of level 2 average over the empty cell (2, 2): not estimable
    // with the interaction in the model; levels 0 and 1 are.
    for means in &fit.ls_means {
        assert!(means.means[2].value.is_none(), "{} level 2", means.factor);
        assert!(means.means[0].value.is_some() && means.means[1].value.is_some());
    }
    // observed cells stay estimable and are fitted exactly (saturated model)
    for cell in &fit.cells {
        let fitted = cell.fitted.value.expect("observed cell is estimable");
        assert!((fitted - cell.observed_mean).abs() < 1e-10);
    }
    // main-effects model: every least-squares mean is estimable again
    let additive = fit_factorial(&cells, &factors, &ModelSpec { max_order: Some(1) }).expect("fit");
    assert!(!additive.type_iii_depends_on_coding);
    assert!(additive
        .ls_means
        .iter()
        .all(|means| means.means.iter().all(|mean| mean.value.is_some())));
}

#[test]
fn one_factor_reproduces_one_way_anova() {
    let cells = cells_from_csv(ONE_WAY);
    let fit = fit_factorial(&cells, &[factor("a", 4)], &ModelSpec::default()).expect("fit");
    let mut agreement = Agreement::new("one factor vs scipy 1.17.1 f_oneway");
    let reference_row = &reference("anova", "one_way")[0];
    for table in [&fit.type_i, &fit.type_ii, &fit.type_iii] {
        let row = &table.rows[0];
        assert_eq!(row.df, 3);
        agreement.check("between SS", row.sum_sq, number(&reference_row[3]), 1e-12);
        agreement.check("F", row.f_value.expect("F"), number(&reference_row[4]), 1e-12);
        agreement.check("p", row.p_value.expect("p"), number(&reference_row[5]), 1e-9);
    }
    let residual = &reference("resid", "one_way")[0];
    assert_eq!(fit.residual.df, 14);
    agreement.check("within SS", fit.residual.sum_sq, number(&residual[1]), 1e-12);
    // one factor: the cell means are fitted exactly, so no lack of fit
    assert_eq!(fit.lack_of_fit.df, 0);
    agreement.report();
}

/// Small deterministic generator for the property tests (64-bit LCG, Knuth's constants).
struct Lcg(u64);

impl Lcg {
    fn next_unit(&mut self) -> f64 {
        self.0 = self
            .0
            .wrapping_mul(6_364_136_223_846_793_005)
            .wrapping_add(1_442_695_040_888_963_407);
        (self.0 >> 11) as f64 / (1u64 << 53) as f64
    }
    fn below(&mut self, bound: usize) -> usize {
        ((self.next_unit() * bound as f64) as usize).min(bound - 1)
    }
}

/// Complete grid of cells with random means and centred SS.
fn random_cells(rng: &mut Lcg, factors: &[FactorSpec], counts: impl Fn(&mut Lcg) -> usize) -> Vec<CellSummary> {
    let n_levels: Vec<usize> = factors.iter().map(|f| f.n_levels).collect();
    level_grid(&n_levels)
        .into_iter()
        .map(|levels| {
            let n = counts(rng);
            let mean = 10.0 + 5.0 * rng.next_unit();
            CellSummary {
                levels,
                n,
                mean,
                centred_mean: mean,
                centred_ss_scaled: if n > 1 { (n - 1) as f64 * rng.next_unit() } else { 0.0 },
                scale_exponent: 0,
            }
        })
        .collect()
}

#[test]
fn balanced_designs_give_equal_type_i_ii_iii() {
    // property (common practice): with all cells present and equal counts the effect
    // columns of different terms are orthogonal, so the three types coincide.
    let mut rng = Lcg(7);
    for trial in 0..25 {
        let n_factors = 1 + rng.below(3);
        let mut factors: Vec<FactorSpec> = (0..n_factors)
            .map(|index| factor(["a", "b", "c"][index], 2 + rng.below(3)))
            .collect();
        if trial % 4 == 0 {
            factors.insert(0, block("block", 2 + rng.below(3)));
        }
        let n_per_cell = 1 + rng.below(3);
        let cells = random_cells(&mut rng, &factors, |_| n_per_cell);
        let fit = fit_factorial(&cells, &factors, &ModelSpec::default()).expect("fit");
        assert!(fit.is_balanced, "trial {trial}");
        assert!(!fit.type_i.rows.is_empty());
        for (index, row) in fit.type_i.rows.iter().enumerate() {
            for other in [&fit.type_ii.rows[index], &fit.type_iii.rows[index]] {
                assert_eq!(other.term, row.term);
                assert_eq!(other.df, row.df);
                assert!(
                    relative_error(other.sum_sq, row.sum_sq) < 1e-9 || (other.sum_sq - row.sum_sq).abs() < 1e-12,
                    "trial {trial} {}: {} vs {}",
                    row.term,
                    other.sum_sq,
                    row.sum_sq
                );
            }
        }
    }
}

#[test]
fn type_i_sums_add_up_to_total_and_top_term_agrees_across_types() {
    // properties (common practice): sequential SS plus residual partition the corrected
    // total; the last, highest-order term has the same SS in all three types.
    let mut rng = Lcg(11);
    for trial in 0..15 {
        let factors = [
            factor("a", 2 + rng.below(3)),
            factor("b", 2 + rng.below(2)),
            factor("c", 2),
        ];
        let cells = random_cells(&mut rng, &factors, |rng| 1 + rng.below(4));
        let fit = fit_factorial(&cells, &factors, &ModelSpec::default()).expect("fit");
        let sequential: f64 = fit.type_i.rows.iter().map(|row| row.sum_sq).sum();
        let total = sequential + fit.residual.sum_sq;
        assert!(relative_error(total, fit.total.sum_sq) < 1e-10, "trial {trial}");
        let df: usize = fit.type_i.rows.iter().map(|row| row.df).sum::<usize>() + fit.residual.df;
        assert_eq!(df, fit.total.df);
        let last = fit.type_i.rows.last().expect("rows");
        for other in [&fit.type_ii, &fit.type_iii] {
            let row = other.rows.last().expect("rows");
            assert_eq!(row.term, last.term);
            assert!(relative_error(row.sum_sq, last.sum_sq) < 1e-9);
        }
    }
}

#[test]
fn four_by_three_by_five_design_of_sixty_cells_is_saturated() {
    // the performance case: 60 cells, unequal counts, full three-way model
    let factors = [factor("a", 4), factor("b", 3), factor("c", 5)];
    let mut rng = Lcg(3);
    let cells = random_cells(&mut rng, &factors, |rng| 2 + rng.below(3));
    let start = std::time::Instant::now();
    let fit = fit_factorial(&cells, &factors, &ModelSpec::default()).expect("fit");
    println!("4x3x5, 60 cells: fit in {:?} (this build)", start.elapsed());
    assert_eq!(fit.rank, 60);
    assert_eq!(fit.type_iii.rows.len(), 7);
    assert!(fit.lack_of_fit.sum_sq < 1e-18);
    for cell in &fit.cells {
        let fitted = cell.fitted.value.expect("estimable");
        assert!((fitted - cell.observed_mean).abs() < 1e-9);
    }
    // saturated: least-squares means are plain averages of the cell means over the others
    for (factor_index, means) in fit.ls_means.iter().enumerate() {
        for (level, mean) in means.means.iter().enumerate() {
            let matching: Vec<f64> = cells
                .iter()
                .filter(|cell| cell.levels[factor_index] == level)
                .map(|cell| cell.mean)
                .collect();
            let average = matching.iter().sum::<f64>() / matching.len() as f64;
            assert!((mean.value.expect("estimable") - average).abs() < 1e-10);
        }
    }
}

#[test]
fn effects_sum_to_zero_over_each_factor() {
    let factors = [factor("a", 3), factor("b", 2)];
    let cells = cells_from_csv(TWO_FACTOR);
    let fit = fit_factorial(&cells, &factors, &ModelSpec::default()).expect("fit");
    let sum = |term: &TermEffects, keep: &dyn Fn(&[usize]) -> bool| -> f64 {
        term.effects
            .iter()
            .filter(|effect| keep(&effect.levels))
            .map(|effect| effect.estimate.value.expect("estimable"))
            .sum()
    };
    let main_a = &fit.effects[0];
    assert!(sum(main_a, &|_| true).abs() < 1e-12);
    let interaction = &fit.effects[2];
    for level in 0..3 {
        assert!(sum(interaction, &|levels| levels[0] == level).abs() < 1e-12);
    }
    for level in 0..2 {
        assert!(sum(interaction, &|levels| levels[1] == level).abs() < 1e-12);
    }
}

#[test]
fn automatic_order_leaves_residual_df_without_replication() {
    // one observation per cell: the full model would leave no residual, so the
    // highest interaction is pooled into the residual (common practice)
    let factors = [factor("a", 3), factor("b", 4)];
    let mut rng = Lcg(5);
    let cells = random_cells(&mut rng, &factors, |_| 1);
    let fit = fit_factorial(&cells, &factors, &ModelSpec::default()).expect("fit");
    assert_eq!(fit.max_order, 1);
    assert_eq!(fit.residual.df, 6);
    assert_eq!(fit.lack_of_fit.df, 6);
    // an explicit saturated request is honoured but gives no F tests
    let saturated = fit_factorial(&cells, &factors, &ModelSpec { max_order: Some(2) }).expect("fit");
    assert_eq!(saturated.residual.df, 0);
    assert!(saturated.residual.mean_sq.is_none());
    assert!(saturated
        .type_i
        .rows
        .iter()
        .all(|row| row.f_value.is_none() && row.p_value.is_none()));
}

#[test]
fn summarise_cells_gives_counts_means_and_centred_sums() {
    let levels = vec![vec![0, 1], vec![0, 1], vec![1, 0], vec![0, 1]];
    let values = [1.0, 2.0, 5.0, 6.0];
    let cells = summarise_cells(&levels, &values).expect("cells");
    assert_eq!(cells.len(), 2);
    // by hand: cell (0,1) holds 1, 2, 6: mean 3, centred SS 4 + 1 + 9 = 14
    assert_eq!(cells[0].levels, vec![0, 1]);
    assert_eq!(cells[0].n, 3);
    assert!((cells[0].mean - 3.0).abs() < 1e-15);
    assert!((cells[0].centred_ss() - 14.0).abs() < 1e-13);
    assert_eq!((cells[1].n, cells[1].centred_ss()), (1, 0.0));
    assert!(summarise_cells(&levels, &values[..3]).is_err());
    assert!(summarise_cells(&[], &[]).is_err());
}

#[test]
fn bad_input_is_refused() {
    let factors = [factor("a", 2), factor("b", 2)];
    let good = CellSummary {
        levels: vec![0, 0],
        n: 2,
        mean: 1.0,
        centred_mean: 1.0,
        centred_ss_scaled: 0.5,
        scale_exponent: 0,
    };
    let other = CellSummary {
        levels: vec![1, 1],
        ..good.clone()
    };
    let spec = ModelSpec::default();
    assert!(fit_factorial(&[good.clone(), other.clone()], &factors, &spec).is_ok());
    let cases: Vec<(Vec<CellSummary>, Vec<FactorSpec>, ModelSpec)> = vec![
        (vec![], factors.to_vec(), spec.clone()),
        (vec![good.clone()], vec![], spec.clone()),
        (vec![good.clone()], vec![factor("a", 1), factor("b", 2)], spec.clone()),
        (
            vec![CellSummary {
                levels: vec![0],
                ..good.clone()
            }],
            factors.to_vec(),
            spec.clone(),
        ),
        (
            vec![CellSummary {
                levels: vec![0, 2],
                ..good.clone()
            }],
            factors.to_vec(),
            spec.clone(),
        ),
        (
            vec![CellSummary { n: 0, ..good.clone() }],
            factors.to_vec(),
            spec.clone(),
        ),
        (
            vec![CellSummary {
                mean: f64::NAN,
                ..good.clone()
            }],
            factors.to_vec(),
            spec.clone(),
        ),
        (
            vec![CellSummary {
                centred_ss_scaled: -1.0,
                scale_exponent: 0,
                ..good.clone()
            }],
            factors.to_vec(),
            spec.clone(),
        ),
        (vec![good.clone(), good.clone()], factors.to_vec(), spec.clone()),
        (
            vec![CellSummary {
                n: 1,
                centred_ss_scaled: 0.0,
                scale_exponent: 0,
                ..good.clone()
            }],
            factors.to_vec(),
            spec.clone(),
        ),
        (
            vec![good.clone(), other.clone()],
            factors.to_vec(),
            ModelSpec { max_order: Some(0) },
        ),
    ];
    for (index, (cells, factors, spec)) in cases.into_iter().enumerate() {
        assert!(fit_factorial(&cells, &factors, &spec).is_err(), "case {index}");
    }
}

#[test]
fn wholly_aliased_terms_are_dropped_from_the_tables() {
    // cells (0,0) and (1,1) only: b's column equals a's and a:b's equals the intercept
    let factors = [factor("a", 2), factor("b", 2)];
    let cells = vec![
        CellSummary {
            levels: vec![0, 0],
            n: 2,
            mean: 3.0,
            centred_mean: 3.0,
            centred_ss_scaled: 0.5,
            scale_exponent: 0,
        },
        CellSummary {
            levels: vec![1, 1],
            n: 3,
            mean: 5.0,
            centred_mean: 5.0,
            centred_ss_scaled: 1.0,
            scale_exponent: 0,
        },
    ];
    let fit = fit_factorial(&cells, &factors, &ModelSpec::default()).expect("fit");
    let status: Vec<Estimability> = fit.terms.iter().map(|term| term.estimability).collect();
    assert_eq!(
        status,
        [
            Estimability::Full,
            Estimability::NotEstimable,
            Estimability::NotEstimable
        ]
    );
    assert_eq!(fit.missing_cells, vec![vec![0, 1], vec![1, 0]]);
    for table in [&fit.type_i, &fit.type_ii, &fit.type_iii] {
        assert!(table.row("b").is_none() && table.row("a:b").is_none());
    }
    // by hand: SS(a) = 2*3*(5-3)^2/5 = 4.8; residual 1.5 on 3 df
    let row = fit.type_i.row("a").expect("a");
    assert_eq!(row.df, 1);
    assert!((row.sum_sq - 4.8).abs() < 1e-12);
    assert!((fit.residual.sum_sq - 1.5).abs() < 1e-12);
    assert_eq!(fit.residual.df, 3);
    // the b effect cannot be told apart from the a effect
    assert!(fit.effects[1]
        .effects
        .iter()
        .all(|effect| effect.estimate.value.is_none()));
}
