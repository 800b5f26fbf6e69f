//! The headline figures of a loaded export (`hubwatch summary`) and their JSON form.
//!
//! JSON keys are a contract documented in the README: add keys, never rename or remove.

use serde::Serialize;

use crate::dataset::Dataset;
use crate::ingest::ledger::Counts;

/// Component figures.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct Components {
    /// Number of connected components (isolated people count as one each).
    pub count: usize,
    /// People in the largest component.
    pub largest: u32,
    /// Largest component's share of all people.
    pub largest_share: Option<f64>,
}

/// Row counts per table.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct Rows {
    /// Exposures table totals.
    pub exposures: Counts,
    /// People table totals (all zero when no people table was given).
    pub people: Counts,
}

/// The summary of one load.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct Summary {
    /// People, implied ones included.
    pub people: usize,
    /// Distinct unordered contact pairs.
    pub contacts: usize,
    /// People known only from the exposures table.
    pub implied: usize,
    /// People with no contact.
    pub isolated: usize,
    /// Highest number of distinct contacts of one person.
    pub max_degree: u32,
    /// Connected components.
    pub components: Components,
    /// Row ledger totals.
    pub rows: Rows,
    /// The as-of date (ISO 8601).
    pub as_of: String,
    /// Which exposures form the network.
    pub view: ViewSummary,
}

/// The sub-network shown.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct ViewSummary {
    /// In words ("all exposures", "setting household; exposures 2026-11-01 to 2026-11-27").
    pub description: String,
    /// Settings kept (empty = any).
    pub settings: Vec<String>,
    /// Settings left out.
    pub exclude_settings: Vec<String>,
    /// First day of the date window (ISO 8601), if any.
    pub from: Option<String>,
    /// Last day of the date window, if any.
    pub to: Option<String>,
    /// Usable exposure rows inside the view.
    pub exposure_rows: u64,
}

/// The summary of a dataset, from its degrees and component sizes (computed once, with the
/// statistics).
pub fn summarise(d: &Dataset, deg: &[u32], sizes: &[u32]) -> Summary {
    let largest = sizes.iter().copied().max().unwrap_or(0);
    let n = d.people();
    Summary {
        people: n,
        contacts: d.edges.len(),
        implied: d.implied(),
        isolated: deg.iter().filter(|&&k| k == 0).count(),
        max_degree: deg.iter().copied().max().unwrap_or(0),
        components: Components {
            count: sizes.len(),
            largest,
            largest_share: (n > 0).then(|| f64::from(largest) / n as f64),
        },
        rows: Rows {
            exposures: d.ledger.exposures,
            people: d.ledger.people,
        },
        as_of: crate::ingest::dates::iso(d.as_of),
        view: ViewSummary {
            description: d.view.0.describe(),
            settings: d.view.0.settings.clone(),
            exclude_settings: d.view.0.exclude_settings.clone(),
            from: d.view.0.from.map(crate::ingest::dates::iso),
            to: d.view.0.to.map(crate::ingest::dates::iso),
            exposure_rows: d.view.1,
        },
    }
}
