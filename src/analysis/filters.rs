//! The one filter engine of the command line (`priority`, `export`, `outlook`) and the
//! dashboard: which people of a ranked list to keep.
//!
//! [`Filters`] says what the user asked for, in words (attribute values, a setting label, a
//! cluster). [`FilterIndex`] holds, once per ranked list and in rank order, every value a filter
//! reads as a small integer, so that applying a filter is one sequential pass over arrays (the
//! dashboard applies one on every key press, at millions of people). Attribute values compare
//! trimmed and without case.

use std::collections::HashMap;

use rayon::prelude::*;

use crate::analysis::priority::Ranked;
use crate::analysis::stats::NetworkStats;
use crate::dataset::Dataset;
use crate::error::Result;
use crate::ingest::reconcile::AttrColumn;
use crate::ingest::view::setting_code;
use crate::workspace::FOLLOWUP_STATES;

/// People attributes a filter can ask for by value, in this order everywhere.
pub const FIELDS: [&str; 4] = ["role", "status", "area", "age_group"];

/// Follow-up words that count as reached (export spellings included).
const REACHED: [&str; 3] = ["reached", "completed", "complete"];

/// What to keep. The default keeps everyone.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct Filters {
    /// Required value of each field of [`FIELDS`] (case-insensitive).
    pub equals: [Option<String>; 4],
    /// Only people with an exposure in this setting (a label of the export).
    pub setting: Option<String>,
    /// Only people still inside their monitoring window.
    pub still_in_window: bool,
    /// Only people whose follow-up state is not reached or completed.
    pub not_reached: bool,
    /// Only people in this cluster (component label).
    pub cluster: Option<u32>,
}

impl Filters {
    /// True when nothing is filtered.
    pub fn is_empty(&self) -> bool {
        *self == Filters::default()
    }

    /// Set the value of a field of [`FIELDS`] by name.
    pub fn set(&mut self, field: &str, value: Option<String>) {
        if let Some(i) = FIELDS.iter().position(|&f| f == field) {
            self.equals[i] = value;
        }
    }

    /// The filters in words ("none" when empty), as every list and pane shows them.
    pub fn describe(&self) -> String {
        let mut parts: Vec<String> = FIELDS
            .iter()
            .zip(&self.equals)
            .filter_map(|(f, v)| v.as_ref().map(|v| format!("{f}={v}")))
            .collect();
        if let Some(s) = &self.setting {
            parts.push(format!("setting={s}"));
        }
        if self.still_in_window {
            parts.push("still in window".into());
        }
        if self.not_reached {
            parts.push("not reached".into());
        }
        if let Some(c) = self.cluster {
            parts.push(format!("cluster #{}", c + 1));
        }
        if parts.is_empty() {
            "none".into()
        } else {
            parts.join(", ")
        }
    }
}

/// The next value in a cycle through `values` (none -> first -> ... -> last -> none).
pub fn cycle(now: Option<&str>, values: &[String]) -> Option<String> {
    let next = match now.and_then(|v| values.iter().position(|x| x == v)) {
        None => 0,
        Some(i) => i + 1,
    };
    values.get(next).cloned()
}

/// Every filterable value of a ranked list, per entry in rank order.
#[derive(Debug, Clone, Default)]
pub struct FilterIndex {
    /// Distinct values of each field of [`FIELDS`] (one spelling each, sorted without case).
    pub values: [Vec<String>; 4],
    /// Per field, per ranked entry: index into `values` (u32::MAX: none).
    codes: [Vec<u32>; 4],
    /// Settings of each entry's exposures, as bits (setting code c is bit c - 1; codes above
    /// 64 are looked up in the graph when asked for).
    settings: Vec<u64>,
    /// Component label.
    pub component: Vec<u32>,
    /// Days left >= 0.
    in_window: Vec<bool>,
    /// Follow-up state as an index into FOLLOWUP_STATES (their count: none); the workspace's
    /// state first, else the export's.
    pub followup: Vec<u8>,
    /// Follow-up reached or completed (workspace first, export spellings included).
    reached: Vec<bool>,
    /// Node of each entry.
    nodes: Vec<u32>,
}

