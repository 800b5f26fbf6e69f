//! Network statistics: pure functions over the graph and plain arrays (no IO, no polars, no
//! JSON, no `Dataset`: the `analysis` layer gathers them for one dataset).
//!
//! Conventions (from the methods sheet the project follows): population moments over all N
//! people, isolated people included; a result that is 0/0 or otherwise undefined is a
//! [`Stat`] error carrying the reason, never 0, never NaN, never a panic; comparisons that
//! decide ties are made in integers.

pub mod cases;
pub mod chains;
pub mod degree;
pub mod fits;
pub mod mixing;
pub mod neighbours;
pub mod outlook;
pub mod reach;
pub mod structure;

/// A statistic that may be undefined; the error is the reason, in words.
pub type Stat = Result<f64, &'static str>;
