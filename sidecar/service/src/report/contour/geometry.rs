//! The geometry of contour pictures: a quadratic in two variables, contour levels at
//! round numbers, and the level lines of values on a grid by marching squares.
//!
//! Marching squares (Lorensen and Cline's marching cubes, 1987, in two dimensions):
//! each grid cell's four corners are marked above or below the level; the edges whose
//! ends differ hold a crossing, placed by linear interpolation along the edge, and the
//! crossings are joined in pairs into segments. A cell with diagonal corners on the same
//! side (a saddle) is resolved by the value at its centre, the mean of the four corners.

/// A quadratic in two variables, `c + a x + b y + p x² + q y² + r x y`: the fitted
/// second-order surface along two factors with the others held fixed (coded units).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Quadratic2 {
    /// The constant.
    pub constant: f64,
    /// The coefficient of x.
    pub x: f64,
    /// The coefficient of y.
    pub y: f64,
    /// The coefficient of x².
    pub xx: f64,
    /// The coefficient of y².
    pub yy: f64,
    /// The coefficient of x y.
    pub xy: f64,
}

impl Quadratic2 {
    /// The quadratic through the values of `f` at six points (exact for a quadratic `f`,
    /// up to rounding): f(0,0), f(±1,0), f(0,±1) and f(1,1).
    pub fn through(f: impl Fn(f64, f64) -> f64) -> Self {
        let centre = f(0.0, 0.0);
        let (x_plus, x_minus) = (f(1.0, 0.0), f(-1.0, 0.0));
        let (y_plus, y_minus) = (f(0.0, 1.0), f(0.0, -1.0));
        let x = (x_plus - x_minus) / 2.0;
        let xx = (x_plus + x_minus) / 2.0 - centre;
        let y = (y_plus - y_minus) / 2.0;
        let yy = (y_plus + y_minus) / 2.0 - centre;
        let xy = f(1.0, 1.0) - centre - x - xx - y - yy;
        Self {
            constant: centre,
            x,
            y,
            xx,
            yy,
            xy,
        }
    }

    /// The value at (x, y).
    pub fn at(&self, x: f64, y: f64) -> f64 {
        self.constant + x * (self.x + self.xx * x + self.xy * y) + y * (self.y + self.yy * y)
    }
}

/// Values on a regular grid: `values[j * nx + i]` at `x0 + i dx`, `y0 + j dy`.
#[derive(Debug, Clone, PartialEq)]
pub struct Grid {
    /// Points across.
    pub nx: usize,
    /// Points up.
    pub ny: usize,
    /// The first point's x.
    pub x0: f64,
    /// The first point's y.
    pub y0: f64,
    /// Spacing across.
    pub dx: f64,
    /// Spacing up.
    pub dy: f64,
    /// The values, row by row from the lowest y.
    pub values: Vec<f64>,
}

impl Grid {
    /// `f` sampled on `nx` × `ny` points spanning `x_range` and `y_range` (ends included).
    pub fn sample(nx: usize, ny: usize, x_range: (f64, f64), y_range: (f64, f64), f: impl Fn(f64, f64) -> f64) -> Self {
        let nx = nx.max(2);
        let ny = ny.max(2);
        let dx = (x_range.1 - x_range.0) / (nx - 1) as f64;
        let dy = (y_range.1 - y_range.0) / (ny - 1) as f64;
        let mut values = Vec::with_capacity(nx * ny);
        for j in 0..ny {
            let y = y_range.0 + j as f64 * dy;
            for i in 0..nx {
                values.push(f(x_range.0 + i as f64 * dx, y));
            }
        }
        Self {
            nx,
            ny,
            x0: x_range.0,
            y0: y_range.0,
            dx,
            dy,
            values,
        }
    }

    fn value(&self, i: usize, j: usize) -> f64 {
        self.values[j * self.nx + i]
    }

    /// The least and greatest finite value.
    pub fn range(&self) -> Option<(f64, f64)> {
        let mut finite = self.values.iter().copied().filter(|value| value.is_finite());
        let first = finite.next()?;
        Some(finite.fold((first, first), |(low, high), value| (low.min(value), high.max(value))))
    }

