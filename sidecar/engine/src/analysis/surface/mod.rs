//! Second-order (response-surface) analysis: the full quadratic model with
//! blocks, its ANOVA split into linear, interaction and square parts, lack
//! of fit against pure error, the stationary point and its canonical
//! analysis, ridge analysis, and predictions with intervals.
//!
//! # Remarks
//!
//! Model: y = β0 + block effects + Σ b_i x_i + Σ_{i<j} b_ij x_i x_j + Σ b_ii x_i²,
//! with x the settings in coded units (real = centre + x × half-range) and
//! the blocks coded by sum-to-zero contrasts (so a prediction is for the
//! average block). The model matrix is factored by Householder QR (nalgebra)
//! after the response is shifted by its mean; never through X'X. The parts
//! of the ANOVA are sequential sums of squares (blocks, then linear, then
//! interaction, then square terms): the squares of the entries of Q'y that
//! belong to each part's columns (common practice for response-surface
//! ANOVA, e.g. Myers, Montgomery and Anderson-Cook, "Response Surface
//! Methodology", ch. 7). Pure error comes from records at the same settings
//! in the same block; lack of fit is the residual less pure error.
//!
//! Canonical analysis (Box and Wilson 1951): with b the linear coefficients
//! and B the symmetric matrix with b_ii on the diagonal and b_ij / 2 beside
//! it, the stationary point is x_s = -B⁻¹ b / 2 and the eigenvalues of B
//! (nalgebra's symmetric eigen-decomposition) say its kind: all negative a
//! maximum, all positive a minimum, mixed signs a saddle; when the smallest
//! eigenvalue in size is below [`RIDGE_RATIO`] of the largest, the surface is
//! read as a ridge (our rule: the surface barely bends along that axis).
//!
//! Ridge analysis (Hoerl 1959; Draper 1963, "Ridge analysis of response
//! surfaces", Technometrics 5): on the sphere of coded radius R the
//! highest predicted response is at x(μ) = -(B - μ I)⁻¹ b / 2 with μ above
//! the largest eigenvalue (below the smallest for the lowest), μ found by
//! bisection so that |x(μ)| = R.
//!
//! Checked against statsmodels 0.15.0 OLS and numpy 2.4.6 eigen-decomposition
//! on random quadratic surfaces with blocks (`testdata/make_surface_reference.py`).

use serde::Serialize;

use crate::design::surface::quadratic_terms;
use crate::options::Direction;
use crate::stats::accumulate::{binary_exponent, centre_values, compensated_sum, scale_by_power_of_two};
use crate::stats::dist::{f_sf, t_isf, t_sf};

/// Below this ratio of the smallest to the largest eigenvalue (in size) the
/// surface is read as a ridge.
pub const RIDGE_RATIO: f64 = 0.05;

/// Steps of the ridge analysis from the centre to the edge of the region.
pub const RIDGE_STEPS: usize = 10;

/// Why the second-order model could not be fitted.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum SurfaceError {
    /// The input's lengths disagree.
    #[error("the settings of {settings} records, blocks of {blocks} and {values} values do not match")]
    Lengths {
        /// Records with settings.
        settings: usize,
        /// Records with a block.
        blocks: usize,
        /// Values.
        values: usize,
    },
    /// A factor's coding is not usable.
    #[error("factor '{factor}': {rule}")]
    BadFactor {
        /// The factor.
        factor: String,
        /// What is wrong.
        rule: String,
    },
    /// Too few usable records for the model's terms.
    #[error("the second-order model of {factors} factors has {terms} terms but only {records} usable records")]
    TooFewRecords {
        /// Factors.
        factors: usize,
        /// Terms of the model (with the intercept and blocks).
        terms: usize,
        /// Usable records.
        records: usize,
    },
    /// The trial's settings cannot separate the model's terms.
    #[error("the settings run cannot separate the term {term} from the terms before it; a second-order model needs at least three settings of each factor and runs that separate the squares")]
    NotEstimable {
        /// The first term that cannot be estimated.
        term: String,
    },
}

/// The input of a second-order analysis: settings in real units per record.
#[derive(Debug, Clone, PartialEq)]
pub struct SurfaceData {
    /// Factor names, in order.
    pub factor_names: Vec<String>,
    /// Each factor's coding: (centre, half-range) in real units.
    pub coding: Vec<(f64, f64)>,
    /// Settings of each record in real units, in factor order.
    pub settings: Vec<Vec<f64>>,
    /// The block of each record (any numbering), or empty for no blocks.
    pub blocks: Vec<usize>,
    /// The response of each record; NaN where unusable.
    pub values: Vec<f64>,
}

/// Options of a second-order analysis.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SurfaceOptions {
    /// Confidence level of intervals.
    pub confidence: f64,
    /// Which way the response is better, if known.
    pub direction: Option<Direction>,
}

