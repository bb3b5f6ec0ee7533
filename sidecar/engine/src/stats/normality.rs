//! Normality checks for the residuals of the one-way model: the Shapiro-Wilk W test
//! (Royston's approximation), the Anderson-Darling A² test with estimated mean and
//! standard deviation, and normal probability plot positions for a chart.
//!
//! Every routine has a `_sorted` variant that takes values already in non-decreasing
//! order, so a caller running several checks sorts once (see [`sorted_finite`] and
//! [`check_normality`]).

use super::StatsError;
use crate::stats::accumulate::{compensated_sum, magnitude_exponent, scale_by_power_of_two};
use crate::stats::dist;

/// Largest sample size for which Royston's Shapiro-Wilk approximation is published.
pub const SHAPIRO_WILK_MAX_N: usize = 5000;

/// Smallest sample size the normality tests accept.
pub const NORMALITY_MIN_N: usize = 3;

/// The `name` carried by the error returned when all values are equal.
pub const ALL_EQUAL_NAME: &str = "range of the values";

/// Result of the Shapiro-Wilk test.
#[derive(Debug, Clone, PartialEq)]
pub struct ShapiroWilk {
    /// The W statistic, in (0, 1]; values near 1 are consistent with normality.
    pub w: f64,
    /// Upper-tail p-value of the normalised statistic (small means non-normal).
    pub p_value: f64,
    /// Normal score that the p-value is the upper tail of; `None` for n = 3, where the
    /// p-value comes from the exact distribution of W.
    pub z_score: Option<f64>,
    /// Number of values.
    pub n: usize,
}

/// Result of the Anderson-Darling test for normality with estimated mean and SD.
#[derive(Debug, Clone, PartialEq)]
pub struct AndersonDarling {
    /// The A² statistic.
    pub a_squared: f64,
    /// The small-sample adjusted statistic A*² = A²(1 + 0.75/n + 2.25/n²).
    pub a_squared_adjusted: f64,
    /// p-value from the adjusted statistic (small means non-normal).
    pub p_value: f64,
    /// Number of values.
    pub n: usize,
    /// Sample mean used to standardise.
    pub mean: f64,
    /// Sample standard deviation (divisor n - 1) used to standardise.
    pub sd: f64,
}

/// One point of a normal probability plot.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct NormalPlotPoint {
    /// The observed value (the i-th smallest).
    pub value: f64,
    /// Blom's plotting position (i - 3/8)/(n + 1/4).
    pub probability: f64,
    /// Standard normal quantile of the plotting position.
    pub normal_quantile: f64,
}

/// Everything a report needs about the normality of one sample, from a single sort.
#[derive(Debug, Clone, PartialEq)]
pub struct NormalityCheck {
    /// Shapiro-Wilk result; `None` when n exceeds [`SHAPIRO_WILK_MAX_N`].
    pub shapiro_wilk: Option<ShapiroWilk>,
    /// Anderson-Darling result (always computed).
    pub anderson_darling: AndersonDarling,
    /// Normal probability plot positions, in increasing order of value.
    pub plot_points: Vec<NormalPlotPoint>,
}

impl NormalityCheck {
    /// The p-value of the preferred test: Shapiro-Wilk when available, else
    /// Anderson-Darling.
    pub fn preferred_p_value(&self) -> f64 {
        match &self.shapiro_wilk {
            Some(sw) => sw.p_value,
            None => self.anderson_darling.p_value,
        }
    }
}

/// True when `error` is the refusal given for data whose values are all equal (the
/// caller may report that as a finding rather than a failure).
pub fn is_all_equal_error(error: &StatsError) -> bool {
    matches!(error, StatsError::InvalidParameter { name, .. } if *name == ALL_EQUAL_NAME)
}

fn all_equal_error() -> StatsError {
    StatsError::InvalidParameter {
        name: ALL_EQUAL_NAME,
        rule: "greater than zero (the values must not all be equal)",
        value: 0.0,
    }
}

/// Copies `values`, checks they are finite and sorts them into non-decreasing order.
///
/// # Errors
/// `InvalidParameter` if any value is NaN or infinite.
pub fn sorted_finite(values: &[f64]) -> Result<Vec<f64>, StatsError> {
    if let Some(bad) = values.iter().find(|v| !v.is_finite()) {
        return Err(StatsError::InvalidParameter {
            name: "value",
            rule: "finite",
            value: *bad,
        });
    }
    let mut sorted = values.to_vec();
    crate::stats::sort::sort_floats(&mut sorted);
    Ok(sorted)
}

