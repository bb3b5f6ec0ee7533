//! trialyst's statistics engine: the numerical routines ([`stats`]), the
//! analyses in the user's terms ([`analysis`]), trial design construction
//! ([`design`]) and the typed options the analyses take ([`options`]).
//!
//! # Invariant
//!
//! The engine does no I/O and knows nothing of workbooks, cells, protocols,
//! files or the command line. Analyses take typed inputs (condition labels,
//! levels per record, values) and options, and answer in record numbers
//! (0-based positions in the input); the service maps records to cells.

pub mod analysis;
pub mod design;
pub mod options;
pub mod stats;
