//! The one-way fit of a trial's conditions and its model checks, as the service runs them
//! (for the tests of the checks' digits).

use engine::analysis::assessment::{assess, Assessment, AssessmentOptions};
use engine::analysis::oneway::fit_one_way;

/// The one-way fit of the conditions and its model checks, as the service runs them.
pub fn assessed(groups: &[Vec<f64>]) -> Assessment {
    let names: Vec<String> = (1..=groups.len()).map(|index| format!("condition {index}")).collect();
    let mut labels = Vec::new();
    let mut values = Vec::new();
    let mut records = Vec::new();
    for (index, group) in groups.iter().enumerate() {
        records.push((values.len()..values.len() + group.len()).collect::<Vec<usize>>());
        labels.extend(std::iter::repeat_n(index as u32, group.len()));
        values.extend_from_slice(group);
    }
    let fit = fit_one_way(&names, &labels, &values, 0.95, &[]).expect("the trial fits");
    assess(&fit, groups, &records, &AssessmentOptions::default())
}
