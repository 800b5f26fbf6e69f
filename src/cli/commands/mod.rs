//! One file per command: each loads what it needs, builds one `Report` and prints or writes
//! its renderings. Arguments come from `cli::args`; nothing here computes a statistic.

pub mod brief;
pub mod chains;
pub mod check;
pub mod dashboard;
pub mod day;
pub mod export;
pub mod figures;
pub mod outlook;
pub mod priority;
pub mod sql;
pub mod state;
pub mod summary;
pub mod synth;
