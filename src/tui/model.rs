//! Everything the dashboard shows, computed once when the export is loaded (and, for a selected
//! cluster, once when it is selected). The draw code only reads from here.

use std::path::PathBuf;
use std::sync::{Arc, OnceLock};

use crate::analysis::daywork::DayInput;
use crate::analysis::filters::FilterIndex;
use crate::analysis::planning::{Plan, PlanOptions, Strategy};
use crate::analysis::priority::{cap, scale_by, Preset, Ranked, COMPONENTS};
use crate::analysis::ranking::{followup_map, RankRequest, RankedList};
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
use rayon::prelude::*;

pub mod background;
use background::{background_null_model, background_plan};

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
    /// Every statistic.
    pub stats: NetworkStats,
    /// Whole-network degree figures.
    pub whole: ScopeStats,
    /// The ranked list of everyone (no filters; the dashboard filters).
    pub list: RankedList,
    /// Position of each person in `list.ranked` (u32::MAX: not ranked).
    pub rank_pos: Vec<u32>,
    /// Outlook (reach curves to `reach_limit` people), computed on a worker after the first
    /// frame; empty until done (see [`Model::plan`]).
    pub plan_cell: Arc<OnceLock<Plan>>,
    /// What the outlook being computed follows, for the pane to say while it waits.
    pub plan_reach: usize,
    /// Components, largest first.
    pub clusters: Vec<ClusterRow>,

    /// Indices into `list.ranked`, in ID order.
    pub by_id: Vec<u32>,
    /// Every filterable value per ranked entry, in rank order (the one filter engine).
    pub index: FilterIndex,
    /// Ranked indices sorted by contacts (most first), cases met (most first) and days left
    /// (fewest first), ties in rank order; computed at load, before the first frame.
    pub orders: [Vec<u32>; 3],
    /// Per ranked entry: the score component that contributes most ("why is this person
    /// here?").
    pub main_reason: Vec<&'static str>,
    /// The quarantine overlay's lines, formatted once: (text, is a field problem).
    pub quarantine_lines: Vec<(String, bool)>,
    /// Where flags and follow-up states are kept.
    pub workspace_path: PathBuf,
    /// Folder for exports of the current view.
    pub export_dir: PathBuf,
    /// Theme name from the configuration.
    pub theme: String,
    /// Seconds spent computing (after the load).
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
    /// today), computed on a worker after the first frame; empty until done.
    pub day: Arc<OnceLock<background::DayResult>>,
    /// What today's counts read of the list (to count again after follow-up changes).
    pub dues: Arc<Vec<crate::analysis::daywork::Due>>,
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
            pathogen: Some(self.list.window.pathogen.clone()),
            ..Default::default()
        };
        crate::analysis::chains::Windows::settle(&self.list.config, &req).map_err(|e| e.to_string())
    }

    /// Compute everything from a loaded export.
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
        // Everything but the null model now; the null model on a background thread.
        // The statistics without the null model, the list and the outlook: one report. The
        // null model on a background thread (it takes seconds at a million rows).
        let parts = Parts {
            metrics: MetricOptions {
                null_replicates: 0,
                ..Default::default()
            },
            rank: Some(rank.clone()),
            plan: None,
            states: states.to_vec(),
        };
        let plan_options = PlanOptions {
            max_reach: dash.reach_limit.min(d.people()).max(1),
            repeats: dash.reach_repeats.max(1),
            ..Default::default()
        };
        let Report {
            d,
            summary,
            stats,
            list,
            ..
        } = Report::build(d, parts)?;
        let lap = |what: &str| crate::report::stage_lap("model", what, t);
        lap("report");
        let list = list.expect("ranking asked for");
        let d = Arc::new(d);
        let id_rank = Arc::new(crate::metrics::reach::id_ranks(&d.ids));
        lap("ID order");
        let mut rank_pos = vec![u32::MAX; d.people()];
        for (i, r) in list.ranked.iter().enumerate() {
            rank_pos[r.node as usize] = i as u32;
        }
        let orders = sorted_orders(&list.ranked);
        lap("orders");
        let by_id = in_id_order(&list.ranked, &id_rank);
        lap("by_id");
        // Already computed with the statistics.
        let whole =
            ScopeStats::from_parts("whole network".into(), &stats.degree, &stats.neighbours);
        let clusters = cluster_rows(&d, &stats);
        lap("clusters");
        let index = FilterIndex::build(&d, &stats, &list.ranked, &followup_map(states));
        lap("index");
        let main_reason = main_reasons(&list.ranked, &list.preset.1);
        lap("main_reason");
        let quarantine_lines = quarantine_lines(&d.ledger);
        lap("quarantine");
        // The day's work's input too, before the workers start: with them running it took
        // twice as long.
        let input = DayInput::without_names(&stats, &list.ranked);
        let dues = Arc::new(input.dues.clone());
        lap("day's work input");
        // The workers start after the first frame's parts, so as not to share the cores with
        // them.
        let null = background_null_model(&d, &stats.degrees);
        let plan_reach = plan_options.max_reach;
        let plan_cell = background_plan(&d, &list, &stats, plan_options, &id_rank);
        let (input_hashes, day) =
            background::day_work(&d, input, (&plan_cell, &null), workspace_path.clone(), work);
        Ok(Model {
            quarantine_lines,
            index,
            orders,
            main_reason,
            by_id,
            summary,
            whole,
            list,
            rank_pos,
            plan_cell,
            plan_reach,
            clusters,
            workspace_path,
            export_dir,
            theme: dash.theme.clone(),
            compute_seconds: t.elapsed().as_secs_f64(),
            null,
            input_hashes,
            chain_people: OnceLock::new(),
            day,
            dues,
            stats,
            d,
        })
    }

    /// Wait until the background work is done (tests and benchmarks).
    pub fn wait_background(&self) {
        while self.null.get().is_none()
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

    /// The ranked entry of a person, if ranked.
    pub fn ranked(&self, node: u32) -> Option<&Ranked> {
        self.rank_pos
            .get(node as usize)
            .filter(|&&p| p != u32::MAX)
            .map(|&p| &self.list.ranked[p as usize])
    }

    /// The strategies of the outlook, in report order (none until it is computed).
    pub fn strategies(&self) -> impl Iterator<Item = Strategy> + '_ {
        self.plan()
            .into_iter()
            .flat_map(|p| p.strategies.iter().map(|s| s.strategy))
    }
}

