//! The one metadata builder: what travels with every file hubwatch writes (the caution first,
//! when and from what it was made, the view, and for a ranked list the preset, weights, caps,
//! window and filters), so that any file can be traced back to how it was produced.

use crate::analysis::ranking::RankedList;
use crate::dataset::Dataset;
use crate::error::Result;
use crate::export::{file_sha256, Metadata};
use crate::ingest::dates;

/// Metadata entries in order, caution first.
#[derive(Debug, Clone)]
pub struct Meta(Vec<(String, String)>);

impl Meta {
    /// Caution, time of writing, as-of date, which list, and the view of the network.
    pub fn new(d: &Dataset, list: &str) -> Meta {
        Meta(vec![
            ("caution".into(), crate::CAUTION.into()),
            (
                "generated".into(),
                chrono::Utc::now().format("%Y-%m-%dT%H:%M:%SZ").to_string(),
            ),
            ("as_of".into(), dates::iso(d.as_of)),
            ("list".into(), list.into()),
            ("view".into(), d.view.0.describe()),
        ])
    }

    /// One more entry.
    pub fn with(mut self, key: &str, value: impl Into<String>) -> Meta {
        self.0.push((key.into(), value.into()));
        self
    }

    /// How a ranked list was made: preset, weights, caps, monitoring window and filters (when
    /// any).
    pub fn ranking(self, list: &RankedList) -> Meta {
        let w = &list.window;
        self.with("preset", list.preset.0.clone())
            .with(
                "weights",
                serde_json::to_string(&list.preset.1.weights).unwrap_or_default(),
            )
            .with(
                "caps",
                serde_json::to_string(&list.preset.1.caps).unwrap_or_default(),
            )
            .with(
                "monitoring_window",
                format!("{} days ({}; {})", w.days, w.pathogen, w.source),
            )
            .filters(list)
    }

    /// The list's filters, when it has any.
    fn filters(self, list: &RankedList) -> Meta {
        match list.filters.is_empty() {
            true => self,
            false => self.with("filters", list.filters.describe()),
        }
    }

    /// The SHA-256 of every input file (the bundled sample says so instead).
    pub fn inputs(mut self, d: &Dataset) -> Result<Meta> {
        for f in &d.ledger.files {
            let sum = if f.path.exists() {
                file_sha256(&f.path)?
            } else {
                "built-in sample".into()
            };
            self.0.push((
                format!("input {}", f.role.name()),
                format!("{} sha256 {sum}", f.path.display()),
            ));
        }
        Ok(self)
    }

    /// The entries, for the writer.
    pub fn finish(self) -> Metadata {
        Metadata { entries: self.0 }
    }
}
