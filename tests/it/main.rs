//! hubwatch's integration tests, compiled into one test binary (one link of the library and
//! polars instead of one per file). Each module is one area; `common` holds the helpers.
//!
//! Tests that need `../shared` (the reference values and the open data sets) print
//! `SKIPPED: <reason>` when it is absent; with `HUBWATCH_REQUIRE_SHARED=1` (set by CI) its
//! absence fails them instead.

mod common;

mod aggregates;
mod brief;
mod casedata;
mod cases;
mod chains;
mod cli;
mod dashboard;
mod daywork;
mod errors;
mod export;
mod figures;
mod fits;
mod formats;
mod hostile;
mod layers;
mod ledger;
mod metrics;
mod outlook;
mod planning;
mod priority;
mod properties;
mod reach;
mod real_data;
mod sentinel;
mod terminal_loss;
mod tmux;
mod views;
mod workspace;