fn check_sorted(sorted: &[f64]) -> Result<(), StatsError> {
    if let Some(bad) = sorted.iter().find(|v| !v.is_finite()) {
        return Err(StatsError::InvalidParameter {
            name: "value",
            rule: "finite",
            value: *bad,
        });
    }
    if let Some(pair) = sorted.windows(2).find(|pair| pair[1] < pair[0]) {
        return Err(StatsError::InvalidParameter {
            name: "sorted values",
            rule: "in non-decreasing order",
            value: pair[1],
        });
    }
    Ok(())
}

fn check_size(n: usize, what: &'static str) -> Result<(), StatsError> {
    if n < NORMALITY_MIN_N {
        return Err(StatsError::TooFewValues {
            what,
            needed: NORMALITY_MIN_N,
            got: n,
        });
    }
    Ok(())
}

/// The values divided by a power of two when their magnitude would make squares
/// overflow or underflow, with that exponent; `None` when no scaling is needed.
fn at_unit_scale(values: &[f64]) -> Option<(Vec<f64>, i32)> {
    let exponent = magnitude_exponent(values);
    (exponent != 0).then(|| {
        let down = -i64::from(exponent);
        (
            values.iter().map(|&value| scale_by_power_of_two(value, down)).collect(),
            exponent,
        )
    })
}

/// Mean and sum of squared deviations (two passes, each sum compensated: the p-values
/// deep in the tail magnify the relative error of W and A² by up to a few hundred).
fn mean_and_ssq(values: &[f64]) -> (f64, f64) {
    let mean = compensated_sum(values.iter().copied()) / values.len() as f64;
    let ssq = compensated_sum(values.iter().map(|v| (v - mean) * (v - mean)));
    (mean, ssq)
}

/// Evaluates c[0] + c[1] x + c[2] x² + ... by Horner's rule.
fn polynomial(coefficients: &[f64], x: f64) -> f64 {
    coefficients.iter().rev().fold(0.0, |acc, c| acc * x + c)
}

/// Standard normal quantile for p in (0, 1).
fn normal_quantile(p: f64) -> f64 {
    dist::normal_quantile(p).unwrap_or(f64::NAN)
}

/// Standard normal upper tail P(Z > z), from the engine's normal survival function
/// (relative accuracy about 1e-15 in both tails).
fn normal_upper_tail(z: f64) -> f64 {
    if z.is_nan() {
        return f64::NAN;
    }
    dist::normal_sf(z).unwrap_or(f64::NAN)
}

/// (ln Φ(z), ln Φ(-z)) for the standard normal, accurate far into either tail.
fn ln_normal_cdf_both(z: f64) -> (f64, f64) {
    let a = z.abs();
    let (ln_small, small) = if a < 30.0 {
        // P(Z > a) = erfc(a / sqrt 2) / 2, relative error below 2e-15 here.
        let tail = 0.5 * crate::stats::normal_tail::erfc(a * std::f64::consts::FRAC_1_SQRT_2);
        (tail.ln(), tail)
    } else {
        // Asymptotic (Mills ratio) series for ln P(Z > a), relative error below 2e-12
        // for a >= 30.
        let r = 1.0 / (a * a);
        let series = 1.0 - r + 3.0 * r * r - 15.0 * r * r * r + 105.0 * r * r * r * r;
        let ln_tail = -0.5 * a * a - a.ln() - 0.5 * (2.0 * std::f64::consts::PI).ln() + series.ln();
        (ln_tail, ln_tail.exp())
    };
    let ln_large = (-small).ln_1p();
    if z >= 0.0 {
        (ln_large, ln_small)
    } else {
        (ln_small, ln_large)
    }
}

/// Shapiro-Wilk test of normality; sorts a copy of `values`.
///
/// # Errors
/// See [`shapiro_wilk_sorted`]; also `InvalidParameter` for non-finite values.
pub fn shapiro_wilk(values: &[f64]) -> Result<ShapiroWilk, StatsError> {
    shapiro_wilk_sorted(&sorted_finite(values)?)
}

