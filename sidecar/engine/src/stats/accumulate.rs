//! One-pass reduction of a response column to per-condition sufficient statistics
//! (count, mean, centred sum of squares, extremes), and the one-way sums of squares
//! built from them.
//!
//! Workbooks store numbers as short decimal text, so each value is first recognised as
//! the short decimal it was typed as; deviations from an exact decimal offset are then
//! summed exactly in scaled integers. When a value has no short decimal form the
//! condition falls back to compensated binary arithmetic. Either way the final sums are
//! rounded to `f64` once, at the end.

use std::cmp::Ordering;

use crate::stats::StatsError;

// ---------------------------------------------------------------------------------------
// Public API
// ---------------------------------------------------------------------------------------

/// Streaming accumulator of per-condition sums for a response column.
///
/// Feed each observation with [`GroupAccumulator::push`], then call
/// [`GroupAccumulator::finish`] to obtain one [`GroupStats`] per condition.
///
/// # Remarks
///
/// Two reductions run side by side for every condition:
///
/// * **Exact decimal.** Each value is matched to the unique decimal with at most 15
///   significant digits that rounds to it (15 is the count every `f64` reproduces, so
///   such a decimal is unique when it exists). The test for a scale `d` is
///   Clinger's fast path: with `m = round(x * 10^d)`, `|m| < 10^15` and `d <= 22` both
///   `m` and `10^d` are exact doubles, so the correctly rounded quotient `m / 10^d`
///   equals `x` exactly when the decimal `m * 10^-d` reads back as `x`
///   (W. D. Clinger, "How to read floating point numbers accurately", PLDI 1990).
///   The condition's current scale is tried first, so a typical value costs one
///   multiplication, one rounding and one division. Deviations from the first value's
///   decimal are accumulated as `i128` (sum) and a 256-bit unsigned integer (sum of
///   squares), all with checked arithmetic.
/// * **Compensated binary.** Deviations from the condition's first value are formed
///   with the error-free difference and squared with the error-free product
///   (fused multiply-add), and both sums are kept as Neumaier-compensated pairs
///   (A. Neumaier, ZAMM 54, 1974, pp. 39-51; T. J. Dekker, Numer. Math. 18, 1971,
///   pp. 224-242). Shifting by a data value is the remedy of Chan, Golub and LeVeque
///   (Amer. Statist. 37, 1983, pp. 242-247) for the cancellation in `S2 - S1^2/n`.
///
/// The exact path is abandoned for a condition (and `exact_decimal` is `false`) when a
/// value needs more than 15 significant digits or a decimal scale finer than 10^-22,
/// or when a checked operation overflows (values spanning more than about 38 decimal
/// orders within one condition). The compensated path needs deviations from the
/// first value below about 10^154 so that their squares are finite; beyond that the
/// sums become infinite (no panic).
///
/// Expected accuracy: on the exact path every reported quantity is the correctly
/// rounded value of the exact decimal result; on the compensated path the sums carry
/// roughly twice working precision before the final rounding. Checked against all
/// eleven NIST StRD one-way ANOVA datasets (log relative error at least 13 on every
/// certified value, see the tests).
#[derive(Debug, Clone)]
pub struct GroupAccumulator {
    groups: Vec<GroupState>,
    recognise_decimals: bool,
}

/// Per-condition summary produced by [`GroupAccumulator::finish`].
///
/// For a condition without observations `n` is 0 and `mean`, `centred_ss`, `sum`,
/// `min` and `max` are NaN.
#[derive(Debug, Clone, PartialEq)]
pub struct GroupStats {
    /// Number of observations.
    pub n: u64,
    /// Arithmetic mean, rounded once from the accumulated sums.
    pub mean: f64,
    /// Centred sum of squares `sum (x - mean)^2`, rounded once.
    pub centred_ss: f64,
    /// Sum of the observations, rounded once.
    pub sum: f64,
    /// Smallest observation.
    pub min: f64,
    /// Largest observation.
    pub max: f64,
    /// `true` when every observation was recognised as a short decimal and the sums
    /// are held exactly (vacuously `true` for an empty condition); `false` when the
    /// compensated binary sums are used.
    pub exact_decimal: bool,
    /// The centred sum of squares divided by `4^scale_exponent`: finite and with full
    /// precision at any magnitude of the data (at 1e160 the centred sum itself is
    /// beyond the largest `f64`, at 1e-170 below the smallest).
    pub centred_ss_scaled: f64,
    /// The power of two the deviations were divided by (`centred_ss` is
    /// `centred_ss_scaled * 2^(2 scale_exponent)`); 0 on the exact decimal path.
    pub scale_exponent: i32,
    sums: HeldSums,
}

impl GroupStats {
    /// The condition's standard deviation (divisor `n - 1`) from the scaled sums, so
    /// it is right whenever it is itself a finite number; NaN with fewer than two
    /// values.
    pub fn sd(&self) -> f64 {
        if self.n < 2 {
            return f64::NAN;
        }
        let scaled = (self.centred_ss_scaled / (self.n - 1) as f64).sqrt();
        scale_by_power_of_two(scaled, i64::from(self.scale_exponent))
    }
}

/// Sums of squares of the one-way layout, from [`oneway_sums`].
#[derive(Debug, Clone, PartialEq)]
pub struct OnewaySums {
    /// Between-condition sum of squares `sum n_i (mean_i - grand_mean)^2`.
    pub ss_between: f64,
    /// Within-condition (residual) sum of squares `sum_i centred_ss_i`.
    pub ss_within: f64,
    /// Total sum of squares about the grand mean.
    pub ss_total: f64,
    /// `ss_between`, `ss_within` and `ss_total` divided by `4^scale_exponent`: finite
    /// and with full precision whenever the data have spread, whatever their magnitude.
    /// Ratios (F, R²) and roots (SDs) are formed from these.
    pub scaled: [f64; 3],
    /// The power of two the deviations were divided by; 0 on the exact decimal path.
    pub scale_exponent: i32,
    /// Mean of all observations.
    pub grand_mean: f64,
    /// Number of observations over all conditions.
    pub n_total: u64,
    /// Number of conditions with at least one observation.
    pub n_groups: usize,
    /// `true` when all sums were formed exactly from decimal values (each output is then
    /// the correctly rounded exact result).
    pub exact_decimal: bool,
}

impl GroupAccumulator {
    /// Accumulator for `n_groups` conditions, recognising short decimal values.
    pub fn new(n_groups: usize) -> Self {
        Self::with_decimal_recognition(n_groups, true)
    }

    /// Accumulator for `n_groups` conditions; with `recognise_decimals == false` the
    /// values are taken as binary numbers and only the compensated path runs (for data
    /// that did not come from decimal text).
    pub fn with_decimal_recognition(n_groups: usize, recognise_decimals: bool) -> Self {
        Self {
            groups: vec![GroupState::new(recognise_decimals); n_groups],
            recognise_decimals,
        }
    }

    /// Number of conditions.
    pub fn n_groups(&self) -> usize {
        self.groups.len()
    }

    /// Whether values are matched to short decimals.
    pub fn recognises_decimals(&self) -> bool {
        self.recognise_decimals
    }

    /// Adds one observation `value` to condition `group_idx`.
    ///
    /// # Errors
    ///
    /// [`StatsError::InvalidParameter`] when `group_idx` is not below the number of
    /// conditions or `value` is NaN or infinite; the value is then not recorded.
    #[inline]
    pub fn push(&mut self, group_idx: usize, value: f64) -> Result<(), StatsError> {
        let Some(group) = self.groups.get_mut(group_idx) else {
            return Err(StatsError::InvalidParameter {
                name: "group_idx",
                rule: "less than the number of conditions",
                value: group_idx as f64,
            });
        };
        if !value.is_finite() {
            return Err(StatsError::InvalidParameter {
                name: "value",
                rule: "finite",
                value,
            });
        }
        group.push(value);
        Ok(())
    }

    /// Per-condition summaries, in condition order. The accumulator may continue to be
    /// fed afterwards.
    pub fn finish(&self) -> Vec<GroupStats> {
        self.groups.iter().map(GroupState::summary).collect()
    }
}

/// Between, within and total sums of squares, and the grand mean, of a one-way layout.
///
/// Conditions with no observations are skipped.
///
/// # Remarks
///
/// When every condition holds exact decimal sums, all conditions are brought to a
/// common decimal scale and offset and the results are formed as exact rationals:
/// with `S1_i` the condition sums about the common offset, `T1 = sum S1_i`,
/// `N = sum n_i` and `L = lcm(n_i)`,
/// `SS_between = (N * sum S1_i^2 L/n_i - L T1^2) / (L N)`,
/// `SS_within = sum (n_i S2_i - S1_i^2) L/n_i / L` (per-condition offsets),
/// `SS_total = SS_between + SS_within`; each is rounded to `f64` once
/// (round-half-even), so the outputs are correctly rounded. Otherwise the per-condition
/// means and centred sums are combined in double-double arithmetic
/// (`SS_between = sum n_i (mean_i - grand)^2`), about 30 significant digits before the
/// final rounding. Checked against the NIST StRD one-way ANOVA certified values.
///
/// # Errors
///
/// [`StatsError::TooFewValues`] when no condition has an observation.
pub fn oneway_sums(groups: &[GroupStats]) -> Result<OnewaySums, StatsError> {
    let filled: Vec<&GroupStats> = groups.iter().filter(|g| g.n > 0).collect();
    if filled.is_empty() {
        return Err(StatsError::TooFewValues {
            what: "observations for the one-way sums",
            needed: 1,
            got: 0,
        });
    }
    let exact: Option<Vec<&ExactSums>> = filled
        .iter()
        .map(|g| match &g.sums {
            HeldSums::Exact(e) => Some(e),
            _ => None,
        })
        .collect();
    match exact {
        Some(parts) => {
            let counts: Vec<u64> = filled.iter().map(|g| g.n).collect();
            Ok(exact_oneway(&counts, &parts))
        }
        None => Ok(compensated_oneway(&filled)),
    }
}