impl Default for SurfaceOptions {
    fn default() -> Self {
        Self {
            confidence: crate::options::DEFAULT_CONFIDENCE,
            direction: None,
        }
    }
}

/// One coefficient of the fitted model (coded units).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SurfaceCoefficient {
    /// The term, such as `Temperature`, `Temperature × Time` or `Temperature²`.
    pub term: String,
    /// The estimate.
    pub estimate: f64,
    /// Its standard error.
    pub se: Option<f64>,
    /// t statistic.
    pub t_value: Option<f64>,
    /// Two-sided p-value.
    pub p_value: Option<f64>,
}

/// One line of the ANOVA.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SurfaceAnovaLine {
    /// The source: Blocks, Linear, Interaction, Square, Residual, Lack of fit, Pure error, Total.
    pub source: String,
    /// Degrees of freedom.
    pub df: usize,
    /// Sum of squares.
    pub sum_sq: f64,
    /// Mean square.
    pub mean_sq: Option<f64>,
    /// F against the residual (lack of fit: against pure error).
    pub f_value: Option<f64>,
    /// Its p-value.
    pub p_value: Option<f64>,
}

/// The kind of stationary point.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum StationaryKind {
    /// Every eigenvalue negative.
    Maximum,
    /// Every eigenvalue positive.
    Minimum,
    /// Eigenvalues of both signs.
    Saddle,
    /// An eigenvalue near zero: the surface barely bends along its axis.
    Ridge,
}

impl StationaryKind {
    /// In words.
    pub fn words(self) -> &'static str {
        match self {
            StationaryKind::Maximum => "a maximum",
            StationaryKind::Minimum => "a minimum",
            StationaryKind::Saddle => "a saddle (rises one way, falls another)",
            StationaryKind::Ridge => "a ridge (nearly flat along one direction)",
        }
    }
}

/// The stationary point and the canonical analysis.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StationaryPoint {
    /// Coded settings.
    pub coded: Vec<f64>,
    /// Real settings.
    pub real: Vec<f64>,
    /// Predicted response there.
    pub predicted: f64,
    /// Its distance from the centre in coded units.
    pub distance: f64,
    /// True when it lies within the region of the runs.
    pub inside_region: bool,
    /// The kind.
    pub kind: StationaryKind,
    /// Eigenvalues of B, largest first.
    pub eigenvalues: Vec<f64>,
    /// The matching eigenvectors (coded axes), one per eigenvalue.
    pub eigenvectors: Vec<Vec<f64>>,
}

/// One point of the ridge analysis.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RidgePoint {
    /// Radius in coded units.
    pub radius: f64,
    /// Coded settings.
    pub coded: Vec<f64>,
    /// Real settings.
    pub real: Vec<f64>,
    /// Predicted response.
    pub predicted: f64,
}

/// A prediction with its intervals.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SurfacePrediction {
    /// Real settings.
    pub real: Vec<f64>,
    /// Coded settings.
    pub coded: Vec<f64>,
    /// Predicted mean response (average block).
    pub predicted: f64,
    /// Standard error of the predicted mean.
    pub se_mean: f64,
    /// Confidence interval of the mean.
    pub mean_low: f64,
    /// Upper end.
    pub mean_high: f64,
    /// Prediction interval of one new run.
    pub new_run_low: f64,
    /// Upper end.
    pub new_run_high: f64,
    /// Confidence level.
    pub confidence: f64,
}

/// The fitted second-order model and everything read from it.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SurfaceOutcome {
    /// Factor names.
    pub factor_names: Vec<String>,
    /// Coding (centre, half-range) per factor.
    pub coding: Vec<(f64, f64)>,
    /// Usable records.
    pub n_records: usize,
    /// `true` when every value had a short decimal form and the model started from the
    /// exact decimal differences from one centre; `false` when from the binary ones.
    pub exact_decimal: bool,
    /// Blocks in the model.
    pub n_blocks: usize,
    /// Coefficients of the intercept and factor terms (block effects left out).
    pub coefficients: Vec<SurfaceCoefficient>,
    /// The ANOVA.
    pub anova: Vec<SurfaceAnovaLine>,
    /// Residual standard deviation.
    pub residual_sd: Option<f64>,
    /// Residual degrees of freedom.
    pub residual_df: usize,
    /// R².
    pub r_squared: f64,
    /// Adjusted R².
    pub adjusted_r_squared: Option<f64>,
    /// Radius of the region of the runs in coded units (the farthest run from the centre).
    pub region_radius: f64,
    /// Lowest and highest coded setting run, per factor: with the radius, the
    /// region of the runs ([`Region`]).
    pub region_bounds: Vec<(f64, f64)>,
    /// The stationary point, when B can be inverted.
    pub stationary: Option<StationaryPoint>,
    /// Ridge analysis, when the stationary point is outside the region or is
    /// not the kind the direction asks for.
    pub ridge: Vec<RidgePoint>,
    /// The recommended settings with their prediction, when a direction is given.
    pub recommended: Option<SurfacePrediction>,
    /// Why those settings.
    pub recommended_reason: Option<String>,
    /// Fitted value of each usable record, by record number.
    pub fitted: Vec<(usize, f64)>,
    #[serde(skip)]
    model: FittedModel,
}

