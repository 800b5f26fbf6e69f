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
pub mod rows;
pub mod sniff;
pub mod table;
pub mod view;

pub use view::View;

use std::collections::BTreeMap;
use std::io::IsTerminal;
use std::path::{Path, PathBuf};

use crate::config::{Config, EXPOSURE_FIELDS, PEOPLE_FIELDS};
use crate::error::{Error, Result};
use crate::ids::IdMap;
use ledger::{Counts, FileReport, Ledger, QuarantineReason, QuarantinedRow, Role};
use mapping::{ColumnRef, Mapping};
use reconcile::{Attributes, FieldChecker, FileCtx, PeopleBuilder};
use rows::ExposureRows;
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

/// Read the inputs: open, decide roles, check and reconcile every row into the ledger.
pub fn read(inputs: &[Input], config: &Config, opts: &LoadOptions) -> Result<Loaded> {
    let t0 = std::time::Instant::now();
    let mut tables = Vec::new();
    let mut ignored = Vec::new();
    for input in inputs {
        tables.extend(open_input(input, config, &opts.read, &mut ignored)?);
    }
    if tables.is_empty() && ignored.is_empty() {
        return Err(Error::Usage("no input given".into()));
    }
    let planned = plan(tables, config, &opts.overrides, &mut ignored)?;
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
    for p in planned {
        r.table(p, config, opts)?;
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
        v.resize(n, None);
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
    fn table(&mut self, planned: Planned, config: &Config, opts: &LoadOptions) -> Result<()> {
        let Planned {
            table,
            role,
            mapping,
        } = planned;
        let file = self.ledger.files.len();
        let meta = table.meta.clone();
        let mut checker = FieldChecker::new(&config.dates.format, meta.excel_serials, opts.as_of);
        let mut ctx = FileCtx {
            file,
            meta: &meta,
            mapping: &mapping,
            counts: Counts::default(),
        };
        if role == Role::Exposures && self.people_in_table == 0 {
            self.people_in_table = self.people.ids.len() as u32;
        }
        let rejected = table.read(&opts.read, |chunk| {
            let t = std::time::Instant::now();
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
            counts: ctx.counts,
        });
        Ok(())
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