/// Each person's value of an attribute column as an index into the column's distinct trimmed
/// values (in order of first appearance; u32::MAX: none or blank), and those values. Each
/// stored value is trimmed and looked up once; a person costs one array lookup.
fn raw_codes(d: &Dataset, c: usize) -> (Vec<u32>, Vec<&str>) {
    const UNSET: u32 = u32::MAX - 1;
    let col = &d.attrs.values[c];
    let mut seen: HashMap<&str, u32> = HashMap::new();
    let mut raws: Vec<&str> = Vec::new();
    // Stored value code -> index into `raws`, given when a person first holds it.
    let mut of_code = vec![UNSET; col.distinct_len()];
    let mut codes: Vec<u32> = col
        .codes()
        .iter()
        .map(|&k| {
            if k == AttrColumn::NONE {
                return u32::MAX;
            }
            let slot = &mut of_code[k as usize];
            if *slot == UNSET {
                let v = col.text(k).trim();
                *slot = if v.is_empty() {
                    u32::MAX
                } else {
                    *seen.entry(v).or_insert_with(|| {
                        raws.push(v);
                        raws.len() as u32 - 1
                    })
                };
            }
            *slot
        })
        .collect();
    codes.resize(d.people(), u32::MAX);
    (codes, raws)
}

/// The distinct non-empty values of a people attribute, one spelling each (the first person's),
/// sorted without case, and each person's value as an index into them (u32::MAX: none).
fn coded(d: &Dataset, field: &str) -> (Vec<String>, Vec<u32>) {
    let Some(c) = d.attrs.column(field) else {
        return (Vec::new(), vec![u32::MAX; d.people()]);
    };
    let (mut codes, raws) = raw_codes(d, c);
    // The raw values come in order of first appearance, so the first spelling of each
    // lower-case value is the first person's.
    let lower: Vec<String> = raws.iter().map(|r| r.to_lowercase()).collect();
    let mut set = std::collections::BTreeMap::new();
    for (l, r) in lower.iter().zip(&raws) {
        set.entry(l.as_str()).or_insert(*r);
    }
    let index: HashMap<&str, u32> = set
        .keys()
        .enumerate()
        .map(|(i, &l)| (l, i as u32))
        .collect();
    let of_raw: Vec<u32> = lower.iter().map(|l| index[l.as_str()]).collect();
    for x in codes.iter_mut().filter(|x| **x != u32::MAX) {
        *x = of_raw[*x as usize];
    }
    (set.into_values().map(str::to_string).collect(), codes)
}

/// The setting bits of every person (codes 1..=64): the pairs in two halves on two cores,
/// their bits joined.
fn setting_bits(d: &Dataset) -> Vec<u64> {
    let half = |pairs: std::ops::Range<usize>| {
        let mut bits = vec![0u64; d.people()];
        for e in pairs {
            let b = d
                .edges
                .settings(e)
                .iter()
                .filter(|c| (1..=64).contains(*c))
                .fold(0u64, |acc, &c| acc | 1 << (c - 1));
            bits[d.edges.a[e] as usize] |= b;
            bits[d.edges.b[e] as usize] |= b;
        }
        bits
    };
    let (n, mid) = (d.edges.len(), d.edges.len() / 2);
    let (mut bits, other) = rayon::join(|| half(0..mid), || half(mid..n));
    bits.par_iter_mut().zip(other).for_each(|(b, o)| *b |= o);
    bits
}

/// A follow-up value as (its index into FOLLOWUP_STATES, whether it counts as reached).
fn followup_state(v: &str) -> (u8, bool) {
    (
        state_code(v),
        REACHED.iter().any(|w| v.trim().eq_ignore_ascii_case(w)),
    )
}

/// A follow-up word as an index into FOLLOWUP_STATES (their count when it is none of them).
fn state_code(v: &str) -> u8 {
    let v = v.trim().to_lowercase();
    FOLLOWUP_STATES
        .iter()
        .position(|&s| s == v)
        .unwrap_or(FOLLOWUP_STATES.len()) as u8
}