/// `mean(first) - mean(second)` to full precision, as a pair `hi + lo`: from the
/// double-double means of the exact decimal sums (rounded once to about 106 bits) or of the
/// compensated sums. The difference of the rounded means loses the digits of the offset:
/// at 1e9 a gap of 1e-3 keeps about 10 of them; this one keeps all 16. NaN when either
/// condition is empty.
pub fn mean_difference(first: &GroupStats, second: &GroupStats) -> (f64, f64) {
    match (mean_double_double(first), mean_double_double(second)) {
        (Some(a), Some(b)) => {
            let gap = a.sub(b);
            (gap.hi, gap.lo)
        }
        _ => (f64::NAN, f64::NAN),
    }
}

/// A condition's mean as a double-double; `None` when it is empty.
fn mean_double_double(group: &GroupStats) -> Option<DoubleDouble> {
    match &group.sums {
        HeldSums::Empty => None,
        HeldSums::Binary { mean, .. } => Some(*mean),
        HeldSums::Exact(sums) => {
            let n = Natural::from_u128(u128::from(group.n));
            let level = Integer::from_i128(sums.offset)
                .mul_natural(&n)
                .add(&Integer::from_i128(sums.s1));
            Some(ratio_to_double_double(&level, &n.mul(&Natural::pow10(sums.scale))))
        }
    }
}

/// The power of two to divide data by before squaring: 0 while the largest magnitude
/// lies between 2^-200 and 2^200 (squares of deviations, even of one unit in the last
/// place, then stay normal and sums of 2^63 of them finite), otherwise the exponent of
/// the largest magnitude, so that the scaled data are below 2 in magnitude.
///
/// Dividing by a power of two is exact, so every statistic that does not depend on the
/// unit (F, chi-square and rank statistics, ratios of SDs) comes out as at scale 1.
pub fn magnitude_exponent<'a>(values: impl IntoIterator<Item = &'a f64>) -> i32 {
    const LOW: f64 = 6.223_015_277_861_142e-61; // 2^-200
    const HIGH: f64 = 1.606_938_044_258_990_3e60; // 2^200
    let largest = values
        .into_iter()
        .filter(|value| value.is_finite())
        .fold(0.0_f64, |largest, value| largest.max(value.abs()));
    if largest == 0.0 || (LOW..=HIGH).contains(&largest) {
        0
    } else {
        binary_exponent(largest)
    }
}

/// Values written as deviations from one centre, from [`centre_values`].
#[derive(Debug, Clone, PartialEq)]
pub struct CentredValues {
    /// The centre: the first finite value (a value of the data, so a deviation of a
    /// nearby value is small and keeps all its digits).
    pub centre: f64,
    /// `value - centre` for every value (NaN where the value is not finite).
    pub deviations: Vec<f64>,
    /// `true` when every finite value had a short decimal form and each deviation is the
    /// difference of the typed decimals, formed exactly and rounded once; `false` when the
    /// binary values were subtracted instead.
    pub exact_decimal: bool,
}

/// Sum by Neumaier's compensated summation (error about one rounding, independent of the
/// number of terms, where a plain sum of n terms loses about sqrt(n) roundings).
pub fn compensated_sum(terms: impl IntoIterator<Item = f64>) -> f64 {
    let mut sum = 0.0_f64;
    let mut compensation = 0.0_f64;
    for term in terms {
        let total = sum + term;
        compensation += if sum.abs() >= term.abs() {
            (sum - total) + term
        } else {
            (term - total) + sum
        };
        sum = total;
    }
    sum + compensation
}

/// The first step of "accumulate, centre, solve" for models fitted to data at a large
/// offset (k-way, two-level and second-order models): each value minus a common centre.
///
/// # Remarks
///
/// Workbook values are short decimals typed as text; `1000000000.0001` is stored as the
/// nearest double, which is 1.2e-7 away, so an effect of 1e-4 computed from the doubles
/// keeps only three or four digits. Here each value is matched to the short decimal it
/// was typed as (the same recognition as [`GroupAccumulator`]), all decimals are brought
/// to one scale as 128-bit integers, and the integer differences from the centre are
/// converted once: when a difference is below 2^53 and the scale at most 10^22 the
/// quotient by the power of ten is correctly rounded (Clinger's fast path), so the
/// deviation is the typed decimal difference to the last bit. Values with no short
/// decimal form (or a common scale out of range) fall back to the binary difference
/// `value - centre`, which is exact whenever the two are within a factor of two of each
/// other (Sterbenz's lemma) and otherwise rounded once. The deviations are themselves
/// short decimals, so cell sums of them stay on the exact path of [`GroupAccumulator`].
pub fn centre_values(values: &[f64]) -> CentredValues {
    let Some(&centre) = values.iter().find(|value| value.is_finite()) else {
        return CentredValues {
            centre: 0.0,
            deviations: values.to_vec(),
            exact_decimal: false,
        };
    };
    if let Some(deviations) = exact_deviations(values) {
        return CentredValues {
            centre,
            deviations,
            exact_decimal: true,
        };
    }
    CentredValues {
        centre,
        deviations: values
            .iter()
            .map(|&value| if value.is_finite() { value - centre } else { f64::NAN })
            .collect(),
        exact_decimal: false,
    }
}

/// The decimal differences of [`centre_values`], `None` when a value has no short decimal
/// form or the common scale is out of range.
fn exact_deviations(values: &[f64]) -> Option<Vec<f64>> {
    let mut decimals: Vec<Option<(i64, i32)>> = Vec::with_capacity(values.len());
    let mut hint = 0u32;
    let mut scale = i32::MIN;
    for &value in values {
        if value.is_finite() {
            let (significand, places) = short_decimal(value, hint)?;
            hint = places.max(0) as u32;
            scale = scale.max(places);
            decimals.push(Some((significand, places)));
        } else {
            decimals.push(None);
        }
    }
    if !(0..=MAX_SCALE as i32).contains(&scale) {
        return None;
    }
    let mut scaled: Vec<Option<i128>> = Vec::with_capacity(decimals.len());
    for decimal in &decimals {
        scaled.push(match decimal {
            Some((significand, places)) => {
                Some(i128::from(*significand).checked_mul(pow10_i128((scale - places) as u32)?)?)
            }
            None => None,
        });
    }
    let origin = scaled.iter().flatten().next().copied()?;
    let power = POW10_F64[scale as usize];
    scaled
        .iter()
        .map(|entry| match entry {
            Some(value) => {
                let difference = value.checked_sub(origin)?;
                Some(difference as f64 / power)
            }
            None => Some(f64::NAN),
        })
        .collect()
}

// ---------------------------------------------------------------------------------------
// Per-condition state
// ---------------------------------------------------------------------------------------

#[derive(Debug, Clone)]
struct GroupState {
    n: u64,
    min: f64,
    max: f64,
    binary: BinarySums,
    exact: ExactState,
}

impl GroupState {
    fn new(recognise_decimals: bool) -> Self {
        Self {
            n: 0,
            min: f64::INFINITY,
            max: f64::NEG_INFINITY,
            binary: BinarySums::default(),
            exact: ExactState {
                active: recognise_decimals,
                ..ExactState::default()
            },
        }
    }

    #[inline]
    fn push(&mut self, value: f64) {
        if self.n == 0 {
            self.binary.shift = value;
        }
        self.n += 1;
        if value < self.min {
            self.min = value;
        }
        if value > self.max {
            self.max = value;
        }
        self.binary.push(value);
        if self.exact.active && self.exact.push(value, self.n == 1).is_none() {
            self.exact.active = false;
        }
    }

    fn summary(&self) -> GroupStats {
        if self.n == 0 {
            return GroupStats {
                n: 0,
                mean: f64::NAN,
                centred_ss: f64::NAN,
                sum: f64::NAN,
                min: f64::NAN,
                max: f64::NAN,
                exact_decimal: true,
                centred_ss_scaled: f64::NAN,
                scale_exponent: 0,
                sums: HeldSums::Empty,
            };
        }
        let n = self.n;
        if self.exact.active {
            let e = ExactSums {
                scale: self.exact.scale,
                offset: self.exact.offset,
                s1: self.exact.s1,
                s2: self.exact.s2,
            };
            let n_nat = Natural::from_u128(u128::from(n));
            let unit = Natural::pow10(e.scale);
            let level = Integer::from_i128(e.offset)
                .mul_natural(&n_nat)
                .add(&Integer::from_i128(e.s1));
            let mean = ratio_to_f64(&level, &n_nat.mul(&unit));
            let sum = ratio_to_f64(&level, &unit);
            let centred = e.centred_numerator(n);
            let centred_ss = ratio_to_f64(&centred, &n_nat.mul(&unit).mul(&unit));
            GroupStats {
                n,
                mean,
                centred_ss,
                sum,
                min: self.min,
                max: self.max,
                exact_decimal: true,
                centred_ss_scaled: centred_ss,
                scale_exponent: 0,
                sums: HeldSums::Exact(e),
            }
        } else {
            let (mean, centred) = self.binary.mean_and_centred(n);
            let exponent = self.binary.exponent;
            let sum = mean.mul_f64(n as f64);
            GroupStats {
                n,
                mean: mean.hi,
                centred_ss: scale_by_power_of_two(centred.hi, 2 * i64::from(exponent)),
                sum: sum.hi,
                min: self.min,
                max: self.max,
                exact_decimal: false,
                centred_ss_scaled: centred.hi,
                scale_exponent: exponent,
                sums: HeldSums::Binary {
                    mean,
                    centred,
                    exponent,
                },
            }
        }
    }
}

