//! Aggregate tables (Parquet, made by the SQL of [`super::sql`] in a database engine) -> the
//! people, pairs, degree tables and ledger that a load of the raw files would give.
//!
//! A table is `DIR/<name>.parquet` (one file, as DuckDB writes it) or a folder `DIR/<name>/` of
//! part files (as Spark writes it). Every count is checked on the way in: the ledger must
//! balance, the quarantined rows and field problems listed must be as many as the ledger says,
//! node numbers must run 0..n without a repeated ID, and pairs must join two known people.

mod columns;
mod ledger;
mod pairs;

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

use super::dates;
use super::ledger::Ledger;
use super::reconcile::Attributes;
use super::sql::LAYOUT_VERSION;
use super::view::View;
use crate::error::{Error, Result};
use crate::ids::IdMap;
use columns::{bad, days_of, ints, need, read_table, texts};

/// The pairs as columns (sorted by (a, b)).
#[derive(Debug, Default)]
pub struct PairColumns {
    /// Smaller node.
    pub a: Vec<u32>,
    /// Larger node.
    pub b: Vec<u32>,
    /// Rows merged into the pair.
    pub rows: Vec<u32>,
    /// Rows naming `a` as the source.
    pub a_named_b: Vec<u32>,
    /// Earliest date (NO_DATE when none).
    pub first: Vec<i32>,
    /// Latest last-exposure date.
    pub last: Vec<i32>,
    /// Total minutes (NaN when no row gave one).
    pub minutes: Vec<f64>,
    /// Rows marking a as infector of b.
    pub links_ab: Vec<u32>,
    /// Rows marking b as infector of a.
    pub links_ba: Vec<u32>,
    /// Setting codes per pair: (pair index, code), sorted.
    pub settings: Vec<(u32, u16)>,
    /// Distinct date spans of pairs with several: (pair index, first, last), sorted.
    pub spans: Vec<(u32, i32, i32)>,
}

/// What the aggregate tables hold.
pub struct AggregateTables {
    /// The folder read.
    pub dir: PathBuf,
    /// Person ID <-> node.
    pub ids: IdMap,
    /// Nodes `0..people_in_table` came from the people table.
    pub people_in_table: u32,
    /// People's attributes.
    pub attrs: Attributes,
    /// Each person's number of contacts (from the nodes table).
    pub node_degree: Vec<u32>,
    /// The pairs; `None` when the pair table is not in the folder.
    pub pairs: Option<PairColumns>,
    /// Setting labels (code c is `settings[c - 1]`).
    pub settings: Vec<String>,
    /// Rows per (day, setting code).
    pub days: Vec<(i32, u16, u64)>,
    /// People per degree: (k, people), increasing k.
    pub degrees: Vec<(u32, u64)>,
    /// Ends of pairs by end degrees (j, k), each pair counted both ways.
    pub joint: Vec<(u32, u32, u64)>,
    /// People by (degree, sum of contacts' degrees).
    pub neighbour_sums: Vec<(u32, u64, u64)>,
    /// The ledger.
    pub ledger: Ledger,
    /// The as-of date the SQL used.
    pub as_of: i32,
    /// The sub-network the pairs hold.
    pub view: View,
    /// The engine that made them.
    pub dialect: String,
    /// Whether the exposures mapped the `transmission` field.
    pub has_links: bool,
    /// Seconds spent reading.
    pub read_secs: f64,
}
pub fn read(dir: &Path) -> Result<AggregateTables> {
    let t0 = std::time::Instant::now();
    if !dir.is_dir() {
        return Err(Error::format(
            dir,
            "--aggregates expects a folder of aggregate tables",
        ));
    }
    let meta_df = need(dir, "meta")?;
    let keys = texts(&meta_df, dir, "meta", "key")?;
    let values = texts(&meta_df, dir, "meta", "value")?;
    let meta: BTreeMap<String, String> = keys
        .into_iter()
        .zip(values)
        .filter_map(|(k, v)| Some((k?, v.unwrap_or_default())))
        .collect();
    let get = |k: &str| meta.get(k).cloned().unwrap_or_default();
    if get("layout") != LAYOUT_VERSION {
        return Err(bad(
            dir,
            "meta",
            format!(
                "layout {:?}; this hubwatch reads layout {LAYOUT_VERSION} (make the tables again with its `hubwatch sql`)",
                get("layout")
            ),
        ));
    }
    let as_of = dates::parse_iso(&get("as_of"))
        .map_err(|_| bad(dir, "meta", "as_of is not an ISO date"))?;
    let split = |k: &str| -> Vec<String> {
        get(k)
            .split('\u{1f}')
            .filter(|s| !s.is_empty())
            .map(str::to_string)
            .collect()
    };
    let day = |k: &str| dates::parse_iso(&get(k)).ok();
    let view = View {
        settings: split("view_settings"),
        exclude_settings: split("view_exclude_settings"),
        from: day("view_from"),
        to: day("view_to"),
    };
    let case_sensitive = get("case_sensitive") != "false";
    // The people and the pairs are read at once (the pairs need only the number of people,
    // which the nodes table's height gives).
    let settings = read_settings(dir)?;
    let nodes_df = need(dir, "nodes")?;
    let n = nodes_df.height();
    let (nodes, pairs) = std::thread::scope(|s| {
        let pairs = s.spawn(|| match read_table(dir, "pairs")? {
            Some(df) => Ok(Some(pairs::read_pairs(dir, &df, n, settings.len())?)),
            None => Ok(None),
        });
        let nodes = read_nodes(dir, &nodes_df, case_sensitive);
        (
            nodes,
            pairs
                .join()
                .unwrap_or_else(|p| std::panic::resume_unwind(p)),
        )
    });
    let (ids, people_in_table, attrs, node_degree) = nodes?;
    let pairs: Option<PairColumns> = pairs?;
    let days = {
        let df = need(dir, "days")?;
        let d = days_of(&df, dir, "days", "day")?;
        let s = ints(&df, dir, "days", "setting")?;
        let r = ints(&df, dir, "days", "rows")?;
        let mut v: Vec<(i32, u16, u64)> = d
            .into_iter()
            .zip(s)
            .zip(r)
            .map(|((d, s), r)| (d, s as u16, r as u64))
            .collect();
        v.sort_unstable();
        v
    };
    let degrees = {
        let df = need(dir, "degrees")?;
        let k = ints(&df, dir, "degrees", "k")?;
        let p = ints(&df, dir, "degrees", "people")?;
        let mut v: Vec<(u32, u64)> = k
            .into_iter()
            .zip(p)
            .map(|(k, p)| (k as u32, p as u64))
            .collect();
        v.sort_unstable();
        v
    };
    let joint = {
        let df = need(dir, "joint")?;
        let j = ints(&df, dir, "joint", "j")?;
        let k = ints(&df, dir, "joint", "k")?;
        let e = ints(&df, dir, "joint", "ends")?;
        let mut v: Vec<(u32, u32, u64)> = j
            .into_iter()
            .zip(k)
            .zip(e)
            .map(|((j, k), e)| (j as u32, k as u32, e as u64))
            .collect();
        v.sort_unstable();
        v
    };
    let neighbour_sums = {
        let df = need(dir, "neighbour_sums")?;
        let k = ints(&df, dir, "neighbour_sums", "k")?;
        let t = ints(&df, dir, "neighbour_sums", "total")?;
        let p = ints(&df, dir, "neighbour_sums", "people")?;
        let mut v: Vec<(u32, u64, u64)> = k
            .into_iter()
            .zip(t)
            .zip(p)
            .map(|((k, t), p)| (k as u32, t as u64, p as u64))
            .collect();
        v.sort_unstable();
        v
    };
    let ledger = ledger::read_ledger(dir, &meta)?;
    let people_total: u64 = degrees.iter().map(|d| d.1).sum();
    if people_total != n as u64 {
        return Err(bad(
            dir,
            "degrees",
            format!("counts {people_total} people; the nodes table has {n}"),
        ));
    }
    Ok(AggregateTables {
        dir: dir.to_path_buf(),
        ids,
        people_in_table,
        attrs,
        node_degree,
        pairs,
        settings,
        days,
        degrees,
        joint,
        neighbour_sums,
        ledger,
        as_of,
        view,
        dialect: get("dialect"),
        has_links: meta.contains_key("exposures:transmission"),
        read_secs: t0.elapsed().as_secs_f64(),
    })
}