impl FilterIndex {
    /// Index a ranked list; `followup` holds the workspace's states by person ID.
    pub fn build(
        d: &Dataset,
        stats: &NetworkStats,
        ranked: &[Ranked],
        followup: &HashMap<String, String>,
    ) -> FilterIndex {
        // The setting bits walk every pair: beside the attribute codes, not after them.
        let (coded, bits): (Vec<(Vec<String>, Vec<u32>)>, _) = rayon::join(
            || FIELDS.par_iter().map(|f| coded(d, f)).collect(),
            || setting_bits(d),
        );
        let per =
            |f: &(dyn Fn(&Ranked) -> u32 + Sync)| ranked.par_iter().map(f).collect::<Vec<u32>>();
        // The export's follow-up column, coded once per distinct value.
        let column = d.attrs.column("followup_status").map(|c| {
            let (codes, raws) = raw_codes(d, c);
            let states: Vec<(u8, bool)> = raws.iter().map(|v| followup_state(v)).collect();
            (codes, states)
        });
        let none = (FOLLOWUP_STATES.len() as u8, false);
        let (mut followup_codes, mut reached) = (Vec::new(), Vec::new());
        ranked
            .par_iter()
            .map(|r| {
                let own = (!followup.is_empty())
                    .then(|| followup.get(d.ids.name(r.node)))
                    .flatten();
                match (own, &column) {
                    (Some(v), _) => followup_state(v),
                    (None, Some((codes, states))) => match codes[r.node as usize] {
                        u32::MAX => none,
                        x => states[x as usize],
                    },
                    (None, None) => none,
                }
            })
            .unzip_into_vecs(&mut followup_codes, &mut reached);
        let mut values: [Vec<String>; 4] = Default::default();
        let mut codes: [Vec<u32>; 4] = Default::default();
        for (c, (v, by_node)) in coded.into_iter().enumerate() {
            codes[c] = per(&|r| by_node[r.node as usize]);
            values[c] = v;
        }
        FilterIndex {
            codes,
            settings: ranked.par_iter().map(|r| bits[r.node as usize]).collect(),
            component: per(&|r| stats.components.0[r.node as usize]),
            in_window: ranked
                .par_iter()
                .map(|r| r.days_left.is_some_and(|x| x >= 0))
                .collect(),
            followup: followup_codes,
            reached,
            nodes: per(&|r| r.node),
            values,
        }
    }

    /// Number of entries.
    pub fn len(&self) -> usize {
        self.nodes.len()
    }

    /// True when the list is empty.
    pub fn is_empty(&self) -> bool {
        self.nodes.is_empty()
    }

    /// A new workspace follow-up state for the entry at rank position `pos`.
    pub fn set_followup(&mut self, pos: usize, state: &str) {
        self.followup[pos] = state_code(state);
        self.reached[pos] = REACHED.iter().any(|w| state.eq_ignore_ascii_case(w));
    }

    /// The filters resolved against this list: values as codes; an unknown setting is an error
    /// naming the known ones.
    pub fn matcher(&self, f: &Filters, d: &Dataset) -> Result<Matcher> {
        let equals = [0, 1, 2, 3].map(|c| {
            f.equals[c].as_ref().map(|v| {
                let v = v.trim().to_lowercase();
                self.values[c]
                    .iter()
                    .position(|x| x.to_lowercase() == v)
                    .map_or(u32::MAX - 1, |i| i as u32)
            })
        });
        let setting = match &f.setting {
            None => None,
            Some(label) => Some(setting_code(&d.settings, label)?),
        };
        // Codes beyond the bits: one pass over the graph for this setting.
        let wide = setting.filter(|&c| c > 64).map(|c| {
            self.nodes
                .iter()
                .map(|&n| {
                    d.graph
                        .edges_slice(n)
                        .iter()
                        .any(|&e| d.edges.settings(e as usize).contains(&c))
                })
                .collect()
        });
        Ok(Matcher {
            equals,
            setting,
            wide,
            still_in_window: f.still_in_window,
            not_reached: f.not_reached,
            cluster: f.cluster,
        })
    }

    /// Whether the entry at rank position `i` passes.
    pub fn keeps(&self, m: &Matcher, i: usize) -> bool {
        m.equals
            .iter()
            .zip(&self.codes)
            .all(|(want, codes)| want.is_none_or(|w| codes[i] == w))
            && m.setting.is_none_or(|s| match &m.wide {
                Some(w) => w[i],
                None => self.settings[i] & (1 << (s - 1)) != 0,
            })
            && (!m.still_in_window || self.in_window[i])
            && (!m.not_reached || !self.reached[i])
            && m.cluster.is_none_or(|c| self.component[i] == c)
    }

    /// Rank positions of the entries the filters keep, in rank order.
    pub fn apply(&self, f: &Filters, d: &Dataset) -> Result<Vec<u32>> {
        let m = self.matcher(f, d)?;
        Ok((0..self.len())
            .filter(|&i| self.keeps(&m, i))
            .map(|i| i as u32)
            .collect())
    }
}

/// Filters resolved against one [`FilterIndex`].
#[derive(Debug, Clone)]
pub struct Matcher {
    equals: [Option<u32>; 4],
    setting: Option<u16>,
    wide: Option<Vec<bool>>,
    still_in_window: bool,
    not_reached: bool,
    cluster: Option<u32>,
}