#[derive(Debug, Clone, PartialEq)]
enum HeldSums {
    Empty,
    Exact(ExactSums),
    /// The mean, and the centred sum of squares divided by `4^exponent`.
    Binary {
        mean: DoubleDouble,
        centred: DoubleDouble,
        exponent: i32,
    },
}

/// Exact decimal sums of one condition: values are `(offset + d_j) * 10^-scale`,
/// `s1 = sum d_j`, `s2 = sum d_j^2`.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
struct ExactSums {
    scale: u32,
    offset: i128,
    s1: i128,
    s2: Wide,
}

impl ExactSums {
    /// `n * s2 - s1^2` (non-negative), the numerator of the centred sum of squares over
    /// `n * 10^(2 scale)`.
    fn centred_numerator(&self, n: u64) -> Integer {
        let n_nat = Natural::from_u128(u128::from(n));
        let s1 = Integer::from_i128(self.s1);
        Integer::from_natural(self.s2.to_natural().mul(&n_nat)).sub(&s1.mul(&s1))
    }
}

/// Largest decimal scale tried (10^22 is the largest exact power of ten in `f64`).
const MAX_SCALE: u32 = 22;

/// Exclusive bound on the significand of a short decimal (15 significant digits).
const SHORT_DIGITS_BOUND: f64 = 1e15;

const POW10_F64: [f64; 23] = [
    1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19, 1e20,
    1e21, 1e22,
];

#[derive(Debug, Clone, Copy, Default)]
struct ExactState {
    active: bool,
    scale: u32,
    offset: i128,
    s1: i128,
    s2: Wide,
}

impl ExactState {
    /// Adds one value; `None` when it cannot be held exactly.
    #[inline]
    fn push(&mut self, value: f64, first: bool) -> Option<()> {
        let (significand, decimals) = short_decimal(value, self.scale)?;
        if decimals > self.scale as i32 {
            self.rescale(decimals as u32)?;
        }
        // decimals <= scale here, so the exponent is non-negative.
        let exponent = (self.scale as i32 - decimals) as u32;
        let scaled = if exponent == 0 {
            i128::from(significand)
        } else {
            i128::from(significand).checked_mul(pow10_i128(exponent)?)?
        };
        if first {
            self.offset = scaled;
        }
        let deviation = scaled.checked_sub(self.offset)?;
        self.s1 = self.s1.checked_add(deviation)?;
        let magnitude = deviation.unsigned_abs();
        self.s2 = match u64::try_from(magnitude) {
            Ok(small) => self.s2.checked_add_u128(u128::from(small) * u128::from(small))?,
            Err(_) => self.s2.checked_add(Wide::square(magnitude))?,
        };
        Some(())
    }

    /// Moves the accumulated sums to a finer decimal scale.
    #[cold]
    fn rescale(&mut self, new_scale: u32) -> Option<()> {
        let step = new_scale - self.scale;
        let factor = pow10_i128(step)?;
        self.offset = self.offset.checked_mul(factor)?;
        self.s1 = self.s1.checked_mul(factor)?;
        let mut remaining = 2 * step;
        while remaining > 0 {
            let k = remaining.min(18);
            self.s2 = self.s2.checked_mul_u64(10u64.pow(k))?;
            remaining -= k;
        }
        self.scale = new_scale;
        Some(())
    }
}

fn pow10_i128(exponent: u32) -> Option<i128> {
    10i128.checked_pow(exponent)
}

/// Significand of `x * 10^d` when the decimal `m * 10^-d` with `|m| < 10^15` reads back
/// as `x` (Clinger's fast path: one correctly rounded division of exact operands).
#[inline]
fn decimal_at(x: f64, decimals: usize) -> Option<i64> {
    let power = POW10_F64[decimals];
    let m = nearest_integer(x * power);
    if m.abs() < SHORT_DIGITS_BOUND && m / power == x {
        Some(m as i64)
    } else {
        None
    }
}

/// Nearest integer to `y` for `|y| < 2^51` by adding and removing `1.5 * 2^52`
/// (round-half-even; avoids a library call on targets without a rounding
/// instruction). Larger or non-finite `y` give an unspecified value, which callers
/// reject by their range test and read-back check.
#[inline]
fn nearest_integer(y: f64) -> f64 {
    const MAGIC: f64 = 6_755_399_441_055_744.0; // 1.5 * 2^52
    if y.abs() < 2_251_799_813_685_248.0 {
        (y + MAGIC) - MAGIC
    } else {
        y
    }
}

/// The short decimal of `x` as `(m, d)` with `x` the double nearest to `m * 10^-d`,
/// `|m| < 10^15`, `-22 <= d <= 22`; the scale `hint` is tried first. `None` when `x`
/// needs more than 15 significant digits or lies outside the covered range.
///
/// A decimal with at most 15 significant digits that reads back as `x` is unique, so
/// the answer does not depend on `hint` other than by trailing zeros of `m`.
#[inline]
fn short_decimal(x: f64, hint: u32) -> Option<(i64, i32)> {
    let hint = hint as usize;
    if hint <= MAX_SCALE as usize {
        if let Some(m) = decimal_at(x, hint) {
            return Some((m, hint as i32));
        }
    }
    short_decimal_search(x, hint)
}

#[cold]
fn short_decimal_search(x: f64, hint: usize) -> Option<(i64, i32)> {
    if x.abs() < SHORT_DIGITS_BOUND {
        (0..=MAX_SCALE as usize)
            .filter(|&d| d != hint)
            .find_map(|d| decimal_at(x, d).map(|m| (m, d as i32)))
    } else {
        // Large values: x = m * 10^k with an integer m of at most 15 digits.
        (1..=MAX_SCALE as usize).find_map(|k| {
            let power = POW10_F64[k];
            let m = nearest_integer(x / power);
            (m.abs() < SHORT_DIGITS_BOUND && m * power == x).then_some((m as i64, -(k as i32)))
        })
    }
}

// ---------------------------------------------------------------------------------------
// Compensated binary sums
// ---------------------------------------------------------------------------------------

/// Compensated sums of the deviations from `shift`, each deviation divided by
/// `2^exponent` (a power of two, so the division is exact) before it is summed and
/// squared: the exponent follows the largest deviation, so squares neither overflow at
/// 1e300 nor underflow at 1e-300, and in the ordinary range every bit of the sums is the
/// same as without scaling.
#[derive(Debug, Clone, Copy, Default)]
struct BinarySums {
    shift: f64,
    /// The power of two the deviations are divided by (0 until a deviation is seen).
    exponent: i32,
    /// `2^-exponent`.
    factor: f64,
    s1_hi: f64,
    s1_lo: f64,
    s2_hi: f64,
    s2_lo: f64,
}

/// A scaled deviation above this magnitude moves the exponent up (squares then stay far
/// below the overflow threshold even for 2^63 values).
const RESCALE_ABOVE: f64 = 18_446_744_073_709_551_616.0; // 2^64

/// The exponent of `x` (`x = m 2^e` with `1 <= |m| < 2`), clamped to the range where
/// `2^-e` is a normal `f64`; `x` must be finite and non-zero.
pub fn binary_exponent(x: f64) -> i32 {
    let biased = ((x.to_bits() >> 52) & 0x7ff) as i32;
    let exponent = if biased == 0 {
        // Subnormal: the leading bit of the fraction.
        let fraction = x.to_bits() & ((1u64 << 52) - 1);
        -1011 - fraction.leading_zeros() as i32
    } else {
        biased - 1023
    };
    exponent.clamp(-1000, 1000)
}

impl BinarySums {
    #[inline]
    fn push(&mut self, value: f64) {
        // value - shift == dev_hi + dev_lo exactly.
        let (mut dev_hi, mut dev_lo) = two_sum(value, -self.shift);
        // A deviation beyond the largest double (values near ±1.8e308 of opposite sign)
        // is formed halved, exactly, and doubled once divided by the power of two.
        let mut doubling = 1.0;
        if dev_hi.is_infinite() {
            (dev_hi, dev_lo) = two_sum(0.5 * value, -0.5 * self.shift);
            doubling = 2.0;
        }
        if dev_hi == 0.0 {
            return;
        }
        if self.factor == 0.0 {
            self.exponent = binary_exponent(dev_hi);
            self.factor = scale_by_power_of_two(1.0, -i64::from(self.exponent));
        } else if (dev_hi * self.factor).abs() > RESCALE_ABOVE {
            self.rescale(binary_exponent(dev_hi));
        }
        let (dev_hi, dev_lo) = (dev_hi * self.factor * doubling, dev_lo * self.factor * doubling);
        let (s1, e1) = two_sum(self.s1_hi, dev_hi);
        self.s1_hi = s1;
        self.s1_lo += e1 + dev_lo;
        // dev^2 = sq_hi + sq_lo + 2 dev_hi dev_lo + dev_lo^2; the last term is negligible.
        let (sq_hi, sq_lo) = two_square(dev_hi);
        let (s2, e2) = two_sum(self.s2_hi, sq_hi);
        self.s2_hi = s2;
        self.s2_lo += e2 + sq_lo + 2.0 * dev_hi * dev_lo;
    }

