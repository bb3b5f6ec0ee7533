//! Response-surface plans checked numerically from their generated runs:
//! the moment conditions of rotatability and of orthogonal blocking (Box and
//! Hunter 1957), run counts (Box and Behnken 1960, their table of designs),
//! factor limits and the seeded run order.

use super::*;

fn factors(count: usize) -> Vec<SurfaceFactor> {
    (0..count)
        .map(|index| {
            SurfaceFactor::new(
                &format!("Factor {index}"),
                100.0 + index as f64,
                140.0 + 3.0 * index as f64,
            )
        })
        .collect()
}

fn composite(
    count: usize,
    axial: AxialDistance,
    cube: CubePart,
    cube_blocks: usize,
    centres: (usize, usize),
) -> SurfacePlan {
    make_central_composite(&CompositeRequest {
        factors: factors(count),
        axial,
        cube,
        cube_blocks,
        axial_block: false,
        cube_centre_points: centres.0,
        axial_centre_points: centres.1,
        seed: Some(7),
    })
    .expect("plan")
}

/// Sum over runs of the product of coded settings raised to `powers`.
fn moment(rows: &[Vec<f64>], powers: &[(usize, i32)]) -> f64 {
    rows.iter()
        .map(|row| {
            powers
                .iter()
                .map(|&(factor, power)| row[factor].powi(power))
                .product::<f64>()
        })
        .sum()
}

/// Rotatability up to fourth order (Box and Hunter 1957): every odd moment
/// is zero, mixed moments [iijj] are equal, [iiii] = 3 [iijj], and the
/// mixed even moments with more than two factors vanish.
fn assert_rotatable(rows: &[Vec<f64>]) {
    let k = rows[0].len();
    let pure = moment(rows, &[(0, 4)]);
    let mixed = moment(rows, &[(0, 2), (1, 2)]);
    for i in 0..k {
        assert!(moment(rows, &[(i, 1)]).abs() < 1e-9);
        assert!(moment(rows, &[(i, 3)]).abs() < 1e-9);
        assert!(
            (moment(rows, &[(i, 4)]) - 3.0 * mixed).abs() < 1e-9 * pure,
            "[iiii] = 3 [iijj] for factor {i}"
        );
        for j in 0..k {
            if i == j {
                continue;
            }
            assert!((moment(rows, &[(i, 2), (j, 2)]) - mixed).abs() < 1e-9 * pure);
            assert!(moment(rows, &[(i, 1), (j, 1)]).abs() < 1e-9);
            assert!(moment(rows, &[(i, 3), (j, 1)]).abs() < 1e-9);
            assert!(moment(rows, &[(i, 2), (j, 1)]).abs() < 1e-9);
            for l in 0..k {
                if l != i && l != j {
                    assert!(moment(rows, &[(i, 2), (j, 1), (l, 1)]).abs() < 1e-9);
                    assert!(moment(rows, &[(i, 1), (j, 1), (l, 1)]).abs() < 1e-9);
                }
            }
        }
    }
}

/// Orthogonal blocking (Box and Hunter 1957): within every block the sums
/// of x_i and of x_i x_j are zero and the sum of x_i² is in proportion to
/// the block's size, so block effects are orthogonal to the second-order model.
fn assert_orthogonal_blocks(plan: &SurfacePlan) {
    let k = plan.factors.len();
    let total: Vec<f64> = (0..k)
        .map(|i| plan.runs.iter().map(|run| run.coded[i].powi(2)).sum::<f64>() / plan.runs.len() as f64)
        .collect();
    for block in 1..=plan.n_blocks {
        let rows: Vec<Vec<f64>> = plan
            .runs
            .iter()
            .filter(|run| run.block == block)
            .map(|run| run.coded.clone())
            .collect();
        assert!(!rows.is_empty(), "block {block} has runs");
        for (i, &overall) in total.iter().enumerate() {
            assert!(moment(&rows, &[(i, 1)]).abs() < 1e-9, "block {block} x{i}");
            let mean_square = moment(&rows, &[(i, 2)]) / rows.len() as f64;
            assert!(
                (mean_square - overall).abs() < 1e-9,
                "block {block} x{i}²: {mean_square} vs {overall}"
            );
            for j in i + 1..k {
                assert!(moment(&rows, &[(i, 1), (j, 1)]).abs() < 1e-9, "block {block} x{i}x{j}");
            }
        }
    }
}

#[test]
fn rotatable_composite_plans_meet_the_moment_conditions() {
    // α = F^(1/4): 2 factors 1.4142, 3 factors 1.6818, 4 factors 2, 5 factors with
    // the 2^(5-1) cube 2 (Box and Hunter 1957; common practice tables).
    for (count, cube, alpha) in [
        (2, CubePart::Full, 2f64.sqrt()),
        (3, CubePart::Full, 8f64.powf(0.25)),
        (4, CubePart::Full, 2.0),
        (5, CubePart::ResolutionFive, 2.0),
        (6, CubePart::ResolutionFive, 32f64.powf(0.25)),
    ] {
        let plan = composite(count, AxialDistance::Rotatable, cube, 1, (4, 0));
        assert!(
            (plan.alpha - alpha).abs() < 1e-12,
            "{count} factors: alpha {}",
            plan.alpha
        );
        assert_rotatable(&plan.coded_rows());
    }
}

