//! Reading the tables: a file or a folder of part files each, and their columns as integers,
//! text, doubles and dates, with the table and column named in every message.

use std::path::{Path, PathBuf};

use polars::prelude::*;

use crate::error::{Error, Result};
use crate::ingest::dates;
use crate::ingest::reconcile::NO_DATE;

pub(super) fn bad(dir: &Path, table: &str, msg: impl std::fmt::Display) -> Error {
    Error::format(dir.join(table), format!("aggregate table {table}: {msg}"))
}

/// The files of one table: `name.parquet`, or the `.parquet` part files of the folder `name`.
pub(super) fn table_files(dir: &Path, name: &str) -> Option<Vec<PathBuf>> {
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
pub(super) fn read_table(dir: &Path, name: &str) -> Result<Option<DataFrame>> {
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

pub(super) fn need(dir: &Path, name: &str) -> Result<DataFrame> {
    read_table(dir, name)?.ok_or_else(|| {
        Error::format(
            dir.join(name),
            format!(
                "aggregate table {name} is missing ({name}.parquet or a folder {name}/ of part files): \
                 run the SQL of `hubwatch sql` with --parquet pointing here"
            ),
        )
    })
}

/// A column as integers (NULL is an error).
pub(super) fn ints(df: &DataFrame, dir: &Path, table: &str, col: &str) -> Result<Vec<i64>> {
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
pub(super) fn texts(
    df: &DataFrame,
    dir: &Path,
    table: &str,
    col: &str,
) -> Result<Vec<Option<String>>> {
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
pub(super) fn floats(df: &DataFrame, dir: &Path, table: &str, col: &str) -> Result<Vec<f64>> {
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
pub(super) fn days_of(df: &DataFrame, dir: &Path, table: &str, col: &str) -> Result<Vec<i32>> {
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

pub(super) fn node_of(v: i64, n: usize, dir: &Path, table: &str) -> Result<u32> {
    if v < 0 || v as usize >= n {
        return Err(bad(
            dir,
            table,
            format!("node {v} is not in the nodes table (0..{n})"),
        ));
    }
    Ok(v as u32)
}
