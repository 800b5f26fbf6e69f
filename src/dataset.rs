//! Rows -> network: the people and exposure rows that `ingest` read, merged into contact pairs
//! (`graph`), with the adjacency, the setting labels and the finished ledger. Every command and
//! the dashboard start from one [`Dataset`]; nothing above this layer opens an input file.

use crate::config::Config;
use crate::error::Result;
use crate::graph::{self, Edges};
use crate::ids::IdMap;
use crate::ingest::ledger::{Ledger, Role};
use crate::ingest::reconcile::Attributes;
use crate::ingest::{self, peak_mib, view, Input, LoadOptions, Loaded, View};

/// Everything loaded: people, pairs, adjacency and the ledger.
pub struct Dataset {
    /// Person ID <-> node index.
    pub ids: IdMap,
    /// Nodes `0..people_in_table` came from a people table; the rest are implied.
    pub people_in_table: u32,
    /// People's attributes.
    pub attrs: Attributes,
    /// Aggregated contact pairs.
    pub edges: Edges,
    /// Setting labels (code c is `settings[c - 1]`).
    pub settings: Vec<String>,
    /// The graph (possibly still being built: see [`graph::AdjacencyCell`]).
    pub graph: graph::AdjacencyCell,
    /// Unmapped columns of the exposures table(s), one value per usable exposure row, in input
    /// order; `edge_of_row[r]` is the pair row r went into (both empty when there are none).
    pub exposure_extras: Attributes,
    /// The pair each usable exposure row went into (only when there are extra columns;
    /// `u32::MAX` for rows outside the view).
    pub edge_of_row: Vec<u32>,
    /// The ledger of rows and problems.
    pub ledger: Ledger,
    /// The as-of date used.
    pub as_of: i32,
    /// Wall time of each load stage.
    pub timings: Timings,
    /// The sub-network the graph shows, and how many exposure rows it holds.
    pub view: (View, u64),
    /// Usable exposure rows in view per (date, setting code; 0: none), sorted: the last
    /// exposure date of a row, else its first; rows without a date are not counted here.
    pub exposures_by_day: Vec<(i32, u16, u64)>,
}

/// Wall-clock seconds spent in each stage of a load (for the benchmark).
#[derive(Debug, Clone, Copy, Default, serde::Serialize)]
pub struct Timings {
    /// Opening files, scanning lines and parsing text into frames (polars).
    pub parse: f64,
    /// Checking rows, parsing dates and numbers, interning IDs (the ledger).
    pub reconcile: f64,
    /// Sorting rows by pair and aggregating repeats.
    pub merge_pairs: f64,
    /// Building the adjacency's neighbour lists (petgraph's `Csr` is then made from them on a
    /// thread of its own, beside the statistics, when the lists are of a size for it).
    pub graph: f64,
    /// Peak resident memory (MiB) of the process after parse+reconcile, merge and graph
    /// (Linux only; NaN elsewhere). The peak is monotonic, so each figure covers all earlier stages.
    pub peak_mib: [f64; 3],
}

impl Dataset {
    /// Number of people (nodes), implied ones included.
    pub fn people(&self) -> usize {
        self.ids.len()
    }

    /// People known only from exposures.
    pub fn implied(&self) -> usize {
        self.ids.len() - self.people_in_table as usize
    }

    /// True when a node came only from the exposures table.
    pub fn is_implied(&self, node: u32) -> bool {
        node >= self.people_in_table
    }
}

/// Read the inputs and build the network: read, check, reconcile, merge pairs, adjacency.
pub fn load(inputs: &[Input], config: &Config, opts: &LoadOptions) -> Result<Dataset> {
    if let [Input::Aggregates(dir)] = inputs {
        aggregates_take_no_view(&opts.view)?;
        return from_aggregates(ingest::aggregates::read(dir)?, opts.as_of);
    }
    let paths = inputs.iter().filter_map(|i| match i {
        Input::Path(p) | Input::Given { path: p, .. } => Some(p.as_path()),
        _ => None,
    });
    if crate::memory::input_bytes(paths) <= crate::memory::KEEP_UP_TO {
        crate::memory::keep_freed_memory();
    }
    build(ingest::read(inputs, config, opts)?, &opts.view)
}

