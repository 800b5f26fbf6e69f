//! The follow-up list: every person scored (see `priority` for the components and presets),
//! sorted, and kept or left out by the one filter engine (`filters`).
//!
//! [`RankRequest`] is what the user chose (preset, window, filters, by name); [`rank_list`]
//! turns it into a [`RankedList`] that carries the settings it was made with, so that every
//! report and export of the list can say how it was made.

use std::collections::HashMap;
use std::path::PathBuf;

use crate::analysis::chains::{self, ChainRequest, Windows};
use crate::analysis::filters::{FilterIndex, Filters};
use crate::analysis::priority::{
    cap, hub_threshold, scale_by, Pathogen, Preset, PriorityConfig, Ranked, COMPONENTS,
};
use crate::analysis::stats::NetworkStats;
use crate::dataset::Dataset;
use crate::error::{Error, Result};
use crate::ingest::reconcile::NO_DATE;
use crate::sort::by_key_then_name;
use crate::workspace::PersonState;
use rayon::prelude::*;

/// What the user chose for a list.
#[derive(Debug, Clone, Default)]
pub struct RankRequest {
    /// Preset name (default: the configuration's).
    pub preset: Option<String>,
    /// Monitoring-window preset name (default: the configuration's).
    pub pathogen: Option<String>,
    /// Window length overriding the pathogen's.
    pub window_days: Option<u32>,
    /// Priority settings laid over the shipped ones.
    pub priority_config: Option<PathBuf>,
    /// Who to keep.
    pub filters: Filters,
    /// Keep only the cluster of this person (resolved into `filters.cluster`).
    pub cluster_of: Option<String>,
    /// Order only the first `top` people kept (None: order everyone). The counts of the list
    /// (`people`, `overdue`) still cover everyone kept.
    pub top: Option<usize>,
}

/// The monitoring window in force.
#[derive(Debug, Clone, PartialEq)]
pub struct Window {
    /// Pathogen preset name.
    pub pathogen: String,
    /// Length in days.
    pub days: u32,
    /// Where the figure comes from.
    pub source: String,
}

/// A ranked list with the settings that produced it.
pub struct RankedList {
    /// The people kept, best first (only the first `top` when the request set it).
    pub ranked: Vec<Ranked>,
    /// How many people the filters kept (`ranked.len()` unless the request set `top`).
    pub people: usize,
    /// How many of them are overdue.
    pub overdue: usize,
    /// Preset name and weights.
    pub preset: (String, Preset),
    /// The monitoring window.
    pub window: Window,
    /// The filters applied.
    pub filters: Filters,
    /// The priority settings used.
    pub config: PriorityConfig,
}

/// The settings a request names: the priority configuration, the preset (name, weights) and
/// the monitoring window.
pub type Settings = (PriorityConfig, (String, Preset), Window);

/// The preset and the window a request names, checked (an unknown name lists the known ones).
pub fn settings(req: &RankRequest) -> Result<Settings> {
    let config = PriorityConfig::load(req.priority_config.as_deref())?;
    let preset_name = req.preset.clone().unwrap_or_else(|| config.preset.clone());
    let preset = config.preset(&preset_name)?.clone();
    let pathogen_name = req
        .pathogen
        .clone()
        .unwrap_or_else(|| config.pathogen.clone());
    let Pathogen { days, source, .. } = config.pathogen(&pathogen_name)?.clone();
    let window = match req.window_days {
        Some(d) => Window {
            pathogen: pathogen_name,
            days: d,
            source: "set with --window-days".into(),
        },
        None => Window {
            pathogen: pathogen_name,
            days,
            source,
        },
    };
    Ok((config, (preset_name, preset), window))
}

/// Workspace follow-up states by person ID (they take precedence over the export's column).
pub fn followup_map(states: &[PersonState]) -> HashMap<String, String> {
    states
        .iter()
        .filter_map(|s| s.followup.clone().map(|f| (s.person_id.clone(), f)))
        .collect()
}

/// Rank everyone, then keep whom the filters keep.
pub fn rank_list(
    d: &Dataset,
    stats: &NetworkStats,
    req: &RankRequest,
    states: &[PersonState],
) -> Result<RankedList> {
    rank_settled(d, stats, req, states, settings(req)?)
}