#[test]
fn a_face_centred_plan_is_not_rotatable_but_stays_in_the_cube() {
    let plan = composite(3, AxialDistance::FaceCentred, CubePart::Full, 1, (3, 0));
    assert_eq!(plan.runs.len(), 8 + 6 + 3);
    let rows = plan.coded_rows();
    assert!(rows.iter().flatten().all(|value| value.abs() <= 1.0));
    // [iiii] = 8 + 2 = 10 but 3 [iijj] = 24: not rotatable.
    assert!((moment(&rows, &[(0, 4)]) - 10.0).abs() < 1e-12);
    assert!((moment(&rows, &[(0, 2), (1, 2)]) - 8.0).abs() < 1e-12);
}

#[test]
fn orthogonal_blocking_composite_plans_meet_the_block_conditions() {
    // Three factors, cube in 2 blocks of 4 with 2 centre runs each, axial block with
    // 2 centre runs: α² = 8 (6 + 2) / (2 (8 + 4)) = 8/3, α = 1.633 (Box and Hunter 1957).
    let plan = composite(3, AxialDistance::OrthogonalBlocking, CubePart::Full, 2, (2, 2));
    assert_eq!(plan.n_blocks, 3);
    assert!((plan.alpha - (8.0f64 / 3.0).sqrt()).abs() < 1e-12);
    assert_orthogonal_blocks(&plan);
    // Four factors, cube in 2 blocks with 2 centres each, axial block 2 centres:
    // α² = 16 (8 + 2) / (2 (16 + 4)) = 4, α = 2 — rotatable and orthogonally blocked at once.
    let plan = composite(4, AxialDistance::OrthogonalBlocking, CubePart::Full, 2, (2, 2));
    assert!((plan.alpha - 2.0).abs() < 1e-12);
    assert_orthogonal_blocks(&plan);
    assert_rotatable(&plan.coded_rows());
    // Five factors, half-fraction cube in one block with 6 centres, axial block with 1.
    let plan = make_central_composite(&CompositeRequest {
        factors: factors(5),
        axial: AxialDistance::OrthogonalBlocking,
        cube: CubePart::ResolutionFive,
        cube_blocks: 1,
        axial_block: true,
        cube_centre_points: 6,
        axial_centre_points: 1,
        seed: Some(3),
    })
    .expect("plan");
    assert_eq!(plan.n_blocks, 2);
    assert_orthogonal_blocks(&plan);
}

#[test]
fn a_rotatable_plan_in_blocks_is_not_orthogonally_blocked_by_chance() {
    // Guard that the check can fail: rotatable α = 1.682 with the blocks above.
    let plan = composite(3, AxialDistance::Rotatable, CubePart::Full, 2, (2, 2));
    let result = std::panic::catch_unwind(|| assert_orthogonal_blocks(&plan));
    assert!(result.is_err());
}

#[test]
fn resolution_five_cubes_have_the_expected_runs() {
    // Smallest regular fractions of resolution V or more (common practice tables of
    // two-level fractions): 5 factors 16, 6 factors 32, 7 factors 64, 8 factors 64.
    for (count, runs) in [(2, 4), (4, 16), (5, 16), (6, 32), (7, 64), (8, 64)] {
        let plan = composite(count, AxialDistance::FaceCentred, CubePart::ResolutionFive, 1, (0, 0));
        let cube = plan.runs.iter().filter(|run| run.point == PointKind::Cube).count();
        assert_eq!(cube, runs, "{count} factors");
        assert_eq!(plan.runs.len(), runs + 2 * count);
    }
}

#[test]
fn real_units_follow_the_coding_and_limits_are_never_exceeded() {
    let temperature = SurfaceFactor::new("Temperature", 150.0, 200.0).with_limits(Some(120.0), Some(210.0));
    let time = SurfaceFactor::new("Time", 10.0, 20.0);
    let request = CompositeRequest {
        factors: vec![temperature.clone(), time.clone()],
        axial: AxialDistance::Rotatable,
        cube: CubePart::Full,
        cube_blocks: 1,
        axial_block: false,
        cube_centre_points: 5,
        axial_centre_points: 0,
        seed: Some(11),
    };
    // Rotatable α = 1.414 would put Temperature at 210.36: beyond 210.
    let error = make_central_composite(&request).expect_err("beyond the limit");
    let text = error.to_string();
    assert!(text.contains("Temperature") && text.contains("limits"), "{text}");
    let mut fitted = request.clone();
    fitted.factors[0].upper_limit = Some(211.0);
    let plan = make_central_composite(&fitted).expect("plan");
    for run in &plan.runs {
        for (factor, (&coded, &real)) in plan.factors.iter().zip(run.coded.iter().zip(&run.real)) {
            assert!((factor.to_real(coded) - real).abs() < 1e-9);
            assert!(factor.lower_limit.is_none_or(|limit| real >= limit));
            assert!(factor.upper_limit.is_none_or(|limit| real <= limit));
        }
    }
    let mut face = request;
    face.axial = AxialDistance::FaceCentred;
    let plan = make_central_composite(&face).expect("face-centred plan fits");
    assert!(plan.runs.iter().all(|run| run.real[0] <= 200.0 && run.real[0] >= 150.0));
}

