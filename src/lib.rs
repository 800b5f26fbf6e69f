//! hubwatch: contact-tracing networks from tracing exports.
//!
//! Data flows one way:
//!
//! ```text
//! files --ingest--> frames (polars) --reconcile--> people, exposure rows, ledger
//!       --graph--> contact pairs + adjacency (petgraph Csr) --summary--> figures -> CLI / JSON
//! ```
//!
//! No stage reaches back: the graph opens no files, the summary reads a finished `Dataset`.

pub mod analysis;
pub mod cli;
pub mod config;
pub mod dataset;
pub mod error;
pub mod export;
pub mod graph;
pub mod ids;
pub mod ingest;
pub mod metrics;
pub mod report;
pub mod sample;
pub mod sort;
pub mod synth;
pub mod tui;
pub mod workspace;

/// One line of caution shown with every output that names people.
pub const CAUTION: &str = "hubwatch supports, and does not replace, the judgement of public-health staff; \
follow local rules and licensed practice. Tracing exports are sensitive personal data: keep them and \
everything derived from them private.";
