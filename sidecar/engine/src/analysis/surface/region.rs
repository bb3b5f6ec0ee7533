//! The region of the runs in coded units: the ball reaching the farthest run
//! from the centre, cut by the box of the lowest and highest settings each
//! factor was run at. A rotatable composite plan's ball lies inside its box;
//! a face-centred plan's box (the cube) lies inside its ball; a Box-Behnken
//! plan's region is the cube with its corners cut off. Settings outside the
//! box were never tried for that factor, so a prediction there is an
//! extrapolation, however near the centre the point lies.

/// The region of the runs, in coded units.
#[derive(Debug, Clone, PartialEq)]
pub struct Region {
    /// The farthest run from the centre.
    pub radius: f64,
    /// Lowest and highest coded setting run, per factor.
    pub bounds: Vec<(f64, f64)>,
}

/// Relative slack for rounding when testing whether a point is inside.
const SLACK: f64 = 1e-9;

impl Region {
    /// True when `point` lies in the ball and in the box (up to rounding).
    pub fn contains(&self, point: &[f64]) -> bool {
        let norm = point.iter().map(|x| x * x).sum::<f64>().sqrt();
        norm <= self.radius * (1.0 + SLACK) + SLACK
            && point.iter().zip(&self.bounds).all(|(x, (low, high))| {
                let slack = SLACK * (1.0 + low.abs().max(high.abs()));
                *x >= low - slack && *x <= high + slack
            })
    }

    /// Moves `point` to the nearest point of the region, by Dykstra's
    /// alternating projections onto the ball and the box (Boyle and Dykstra
    /// 1986: for two convex sets that meet, the corrected alternation converges
    /// to the projection onto their intersection); a point already inside stays.
    pub fn pull_in(&self, point: &mut [f64]) {
        if self.contains(point) {
            return;
        }
        let n = point.len();
        let (mut ball_fix, mut box_fix) = (vec![0.0; n], vec![0.0; n]);
        let mut x = point.to_vec();
        for _ in 0..500 {
            let mut y: Vec<f64> = x.iter().zip(&ball_fix).map(|(x, p)| x + p).collect();
            self.onto_ball(&mut y);
            for i in 0..n {
                ball_fix[i] += x[i] - y[i];
            }
            let mut next: Vec<f64> = y.iter().zip(&box_fix).map(|(y, q)| y + q).collect();
            self.clamp_to_box(&mut next);
            for i in 0..n {
                box_fix[i] += y[i] - next[i];
            }
            let moved = next.iter().zip(&x).map(|(a, b)| (a - b).abs()).fold(0.0, f64::max);
            x = next;
            if moved < 1e-13 * (1.0 + self.radius) && self.contains(&x) {
                break;
            }
        }
        // Rounding may leave it a hair outside the ball: pull it on, then into the box.
        self.onto_ball(&mut x);
        self.clamp_to_box(&mut x);
        point.copy_from_slice(&x);
    }

    fn clamp_to_box(&self, point: &mut [f64]) {
        for (x, (low, high)) in point.iter_mut().zip(&self.bounds) {
            *x = x.clamp(*low, *high);
        }
    }

    fn onto_ball(&self, point: &mut [f64]) {
        let norm = point.iter().map(|x| x * x).sum::<f64>().sqrt();
        if norm > self.radius && norm > 0.0 {
            for x in point.iter_mut() {
                *x *= self.radius / norm;
            }
        }
    }

    /// The region both of two regions allow (several responses fitted on
    /// the same runs have the same region; on different usable runs, the
    /// smaller one).
    pub fn meet(&self, other: &Region) -> Region {
        Region {
            radius: self.radius.min(other.radius),
            bounds: self
                .bounds
                .iter()
                .zip(&other.bounds)
                .map(|((low_a, high_a), (low_b, high_b))| (low_a.max(*low_b), high_a.min(*high_b)))
                .collect(),
        }
    }