    /// Moves the sums to a larger exponent (exact but for parts that fall below the
    /// smallest normal number, which are then negligible beside the new deviation).
    #[cold]
    fn rescale(&mut self, exponent: i32) {
        let step = i64::from(self.exponent) - i64::from(exponent);
        self.s1_hi = scale_by_power_of_two(self.s1_hi, step);
        self.s1_lo = scale_by_power_of_two(self.s1_lo, step);
        self.s2_hi = scale_by_power_of_two(self.s2_hi, 2 * step);
        self.s2_lo = scale_by_power_of_two(self.s2_lo, 2 * step);
        self.exponent = exponent;
        self.factor = scale_by_power_of_two(1.0, -i64::from(exponent));
    }

    /// Mean (in the data's units) and the centred sum of squares divided by
    /// `4^exponent`, in double-double.
    fn mean_and_centred(&self, n: u64) -> (DoubleDouble, DoubleDouble) {
        let count = DoubleDouble::from_f64(n as f64);
        let s1 = DoubleDouble::from_parts(self.s1_hi, self.s1_lo);
        let s2 = DoubleDouble::from_parts(self.s2_hi, self.s2_lo);
        let mean_dev = s1.div(count);
        let mean = mean_dev
            .scale(i64::from(self.exponent))
            .add(DoubleDouble::from_f64(self.shift));
        let mut centred = s2.sub(mean_dev.mul(s1));
        if centred.hi < 0.0 {
            centred = DoubleDouble::from_f64(0.0);
        }
        (mean, centred)
    }
}

/// Error-free sum: `a + b == s + e` exactly (Knuth, TAOCP vol. 2, 4.2.2).
#[inline]
fn two_sum(a: f64, b: f64) -> (f64, f64) {
    let s = a + b;
    let bb = s - a;
    let e = (a - (s - bb)) + (b - bb);
    (s, e)
}

/// Error-free sum when `|a| >= |b|` (Dekker 1971).
#[inline]
fn fast_two_sum(a: f64, b: f64) -> (f64, f64) {
    let s = a + b;
    (s, b - (s - a))
}

/// Error-free square `a * a == p + e` by Veltkamp's splitting (Dekker 1971), without
/// a fused multiply-add (a library call on targets lacking the instruction). Exact for
/// `|a| < 2^996`.
#[inline]
fn two_square(a: f64) -> (f64, f64) {
    const SPLITTER: f64 = 134_217_729.0; // 2^27 + 1
    let p = a * a;
    let t = SPLITTER * a;
    let high = t - (t - a);
    let low = a - high;
    let e = ((high * high - p) + 2.0 * high * low) + low * low;
    (p, e)
}

/// Error-free product via fused multiply-add: `a * b == p + e` exactly.
#[inline]
fn two_prod(a: f64, b: f64) -> (f64, f64) {
    let p = a * b;
    (p, a.mul_add(b, -p))
}

/// Unevaluated sum `hi + lo` with `|lo| <= ulp(hi) / 2` (Dekker 1971; arithmetic after
/// Hida, Li and Bailey, "Library for double-double and quad-double arithmetic", 2001).
#[derive(Debug, Clone, Copy, PartialEq)]
struct DoubleDouble {
    hi: f64,
    lo: f64,
}

impl DoubleDouble {
    fn from_f64(x: f64) -> Self {
        Self { hi: x, lo: 0.0 }
    }

    fn from_parts(a: f64, b: f64) -> Self {
        let (hi, lo) = two_sum(a, b);
        Self { hi, lo }
    }

    fn add(self, o: Self) -> Self {
        let (s, e) = two_sum(self.hi, o.hi);
        let (t, f) = two_sum(self.lo, o.lo);
        let (s, e) = fast_two_sum(s, e + t);
        let (hi, lo) = fast_two_sum(s, e + f);
        Self { hi, lo }
    }

    fn neg(self) -> Self {
        Self {
            hi: -self.hi,
            lo: -self.lo,
        }
    }

    fn sub(self, o: Self) -> Self {
        self.add(o.neg())
    }

    fn mul(self, o: Self) -> Self {
        let (p, e) = two_prod(self.hi, o.hi);
        let e = e + (self.hi * o.lo + self.lo * o.hi);
        let (hi, lo) = fast_two_sum(p, e);
        Self { hi, lo }
    }

    /// `self * 2^e` (exact while both parts stay normal).
    fn scale(self, e: i64) -> Self {
        Self {
            hi: scale_by_power_of_two(self.hi, e),
            lo: scale_by_power_of_two(self.lo, e),
        }
    }

    fn mul_f64(self, b: f64) -> Self {
        self.mul(Self::from_f64(b))
    }

    fn div(self, o: Self) -> Self {
        let q1 = self.hi / o.hi;
        let r = self.sub(o.mul_f64(q1));
        let q2 = r.hi / o.hi;
        let r = r.sub(o.mul_f64(q2));
        let q3 = r.hi / o.hi;
        let (hi, lo) = fast_two_sum(q1, q2);
        Self { hi, lo }.add(Self::from_f64(q3))
    }
}

// ---------------------------------------------------------------------------------------
// One-way sums
// ---------------------------------------------------------------------------------------

fn exact_oneway(counts: &[u64], parts: &[&ExactSums]) -> OnewaySums {
    let common_scale = parts.iter().map(|p| p.scale).max().unwrap_or(0);
    let n_total: u64 = counts.iter().sum();
    let total_count = Natural::from_u128(u128::from(n_total));
    // lcm of the counts.
    let mut lcm = Natural::from_u128(1);
    for &n in counts {
        let g = gcd_u64(n, lcm.rem_small(n));
        lcm = lcm.div_small(g).0.mul(&Natural::from_u128(u128::from(n)));
    }
    let mut common_offset: Option<Integer> = None;
    let mut sum_sq_over_n = Integer::zero(); // sum S1_i^2 * L / n_i
    let mut t1 = Integer::zero();
    let mut within_num = Integer::zero(); // sum (n_i S2_i - S1_i^2) * L / n_i
    for (&n, part) in counts.iter().zip(parts) {
        let factor = Natural::pow10(common_scale - part.scale);
        let factor_sq = factor.mul(&factor);
        let n_nat = Natural::from_u128(u128::from(n));
        let weight = Integer::from_natural(lcm.div_small(n).0);
        let offset = Integer::from_i128(part.offset).mul_natural(&factor);
        let s1 = Integer::from_i128(part.s1).mul_natural(&factor);
        let centred = part.centred_numerator(n).mul_natural(&factor_sq);
        within_num = within_num.add(&centred.mul(&weight));
        let base = common_offset.get_or_insert_with(|| offset.clone()).clone();
        let shifted = s1.add(&offset.sub(&base).mul_natural(&n_nat));
        sum_sq_over_n = sum_sq_over_n.add(&shifted.mul(&shifted).mul(&weight));
        t1 = t1.add(&shifted);
    }
    let base = common_offset.unwrap_or_else(Integer::zero);
    let between_num = sum_sq_over_n
        .mul_natural(&total_count)
        .sub(&t1.mul(&t1).mul_natural(&lcm));
    let unit = Natural::pow10(common_scale);
    let unit_sq = unit.mul(&unit);
    let between_den = lcm.mul(&total_count).mul(&unit_sq);
    let total_num = within_num.mul_natural(&total_count).add(&between_num);
    let mean_num = base.mul_natural(&total_count).add(&t1);
    let ss_between = ratio_to_f64(&between_num, &between_den);
    let ss_within = ratio_to_f64(&within_num, &lcm.mul(&unit_sq));
    let ss_total = ratio_to_f64(&total_num, &between_den);
    OnewaySums {
        ss_between,
        ss_within,
        ss_total,
        scaled: [ss_between, ss_within, ss_total],
        scale_exponent: 0,
        grand_mean: ratio_to_f64(&mean_num, &total_count.mul(&unit)),
        n_total,
        n_groups: counts.len(),
        exact_decimal: true,
    }
}

