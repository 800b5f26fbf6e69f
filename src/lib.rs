//! hubwatch: contact-tracing networks from tracing exports.
//!
//! Data flows one way, each layer importing only the ones before it (checked by
//! `tests/it/layers.rs`):
//!
//! ```text
//! files --ingest--> rows + ledger --dataset--> pairs + adjacency (petgraph Csr)
//!       --metrics--> statistics --analysis--> ranking, outlook, sentinel
//!       --report--> one Report: text, JSON, tables, metadata --export--> files
//!       --> cli (commands) and tui (the dashboard)
//! ```
//!
//! `error`, `prefetch`, `sort`, `ids`, `config`, `export` (the one writer) and `workspace` sit
//! below all of it.

pub mod analysis;
pub mod cli;
pub mod config;
pub mod dataset;
pub mod error;
pub mod export;
pub mod graph;
pub mod ids;
pub mod ingest;
pub mod memory;
pub mod metrics;
pub mod par;
pub mod plot;
pub mod prefetch;
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
