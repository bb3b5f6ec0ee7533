//! Analyses built from the statistics routines: the one-way model and the
//! contrasts users write. Plain Rust values in, plain Rust values out; no I/O.

pub mod assessment;
pub mod comparisons;
pub mod contrast;
pub mod letters;
pub mod oneway;
pub mod verdict;