fn compensated_oneway(filled: &[&GroupStats]) -> OnewaySums {
    // (n, mean, centred sum of squares over 4^exponent, exponent)
    let parts: Vec<(u64, DoubleDouble, DoubleDouble, i32)> = filled
        .iter()
        .map(|g| match &g.sums {
            HeldSums::Binary {
                mean,
                centred,
                exponent,
            } => (g.n, *mean, *centred, *exponent),
            HeldSums::Exact(e) => {
                let n_nat = Natural::from_u128(u128::from(g.n));
                let unit = Natural::pow10(e.scale);
                let level = Integer::from_i128(e.offset)
                    .mul_natural(&n_nat)
                    .add(&Integer::from_i128(e.s1));
                let mean = ratio_to_double_double(&level, &n_nat.mul(&unit));
                let centred = ratio_to_double_double(&e.centred_numerator(g.n), &n_nat.mul(&unit).mul(&unit));
                (g.n, mean, centred, 0)
            }
            HeldSums::Empty => (0, DoubleDouble::from_f64(0.0), DoubleDouble::from_f64(0.0), 0),
        })
        .collect();
    let n_total: u64 = parts.iter().map(|p| p.0).sum();
    // Means are taken about the first condition's mean and divided by one power of two,
    // the largest of the conditions' own exponents and the exponent of the largest gap
    // between means, so that no square overflows or underflows at any magnitude.
    let reference = parts[0].1;
    // Gaps are formed halved (exact at every magnitude where halving is), so that means
    // near ±1.8e308 of opposite sign give a gap beyond the largest double without
    // overflowing; the power of two below accounts for the halving.
    let half_gap = |mean: DoubleDouble| mean.scale(-1).sub(reference.scale(-1));
    let widest_gap = parts.iter().map(|part| half_gap(part.1).hi.abs()).fold(0.0, f64::max);
    let mut exponent = parts
        .iter()
        .filter(|part| part.2.hi > 0.0)
        .map(|part| part.3)
        .max()
        .unwrap_or(i32::MIN);
    if widest_gap > 0.0 {
        exponent = exponent.max(binary_exponent(widest_gap) + 1);
    }
    if exponent == i32::MIN {
        exponent = 0;
    }
    let down = -i64::from(exponent);
    let mut weighted = DoubleDouble::from_f64(0.0);
    let mut within = DoubleDouble::from_f64(0.0);
    for &(n, mean, centred, own) in &parts {
        weighted = weighted.add(half_gap(mean).scale(down + 1).mul_f64(n as f64));
        within = within.add(centred.scale(2 * (i64::from(own) + down)));
    }
    let grand_gap = weighted.div(DoubleDouble::from_f64(n_total as f64));
    let grand = grand_gap.scale(-down).add(reference);
    let mut between = DoubleDouble::from_f64(0.0);
    for &(n, mean, _, _) in &parts {
        let gap = half_gap(mean).scale(down + 1).sub(grand_gap);
        between = between.add(gap.mul(gap).mul_f64(n as f64));
    }
    let total = between.add(within);
    let unscale = |x: DoubleDouble| scale_by_power_of_two(x.hi, -2 * down);
    OnewaySums {
        ss_between: unscale(between),
        ss_within: unscale(within),
        ss_total: unscale(total),
        scaled: [between.hi, within.hi, total.hi],
        scale_exponent: exponent,
        grand_mean: grand.hi,
        n_total,
        n_groups: parts.len(),
        exact_decimal: false,
    }
}

fn gcd_u64(mut a: u64, mut b: u64) -> u64 {
    while b != 0 {
        (a, b) = (b, a % b);
    }
    a
}

// ---------------------------------------------------------------------------------------
// Wide integers
// ---------------------------------------------------------------------------------------

/// Unsigned 256-bit integer `hi * 2^128 + lo` for the exact sum of squares.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
struct Wide {
    lo: u128,
    hi: u128,
}

impl Wide {
    #[inline]
    fn checked_add_u128(self, v: u128) -> Option<Self> {
        let (lo, carry) = self.lo.overflowing_add(v);
        let hi = if carry { self.hi.checked_add(1)? } else { self.hi };
        Some(Self { lo, hi })
    }

    fn checked_add(self, o: Self) -> Option<Self> {
        let (lo, carry) = self.lo.overflowing_add(o.lo);
        let hi = self.hi.checked_add(o.hi)?.checked_add(u128::from(carry))?;
        Some(Self { lo, hi })
    }

    /// `a^2` as a 256-bit number.
    #[cold]
    fn square(a: u128) -> Self {
        let low = a & u128::from(u64::MAX);
        let high = a >> 64;
        let ll = low * low;
        let lh = low * high; // appears twice, at 2^64
        let hh = high * high;
        let (lo, c1) = ll.overflowing_add(lh << 64);
        let (lo, c2) = lo.overflowing_add(lh << 64);
        let hi = hh + (lh >> 64) * 2 + u128::from(c1) + u128::from(c2);
        Self { lo, hi }
    }

    fn checked_mul_u64(self, f: u64) -> Option<Self> {
        let f = u128::from(f);
        let p0 = (self.lo & u128::from(u64::MAX)) * f;
        let p1 = (self.lo >> 64) * f;
        let (lo, carry) = p0.overflowing_add(p1 << 64);
        let to_hi = (p1 >> 64) + u128::from(carry);
        let hi = self.hi.checked_mul(f)?.checked_add(to_hi)?;
        Some(Self { lo, hi })
    }

    fn to_natural(self) -> Natural {
        let mut n = Natural {
            limbs: vec![
                self.lo as u64,
                (self.lo >> 64) as u64,
                self.hi as u64,
                (self.hi >> 64) as u64,
            ],
        };
        n.normalize();
        n
    }
}

/// Arbitrary-size natural number, little-endian 64-bit limbs, no high zero limbs.
/// Used only when finishing, never per value.
#[derive(Debug, Clone, PartialEq, Eq)]
struct Natural {
    limbs: Vec<u64>,
}

impl Natural {
    fn zero() -> Self {
        Self { limbs: Vec::new() }
    }

    fn from_u128(v: u128) -> Self {
        let mut n = Self {
            limbs: vec![v as u64, (v >> 64) as u64],
        };
        n.normalize();
        n
    }

    fn pow10(k: u32) -> Self {
        let mut n = Self::from_u128(1);
        let mut remaining = k;
        while remaining > 0 {
            let step = remaining.min(19);
            n = n.mul_small(10u64.pow(step));
            remaining -= step;
        }
        n
    }

    fn normalize(&mut self) {
        while self.limbs.last() == Some(&0) {
            self.limbs.pop();
        }
    }

    fn is_zero(&self) -> bool {
        self.limbs.is_empty()
    }

    fn bit_len(&self) -> u64 {
        match self.limbs.last() {
            None => 0,
            Some(&top) => 64 * self.limbs.len() as u64 - u64::from(top.leading_zeros()),
        }
    }

    fn cmp_mag(&self, o: &Self) -> Ordering {
        self.limbs
            .len()
            .cmp(&o.limbs.len())
            .then_with(|| self.limbs.iter().rev().cmp(o.limbs.iter().rev()))
    }

    fn add(&self, o: &Self) -> Self {
        let len = self.limbs.len().max(o.limbs.len());
        let mut limbs = Vec::with_capacity(len + 1);
        let mut carry = 0u64;
        for i in 0..len {
            let a = self.limbs.get(i).copied().unwrap_or(0);
            let b = o.limbs.get(i).copied().unwrap_or(0);
            let (s, c1) = a.overflowing_add(b);
            let (s, c2) = s.overflowing_add(carry);
            limbs.push(s);
            carry = u64::from(c1) + u64::from(c2);
        }
        limbs.push(carry);
        let mut n = Self { limbs };
        n.normalize();
        n
    }

    /// `self - o`; requires `self >= o`.
    fn sub(&self, o: &Self) -> Self {
        let mut limbs = Vec::with_capacity(self.limbs.len());
        let mut borrow = 0u64;
        for (i, &a) in self.limbs.iter().enumerate() {
            let b = o.limbs.get(i).copied().unwrap_or(0);
            let (d, b1) = a.overflowing_sub(b);
            let (d, b2) = d.overflowing_sub(borrow);
            limbs.push(d);
            borrow = u64::from(b1) + u64::from(b2);
        }
        let mut n = Self { limbs };
        n.normalize();
        n
    }

    fn mul(&self, o: &Self) -> Self {
        if self.is_zero() || o.is_zero() {
            return Self::zero();
        }
        let mut limbs = vec![0u64; self.limbs.len() + o.limbs.len()];
        for (i, &a) in self.limbs.iter().enumerate() {
            let mut carry = 0u128;
            for (j, &b) in o.limbs.iter().enumerate() {
                let t = u128::from(a) * u128::from(b) + u128::from(limbs[i + j]) + carry;
                limbs[i + j] = t as u64;
                carry = t >> 64;
            }
            limbs[i + o.limbs.len()] = carry as u64;
        }
        let mut n = Self { limbs };
        n.normalize();
        n
    }

    fn mul_small(&self, f: u64) -> Self {
        self.mul(&Self::from_u128(u128::from(f)))
    }

    fn shl(&self, bits: u64) -> Self {
        if self.is_zero() {
            return Self::zero();
        }
        let words = (bits / 64) as usize;
        let rest = (bits % 64) as u32;
        let mut limbs = vec![0u64; words];
        if rest == 0 {
            limbs.extend_from_slice(&self.limbs);
        } else {
            let mut carry = 0u64;
            for &l in &self.limbs {
                limbs.push((l << rest) | carry);
                carry = l >> (64 - rest);
            }
            limbs.push(carry);
        }
        let mut n = Self { limbs };
        n.normalize();
        n
    }

    /// Quotient and remainder by a non-zero `d` (a zero divisor is treated as one).
    fn div_small(&self, d: u64) -> (Self, u64) {
        let d = u128::from(d.max(1));
        let mut limbs = vec![0u64; self.limbs.len()];
        let mut rem = 0u128;
        for i in (0..self.limbs.len()).rev() {
            let cur = (rem << 64) | u128::from(self.limbs[i]);
            limbs[i] = (cur / d) as u64;
            rem = cur % d;
        }
        let mut n = Self { limbs };
        n.normalize();
        (n, rem as u64)
    }

    fn rem_small(&self, d: u64) -> u64 {
        self.div_small(d).1
    }
}

/// Signed arbitrary-size integer (sign and magnitude).
#[derive(Debug, Clone, PartialEq, Eq)]
struct Integer {
    negative: bool,
    magnitude: Natural,
}

impl Integer {
    fn zero() -> Self {
        Self::from_natural(Natural::zero())
    }

    fn from_natural(magnitude: Natural) -> Self {
        Self {
            negative: false,
            magnitude,
        }
    }

    fn from_i128(v: i128) -> Self {
        Self {
            negative: v < 0,
            magnitude: Natural::from_u128(v.unsigned_abs()),
        }
    }