/// Aggregate tables hold the network their SQL was made for: a view asked of them is an error.
pub fn aggregates_take_no_view(view: &View) -> Result<()> {
    match view.is_all() {
        true => Ok(()),
        false => Err(crate::error::Error::Usage(
            "aggregate tables hold the network their SQL was made for: give --setting, \
             --exclude-setting, --from, --to or --last-days to `hubwatch sql` instead"
                .into(),
        )),
    }
}

/// The network from aggregate tables a database engine made (`hubwatch sql`): the pairs come
/// merged, the ledger counted; the adjacency and the load's warnings are made here as for files.
/// `asked_as_of` is the as-of date of the command (today unless given): the tables' own date
/// wins, and a warning says so when the two differ.
pub fn from_aggregates(
    t: ingest::aggregates::AggregateTables,
    asked_as_of: i32,
) -> Result<Dataset> {
    let ingest::aggregates::AggregateTables {
        dir,
        ids,
        people_in_table,
        attrs,
        pairs,
        settings,
        days,
        mut ledger,
        as_of,
        view,
        has_links,
        read_secs,
        ..
    } = t;
    let Some(p) = pairs else {
        return Err(crate::error::Error::format(
            &dir,
            "the pair table (pairs.parquet) is not in this folder: only `hubwatch summary` works from \
             the degree tables alone; copy the pair table here for every other command",
        ));
    };
    let t1 = std::time::Instant::now();
    let n_pairs = p.a.len();
    let mut edges = Edges {
        a: p.a,
        b: p.b,
        rows: p.rows,
        a_named_b: p.a_named_b,
        first: p.first,
        last: p.last,
        minutes: p.minutes,
        ..Edges::default()
    };
    if has_links {
        edges.links_ab = p.links_ab;
        edges.links_ba = p.links_ba;
    }
    if !settings.is_empty() {
        edges.setting_off.reserve(n_pairs + 1);
        edges.setting_off.push(0);
        let mut next = p.settings.iter().peekable();
        for e in 0..n_pairs as u32 {
            while let Some(&&(_, code)) = next.peek().filter(|(pe, _)| *pe == e) {
                edges.setting_codes.push(code);
                next.next();
            }
            edges.setting_off.push(edges.setting_codes.len() as u32);
        }
    }
    for (i, &(e, f, l)) in p.spans.iter().enumerate() {
        if edges.span_pairs.last() != Some(&e) {
            if edges.span_off.is_empty() {
                edges.span_off.push(0);
            } else {
                edges.span_off.push(i as u32);
            }
            edges.span_pairs.push(e);
        }
        edges.spans.push((f, l));
    }
    if !edges.span_pairs.is_empty() {
        edges.span_off.push(edges.spans.len() as u32);
    }
    ledger
        .warnings
        .extend(ingest::warnings::id_collisions(&ids, false));
    if asked_as_of != as_of {
        ledger.warnings.push(ingest::ledger::Warning {
            code: "aggregates_as_of",
            message: format!(
                "the aggregate tables were made as of {}: dates are judged as of that day, not {} \
                 (give --as-of to `hubwatch sql` to make them for another day)",
                ingest::dates::iso(as_of),
                ingest::dates::iso(asked_as_of)
            ),
            count: 1,
        });
    }
    let rows_in_view: u64 = edges.rows.iter().map(|&r| u64::from(r)).sum();
    let lists = graph::lists(ids.len(), &edges);
    ledger
        .warnings
        .extend(code_like_hubs(&ids, lists.degrees()));
    let graph = graph::AdjacencyCell::new(lists);
    let timings = Timings {
        parse: read_secs,
        reconcile: 0.0,
        merge_pairs: 0.0,
        graph: t1.elapsed().as_secs_f64(),
        peak_mib: [peak_mib(); 3],
    };
    Ok(Dataset {
        ids,
        people_in_table,
        attrs,
        edges,
        settings,
        graph,
        ledger,
        as_of,
        timings,
        exposure_extras: Attributes::default(),
        edge_of_row: Vec::new(),
        view: (view, rows_in_view),
        exposures_by_day: days,
    })
}