/// What predictions need: coefficients and the inverse of R.
#[derive(Debug, Clone, PartialEq, Default)]
struct FittedModel {
    /// All coefficients: intercept, block contrasts, factor terms.
    beta: Vec<f64>,
    /// Upper-triangular R⁻¹, row-major, p × p.
    r_inverse: Vec<f64>,
    n_block_columns: usize,
    /// The residual SD (not its square, which would overflow first at large magnitudes).
    sigma: Option<f64>,
    t_critical: Option<f64>,
    confidence: f64,
    mean_shift: f64,
    /// The settings (real units) of each usable record, in the order of `fitted`.
    run_settings: Vec<Vec<f64>>,
}

/// Term names of the second-order model, in [`quadratic_terms`] order.
pub fn term_names(factors: &[String]) -> Vec<String> {
    let mut names: Vec<String> = factors.to_vec();
    for (i, first) in factors.iter().enumerate() {
        for second in &factors[i + 1..] {
            names.push(format!("{first} × {second}"));
        }
    }
    names.extend(factors.iter().map(|name| format!("{name}²")));
    names
}

/// A coding from the distinct settings of a factor: five settings (a
/// central composite plan) take the second and fourth as -1 and +1;
/// otherwise the lowest and highest.
pub fn coding_from_settings(values: &[f64]) -> Option<(f64, f64)> {
    let mut distinct: Vec<f64> = values.iter().copied().filter(|value| value.is_finite()).collect();
    distinct.sort_by(f64::total_cmp);
    distinct.dedup_by(|a, b| (*a - *b).abs() <= 1e-9 * a.abs().max(b.abs()).max(1.0));
    let (low, high) = match distinct.as_slice() {
        [] | [_] => return None,
        [_, low, _, high, _] => (*low, *high),
        [first, .., last] => (*first, *last),
    };
    Some(((low + high) / 2.0, (high - low) / 2.0))
}

impl SurfaceOutcome {
    /// Coded settings from real ones.
    pub fn to_coded(&self, real: &[f64]) -> Vec<f64> {
        real.iter()
            .zip(&self.coding)
            .map(|(value, (centre, half))| (value - centre) / half)
            .collect()
    }

    /// Real settings from coded ones.
    pub fn to_real(&self, coded: &[f64]) -> Vec<f64> {
        coded
            .iter()
            .zip(&self.coding)
            .map(|(value, (centre, half))| centre + value * half)
            .collect()
    }

    /// The linear coefficients b and the matrix B of the canonical analysis (coded units).
    pub fn linear_and_quadratic(&self) -> (Vec<f64>, Vec<Vec<f64>>) {
        let k = self.factor_names.len();
        let terms = &self.model.beta[1 + self.model.n_block_columns..];
        let linear = terms[..k].to_vec();
        let mut matrix = vec![vec![0.0; k]; k];
        let pairs = (0..k).flat_map(|i| (i + 1..k).map(move |j| (i, j)));
        let interactions = k * k.saturating_sub(1) / 2;
        for ((i, j), &value) in pairs.zip(&terms[k..k + interactions]) {
            matrix[i][j] = value / 2.0;
            matrix[j][i] = value / 2.0;
        }
        for (i, row) in matrix.iter_mut().enumerate() {
            row[i] = terms[k + interactions + i];
        }
        (linear, matrix)
    }

    /// The predicted mean response at coded settings (average block).
    pub fn predict_coded(&self, coded: &[f64]) -> f64 {
        let row = self.model_row(coded);
        row.iter().zip(&self.model.beta).map(|(x, b)| x * b).sum::<f64>() + self.model.mean_shift
    }

    fn model_row(&self, coded: &[f64]) -> Vec<f64> {
        let mut row = vec![1.0];
        row.extend(std::iter::repeat_n(0.0, self.model.n_block_columns));
        row.extend(quadratic_terms(coded));
        row
    }

    /// The settings (real units) of each record in the fit, in the order of
    /// [`SurfaceOutcome::fitted`]: where the runs stand, for pictures of the surface.
    pub fn run_settings(&self) -> &[Vec<f64>] {
        &self.model.run_settings
    }

    /// The gradient of the fitted surface at coded settings (coded units).
    pub fn gradient_coded(&self, coded: &[f64]) -> Vec<f64> {
        let (linear, matrix) = self.linear_and_quadratic();
        linear
            .iter()
            .enumerate()
            .map(|(i, b)| b + 2.0 * matrix[i].iter().zip(coded).map(|(m, x)| m * x).sum::<f64>())
            .collect()
    }