    /// The segments of the level line `level`, each a pair of points in the grid's own
    /// units (x, y). Corners equal to the level count as above it.
    pub fn level_segments(&self, level: f64) -> Vec<[(f64, f64); 2]> {
        let mut segments = Vec::new();
        for j in 0..self.ny - 1 {
            for i in 0..self.nx - 1 {
                // Corners counter-clockwise from the lower left.
                let corners = [
                    (i, j, self.value(i, j)),
                    (i + 1, j, self.value(i + 1, j)),
                    (i + 1, j + 1, self.value(i + 1, j + 1)),
                    (i, j + 1, self.value(i, j + 1)),
                ];
                if corners.iter().any(|corner| !corner.2.is_finite()) {
                    continue;
                }
                let above = corners.map(|corner| corner.2 >= level);
                if above.iter().all(|side| *side) || above.iter().all(|side| !*side) {
                    continue;
                }
                let crossing = |edge: usize| -> Option<(f64, f64)> {
                    // From the corner with the lower grid position, so that the two cells
                    // sharing an edge compute its crossing alike, to the last bit.
                    let (mut a, mut b) = (corners[edge], corners[(edge + 1) % 4]);
                    if (b.1, b.0) < (a.1, a.0) {
                        std::mem::swap(&mut a, &mut b);
                    }
                    if above[edge] == above[(edge + 1) % 4] {
                        return None;
                    }
                    let t = (level - a.2) / (b.2 - a.2);
                    let gx = a.0 as f64 + t * (b.0 as f64 - a.0 as f64);
                    let gy = a.1 as f64 + t * (b.1 as f64 - a.1 as f64);
                    Some((self.x0 + gx * self.dx, self.y0 + gy * self.dy))
                };
                let mut points = [(0.0, 0.0); 4];
                let mut found = 0;
                for edge in 0..4 {
                    if let Some(point) = crossing(edge) {
                        points[found] = point;
                        found += 1;
                    }
                }
                match (found, points) {
                    (2, [first, second, _, _]) => segments.push([first, second]),
                    (4, [p0, p1, p2, p3]) => {
                        // A saddle: edges 0..3 all cross. When the centre is on the same
                        // side as the lower-left corner, that corner's region joins the
                        // upper-right one, so the lines cut off the other two corners.
                        let centre = corners.iter().map(|corner| corner.2).sum::<f64>() / 4.0;
                        if (centre >= level) == above[0] {
                            // Cut off corner 1 (edges 0, 1) and corner 3 (edges 2, 3).
                            segments.push([p0, p1]);
                            segments.push([p2, p3]);
                        } else {
                            // Cut off corner 0 (edges 3, 0) and corner 2 (edges 1, 2).
                            segments.push([p3, p0]);
                            segments.push([p1, p2]);
                        }
                    }
                    _ => {}
                }
            }
        }
        // A level through a grid point gives zero-length pieces there; they draw nothing.
        segments.retain(|[a, b]| a != b);
        segments
    }
}

/// Contour levels at round numbers (1, 2, 2.5 or 5 times a power of ten) strictly
/// inside `low..high`, about `wanted` of them; none when the range is empty.
pub fn round_levels(low: f64, high: f64, wanted: usize) -> Vec<f64> {
    if !(low.is_finite() && high.is_finite()) || high <= low {
        return Vec::new();
    }
    let rough = (high - low) / (wanted.max(1) + 1) as f64;
    let power = 10f64.powf(rough.log10().floor());
    let step = [1.0, 2.0, 2.5, 5.0, 10.0]
        .iter()
        .map(|factor| factor * power)
        .find(|step| *step >= rough)
        .unwrap_or(10.0 * power);
    let mut levels = Vec::new();
    let mut index = (low / step).floor() as i64 + 1;
    loop {
        let level = index as f64 * step;
        if level >= high {
            break;
        }
        if level > low {
            // Rounded to the step's own decimals so that labels read as typed.
            levels.push(round_to_step(level, step));
        }
        index += 1;
        if levels.len() > 4 * wanted + 8 {
            break;
        }
    }
    levels
}

/// The decimals a step of this size needs to be written exactly (at most 10).
pub fn decimals_of_step(step: f64) -> usize {
    (0..=10)
        .find(|places| {
            let scaled = step * 10f64.powi(*places as i32);
            (scaled - scaled.round()).abs() <= 1e-6 * scaled.abs().max(1.0)
        })
        .unwrap_or(10)
}

