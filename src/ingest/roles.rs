//! Which table is which. A role is never guessed silently: it is given (`--people FILE`,
//! `--exposures FILE`, or the configuration's `[input] people` / `exposures` lists), or decided
//! by the file's columns, and the ledger says how. A file without a header is taken as an
//! exposures table only when its mapped ID columns look like IDs: the attribute columns of a
//! people table (a class, a gender: few distinct values, each shared by many rows) do not.

use std::collections::HashMap;
use std::path::{Path, PathBuf};

use super::ledger::Role;
use super::mapping::{self, ColumnRef, Mapping};
use super::table::{self, ReadOptions, Table};
use super::Input;
use crate::config::{Config, EXPOSURE_FIELDS, PEOPLE_FIELDS};
use crate::error::{Error, Result};

/// An opened table with its role, its mapping and how the role was decided.
pub(super) struct Planned {
    pub table: Table,
    pub role: Role,
    pub mapping: Mapping,
    pub role_by: String,
}

impl Planned {
    fn new(table: Table, role: Role, mapping: Mapping, role_by: String) -> Planned {
        Planned {
            table,
            role,
            mapping,
            role_by,
        }
    }
}

/// A table opened from the inputs; `in_folder` tables may be skipped when unrecognised.
pub(super) struct Opened {
    table: Table,
    in_folder: bool,
    /// The role given by the user, and where.
    given: Option<(Role, String)>,
}

/// Open every table an input names (a folder's table files, sorted by name).
pub(super) fn open_input(
    input: &Input,
    config: &Config,
    read: &ReadOptions,
    ignored: &mut Vec<(PathBuf, String)>,
) -> Result<Vec<Opened>> {
    match input {
        Input::Builtin { name, bytes } => Ok(vec![Opened {
            table: Table::open_bytes(name, bytes.to_vec(), config)?,
            in_folder: false,
            given: None,
        }]),
        Input::Given { path, role } => {
            if path.is_dir() {
                return Err(Error::Usage(format!(
                    "--{} takes a file, and {} is a folder",
                    role.name(),
                    path.display()
                )));
            }
            Ok(vec![Opened {
                table: Table::open(path, config, read)?,
                in_folder: false,
                given: Some((*role, format!("given: --{}", role.name()))),
            }])
        }
        Input::Aggregates(p) => Err(Error::Usage(format!(
            "{}: aggregate tables are read on their own (--aggregates), not with export files",
            p.display()
        ))),
        Input::Path(p) if p.is_dir() => open_folder(p, config, read, ignored),
        Input::Path(p) => Ok(vec![Opened {
            table: Table::open(p, config, read)?,
            in_folder: false,
            given: configured_role(p, config),
        }]),
    }
}

fn open_folder(
    p: &Path,
    config: &Config,
    read: &ReadOptions,
    ignored: &mut Vec<(PathBuf, String)>,
) -> Result<Vec<Opened>> {
    let mut files: Vec<PathBuf> = std::fs::read_dir(p)
        .map_err(|e| Error::io(p, e))?
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|f| f.is_file() && table::FileKind::is_table_file(f))
        .collect();
    files.sort();
    if files.is_empty() {
        return Err(Error::format(p, "the folder holds no table files (.csv, .tsv, .txt, .dat, .parquet, .ndjson, .jsonl, .xlsx, optionally .gz)"));
    }
    // The files opened on the thread pool's workers, taken in name order.
    let opened: Vec<Result<Table>> = {
        use rayon::prelude::*;
        files
            .par_iter()
            .map(|f| Table::open(f, config, read))
            .collect()
    };
    let mut out = Vec::new();
    for (f, table) in files.into_iter().zip(opened) {
        match table {
            Ok(table) => out.push(Opened {
                given: configured_role(&f, config),
                table,
                in_folder: true,
            }),
            Err(e) => ignored.push((f, format!("not read: {e}"))),
        }
    }
    Ok(out)
}