/// Merge the rows into pairs, finish the ledger (used / merged) and build the adjacency of the
/// view's rows.
pub fn build(loaded: Loaded, view: &View) -> Result<Dataset> {
    let Loaded {
        ids,
        people_in_table,
        attrs,
        mut rows,
        mut ledger,
        as_of,
        parse_secs,
        reconcile_secs,
        peak_mib: peak_read,
    } = loaded;
    crate::memory::give_back_freed_memory();
    let t1 = std::time::Instant::now();
    let settings: Vec<String> = (0..rows.fields.settings.len() as u32)
        .map(|i| rows.fields.settings.name(i).to_string())
        .collect();
    let want_row_edges = !rows.extras.names.is_empty();
    let exposure_extras = std::mem::take(&mut rows.extras);
    // With the whole export in view, the rows' keys are not read again: the sort takes their
    // array instead of a copy.
    let keys = match view.is_all() {
        true => std::mem::take(&mut rows.keys),
        false => rows.keys.clone(),
    };
    // Beside the merge, what reads no pair: the near-duplicate ID check (only the IDs), the
    // view's rows and the rows by day.
    let (agg, side) = std::thread::scope(|sc| {
        let side = sc.spawn(|| -> Result<_> {
            let near = ingest::warnings::id_collisions(&ids, true);
            let keep = match view.is_all() {
                true => None,
                false => Some(view::mask(view, &rows, &settings)?),
            };
            let by_day = rows_by_day(&rows.fields, keep.as_deref());
            Ok((near, keep, by_day))
        });
        let agg = graph::aggregate(&rows, keys, want_row_edges);
        (
            agg,
            side.join().unwrap_or_else(|p| std::panic::resume_unwind(p)),
        )
    });
    let (near_duplicates, keep, exposures_by_day) = side?;
    ledger.warnings.extend(near_duplicates);
    let merge_pairs = t1.elapsed().as_secs_f64();
    let peak_merge = peak_mib();
    count_used(&mut ledger, &rows.per_file, &agg.used_per_file);
    let (edges, edge_of_row, rows_in_view) = if view.is_all() {
        (agg.edges, agg.edge_of_row, agg.rows as u64)
    } else {
        // The ledger above counted every row; the network is built from the view's rows only.
        let keep = keep.unwrap_or_default();
        let mut subset = rows.subset(&keep);
        let keys = std::mem::take(&mut subset.keys);
        let sub = graph::aggregate(&subset, keys, !exposure_extras.names.is_empty());
        let edge_of_row = if exposure_extras.names.is_empty() {
            Vec::new()
        } else {
            // Rows outside the view map to no pair.
            let mut sub_of_row = sub.edge_of_row.into_iter();
            keep.iter()
                .map(|&k| match k {
                    true => sub_of_row.next().unwrap_or(u32::MAX),
                    false => u32::MAX,
                })
                .collect()
        };
        let in_view = keep.iter().filter(|&&k| k).count() as u64;
        (sub.edges, edge_of_row, in_view)
    };
    drop(rows);
    crate::memory::give_back_freed_memory();
    let t2 = std::time::Instant::now();
    // The neighbour lists here; petgraph's adjacency from them beside what comes next.
    let lists = graph::lists(ids.len(), &edges);
    ledger
        .warnings
        .extend(code_like_hubs(&ids, lists.degrees()));
    let graph = graph::AdjacencyCell::new(lists);
    crate::memory::give_back_after_load();
    let timings = Timings {
        parse: parse_secs,
        reconcile: reconcile_secs,
        merge_pairs,
        graph: t2.elapsed().as_secs_f64(),
        peak_mib: [peak_read, peak_merge, peak_mib()],
    };
    Ok(Dataset {
        ids,
        people_in_table,
        attrs,
        edges,
        settings,
        graph,
        ledger,
        as_of,
        timings,
        exposure_extras,
        edge_of_row,
        view: (view.clone(), rows_in_view),
        exposures_by_day,
    })
}