fn round_to_step(value: f64, step: f64) -> f64 {
    let places = decimals_of_step(step) as i32;
    let scale = 10f64.powi(places);
    (value * scale).round() / scale
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The level set of an elliptic quadratic is an ellipse (common practice, analytic
    /// geometry): f = 3 - (x/a)² - (y/b)² - c x y has the level f = L on the conic
    /// (x/a)² + (y/b)² + c x y = 3 - L. Every marching-squares point must lie on it within
    /// a fraction of the grid spacing (linear interpolation along an edge of a convex
    /// function errs by at most the curvature times the spacing squared).
    #[test]
    fn level_points_lie_on_the_closed_form_ellipse() {
        let (a, b, c) = (1.3, 0.8, 0.4);
        let surface = |x: f64, y: f64| 3.0 - (x / a).powi(2) - (y / b).powi(2) - c * x * y;
        let grid = Grid::sample(201, 201, (-2.0, 2.0), (-2.0, 2.0), surface);
        let spacing = grid.dx;
        for level in [1.0, 2.0, 2.5, 2.9] {
            let segments = grid.level_segments(level);
            assert!(segments.len() > 20, "level {level}: {} segments", segments.len());
            let radius_sq = 3.0 - level;
            for segment in &segments {
                for (x, y) in segment {
                    // The distance to the conic, to first order: |g| / |∇g|.
                    let g = (x / a).powi(2) + (y / b).powi(2) + c * x * y - radius_sq;
                    let gx = 2.0 * x / (a * a) + c * y;
                    let gy = 2.0 * y / (b * b) + c * x;
                    let distance = g.abs() / gx.hypot(gy);
                    assert!(distance < 0.5 * spacing, "level {level}: ({x}, {y}) is {distance} off");
                }
            }
            // The segments close into one loop: every end point is shared by exactly two
            // segments (a closed curve inside the grid); where the level passes exactly
            // through a grid point (here level 2 at (±a, 0) and (0, b)), the cells around it
            // meet there by pairs, an even number.
            let key = |point: &(f64, f64)| ((point.0 * 1e9).round() as i64, (point.1 * 1e9).round() as i64);
            let mut counts = std::collections::HashMap::new();
            for segment in &segments {
                for point in segment {
                    *counts.entry(key(point)).or_insert(0) += 1;
                }
            }
            let on_node = |key: &(i64, i64)| {
                let node = |value: i64| {
                    ((value as f64 / 1e9 + 2.0) / spacing - ((value as f64 / 1e9 + 2.0) / spacing).round()).abs() < 1e-6
                };
                node(key.0) && node(key.1)
            };
            let odd: Vec<_> = counts
                .iter()
                .filter(|(key, count)| if on_node(key) { **count % 2 == 1 } else { **count != 2 })
                .collect();
            assert!(odd.is_empty(), "level {level}: open ends {odd:?}");
            // The loop's extent along x matches the ellipse's: max x = sqrt(r² / (1/a² - c² b² / 4)).
            let widest = (radius_sq / (1.0 / (a * a) - c * c * b * b / 4.0)).sqrt();
            let found = segments.iter().flatten().map(|point| point.0).fold(f64::MIN, f64::max);
            assert!(
                (found - widest).abs() < spacing,
                "level {level}: {found} against {widest}"
            );
        }
    }

    /// A hyperbolic quadratic (a saddle) has straight level lines through the centre at
    /// its centre value: f = x y is 0 on the axes. Away from the centre's cell every
    /// point of the zero level lies on an axis.
    #[test]
    fn a_saddle_gives_the_crossing_lines() {
        let grid = Grid::sample(40, 40, (-1.0, 1.0), (-1.0, 1.0), |x, y| x * y + 0.01 * (x + y));
        let segments = grid.level_segments(0.0);
        for (x, y) in segments.iter().flatten() {
            // (x + 0.01)(y + 0.01) = 1e-4: within 0.011 of an axis-parallel line.
            assert!((x + 0.01).abs() < 0.002 || (y + 0.01).abs() < 0.002 || x.abs().max(y.abs()) < 0.1);
        }
    }

    #[test]
    fn the_quadratic_is_recovered_from_six_values() {
        let truth = Quadratic2 {
            constant: 80.0,
            x: 4.0,
            y: -3.0,
            xx: -2.5,
            yy: -1.5,
            xy: 0.75,
        };
        let found = Quadratic2::through(|x, y| truth.at(x, y));
        for (got, want) in [
            (found.constant, truth.constant),
            (found.x, truth.x),
            (found.y, truth.y),
            (found.xx, truth.xx),
            (found.yy, truth.yy),
            (found.xy, truth.xy),
        ] {
            assert!((got - want).abs() < 1e-12, "{got} against {want}");
        }
    }

    #[test]
    fn levels_fall_on_round_numbers() {
        assert_eq!(
            round_levels(71.3, 88.9, 8),
            vec![72.0, 74.0, 76.0, 78.0, 80.0, 82.0, 84.0, 86.0, 88.0]
        );
        assert_eq!(
            round_levels(0.012, 0.019, 6),
            vec![0.013, 0.014, 0.015, 0.016, 0.017, 0.018]
        );
        assert!(round_levels(5.0, 5.0, 8).is_empty());
        assert_eq!(decimals_of_step(2.5), 1);
        assert_eq!(decimals_of_step(0.05), 2);
    }
}