/// The role the configuration gives a file: listed by name or by path.
fn configured_role(path: &Path, config: &Config) -> Option<(Role, String)> {
    let listed = |names: &[String]| {
        names.iter().any(|n| {
            let n = Path::new(n);
            path == n || (n.components().count() == 1 && path.file_name() == n.file_name())
        })
    };
    if listed(&config.input.people) {
        Some((
            Role::People,
            "given: [input] people in the configuration".into(),
        ))
    } else if listed(&config.input.exposures) {
        Some((
            Role::Exposures,
            "given: [input] exposures in the configuration".into(),
        ))
    } else {
        None
    }
}

/// Decide each table's role: as given, else by its columns (exposures if it has source and
/// target, people if it has a person ID). A table with neither is an error naming the closest
/// headers (or, in a folder, is listed as ignored).
pub(super) fn plan(
    tables: Vec<Opened>,
    config: &Config,
    overrides: &[(String, ColumnRef)],
    ignored: &mut Vec<(PathBuf, String)>,
) -> Result<Vec<Planned>> {
    let mut out = Vec::new();
    let several = tables.len() > 1;
    for opened in tables {
        if let Some((role, how)) = opened.given {
            out.push(given(opened.table, role, how, config, overrides)?);
            continue;
        }
        match by_columns(opened.table, several, config, overrides)? {
            Ok(p) => out.push(p),
            Err(r) if opened.in_folder => ignored.push((r.path, r.reason)),
            Err(r) => return Err(r.error),
        }
    }
    if !out.iter().any(|p| p.role == Role::Exposures) {
        return Err(no_exposures(&out, ignored));
    }
    // People first, so that the people table fixes the first node indices.
    out.sort_by_key(|p| p.role);
    Ok(out)
}

/// A table whose role was given: its required fields must map.
fn given(
    table: Table,
    role: Role,
    how: String,
    config: &Config,
    overrides: &[(String, ColumnRef)],
) -> Result<Planned> {
    let cols = &table.meta.columns;
    let (fields, required): (&[&str], &[&str]) = match role {
        Role::People => (&PEOPLE_FIELDS, &["person_id"]),
        Role::Exposures => (&EXPOSURE_FIELDS, &["source_id", "target_id"]),
    };
    let mapping = mapping::resolve(cols, config, overrides, fields);
    if let Some(missing) = required.iter().find(|f| mapping.get(f).is_none()) {
        return Err(mapping::missing_field_error(
            &table.meta.path,
            cols,
            missing,
            config,
            table.meta.headerless,
        ));
    }
    Ok(Planned::new(table, role, mapping, how))
}

/// A table no role fits: the reason shown when a folder's file is ignored, and the error
/// when the file was named.
struct Refused {
    path: PathBuf,
    reason: String,
    error: Error,
}

/// A role decided by the columns, or why none fits.
type ByColumns = std::result::Result<Planned, Refused>;

fn by_columns(
    table: Table,
    several: bool,
    config: &Config,
    overrides: &[(String, ColumnRef)],
) -> Result<ByColumns> {
    let cols = &table.meta.columns;
    let exp = mapping::resolve(cols, config, overrides, &EXPOSURE_FIELDS);
    if let (Some(s), Some(t)) = (exp.get("source_id"), exp.get("target_id")) {
        if table.meta.headerless {
            if let Some(why) = not_ids(&table, s, t) {
                let path = table.meta.path.clone();
                return Ok(Err(Refused {
                    error: Error::format(&path, why.clone()),
                    reason: why,
                    path,
                }));
            }
        }
        let role_by = format!(
            "by its columns: source_id ({}) and target_id ({}) mapped",
            exp.column_name(cols, s),
            exp.column_name(cols, t)
        );
        return Ok(Ok(Planned::new(table, Role::Exposures, exp, role_by)));
    }
    let ppl = mapping::resolve(cols, config, overrides, &PEOPLE_FIELDS);
    if let Some(p) = ppl.get("person_id") {
        if several || exp.get("source_id").is_none() {
            let role_by = format!(
                "by its columns: person_id ({}) mapped, no source and target",
                ppl.column_name(cols, p)
            );
            return Ok(Ok(Planned::new(table, Role::People, ppl, role_by)));
        }
    }
    let missing = if exp.get("source_id").is_none() {
        "source_id"
    } else {
        "target_id"
    };
    let err = mapping::missing_field_error(
        &table.meta.path,
        cols,
        missing,
        config,
        table.meta.headerless,
    );
    Ok(Err(Refused {
        path: table.meta.path.clone(),
        reason: format!("neither a people nor an exposures table: {err}"),
        error: err,
    }))
}

