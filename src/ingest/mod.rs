//! Files -> checked frames -> people, contact pairs and the row ledger.
//!
//! `load` takes the paths the user gave (files or a folder), decides which file is the people
//! table and which the exposures table *by their columns*, reads each in bounded chunks, and
//! returns a [`Dataset`]: the ID map, people's attributes, aggregated pairs, the adjacency and
//! the ledger that accounts for every row.

pub mod aggregates;
pub mod cells;
pub mod dates;
pub mod decode;
pub mod delims;
pub mod fields;
pub mod formats;
pub mod intern;
pub mod ledger;
pub mod mapping;
pub mod people;
mod pieces;
pub mod reconcile;
pub mod roles;
pub mod rows;
pub mod rules;
pub mod scan;
pub mod sniff;
pub mod sql;
pub mod table;
pub mod view;
pub mod warnings;

pub use view::View;

use std::collections::BTreeMap;
use std::io::IsTerminal;
use std::path::{Path, PathBuf};

use crate::config::Config;
use crate::error::{Error, Result};
use crate::ids::IdMap;
use ledger::{Counts, FileReport, Ledger, QuarantineReason, QuarantinedRow, Role};
use mapping::ColumnRef;
use people::PeopleBuilder;
use reconcile::{Attributes, FieldChecker, FileCtx};
use roles::Planned;
use rows::ExposureRows;
use table::ReadOptions;

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

impl LoadOptions {
    /// Defaults: no overrides, default reading, no progress, every exposure row; `as_of` the
    /// reference date.
    pub fn new(as_of: i32) -> LoadOptions {
        LoadOptions {
            overrides: Vec::new(),
            as_of,
            read: ReadOptions::default(),
            progress: false,
            view: View::default(),
        }
    }
}

/// A source of table bytes: a path, or a table compiled into the binary.
#[derive(Debug, Clone)]
pub enum Input {
    /// A file or folder on disk; each table's role is decided by its columns (or the
    /// configuration's `[input] people` / `exposures` lists).
    Path(PathBuf),
    /// A file whose role the user gave (`--people FILE`, `--exposures FILE`).
    Given {
        /// The file.
        path: PathBuf,
        /// Its role.
        role: Role,
    },
    /// A folder of aggregate tables made by `hubwatch sql` in a database engine (read by
    /// [`crate::dataset::load`], never with other inputs).
    Aggregates(PathBuf),
    /// Built-in bytes with a display name.
    Builtin {
        /// Shown in reports.
        name: PathBuf,
        /// File contents (CSV).
        bytes: &'static [u8],
    },
}

