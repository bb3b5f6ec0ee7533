//! The second-order analysis checked against statsmodels 0.15.0 OLS and
//! numpy 2.4.6 (`reference_values.rs`, made by
//! `testdata/make_surface_reference.py`), and on surfaces known by
//! construction (exact quadratics, where the stationary point and the
//! eigenvalues follow by algebra).

use super::*;
use crate::analysis::surface::reference_values::{
    FOUR_FACTORS_THREE_BLOCKS, THREE_FACTORS_TWO_BLOCKS, TWO_FACTORS_TWO_BLOCKS,
};

/// One random quadratic surface with blocks and the reference library's answers.
pub struct ReferenceCase {
    pub centre: &'static [f64],
    pub half_range: &'static [f64],
    pub settings: &'static [&'static [f64]],
    pub blocks: &'static [usize],
    pub values: &'static [f64],
    pub intercept: f64,
    pub coefficients: &'static [f64],
    pub standard_errors: &'static [f64],
    pub sequential_ss: &'static [f64],
    pub blocks_ss: f64,
    pub residual_ss: f64,
    pub residual_df: usize,
    pub pure_error_ss: f64,
    pub pure_error_df: usize,
    pub lack_of_fit_f: f64,
    pub stationary_coded: &'static [f64],
    pub eigenvalues: &'static [f64],
    pub point: &'static [f64],
    pub prediction: [f64; 5],
}

/// Log relative error: correct significant digits (common practice for
/// reference checks, as in the NIST StRD reports).
fn lre(value: f64, reference: f64) -> f64 {
    if value == reference {
        return 16.0;
    }
    if reference == 0.0 {
        return -value.abs().log10();
    }
    (-((value - reference).abs() / reference.abs()).log10()).min(16.0)
}

fn analyse(case: &ReferenceCase, direction: Option<Direction>) -> SurfaceOutcome {
    let k = case.centre.len();
    let data = SurfaceData {
        factor_names: (0..k).map(|i| format!("X{}", i + 1)).collect(),
        coding: case
            .centre
            .iter()
            .copied()
            .zip(case.half_range.iter().copied())
            .collect(),
        settings: case.settings.iter().map(|row| row.to_vec()).collect(),
        blocks: case.blocks.to_vec(),
        values: case.values.to_vec(),
    };
    analyse_surface(
        &data,
        &SurfaceOptions {
            confidence: 0.95,
            direction,
        },
    )
    .expect("fit")
}

/// The fit of `data` with a direction, at 95% confidence.
fn fit_towards(data: &SurfaceData, direction: Direction) -> SurfaceOutcome {
    analyse_surface(
        data,
        &SurfaceOptions {
            confidence: 0.95,
            direction: Some(direction),
        },
    )
    .expect("fit")
}

/// Every value of the case to at least `digits` correct digits; returns the smallest LRE.
#[allow(clippy::print_stdout)]
fn check_case(name: &str, case: &ReferenceCase, digits: f64) -> f64 {
    let outcome = analyse(case, None);
    let mut worst = f64::INFINITY;
    let mut check = |what: &str, value: f64, reference: f64| {
        let found = lre(value, reference);
        assert!(
            found >= digits,
            "{name} {what}: {value} vs {reference} (LRE {found:.1})"
        );
        worst = worst.min(found);
    };
    check("intercept", outcome.coefficients[0].estimate, case.intercept);
    for (index, (&reference, &se)) in case.coefficients.iter().zip(case.standard_errors).enumerate() {
        let line = &outcome.coefficients[index + 1];
        check(&line.term, line.estimate, reference);
        check(&format!("se {}", line.term), line.se.expect("se"), se);
    }
    let line = |source: &str| outcome.anova.iter().find(|line| line.source == source).expect(source);
    check("blocks ss", line("Blocks").sum_sq, case.blocks_ss);
    check("linear ss", line("Linear").sum_sq, case.sequential_ss[0]);
    check("interaction ss", line("Interaction").sum_sq, case.sequential_ss[1]);
    check("square ss", line("Square").sum_sq, case.sequential_ss[2]);
    check("residual ss", line("Residual").sum_sq, case.residual_ss);
    assert_eq!(outcome.residual_df, case.residual_df);
    check("pure error ss", line("Pure error").sum_sq, case.pure_error_ss);
    assert_eq!(line("Pure error").df, case.pure_error_df);
    check(
        "lack of fit F",
        line("Lack of fit").f_value.expect("F"),
        case.lack_of_fit_f,
    );
    let stationary = outcome.stationary.as_ref().expect("stationary point");
    for (value, reference) in stationary.coded.iter().zip(case.stationary_coded) {
        check("stationary point", *value, *reference);
    }
    for (value, reference) in stationary.eigenvalues.iter().zip(case.eigenvalues) {
        check("eigenvalue", *value, *reference);
    }
    let prediction = outcome.predict(case.point).expect("prediction");
    let found = [
        prediction.predicted,
        prediction.mean_low,
        prediction.mean_high,
        prediction.new_run_low,
        prediction.new_run_high,
    ];
    for (value, reference) in found.iter().zip(case.prediction) {
        check("prediction", *value, reference);
    }
    println!("{name}: smallest LRE {worst:.1}");
    worst
}

