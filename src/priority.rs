//! Ranking people for follow-up: a transparent score built from named components, each shown
//! with its contribution; monitoring windows from pathogen presets; the derived "high-degree"
//! flag. Pure functions over a loaded dataset and its statistics.
//!
//! Ties are broken by degree (more contacts first), then by person ID (alphabetical), so the
//! order never depends on the order of input rows.

use std::collections::BTreeMap;
use std::path::Path;

use serde::{Deserialize, Serialize};

use crate::error::{Error, Result};
use crate::ingest::reconcile::NO_DATE;
use crate::ingest::Dataset;
use crate::metrics::network::NetworkStats;

/// The default priority settings, as shipped in `config/priority.toml`.
pub const DEFAULT_TOML: &str = include_str!("../config/priority.toml");

/// Names of the score components, in display order.
pub const COMPONENTS: [&str; 8] = [
    "degree",
    "cases",
    "window",
    "setting",
    "minutes",
    "bridge",
    "core",
    "contacts_mean",
];

/// Priority settings.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct PriorityConfig {
    /// Preset used by default.
    pub preset: String,
    /// Window preset used by default.
    pub pathogen: String,
    /// Presets by name.
    pub presets: BTreeMap<String, Preset>,
    /// Setting label -> weight (`other` for unlisted settings).
    pub settings: BTreeMap<String, f64>,
    /// High-degree rule.
    pub hub: HubRule,
    /// Monitoring windows by pathogen.
    pub pathogens: BTreeMap<String, Pathogen>,
    /// Export settings.
    pub export: ExportConfig,
}

/// Export settings.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ExportConfig {
    /// Columns dropped from pseudonymised exports.
    pub direct_identifiers: Vec<String>,
}

/// Weights and caps of one preset.
#[derive(Debug, Clone, Deserialize, Serialize)]
#[serde(deny_unknown_fields)]
pub struct Preset {
    /// Component -> weight.
    pub weights: BTreeMap<String, f64>,
    /// Component -> cap (raw values are scaled by value / cap, at most 1).
    pub caps: BTreeMap<String, f64>,
}

/// How "high-degree" is decided.
#[derive(Debug, Clone, Deserialize, Serialize)]
#[serde(deny_unknown_fields)]
pub struct HubRule {
    /// "edge_end_mean", "fixed" or "top_percent".
    pub rule: String,
    /// The number for "fixed" and "top_percent".
    pub value: f64,
}

/// A monitoring window.
#[derive(Debug, Clone, Deserialize, Serialize)]
#[serde(deny_unknown_fields)]
pub struct Pathogen {
    /// Days from the last exposure to the end of monitoring.
    pub days: u32,
    /// Where the figure comes from.
    pub source: String,
}

impl PriorityConfig {
    /// The shipped defaults with an optional user file laid over them.
    pub fn load(user: Option<&Path>) -> Result<PriorityConfig> {
        let t = crate::config::layered(DEFAULT_TOML, "priority settings", user)?;
        let c: PriorityConfig = toml::Value::Table(t)
            .try_into()
            .map_err(|e| Error::Config(format!("priority settings: {e}")))?;
        for (name, p) in &c.presets {
            for k in p.weights.keys().chain(p.caps.keys()) {
                if !COMPONENTS.contains(&k.as_str()) {
                    return Err(Error::Config(format!(
                        "preset \"{name}\": unknown component `{k}`; known: {}",
                        COMPONENTS.join(", ")
                    )));
                }
            }
        }
        if !matches!(
            c.hub.rule.as_str(),
            "edge_end_mean" | "fixed" | "top_percent"
        ) {
            return Err(Error::Config(format!(
                "[hub] rule = \"{}\": use edge_end_mean, fixed or top_percent",
                c.hub.rule
            )));
        }
        Ok(c)
    }

    /// A preset by name, or an error listing the names.
    pub fn preset(&self, name: &str) -> Result<&Preset> {
        self.presets.get(name).ok_or_else(|| {
            Error::Usage(format!(
                "no preset \"{name}\"; presets: {}",
                self.presets.keys().cloned().collect::<Vec<_>>().join(", ")
            ))
        })
    }

    /// A pathogen window by name, or an error listing the names.
    pub fn pathogen(&self, name: &str) -> Result<&Pathogen> {
        self.pathogens.get(name).ok_or_else(|| {
            Error::Usage(format!(
                "no pathogen \"{name}\"; presets: {}",
                self.pathogens
                    .keys()
                    .cloned()
                    .collect::<Vec<_>>()
                    .join(", ")
            ))
        })
    }
}

