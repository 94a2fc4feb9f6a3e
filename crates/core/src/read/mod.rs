//! The reading layer shared by the analyses: how a table's columns are
//! understood, independent of what is fitted afterwards.
//!
//! - [`blocks`]: where the kinetic tables of an export are, among run
//!   information, as rules kept as data.
//! - [`columns`]: the column vocabulary ([S], [I], rate, response, sd)
//!   every analysis reads headers with.
//! - [`profile`]: a condition column (pH, temperature) and a value
//!   column (a rate or rate constant) by name, for the profile analyses.
//! - [`layout`]: a plate layout as a list or as plate-map grids, read to
//!   the same placed cells.
//! - [`sheets`]: `.xlsx` and `.ods` bytes to sheet names and a sheet as
//!   table text (its own zip, inflate and XML reading, small enough for
//!   the page).
//! - [`replicates`]: a concentration column followed by replicate
//!   measurement columns (`rep 1`, `v1`, `replicate A`, repeated headings,
//!   or unlabelled numbers), and the per-concentration mean, SD, SEM and
//!   count every analysis reports.

pub mod blocks;
pub mod columns;
pub mod layout;
pub mod profile;
pub mod replicates;
pub mod sheets;