    /// The prediction at real settings with its confidence and prediction
    /// intervals; `None` when the model has no residual degrees of freedom.
    pub fn predict(&self, real: &[f64]) -> Option<SurfacePrediction> {
        let coded = self.to_coded(real);
        let row = self.model_row(&coded);
        let p = row.len();
        // var = s² |R⁻ᵀ x|², with R⁻¹ upper triangular: (R⁻ᵀ x)_j = Σ_{i ≤ j} R⁻¹_{ij} x_i.
        let mut leverage = 0.0;
        for j in 0..p {
            let mut sum = 0.0;
            for (i, x) in row.iter().enumerate().take(j + 1) {
                sum += self.model.r_inverse[i * p + j] * x;
            }
            leverage += sum * sum;
        }
        let sigma = self.model.sigma?;
        let t = self.model.t_critical?;
        let predicted = self.predict_coded(&coded);
        let se_mean = sigma * leverage.sqrt();
        let se_new = sigma * (1.0 + leverage).sqrt();
        Some(SurfacePrediction {
            real: real.to_vec(),
            coded,
            predicted,
            se_mean,
            mean_low: predicted - t * se_mean,
            mean_high: predicted + t * se_mean,
            new_run_low: predicted - t * se_new,
            new_run_high: predicted + t * se_new,
            confidence: self.model.confidence,
        })
    }

    /// The region of the runs in coded units: the ball of [`Self::region_radius`]
    /// cut by the box of [`Self::region_bounds`].
    pub fn region(&self) -> Region {
        Region {
            radius: self.region_radius,
            bounds: self.region_bounds.clone(),
        }
    }

    /// The point of the ridge analysis at coded radius `radius`: the highest
    /// (`highest = true`) or lowest predicted response on that sphere.
    pub fn ridge_point(&self, radius: f64, highest: bool) -> Vec<f64> {
        let (linear, matrix) = self.linear_and_quadratic();
        ridge_point(&linear, &matrix, radius, highest)
    }
}

fn symmetric_eigen(matrix: &[Vec<f64>]) -> (Vec<f64>, Vec<Vec<f64>>) {
    let k = matrix.len();
    let decomposition = nalgebra::DMatrix::from_fn(k, k, |i, j| matrix[i][j]).symmetric_eigen();
    let mut order: Vec<usize> = (0..k).collect();
    order.sort_by(|&a, &b| decomposition.eigenvalues[b].total_cmp(&decomposition.eigenvalues[a]));
    let values = order.iter().map(|&index| decomposition.eigenvalues[index]).collect();
    let vectors = order
        .iter()
        .map(|&index| decomposition.eigenvectors.column(index).iter().copied().collect())
        .collect();
    (values, vectors)
}

/// x(μ) = -(B - μI)⁻¹ b / 2 on the sphere of radius `radius` (Draper 1963).
fn ridge_point(linear: &[f64], matrix: &[Vec<f64>], radius: f64, highest: bool) -> Vec<f64> {
    let k = linear.len();
    if radius <= 0.0 {
        return vec![0.0; k];
    }
    let (values, vectors) = symmetric_eigen(matrix);
    // Components of b along the eigenvectors.
    let along: Vec<f64> = vectors
        .iter()
        .map(|vector| vector.iter().zip(linear).map(|(v, b)| v * b).sum())
        .collect();
    let point_at = |mu: f64| -> Vec<f64> {
        let mut point = vec![0.0; k];
        for (index, vector) in vectors.iter().enumerate() {
            let weight = -0.5 * along[index] / (values[index] - mu);
            for (coordinate, v) in point.iter_mut().zip(vector) {
                *coordinate += weight * v;
            }
        }
        point
    };
    let norm = |point: &[f64]| point.iter().map(|x| x * x).sum::<f64>().sqrt();
    let scale = values.iter().map(|v| v.abs()).fold(0.0, f64::max) + linear.iter().map(|b| b.abs()).sum::<f64>() + 1.0;
    let edge = if highest { values[0] } else { values[k - 1] };
    let sign = if highest { 1.0 } else { -1.0 };
    // |x(μ)| falls from ∞ near the edge eigenvalue to 0 far from it.
    let (mut near, mut far) = (edge + sign * 1e-12 * scale, edge + sign * scale);
    while norm(&point_at(far)) > radius {
        far = edge + 2.0 * (far - edge);
        if (far - edge).abs() > 1e12 * scale {
            break;
        }
    }
    if norm(&point_at(near)) < radius {
        // The hard case: b has no part along the edge eigenvector; go
        // along that eigenvector for the rest of the radius.
        let mut point = point_at(edge + sign * 1e-9 * scale);
        let rest = (radius * radius - norm(&point).powi(2)).max(0.0).sqrt();
        let direction = if highest { &vectors[0] } else { &vectors[k - 1] };
        for (coordinate, v) in point.iter_mut().zip(direction) {
            *coordinate += rest * v;
        }
        return point;
    }
    for _ in 0..200 {
        let middle = 0.5 * (near + far);
        if norm(&point_at(middle)) > radius {
            near = middle;
        } else {
            far = middle;
        }
    }
    point_at(0.5 * (near + far))
}