    /// A compass search (steps along each axis, halved when none helps) for
    /// the highest `score` within the region, from `start`; returns the value
    /// and the point.
    pub fn climb(&self, start: Vec<f64>, mut score: impl FnMut(&[f64]) -> f64) -> (f64, Vec<f64>) {
        let mut point = start;
        self.pull_in(&mut point);
        let mut current = score(&point);
        let mut step = 0.25 * self.radius.max(1e-3);
        while step > 1e-7 {
            let mut moved = false;
            for axis in 0..point.len() {
                for sign in [1.0, -1.0] {
                    let mut trial = point.clone();
                    trial[axis] += sign * step;
                    self.pull_in(&mut trial);
                    let value = score(&trial);
                    if value > current {
                        current = value;
                        point = trial;
                        moved = true;
                    }
                }
            }
            if !moved {
                step /= 2.0;
            }
        }
        (current, point)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn face_centred(k: usize) -> Region {
        Region {
            radius: (k as f64).sqrt(),
            bounds: vec![(-1.0, 1.0); k],
        }
    }

    #[test]
    fn a_point_beyond_a_factor_s_settings_is_outside_though_near_the_centre() {
        let region = face_centred(3);
        assert!(region.contains(&[1.0, 1.0, 1.0]));
        assert!(region.contains(&[0.0, 0.0, 0.0]));
        // Coded 1.2 on one axis: 1.2 < sqrt(3) from the centre, but beyond the highest run.
        assert!(!region.contains(&[0.0, 1.2, 0.0]));
        let mut point = vec![0.3, 1.2, -4.0];
        region.pull_in(&mut point);
        // The cube lies inside the ball of radius sqrt(3): the nearest point is the clamp.
        for (got, want) in point.iter().zip([0.3, 1.0, -1.0]) {
            assert!((got - want).abs() < 1e-12, "{point:?}");
        }
        // A Box-Behnken region (ball of radius sqrt(2) over the cube): the nearest point
        // to (2, 2, 0) is (1, 1, 0), an edge run of the plan.
        let cut = Region {
            radius: 2f64.sqrt(),
            bounds: vec![(-1.0, 1.0); 3],
        };
        let mut point = vec![2.0, 2.0, 0.0];
        cut.pull_in(&mut point);
        for (got, want) in point.iter().zip([1.0, 1.0, 0.0]) {
            assert!((got - want).abs() < 1e-9, "{point:?}");
        }
        // To (2, 2, 2): the ball's own nearest point, (1, 1, 1) sqrt(2/3), already lies
        // in the cube, so it is the nearest point of the region.
        let mut point = vec![2.0, 2.0, 2.0];
        cut.pull_in(&mut point);
        let side = (2.0f64 / 3.0).sqrt();
        for got in &point {
            assert!((got - side).abs() < 1e-9, "{point:?}");
        }
    }

    #[test]
    fn a_rotatable_region_is_its_ball() {
        // Two factors, alpha = sqrt(2): the box is +-sqrt(2), the ball of radius sqrt(2) inside it.
        let alpha = 2f64.sqrt();
        let region = Region {
            radius: alpha,
            bounds: vec![(-alpha, alpha); 2],
        };
        let mut point = vec![3.0, 4.0];
        region.pull_in(&mut point);
        assert!((point[0] - 0.6 * alpha).abs() < 1e-12 && (point[1] - 0.8 * alpha).abs() < 1e-12);
    }

    #[test]
    fn the_climb_finds_a_corner_maximum_of_a_linear_score() {
        // Highest x + 2y on the square [-1, 1]^2 cut by the ball of radius sqrt(2): the corner (1, 1).
        let region = face_centred(2);
        let (value, point) = region.climb(vec![0.0, 0.0], |p| p[0] + 2.0 * p[1]);
        assert!((value - 3.0).abs() < 1e-6, "{value} at {point:?}");
        // Inside a ball of radius 1 cut by the same square: (1, 2)/sqrt(5), value sqrt(5) (common practice:
        // a linear score's maximum on a ball lies along its gradient).
        let ball = Region {
            radius: 1.0,
            bounds: vec![(-1.0, 1.0); 2],
        };
        let (value, _) = ball.climb(vec![0.0, 0.0], |p| p[0] + 2.0 * p[1]);
        assert!((value - 5f64.sqrt()).abs() < 1e-5, "{value}");
    }
}
