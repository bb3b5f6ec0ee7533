//! Analyses built from the statistics routines: the one-way model, the
//! contrasts users write, and power and sample size for planning. Plain Rust values in, plain Rust values out; no I/O.

pub mod assessment;
pub mod blocks;
pub mod comparisons;
pub mod contrast;
pub mod desirability;
pub mod factorial;
pub mod letters;
pub mod next_trial;
pub mod off_plan;
pub mod oneway;
pub mod power;
pub mod surface;
pub mod surface_power;
pub mod verdict;
