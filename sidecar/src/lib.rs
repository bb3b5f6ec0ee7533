pub mod analysis;
pub mod stats;
