//! The power of the second-order tests against scipy 1.17.1 `stats.ncf.sf`, with the
//! noncentrality computed by numpy 2.4.6 from the same model matrices (the plans are
//! built here by the program's own plan makers, and in the script independently):
//! `testdata/make_surface_power_reference.py`, whose printout the values below copy.

use super::*;
use crate::design::surface::{
    make_box_behnken, make_central_composite, AxialDistance, BoxBehnkenRequest, CompositeRequest, CubePart,
    SurfaceFactor, SurfacePlan,
};

fn factors(k: usize) -> Vec<SurfaceFactor> {
    (0..k)
        .map(|index| SurfaceFactor::new(&format!("X{index}"), -1.0, 1.0))
        .collect()
}

fn composite(k: usize, axial: AxialDistance, centres: usize) -> SurfacePlan {
    make_central_composite(&CompositeRequest {
        factors: factors(k),
        axial,
        cube: CubePart::Full,
        cube_blocks: 1,
        axial_block: false,
        cube_centre_points: centres,
        axial_centre_points: 0,
        seed: Some(7),
    })
    .expect("plan")
}

fn coded(plan: &SurfacePlan) -> Vec<Vec<f64>> {
    plan.runs.iter().map(|run| run.coded.clone()).collect()
}

/// (plan, blocks, curvature, sd, alpha, residual df, square λ, square power, group λ,
/// group power), from the script's printout.
fn check(
    name: &str,
    runs: &[Vec<f64>],
    blocks: &[usize],
    (curvature, sd, alpha): (f64, f64, f64),
    df: usize,
    square: (f64, f64),
    group: (f64, f64),
) {
    let found = second_order_power(runs, blocks, curvature, sd, alpha).expect(name);
    assert_eq!(found.residual_df, df, "{name}");
    let close = |got: f64, want: f64, what: &str| {
        assert!(
            (got - want).abs() <= 1e-9 * want.abs().max(1e-3),
            "{name} {what}: {got} against {want}"
        );
    };
    for (lambda, power) in found.square_noncentrality.iter().zip(&found.square_power) {
        close(*lambda, square.0, "square noncentrality");
        close(*power, square.1, "square power");
    }
    close(found.group_noncentrality, group.0, "group noncentrality");
    close(found.group_power, group.1, "group power");
}

#[test]
fn central_composite_plans_match_the_reference_library() {
    let two = coded(&composite(2, AxialDistance::Rotatable, 5));
    check(
        "composite k=2 rotatable, 5 centre",
        &two,
        &[],
        (1.0, 1.5, 0.05),
        7,
        (3.0917874396135283, 0.3304659142820107),
        (5.470085470085473, 0.37432098118202606),
    );
    check(
        "composite k=3 rotatable, 6 centre",
        &coded(&composite(3, AxialDistance::Rotatable, 6)),
        &[],
        (0.8, 1.0, 0.05),
        10,
        (9.223225990402378, 0.7812672755106943),
        (23.085215618339106, 0.9236077767387298),
    );
    check(
        "composite k=3 faces, 3 centre",
        &coded(&composite(3, AxialDistance::FaceCentred, 3)),
        &[],
        (0.8, 1.0, 0.05),
        7,
        (1.7147169811320757, 0.2058191532755525),
        (16.037647058823524, 0.7181540683715244),
    );
    let twice: Vec<Vec<f64>> = two.iter().chain(&two).cloned().collect();
    check(
        "composite k=2 rotatable, 5 centre, two replicates",
        &twice,
        &[],
        (1.0, 1.5, 0.05),
        20,
        (6.1835748792270575, 0.6576691214268962),
        (10.94017094017095, 0.7887387007743737),
    );
}

#[test]
fn box_behnken_and_blocked_plans_match_the_reference_library() {
    let plan = make_box_behnken(&BoxBehnkenRequest {
        factors: factors(3),
        blocks: 1,
        centre_points: 3,
        seed: Some(7),
    })
    .expect("plan");
    check(
        "Box-Behnken k=3, 3 centre",
        &coded(&plan),
        &[],
        (1.0, 1.2, 0.05),
        5,
        (2.5641025641025643, 0.2568902764515278),
        (6.666666666666668, 0.294978813750089),
    );
    let blocked = make_central_composite(&CompositeRequest {
        factors: factors(2),
        axial: AxialDistance::OrthogonalBlocking,
        cube: CubePart::Full,
        cube_blocks: 1,
        axial_block: true,
        cube_centre_points: 3,
        axial_centre_points: 3,
        seed: Some(7),
    })
    .expect("plan");
    let blocks: Vec<usize> = blocked.runs.iter().map(|run| run.block).collect();
    check(
        "composite k=2 in two blocks, 3 centre each",
        &coded(&blocked),
        &blocks,
        (1.0, 1.5, 0.01),
        7,
        (3.2820512820512837, 0.1233216852837288),
        (6.0952380952380985, 0.15122375878364328),
    );
}

#[test]
fn a_plan_without_residual_df_or_a_bad_input_is_refused() {
    // A 2² cube with centre runs cannot estimate the two squares separately (their
    // columns are equal).
    let square: Vec<Vec<f64>> = cube_and_centre();
    assert!(matches!(
        second_order_power(&square, &[], 1.0, 1.0, 0.05),
        Err(StatsError::TooFewValues { .. }) | Err(StatsError::Singular { .. })
    ));
    let two = coded(&composite(2, AxialDistance::Rotatable, 5));
    assert!(second_order_power(&two, &[], 0.0, 1.0, 0.05).is_err());
    assert!(second_order_power(&two, &[], 1.0, -1.0, 0.05).is_err());
    assert!(second_order_power(&two, &[], 1.0, 1.0, 1.5).is_err());
}

fn cube_and_centre() -> Vec<Vec<f64>> {
    vec![
        vec![-1.0, -1.0],
        vec![1.0, -1.0],
        vec![-1.0, 1.0],
        vec![1.0, 1.0],
        vec![0.0, 0.0],
        vec![0.0, 0.0],
        vec![0.0, 0.0],
    ]
}
