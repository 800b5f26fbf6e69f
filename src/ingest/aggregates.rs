//! Aggregate tables (Parquet, made by the SQL of [`super::sql`] in a database engine) -> the
//! people, pairs, degree tables and ledger that a load of the raw files would give.
//!
//! A table is `DIR/<name>.parquet` (one file, as DuckDB writes it) or a folder `DIR/<name>/` of
//! part files (as Spark writes it). Every count is checked on the way in: the ledger must
//! balance, the quarantined rows and field problems listed must be as many as the ledger says,
//! node numbers must run 0..n without a repeated ID, and pairs must join two known people.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

use polars::prelude::*;

use super::dates;
use super::ledger::{
    Counts, FieldProblem, FileReport, Ledger, ProblemKind, QuarantineReason, QuarantinedRow,
    ReasonFacts, Role,
};
use super::reconcile::{Attributes, NO_DATE};
use super::sql::LAYOUT_VERSION;
use super::view::View;
use crate::error::{Error, Result};
use crate::ids::IdMap;

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

fn bad(dir: &Path, table: &str, msg: impl std::fmt::Display) -> Error {
    Error::format(&dir.join(table), format!("aggregate table {table}: {msg}"))
}

/// The files of one table: `name.parquet`, or the `.parquet` part files of the folder `name`.
fn table_files(dir: &Path, name: &str) -> Option<Vec<PathBuf>> {
    let file = dir.join(format!("{name}.parquet"));
    if file.is_file() {
        return Some(vec![file]);
    }
    let folder = dir.join(name);
    if !folder.is_dir() {
        return None;
    }
    let mut parts: Vec<PathBuf> = std::fs::read_dir(&folder)
        .ok()?
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|p| {
            p.extension().is_some_and(|x| x == "parquet")
                && !p
                    .file_name()
                    .and_then(|n| n.to_str())
                    .is_some_and(|n| n.starts_with('.') || n.starts_with('_'))
        })
        .collect();
    parts.sort();
    Some(parts)
}

/// Read one table whole (`None` when absent).
fn read_table(dir: &Path, name: &str) -> Result<Option<DataFrame>> {
    let Some(files) = table_files(dir, name) else {
        return Ok(None);
    };
    let mut out: Option<DataFrame> = None;
    for f in files {
        let file = std::fs::File::open(&f).map_err(|e| Error::io(&f, e))?;
        let df = ParquetReader::new(file)
            .finish()
            .map_err(|e| Error::Polars {
                path: f.clone(),
                source: e,
            })?;
        out = Some(match out {
            None => df,
            Some(mut acc) => {
                acc.vstack_mut(&df).map_err(|e| Error::Polars {
                    path: f.clone(),
                    source: e,
                })?;
                acc
            }
        });
    }
    Ok(out)
}

fn need(dir: &Path, name: &str) -> Result<DataFrame> {
    read_table(dir, name)?.ok_or_else(|| {
        Error::format(
            &dir.join(name),
            format!(
                "aggregate table {name} is missing ({name}.parquet or a folder {name}/ of part files): \
                 run the SQL of `hubwatch sql` with --parquet pointing here"
            ),
        )
    })
}

/// A column as integers (NULL is an error).
fn ints(df: &DataFrame, dir: &Path, table: &str, col: &str) -> Result<Vec<i64>> {
    let c = df
        .column(col)
        .map_err(|_| bad(dir, table, format!("no column {col}")))?
        .cast(&DataType::Int64)
        .map_err(|e| bad(dir, table, format!("column {col}: {e}")))?;
    let ca = c
        .i64()
        .map_err(|e| bad(dir, table, format!("column {col}: {e}")))?;
    if ca.null_count() == 0 {
        return Ok(ca.into_no_null_iter().collect());
    }
    ca.iter()
        .enumerate()
        .map(|(i, v)| {
            v.ok_or_else(|| {
                bad(
                    dir,
                    table,
                    format!("column {col} is empty in row {}", i + 1),
                )
            })
        })
        .collect()
}