type Nodes = (IdMap, u32, Attributes, Vec<u32>);

fn read_nodes(dir: &Path, df: &polars::prelude::DataFrame, case_sensitive: bool) -> Result<Nodes> {
    let t = "nodes";
    let node = ints(df, dir, t, "node")?;
    let id = texts(df, dir, t, "id")?;
    let listed = ints(df, dir, t, "listed")?;
    let k = ints(df, dir, t, "k")?;
    let n = node.len();
    let mut order: Vec<usize> = (0..n).collect();
    order.sort_unstable_by_key(|&i| node[i]);
    let mut ids = IdMap::new(case_sensitive);
    let mut people_in_table = 0u32;
    for (want, &i) in order.iter().enumerate() {
        if node[i] != want as i64 {
            return Err(bad(
                dir,
                t,
                format!(
                    "node numbers do not run 0..{n} (found {} at place {want})",
                    node[i]
                ),
            ));
        }
        let name = id[i]
            .as_deref()
            .ok_or_else(|| bad(dir, t, format!("node {want} has no ID")))?;
        let (_, new) = ids.intern(name);
        if !new {
            return Err(bad(dir, t, format!("ID {name:?} appears twice")));
        }
        if listed[i] != 0 {
            if people_in_table as usize != want {
                return Err(bad(dir, t, "people of the people table must come first"));
            }
            people_in_table += 1;
        }
    }
    let mut attrs = Attributes::default();
    let names: Vec<String> = df
        .get_column_names()
        .iter()
        .filter_map(|c| c.as_str().strip_prefix("attr:").map(str::to_string))
        .collect();
    for name in names {
        let vals = texts(df, dir, t, &format!("attr:{name}"))?;
        let c = attrs.ensure_column(&name, n);
        for (node, &i) in order.iter().enumerate() {
            if let Some(v) = vals[i].as_deref() {
                attrs.values[c].set(node, v);
            }
        }
    }
    let node_degree = order.iter().map(|&i| k[i] as u32).collect();
    Ok((ids, people_in_table, attrs, node_degree))
}

fn read_settings(dir: &Path) -> Result<Vec<String>> {
    let t = "settings";
    let df = need(dir, t)?;
    let code = ints(&df, dir, t, "code")?;
    let label = texts(&df, dir, t, "label")?;
    let mut v: Vec<(i64, String)> = code
        .into_iter()
        .zip(label)
        .map(|(c, l)| (c, l.unwrap_or_default()))
        .collect();
    v.sort_unstable();
    for (i, (c, _)) in v.iter().enumerate() {
        if *c != i as i64 + 1 {
            return Err(bad(
                dir,
                t,
                format!("setting codes do not run 1..{}", v.len()),
            ));
        }
    }
    Ok(v.into_iter().map(|(_, l)| l).collect())
}
