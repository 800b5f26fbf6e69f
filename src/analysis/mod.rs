//! Analyses of one dataset: everything computed from the network and the people's attributes
//! that a report shows. `stats` gathers the network statistics of `metrics` for a dataset;
//! `casedata` the case statistics; `summary` the headline counts; `priority` and `ranking` the
//! follow-up list; `filters` the one filter engine of the command line and the dashboard;
//! `planning` the outlook (threshold, reach-out curves); `sentinel` friend sampling; `chains`
//! forward and backward tracing along dated exposures.
//!
//! Nothing here formats text or JSON or writes a file: that is `report`.

pub mod casedata;
pub mod chains;
pub mod daywork;
pub mod degree_tables;
pub mod filters;
pub mod planning;
pub mod priority;
pub mod ranking;
pub mod sentinel;
pub mod stats;
pub mod summary;