/// The list sorted by contacts, cases met and days left (ties in rank order). Each is an
/// unstable sort of (key, rank position) pairs, which are all distinct, so it gives the stable
/// order; the three run on both cores.
fn sorted_orders(ranked: &[Ranked]) -> [Vec<u32>; 3] {
    let by = |key: &(dyn Fn(&Ranked) -> u64 + Sync)| {
        let mut v: Vec<(u64, u32)> = ranked
            .par_iter()
            .enumerate()
            .map(|(i, r)| (key(r), i as u32))
            .collect();
        v.par_sort_unstable();
        v.into_iter().map(|(_, i)| i).collect::<Vec<u32>>()
    };
    // Descending as ascending integers: the complement of `total_cmp`'s order.
    let desc = |x: f64| {
        let b = x.to_bits();
        !(if b >> 63 == 1 { !b } else { b | 1 << 63 })
    };
    let ((by_degree, by_cases), by_days) = rayon::join(
        || {
            rayon::join(
                || by(&|r| u64::from(u32::MAX - r.degree)),
                || by(&|r| desc(r.raw[1])),
            )
        },
        || by(&|r| (i64::from(r.days_left.unwrap_or(i32::MAX)) - i64::from(i32::MIN)) as u64),
    );
    [by_degree, by_cases, by_days]
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

/// Indices into the ranked list in ID order (`id_rank`: each person's place in ID order).
fn in_id_order(ranked: &[Ranked], id_rank: &[u32]) -> Vec<u32> {
    let mut by_id = vec![u32::MAX; id_rank.len()];
    for (i, r) in ranked.iter().enumerate() {
        by_id[id_rank[r.node as usize] as usize] = i as u32;
    }
    by_id.retain(|&i| i != u32::MAX);
    by_id
}

/// Per ranked entry: the score component that contributes most (the last of equal ones, as
/// `Iterator::max_by` picks), without building every part.
fn main_reasons(ranked: &[Ranked], preset: &Preset) -> Vec<&'static str> {
    let scale = COMPONENTS.map(|name| {
        let weight = preset.weights.get(name).copied().unwrap_or(0.0);
        (cap(name, preset), weight)
    });
    let mut out = Vec::new();
    ranked
        .par_iter()
        .map(|r| {
            let mut best: Option<(usize, f64)> = None;
            for (i, (&(cap, w), raw)) in scale.iter().zip(r.raw).enumerate() {
                let c = scale_by(cap, raw) * w;
                if best.is_none_or(|(_, b)| c.total_cmp(&b).is_ge()) {
                    best = Some((i, c));
                }
            }
            best.map_or("", |(i, _)| COMPONENTS[i])
        })
        .collect_into_vec(&mut out);
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    fn entry(i: usize, degree: u32, cases: f64, days_left: Option<i32>, raw: [f64; 9]) -> Ranked {
        let mut raw = raw;
        raw[1] = cases;
        Ranked {
            node: i as u32,
            score: 0.0,
            raw,
            degree,
            last_exposure: None,
            window_end: None,
            days_left,
            overdue: false,
            high_degree: false,
            bridge: false,
        }
    }

    proptest! {
        /// The three column orders equal the plain stable sorts (ties in rank order).
        #[test]
        fn orders_are_the_stable_sorts(
            v in proptest::collection::vec((0u32..5, 0u32..4, proptest::option::of(-3i32..3)), 0..200)
        ) {
            let ranked: Vec<Ranked> = v
                .iter()
                .enumerate()
                .map(|(i, &(k, c, d))| entry(i, k, f64::from(c), d, [0.0; 9]))
                .collect();
            let base: Vec<u32> = (0..ranked.len() as u32).collect();
            let mut by_degree = base.clone();
            by_degree.sort_by_key(|&i| std::cmp::Reverse(ranked[i as usize].degree));
            let mut by_cases = base.clone();
            by_cases.sort_by(|&a, &b| ranked[b as usize].raw[1].total_cmp(&ranked[a as usize].raw[1]));
            let mut by_days = base;
            by_days.sort_by_key(|&i| ranked[i as usize].days_left.unwrap_or(i32::MAX));
            prop_assert_eq!(sorted_orders(&ranked), [by_degree, by_cases, by_days]);
        }

        /// The main reason is the component `Ranked::parts` gives the largest contribution
        /// (the last of equal ones, as `max_by` picks).
        #[test]
        fn main_reason_is_the_largest_part(
            raws in proptest::collection::vec(proptest::array::uniform9(0u8..4), 1..50)
        ) {
            let config = crate::analysis::priority::PriorityConfig::load(None).unwrap();
            let preset = config.preset("balanced").unwrap();
            let ranked: Vec<Ranked> = raws
                .iter()
                .enumerate()
                .map(|(i, r)| {
                    let raw = r.map(|x| f64::from(x) / 2.0);
                    entry(i, 1, raw[1], None, raw)
                })
                .collect();
            let want: Vec<&str> = ranked
                .iter()
                .map(|r| {
                    r.parts(preset)
                        .into_iter()
                        .max_by(|a, b| a.contribution.total_cmp(&b.contribution))
                        .map(|p| p.name)
                        .unwrap_or("")
                })
                .collect();
            prop_assert_eq!(main_reasons(&ranked, preset), want);
        }
    }
}