/// One component of a person's score.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Part {
    /// Component name.
    pub name: &'static str,
    /// Raw value (contacts, cases, minutes, ...).
    pub raw: f64,
    /// Scaled to 0..1.
    pub scaled: f64,
    /// Weight in the preset.
    pub weight: f64,
    /// scaled x weight.
    pub contribution: f64,
}

/// One person on the list.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Ranked {
    /// Node index.
    pub node: u32,
    /// Total score.
    pub score: f64,
    /// Raw value of each component, in [`COMPONENTS`] order (see [`Ranked::parts`]).
    pub raw: [f64; 8],
    /// Contacts of their own.
    pub degree: u32,
    /// Last exposure day (None when no exposure is dated).
    pub last_exposure: Option<i32>,
    /// Last day of monitoring.
    pub window_end: Option<i32>,
    /// Days from the as-of date to the window end (negative: over).
    pub days_left: Option<i32>,
    /// Window over and follow-up not marked completed.
    pub overdue: bool,
    /// Derived flag: above the hub threshold.
    pub high_degree: bool,
    /// Articulation point.
    pub bridge: bool,
}

/// Scale a raw component value to 0..1 by its cap (window, setting and bridge already are).
fn scaled(name: &str, raw: f64, preset: &Preset) -> f64 {
    if matches!(name, "window" | "setting" | "bridge") {
        raw
    } else {
        (raw / preset.caps.get(name).copied().unwrap_or(1.0)).clamp(0.0, 1.0)
    }
}

impl Ranked {
    /// The score's components with their contributions under `preset` (the preset the list
    /// was ranked with), in [`COMPONENTS`] order.
    pub fn parts(&self, preset: &Preset) -> Vec<Part> {
        COMPONENTS
            .iter()
            .zip(self.raw)
            .map(|(&name, raw)| {
                let s = scaled(name, raw, preset);
                let weight = preset.weights.get(name).copied().unwrap_or(0.0);
                Part {
                    name,
                    raw,
                    scaled: s,
                    weight,
                    contribution: s * weight,
                }
            })
            .collect()
    }
}

/// Who to keep on the list.
#[derive(Debug, Clone, Default)]
pub struct Filters {
    /// People attribute (canonical name) -> required value (case-insensitive).
    pub equals: Vec<(String, String)>,
    /// Only people with an exposure in this setting.
    pub setting: Option<String>,
    /// Only people still inside their monitoring window.
    pub still_in_window: bool,
    /// Only people whose follow-up status is not reached/completed.
    pub not_reached: bool,
    /// Only people in the cluster of this person ID.
    pub cluster_of: Option<String>,
    /// Follow-up states from the workspace by person ID; they take precedence over the
    /// export's `followup_status` column.
    pub followup: std::collections::HashMap<String, String>,
}

/// The degree above which a person is flagged high-degree, and whether "above" is strict.
pub fn hub_threshold(rule: &HubRule, stats: &NetworkStats) -> (f64, bool) {
    match rule.rule.as_str() {
        "fixed" => (rule.value, false),
        "top_percent" => {
            let mut d: Vec<u32> = stats.degrees.clone();
            d.sort_unstable_by(|a, b| b.cmp(a));
            let take = ((d.len() as f64) * rule.value / 100.0).ceil() as usize;
            (
                take.checked_sub(1)
                    .and_then(|i| d.get(i))
                    .map_or(f64::INFINITY, |&k| f64::from(k)),
                false,
            )
        }
        _ => (stats.degree.edge_end_mean.unwrap_or(f64::INFINITY), true),
    }
}

/// True when the person's follow-up state (workspace first, then the export) is one of `words`.
fn followup_is(d: &Dataset, f: &Filters, node: u32, words: &[&str]) -> bool {
    match f.followup.get(d.ids.name(node)) {
        Some(v) => words.iter().any(|w| v.eq_ignore_ascii_case(w)),
        None => attr_is(d, "followup_status", node, words),
    }
}

fn attr_is(d: &Dataset, field: &str, node: u32, words: &[&str]) -> bool {
    d.attrs
        .get(field, node)
        .is_some_and(|v| words.iter().any(|w| v.trim().eq_ignore_ascii_case(w)))
}

