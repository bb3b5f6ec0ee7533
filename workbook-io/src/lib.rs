//! Workbook input and output for trialyst.
//!
//! Reading: [`read`] opens any workbook calamine understands, after checking
//! its container against bombs, and returns one sheet's used cells with their
//! positions. [`layout`] finds the trial table in those cells. [`settings`]
//! reads the settings sheet as raw key/value rows. Writing: [`write`] turns a
//! plain model of sheets, cells and charts into an xlsx file, atomically.
//!
//! This crate knows nothing of statistics: it moves cells in and out.

pub mod cell;
pub mod layout;
pub mod read;
pub mod settings;
#[doc(hidden)]
pub mod testing;
pub mod write;

pub use cell::{column_letters, parse_a1, parse_a1_range, CellPos, CellRect, CellValue};
pub use read::{open_workbook, Format, ReadError, ReadLimits, SheetGrid, SheetInfo, Workbook};