/// What reading the inputs gives: people, their attributes, the usable exposure rows (not yet
/// merged into pairs) and the ledger (used / merged counts are filled in when the rows are
/// merged, see `dataset`).
pub struct Loaded {
    /// Person ID <-> node index.
    pub ids: IdMap,
    /// Nodes `0..people_in_table` came from a people table; the rest are implied.
    pub people_in_table: u32,
    /// People's attributes, one value per node.
    pub attrs: Attributes,
    /// Every usable exposure row, in input order.
    pub rows: ExposureRows,
    /// The ledger of rows and problems (used and merged still zero).
    pub ledger: Ledger,
    /// The as-of date used.
    pub as_of: i32,
    /// Seconds spent opening files, scanning lines and parsing text (polars).
    pub parse_secs: f64,
    /// Seconds spent checking rows, parsing fields and interning IDs.
    pub reconcile_secs: f64,
    /// Peak resident memory (MiB) after reading.
    pub peak_mib: f64,
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

/// CPU time (user and system) this process has used so far, in seconds, on all its threads
/// (Unix `getrusage`; NaN elsewhere).
pub fn cpu_secs() -> f64 {
    #[cfg(unix)]
    {
        // SAFETY: getrusage fills the zeroed struct it is given.
        let mut u: libc::rusage = unsafe { std::mem::zeroed() };
        if unsafe { libc::getrusage(libc::RUSAGE_SELF, &mut u) } == 0 {
            let secs = |tv: libc::timeval| tv.tv_sec as f64 + tv.tv_usec as f64 * 1e-6;
            return secs(u.ru_utime) + secs(u.ru_stime);
        }
    }
    f64::NAN
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

/// Read the inputs: open, decide roles, check and reconcile every row into the ledger.
pub fn read(inputs: &[Input], config: &Config, opts: &LoadOptions) -> Result<Loaded> {
    let t0 = std::time::Instant::now();
    // Each input opened (read, decoded, its header found) on a core of its own; the results
    // taken in input order, so the first failing input is the one reported.
    let open = |input: &Input| {
        let mut ignored = Vec::new();
        roles::open_input(input, config, &opts.read, &mut ignored).map(|t| (t, ignored))
    };
    let opened: Vec<Result<_>> = {
        use rayon::prelude::*;
        inputs.par_iter().map(open).collect()
    };
    let mut tables = Vec::new();
    let mut ignored = Vec::new();
    for o in opened {
        let (t, mut i) = o?;
        tables.extend(t);
        ignored.append(&mut i);
    }
    if tables.is_empty() && ignored.is_empty() {
        return Err(Error::Usage("no input given".into()));
    }
    let planned = roles::plan(tables, config, &opts.overrides, &mut ignored)?;
    let mut r = Reading {
        ledger: Ledger {
            ignored,
            ..Ledger::default()
        },
        people: PeopleBuilder::new(config.ids.case_sensitive),
        rows: ExposureRows::new(),
        problems: Vec::new(),
        people_in_table: 0,
        in_reconcile: 0.0,
        progress: Progress::new(opts.progress),
    };
    // Each table's first piece is tokenised by the reader of the table before it, once that
    // has parsed its own last piece (see `Table::read`).
    let mut planned = planned.into_iter().peekable();
    let mut first = None;
    while let Some(p) = planned.next() {
        let next = planned.peek().map(|n| &n.table);
        first = r.table(p, (first.take(), next), config, opts)?;
    }
    r.progress.finish();
    let Reading {
        mut ledger,
        people,
        mut rows,
        problems,
        mut people_in_table,
        in_reconcile,
        ..
    } = r;
    if !ledger.files.iter().any(|f| f.role == Role::People) {
        people_in_table = 0;
    }
    rows.pad();
    ledger.quarantined = people.quarantined;
    ledger.quarantined.append(&mut rows.quarantined);
    ledger.problems = problems;
    let mut attrs = people.attrs;
    let n = people.ids.len();
    for v in attrs.values.iter_mut() {
        v.resize(n);
    }
    let read_secs = t0.elapsed().as_secs_f64();
    Ok(Loaded {
        ids: people.ids,
        people_in_table,
        attrs,
        rows,
        ledger,
        as_of: opts.as_of,
        parse_secs: read_secs - in_reconcile,
        reconcile_secs: in_reconcile,
        peak_mib: peak_mib(),
    })
}

/// Append the joined (composite) columns to a chunk, after the file's own columns (named
/// `names`).
fn join_columns(
    chunk: &mut table::Chunk<'_>,
    joined: &[(String, Vec<usize>)],
    names: &[String],
    path: &Path,
) -> Result<()> {
    use polars::prelude::*;
    let cells = std::mem::replace(&mut chunk.cells, cells::Cells::Frame(DataFrame::empty()));
    let mut frame = cells.into_frame(names, path)?;
    let polars_err = |e| Error::Polars {
        path: path.to_path_buf(),
        source: e,
    };
    for (name, parts) in joined {
        let cols: Vec<&StringChunked> = parts
            .iter()
            .map(|&c| frame.columns()[c].str().map_err(polars_err))
            .collect::<Result<_>>()?;
        let values: Vec<Option<String>> = (0..frame.height())
            .map(|r| {
                let p: Vec<Option<&str>> = cols.iter().map(|c| c.get(r)).collect();
                mapping::join_parts(&p)
            })
            .collect();
        frame
            .with_column(Column::new(name.as_str().into(), values))
            .map_err(polars_err)?;
    }
    chunk.cells = cells::Cells::Frame(frame);
    Ok(())
}

/// The value rules of a load, from the configuration.
pub fn rules(config: &Config, as_of: i32) -> rules::Rules {
    let years = f64::from(config.dates.oldest_years);
    rules::Rules::new(
        &config.input.missing_values,
        as_of.saturating_sub((years * 365.2425).round() as i32),
        config.input.max_duration_min,
    )
}

/// The state of one load while its tables are read.
struct Reading {
    ledger: Ledger,
    people: PeopleBuilder,
    rows: ExposureRows,
    problems: Vec<ledger::FieldProblem>,
    people_in_table: u32,
    in_reconcile: f64,
    progress: Progress,
}

impl Reading {
    /// Read one table in chunks into the people or the exposure rows, and its ledger entry.
    /// `first` is this table's first piece if tokenised ahead; the next table's is returned
    /// (see `Table::read`).
    fn table(
        &mut self,
        planned: Planned,
        (first, next): (Option<table::FirstPiece>, Option<&table::Table>),
        config: &Config,
        opts: &LoadOptions,
    ) -> Result<Option<table::FirstPiece>> {
        let Planned {
            table,
            role,
            mapping,
            role_by,
        } = planned;
        let file = self.ledger.files.len();
        let mut meta = table.meta.clone();
        let base_columns = meta.columns.len();
        meta.columns
            .extend(mapping.joined.iter().map(|(name, _)| name.clone()));
        let mut checker = FieldChecker::new(
            &config.dates.format,
            meta.excel_serials,
            opts.as_of,
            rules(config, opts.as_of),
        );
        let mut ctx = FileCtx {
            file,
            meta: &meta,
            mapping: &mapping,
            counts: Counts::default(),
        };
        if role == Role::Exposures && self.people_in_table == 0 {
            self.people_in_table = self.people.ids.len() as u32;
        }
        let (rejected, next_first) = table.read(&opts.read, (first, next), |mut chunk| {
            let t = std::time::Instant::now();
            if !mapping.joined.is_empty() {
                let names = &meta.columns[..base_columns];
                join_columns(&mut chunk, &mapping.joined, names, &meta.path)?;
            }
            match role {
                Role::People => self.people.add_chunk(&mut ctx, &chunk, &mut checker)?,
                Role::Exposures => {
                    self.rows
                        .add_chunk(&mut ctx, &chunk, &mut self.people.ids, &mut checker)?
                }
            }
            self.progress.tick(&meta.path, ctx.counts.read);
            self.in_reconcile += t.elapsed().as_secs_f64();
            Ok(())
        })?;
        if role == Role::Exposures {
            self.rows.finish_ids(&mut self.people.ids);
        }
        let sink = if role == Role::People {
            &mut self.people.quarantined
        } else {
            &mut self.rows.quarantined
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
        self.problems.append(&mut checker.problems);
        let named: BTreeMap<String, String> = mapping
            .fields
            .iter()
            .map(|(f, &i)| (f.clone(), meta.columns[i].clone()))
            .collect();
        self.ledger.files.push(FileReport {
            path: meta.path.clone(),
            role,
            format: describe_format(&meta),
            header: !meta.headerless,
            mapping: named,
            encoding: meta
                .encoding
                .as_ref()
                .map(|e| format!("{} ({})", e.name, e.how)),
            role_by,
            counts: ctx.counts,
        });
        Ok(next_first)
    }
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