/// Rank every person (after filters) for follow-up.
// One index walks several per-person arrays (degrees, cores, components, flags) in step.
#[allow(clippy::needless_range_loop)]
pub fn rank(
    d: &Dataset,
    stats: &NetworkStats,
    config: &PriorityConfig,
    preset: &Preset,
    window_days: u32,
    filters: &Filters,
) -> Result<Vec<Ranked>> {
    let n = d.people();
    let is_case: Vec<bool> = (0..n as u32)
        .map(|i| attr_is(d, "role", i, &["case"]))
        .collect();
    let mut bridge = vec![false; n];
    for &b in &stats.bridges {
        bridge[b as usize] = true;
    }
    let setting_weight: Vec<f64> = d
        .settings
        .iter()
        .map(|s| {
            config
                .settings
                .iter()
                .find(|(k, _)| k.eq_ignore_ascii_case(s))
                .map(|(_, w)| *w)
                .unwrap_or_else(|| config.settings.get("other").copied().unwrap_or(0.5))
        })
        .collect();
    let setting_code = match &filters.setting {
        None => None,
        Some(l) => Some(
            d.settings
                .iter()
                .position(|s| s.eq_ignore_ascii_case(l))
                .map(|i| (i + 1) as u16)
                .ok_or_else(|| {
                    Error::Usage(format!(
                        "no exposure has setting \"{l}\"; settings in this export: {}",
                        d.settings.join(", ")
                    ))
                })?,
        ),
    };
    let cluster = match &filters.cluster_of {
        None => None,
        Some(id) => {
            let node = d
                .ids
                .get(id.trim())
                .ok_or_else(|| Error::Usage(format!("no person with ID \"{id}\"")))?;
            Some(stats.components.0[node as usize])
        }
    };
    let (threshold, strict) = hub_threshold(&config.hub, stats);
    let w = |c: &str| preset.weights.get(c).copied().unwrap_or(0.0);
    let as_of = d.as_of;
    // One person's entry, or None when a filter leaves them out.
    let rank_one = |i: usize| -> Option<Ranked> {
        let node = i as u32;
        if !filters
            .equals
            .iter()
            .all(|(f, v)| attr_is(d, f, node, &[v.as_str()]))
        {
            return None;
        }
        if cluster.is_some_and(|c| stats.components.0[i] != c) {
            return None;
        }
        if filters.not_reached
            && followup_is(d, filters, node, &["reached", "completed", "complete"])
        {
            return None;
        }
        let (nb, es) = (d.graph.neighbors_slice(node), d.graph.edges_slice(node));
        let mut cases = 0u32;
        let (mut last, mut minutes, mut sw) = (NO_DATE, 0.0f64, 0.0f64);
        let mut in_setting = setting_code.is_none();
        for (&j, &e) in nb.iter().zip(es) {
            let e = e as usize;
            cases += u32::from(is_case[j as usize]);
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
                sw = sw.max(setting_weight[c as usize - 1]);
                in_setting |= Some(c) == setting_code;
            }
        }
        if !in_setting {
            return None;
        }
        let last = (last != NO_DATE).then_some(last);
        let window_end = last.map(|l| l + window_days as i32);
        let days_left = window_end.map(|e| e - as_of);
        let inside = days_left.is_some_and(|x| x >= 0);
        if filters.still_in_window && !inside {
            return None;
        }
        let completed = followup_is(d, filters, node, &["completed", "complete"]);
        let overdue = days_left.is_some_and(|x| x < 0) && !completed;
        let window = match (last, inside) {
            (Some(l), true) if window_days > 0 => {
                (f64::from(as_of - l) / f64::from(window_days)).clamp(0.0, 1.0)
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
            f64::from(u8::from(bridge[i])),
            f64::from(stats.cores[i]),
            contacts_mean,
        ];
        let score = COMPONENTS
            .iter()
            .zip(raw)
            .map(|(&name, r)| scaled(name, r, preset) * w(name))
            .sum();
        let k = f64::from(degree);
        let high_degree = if strict {
            k > threshold
        } else {
            k >= threshold
        };
        Some(Ranked {
            node,
            score,
            raw,
            degree,
            last_exposure: last,
            window_end,
            days_left,
            overdue,
            high_degree,
            bridge: bridge[i],
        })
    };
    // People are independent: rank them on all cores, then sort the whole list.
    let threads = std::thread::available_parallelism()
        .map_or(1, |t| t.get())
        .clamp(1, 8);
    let chunk = n.div_ceil(threads).max(1);
    let mut out: Vec<Ranked> = std::thread::scope(|sc| {
        let handles: Vec<_> = (0..threads)
            .map(|t| {
                let rank_one = &rank_one;
                sc.spawn(move || {
                    (t * chunk..((t + 1) * chunk).min(n))
                        .filter_map(rank_one)
                        .collect::<Vec<_>>()
                })
            })
            .collect();
        handles
            .into_iter()
            .flat_map(|h| h.join().unwrap_or_else(|e| std::panic::resume_unwind(e)))
            .collect()
    });
    // The key is total (IDs are unique), so an unstable sort gives the same order.
    out.sort_unstable_by(|a, b| {
        b.score
            .total_cmp(&a.score)
            .then_with(|| b.degree.cmp(&a.degree))
            .then_with(|| d.ids.name(a.node).cmp(d.ids.name(b.node)))
    });
    Ok(out)
}