/// Fits the second-order model and reads it: ANOVA, lack of fit,
/// stationary point, canonical and ridge analysis, recommended settings.
///
/// # Errors
///
/// [`SurfaceError`] when the input does not match, a factor has no usable
/// coding, or the runs cannot estimate the full quadratic model.
pub fn analyse_surface(data: &SurfaceData, options: &SurfaceOptions) -> Result<SurfaceOutcome, SurfaceError> {
    let k = data.factor_names.len();
    if data.settings.len() != data.values.len() || (!data.blocks.is_empty() && data.blocks.len() != data.values.len()) {
        return Err(SurfaceError::Lengths {
            settings: data.settings.len(),
            blocks: data.blocks.len(),
            values: data.values.len(),
        });
    }
    for (name, &(_, half)) in data.factor_names.iter().zip(&data.coding) {
        if !(half.is_finite() && half > 0.0) {
            return Err(SurfaceError::BadFactor {
                factor: name.clone(),
                rule: "its settings have no spread to code from".into(),
            });
        }
    }
    if data.coding.len() != k {
        return Err(SurfaceError::BadFactor {
            factor: data.factor_names.first().cloned().unwrap_or_default(),
            rule: "every factor needs a coding".into(),
        });
    }
    let usable: Vec<usize> = (0..data.values.len())
        .filter(|&record| {
            data.values[record].is_finite()
                && data.settings[record].len() == k
                && data.settings[record].iter().all(|value| value.is_finite())
        })
        .collect();
    let mut block_labels: Vec<usize> = if data.blocks.is_empty() {
        Vec::new()
    } else {
        usable.iter().map(|&record| data.blocks[record]).collect()
    };
    block_labels.sort_unstable();
    block_labels.dedup();
    let n_blocks = block_labels.len().max(1);
    let n_block_columns = n_blocks - 1;
    let n_terms = 2 * k + k * (k - 1) / 2;
    let p = 1 + n_block_columns + n_terms;
    let n = usable.len();
    if n <= p {
        return Err(SurfaceError::TooFewRecords {
            factors: k,
            terms: p,
            records: n,
        });
    }
    let coded_of = |record: usize| -> Vec<f64> {
        data.settings[record]
            .iter()
            .zip(&data.coding)
            .map(|(value, (centre, half))| (value - centre) / half)
            .collect()
    };
    let block_index = |record: usize| -> usize {
        if data.blocks.is_empty() {
            0
        } else {
            block_labels.binary_search(&data.blocks[record]).unwrap_or(0)
        }
    };
    let mut matrix = nalgebra::DMatrix::<f64>::zeros(n, p);
    for (row, &record) in usable.iter().enumerate() {
        matrix[(row, 0)] = 1.0;
        let block = block_index(record);
        for column in 0..n_block_columns {
            matrix[(row, 1 + column)] = if block == column {
                1.0
            } else if block == n_blocks - 1 {
                -1.0
            } else {
                0.0
            };
        }
        for (offset, value) in quadratic_terms(&coded_of(record)).into_iter().enumerate() {
            matrix[(row, 1 + n_block_columns + offset)] = value;
        }
    }
    // Accumulate, centre, solve: the values less one centre (the typed decimals
    // differenced exactly when every value has a short decimal form, else the binary
    // differences), then less the compensated mean of those deviations; the mean is put
    // back as `centre + shift`, the small part first.
    let centred = centre_values(&usable.iter().map(|&record| data.values[record]).collect::<Vec<f64>>());
    let shift = compensated_sum(centred.deviations.iter().copied()) / n as f64;
    let deviation_of: Vec<f64> = centred.deviations.iter().map(|deviation| deviation - shift).collect();
    let mean = centred.centre + shift;
    // Any magnitude: the deviations are divided by a power of two (exact) so that
    // their squares neither overflow nor underflow; F, p, R² and t are free of the
    // scale, and every figure in the response's units is multiplied back (its square
    // for sums of squares) at the end. A figure too large to hold then is infinite,
    // said in words where it is shown.
    let largest = deviation_of
        .iter()
        .fold(0.0_f64, |largest, deviation| largest.max(deviation.abs()));
    let exponent = if largest > 0.0 && largest.is_finite() {
        i64::from(binary_exponent(largest))
    } else {
        0
    };
    let scaled_up = |value: f64| scale_by_power_of_two(value, exponent);
    let squared_up = |value: f64| scale_by_power_of_two(value, 2 * exponent);
    let deviation_of: Vec<f64> = deviation_of
        .iter()
        .map(|&deviation| scale_by_power_of_two(deviation, -exponent))
        .collect();
    let restore = |centred_value: f64| centred.centre + (shift + scaled_up(centred_value));
    let response = nalgebra::DVector::from_column_slice(&deviation_of);
    let qr = matrix.clone().qr();
    let r = qr.r();
    let q = qr.q();
    let effects = q.transpose() * &response;
    let mut names = vec!["Intercept".to_string()];
    names.extend((1..n_blocks).map(|block| format!("Block {block}")));
    names.extend(term_names(&data.factor_names));
    let column_norms: Vec<f64> = (0..p).map(|column| matrix.column(column).norm()).collect();
    for column in 0..p {
        if r[(column, column)].abs() <= 1e-10 * column_norms[column].max(1.0) {
            return Err(SurfaceError::NotEstimable {
                term: names[column].clone(),
            });
        }
    }
    let r_inverse = r.clone().try_inverse().ok_or_else(|| SurfaceError::NotEstimable {
        term: names[p - 1].clone(),
    })?;
    let beta = &r_inverse * effects.rows(0, p);
    let fitted_centered = &matrix * &beta;
    let residuals = &response - &fitted_centered;
    let residual_ss: f64 = residuals.iter().map(|e| e * e).sum();
    let total_ss: f64 = response.iter().map(|y| y * y).sum();
    let residual_df = n - p;
    let sigma2 = (residual_df > 0).then(|| residual_ss / residual_df as f64);
    let t_critical = sigma2.and_then(|_| t_isf((1.0 - options.confidence) / 2.0, residual_df as f64).ok());

    // Sequential sums of squares: blocks, linear, interaction, square.
    let part_ss = |start: usize, len: usize| -> f64 { (start..start + len).map(|j| effects[j] * effects[j]).sum() };
    let interactions = k * (k - 1) / 2;
    let parts = [
        ("Blocks", 1, n_block_columns),
        ("Linear", 1 + n_block_columns, k),
        ("Interaction", 1 + n_block_columns + k, interactions),
        ("Square", 1 + n_block_columns + k + interactions, k),
    ];
    let test = |sum_sq: f64, df: usize, error_ms: Option<f64>, error_df: usize| -> (Option<f64>, Option<f64>) {
        match error_ms {
            Some(error) if df > 0 && error > 0.0 && error_df > 0 => {
                let f = (sum_sq / df as f64) / error;
                (Some(f), f_sf(f, df as f64, error_df as f64).ok())
            }
            _ => (None, None),
        }
    };
    let mut anova = Vec::new();
    for (source, start, df) in parts {
        if df == 0 {
            continue;
        }
        let sum_sq = part_ss(start, df);
        let (f_value, p_value) = test(sum_sq, df, sigma2, residual_df);
        anova.push(SurfaceAnovaLine {
            source: source.into(),
            df,
            sum_sq,
            mean_sq: Some(sum_sq / df as f64),
            f_value,
            p_value,
        });
    }
    anova.push(SurfaceAnovaLine {
        source: "Residual".into(),
        df: residual_df,
        sum_sq: residual_ss,
        mean_sq: sigma2,
        f_value: None,
        p_value: None,
    });
    // Pure error: records at the same settings in the same block.
    let mut groups: Vec<(usize, Vec<f64>, Vec<f64>)> = Vec::new();
    for (row, &record) in usable.iter().enumerate() {
        let key = (block_index(record), data.settings[record].clone());
        match groups.iter_mut().find(|group| group.0 == key.0 && group.1 == key.1) {
            Some(group) => group.2.push(deviation_of[row]),
            None => groups.push((key.0, key.1, vec![deviation_of[row]])),
        }
    }
    let (pure_ss, pure_df) = groups.iter().fold((0.0, 0usize), |(ss, df), group| {
        let values = &group.2;
        let group_mean = values.iter().sum::<f64>() / values.len() as f64;
        (
            ss + values.iter().map(|v| (v - group_mean).powi(2)).sum::<f64>(),
            df + values.len() - 1,
        )
    });
    if pure_df > 0 && pure_df < residual_df {
        let lack_ss = (residual_ss - pure_ss).max(0.0);
        let lack_df = residual_df - pure_df;
        let pure_ms = pure_ss / pure_df as f64;
        let (f_value, p_value) = test(lack_ss, lack_df, Some(pure_ms), pure_df);
        anova.push(SurfaceAnovaLine {
            source: "Lack of fit".into(),
            df: lack_df,
            sum_sq: lack_ss,
            mean_sq: Some(lack_ss / lack_df as f64),
            f_value,
            p_value,
        });
        anova.push(SurfaceAnovaLine {
            source: "Pure error".into(),
            df: pure_df,
            sum_sq: pure_ss,
            mean_sq: Some(pure_ms),
            f_value: None,
            p_value: None,
        });
    }
    anova.push(SurfaceAnovaLine {
        source: "Total".into(),
        df: n - 1,
        sum_sq: total_ss,
        mean_sq: None,
        f_value: None,
        p_value: None,
    });

    for line in &mut anova {
        line.sum_sq = squared_up(line.sum_sq);
        line.mean_sq = line.mean_sq.map(squared_up);
    }
    let beta_values: Vec<f64> = beta.iter().copied().collect();
    let coefficient_lines: Vec<SurfaceCoefficient> = std::iter::once(0)
        .chain(1 + n_block_columns..p)
        .map(|column| {
            let estimate = if column == 0 {
                restore(beta_values[column])
            } else {
                scaled_up(beta_values[column])
            };
            let se = sigma2.map(|s2| scaled_up((s2 * r_inverse.row(column).iter().map(|v| v * v).sum::<f64>()).sqrt()));
            let t_value = se.filter(|se| *se > 0.0).map(|se| estimate / se);
            let p_value = t_value.and_then(|t| t_sf(t.abs(), residual_df as f64).ok().map(|q| 2.0 * q));
            SurfaceCoefficient {
                term: names[column].clone(),
                estimate,
                se,
                t_value,
                p_value,
            }
        })
        .collect();
    let region_radius = usable
        .iter()
        .map(|&record| coded_of(record).iter().map(|x| x * x).sum::<f64>().sqrt())
        .fold(0.0, f64::max);
    let region_bounds: Vec<(f64, f64)> = (0..k)
        .map(|factor| {
            usable
                .iter()
                .map(|&record| coded_of(record)[factor])
                .fold((f64::INFINITY, f64::NEG_INFINITY), |(low, high), x| {
                    (low.min(x), high.max(x))
                })
        })
        .collect();
    let fitted = usable
        .iter()
        .enumerate()
        .map(|(row, &record)| {
            // The fitted value of a record includes its block's effect.
            (record, restore(fitted_centered[row]))
        })
        .collect();
    let mut outcome = SurfaceOutcome {
        factor_names: data.factor_names.clone(),
        coding: data.coding.clone(),
        n_records: n,
        exact_decimal: centred.exact_decimal,
        n_blocks,
        coefficients: coefficient_lines,
        anova,
        residual_sd: sigma2.map(|s2| scaled_up(s2.sqrt())),
        residual_df,
        r_squared: if total_ss > 0.0 {
            1.0 - residual_ss / total_ss
        } else {
            0.0
        },
        adjusted_r_squared: (residual_df > 0 && total_ss > 0.0)
            .then(|| 1.0 - (residual_ss / residual_df as f64) / (total_ss / (n - 1) as f64)),
        region_radius,
        region_bounds,
        stationary: None,
        ridge: Vec::new(),
        recommended: None,
        recommended_reason: None,
        fitted,
        model: FittedModel {
            beta: beta_values.iter().map(|&value| scaled_up(value)).collect(),
            r_inverse: (0..p * p).map(|index| r_inverse[(index / p, index % p)]).collect(),
            n_block_columns,
            sigma: sigma2.map(|s2| scaled_up(s2.sqrt())),
            t_critical,
            confidence: options.confidence,
            mean_shift: mean,
            run_settings: usable.iter().map(|&record| data.settings[record].clone()).collect(),
        },
    };
    read_surface(&mut outcome, options.direction);
    Ok(outcome)
}