#[test]
fn random_surfaces_with_blocks_match_the_reference_library() {
    // Ten correct digits or more for every value (the t quantile behind the
    // intervals is itself good to about 13).
    check_case("two factors, two blocks", &TWO_FACTORS_TWO_BLOCKS, 10.0);
    check_case("three factors, two blocks", &THREE_FACTORS_TWO_BLOCKS, 10.0);
    check_case("four factors, three blocks", &FOUR_FACTORS_THREE_BLOCKS, 10.0);
}

/// A rotatable two-factor central composite plan with five centre runs,
/// filled from a known quadratic (coded units) plus small fixed deviations.
fn exact_surface(linear: [f64; 2], interaction: f64, squares: [f64; 2], noise: &[f64]) -> SurfaceData {
    exact_surface_at(2f64.sqrt(), linear, interaction, squares, noise)
}

/// As [`exact_surface`], with the axial runs at coded distance `alpha` (1: on the faces).
fn exact_surface_at(alpha: f64, linear: [f64; 2], interaction: f64, squares: [f64; 2], noise: &[f64]) -> SurfaceData {
    let mut coded = vec![
        [-1.0, -1.0],
        [1.0, -1.0],
        [-1.0, 1.0],
        [1.0, 1.0],
        [-alpha, 0.0],
        [alpha, 0.0],
        [0.0, -alpha],
        [0.0, alpha],
    ];
    coded.extend(std::iter::repeat_n([0.0, 0.0], 5));
    let coding = vec![(100.0, 10.0), (5.0, 0.5)];
    let values = coded
        .iter()
        .enumerate()
        .map(|(index, x)| {
            50.0 + linear[0] * x[0]
                + linear[1] * x[1]
                + interaction * x[0] * x[1]
                + squares[0] * x[0] * x[0]
                + squares[1] * x[1] * x[1]
                + noise.get(index).copied().unwrap_or(0.0)
        })
        .collect();
    SurfaceData {
        factor_names: vec!["Temperature".into(), "Pressure".into()],
        settings: coded
            .iter()
            .map(|x| vec![100.0 + 10.0 * x[0], 5.0 + 0.5 * x[1]])
            .collect(),
        coding,
        blocks: Vec::new(),
        values,
    }
}

const SMALL_NOISE: [f64; 13] = [
    0.01, -0.02, 0.015, 0.0, -0.01, 0.02, -0.015, 0.005, 0.01, -0.01, 0.0, 0.02, -0.02,
];

#[test]
fn a_maximum_inside_the_region_is_recommended_with_its_kind_and_eigenvalues() {
    // B = [[-2, 0.5], [0.5, -3]]: eigenvalues (-5 ± √2)/2 = -1.7929, -3.2071 (algebra).
    // b = (1, -1): x_s = -B⁻¹ b / 2 = (5/23, -3/23) (algebra: det B = 23/4).
    let data = exact_surface([1.0, -1.0], 1.0, [-2.0, -3.0], &SMALL_NOISE);
    let outcome = fit_towards(&data, Direction::HigherIsBetter);
    let point = outcome.stationary.as_ref().expect("stationary");
    assert_eq!(point.kind, StationaryKind::Maximum);
    assert!(point.inside_region);
    assert!(
        (point.coded[0] - 5.0 / 23.0).abs() < 0.01 && (point.coded[1] + 3.0 / 23.0).abs() < 0.01,
        "{:?}",
        point.coded
    );
    assert!((point.real[0] - (100.0 + 50.0 / 23.0)).abs() < 0.1 && (point.real[1] - (5.0 - 1.5 / 23.0)).abs() < 0.005);
    assert!((point.eigenvalues[0] - (-5.0 + 2f64.sqrt()) / 2.0).abs() < 0.02);
    assert!((point.eigenvalues[1] - (-5.0 - 2f64.sqrt()) / 2.0).abs() < 0.02);
    let recommended = outcome.recommended.as_ref().expect("recommended");
    assert!(recommended
        .coded
        .iter()
        .zip(&point.coded)
        .all(|(a, b)| (a - b).abs() < 1e-12));
    assert!(recommended.new_run_low < recommended.mean_low && recommended.mean_high < recommended.new_run_high);
    assert!(outcome.ridge.is_empty());
    // The centre runs give pure error, so lack of fit is tested.
    assert!(outcome.anova.iter().any(|line| line.source == "Lack of fit"));
}

