//! The follow-up list: every person scored (see `priority` for the components and presets),
//! sorted, and kept or left out by the one filter engine (`filters`).
//!
//! [`RankRequest`] is what the user chose (preset, window, filters, by name); [`rank_list`]
//! turns it into a [`RankedList`] that carries the settings it was made with, so that every
//! report and export of the list can say how it was made.

use std::collections::HashMap;
use std::path::PathBuf;

use crate::analysis::filters::{FilterIndex, Filters};
use crate::analysis::priority::{
    hub_threshold, scaled, Pathogen, Preset, PriorityConfig, Ranked, COMPONENTS,
};
use crate::analysis::stats::NetworkStats;
use crate::dataset::Dataset;
use crate::error::{Error, Result};
use crate::ingest::reconcile::NO_DATE;
use crate::workspace::PersonState;

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
    /// The people kept, best first.
    pub ranked: Vec<Ranked>,
    /// Preset name and weights.
    pub preset: (String, Preset),
    /// The monitoring window.
    pub window: Window,
    /// The filters applied.
    pub filters: Filters,
    /// The priority settings used.
    pub config: PriorityConfig,
}

/// The preset and the window a request names, checked (an unknown name lists the known ones).
pub fn settings(req: &RankRequest) -> Result<(PriorityConfig, (String, Preset), Window)> {
    let config = PriorityConfig::load(req.priority_config.as_deref())?;
    let preset_name = req.preset.clone().unwrap_or_else(|| config.preset.clone());
    let preset = config.preset(&preset_name)?.clone();
    let pathogen_name = req
        .pathogen
        .clone()
        .unwrap_or_else(|| config.pathogen.clone());
    let Pathogen { days, source } = config.pathogen(&pathogen_name)?.clone();
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
    (config, preset, window): (PriorityConfig, (String, Preset), Window),
) -> Result<RankedList> {
    let followup = followup_map(states);
    let mut filters = req.filters.clone();
    if let Some(id) = &req.cluster_of {
        let node = d
            .ids
            .get(id.trim())
            .ok_or_else(|| Error::Usage(format!("no person with ID \"{id}\"")))?;
        filters.cluster = Some(stats.components.0[node as usize]);
    }
    let mut ranked = rank(d, stats, &config, &preset.1, window.days, &followup);
    if !filters.is_empty() {
        let index = FilterIndex::build(d, stats, &ranked, &followup);
        let keep = index.apply(&filters, d)?;
        ranked = keep.iter().map(|&i| ranked[i as usize].clone()).collect();
    }
    Ok(RankedList {
        ranked,
        preset,
        window,
        filters,
        config,
    })
}

/// Per-person inputs of the score that do not depend on the person's own contacts.
struct Context<'a> {
    d: &'a Dataset,
    stats: &'a NetworkStats,
    preset: &'a Preset,
    window_days: u32,
    followup: &'a HashMap<String, String>,
    is_case: Vec<bool>,
    bridge: Vec<bool>,
    setting_weight: Vec<f64>,
    hub: (f64, bool),
}

fn attr_is(d: &Dataset, field: &str, node: u32, words: &[&str]) -> bool {
    d.attrs
        .get(field, node)
        .is_some_and(|v| words.iter().any(|w| v.trim().eq_ignore_ascii_case(w)))
}

impl Context<'_> {
    /// True when the follow-up state (workspace first, then the export) is one of `words`.
    fn followup_is(&self, node: u32, words: &[&str]) -> bool {
        match self.followup.get(self.d.ids.name(node)) {
            Some(v) => words.iter().any(|w| v.eq_ignore_ascii_case(w)),
            None => attr_is(self.d, "followup_status", node, words),
        }
    }

    /// One person's entry on the list.
    fn rank_one(&self, i: usize) -> Ranked {
        let (d, stats, node) = (self.d, self.stats, i as u32);
        let (nb, es) = (d.graph.neighbors_slice(node), d.graph.edges_slice(node));
        let mut cases = 0u32;
        let (mut last, mut minutes, mut sw) = (NO_DATE, 0.0f64, 0.0f64);
        for (&j, &e) in nb.iter().zip(es) {
            let e = e as usize;
            cases += u32::from(self.is_case[j as usize]);
            let day = if d.edges.last[e] != NO_DATE {
                d.edges.last[e]
            } else {
                d.edges.first[e]
            };
            last = last.max(day);
            if !d.edges.minutes[e].is_nan() {
                minutes += d.edges.minutes[e];
            }
            for &c in d.edges.settings(e) {
                sw = sw.max(self.setting_weight[c as usize - 1]);
            }
        }
        let last = (last != NO_DATE).then_some(last);
        let window_end = last.map(|l| l + self.window_days as i32);
        let days_left = window_end.map(|e| e - d.as_of);
        let inside = days_left.is_some_and(|x| x >= 0);
        let completed = self.followup_is(node, &["completed", "complete"]);
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
        ];
        let w = |c: &str| self.preset.weights.get(c).copied().unwrap_or(0.0);
        let score = COMPONENTS
            .iter()
            .zip(raw)
            .map(|(&name, r)| scaled(name, r, self.preset) * w(name))
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
            overdue: days_left.is_some_and(|x| x < 0) && !completed,
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
) -> Vec<Ranked> {
    let n = d.people();
    let mut bridge = vec![false; n];
    for &b in &stats.bridges {
        bridge[b as usize] = true;
    }
    let other = config.settings.get("other").copied().unwrap_or(0.5);
    let setting_weight = d
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
    let ctx = Context {
        d,
        stats,
        preset,
        window_days,
        followup,
        is_case: (0..n as u32)
            .map(|i| attr_is(d, "role", i, &["case"]))
            .collect(),
        bridge,
        setting_weight,
        hub: hub_threshold(&config.hub, stats),
    };
    let mut out = on_all_cores(n, |i| ctx.rank_one(i));
    // The key is total (IDs are unique), so an unstable sort gives the same order.
    out.sort_unstable_by(|a, b| {
        b.score
            .total_cmp(&a.score)
            .then_with(|| b.degree.cmp(&a.degree))
            .then_with(|| d.ids.name(a.node).cmp(d.ids.name(b.node)))
    });
    out
}

/// `f(0..n)` on all cores, in order (people are independent).
fn on_all_cores<T: Send>(n: usize, f: impl Fn(usize) -> T + Sync) -> Vec<T> {
    let threads = std::thread::available_parallelism()
        .map_or(1, |t| t.get())
        .clamp(1, 8);
    let chunk = n.div_ceil(threads).max(1);
    std::thread::scope(|sc| {
        let handles: Vec<_> = (0..threads)
            .map(|t| {
                let f = &f;
                sc.spawn(move || {
                    (t * chunk..((t + 1) * chunk).min(n))
                        .map(f)
                        .collect::<Vec<_>>()
                })
            })
            .collect();
        handles
            .into_iter()
            .flat_map(|h| h.join().unwrap_or_else(|e| std::panic::resume_unwind(e)))
            .collect()
    })
}
