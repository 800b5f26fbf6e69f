//! Everything the dashboard shows, computed once when the export is loaded (and, for a selected
//! cluster, once when it is selected): what the first frame needs before it, the priority list,
//! the outlook, the null model and the day's work after it, on workers ([`background`]). The
//! draw code only reads from here.

use std::path::PathBuf;
use std::sync::{Arc, OnceLock};

use crate::analysis::planning::{Plan, PlanOptions, Strategy};
use crate::analysis::priority::PriorityConfig;
use crate::analysis::ranking::{check, settings, RankRequest, Window};
use crate::analysis::stats::{MetricOptions, NetworkStats};
use crate::analysis::summary::Summary;
use crate::dataset::Dataset;
use crate::error::Result;
use crate::metrics::degree::{degree_stats, DegreeStats};
use crate::metrics::mixing::NullModel;
use crate::metrics::neighbours::{neighbours_of, Neighbours};
use crate::metrics::Stat;
use crate::report::{Parts, Report};
use crate::workspace::PersonState;

pub mod background;
pub mod listing;
use background::ListingResult;
pub use listing::Listing;

/// Degree figures of the whole network or of one cluster (what the Degrees and Neighbours panes
/// show).
#[derive(Debug, Clone, PartialEq)]
pub struct ScopeStats {
    /// "whole network" or "cluster #3 (120 people)".
    pub label: String,
    /// People in scope.
    pub people: usize,
    /// People per degree (index k).
    pub histogram: Vec<u64>,
    /// p_k.
    pub p: Vec<f64>,
    /// q_k = (k+1) p_{k+1} / <k>.
    pub q: Vec<f64>,
    /// Observed: followed from each person with contacts to their contacts, the share of
    /// contacts with k other contacts (each person weighted equally).
    pub contact_excess: Vec<f64>,
    /// k_nn(k): mean over people with k contacts of their contacts' mean degree.
    pub knn: Vec<(u32, f64)>,
    /// <k>.
    pub mean: Stat,
    /// <k^2>/<k>: mean degree at the end of a random exposure (paradox, version a).
    pub edge_end_mean: Stat,
    /// Mean excess degree (<k^2> - <k>)/<k>.
    pub mean_excess: Stat,
    /// Mean over people with contacts of their contacts' mean degree (version b).
    pub contact_mean: Stat,
    /// Shares whose contacts have more / fewer / as many contacts (version c).
    pub shares: (Stat, Stat, Stat),
}

impl ScopeStats {
    /// Assemble from the degree statistics and neighbour figures of the same people.
    pub fn from_parts(label: String, degree: &DegreeStats, nb: &Neighbours) -> ScopeStats {
        ScopeStats {
            label,
            people: degree.n,
            histogram: degree.histogram.clone(),
            p: degree.p(),
            q: degree.q(),
            contact_excess: nb.contact_excess.clone(),
            knn: nb.knn.clone(),
            mean: degree.mean,
            edge_end_mean: degree.edge_end_mean,
            mean_excess: degree.mean_excess,
            contact_mean: nb.contact_mean,
            shares: (nb.share_more, nb.share_fewer, nb.share_equal),
        }
    }
}

/// Compute the degree figures over `members` (each member's contacts counted in the whole
/// network, so for a whole cluster every contact is inside), with the same functions as the
/// whole-network statistics.
pub fn scope_stats(d: &Dataset, degrees: &[u32], members: &[u32], label: String) -> ScopeStats {
    let own: Vec<u32> = members.iter().map(|&v| degrees[v as usize]).collect();
    ScopeStats::from_parts(
        label,
        &degree_stats(&own),
        &neighbours_of(&d.graph, degrees, members.iter().copied()),
    )
}

/// One row of the Clusters pane.
#[derive(Debug, Clone, PartialEq)]
pub struct ClusterRow {
    /// Component label.
    pub label: u32,
    /// People.
    pub size: u32,
    /// Contacts inside.
    pub contacts: u64,
    /// Bridges (articulation points) inside.
    pub bridges: u32,
    /// The person with the most contacts (ID) and their degree.
    pub hub: (String, u32),
}

