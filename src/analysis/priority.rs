//! The follow-up score: its named components, the presets that weigh them and the monitoring
//! windows of the pathogen presets (config/priority.toml), one person's entry with its parts,
//! and the rule behind the derived "high-degree" flag. The list itself is `ranking`.
//!
//! Ties are broken by degree (more contacts first), then by person ID (alphabetical), so the
//! order never depends on the order of input rows.

use std::collections::BTreeMap;
use std::path::Path;

use serde::{Deserialize, Serialize};

use crate::analysis::stats::NetworkStats;
use crate::error::{Error, Result};

/// The default priority settings, as shipped in `config/priority.toml`.
pub const DEFAULT_TOML: &str = include_str!("../../config/priority.toml");

/// Names of the score components, in display order.
pub const COMPONENTS: [&str; 9] = [
    "degree",
    "cases",
    "window",
    "setting",
    "minutes",
    "bridge",
    "core",
    "contacts_mean",
    "chain",
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
    /// Chains of exposures.
    pub chains: ChainConfig,
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

/// A monitoring window, and the periods that time chains of exposures.
#[derive(Debug, Clone, Deserialize, Serialize)]
#[serde(deny_unknown_fields)]
pub struct Pathogen {
    /// Days from the last exposure to the end of monitoring.
    pub days: u32,
    /// Where the figure comes from.
    pub source: String,
    /// Incubation period, shortest and longest, in days.
    #[serde(default)]
    pub incubation_days: Option<[u32; 2]>,
    /// Days a case can pass it on before and after their onset.
    #[serde(default)]
    pub infectious_days: Option<[u32; 2]>,
    /// Where the two periods come from.
    #[serde(default)]
    pub periods_source: Option<String>,
}

/// How chains of exposures are followed (`hubwatch chains`, the "chain" component).
#[derive(Debug, Clone, Deserialize, Serialize)]
#[serde(deny_unknown_fields)]
pub struct ChainConfig {
    /// Longest chain followed, in steps.
    pub generations: u16,
    /// Whether a chain may continue on the day the person was exposed.
    pub same_day: bool,
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
    pub raw: [f64; 9],
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
pub fn scaled(name: &str, raw: f64, preset: &Preset) -> f64 {
    scale_by(cap(name, preset), raw)
}

/// The cap a component's raw value is divided by; None for window, setting, bridge and chain,
/// which are already 0..1.
pub fn cap(name: &str, preset: &Preset) -> Option<f64> {
    (!matches!(name, "window" | "setting" | "bridge" | "chain"))
        .then(|| preset.caps.get(name).copied().unwrap_or(1.0))
}

/// A raw value scaled by a cap from [`cap`].
pub fn scale_by(cap: Option<f64>, raw: f64) -> f64 {
    cap.map_or(raw, |c| (raw / c).clamp(0.0, 1.0))
}

/// A mark on a person of the list, derived from the ranking.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Mark {
    /// Above the hub threshold.
    HighDegree,
    /// An articulation point.
    Bridge,
    /// Window over and follow-up not completed.
    Overdue,
}

impl Mark {
    /// The mark in words (text reports).
    pub fn word(self) -> &'static str {
        match self {
            Mark::HighDegree => "high-degree",
            Mark::Bridge => "bridge",
            Mark::Overdue => "OVERDUE",
        }
    }

    /// The mark as one letter (tight table cells; the help overlay gives the key).
    pub fn letter(self) -> char {
        match self {
            Mark::HighDegree => 'H',
            Mark::Bridge => 'B',
            Mark::Overdue => '!',
        }
    }
}

impl Ranked {
    /// The person's marks, in a fixed order.
    pub fn marks(&self) -> impl Iterator<Item = Mark> {
        [
            (self.high_degree, Mark::HighDegree),
            (self.bridge, Mark::Bridge),
            (self.overdue, Mark::Overdue),
        ]
        .into_iter()
        .filter_map(|(on, mark)| on.then_some(mark))
    }

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