/// The canonical analysis, the ridge analysis and the recommended settings.
fn read_surface(outcome: &mut SurfaceOutcome, direction: Option<Direction>) {
    let (linear, matrix) = outcome.linear_and_quadratic();
    // The stationary point and the ridge path do not depend on the response's scale:
    // the coefficients are divided by a power of two (exact) so that the eigen and
    // linear solves work on figures near one at any magnitude; the eigenvalues are
    // multiplied back.
    let largest_term = linear
        .iter()
        .chain(matrix.iter().flatten())
        .fold(0.0_f64, |largest, value| largest.max(value.abs()));
    let exponent = if largest_term > 0.0 && largest_term.is_finite() {
        i64::from(binary_exponent(largest_term))
    } else {
        0
    };
    let linear: Vec<f64> = linear
        .iter()
        .map(|&value| scale_by_power_of_two(value, -exponent))
        .collect();
    let matrix: Vec<Vec<f64>> = matrix
        .iter()
        .map(|row| {
            row.iter()
                .map(|&value| scale_by_power_of_two(value, -exponent))
                .collect()
        })
        .collect();
    let k = linear.len();
    let (scaled_eigenvalues, eigenvectors) = symmetric_eigen(&matrix);
    let eigenvalues: Vec<f64> = scaled_eigenvalues
        .iter()
        .map(|&value| scale_by_power_of_two(value, exponent))
        .collect();
    let largest = scaled_eigenvalues.iter().map(|v| v.abs()).fold(0.0, f64::max);
    let smallest = scaled_eigenvalues.iter().map(|v| v.abs()).fold(f64::INFINITY, f64::min);
    let b_matrix = nalgebra::DMatrix::from_fn(k, k, |i, j| matrix[i][j]);
    if let Some(inverse) = b_matrix.try_inverse().filter(|_| largest > 0.0) {
        let b = nalgebra::DVector::from_column_slice(&linear);
        let coded: Vec<f64> = (-0.5 * (&inverse * b)).iter().copied().collect();
        let distance = coded.iter().map(|x| x * x).sum::<f64>().sqrt();
        let kind = if smallest < RIDGE_RATIO * largest {
            StationaryKind::Ridge
        } else if eigenvalues.iter().all(|&v| v < 0.0) {
            StationaryKind::Maximum
        } else if eigenvalues.iter().all(|&v| v > 0.0) {
            StationaryKind::Minimum
        } else {
            StationaryKind::Saddle
        };
        outcome.stationary = Some(StationaryPoint {
            real: outcome.to_real(&coded),
            predicted: outcome.predict_coded(&coded),
            inside_region: outcome.region().contains(&coded),
            distance,
            kind,
            eigenvalues: eigenvalues.clone(),
            eigenvectors: eigenvectors.clone(),
            coded,
        });
    }
    let highest = match direction {
        Some(Direction::HigherIsBetter) => true,
        Some(Direction::LowerIsBetter) => false,
        _ => return,
    };
    let wanted = if highest {
        StationaryKind::Maximum
    } else {
        StationaryKind::Minimum
    };
    let settled = outcome
        .stationary
        .as_ref()
        .filter(|point| point.inside_region && point.kind == wanted)
        .map(|point| point.coded.clone());
    if let Some(coded) = settled {
        let real = outcome.to_real(&coded);
        outcome.recommended = outcome.predict(&real);
        outcome.recommended_reason = Some(format!(
            "the fitted surface has {} inside the region of the runs",
            wanted.words()
        ));
        return;
    }
    let radius = outcome.region_radius;
    outcome.ridge = (0..=RIDGE_STEPS)
        .map(|step| {
            let radius = radius * step as f64 / RIDGE_STEPS as f64;
            let coded = ridge_point(&linear, &matrix, radius, highest);
            RidgePoint {
                radius,
                real: outcome.to_real(&coded),
                predicted: outcome.predict_coded(&coded),
                coded,
            }
        })
        .collect();
    let best = outcome
        .ridge
        .iter()
        .max_by(|a, b| {
            let order = a.predicted.total_cmp(&b.predicted);
            if highest {
                order
            } else {
                order.reverse()
            }
        })
        .cloned();
    if let Some(best) = best {
        // The ridge's best point may lie beyond the settings tried for a factor
        // (the ball reaches past the box of a face-centred or Box-Behnken plan):
        // the recommendation is the best predicted point within the region, found
        // from the ridge points moved into it.
        let region = outcome.region();
        let sign = if highest { 1.0 } else { -1.0 };
        let kept_in = !region.contains(&best.coded);
        let start = outcome
            .ridge
            .iter()
            .map(|point| {
                let mut coded = point.coded.clone();
                region.pull_in(&mut coded);
                coded
            })
            .max_by(|a, b| (sign * outcome.predict_coded(a)).total_cmp(&(sign * outcome.predict_coded(b))))
            .unwrap_or_else(|| best.coded.clone());
        let (_, coded) = region.climb(start, |point| sign * outcome.predict_coded(point));
        let real = outcome.to_real(&coded);
        outcome.recommended = outcome.predict(&real);
        let mut why = match &outcome.stationary {
            Some(point) if !point.inside_region => format!(
                "the stationary point ({}) lies outside the region of the runs, so the {} predicted response on spheres of growing radius was followed (ridge analysis)",
                point.kind.words(),
                if highest { "highest" } else { "lowest" }
            ),
            Some(point) => format!(
                "the stationary point is {}, not the {} asked for, so the ridge analysis was followed to the edge of the region",
                point.kind.words(),
                if highest { "maximum" } else { "minimum" }
            ),
            None => "the fitted surface has no single stationary point, so the ridge analysis was followed".to_string(),
        };
        if kept_in {
            why.push_str(
                "; its best point lay beyond the settings run for a factor, so the best predicted point within them is given",
            );
        }
        outcome.recommended_reason = Some(why);
    }
}

mod reading;
mod region;
pub use region::Region;
#[cfg(test)]
mod reference_values;
pub use reading::{model_test, reading_in_words};
#[cfg(test)]
mod tests;