    fn with_sign(negative: bool, magnitude: Natural) -> Self {
        let negative = negative && !magnitude.is_zero();
        Self { negative, magnitude }
    }

    fn add(&self, o: &Self) -> Self {
        if self.negative == o.negative {
            return Self::with_sign(self.negative, self.magnitude.add(&o.magnitude));
        }
        match self.magnitude.cmp_mag(&o.magnitude) {
            Ordering::Less => Self::with_sign(o.negative, o.magnitude.sub(&self.magnitude)),
            _ => Self::with_sign(self.negative, self.magnitude.sub(&o.magnitude)),
        }
    }

    fn sub(&self, o: &Self) -> Self {
        self.add(&Self::with_sign(!o.negative, o.magnitude.clone()))
    }

    fn mul(&self, o: &Self) -> Self {
        Self::with_sign(self.negative != o.negative, self.magnitude.mul(&o.magnitude))
    }

    fn mul_natural(&self, o: &Natural) -> Self {
        Self::with_sign(self.negative, self.magnitude.mul(o))
    }
}

/// `num / den` rounded once to the nearest `f64` (ties to even). `den` must be
/// non-zero (a zero denominator yields NaN). Results in the subnormal range may be
/// rounded twice.
fn ratio_to_f64(num: &Integer, den: &Natural) -> f64 {
    if den.is_zero() {
        return f64::NAN;
    }
    if num.magnitude.is_zero() {
        return 0.0;
    }
    // Scale so that the quotient lies in [2^54, 2^56).
    let shift = 55 - (num.magnitude.bit_len() as i64 - den.bit_len() as i64);
    let (mut rem, divisor) = if shift >= 0 {
        (num.magnitude.shl(shift as u64), den.clone())
    } else {
        (num.magnitude.clone(), den.shl((-shift) as u64))
    };
    let mut quotient = 0u64;
    for bit in (0..=56u64).rev() {
        let trial = divisor.shl(bit);
        if rem.cmp_mag(&trial) != Ordering::Less {
            rem = rem.sub(&trial);
            quotient |= 1 << bit;
        }
    }
    let sticky = !rem.is_zero();
    let length = 64 - u64::from(quotient.leading_zeros());
    let mut dropped = length.saturating_sub(53);
    let mut mantissa = quotient >> dropped;
    if dropped > 0 {
        let rest = quotient & ((1u64 << dropped) - 1);
        let half = 1u64 << (dropped - 1);
        let round_up = rest > half || (rest == half && (sticky || mantissa & 1 == 1));
        if round_up {
            mantissa += 1;
            if mantissa == 1 << 53 {
                mantissa >>= 1;
                dropped += 1;
            }
        }
    }
    let value = scale_by_power_of_two(mantissa as f64, dropped as i64 - shift);
    if num.negative {
        -value
    } else {
        value
    }
}

/// `x * 2^e`, exact when the result is a normal number.
pub fn scale_by_power_of_two(mut x: f64, mut e: i64) -> f64 {
    let step = |k: i64| f64::from_bits(((k + 1023) as u64) << 52);
    while e > 1000 {
        x *= step(1000);
        e -= 1000;
    }
    while e < -1000 {
        x *= step(-1000);
        e += 1000;
    }
    x * step(e)
}

/// `num / den` as a double-double: the correctly rounded value plus the rounded
/// remainder.
fn ratio_to_double_double(num: &Integer, den: &Natural) -> DoubleDouble {
    let hi = ratio_to_f64(num, den);
    if hi == 0.0 || !hi.is_finite() {
        return DoubleDouble::from_f64(hi);
    }
    // hi == mantissa * 2^exponent exactly.
    let bits = hi.to_bits();
    let biased = ((bits >> 52) & 0x7ff) as i64;
    let fraction = bits & ((1u64 << 52) - 1);
    let (mantissa, exponent) = if biased == 0 {
        (fraction, -1074)
    } else {
        (fraction | (1 << 52), biased - 1075)
    };
    let hi_int = Integer::with_sign(hi < 0.0, Natural::from_u128(u128::from(mantissa)));
    let (rem_num, rem_den) = if exponent >= 0 {
        let approx = hi_int.mul_natural(&den.shl(exponent as u64));
        (num.sub(&approx), den.clone())
    } else {
        let scaled = Integer::with_sign(num.negative, num.magnitude.shl((-exponent) as u64));
        (scaled.sub(&hi_int.mul_natural(den)), den.shl((-exponent) as u64))
    };
    DoubleDouble {
        hi,
        lo: ratio_to_f64(&rem_num, &rem_den),
    }
}

// ---------------------------------------------------------------------------------------
// Tests
// ---------------------------------------------------------------------------------------

#[cfg(test)]
// The tests print the accuracy they measured.
#[allow(clippy::print_stdout)]
mod tests {
    use super::*;

    /// A one-way dataset read from a NIST StRD ANOVA file.
    struct NistAnova {
        name: &'static str,
        groups: Vec<usize>,
        values: Vec<f64>,
        df_between: f64,
        df_within: f64,
        ss_between: f64,
        ss_within: f64,
        ms_between: f64,
        ms_within: f64,
        f_statistic: f64,
        r_squared: f64,
        residual_sd: f64,
    }

    fn last_numbers(line: &str, count: usize) -> Vec<f64> {
        let tokens: Vec<&str> = line.split_whitespace().collect();
        tokens[tokens.len() - count..]
            .iter()
            .map(|t| t.parse::<f64>().expect("number in certified values"))
            .collect()
    }

    fn parse_nist(name: &'static str, text: &str) -> NistAnova {
        let lines: Vec<&str> = text.lines().collect();
        // Header line "Data               (lines 61 to 85)".
        let range_line = lines
            .iter()
            .find(|l| l.trim_start().starts_with("Data") && l.contains("(lines"))
            .expect("data line range");
        let range = last_numbers(&range_line.replace(['(', ')'], " ").replace("to", " "), 2);
        let (first, last) = (range[0] as usize, range[1] as usize);
        let between = lines.iter().find(|l| l.starts_with("Between")).expect("between");
        let within = lines.iter().find(|l| l.starts_with("Within")).expect("within");
        let r2 = lines.iter().find(|l| l.contains("R-Squared")).expect("r2");
        let sd = lines.iter().find(|l| l.contains("Standard Deviation")).expect("sd");
        let b = last_numbers(between, 4);
        let w = last_numbers(within, 3);
        let mut groups = Vec::new();
        let mut values = Vec::new();
        for line in &lines[first - 1..last] {
            let t: Vec<&str> = line.split_whitespace().collect();
            groups.push(t[0].parse::<usize>().expect("group label") - 1);
            values.push(t[1].parse::<f64>().expect("response"));
        }
        NistAnova {
            name,
            groups,
            values,
            df_between: b[0],
            ss_between: b[1],
            ms_between: b[2],
            f_statistic: b[3],
            df_within: w[0],
            ss_within: w[1],
            ms_within: w[2],
            r_squared: last_numbers(r2, 1)[0],
            residual_sd: last_numbers(sd, 1)[0],
        }
    }

    /// The eleven NIST StRD one-way ANOVA datasets (NIST Information Technology
    /// Laboratory, Statistical Reference Datasets; certified values from the files).
    fn nist_datasets() -> Vec<NistAnova> {
        vec![
            parse_nist("SiRstv", include_str!("testdata/SiRstv.dat")),
            parse_nist("SmLs01", include_str!("testdata/SmLs01.dat")),
            parse_nist("SmLs02", include_str!("testdata/SmLs02.dat")),
            parse_nist("SmLs03", include_str!("testdata/SmLs03.dat")),
            parse_nist("AtmWtAg", include_str!("testdata/AtmWtAg.dat")),
            parse_nist("SmLs04", include_str!("testdata/SmLs04.dat")),
            parse_nist("SmLs05", include_str!("testdata/SmLs05.dat")),
            parse_nist("SmLs06", include_str!("testdata/SmLs06.dat")),
            parse_nist("SmLs07", include_str!("testdata/SmLs07.dat")),
            parse_nist("SmLs08", include_str!("testdata/SmLs08.dat")),
            parse_nist("SmLs09", include_str!("testdata/SmLs09.dat")),
        ]
    }

    /// Log relative error (McCullough, "Assessing the reliability of statistical
    /// software", Amer. Statist. 52, 1998): -log10(|x - c| / |c|), infinite when exact.
    fn lre(x: f64, certified: f64) -> f64 {
        if x == certified {
            f64::INFINITY
        } else {
            -((x - certified).abs() / certified.abs()).log10()
        }
    }

    fn accumulate(groups: &[usize], values: &[f64], decimals: bool) -> Vec<GroupStats> {
        let n_groups = groups.iter().max().map_or(0, |g| g + 1);
        let mut acc = GroupAccumulator::with_decimal_recognition(n_groups, decimals);
        for (&g, &x) in groups.iter().zip(values) {
            acc.push(g, x).expect("finite value, valid group");
        }
        acc.finish()
    }