/// A column as optional text.
fn texts(df: &DataFrame, dir: &Path, table: &str, col: &str) -> Result<Vec<Option<String>>> {
    let c = df
        .column(col)
        .map_err(|_| bad(dir, table, format!("no column {col}")))?
        .cast(&DataType::String)
        .map_err(|e| bad(dir, table, format!("column {col}: {e}")))?;
    let ca = c
        .str()
        .map_err(|e| bad(dir, table, format!("column {col}: {e}")))?;
    Ok(ca.iter().map(|v| v.map(str::to_string)).collect())
}

/// A column as doubles (NULL -> NaN).
fn floats(df: &DataFrame, dir: &Path, table: &str, col: &str) -> Result<Vec<f64>> {
    let c = df
        .column(col)
        .map_err(|_| bad(dir, table, format!("no column {col}")))?
        .cast(&DataType::Float64)
        .map_err(|e| bad(dir, table, format!("column {col}: {e}")))?;
    let ca = c
        .f64()
        .map_err(|e| bad(dir, table, format!("column {col}: {e}")))?;
    Ok(ca.iter().map(|v| v.unwrap_or(f64::NAN)).collect())
}

/// An ISO date column (NULL -> NO_DATE).
fn days_of(df: &DataFrame, dir: &Path, table: &str, col: &str) -> Result<Vec<i32>> {
    let c = df
        .column(col)
        .map_err(|_| bad(dir, table, format!("no column {col}")))?;
    // A DATE column (days since 1970-01-01), or ISO text.
    if c.dtype() == &DataType::Date {
        let epoch = dates::to_days(chrono::NaiveDate::from_ymd_opt(1970, 1, 1).expect("a date"));
        let days = c
            .cast(&DataType::Int32)
            .map_err(|e| bad(dir, table, format!("column {col}: {e}")))?;
        let ca = days
            .i32()
            .map_err(|e| bad(dir, table, format!("column {col}: {e}")))?;
        return Ok(ca
            .iter()
            .map(|d| d.map_or(NO_DATE, |d| d + epoch))
            .collect());
    }
    let c = c
        .cast(&DataType::String)
        .map_err(|e| bad(dir, table, format!("column {col}: {e}")))?;
    let ca = c
        .str()
        .map_err(|e| bad(dir, table, format!("column {col}: {e}")))?;
    ca.iter()
        .map(|v| match v {
            None => Ok(NO_DATE),
            Some(s) => dates::parse_iso(s).map_err(|_| {
                bad(
                    dir,
                    table,
                    format!("column {col}: {s:?} is not an ISO date"),
                )
            }),
        })
        .collect()
}

fn node_of(v: i64, n: usize, dir: &Path, table: &str) -> Result<u32> {
    if v < 0 || v as usize >= n {
        return Err(bad(
            dir,
            table,
            format!("node {v} is not in the nodes table (0..{n})"),
        ));
    }
    Ok(v as u32)
}

