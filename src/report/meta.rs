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
    pub fn inputs(self, d: &Dataset) -> Result<Meta> {
        Ok(self.inputs_hashed(d, &input_hashes(&input_paths(d))?))
    }

    /// The same with the checksums already read ([`input_hashes`], in ledger order).
    pub fn inputs_hashed(mut self, d: &Dataset, hashes: &[Option<String>]) -> Meta {
        for (f, sum) in d.ledger.files.iter().zip(hashes) {
            let sum = sum.as_deref().unwrap_or("built-in sample");
            self.0.push((
                format!("input {}", f.role.name()),
                format!("{} sha256 {sum}", f.path.display()),
            ));
        }
        self
    }

    /// The entries, for the writer.
    pub fn finish(self) -> Metadata {
        Metadata { entries: self.0 }
    }
}

/// The SHA-256 of each input file (None for the built-in sample), in the order of `paths`: the
/// slow part of a file's metadata on a large export, so callers can read it beside other work.
pub fn input_hashes(paths: &[std::path::PathBuf]) -> Result<Vec<Option<String>>> {
    paths
        .iter()
        .map(|p| match p.exists() {
            true => file_sha256(p).map(Some),
            false => Ok(None),
        })
        .collect()
}

/// The input files' paths, in ledger order (for [`input_hashes`]).
pub fn input_paths(d: &Dataset) -> Vec<std::path::PathBuf> {
    d.ledger.files.iter().map(|f| f.path.clone()).collect()
}