/// The precomputed model.
pub struct Model {
    /// The loaded export (shared with the workers).
    pub d: Arc<Dataset>,
    /// Headline counts.
    pub summary: Summary,
    /// Every statistic (shared with the workers).
    pub stats: Arc<NetworkStats>,
    /// Whole-network degree figures.
    pub whole: ScopeStats,
    /// The monitoring window the list uses (known before the list is ranked).
    pub window: Window,
    /// The ranking preset's name.
    pub preset: String,
    /// The priority list, ranked on a worker after the first frame; empty until done (see
    /// [`Model::listed`]).
    pub listing: Arc<OnceLock<ListingResult>>,
    /// The priority settings in force (for the chains' windows).
    pub priority: PriorityConfig,
    /// Outlook (reach curves to `reach_limit` people), computed on a worker after the list;
    /// empty until done (see [`Model::plan`]).
    pub plan_cell: Arc<OnceLock<Plan>>,
    /// What the outlook being computed follows, for the pane to say while it waits.
    pub plan_reach: usize,
    /// Components, largest first.
    pub clusters: Vec<ClusterRow>,
    /// The quarantine overlay's lines, formatted once: (text, is a field problem).
    pub quarantine_lines: Vec<(String, bool)>,
    /// Where flags and follow-up states are kept.
    pub workspace_path: PathBuf,
    /// Folder for exports of the current view.
    pub export_dir: PathBuf,
    /// Theme name from the configuration.
    pub theme: String,
    /// Seconds spent computing before the first frame (after the load).
    pub compute_seconds: f64,
    /// The null model of r, computed in the background (it takes seconds at a million rows);
    /// empty until done.
    pub null: Arc<OnceLock<NullModel>>,
    /// The input files' checksums for figure captions, read on a worker; empty until done
    /// (an error reading a file is kept as its message).
    pub input_hashes: Arc<OnceLock<background::InputHashes>>,
    /// Who is a case and each person's onset (else report) date, read the first time the
    /// Person pane shows chains.
    pub chain_people: OnceLock<crate::analysis::chains::People>,
    /// The day's work (this load recorded, compared with the previous one; what is due
    /// today), computed on a worker after the list; empty until done.
    pub day: Arc<OnceLock<background::DayResult>>,
}

impl Model {
    /// Cases and reference dates for the Person pane's chains (read once, when first asked).
    pub fn chain_people(&self) -> &crate::analysis::chains::People {
        self.chain_people
            .get_or_init(|| crate::analysis::chains::People::of(&self.d))
    }

    /// The chains' windows for the list's pathogen, or why there are none.
    pub fn chain_windows(&self) -> std::result::Result<crate::analysis::chains::Windows, String> {
        let req = crate::analysis::chains::ChainRequest {
            pathogen: Some(self.window.pathogen.clone()),
            ..Default::default()
        };
        crate::analysis::chains::Windows::settle(&self.priority, &req).map_err(|e| e.to_string())
    }

    /// Compute what the first frame shows from a loaded export, and start the workers for the
    /// rest (the list, the null model, the outlook, the day's work).
    pub fn build(
        d: Dataset,
        rank: &RankRequest,
        states: &[PersonState],
        workspace_path: PathBuf,
        export_dir: PathBuf,
        dash: &crate::config::DashboardConfig,
        work: &crate::config::WorkspaceConfig,
    ) -> Result<Model> {
        let t = std::time::Instant::now();
        // The preset, the pathogen and what else could stop the ranking are checked now (a
        // bad name fails before the dashboard opens); the list is ranked after the first
        // frame.
        let settled = settings(rank)?;
        check(&d, rank, &settled)?;
        // The statistics without the null model, which comes from a worker (it takes seconds
        // at a million rows).
        let parts = Parts {
            metrics: MetricOptions {
                null_replicates: 0,
                ..Default::default()
            },
            rank: None,
            plan: None,
            states: Vec::new(),
        };
        let plan_options = PlanOptions {
            max_reach: dash.reach_limit.min(d.people()).max(1),
            repeats: dash.reach_repeats.max(1),
            ..Default::default()
        };
        let Report {
            d, summary, stats, ..
        } = Report::build(d, parts)?;
        let lap = |what: &str| crate::report::stage_lap("model", what, t);
        lap("report");
        let (d, stats) = (Arc::new(d), Arc::new(stats));
        // Already computed with the statistics.
        let whole =
            ScopeStats::from_parts("whole network".into(), &stats.degree, &stats.neighbours);
        let clusters = cluster_rows(&d, &stats);
        let quarantine_lines = quarantine_lines(&d.ledger);
        lap("clusters and quarantine");
        let (window, preset) = (settled.2.clone(), settled.1 .0.clone());
        let settled_config = settled.0.clone();
        let plan_reach = plan_options.max_reach;
        let cells = background::start(
            &d,
            &stats,
            background::Work {
                rank: rank.clone(),
                settled,
                states: states.to_vec(),
                plan: plan_options,
                workspace: workspace_path.clone(),
                keep_top: (work.keep_snapshots, work.changes_top),
            },
        );
        Ok(Model {
            quarantine_lines,
            summary,
            whole,
            window,
            preset,
            priority: settled_config,
            listing: cells.listing,
            plan_cell: cells.plan,
            plan_reach,
            clusters,
            workspace_path,
            export_dir,
            theme: dash.theme.clone(),
            compute_seconds: t.elapsed().as_secs_f64(),
            null: cells.null,
            input_hashes: cells.input_hashes,
            chain_people: OnceLock::new(),
            day: cells.day,
            stats,
            d,
        })
    }