/// The same, with the settings of `req` already loaded and checked (see [`settings`]).
pub fn rank_settled(
    d: &Dataset,
    stats: &NetworkStats,
    req: &RankRequest,
    states: &[PersonState],
    (config, preset, window): Settings,
) -> Result<RankedList> {
    let followup = followup_map(states);
    let mut filters = req.filters.clone();
    if let Some(id) = &req.cluster_of {
        filters.cluster = Some(stats.components.0[cluster_person(d, id)? as usize]);
    }
    let chain = chain_values(d, &config, &preset.1, &window.pathogen)?;
    let ctx = Context::new(d, stats, &config, &preset.1, window.days, &followup, chain);
    let (ranked, people, overdue) = if filters.is_empty() && req.top.is_some() {
        // Keys and counts in one pass; the entries are then built again for the people shown
        // only, straight into their places.
        let (mut keys, mut late) = (Vec::new(), Vec::<bool>::new());
        (0..d.people())
            .into_par_iter()
            .map(|i| {
                let r = ctx.rank_one(i);
                (key(&r), r.overdue)
            })
            .unzip_into_vecs(&mut keys, &mut late);
        let overdue = late.par_iter().filter(|&&x| x).count();
        let people = keys.len();
        let order = by_key_then_name(keys, req.top, |i| d.ids.name(i));
        let ranked = on_all_cores(order.len(), |i| ctx.rank_one(order[i] as usize));
        (ranked, people, overdue)
    } else {
        let out = on_all_cores(d.people(), |i| ctx.rank_one(i));
        // `out` is in node order, so the positions the filters keep are nodes.
        let keep = match filters.is_empty() {
            true => None,
            false => Some(FilterIndex::build(d, stats, &out, &followup).apply(&filters, d)?),
        };
        let (keys, people, overdue) = match keep {
            None => (
                out.par_iter().map(key).collect(),
                out.len(),
                out.par_iter().filter(|r| r.overdue).count(),
            ),
            Some(k) => (
                k.par_iter().map(|&i| key(&out[i as usize])).collect(),
                k.len(),
                k.iter().filter(|&&i| out[i as usize].overdue).count(),
            ),
        };
        let order = by_key_then_name(keys, req.top, |i| d.ids.name(i));
        (gather(&out, &order), people, overdue)
    };
    Ok(RankedList {
        ranked,
        people,
        overdue,
        preset,
        window,
        filters,
        config,
    })
}

/// What can stop [`rank_settled`] besides the settings, checked without ranking anyone (the
/// dashboard checks it before its first frame and ranks on a worker): the person named for
/// the cluster, and the chains' windows when the preset weighs chains.
pub fn check(d: &Dataset, req: &RankRequest, (config, preset, window): &Settings) -> Result<()> {
    if let Some(id) = &req.cluster_of {
        cluster_person(d, id)?;
    }
    chain_windows(config, &preset.1, &window.pathogen).map(|_| ())
}

/// The person whose cluster a request names.
fn cluster_person(d: &Dataset, id: &str) -> Result<u32> {
    d.ids
        .get(id.trim())
        .ok_or_else(|| Error::Usage(format!("no person with ID \"{id}\"")))
}

/// The chains' windows, when the preset weighs chains.
fn chain_windows(
    config: &PriorityConfig,
    preset: &Preset,
    pathogen: &str,
) -> Result<Option<Windows>> {
    if preset.weights.get("chain").copied().unwrap_or(0.0) <= 0.0 {
        return Ok(None);
    }
    let req = ChainRequest {
        pathogen: Some(pathogen.to_string()),
        ..ChainRequest::default()
    };
    Windows::settle(config, &req).map(Some)
}

/// The "chain" component of everyone (1 when a chain of dated exposures leads to them from a
/// case), computed only when the preset weighs it.
fn chain_values(
    d: &Dataset,
    config: &PriorityConfig,
    preset: &Preset,
    pathogen: &str,
) -> Result<Option<Vec<f64>>> {
    Ok(chain_windows(config, preset, pathogen)?.map(|w| chains::chain_component(d, &w)))
}

/// Per-person inputs of the score that do not depend on the person's own contacts.
struct Context<'a> {
    d: &'a Dataset,
    stats: &'a NetworkStats,
    window_days: u32,
    followup: &'a HashMap<String, String>,
    is_case: Vec<bool>,
    bridge: Vec<bool>,
    hub: (f64, bool),
    /// Per component, in [`COMPONENTS`] order: its cap (None: already 0..1) and weight, looked
    /// up once rather than by name for every person.
    scale: [(Option<f64>, f64); 9],
    /// The people table's `followup_status` column, if any.
    followup_column: Option<usize>,
    /// What each pair adds to its two people's scores, gathered once (one read per contact
    /// instead of one per array).
    edge_info: Vec<EdgeInfo>,
    /// The chain component per person (None: not weighed, so 0).
    chain: Option<Vec<f64>>,
}

/// One pair's part in the score of each of its people.
#[derive(Clone, Copy)]
struct EdgeInfo {
    /// Last exposure date, else the first, else NO_DATE.
    day: i32,
    /// Minutes (NaN when no row gave a duration).
    minutes: f64,
    /// Highest weight among the pair's settings (0 when it has none).
    setting_weight: f64,
}

