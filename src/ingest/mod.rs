//! Files -> checked frames -> people, contact pairs and the row ledger.
//!
//! `load` takes the paths the user gave (files or a folder), decides which file is the people
//! table and which the exposures table *by their columns*, reads each in bounded chunks, and
//! returns a [`Dataset`]: the ID map, people's attributes, aggregated pairs, the adjacency and
//! the ledger that accounts for every row.

pub mod dates;
pub mod formats;
pub mod ledger;
pub mod mapping;
pub mod reconcile;
pub mod sniff;
pub mod table;

use std::collections::BTreeMap;
use std::io::IsTerminal;
use std::path::{Path, PathBuf};

use crate::config::{Config, EXPOSURE_FIELDS, PEOPLE_FIELDS};
use crate::error::{Error, Result};
use crate::graph::{self, Adjacency, Edges};
use crate::ids::IdMap;
use ledger::{Counts, FileReport, Ledger, QuarantineReason, QuarantinedRow, Role};
use mapping::{ColumnRef, Mapping};
use reconcile::{Attributes, ExposureRows, FieldChecker, FileCtx, PeopleBuilder};
use table::{ReadOptions, Table};

/// Options of one load.
#[derive(Debug, Clone)]
pub struct LoadOptions {
    /// `--column` overrides.
    pub overrides: Vec<(String, ColumnRef)>,
    /// Reference date (days since 0001-01-01) for "future" dates.
    pub as_of: i32,
    /// Reading options (sheet name, chunk size).
    pub read: ReadOptions,
    /// Show a progress indicator on stderr (only if it is a terminal).
    pub progress: bool,
    /// Which exposure rows form the network (all by default).
    pub view: View,
}

/// A sub-network: exposure rows kept by setting and by date. The people stay the same (N does
/// not change); the ledger always accounts for every input row.
#[derive(Debug, Clone, Default, PartialEq, Eq, serde::Serialize)]
pub struct View {
    /// Keep only rows whose setting is one of these (case-insensitive); empty = any.
    pub settings: Vec<String>,
    /// Drop rows whose setting is one of these.
    pub exclude_settings: Vec<String>,
    /// First day of the exposure-date window (rows without a date fall outside any window).
    pub from: Option<i32>,
    /// Last day of the window.
    pub to: Option<i32>,
}

impl View {
    /// True when every row is kept.
    pub fn is_all(&self) -> bool {
        *self == View::default()
    }

    /// A short description for reports.
    pub fn describe(&self) -> String {
        let mut parts = Vec::new();
        if !self.settings.is_empty() {
            parts.push(format!("setting {}", self.settings.join(" or ")));
        }
        if !self.exclude_settings.is_empty() {
            parts.push(format!(
                "every setting but {}",
                self.exclude_settings.join(", ")
            ));
        }
        match (self.from, self.to) {
            (Some(a), Some(b)) => {
                parts.push(format!("exposures {} to {}", dates::iso(a), dates::iso(b)))
            }
            (Some(a), None) => parts.push(format!("exposures from {}", dates::iso(a))),
            (None, Some(b)) => parts.push(format!("exposures until {}", dates::iso(b))),
            (None, None) => {}
        }
        if parts.is_empty() {
            "all exposures".into()
        } else {
            parts.join("; ")
        }
    }
}

/// Which rows of `rows` the view keeps; unknown setting names are an error naming the known ones.
fn view_mask(view: &View, rows: &ExposureRows, labels: &[String]) -> Result<Vec<bool>> {
    let code_of = |name: &String| -> Result<u16> {
        labels
            .iter()
            .position(|l| l.eq_ignore_ascii_case(name))
            .map(|i| (i + 1) as u16)
            .ok_or_else(|| {
                Error::Usage(format!(
                    "no exposure has setting \"{name}\"; settings in this export: {}",
                    labels.join(", ")
                ))
            })
    };
    let include: Vec<u16> = view.settings.iter().map(code_of).collect::<Result<_>>()?;
    let exclude: Vec<u16> = view
        .exclude_settings
        .iter()
        .map(code_of)
        .collect::<Result<_>>()?;
    Ok((0..rows.keys.len())
        .map(|r| {
            let code = rows.setting.get(r).copied().unwrap_or(0);
            if (!include.is_empty() && !include.contains(&code)) || exclude.contains(&code) {
                return false;
            }
            if view.from.is_none() && view.to.is_none() {
                return true;
            }
            let last = rows.last.get(r).copied().unwrap_or(reconcile::NO_DATE);
            let day = if last != reconcile::NO_DATE {
                last
            } else {
                rows.first.get(r).copied().unwrap_or(reconcile::NO_DATE)
            };
            day != reconcile::NO_DATE
                && view.from.is_none_or(|f| day >= f)
                && view.to.is_none_or(|t| day <= t)
        })
        .collect())
}