/// Shapiro-Wilk test of normality for values already in non-decreasing order.
///
/// # Remarks
/// Royston's approximation (Royston 1992, Statistics and Computing 2, 117-119; Royston
/// 1995, Applied Statistics 44, algorithm AS R94), written from the published formulas.
/// The coefficients are a_i = m_i / sqrt(eps) with m_i = Φ⁻¹((i - 3/8)/(n + 1/4)); the two
/// extreme coefficients come from Royston's polynomials in u = 1/sqrt(n) and eps rescales
/// the rest so that sum a_i² = 1. W = (Σ a_i x_(i))² / Σ (x_i - x̄)².
/// For n = 3 the p-value is exact: (6/π)(asin √W - asin √(3/4)). For 4 <= n <= 11,
/// -ln(γ - ln(1 - W)) is taken as normal, and for n >= 12, ln(1 - W), with Royston's
/// polynomial mean and SD; the p-value is the normal upper tail.
/// Royston (1995) gives the p-value approximation for 4 <= n <= 5000; it is an
/// approximation to the null distribution, so p-values are good to a few per cent of
/// their value, not to machine precision.
/// Checked against scipy 1.17.1 `scipy.stats.shapiro` for 3 <= n <= 5000: W agrees to
/// about 5e-10 relative and p to about 1e-7 relative (2e-6 at n = 5000, p ≈ 8e-8), the
/// differences coming from scipy's lower-precision normal quantiles; and against the
/// exact n = 3 formula.
///
/// # Errors
/// `TooFewValues` for n < 3; `InvalidParameter` for n > 5000 (use Anderson-Darling),
/// for unsorted or non-finite input, and (with name [`ALL_EQUAL_NAME`]) when all values
/// are equal.
pub fn shapiro_wilk_sorted(sorted: &[f64]) -> Result<ShapiroWilk, StatsError> {
    // W does not depend on the unit: values of any magnitude are divided by a power of
    // two (exactly) so that their squares stay within the range of f64.
    if let Some((scaled, _)) = at_unit_scale(sorted) {
        return shapiro_wilk_sorted(&scaled);
    }
    let n = sorted.len();
    check_size(n, "Shapiro-Wilk test")?;
    if n > SHAPIRO_WILK_MAX_N {
        return Err(StatsError::InvalidParameter {
            name: "sample size for Shapiro-Wilk (use Anderson-Darling beyond)",
            rule: "at most 5000",
            value: n as f64,
        });
    }
    check_sorted(sorted)?;
    if sorted[n - 1] == sorted[0] {
        return Err(all_equal_error());
    }
    let (_, ssq) = mean_and_ssq(sorted);
    if ssq <= 0.0 {
        return Err(all_equal_error());
    }

    let numerator = if n == 3 {
        std::f64::consts::FRAC_1_SQRT_2 * (sorted[2] - sorted[0])
    } else {
        let coefficients = shapiro_wilk_coefficients(n);
        compensated_sum(
            coefficients
                .iter()
                .enumerate()
                .map(|(j, a)| a * (sorted[n - 1 - j] - sorted[j])),
        )
    };
    let w = (numerator * numerator / ssq).min(1.0);

    let (p_value, z_score) = shapiro_wilk_p_value(w, n);
    Ok(ShapiroWilk { w, p_value, z_score, n })
}

/// The upper half of the Shapiro-Wilk coefficients, a_n, a_(n-1), ..., a_(n+1-n/2)
/// (the lower half is their negation), for 4 <= n.
fn shapiro_wilk_coefficients(n: usize) -> Vec<f64> {
    // Royston (1992) polynomials for the two largest coefficients, in powers of 1/sqrt(n).
    const LARGEST: [f64; 6] = [0.0, 0.221157, -0.147981, -2.071190, 4.434685, -2.706056];
    const SECOND: [f64; 6] = [0.0, 0.042981, -0.293762, -1.752461, 5.682633, -3.582633];
    let half = n / 2;
    let n_f = n as f64;
    // m for the upper order statistics: m_(n-j) = -Φ⁻¹((j + 1 - 3/8)/(n + 1/4)).
    let mut m: Vec<f64> = (0..half)
        .map(|j| -normal_quantile((j as f64 + 1.0 - 0.375) / (n_f + 0.25)))
        .collect();
    let m_sum_squares = 2.0 * compensated_sum(m.iter().map(|v| v * v));
    let u = 1.0 / n_f.sqrt();
    let root = m_sum_squares.sqrt();
    let a_largest = m[0] / root + polynomial(&LARGEST, u);
    let n_fixed;
    let mut fixed = [a_largest, 0.0];
    let eps = if n > 5 {
        let a_second = m[1] / root + polynomial(&SECOND, u);
        fixed[1] = a_second;
        n_fixed = 2;
        (m_sum_squares - 2.0 * m[0] * m[0] - 2.0 * m[1] * m[1])
            / (1.0 - 2.0 * a_largest * a_largest - 2.0 * a_second * a_second)
    } else {
        n_fixed = 1;
        (m_sum_squares - 2.0 * m[0] * m[0]) / (1.0 - 2.0 * a_largest * a_largest)
    };
    let scale = 1.0 / eps.sqrt();
    for (j, value) in m.iter_mut().enumerate() {
        *value = if j < n_fixed { fixed[j] } else { *value * scale };
    }
    m
}