    /// The priority list, once the worker has ranked it (None while it works, or when it
    /// failed: see [`Model::listing`]).
    pub fn listed(&self) -> Option<&Listing> {
        self.listing.get().and_then(|r| r.as_ref().ok())
    }

    /// Wait until the list is ranked (tests and benchmarks; the dashboard never waits).
    pub fn wait_listed(&self) -> std::result::Result<&Listing, &str> {
        self.listing.wait().as_ref().map_err(String::as_str)
    }

    /// Wait until the background work is done (tests and benchmarks).
    pub fn wait_background(&self) {
        while self.listing.get().is_none()
            || self.null.get().is_none()
            || self.plan_cell.get().is_none()
            || self.day.get().is_none()
        {
            std::thread::sleep(std::time::Duration::from_millis(5));
        }
    }

    /// The outlook, once the worker has computed it.
    pub fn plan(&self) -> Option<&Plan> {
        self.plan_cell.get()
    }

    /// The strategies of the outlook, in report order (none until it is computed).
    pub fn strategies(&self) -> impl Iterator<Item = Strategy> + '_ {
        self.plan()
            .into_iter()
            .flat_map(|p| p.strategies.iter().map(|s| s.strategy))
    }
}

fn cluster_rows(d: &Dataset, stats: &NetworkStats) -> Vec<ClusterRow> {
    let (labels, sizes) = &stats.components;
    let mut contacts = vec![0u64; sizes.len()];
    for &a in &d.edges.a {
        contacts[labels[a as usize] as usize] += 1;
    }
    let mut bridges = vec![0u32; sizes.len()];
    for &b in &stats.bridges {
        bridges[labels[b as usize] as usize] += 1;
    }
    let mut hub = vec![(u32::MAX, 0u32); sizes.len()];
    for (v, &l) in labels.iter().enumerate() {
        let k = stats.degrees[v];
        let h = &mut hub[l as usize];
        if h.0 == u32::MAX || k > h.1 {
            *h = (v as u32, k);
        }
    }
    let mut rows: Vec<ClusterRow> = (0..sizes.len())
        .map(|l| ClusterRow {
            label: l as u32,
            size: sizes[l],
            contacts: contacts[l],
            bridges: bridges[l],
            hub: (d.ids.name(hub[l].0).to_string(), hub[l].1),
        })
        .collect();
    rows.sort_by(|a, b| b.size.cmp(&a.size).then(a.label.cmp(&b.label)));
    rows
}

/// Every quarantined row and field problem as one line of the overlay.
fn quarantine_lines(l: &crate::ingest::ledger::Ledger) -> Vec<(String, bool)> {
    let file = |i: usize| {
        l.files
            .get(i)
            .map(|f| f.path.display().to_string())
            .unwrap_or_default()
    };
    let rows = l.quarantined.iter().map(|q| {
        let text = format!(
            " quarantined  {}:{}  {}  {}",
            file(q.file),
            q.line,
            q.reason.code(),
            q.raw
        );
        (text, false)
    });
    let problems = l.problems.iter().map(|p| {
        let text = format!(
            " field        {}:{}  {} = {:?}  {}",
            file(p.file),
            p.line,
            p.column,
            p.value,
            p.reason
        );
        (text, true)
    });
    rows.chain(problems).collect()
}