/// Read the aggregate tables of `dir`.
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
    let n = need(dir, "nodes")?.height();
    let (nodes, pairs) = std::thread::scope(|s| {
        let pairs = s.spawn(|| match read_table(dir, "pairs")? {
            Some(df) => Ok(Some(read_pairs(dir, &df, n, settings.len())?)),
            None => Ok(None),
        });
        let nodes = read_nodes(dir, case_sensitive);
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
    let ledger = read_ledger(dir, &meta)?;
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

fn read_nodes(dir: &Path, case_sensitive: bool) -> Result<Nodes> {
    let t = "nodes";
    let df = need(dir, t)?;
    let node = ints(&df, dir, t, "node")?;
    let id = texts(&df, dir, t, "id")?;
    let listed = ints(&df, dir, t, "listed")?;
    let k = ints(&df, dir, t, "k")?;
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
        let vals = texts(&df, dir, t, &format!("attr:{name}"))?;
        let c = attrs.ensure_column(&name, n);
        for (&i, slot) in order.iter().zip(attrs.values[c].iter_mut()) {
            *slot = vals[i].as_deref().map(Into::into);
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

fn read_pairs(dir: &Path, df: &DataFrame, n: usize, n_settings: usize) -> Result<PairColumns> {
    let t = "pairs";
    let a = ints(df, dir, t, "a")?;
    let b = ints(df, dir, t, "b")?;
    // Engines write pairs in any order: sort them by (a, b) (radix, on one packed key).
    let mut keys: Vec<u64> = Vec::with_capacity(a.len());
    for (&x, &y) in a.iter().zip(&b) {
        let (x, y) = (node_of(x, n, dir, t)?, node_of(y, n, dir, t)?);
        if x >= y {
            return Err(bad(
                dir,
                t,
                format!("pair ({x}, {y}) is not written smaller node first"),
            ));
        }
        keys.push(u64::from(x) << 32 | u64::from(y));
    }
    let mut order: Vec<u32> = (0..a.len() as u32).collect();
    crate::sort::radix_sort_by_key(&mut keys, &mut order);
    let order: Vec<usize> = order.into_iter().map(|i| i as usize).collect();
    let pick_u32 = |v: Vec<i64>| -> Vec<u32> { order.iter().map(|&i| v[i] as u32).collect() };
    let mut p = PairColumns::default();
    for w in keys.windows(2) {
        if w[0] == w[1] {
            let (x, y) = (w[0] >> 32, w[0] & 0xffff_ffff);
            return Err(bad(dir, t, format!("pair ({x}, {y}) appears twice")));
        }
    }
    p.a = keys.iter().map(|k| (k >> 32) as u32).collect();
    p.b = keys.iter().map(|k| *k as u32).collect();
    p.rows = pick_u32(ints(df, dir, t, "rows")?);
    p.a_named_b = pick_u32(ints(df, dir, t, "a_named_b")?);
    p.links_ab = pick_u32(ints(df, dir, t, "links_ab")?);
    p.links_ba = pick_u32(ints(df, dir, t, "links_ba")?);
    let first = days_of(df, dir, t, "first_day")?;
    let last = days_of(df, dir, t, "last_day")?;
    let minutes = floats(df, dir, t, "minutes")?;
    p.first = order.iter().map(|&i| first[i]).collect();
    p.last = order.iter().map(|&i| last[i]).collect();
    p.minutes = order.iter().map(|&i| minutes[i]).collect();
    let ps = need(dir, "pair_settings")?;
    let (sa, sb, sc) = (
        ints(&ps, dir, "pair_settings", "a")?,
        ints(&ps, dir, "pair_settings", "b")?,
        ints(&ps, dir, "pair_settings", "code")?,
    );
    for (e, row) in pair_of_rows(&keys, &sa, &sb, dir, "pair_settings")? {
        let c = sc[row];
        if c < 1 || c as usize > n_settings {
            return Err(bad(
                dir,
                "pair_settings",
                format!("setting code {c} is not in the settings table"),
            ));
        }
        p.settings.push((e, c as u16));
    }
    p.settings.sort_unstable();
    p.settings.dedup();
    let sp = need(dir, "spans")?;
    let (xa, xb) = (ints(&sp, dir, "spans", "a")?, ints(&sp, dir, "spans", "b")?);
    let (f, l) = (
        days_of(&sp, dir, "spans", "span_first")?,
        days_of(&sp, dir, "spans", "span_last")?,
    );
    for (e, row) in pair_of_rows(&keys, &xa, &xb, dir, "spans")? {
        p.spans.push((e, f[row], l[row]));
    }
    p.spans.sort_unstable();
    Ok(p)
}

/// The pair (index into the sorted `keys`) of each row of a table keyed by (a, b), as
/// (pair, row) in pair order: the rows are radix-sorted and walked beside the pairs (a binary
/// search per row cost seconds at millions of rows).
fn pair_of_rows(
    keys: &[u64],
    a: &[i64],
    b: &[i64],
    dir: &Path,
    table: &str,
) -> Result<Vec<(u32, usize)>> {
    let mut row_keys: Vec<u64> = Vec::with_capacity(a.len());
    for (&x, &y) in a.iter().zip(b) {
        if !(0..=i64::from(u32::MAX)).contains(&x) || !(0..=i64::from(u32::MAX)).contains(&y) {
            return Err(bad(
                dir,
                table,
                format!("pair ({x}, {y}) is not in the pair table"),
            ));
        }
        row_keys.push((x as u64) << 32 | y as u64);
    }
    let mut rows: Vec<u32> = (0..a.len() as u32).collect();
    crate::sort::radix_sort_by_key(&mut row_keys, &mut rows);
    let mut out = Vec::with_capacity(rows.len());
    let mut e = 0usize;
    for (k, r) in row_keys.iter().zip(rows) {
        while e < keys.len() && keys[e] < *k {
            e += 1;
        }
        if keys.get(e) != Some(k) {
            let (x, y) = (k >> 32, k & 0xffff_ffff);
            return Err(bad(
                dir,
                table,
                format!("pair ({x}, {y}) is not in the pair table"),
            ));
        }
        out.push((e as u32, r as usize));
    }
    Ok(out)
}

/// A problem kind from its code.
fn problem_kind(code: &str) -> Option<ProblemKind> {
    use ProblemKind::*;
    [
        UnreadableDate,
        ImpossibleDate,
        FutureDate,
        ImplausibleDate,
        DateOrder,
        UnreadableNumber,
        NegativeNumber,
        ImplausibleNumber,
        ConflictingValue,
        UnreadableFlag,
    ]
    .into_iter()
    .find(|k| k.code() == code)
}

fn read_ledger(dir: &Path, meta: &BTreeMap<String, String>) -> Result<Ledger> {
    let df = need(dir, "ledger")?;
    let role = texts(&df, dir, "ledger", "role")?;
    let item = texts(&df, dir, "ledger", "item")?;
    let count = ints(&df, dir, "ledger", "n")?;
    let mut counts: BTreeMap<(String, String), u64> = BTreeMap::new();
    for ((r, i), n) in role.into_iter().zip(item).zip(count) {
        *counts
            .entry((r.unwrap_or_default(), i.unwrap_or_default()))
            .or_insert(0) += n as u64;
    }
    let has_people = meta.contains_key("people_table");
    let mut ledger = Ledger::default();
    let dialect = meta.get("dialect").cloned().unwrap_or_default();
    for (role, key) in [(Role::People, "people"), (Role::Exposures, "exposures")] {
        if role == Role::People && !has_people {
            continue;
        }
        let c = |item: &str| {
            counts
                .get(&(key.to_string(), item.to_string()))
                .copied()
                .unwrap_or(0)
        };
        let mut file_counts = Counts {
            read: c("read"),
            used: c("used"),
            merged: c("merged"),
            quarantined: c("quarantined"),
            field_problems: 0,
            ids_normalised: c("ids_normalised"),
        };
        file_counts.field_problems = counts
            .iter()
            .filter(|((r, i), _)| r == key && i.starts_with("problem:"))
            .map(|(_, n)| n)
            .sum();
        if !file_counts.balanced() {
            return Err(bad(
                dir,
                "ledger",
                format!(
                    "{key}: read {} is not used {} + merged {} + quarantined {}",
                    file_counts.read, file_counts.used, file_counts.merged, file_counts.quarantined
                ),
            ));
        }
        let mapping: BTreeMap<String, String> = meta
            .iter()
            .filter_map(|(k, v)| {
                k.strip_prefix(&format!("{key}:"))
                    .map(|f| (f.to_string(), v.clone()))
            })
            .collect();
        ledger.files.push(FileReport {
            path: PathBuf::from(
                meta.get(&format!("{key}_table"))
                    .cloned()
                    .unwrap_or_default(),
            ),
            role,
            format: format!("aggregate tables made by SQL in {dialect}"),
            header: true,
            mapping,
            encoding: None,
            role_by: "given to `hubwatch sql`".into(),
            counts: file_counts,
        });
        match role {
            Role::People => ledger.people = file_counts,
            Role::Exposures => ledger.exposures = file_counts,
        }
    }
    let file_of = |role: &str| ledger.files.iter().position(|f| f.role.name() == role);
    let q = need(dir, "quarantine")?;
    let (qrole, qord, qreason, qfield, qcode, qraw) = (
        texts(&q, dir, "quarantine", "role")?,
        ints(&q, dir, "quarantine", "ord")?,
        texts(&q, dir, "quarantine", "reason")?,
        texts(&q, dir, "quarantine", "field")?,
        texts(&q, dir, "quarantine", "code")?,
        texts(&q, dir, "quarantine", "raw")?,
    );
    for i in 0..qord.len() {
        let role = qrole[i].clone().unwrap_or_default();
        let file =
            file_of(&role).ok_or_else(|| bad(dir, "quarantine", format!("role {role:?}")))?;
        let field = qfield[i].clone().unwrap_or_default();
        let reason = match qreason[i].as_deref() {
            Some("missing_id") => QuarantineReason::MissingId { field },
            Some("missing_value_code") => QuarantineReason::MissingValueCode {
                field,
                code: qcode[i].clone().unwrap_or_default(),
            },
            Some("self_exposure") => QuarantineReason::SelfExposure,
            other => return Err(bad(dir, "quarantine", format!("unknown reason {other:?}"))),
        };
        ledger.quarantined.push(QuarantinedRow {
            file,
            line: qord[i].max(0) as u64,
            reason,
            raw: qraw[i].clone().unwrap_or_default(),
        });
    }
    let pr = need(dir, "problems")?;
    let (prole, pord, pcol, pval, pkind) = (
        texts(&pr, dir, "problems", "role")?,
        ints(&pr, dir, "problems", "ord")?,
        texts(&pr, dir, "problems", "column_name")?,
        texts(&pr, dir, "problems", "value")?,
        texts(&pr, dir, "problems", "kind")?,
    );
    let (pdetail, pperson) = (
        texts(&pr, dir, "problems", "detail")?,
        texts(&pr, dir, "problems", "person")?,
    );
    let pfirst = texts(&pr, dir, "problems", "first_ord")?;
    let meta_day = |k: &str| {
        meta.get(k)
            .and_then(|v| dates::parse_iso(v).ok())
            .unwrap_or(NO_DATE)
    };
    let (as_of, oldest) = (meta_day("as_of"), meta_day("oldest_day"));
    let max_minutes = meta
        .get("max_minutes")
        .and_then(|v| v.parse::<f64>().ok())
        .unwrap_or(f64::INFINITY);
    for i in 0..pord.len() {
        let role = prole[i].clone().unwrap_or_default();
        let file = file_of(&role).ok_or_else(|| bad(dir, "problems", format!("role {role:?}")))?;
        let code = pkind[i].clone().unwrap_or_default();
        let kind = problem_kind(&code)
            .ok_or_else(|| bad(dir, "problems", format!("unknown kind {code:?}")))?;
        let value = pval[i].clone().unwrap_or_default();
        let detail = pdetail[i].as_deref().unwrap_or("");
        let at = pfirst[i]
            .as_deref()
            .map(|l| format!("line {l}"))
            .unwrap_or_default();
        let reason = kind.reason(&ReasonFacts {
            as_of,
            oldest,
            layout: dates::ISO_LAYOUT,
            max_minutes,
            value: &value,
            last: dates::parse_iso(detail).unwrap_or(NO_DATE),
            person: pperson[i].as_deref().unwrap_or(""),
            kept: detail,
            at: &at,
        });
        ledger.problems.push(FieldProblem {
            file,
            line: pord[i].max(0) as u64,
            column: pcol[i].clone().unwrap_or_default(),
            value,
            kind,
            reason,
        });
    }
    for f in &ledger.files {
        let role = f.role;
        let q = ledger.quarantine_counts(role).values().sum::<u64>();
        let p = ledger.problem_counts(role).values().sum::<u64>();
        if q != f.counts.quarantined || p != f.counts.field_problems {
            return Err(bad(
                dir,
                "ledger",
                format!(
                    "{}: the ledger counts {} quarantined rows and {} field problems; the tables list {q} and {p}",
                    role.name(),
                    f.counts.quarantined,
                    f.counts.field_problems
                ),
            ));
        }
    }
    ledger.quarantined.sort_by_key(|q| (q.file, q.line));
    ledger.problems.sort_by_key(|p| (p.file, p.line));
    Ok(ledger)
}