#[test]
fn runs_are_shuffled_within_blocks_from_the_seed() {
    let first = composite(3, AxialDistance::OrthogonalBlocking, CubePart::Full, 2, (2, 2));
    let again = composite(3, AxialDistance::OrthogonalBlocking, CubePart::Full, 2, (2, 2));
    assert_eq!(first, again);
    let blocks: Vec<usize> = first.runs.iter().map(|run| run.block).collect();
    let mut sorted = blocks.clone();
    sorted.sort_unstable();
    assert_eq!(blocks, sorted, "blocks keep their order");
    let standard: Vec<usize> = first.runs.iter().map(|run| run.standard_order).collect();
    assert_ne!(
        standard,
        (1..=first.runs.len()).collect::<Vec<_>>(),
        "runs are shuffled"
    );
    let mut seen = standard.clone();
    seen.sort_unstable();
    assert_eq!(seen, (1..=first.runs.len()).collect::<Vec<_>>());
}

fn box_behnken(count: usize, blocks: usize) -> SurfacePlan {
    make_box_behnken(&BoxBehnkenRequest {
        factors: factors(count),
        blocks,
        centre_points: 3,
        seed: Some(5),
    })
    .expect("plan")
}

/// True when the full quadratic model can be fitted from the coded rows.
fn quadratic_estimable(rows: &[Vec<f64>]) -> bool {
    let terms: Vec<Vec<f64>> = rows.iter().map(|row| quadratic_terms(row)).collect();
    let matrix = nalgebra::DMatrix::from_fn(rows.len(), terms[0].len() + 1, |row, column| {
        if column == 0 {
            1.0
        } else {
            terms[row][column - 1]
        }
    });
    let gram = matrix.transpose() * &matrix;
    gram.determinant().abs() > 1e-6
}

#[test]
fn box_behnken_plans_have_the_published_sizes_and_fit_the_quadratic() {
    // Runs without centre points (Box and Behnken 1960): 3 factors 12, 4 factors 24,
    // 5 factors 40, 6 factors 48, 7 factors 56.
    for (count, runs) in [(3, 12), (4, 24), (5, 40), (6, 48), (7, 56)] {
        let plan = box_behnken(count, 1);
        assert_eq!(plan.runs.len(), runs + 3, "{count} factors");
        assert!(plan
            .runs
            .iter()
            .flat_map(|run| run.coded.iter())
            .all(|value| value.abs() <= 1.0));
        assert!(quadratic_estimable(&plan.coded_rows()), "{count} factors");
        // Every factor is at each of its three levels.
        for factor in 0..count {
            for level in [-1.0, 0.0, 1.0] {
                assert!(plan.runs.iter().any(|run| run.coded[factor] == level));
            }
        }
    }
}

#[test]
fn box_behnken_plans_of_four_and_seven_factors_are_rotatable() {
    // Box and Behnken (1960) note that their 4- and 7-factor plans are rotatable.
    assert_rotatable(&box_behnken(4, 1).coded_rows());
    assert_rotatable(&box_behnken(7, 1).coded_rows());
    // The 3-factor plan is not: [iiii] = 8, [iijj] = 4.
    let rows = box_behnken(3, 1).coded_rows();
    assert!((moment(&rows, &[(0, 4)]) - 8.0).abs() < 1e-12);
    assert!((moment(&rows, &[(0, 2), (1, 2)]) - 4.0).abs() < 1e-12);
}

#[test]
fn the_four_factor_box_behnken_plan_blocks_orthogonally() {
    let plan = box_behnken(4, 3);
    assert_eq!(plan.n_blocks, 3);
    assert_orthogonal_blocks(&plan);
    assert!(make_box_behnken(&BoxBehnkenRequest {
        factors: factors(5),
        blocks: 3,
        centre_points: 1,
        seed: Some(1)
    })
    .is_err());
}

#[test]
fn bad_factors_are_refused() {
    assert!(make_box_behnken(&BoxBehnkenRequest {
        factors: factors(2),
        blocks: 1,
        centre_points: 1,
        seed: Some(1)
    })
    .is_err());
    let mut reversed = factors(3);
    reversed[1].high = reversed[1].low - 1.0;
    assert!(make_box_behnken(&BoxBehnkenRequest {
        factors: reversed,
        blocks: 1,
        centre_points: 1,
        seed: Some(1)
    })
    .is_err());
}