fn edge_info(d: &Dataset, setting_weight: &[f64]) -> Vec<EdgeInfo> {
    let e = &d.edges;
    on_all_cores(e.len(), |i| EdgeInfo {
        day: if e.last[i] != NO_DATE {
            e.last[i]
        } else {
            e.first[i]
        },
        minutes: e.minutes[i],
        setting_weight: e
            .settings(i)
            .iter()
            .fold(0.0f64, |sw, &c| sw.max(setting_weight[c as usize - 1])),
    })
}

/// True when person `i`'s value in attribute column `c` is one of `words` (case and
/// surrounding blanks ignored).
fn attr_is(d: &Dataset, c: usize, i: usize, words: &[&str]) -> bool {
    d.attrs.values[c]
        .get(i)
        .is_some_and(|v| words.iter().any(|w| v.trim().eq_ignore_ascii_case(w)))
}

/// [`attr_is`] of every person for the attribute `field` (all false when it is absent).
fn attr_flags(d: &Dataset, field: &str, words: &[&str]) -> Vec<bool> {
    let n = d.people();
    match d.attrs.column(field) {
        None => vec![false; n],
        Some(c) => on_all_cores(n, |i| attr_is(d, c, i, words)),
    }
}

impl Context<'_> {
    /// True when the follow-up state (workspace first, then the export) is one of `words`.
    fn followup_is(&self, node: u32, words: &[&str]) -> bool {
        match self.followup.get(self.d.ids.name(node)) {
            Some(v) => words.iter().any(|w| v.eq_ignore_ascii_case(w)),
            None => self
                .followup_column
                .is_some_and(|c| attr_is(self.d, c, node as usize, words)),
        }
    }

    /// One person's entry on the list.
    fn rank_one(&self, i: usize) -> Ranked {
        let (d, stats, node) = (self.d, self.stats, i as u32);
        let (nb, es) = (d.graph.neighbors_slice(node), d.graph.edges_slice(node));
        let mut cases = 0u32;
        let (mut last, mut minutes, mut sw) = (NO_DATE, 0.0f64, 0.0f64);
        for (&j, &e) in nb.iter().zip(es) {
            let x = &self.edge_info[e as usize];
            cases += u32::from(self.is_case[j as usize]);
            last = last.max(x.day);
            if !x.minutes.is_nan() {
                minutes += x.minutes;
            }
            sw = sw.max(x.setting_weight);
        }
        let last = (last != NO_DATE).then_some(last);
        let window_end = last.map(|l| l + self.window_days as i32);
        let days_left = window_end.map(|e| e - d.as_of);
        let inside = days_left.is_some_and(|x| x >= 0);
        let window = match (last, inside) {
            (Some(l), true) if self.window_days > 0 => {
                (f64::from(d.as_of - l) / f64::from(self.window_days)).clamp(0.0, 1.0)
            }
            _ => 0.0,
        };
        let degree = stats.degrees[i];
        let contacts_mean = if degree > 0 {
            stats.neighbours.neighbour_degree_sum[i] as f64 / f64::from(degree)
        } else {
            0.0
        };
        let raw = [
            f64::from(degree),
            f64::from(cases),
            window,
            sw,
            minutes,
            f64::from(u8::from(self.bridge[i])),
            f64::from(stats.cores[i]),
            contacts_mean,
            self.chain.as_ref().map_or(0.0, |c| c[i]),
        ];
        let score = self
            .scale
            .iter()
            .zip(raw)
            .map(|(&(cap, w), r)| scale_by(cap, r) * w)
            .sum();
        let (threshold, strict) = self.hub;
        let k = f64::from(degree);
        Ranked {
            node,
            score,
            raw,
            degree,
            last_exposure: last,
            window_end,
            days_left,
            // The follow-up state is looked up only for those whose window is over.
            overdue: days_left.is_some_and(|x| x < 0)
                && !self.followup_is(node, &["completed", "complete"]),
            high_degree: if strict {
                k > threshold
            } else {
                k >= threshold
            },
            bridge: self.bridge[i],
        }
    }
}

/// Score every person and sort: score, then more contacts, then ID. `followup` holds the
/// workspace's states by person ID (a completed follow-up is never overdue).
pub fn rank(
    d: &Dataset,
    stats: &NetworkStats,
    config: &PriorityConfig,
    preset: &Preset,
    window_days: u32,
    followup: &HashMap<String, String>,
) -> Result<Vec<Ranked>> {
    let chain = chain_values(d, config, preset, &config.pathogen)?;
    let ctx = Context::new(d, stats, config, preset, window_days, followup, chain);
    let out = on_all_cores(d.people(), |i| ctx.rank_one(i));
    let order = by_key_then_name(out.par_iter().map(key).collect(), None, |i| d.ids.name(i));
    Ok(gather(&out, &order))
}