/// A source of table bytes: a path, or a table compiled into the binary.
#[derive(Debug, Clone)]
pub enum Input {
    /// A file or folder on disk.
    Path(PathBuf),
    /// Built-in bytes with a display name.
    Builtin {
        /// Shown in reports.
        name: PathBuf,
        /// File contents (CSV).
        bytes: &'static [u8],
    },
}

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
    /// The graph.
    pub graph: Adjacency,
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
}

/// Wall-clock seconds spent in each stage of a load (for the benchmark and `--verbose` use).
#[derive(Debug, Clone, Copy, Default, serde::Serialize)]
pub struct Timings {
    /// Opening files, scanning lines and parsing text into frames (polars).
    pub parse: f64,
    /// Checking rows, parsing dates and numbers, interning IDs (the ledger).
    pub reconcile: f64,
    /// Sorting rows by pair and aggregating repeats.
    pub merge_pairs: f64,
    /// Building the adjacency (petgraph Csr).
    pub graph: f64,
    /// Peak resident memory (MiB) of the process after parse+reconcile, merge and graph
    /// (Linux only; NaN elsewhere). The peak is monotonic, so each figure covers all earlier stages.
    pub peak_mib: [f64; 3],
}

/// Peak resident memory of this process so far, in MiB (Linux `VmHWM`; NaN elsewhere).
pub fn peak_mib() -> f64 {
    std::fs::read_to_string("/proc/self/status")
        .ok()
        .and_then(|s| {
            s.lines()
                .find(|l| l.starts_with("VmHWM:"))
                .and_then(|l| l.split_whitespace().nth(1))
                .and_then(|v| v.parse::<f64>().ok())
        })
        .map_or(f64::NAN, |kib| kib / 1024.0)
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

/// An opened table with its role and mapping.
struct Planned {
    table: Table,
    role: Role,
    mapping: Mapping,
}

/// A table opened from the inputs; `in_folder` tables may be skipped when unrecognised.
struct Opened {
    table: Table,
    in_folder: bool,
}

fn open_input(
    input: &Input,
    config: &Config,
    read: &ReadOptions,
    ignored: &mut Vec<(PathBuf, String)>,
) -> Result<Vec<Opened>> {
    match input {
        Input::Builtin { name, bytes } => Ok(vec![Opened {
            table: Table::open_bytes(name, bytes.to_vec(), config)?,
            in_folder: false,
        }]),
        Input::Path(p) if p.is_dir() => {
            let mut files: Vec<PathBuf> = std::fs::read_dir(p)
                .map_err(|e| Error::io(p, e))?
                .filter_map(|e| e.ok().map(|e| e.path()))
                .filter(|f| f.is_file() && table::FileKind::is_table_file(f))
                .collect();
            files.sort();
            if files.is_empty() {
                return Err(Error::format(p, "the folder holds no table files (.csv, .tsv, .txt, .dat, .parquet, .ndjson, .jsonl, .xlsx, optionally .gz)"));
            }
            let mut out = Vec::new();
            for f in files {
                match Table::open(&f, config, read) {
                    Ok(table) => out.push(Opened {
                        table,
                        in_folder: true,
                    }),
                    Err(e) => ignored.push((f, format!("not read: {e}"))),
                }
            }
            Ok(out)
        }
        Input::Path(p) => Ok(vec![Opened {
            table: Table::open(p, config, read)?,
            in_folder: false,
        }]),
    }
}

/// Decide each table's role by its columns: exposures if it has source and target, people if
/// it has a person ID. A table with neither is an error naming the closest headers.
fn plan(
    tables: Vec<Opened>,
    config: &Config,
    overrides: &[(String, ColumnRef)],
    ignored: &mut Vec<(PathBuf, String)>,
) -> Result<Vec<Planned>> {
    let mut out = Vec::new();
    let several = tables.len() > 1;
    for Opened { table, in_folder } in tables {
        let cols = &table.meta.columns;
        let exp = mapping::resolve(cols, config, overrides, &EXPOSURE_FIELDS);
        if exp.get("source_id").is_some() && exp.get("target_id").is_some() {
            out.push(Planned {
                table,
                role: Role::Exposures,
                mapping: exp,
            });
            continue;
        }
        let ppl = mapping::resolve(cols, config, overrides, &PEOPLE_FIELDS);
        if ppl.get("person_id").is_some() && (several || exp.get("source_id").is_none()) {
            out.push(Planned {
                table,
                role: Role::People,
                mapping: ppl,
            });
            continue;
        }
        let missing = if exp.get("source_id").is_none() {
            "source_id"
        } else {
            "target_id"
        };
        if in_folder {
            let err = mapping::missing_field_error(
                &table.meta.path,
                cols,
                missing,
                config,
                table.meta.headerless,
            );
            ignored.push((
                table.meta.path.clone(),
                format!("neither a people nor an exposures table: {err}"),
            ));
            continue;
        }
        return Err(mapping::missing_field_error(
            &table.meta.path,
            cols,
            missing,
            config,
            table.meta.headerless,
        ));
    }
    if !out.iter().any(|p| p.role == Role::Exposures) {
        let Some(first) = out.first().map(|p| &p.table.meta) else {
            let why: Vec<String> = ignored
                .iter()
                .map(|(p, w)| format!("{}: {w}", p.display()))
                .collect();
            return Err(Error::Usage(format!(
                "no table could be used. {}",
                why.join("; ")
            )));
        };
        return Err(Error::format(
            &first.path,
            format!(
                "no exposures table found: every file given looks like a people table. Give a file with \
                 source and target columns (headers found here: {}), or map them with --column source_id=… --column target_id=…",
                first.columns.join(", ")
            ),
        ));
    }
    // People first, so that the people table fixes the first node indices.
    out.sort_by_key(|p| p.role);
    Ok(out)
}

fn describe_format(meta: &table::TableMeta) -> String {
    match (meta.kind, meta.separator) {
        (table::FileKind::Text, Some(s)) => format!("delimited text ({})", s.describe()),
        (table::FileKind::Text, None) => "delimited text".into(),
        (table::FileKind::Parquet, _) => "Parquet".into(),
        (table::FileKind::NdJson, _) => "newline-delimited JSON".into(),
        (table::FileKind::Excel, _) => "spreadsheet".into(),
    }
}

/// Load the inputs: read, check, reconcile, aggregate, and build the graph.
pub fn load(inputs: &[Input], config: &Config, opts: &LoadOptions) -> Result<Dataset> {
    let t0 = std::time::Instant::now();
    let mut in_reconcile = 0.0;
    let mut tables = Vec::new();
    let mut ignored = Vec::new();
    for input in inputs {
        tables.extend(open_input(input, config, &opts.read, &mut ignored)?);
    }
    if tables.is_empty() && ignored.is_empty() {
        return Err(Error::Usage("no input given".into()));
    }
    let planned = plan(tables, config, &opts.overrides, &mut ignored)?;
    let progress = Progress::new(opts.progress);
    let mut ledger = Ledger {
        ignored,
        ..Ledger::default()
    };
    let mut people = PeopleBuilder::new(config.ids.case_sensitive);
    let mut rows = ExposureRows::new();
    let mut problems = Vec::new();
    let mut people_in_table = 0u32;
    for Planned {
        table,
        role,
        mapping,
    } in planned
    {
        let file = ledger.files.len();
        let meta = table.meta.clone();
        let mut checker = FieldChecker::new(&config.dates.format, meta.excel_serials, opts.as_of);
        let mut ctx = FileCtx {
            file,
            meta: &meta,
            mapping: &mapping,
            counts: Counts::default(),
        };
        if role == Role::Exposures && people_in_table == 0 {
            people_in_table = people.ids.len() as u32;
        }
        let rejected = table.read(&opts.read, |chunk| {
            let t = std::time::Instant::now();
            match role {
                Role::People => people.add_chunk(&mut ctx, &chunk, &mut checker)?,
                Role::Exposures => {
                    rows.add_chunk(&mut ctx, &chunk, &mut people.ids, &mut checker)?
                }
            }
            progress.tick(&meta.path, ctx.counts.read);
            in_reconcile += t.elapsed().as_secs_f64();
            Ok(())
        })?;
        let sink = if role == Role::People {
            &mut people.quarantined
        } else {
            &mut rows.quarantined
        };
        for r in rejected {
            ctx.counts.read += 1;
            ctx.counts.quarantined += 1;
            sink.push(QuarantinedRow {
                file,
                line: r.line,
                reason: QuarantineReason::WrongFieldCount { detail: r.reason },
                raw: r.raw,
            });
        }
        problems.append(&mut checker.problems);
        let named: BTreeMap<String, String> = mapping
            .fields
            .iter()
            .map(|(f, &i)| (f.clone(), meta.columns[i].clone()))
            .collect();
        ledger.files.push(FileReport {
            path: meta.path.clone(),
            role,
            format: describe_format(&meta),
            header: !meta.headerless,
            mapping: named,
            counts: ctx.counts,
        });
    }
    progress.finish();
    if !ledger.files.iter().any(|f| f.role == Role::People) {
        people_in_table = 0;
    }
    rows.pad();
    let read_done = t0.elapsed().as_secs_f64();
    let peak_read = peak_mib();
    let t1 = std::time::Instant::now();
    let agg = graph::aggregate(&rows, !rows.extras.names.is_empty());
    let merge_pairs = t1.elapsed().as_secs_f64();
    let peak_merge = peak_mib();
    // Exposure rows that were usable are used (first of their pair) or merged.
    let mut start = 0;
    for &(file, n) in &rows.per_file {
        let used = agg.first_of_pair[start..start + n]
            .iter()
            .filter(|&&f| f)
            .count() as u64;
        let c = &mut ledger.files[file].counts;
        c.used += used;
        c.merged += n as u64 - used;
        start += n;
    }
    for f in &ledger.files {
        let total = if f.role == Role::People {
            &mut ledger.people
        } else {
            &mut ledger.exposures
        };
        total.add(&f.counts);
    }
    ledger.quarantined = people.quarantined;
    ledger.quarantined.append(&mut rows.quarantined);
    ledger.problems = problems;
    let mut attrs = people.attrs;
    let n = people.ids.len();
    for v in attrs.values.iter_mut() {
        v.resize(n, None);
    }
    let settings = (0..rows.settings.len() as u32)
        .map(|i| rows.settings.name(i).to_string())
        .collect();
    let exposure_extras = std::mem::take(&mut rows.extras);
    let (edges, edge_of_row, rows_in_view) = if opts.view.is_all() {
        (agg.edges, agg.edge_of_row, rows.keys.len() as u64)
    } else {
        // The ledger above counted every row; the network is built from the view's rows only.
        let labels: Vec<String> = (0..rows.settings.len() as u32)
            .map(|i| rows.settings.name(i).to_string())
            .collect();
        let keep = view_mask(&opts.view, &rows, &labels)?;
        let sub = graph::aggregate(&rows.subset(&keep), !exposure_extras.names.is_empty());
        // Rows outside the view map to no pair.
        let mut sub_of_row = sub.edge_of_row.into_iter();
        let edge_of_row = if exposure_extras.names.is_empty() {
            Vec::new()
        } else {
            keep.iter()
                .map(|&k| {
                    if k {
                        sub_of_row.next().unwrap_or(u32::MAX)
                    } else {
                        u32::MAX
                    }
                })
                .collect()
        };
        let in_view = keep.iter().filter(|&&k| k).count() as u64;
        (sub.edges, edge_of_row, in_view)
    };
    drop(rows);
    let t2 = std::time::Instant::now();
    let graph = graph::adjacency(n, &edges);
    let timings = Timings {
        parse: read_done - in_reconcile,
        reconcile: in_reconcile,
        merge_pairs,
        graph: t2.elapsed().as_secs_f64(),
        peak_mib: [peak_read, peak_merge, peak_mib()],
    };
    Ok(Dataset {
        ids: people.ids,
        people_in_table,
        attrs,
        edges,
        settings,
        graph,
        ledger,
        as_of: opts.as_of,
        timings,
        exposure_extras,
        edge_of_row,
        view: (opts.view.clone(), rows_in_view),
    })
}

/// A spinner with the row count, shown only on a terminal.
struct Progress(Option<indicatif::ProgressBar>);

impl Progress {
    fn new(wanted: bool) -> Progress {
        if !wanted || !std::io::stderr().is_terminal() {
            return Progress(None);
        }
        let bar = indicatif::ProgressBar::new_spinner();
        bar.enable_steady_tick(std::time::Duration::from_millis(120));
        Progress(Some(bar))
    }

    fn tick(&self, path: &Path, rows: u64) {
        if let Some(b) = &self.0 {
            b.set_message(format!("reading {}: {rows} rows", path.display()));
        }
    }

    fn finish(&self) {
        if let Some(b) = &self.0 {
            b.finish_and_clear();
        }
    }
}