/// Royston's p-value for W at sample size n (3 <= n <= 5000), with the normal score.
fn shapiro_wilk_p_value(w: f64, n: usize) -> (f64, Option<f64>) {
    if n == 3 {
        // Exact: W for n = 3 lies in [3/4, 1].
        let p = 6.0 / std::f64::consts::PI * (w.sqrt().asin() - std::f64::consts::FRAC_PI_3);
        return (p.clamp(0.0, 1.0), None);
    }
    let n_f = n as f64;
    let log_one_minus_w = (-w).ln_1p();
    let z = if n <= 11 {
        const GAMMA: [f64; 2] = [-2.273, 0.459];
        const MEAN: [f64; 4] = [0.5440, -0.39978, 0.025054, -0.0006714];
        const LOG_SD: [f64; 4] = [1.3822, -0.77857, 0.062767, -0.0020322];
        let gamma = polynomial(&GAMMA, n_f);
        if log_one_minus_w >= gamma {
            // Beyond the range of the transformation: W is extremely small.
            return (0.0, Some(f64::INFINITY));
        }
        let mean = polynomial(&MEAN, n_f);
        let sd = polynomial(&LOG_SD, n_f).exp();
        (-(gamma - log_one_minus_w).ln() - mean) / sd
    } else {
        const MEAN: [f64; 4] = [-1.5861, -0.31082, -0.083751, 0.0038915];
        const LOG_SD: [f64; 3] = [-0.4803, -0.082676, 0.0030302];
        let log_n = n_f.ln();
        let mean = polynomial(&MEAN, log_n);
        let sd = polynomial(&LOG_SD, log_n).exp();
        (log_one_minus_w - mean) / sd
    };
    (normal_upper_tail(z).clamp(0.0, 1.0), Some(z))
}

/// Anderson-Darling test of normality (mean and SD estimated); sorts a copy of `values`.
///
/// # Errors
/// See [`anderson_darling_sorted`]; also `InvalidParameter` for non-finite values.
pub fn anderson_darling(values: &[f64]) -> Result<AndersonDarling, StatsError> {
    anderson_darling_sorted(&sorted_finite(values)?)
}

/// Anderson-Darling test of normality for values already in non-decreasing order.
///
/// # Remarks
/// A² = -n - (1/n) Σ (2i - 1)[ln Φ(z_(i)) + ln(1 - Φ(z_(n+1-i)))] with z standardised by
/// the sample mean and SD (divisor n - 1); the tail areas come from the regularized
/// incomplete gamma function (with an asymptotic series beyond |z| = 30), never from
/// 1 - Φ of a large Φ. The p-value uses the adjusted A*² = A²(1 + 0.75/n + 2.25/n²) and the
/// piecewise formulas of D'Agostino & Stephens (1986), Goodness-of-Fit Techniques,
/// Table 4.9 (see [`anderson_darling_p_value`]). The p-value formulas are approximations
/// to about two significant figures in the tail. A² agrees with scipy 1.17.1
/// `scipy.stats.anderson` to about 1e-14 relative (5e-13 at n = 5000) and the p-value
/// with statsmodels 0.15.0 `normal_ad` to about 1e-14 (5e-12 at n = 5000).
///
/// # Errors
/// `TooFewValues` for n < 3; `InvalidParameter` for unsorted or non-finite input and
/// (with name [`ALL_EQUAL_NAME`]) when all values are equal.
pub fn anderson_darling_sorted(sorted: &[f64]) -> Result<AndersonDarling, StatsError> {
    // A² does not depend on the unit (see `shapiro_wilk_sorted`); the mean and SD are
    // given back in the data's unit.
    if let Some((scaled, exponent)) = at_unit_scale(sorted) {
        let unit = i64::from(exponent);
        return anderson_darling_sorted(&scaled).map(|test| AndersonDarling {
            mean: scale_by_power_of_two(test.mean, unit),
            sd: scale_by_power_of_two(test.sd, unit),
            ..test
        });
    }
    let n = sorted.len();
    check_size(n, "Anderson-Darling test")?;
    check_sorted(sorted)?;
    if sorted[n - 1] == sorted[0] {
        return Err(all_equal_error());
    }
    let (mean, ssq) = mean_and_ssq(sorted);
    let n_f = n as f64;
    let sd = (ssq / (n_f - 1.0)).sqrt();
    if sd <= 0.0 || !sd.is_finite() {
        return Err(all_equal_error());
    }
    // Σ (2i - 1)[ln Φ(z_(i)) + ln Φ(-z_(n+1-i))], regrouped so each z needs one tail,
    // accumulated with Neumaier's compensated summation (A² is a small difference of
    // large sums).
    let sum = compensated_sum(sorted.iter().enumerate().map(|(i, value)| {
        let (ln_cdf, ln_sf) = ln_normal_cdf_both((value - mean) / sd);
        (2.0 * i as f64 + 1.0) * ln_cdf + (2.0 * (n - i) as f64 - 1.0) * ln_sf
    }));
    let a_squared = -n_f - sum / n_f;
    let a_squared_adjusted = a_squared * (1.0 + 0.75 / n_f + 2.25 / (n_f * n_f));
    Ok(AndersonDarling {
        a_squared,
        a_squared_adjusted,
        p_value: anderson_darling_p_value(a_squared_adjusted),
        n,
        mean,
        sd,
    })
}