#[test]
fn a_saddle_is_read_as_one_and_the_ridge_is_followed() {
    // B = diag(2, -3): a saddle (eigenvalues of both signs).
    let data = exact_surface([1.0, 1.0], 0.0, [2.0, -3.0], &SMALL_NOISE);
    let outcome = fit_towards(&data, Direction::HigherIsBetter);
    assert_eq!(
        outcome.stationary.as_ref().expect("stationary").kind,
        StationaryKind::Saddle
    );
    assert_eq!(outcome.ridge.len(), RIDGE_STEPS + 1);
    // Each ridge point lies on its sphere and beats every other point of the sphere tried.
    for ridge in &outcome.ridge {
        let norm = ridge.coded.iter().map(|x| x * x).sum::<f64>().sqrt();
        assert!((norm - ridge.radius).abs() < 1e-6 * (1.0 + ridge.radius));
        for step in 0..360 {
            let angle = f64::from(step).to_radians();
            let other = [ridge.radius * angle.cos(), ridge.radius * angle.sin()];
            assert!(outcome.predict_coded(&other) <= ridge.predicted + 1e-9);
        }
    }
    assert!(outcome.recommended.is_some() && outcome.recommended_reason.is_some());
}

#[test]
fn a_maximum_outside_the_region_leads_to_ridge_analysis() {
    // b = (6, 0), B = diag(-1, -2): maximum at x1 = 3, beyond the radius √2.
    let data = exact_surface([6.0, 0.0], 0.0, [-1.0, -2.0], &SMALL_NOISE);
    let outcome = fit_towards(&data, Direction::HigherIsBetter);
    let point = outcome.stationary.as_ref().expect("stationary");
    assert_eq!(point.kind, StationaryKind::Maximum);
    assert!(!point.inside_region && (point.coded[0] - 3.0).abs() < 0.05);
    let last = outcome.ridge.last().expect("ridge");
    assert!((last.coded[0] - 2f64.sqrt()).abs() < 0.02 && last.coded[1].abs() < 0.02);
    assert!(outcome
        .recommended_reason
        .as_deref()
        .is_some_and(|why| why.contains("outside")));
    // Lowest instead: the ridge goes the other way.
    let lowest = fit_towards(&data, Direction::LowerIsBetter);
    assert!(lowest.ridge.last().expect("ridge").coded[0] < -1.0);
}

#[test]
fn a_face_centred_plan_s_recommendation_stays_within_the_settings_run() {
    // Runs on the square [-1, 1]^2 (axial runs on the faces): the ball of the farthest
    // run has radius sqrt(2) and reaches coded 1.41 on an axis, beyond any run.
    // y = 50 + 6 x1 + x2 - x1^2 - 2 x2^2 rises in x1 all across the square, so within
    // the settings run the highest point is x1 = 1, x2 = 1/4 (algebra: dy/dx2 = 0);
    // on the sphere of radius sqrt(2) it would be near x1 = 1.39, past the highest setting.
    let data = exact_surface_at(1.0, [6.0, 1.0], 0.0, [-1.0, -2.0], &SMALL_NOISE);
    let outcome = fit_towards(&data, Direction::HigherIsBetter);
    assert_eq!(outcome.region_bounds, vec![(-1.0, 1.0), (-1.0, 1.0)]);
    let point = outcome.stationary.as_ref().expect("stationary");
    assert!(!point.inside_region, "{:?}", point.coded);
    let recommended = outcome.recommended.as_ref().expect("recommended");
    assert!(
        (recommended.coded[0] - 1.0).abs() < 1e-6 && (recommended.coded[1] - 0.25).abs() < 0.02,
        "{:?}",
        recommended.coded
    );
    assert!((recommended.real[0] - 110.0).abs() < 1e-5, "{:?}", recommended.real);
    let why = outcome.recommended_reason.as_deref().unwrap_or("");
    assert!(why.contains("beyond the settings run"), "{why}");
    // A stationary point within the ball but past a factor's settings is outside the region.
    let data = exact_surface_at(1.0, [2.4, 0.0], 0.0, [-1.0, -2.0], &SMALL_NOISE);
    let outcome = fit_towards(&data, Direction::HigherIsBetter);
    let point = outcome.stationary.as_ref().expect("stationary");
    assert!(
        (point.coded[0] - 1.2).abs() < 0.02 && point.distance < 2f64.sqrt(),
        "{:?}",
        point.coded
    );
    assert!(!point.inside_region);
    assert!(outcome.recommended.as_ref().expect("recommended").coded[0] <= 1.0 + 1e-9);
}