/// Rows per (date, setting) over the rows `keep` names (None: all), sorted. Counted in a dense
/// array over the dates' range when it is not absurdly wide (a hash map otherwise).
fn rows_by_day(f: &ingest::fields::ExposureFields, keep: Option<&[bool]>) -> Vec<(i32, u16, u64)> {
    use ingest::reconcile::NO_DATE;
    let n = f.last.len().max(f.first.len());
    let day_of = |r: usize| {
        let last = f.last.get(r).copied().unwrap_or(NO_DATE);
        match last != NO_DATE {
            true => last,
            false => f.first.get(r).copied().unwrap_or(NO_DATE),
        }
    };
    let rows = (0..n).filter(|&r| keep.is_none_or(|k| k[r]));
    let (mut lo, mut hi) = (i32::MAX, i32::MIN);
    for r in rows.clone() {
        let d = day_of(r);
        if d != NO_DATE {
            lo = lo.min(d);
            hi = hi.max(d);
        }
    }
    if lo > hi {
        return Vec::new();
    }
    let settings = f.setting.iter().copied().max().unwrap_or(0) as usize + 1;
    let span = (i64::from(hi) - i64::from(lo) + 1) as usize;
    let mut out = Vec::new();
    if span.saturating_mul(settings) <= 1 << 22 {
        let mut counts = vec![0u64; span * settings];
        for r in rows {
            let d = day_of(r);
            if d != NO_DATE {
                let s = f.setting.get(r).copied().unwrap_or(0) as usize;
                counts[(d - lo) as usize * settings + s] += 1;
            }
        }
        for (i, &c) in counts.iter().enumerate().filter(|(_, &c)| c > 0) {
            out.push((lo + (i / settings) as i32, (i % settings) as u16, c));
        }
    } else {
        let mut counts: std::collections::HashMap<(i32, u16), u64> =
            std::collections::HashMap::new();
        for r in rows {
            let d = day_of(r);
            if d != NO_DATE {
                *counts
                    .entry((d, f.setting.get(r).copied().unwrap_or(0)))
                    .or_insert(0) += 1;
            }
        }
        out = counts.into_iter().map(|((d, s), c)| (d, s, c)).collect();
        out.sort_unstable();
    }
    out
}

/// People whose ID reads like a missing-value code and whose number of contacts is far above
/// everyone else's (more than 10 and more than five times the 99th percentile): most likely
/// "contact not identified" entered as an ID, which bends every statistic.
fn code_like_hubs(ids: &IdMap, degrees: &[u32]) -> Option<ingest::ledger::Warning> {
    let n = ids.len();
    if n == 0 {
        return None;
    }
    let degree = |i: usize| degrees[i] as usize;
    let mut ordered: Vec<usize> = (0..n).map(degree).collect();
    let k = (n * 99 / 100).min(n - 1);
    let p99 = *ordered.select_nth_unstable(k).1;
    let bar = (5 * p99).max(10);
    let hits: Vec<String> = (0..n)
        .filter(|&i| degree(i) > bar && ingest::warnings::looks_like_code(ids.name(i as u32)))
        .map(|i| format!("\"{}\" ({} contacts)", ids.name(i as u32), degree(i)))
        .collect();
    if hits.is_empty() {
        return None;
    }
    Some(ingest::ledger::Warning {
        code: "code_like_id_with_many_contacts",
        message: format!(
            "{} has far more contacts than anyone else (99% of people have at most {p99}) and looks like a \
             missing-value code; if it means \"not identified\", add it with --missing-values so its rows \
             are set aside instead of forming a hub",
            hits.join(", ")
        ),
        count: hits.len() as u64,
    })
}

/// Exposure rows that were usable are used (the first of their pair) or merged; then the
/// per-table totals.
fn count_used(ledger: &mut Ledger, per_file: &[(usize, usize)], used_per_file: &[u64]) {
    for (&(file, n), &used) in per_file.iter().zip(used_per_file) {
        let c = &mut ledger.files[file].counts;
        c.used += used;
        c.merged += n as u64 - used;
    }
    for f in &ledger.files {
        let total = if f.role == Role::People {
            &mut ledger.people
        } else {
            &mut ledger.exposures
        };
        total.add(&f.counts);
    }
}