/// p-value for the adjusted Anderson-Darling statistic A*² (normal, mean and SD
/// estimated).
///
/// # Remarks
/// D'Agostino & Stephens (1986), Goodness-of-Fit Techniques, Table 4.9:
/// A*² < 0.2: 1 - exp(-13.436 + 101.14 A - 223.73 A²);
/// 0.2 <= A*² < 0.34: 1 - exp(-8.318 + 42.796 A - 59.938 A²);
/// 0.34 <= A*² < 0.6: exp(0.9177 - 4.279 A - 1.38 A²);
/// A*² >= 0.6: exp(1.2937 - 5.709 A + 0.0186 A²).
/// The `1 - exp(x)` branches are evaluated as `-expm1(x)`. The last branch turns upward
/// past its vertex (A*² ≈ 153.5, p ≈ 1e-189); beyond it the vertex value is kept so the
/// p-value never rises with A*². Results are clamped to [0, 1]; a NaN input gives NaN.
pub fn anderson_darling_p_value(a_squared_adjusted: f64) -> f64 {
    let a = a_squared_adjusted;
    let p = if a < 0.2 {
        -(-13.436 + 101.14 * a - 223.73 * a * a).exp_m1()
    } else if a < 0.34 {
        -(-8.318 + 42.796 * a - 59.938 * a * a).exp_m1()
    } else if a < 0.6 {
        (0.9177 - 4.279 * a - 1.38 * a * a).exp()
    } else {
        let vertex = 5.709 / (2.0 * 0.0186);
        let a = a.min(vertex);
        (1.2937 - 5.709 * a + 0.0186 * a * a).exp()
    };
    p.clamp(0.0, 1.0)
}

/// Normal probability plot positions; sorts a copy of `values`.
///
/// # Errors
/// `TooFewValues` for an empty slice; `InvalidParameter` for non-finite values.
pub fn normal_plot_positions(values: &[f64]) -> Result<Vec<NormalPlotPoint>, StatsError> {
    normal_plot_positions_sorted(&sorted_finite(values)?)
}

/// Normal probability plot positions for values already in non-decreasing order.
///
/// # Remarks
/// Blom's (1958) plotting position p_i = (i - 3/8)/(n + 1/4) and its standard normal
/// quantile Φ⁻¹(p_i) (via the inverse complementary error function, accurate to about
/// 1e-15). Checked against scipy 1.17.1 `scipy.stats.norm.ppf`.
///
/// # Errors
/// `TooFewValues` for an empty slice; `InvalidParameter` for unsorted or non-finite input.
pub fn normal_plot_positions_sorted(sorted: &[f64]) -> Result<Vec<NormalPlotPoint>, StatsError> {
    if sorted.is_empty() {
        return Err(StatsError::TooFewValues {
            what: "normal probability plot",
            needed: 1,
            got: 0,
        });
    }
    check_sorted(sorted)?;
    Ok((0..sorted.len()).map(|i| plot_point(sorted, i)).collect())
}

/// The plot point of the `i`-th smallest of `sorted`: Blom's position (i + 1 - 3/8) /
/// (n + 1/4) and its normal quantile.
fn plot_point(sorted: &[f64], i: usize) -> NormalPlotPoint {
    let probability = (i as f64 + 1.0 - 0.375) / (sorted.len() as f64 + 0.25);
    NormalPlotPoint {
        value: sorted[i],
        probability,
        normal_quantile: normal_quantile(probability),
    }
}

/// Runs Shapiro-Wilk (when n <= 5000), Anderson-Darling and the plot positions from one
/// sort of `values`.
///
/// # Errors
/// `TooFewValues` for n < 3; `InvalidParameter` for non-finite values and (with name
/// [`ALL_EQUAL_NAME`]) when all values are equal.
pub fn check_normality(values: &[f64]) -> Result<NormalityCheck, StatsError> {
    check_normality_thinned(values, usize::MAX)
}