#[test]
fn runs_that_cannot_fit_the_squares_are_refused() {
    // A two-level plan with centre runs cannot separate the two squares.
    let mut settings = Vec::new();
    for a in [90.0, 110.0] {
        for b in [4.5, 5.5] {
            settings.push(vec![a, b]);
            settings.push(vec![a, b]);
        }
    }
    settings.extend(std::iter::repeat_n(vec![100.0, 5.0], 4));
    let values = (0..settings.len()).map(|index| index as f64).collect();
    let data = SurfaceData {
        factor_names: vec!["A".into(), "B".into()],
        coding: vec![(100.0, 10.0), (5.0, 0.5)],
        settings,
        blocks: Vec::new(),
        values,
    };
    let error = analyse_surface(&data, &SurfaceOptions::default()).expect_err("squares aliased");
    assert!(
        matches!(error, SurfaceError::NotEstimable { ref term } if term == "B²"),
        "{error}"
    );
}

#[test]
fn coding_from_settings_reads_composite_and_three_level_plans() {
    // Five settings (central composite): the second and fourth are the cube.
    assert_eq!(
        coding_from_settings(&[80.0, 90.0, 100.0, 110.0, 120.0, 100.0]),
        Some((100.0, 10.0))
    );
    assert_eq!(coding_from_settings(&[90.0, 100.0, 110.0]), Some((100.0, 10.0)));
    assert_eq!(coding_from_settings(&[5.0, 5.0]), None);
}

#[test]
#[allow(clippy::print_stdout)]
fn the_surface_is_the_same_at_any_magnitude() {
    // Scale equivariance: the values times 2^k (an exact change of units) give the same
    // F, p, R², stationary point and recommended settings, and coefficients, SEs,
    // residual SD and eigenvalues times 2^k; sums of squares times 4^k where that can
    // be held. The scale-one answers are those checked against statsmodels 0.15.0
    // above. Before the deviations were scaled, 2^990 gave no test at all and 2^-990
    // no stationary point.
    let case = &THREE_FACTORS_TWO_BLOCKS;
    let base = analyse(case, Some(Direction::HigherIsBetter));
    let mut worst = 16.0_f64;
    for power in [-990_i32, -500, -60, 60, 500, 990] {
        let factor = 2f64.powi(power);
        let scaled_values: Vec<f64> = case.values.iter().map(|value| value * factor).collect();
        let scaled_case = ReferenceCase {
            values: Box::leak(scaled_values.into_boxed_slice()),
            ..*case
        };
        let scaled = analyse(&scaled_case, Some(Direction::HigherIsBetter));
        let mut check = |what: &str, value: f64, reference: f64| {
            let digits = lre(value, reference);
            worst = worst.min(digits);
            assert!(
                digits >= 13.0,
                "2^{power} {what}: {value} against {reference} (LRE {digits:.1})"
            );
        };
        for (line, reference) in scaled.anova.iter().zip(&base.anova) {
            if let (Some(f), Some(f_reference)) = (line.f_value, reference.f_value) {
                check(&format!("F of {}", line.source), f, f_reference);
                check(
                    &format!("p of {}", line.source),
                    line.p_value.unwrap_or(f64::NAN),
                    reference.p_value.unwrap_or(f64::NAN),
                );
            }
            let squared = reference.sum_sq * factor * factor;
            if squared.is_finite() && squared > f64::MIN_POSITIVE {
                check(&format!("SS of {}", line.source), line.sum_sq, squared);
            }
        }
        check("R²", scaled.r_squared, base.r_squared);
        check(
            "residual SD",
            scaled.residual_sd.unwrap_or(f64::NAN),
            base.residual_sd.unwrap_or(f64::NAN) * factor,
        );
        for (line, reference) in scaled.coefficients.iter().zip(&base.coefficients).skip(1) {
            check(&line.term, line.estimate, reference.estimate * factor);
            check(
                &format!("SE of {}", line.term),
                line.se.unwrap_or(f64::NAN),
                reference.se.unwrap_or(f64::NAN) * factor,
            );
        }
        let (point, reference) = (
            scaled.stationary.as_ref().expect("a stationary point"),
            base.stationary.as_ref().expect("a stationary point"),
        );
        for (x, x_reference) in point.coded.iter().zip(&reference.coded) {
            check("stationary point", *x, *x_reference);
        }
        for (value, value_reference) in point.eigenvalues.iter().zip(&reference.eigenvalues) {
            check("eigenvalue", *value, value_reference * factor);
        }
        let test = reading::model_test(&scaled).expect("the model's test");
        let test_reference = reading::model_test(&base).expect("the model's test");
        check("model F", test.0, test_reference.0);
        let recommended = scaled.recommended.as_ref().expect("recommended settings");
        let recommended_reference = base.recommended.as_ref().expect("recommended settings");
        for (x, x_reference) in recommended.real.iter().zip(&recommended_reference.real) {
            check("recommended setting", *x, *x_reference);
        }
    }
    println!("second-order fit at 2^-990 .. 2^990: lowest LRE {worst:.1}");
}