impl<'a> Context<'a> {
    fn new(
        d: &'a Dataset,
        stats: &'a NetworkStats,
        config: &PriorityConfig,
        preset: &Preset,
        window_days: u32,
        followup: &'a HashMap<String, String>,
        chain: Option<Vec<f64>>,
    ) -> Context<'a> {
        let n = d.people();
        let mut bridge = vec![false; n];
        for &b in &stats.bridges {
            bridge[b as usize] = true;
        }
        let other = config.settings.get("other").copied().unwrap_or(0.5);
        let setting_weight: Vec<f64> = d
            .settings
            .iter()
            .map(|s| {
                config
                    .settings
                    .iter()
                    .find(|(k, _)| k.eq_ignore_ascii_case(s))
                    .map_or(other, |(_, w)| *w)
            })
            .collect();
        Context {
            d,
            stats,
            window_days,
            followup,
            is_case: attr_flags(d, "role", &["case"]),
            bridge,
            edge_info: edge_info(d, &setting_weight),
            hub: hub_threshold(&config.hub, stats),
            scale: COMPONENTS.map(|name| {
                let weight = preset.weights.get(name).copied().unwrap_or(0.0);
                (cap(name, preset), weight)
            }),
            followup_column: d.attrs.column("followup_status"),
            chain,
        }
    }
}

/// The sort key of an entry: (score descending, contacts descending) as integers, then node.
fn key(r: &Ranked) -> (u64, u32, u32) {
    // `total_cmp` order as unsigned integers, reversed for "higher first".
    let b = r.score.to_bits();
    let desc = !(if b >> 63 == 1 { !b } else { b | 1 << 63 });
    (desc, u32::MAX - r.degree, r.node)
}

/// The entries at `order`, in that order.
fn gather(out: &[Ranked], order: &[u32]) -> Vec<Ranked> {
    let mut v = Vec::new();
    order
        .par_iter()
        .map(|&i| out[i as usize].clone())
        .collect_into_vec(&mut v);
    v
}

/// `f(0..n)` on all cores, in order (people are independent), written in place.
fn on_all_cores<T: Send>(n: usize, f: impl Fn(usize) -> T + Sync + Send) -> Vec<T> {
    let mut v = Vec::new();
    (0..n).into_par_iter().map(f).collect_into_vec(&mut v);
    v
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    fn entry(node: u32, score: f64, degree: u32) -> Ranked {
        Ranked {
            node,
            score,
            raw: [0.0; 9],
            degree,
            last_exposure: None,
            window_end: None,
            days_left: None,
            overdue: false,
            high_degree: false,
            bridge: false,
        }
    }

    proptest! {
        /// The integer keys give the order of the plain comparison (score, then contacts, then
        /// ID), ties and signed zeros included.
        #[test]
        fn same_order_as_the_comparison(v in proptest::collection::vec((-3i32..4, 0u32..4), 0..300)) {
            let out: Vec<Ranked> = v
                .iter()
                .enumerate()
                .map(|(i, &(s, k))| entry(i as u32, if s == 0 { -0.0 } else { f64::from(s) / 2.0 }, k))
                .collect();
            let names: Vec<String> = (0..out.len()).map(|i| format!("N{}", (i * 7919) % 1000)).collect();
            let name = |i: u32| names[i as usize].as_str();
            let mut want: Vec<u32> = (0..out.len() as u32).collect();
            want.sort_by(|&a, &b| {
                let (x, y) = (&out[a as usize], &out[b as usize]);
                y.score
                    .total_cmp(&x.score)
                    .then_with(|| y.degree.cmp(&x.degree))
                    .then_with(|| name(a).cmp(name(b)))
            });
            prop_assert_eq!(by_key_then_name(out.iter().map(key).collect(), None, name), want);
        }

        /// Selecting the first `top` gives the first `top` of the whole order, ties at the cut
        /// included (scores from few values, so the cut often falls inside a run of ties).
        #[test]
        fn top_is_the_head_of_the_whole_order(
            v in proptest::collection::vec((0i32..3, 0u32..3), 0..200),
            top in 1usize..220,
        ) {
            let out: Vec<Ranked> = v
                .iter()
                .enumerate()
                .map(|(i, &(s, k))| entry(i as u32, f64::from(s), k))
                .collect();
            let names: Vec<String> = (0..out.len()).map(|i| format!("P{}-{i}", (i * 31) % 97)).collect();
            let name = |i: u32| names[i as usize].as_str();
            let whole = by_key_then_name(out.iter().map(key).collect(), None, name);
            let head = by_key_then_name(out.iter().map(key).collect(), Some(top), name);
            prop_assert_eq!(&head[..], &whole[..top.min(whole.len())]);
        }
    }
}