    #[test]
    fn nist_anova_certified_values_to_13_digits() {
        println!(
            "{:<8} {:>6} {:>6} {:>6} {:>6} {:>6} {:>6} {:>6} {:>6} {:>6}",
            "dataset", "df_b", "df_w", "SS_b", "SS_w", "MS_b", "MS_w", "F", "R2", "sd"
        );
        let fmt = |v: f64| {
            if v.is_infinite() {
                "exact".to_string()
            } else {
                format!("{v:.1}")
            }
        };
        for data in nist_datasets() {
            let stats = accumulate(&data.groups, &data.values, true);
            assert!(stats.iter().all(|g| g.exact_decimal), "{}", data.name);
            let sums = oneway_sums(&stats).expect("non-empty");
            assert!(sums.exact_decimal);
            let df_between = (sums.n_groups - 1) as f64;
            let df_within = (sums.n_total - sums.n_groups as u64) as f64;
            let ms_between = sums.ss_between / df_between;
            let ms_within = sums.ss_within / df_within;
            let computed = [
                (df_between, data.df_between),
                (df_within, data.df_within),
                (sums.ss_between, data.ss_between),
                (sums.ss_within, data.ss_within),
                (ms_between, data.ms_between),
                (ms_within, data.ms_within),
                (ms_between / ms_within, data.f_statistic),
                (sums.ss_between / sums.ss_total, data.r_squared),
                (ms_within.sqrt(), data.residual_sd),
            ];
            let lres: Vec<f64> = computed.iter().map(|&(x, c)| lre(x, c)).collect();
            println!(
                "{:<8} {}",
                data.name,
                lres.iter()
                    .map(|&v| format!("{:>6}", fmt(v)))
                    .collect::<Vec<_>>()
                    .join(" ")
            );
            for (&(x, c), &l) in computed.iter().zip(&lres) {
                if c == 0.0 {
                    // LRE is undefined for a zero certified value: absolute error instead.
                    // (None of the eleven datasets has one.)
                    assert!(x.abs() < 1e-13, "{}: {x} vs certified 0", data.name);
                } else {
                    assert!(l >= 13.0, "{}: {x} vs certified {c}, LRE {l}", data.name);
                }
            }
            // Total SS is the sum of its parts, and R^2 lies in [0, 1].
            let total_lre = lre(sums.ss_between + sums.ss_within, sums.ss_total);
            assert!(total_lre >= 15.0, "{}", data.name);
        }
    }

    #[test]
    fn binary_path_matches_exact_results_for_the_binary_values() {
        // With decimal recognition off the data are the f64 values themselves, which
        // differ from the decimals by up to half an ulp; the reference is the exact
        // analysis of those binary values.
        // python 3.11.7, fractions.Fraction(float(v)) for every response, exact SS:
        // (name, SS_between, SS_within, grand mean).
        let references = [
            ("SmLs07", 1.6801562694014696, 1.8000978373345875, 1000000000000.4),
            ("SmLs09", 160.09949443572512, 180.00978232919425, 1000000000000.4),
            (
                "AtmWtAg",
                3.6383418747907132e-09,
                1.049517291679747e-08,
                107.86814506041667,
            ),
            ("SiRstv", 0.05114626159999952, 0.2166365600000165, 196.189156),
        ];
        let datasets = nist_datasets();
        for (name, between, within, grand) in references {
            let data = datasets.iter().find(|d| d.name == name).expect("dataset");
            let stats = accumulate(&data.groups, &data.values, false);
            assert!(stats.iter().all(|g| !g.exact_decimal));
            let sums = oneway_sums(&stats).expect("non-empty");
            assert!(!sums.exact_decimal);
            assert!(lre(sums.ss_between, between) >= 13.0, "{name} {}", sums.ss_between);
            assert!(lre(sums.ss_within, within) >= 13.0, "{name} {}", sums.ss_within);
            assert!(lre(sums.grand_mean, grand) >= 15.0, "{name} {}", sums.grand_mean);
        }
    }

    /// splitmix64 (Steele, Lea and Flood, OOPSLA 2014) for reproducible test data.
    struct Rng(u64);
    impl Rng {
        fn next_u64(&mut self) -> u64 {
            self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
            let mut z = self.0;
            z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
            z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
            z ^ (z >> 31)
        }
        fn below(&mut self, n: u64) -> u64 {
            self.next_u64() % n
        }
        fn unit(&mut self) -> f64 {
            (self.next_u64() >> 11) as f64 / (1u64 << 53) as f64
        }
    }

    /// Short decimal data as a workbook would hold it: `digits` decimals around `level`.
    fn decimal_data(rng: &mut Rng, n: usize, n_groups: usize) -> (Vec<usize>, Vec<f64>) {
        let decimals = rng.below(5) as i32;
        // Level within 100 spreads of zero, so binary and decimal readings agree to
        // about 1e-14.
        let level = (rng.below(20_000) as f64 - 10_000.0) / 100.0;
        let spread = 10f64.powi(rng.below(4) as i32);
        let mut groups = Vec::with_capacity(n);
        let mut values = Vec::with_capacity(n);
        for i in 0..n {
            let g = if i < n_groups {
                i
            } else {
                rng.below(n_groups as u64) as usize
            };
            let raw = level + g as f64 * 0.37 * spread + spread * (rng.unit() - 0.5);
            let text = format!("{:.*}", decimals as usize, raw);
            groups.push(g);
            values.push(text.parse::<f64>().expect("formatted number"));
        }
        (groups, values)
    }

    fn rel_close(a: f64, b: f64, tol: f64) -> bool {
        (a - b).abs() <= tol * a.abs().max(b.abs()) || a == b
    }

    #[test]
    fn exact_and_compensated_paths_agree_on_ordinary_data() {
        let mut rng = Rng(20240611);
        for _ in 0..200 {
            let n_groups = 1 + rng.below(6) as usize;
            let n = n_groups + rng.below(60) as usize;
            let (groups, values) = decimal_data(&mut rng, n, n_groups);
            let exact = accumulate(&groups, &values, true);
            let binary = accumulate(&groups, &values, false);
            assert!(exact.iter().all(|g| g.exact_decimal));
            for (e, b) in exact.iter().zip(&binary) {
                assert_eq!(e.n, b.n);
                assert!(rel_close(e.mean, b.mean, 1e-12), "{} {}", e.mean, b.mean);
                assert!(rel_close(e.centred_ss, b.centred_ss, 1e-12));
                assert!(rel_close(e.sum, b.sum, 1e-12));
                assert_eq!((e.min, e.max), (b.min, b.max));
            }
            let se = oneway_sums(&exact).expect("data");
            let sb = oneway_sums(&binary).expect("data");
            assert!(rel_close(se.ss_within, sb.ss_within, 1e-12));
            assert!(rel_close(se.ss_total, sb.ss_total, 1e-12));
            assert!(rel_close(se.grand_mean, sb.grand_mean, 1e-12));
            // Between SS can be tiny relative to the data; compare on the total's scale.
            assert!((se.ss_between - sb.ss_between).abs() <= 1e-12 * se.ss_total.max(1e-300));
        }
    }

    #[test]
    fn exact_path_is_invariant_to_order() {
        let mut rng = Rng(77);
        for _ in 0..100 {
            let n_groups = 1 + rng.below(5) as usize;
            let n = n_groups + rng.below(80) as usize;
            let (mut groups, mut values) = decimal_data(&mut rng, n, n_groups);
            let first = accumulate(&groups, &values, true);
            // Fisher-Yates shuffle of the (group, value) pairs.
            for i in (1..n).rev() {
                let j = rng.below(i as u64 + 1) as usize;
                groups.swap(i, j);
                values.swap(i, j);
            }
            let second = accumulate(&groups, &values, true);
            for (a, b) in first.iter().zip(&second) {
                assert_eq!(a.mean.to_bits(), b.mean.to_bits());
                assert_eq!(a.centred_ss.to_bits(), b.centred_ss.to_bits());
                assert_eq!(a.sum.to_bits(), b.sum.to_bits());
            }
            let sa = oneway_sums(&first).expect("data");
            let sb = oneway_sums(&second).expect("data");
            assert_eq!(sa, sb);
        }
    }

    #[test]
    fn non_short_decimals_take_the_compensated_path() {
        let mut rng = Rng(5);
        for _ in 0..100 {
            let n_groups = 2 + rng.below(4) as usize;
            let n = n_groups + rng.below(50) as usize;
            let groups: Vec<usize> = (0..n)
                .map(|i| {
                    if i < n_groups {
                        i
                    } else {
                        rng.below(n_groups as u64) as usize
                    }
                })
                .collect();
            // k + 1/3 needs 16 or 17 significant digits, so no short decimal exists.
            let values: Vec<f64> = groups
                .iter()
                .map(|&g| (7 * g as u64 + rng.below(1000)) as f64 + 1.0 / 3.0)
                .collect();
            let stats = accumulate(&groups, &values, true);
            assert!(stats.iter().all(|g| !g.exact_decimal));
            let sums = oneway_sums(&stats).expect("data");
            assert!(!sums.exact_decimal);
            // Naive two-pass in f64 (well conditioned: spread comparable to level).
            let mut total = vec![0.0; n_groups];
            let mut count = vec![0.0; n_groups];
            for (&g, &x) in groups.iter().zip(&values) {
                total[g] += x;
                count[g] += 1.0;
            }
            let grand: f64 = values.iter().sum::<f64>() / n as f64;
            let mut within = 0.0;
            let mut total_ss = 0.0;
            for (&g, &x) in groups.iter().zip(&values) {
                within += (x - total[g] / count[g]).powi(2);
                total_ss += (x - grand).powi(2);
            }
            assert!(rel_close(sums.ss_within, within, 1e-12));
            assert!(rel_close(sums.ss_total, total_ss, 1e-12));
            assert!(rel_close(sums.grand_mean, grand, 1e-12));
            for (g, s) in stats.iter().enumerate() {
                assert!(rel_close(s.mean, total[g] / count[g], 1e-12));
            }
        }
    }

