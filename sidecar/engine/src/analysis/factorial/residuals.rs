//! Residual checks of the reduced model: normality tests on an even spread of at most
//! [`RESIDUAL_CHECK_MAX`](super::RESIDUAL_CHECK_MAX) residuals and the largest residual.

use crate::analysis::verdict::p_equals;
use crate::stats::normality::check_normality;

use super::reduced::ReducedInput;
use super::results::{LargestResidual, ResidualCheck};
use super::RESIDUAL_CHECK_MAX;

pub(super) fn residual_check(
    input: &ReducedInput<'_>,
    fitted_cells: &[f64],
    sigma: Option<f64>,
) -> Option<ResidualCheck> {
    let values = input.table.values;
    residual_check_with(input.model_records.len(), sigma, |position| {
        let record = input.model_records[position];
        (
            values[record] - fitted_cells[input.cell_of_record[position] as usize],
            record,
        )
    })
}

pub(super) fn residual_check_of(residuals: &[f64], records: &[usize], sigma: Option<f64>) -> Option<ResidualCheck> {
    residual_check_with(residuals.len(), sigma, |position| {
        (residuals[position], records[position])
    })
}

/// The residual check over `n_residuals` residuals given one at a time (residual and
/// its record), without holding them all: an even spread of at most
/// [`RESIDUAL_CHECK_MAX`] goes to the normality tests, and the largest is kept.
pub(super) fn residual_check_with(
    n_residuals: usize,
    sigma: Option<f64>,
    residual_at: impl Fn(usize) -> (f64, usize),
) -> Option<ResidualCheck> {
    if n_residuals == 0 {
        return None;
    }
    let n_checked = n_residuals.min(RESIDUAL_CHECK_MAX);
    let mut checked = Vec::with_capacity(n_checked);
    let mut next_sample = 0usize;
    let mut largest: Option<(f64, usize)> = None;
    for position in 0..n_residuals {
        let (residual, record) = residual_at(position);
        if checked.len() < n_checked && position == next_sample {
            checked.push(residual);
            next_sample = (checked.len() * n_residuals) / n_checked;
        }
        if largest.is_none_or(|(size, _)| residual.abs() > size.abs()) {
            largest = Some((residual, record));
        }
    }
    let largest = sigma
        .filter(|s| *s > 0.0)
        .zip(largest)
        .map(|(s, (residual, record))| LargestResidual {
            in_sds: residual / s,
            record,
            cell: None,
        });
    let (shapiro_wilk, anderson_darling, reading) = match check_normality(&checked) {
        Ok(check) => {
            let p = check.preferred_p_value();
            let test = if check.shapiro_wilk.is_some() {
                "Shapiro-Wilk"
            } else {
                "Anderson-Darling"
            };
            let reading = if p < 0.01 {
                format!("The residuals of the reduced model do not look normal ({test} {}); intervals and p-values may be off, look at the largest residuals and consider a transformation.", p_equals(p))
            } else {
                format!(
                    "The residuals of the reduced model are consistent with a normal distribution ({test} {}).",
                    p_equals(p)
                )
            };
            (
                check.shapiro_wilk.as_ref().map(|sw| (sw.w, sw.p_value)),
                Some((check.anderson_darling.a_squared, check.anderson_darling.p_value)),
                reading,
            )
        }
        Err(error) => (None, None, format!("The residuals could not be checked: {error}.")),
    };
    Some(ResidualCheck {
        n_checked: checked.len(),
        n_residuals,
        shapiro_wilk,
        anderson_darling,
        largest,
        reading,
    })
}