/// Rows sampled to judge a headerless file's ID columns.
const SAMPLE_ROWS: usize = 2000;

/// Why the mapped ID columns of a headerless file do not look like person IDs, if they do
/// not: a column is categorical when it has few distinct values each shared by many rows;
/// both categorical, or one categorical and no value shared between the two, reads as a
/// people table's attributes.
fn not_ids(table: &Table, s: usize, t: usize) -> Option<String> {
    let rows = table.sample_rows(SAMPLE_ROWS);
    let col = |c: usize| -> Vec<&str> {
        rows.iter()
            .filter_map(|r| r.get(c).map(|v| v.trim()))
            .filter(|v| !v.is_empty())
            .collect()
    };
    let (sv, tv) = (col(s), col(t));
    let (cs, ct) = (categorical(&sv), categorical(&tv));
    let shared = {
        let a: std::collections::HashSet<&str> = sv.iter().copied().collect();
        tv.iter().any(|v| a.contains(v))
    };
    if !((cs.is_some() && ct.is_some()) || ((cs.is_some() || ct.is_some()) && !shared)) {
        return None;
    }
    let (c, what) = match (cs, ct) {
        (Some(w), _) => (s, w),
        (None, Some(w)) => (t, w),
        (None, None) => return None,
    };
    let field = if c == s { "source_id" } else { "target_id" };
    Some(format!(
        "has no header, and column {} (mapped to {field}) holds few distinct values shared by many rows ({what}): \
         it looks like a people table's attribute, not person IDs. Say the file's role: \
         --people {} or --exposures {}",
        c + 1,
        table.meta.path.display(),
        table.meta.path.display()
    ))
}

/// When a column's values are categories (at least 20 values, at most one distinct value in
/// twenty and no more than 12 distinct): the commonest values with their counts.
fn categorical(values: &[&str]) -> Option<String> {
    if values.len() < 20 {
        return None;
    }
    let mut counts: HashMap<&str, usize> = HashMap::new();
    for v in values {
        *counts.entry(v).or_default() += 1;
    }
    if counts.len() > 12 || counts.len() * 20 > values.len() {
        return None;
    }
    let mut top: Vec<(&str, usize)> = counts.into_iter().collect();
    top.sort_by(|a, b| b.1.cmp(&a.1).then(a.0.cmp(b.0)));
    Some(
        top.iter()
            .take(3)
            .map(|(v, n)| format!("\"{v}\" x{n}"))
            .collect::<Vec<_>>()
            .join(", "),
    )
}

/// No exposures table among the inputs: say why, with the headers found.
fn no_exposures(out: &[Planned], ignored: &[(PathBuf, String)]) -> Error {
    let Some(first) = out.first().map(|p| &p.table.meta) else {
        let why: Vec<String> = ignored
            .iter()
            .map(|(p, w)| format!("{}: {w}", p.display()))
            .collect();
        return Error::Usage(format!("no table could be used. {}", why.join("; ")));
    };
    Error::format(
        &first.path,
        format!(
            "no exposures table found: every file given looks like a people table. Give a file with \
             source and target columns (headers found here: {}), or map them with --column source_id=… --column target_id=…",
            first.columns.join(", ")
        ),
    )
}