    #[test]
    fn one_long_value_switches_only_its_condition() {
        let mut acc = GroupAccumulator::new(2);
        for x in [1.5, 2.25, 3.0] {
            acc.push(0, x).expect("valid");
            acc.push(1, x).expect("valid");
        }
        acc.push(1, 0.1 + 0.2).expect("valid"); // 0.30000000000000004
        let stats = acc.finish();
        assert!(stats[0].exact_decimal);
        assert!(!stats[1].exact_decimal);
        let sums = oneway_sums(&stats).expect("data");
        assert!(!sums.exact_decimal);
        // Reference: naive f64 mean of the same four values (common practice).
        let values1 = [1.5, 2.25, 3.0, 0.1 + 0.2];
        let mean1 = values1.iter().sum::<f64>() / 4.0;
        assert!(rel_close(stats[1].mean, mean1, 1e-15));
        // (1.5 - 2.25)^2 + 0 + (3 - 2.25)^2 = 1.125, by hand (common practice).
        assert!(rel_close(stats[0].centred_ss, 1.125, 0.0));
        // Naive two-pass one-way sums in f64 on these well-conditioned values.
        let values0 = [1.5, 2.25, 3.0];
        let grand = (values0.iter().sum::<f64>() + values1.iter().sum::<f64>()) / 7.0;
        let within1: f64 = values1.iter().map(|x| (x - mean1).powi(2)).sum();
        let between = 3.0 * (2.25 - grand).powi(2) + 4.0 * (mean1 - grand).powi(2);
        assert!(rel_close(sums.ss_within, 1.125 + within1, 1e-15));
        assert!(rel_close(sums.ss_between, between, 1e-14));
        assert!(rel_close(sums.grand_mean, grand, 1e-15));
        assert_eq!((sums.n_total, sums.n_groups), (7, 2));
    }

    #[test]
    fn mixed_scales_and_magnitudes_stay_exact() {
        // Values typed with different numbers of decimals, and large integers.
        let values = [2.0, 0.5, 1.25, 1e20, 3.125e-5, 7e-22];
        let mut acc = GroupAccumulator::new(1);
        for x in values {
            acc.push(0, x).expect("valid");
        }
        let s = &acc.finish()[0];
        // 1e20 together with 7e-22 spans 42 decimal orders: the i128 sums overflow.
        assert!(!s.exact_decimal);
        let mut acc = GroupAccumulator::new(1);
        for x in [2.0, 0.5, 1.25, 3.125e-5, 1e12] {
            acc.push(0, x).expect("valid");
        }
        let s = &acc.finish()[0];
        assert!(s.exact_decimal);
        // Exact decimal sum 1000000000003.75003125 rounded once (python 3 fractions:
        // float(Fraction('2')+Fraction('0.5')+Fraction('1.25')+Fraction('3.125e-5')
        // +Fraction('1e12'))).
        assert_eq!(s.sum, 1000000000003.75);
        // Wide spread: deviations beyond 2^63 use the 256-bit square.
        let mut acc = GroupAccumulator::new(1);
        for x in [0.5, 1e20, 0.25, 3e20] {
            acc.push(0, x).expect("valid");
        }
        let s = &acc.finish()[0];
        assert!(s.exact_decimal);
        // python 3.11.7 fractions: v = [Fraction(t) for t in ('0.5','1e20','0.25','3e20')];
        // m = sum(v)/4; float(m), float(sum((x-m)**2 for x in v))
        assert_eq!(s.mean, 1e20);
        assert_eq!(s.centred_ss, 6e40);
    }

    #[test]
    fn short_decimal_recognition() {
        // Shortest round-trip decimals as printed by Rust's `{:e}` (common practice).
        assert_eq!(short_decimal(1000000000000.4, 0), Some((10000000000004, 1)));
        assert_eq!(short_decimal(107.8681568, 3), Some((1078681568, 7)));
        assert_eq!(short_decimal(-0.0, 0), Some((0, 0)));
        assert_eq!(short_decimal(1.5e20, 0), Some((150000000000000, -6)));
        assert_eq!(short_decimal(1.0 / 3.0, 0), None);
        assert_eq!(short_decimal(0.1 + 0.2, 1), None);
        assert_eq!(short_decimal(1e-30, 0), None);
        // Hint with extra trailing zeros gives the same value.
        assert_eq!(short_decimal(196.3, 4), Some((1963000, 4)));
        // Random short decimals typed as text are recognised with their value.
        let mut rng = Rng(9);
        for _ in 0..3000 {
            let digits = 1 + rng.below(15) as u32;
            let m = rng.below(10u64.pow(digits)) as i64 * if rng.below(2) == 0 { 1 } else { -1 };
            let e = rng.below(40) as i32 - 22;
            let x: f64 = format!("{m}e{e}").parse().expect("number");
            let hint = rng.below(23) as u32;
            let Some((found, d)) = short_decimal(x, hint) else {
                // Only representations needing a scale beyond 10^22 may be missed.
                assert!(m != 0 && e < -22 + trailing_zeros(m), "{m}e{e} missed");
                continue;
            };
            // Same decimal value: found * 10^-d == m * 10^e.
            let (a, ea) = strip(found, -d);
            let (b, eb) = strip(m, e);
            assert_eq!((a, ea), (b, eb), "{m}e{e} hint {hint}");
        }
        // Random doubles: any answer must read back as the double itself.
        for _ in 0..3000 {
            let x = f64::from_bits(rng.next_u64() >> 2);
            if let Some((m, d)) = short_decimal(x, rng.below(23) as u32) {
                let text = format!("{m}e{}", -d);
                assert_eq!(text.parse::<f64>().expect("number"), x);
            }
        }
    }

    fn trailing_zeros(mut m: i64) -> i32 {
        let mut k = 0;
        while m != 0 && m % 10 == 0 {
            m /= 10;
            k += 1;
        }
        k
    }

    /// Decimal `m * 10^e` with trailing zeros of `m` moved to the exponent.
    fn strip(mut m: i64, mut e: i32) -> (i64, i32) {
        if m == 0 {
            return (0, 0);
        }
        while m % 10 == 0 {
            m /= 10;
            e += 1;
        }
        (m, e)
    }

    #[test]
    fn ratio_rounds_once_to_nearest_even() {
        // 1/3, 2/3, 1/10 against the nearest doubles (IEEE division is correctly rounded).
        let r = |a: i128, b: u128| ratio_to_f64(&Integer::from_i128(a), &Natural::from_u128(b));
        assert_eq!(r(1, 3), 1.0 / 3.0);
        assert_eq!(r(-2, 3), -2.0 / 3.0);
        assert_eq!(r(1, 10), 0.1);
        assert_eq!(r(0, 7), 0.0);
        // 2^53 + 1 is a tie between 2^53 and 2^53 + 2: ties to even gives 2^53.
        assert_eq!(r((1 << 53) + 1, 1), 9007199254740992.0);
        assert_eq!(r((1 << 53) + 3, 1), 9007199254740996.0);
        let mut rng = Rng(3);
        for _ in 0..2000 {
            let a = (rng.next_u64() >> 11) as i128 - (1 << 52);
            let b = 1 + (rng.next_u64() >> 11) as u128;
            assert_eq!(r(a, b), a as f64 / b as f64);
        }
        let dd = ratio_to_double_double(&Integer::from_i128(1), &Natural::from_u128(3));
        // 1/3 - fl(1/3) = 1/(3 * 2^54) exactly (since fl(1/3) = (2^54 - 1)/(3 * 2^54)).
        assert_eq!(dd.lo, 1.0 / (3.0 * 2f64.powi(54)));
    }

    #[test]
    fn two_square_is_error_free() {
        let mut rng = Rng(13);
        for _ in 0..2000 {
            let a = (rng.unit() - 0.5) * 10f64.powi(rng.below(60) as i32 - 30);
            let (p, e) = two_square(a);
            // Reference: the fused multiply-add residual (IEEE 754 fma, exact).
            assert_eq!((p, e), (a * a, a.mul_add(a, -(a * a))));
        }
    }

    #[test]
    fn wide_square_matches_limb_product() {
        let mut rng = Rng(11);
        for _ in 0..500 {
            let a = (u128::from(rng.next_u64()) << 64) | u128::from(rng.next_u64());
            let a = a >> rng.below(128);
            let n = Natural::from_u128(a);
            assert_eq!(Wide::square(a).to_natural(), n.mul(&n));
        }
        assert_eq!(Wide::square(u128::MAX).to_natural(), {
            let n = Natural::from_u128(u128::MAX);
            n.mul(&n)
        });
    }

    #[test]
    fn bad_input_is_refused_without_recording() {
        let mut acc = GroupAccumulator::new(2);
        assert!(acc.push(2, 1.0).is_err());
        assert!(acc.push(0, f64::NAN).is_err());
        assert!(acc.push(0, f64::INFINITY).is_err());
        acc.push(0, 4.0).expect("valid");
        let stats = acc.finish();
        assert_eq!(stats[0].n, 1);
        assert_eq!(stats[1].n, 0);
        assert!(stats[1].mean.is_nan());
        let sums = oneway_sums(&stats).expect("one value");
        assert_eq!((sums.n_total, sums.n_groups), (1, 1));
        assert_eq!(sums.ss_total, 0.0);
        assert!(matches!(
            oneway_sums(&GroupAccumulator::new(3).finish()),
            Err(StatsError::TooFewValues { .. })
        ));
        assert!(matches!(oneway_sums(&[]), Err(StatsError::TooFewValues { .. })));
    }
}