/// As [`check_normality`], but with at most `max_plot_points` plot positions (for a
/// chart): positions `floor(j n / max_plot_points)` of the sorted sample, each with the
/// plotting position of the whole sample. Only the kept points pay for a normal quantile.
///
/// # Errors
/// As [`check_normality`].
pub fn check_normality_thinned(values: &[f64], max_plot_points: usize) -> Result<NormalityCheck, StatsError> {
    let sorted = sorted_finite(values)?;
    let anderson_darling = anderson_darling_sorted(&sorted)?;
    let shapiro_wilk = if sorted.len() <= SHAPIRO_WILK_MAX_N {
        Some(shapiro_wilk_sorted(&sorted)?)
    } else {
        None
    };
    let plot_points = if sorted.len() <= max_plot_points {
        normal_plot_positions_sorted(&sorted)?
    } else {
        let step = sorted.len() as f64 / max_plot_points as f64;
        (0..max_plot_points)
            .map(|j| plot_point(&sorted, (j as f64 * step) as usize))
            .collect()
    };
    Ok(NormalityCheck {
        shapiro_wilk,
        anderson_darling,
        plot_points,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn assert_close(actual: f64, expected: f64, relative: f64, label: &str) {
        let scale = expected.abs().max(f64::MIN_POSITIVE);
        assert!(
            (actual - expected).abs() <= relative * scale,
            "{label}: got {actual:e}, expected {expected:e}, relative error {:e}",
            (actual - expected).abs() / scale
        );
    }

    /// Low-discrepancy sequence frac(i * multiplier), i = start..start + n; the same
    /// expression `(i * multiplier) % 1.0` was evaluated in Python for the references.
    fn fraction_sequence(n: usize, multiplier: f64) -> Vec<f64> {
        (1..=n).map(|i| (i as f64 * multiplier) % 1.0).collect()
    }

    /// Sum of three low-discrepancy sequences (an Irwin-Hall-like, near-normal sample).
    fn three_sum(n: usize) -> Vec<f64> {
        let a = fraction_sequence(n, 0.6180339887498949);
        let b = fraction_sequence(n, 0.7548776662466927);
        let c = fraction_sequence(n, 0.5698402909980532);
        (0..n).map(|i| a[i] + b[i] + c[i]).collect()
    }

    /// Small deterministic generator for property tests (xorshift64*).
    struct Generator(u64);
    impl Generator {
        fn uniform(&mut self) -> f64 {
            self.0 ^= self.0 >> 12;
            self.0 ^= self.0 << 25;
            self.0 ^= self.0 >> 27;
            (self.0.wrapping_mul(0x2545_F491_4F6C_DD1D) >> 11) as f64 / (1u64 << 53) as f64
        }
    }

    struct Reference {
        values: Vec<f64>,
        w: f64,
        p_shapiro: f64,
        a_squared: f64,
        p_anderson: f64,
    }

    // W and p: scipy 1.17.1 `scipy.stats.shapiro(x)`; A²: scipy 1.17.1
    // `scipy.stats.anderson(x, method='interpolate').statistic`; p for A*²: statsmodels
    // 0.15.0 `statsmodels.stats.diagnostic.normal_ad(x)[1]`.
    fn references() -> Vec<Reference> {
        let reference = |values: Vec<f64>, w, p_shapiro, a_squared, p_anderson| Reference {
            values,
            w,
            p_shapiro,
            a_squared,
            p_anderson,
        };
        vec![
            reference(
                vec![3.1, 1.2, 2.2, 9.5],
                0.8132243275470282,
                0.12812949941559681,
                0.4698718614820505,
                0.10416805792607299,
            ),
            reference(
                vec![2.1, 3.4, 1.9, 5.6, 4.4],
                0.9320849391953863,
                0.6106559022604845,
                0.23471933567611458,
                0.6092013055616194,
            ),
            reference(
                vec![1., 2., 4., 3.3, 5.1, 2.2, 0.4],
                0.9732271161188618,
                0.9206752188703694,
                0.158165509865543,
                0.9121395107949138,
            ),
            reference(
                vec![5.2, 4.8, 6.1, 5.5, 5.0, 4.9, 7.3, 5.1, 5.3, 4.7, 5.6],
                0.818223035683218,
                0.016342948742177888,
                0.7498363021221763,
                0.03521653816590372,
            ),
            reference(
                vec![12.1, 11.4, 13.2, 12.8, 11.9, 12.5, 14.9, 12.2, 11.7, 12.0, 13.1, 12.6],
                0.8809852434810448,
                0.09023192601514515,
                0.5056462085494804,
                0.16119895011604637,
            ),
            // x = [exp(frac(i * 0.6180339887498949)) for i in 1..=20]
            reference(
                fraction_sequence(20, 0.6180339887498949)
                    .iter()
                    .map(|v| v.exp())
                    .collect(),
                0.9497967713489709,
                0.36401543367552125,
                0.3056144943911363,
                0.535301866236045,
            ),
            // x = three_sum(50)
            reference(
                three_sum(50),
                0.9923861779363133,
                0.9857469204736573,
                0.10693872970765739,
                0.9938346280232583,
            ),
            // x = [frac(i * 0.6180339887498949) for i in 1..=200] (uniform-like)
            reference(
                fraction_sequence(200, 0.6180339887498949),
                0.9550108983501413,
                5.9205703852422e-06,
                2.152155475596402,
                1.750693203329835e-05,
            ),
            // x = three_sum(5000)
            reference(
                three_sum(5000),
                0.9972709722831017,
                7.620720085705071e-08,
                1.806760515069982,
                0.00012820139059238446,
            ),
        ]
    }

    #[test]
    fn shapiro_wilk_matches_scipy() {
        for reference in references() {
            let label = format!("n = {}", reference.values.len());
            let result = shapiro_wilk(&reference.values).expect("valid sample");
            assert_close(result.w, reference.w, 1e-8, &format!("W, {label}"));
            assert_close(result.p_value, reference.p_shapiro, 1e-5, &format!("p, {label}"));
        }
    }

    #[test]
    fn anderson_darling_matches_references() {
        for reference in references() {
            let label = format!("n = {}", reference.values.len());
            let result = anderson_darling(&reference.values).expect("valid sample");
            assert_close(result.a_squared, reference.a_squared, 2e-12, &label);
            assert_close(result.p_value, reference.p_anderson, 1e-10, &label);
        }
    }

    #[test]
    fn shapiro_wilk_n3_exact() {
        // Hand derivation, common practice for n = 3: a = (-1/√2, 0, 1/√2), so for
        // [1, 2, 4] W = (3/√2)² / (42/9) = 27/28 and p = (6/π)(asin √W - π/3).
        let result = shapiro_wilk(&[4.0, 1.0, 2.0]).expect("valid sample");
        let w_exact = 27.0 / 28.0;
        assert_close(result.w, w_exact, 1e-14, "W");
        let p_exact = 6.0 / std::f64::consts::PI * (w_exact.sqrt().asin() - std::f64::consts::PI / 3.0);
        assert_close(result.p_value, p_exact, 1e-12, "p");
        // scipy 1.17.1: scipy.stats.shapiro([1.0, 2.0, 4.0]) -> p = 0.6368868450289689
        assert_close(result.p_value, 0.6368868450289689, 1e-6, "p vs scipy");
        assert!(result.z_score.is_none());
        // Equally spaced values give W = 1 and p = 1 (W attains its maximum).
        let spaced = shapiro_wilk(&[1.0, 2.0, 3.0]).expect("valid sample");
        assert_close(spaced.w, 1.0, 1e-14, "W equally spaced");
        assert_close(spaced.p_value, 1.0, 1e-12, "p equally spaced");
    }

    #[test]
    fn anderson_darling_p_value_reproduces_published_critical_points() {
        // D'Agostino & Stephens (1986) Table 4.7, case 3, A*² upper-tail points (from
        // memory): 0.631 (10%), 0.752 (5%), 0.873 (2.5%), 1.035 (1%). The Table 4.9
        // formulas reproduce them to about two significant figures.
        for (critical, level) in [(0.631, 0.10), (0.752, 0.05), (0.873, 0.025), (1.035, 0.01)] {
            assert_close(anderson_darling_p_value(critical), level, 0.03, "critical point");
        }
        // p decreases as A*² grows, across branch boundaries and far into the tail.
        let mut previous = anderson_darling_p_value(0.0);
        for step in 1..=4000 {
            let p = anderson_darling_p_value(step as f64 * 0.05);
            assert!(p <= previous && (0.0..=1.0).contains(&p), "step {step}");
            previous = p;
        }
    }

    #[test]
    fn plot_positions_match_scipy() {
        // scipy 1.17.1: [scipy.stats.norm.ppf((i - 0.375) / (7 + 0.25)) for i in 1..=7]
        let expected = [
            -1.3644887481703285,
            -0.7582925569911514,
            -0.35293398612691645,
            0.0,
            0.3529339861269166,
            0.7582925569911514,
            1.3644887481703287,
        ];
        let values = [5.0, 1.0, 7.0, 3.0, 2.0, 6.0, 4.0];
        let points = normal_plot_positions(&values).expect("valid sample");
        for (i, (point, quantile)) in points.iter().zip(expected).enumerate() {
            assert_eq!(point.value, (i + 1) as f64);
            assert_close(point.probability, (i as f64 + 0.625) / 7.25, 1e-15, "p_i");
            assert!((point.normal_quantile - quantile).abs() < 1e-14, "quantile {i}");
        }
    }

    #[test]
    fn degenerate_and_bad_input_give_errors() {
        let equal = [2.5; 10];
        for error in [
            shapiro_wilk(&equal).expect_err("all equal"),
            anderson_darling(&equal).expect_err("all equal"),
            check_normality(&equal).expect_err("all equal"),
        ] {
            assert!(is_all_equal_error(&error), "{error}");
        }
        assert!(matches!(
            shapiro_wilk(&[1.0, 2.0]),
            Err(StatsError::TooFewValues { needed: 3, got: 2, .. })
        ));
        assert!(shapiro_wilk(&[1.0, f64::NAN, 2.0]).is_err());
        assert!(shapiro_wilk_sorted(&[1.0, 3.0, 2.0]).is_err());
        assert!(anderson_darling_sorted(&[1.0, 3.0, 2.0]).is_err());
        assert!(normal_plot_positions(&[]).is_err());
        let too_many: Vec<f64> = (0..5001).map(|i| i as f64).collect();
        assert!(matches!(
            shapiro_wilk(&too_many),
            Err(StatsError::InvalidParameter { .. })
        ));
        // Beyond 5000 the combined check still reports Anderson-Darling.
        let check = check_normality(&three_sum(6000)).expect("valid sample");
        assert!(check.shapiro_wilk.is_none());
        assert_eq!(check.preferred_p_value(), check.anderson_darling.p_value);
        assert_eq!(check.plot_points.len(), 6000);
        // Thinned: the kept points are the full set's at positions floor(j n / max).
        let thinned = check_normality_thinned(&three_sum(6000), 1000).expect("valid sample");
        assert_eq!(thinned.anderson_darling, check.anderson_darling);
        assert_eq!(thinned.plot_points.len(), 1000);
        for (j, point) in thinned.plot_points.iter().enumerate() {
            assert_eq!(*point, check.plot_points[j * 6]);
        }
    }

    #[test]
    fn properties_on_random_samples() {
        let mut generator = Generator(0x9E37_79B9_7F4A_7C15);
        for trial in 0..300 {
            let n = 3 + trial % 60;
            let values: Vec<f64> = (0..n)
                .map(|_| {
                    let u = generator.uniform();
                    if trial % 3 == 0 {
                        (u * 3.0).exp()
                    } else {
                        u
                    }
                })
                .collect();
            let base = shapiro_wilk(&values).expect("valid sample");
            assert!(base.w > 0.0 && base.w <= 1.0, "W = {}", base.w);
            assert!((0.0..=1.0).contains(&base.p_value));
            let transformed: Vec<f64> = values.iter().map(|v| -250.0 + 0.01 * v).collect();
            let moved = shapiro_wilk(&transformed).expect("valid sample");
            assert!((moved.w - base.w).abs() < 1e-9, "W location/scale, n = {n}");
            let mirrored: Vec<f64> = values.iter().map(|v| -3.0 * v).collect();
            let mirror = shapiro_wilk(&mirrored).expect("valid sample");
            assert!((mirror.w - base.w).abs() < 1e-12, "W reflection, n = {n}");

            let ad = anderson_darling(&values).expect("valid sample");
            let ad_moved = anderson_darling(&transformed).expect("valid sample");
            assert!(ad.a_squared > 0.0 && (0.0..=1.0).contains(&ad.p_value));
            assert!((ad.a_squared - ad_moved.a_squared).abs() < 1e-8 * ad.a_squared.max(1.0));

            let check = check_normality(&values).expect("valid sample");
            assert_eq!(check.shapiro_wilk.as_ref(), Some(&base));
            assert_eq!(check.anderson_darling, ad);
        }
    }

    #[test]
    fn far_tail_logarithms_are_accurate() {
        // mpmath 1.3 (40 digits, rounded to f64): mpmath.log(mpmath.ncdf(-a))
        for (a, expected) in [
            (29.999, -454.2912111961238),
            (30.0, -454.3212439563432),
            (30.001, -454.3512777154588),
            (45.0, -1017.2260942419524),
        ] {
            let (ln_cdf_negative, ln_cdf_positive) = ln_normal_cdf_both(-a);
            assert_close(ln_cdf_negative, expected, 1e-13, "ln Φ(-a)");
            assert!(ln_cdf_positive <= 0.0 && ln_cdf_positive > -1e-190);
        }
        // One outlier among 1999 zeros: its z is about 44.7, far beyond erfc's range.
        // mpmath 1.3 (40 digits), A² from the defining sum: 772.3049189281209;
        // scipy 1.17.1 scipy.stats.anderson(x, method='interpolate').statistic agrees.
        let mut values = vec![0.0; 1999];
        values.push(1.0);
        let result = anderson_darling(&values).expect("valid sample");
        assert_close(result.a_squared, 772.3049189281209, 1e-12, "A² outlier");
        assert!(result.p_value < 1e-100);
    }

    #[test]
    fn coefficients_have_unit_length() {
        // Royston's normalisation makes Σ a_i² = 1 (both halves), common practice check.
        for n in [4, 5, 6, 11, 12, 100, 5000] {
            let half = shapiro_wilk_coefficients(n);
            let total: f64 = 2.0 * half.iter().map(|a| a * a).sum::<f64>();
            assert!((total - 1.0).abs() < 1e-12, "n = {n}");
            assert!(half.windows(2).all(|pair| pair[0] >= pair[1]), "n = {n}");
        }
    }
}
