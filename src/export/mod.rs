//! Exports the callers can work from: a table written as CSV, TSV, JSON, Parquet or xlsx, with
//! typed columns ([`Kind`]), always with the caution line and what is needed to trace it back
//! (as-of date, preset, weights, window, checksums of the input files).
//!
//! Safety: files are written to a temporary file in the same folder, synced, then renamed, and
//! are created readable by their owner only (0600); an existing file is replaced only with
//! `--force`; in CSV and TSV, text cells that a spreadsheet would run as a formula (starting with
//! = + - @, tab or carriage return) are prefixed with an apostrophe, as common guidance on CSV
//! injection recommends (OWASP, "CSV Injection"); JSON, Parquet and xlsx (text cells) keep text
//! exactly, since nothing evaluates it there; `--pseudonymise` replaces person IDs with a keyed
//! hash (HMAC-SHA256) and drops direct identifiers.

use std::io::{Read, Write};
use std::path::{Path, PathBuf};

use hmac::{Hmac, Mac};
use sha2::{Digest, Sha256};

use crate::error::{Error, Result};

mod formats;

/// One cell of an export.
#[derive(Debug, Clone, PartialEq)]
pub enum Cell {
    /// Text (guarded against formula injection only where a reader evaluates text: CSV, TSV).
    Text(String),
    /// A number we computed (written as is).
    Num(f64),
    /// A whole number we computed.
    Int(i64),
    /// Yes / no.
    Bool(bool),
    /// A calendar date (a date in Parquet and xlsx, ISO 8601 in text).
    Date(chrono::NaiveDate),
    /// Nothing.
    Empty,
}

/// The type of a column, written as such in Parquet and xlsx.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Kind {
    /// Text.
    Text,
    /// Whole numbers (64-bit).
    Int,
    /// Floating-point numbers.
    Num,
    /// Booleans.
    Bool,
    /// Dates.
    Date,
}

impl Cell {
    /// The value as plain text, exactly (no formula guard).
    fn plain(&self) -> String {
        match self {
            Cell::Text(s) => s.clone(),
            Cell::Num(x) => format!("{x}"),
            Cell::Int(i) => i.to_string(),
            Cell::Bool(b) => b.to_string(),
            Cell::Date(d) => d.format("%Y-%m-%d").to_string(),
            Cell::Empty => String::new(),
        }
    }

    /// The value in delimited text: text cells a spreadsheet would run as a formula are
    /// guarded (see [`escape_formula`]).
    fn delimited(&self) -> String {
        match self {
            Cell::Text(s) => escape_formula(s),
            other => other.plain(),
        }
    }

    fn json(&self) -> serde_json::Value {
        match self {
            Cell::Text(s) => s.clone().into(),
            Cell::Num(x) => serde_json::json!(x),
            Cell::Int(i) => serde_json::json!(i),
            Cell::Bool(b) => serde_json::json!(b),
            Cell::Date(d) => d.format("%Y-%m-%d").to_string().into(),
            Cell::Empty => serde_json::Value::Null,
        }
    }

    /// A whole number, if the cell is one.
    fn int(&self) -> Option<i64> {
        match self {
            Cell::Int(x) => Some(*x),
            _ => None,
        }
    }

    /// A number (whole numbers included), if the cell is one.
    fn num(&self) -> Option<f64> {
        match self {
            Cell::Num(x) => Some(*x),
            Cell::Int(x) => Some(*x as f64),
            _ => None,
        }
    }

    /// A boolean, if the cell is one.
    fn boolean(&self) -> Option<bool> {
        match self {
            Cell::Bool(x) => Some(*x),
            _ => None,
        }
    }

    /// A date as days since 1970-01-01 (as Parquet counts dates), if the cell is one.
    fn unix_day(&self) -> Option<i32> {
        match self {
            Cell::Date(d) => {
                Some((*d - chrono::DateTime::UNIX_EPOCH.date_naive()).num_days() as i32)
            }
            _ => None,
        }
    }

    /// Any value as exact text (None when empty).
    fn text(&self) -> Option<String> {
        (*self != Cell::Empty).then(|| self.plain())
    }

    fn kind(&self) -> Option<Kind> {
        match self {
            Cell::Text(_) => Some(Kind::Text),
            Cell::Num(_) => Some(Kind::Num),
            Cell::Int(_) => Some(Kind::Int),
            Cell::Bool(_) => Some(Kind::Bool),
            Cell::Date(_) => Some(Kind::Date),
            Cell::Empty => None,
        }
    }
}

/// A table to export.
#[derive(Debug, Clone, Default)]
pub struct ExportTable {
    /// Column names.
    pub columns: Vec<String>,
    /// Rows, one cell per column.
    pub rows: Vec<Vec<Cell>>,
    /// The type of each column (empty: taken from the cells, see [`ExportTable::kind`]).
    pub kinds: Vec<Kind>,
}

impl ExportTable {
    /// The type of column `c`: as declared, else the cells' common type (whole numbers mixed
    /// with other numbers are numbers; anything else mixed, or no value at all, is text).
    pub fn kind(&self, c: usize) -> Kind {
        if let Some(&k) = self.kinds.get(c) {
            return k;
        }
        let mut kind = None;
        for k in self
            .rows
            .iter()
            .filter_map(|r| r.get(c).and_then(Cell::kind))
        {
            kind = match (kind, k) {
                (None, k) => Some(k),
                (Some(a), b) if a == b => Some(a),
                (Some(Kind::Int | Kind::Num), Kind::Int | Kind::Num) => Some(Kind::Num),
                _ => return Kind::Text,
            };
        }
        kind.unwrap_or(Kind::Text)
    }

    /// The rows at `keep`, in that order, with the same columns and types.
    pub fn subset(&self, keep: &[usize]) -> ExportTable {
        ExportTable {
            columns: self.columns.clone(),
            rows: keep.iter().map(|&r| self.rows[r].clone()).collect(),
            kinds: (0..self.columns.len()).map(|c| self.kind(c)).collect(),
        }
    }
}

/// What travels with every export.
#[derive(Debug, Clone, Default)]
pub struct Metadata {
    /// Key, value pairs in order (caution first).
    pub entries: Vec<(String, String)>,
}

/// File formats.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum Format {
    /// Comma-separated text, metadata as leading `#` lines.
    Csv,
    /// Tab-separated text, metadata as leading `#` lines.
    Tsv,
    /// One JSON object: metadata, columns, rows.
    Json,
    /// Apache Parquet, metadata in the file's key-value metadata.
    Parquet,
    /// Excel workbook: the list, and an "about" sheet with the metadata.
    Xlsx,
}

impl Format {
    /// The usual file extension.
    pub fn extension(self) -> &'static str {
        match self {
            Format::Csv => "csv",
            Format::Tsv => "tsv",
            Format::Json => "json",
            Format::Parquet => "parquet",
            Format::Xlsx => "xlsx",
        }
    }
}

/// The format given, else the one the extension of `out` names.
pub fn format_for(out: &Path, given: Option<Format>) -> Result<Format> {
    if let Some(f) = given {
        return Ok(f);
    }
    match out
        .extension()
        .map(|e| e.to_string_lossy().to_lowercase())
        .as_deref()
    {
        Some("csv") => Ok(Format::Csv),
        Some("tsv" | "tab") => Ok(Format::Tsv),
        Some("json") => Ok(Format::Json),
        Some("parquet") => Ok(Format::Parquet),
        Some("xlsx") => Ok(Format::Xlsx),
        _ => Err(Error::Usage(format!(
            "{}: give --format csv|tsv|json|parquet|xlsx (the extension does not say)",
            out.display()
        ))),
    }
}

/// Neutralise a cell a spreadsheet would read as a formula: prefix an apostrophe.
pub fn escape_formula(s: &str) -> String {
    if s.starts_with(['=', '+', '-', '@', '\t', '\r']) {
        format!("'{s}")
    } else {
        s.to_string()
    }
}

/// HMAC-SHA256 of the ID under the key, as the first 32 hex digits (128 bits).
pub fn pseudonym(key: &[u8], id: &str) -> String {
    let mut mac =
        <Hmac<Sha256> as Mac>::new_from_slice(key).expect("HMAC takes keys of any length");
    mac.update(id.as_bytes());
    mac.finalize()
        .into_bytes()
        .iter()
        .take(16)
        .map(|b| format!("{b:02x}"))
        .collect()
}

/// The pseudonymisation key: from HUBWATCH_PSEUDONYM_KEY or the key file; never stored.
pub fn pseudonym_key(key_file: Option<&Path>) -> Result<Vec<u8>> {
    let key = match key_file {
        Some(p) => std::fs::read_to_string(p)
            .map_err(|e| Error::io(p, e))?
            .trim()
            .to_string(),
        None => std::env::var("HUBWATCH_PSEUDONYM_KEY").unwrap_or_default(),
    };
    if key.len() < 16 {
        return Err(Error::Usage(
            "--pseudonymise needs a key of at least 16 characters, in HUBWATCH_PSEUDONYM_KEY or a file given with --key-file; hubwatch will not pseudonymise without one".into(),
        ));
    }
    Ok(key.into_bytes())
}

/// SHA-256 of a file, hex.
pub fn file_sha256(path: &Path) -> Result<String> {
    if path.is_dir() {
        // A folder of part files (a table as Spark writes it): the SHA-256 of its files'
        // SHA-256s, in name order.
        let mut parts: Vec<std::path::PathBuf> = std::fs::read_dir(path)
            .map_err(|e| Error::io(path, e))?
            .filter_map(|e| e.ok().map(|e| e.path()))
            .filter(|p| p.is_file())
            .collect();
        parts.sort();
        let mut h = Sha256::new();
        for p in parts {
            h.update(file_sha256(&p)?.as_bytes());
        }
        return Ok(h.finalize().iter().map(|b| format!("{b:02x}")).collect());
    }
    let mut f = std::fs::File::open(path).map_err(|e| Error::io(path, e))?;
    let mut h = Sha256::new();
    let mut buf = vec![0u8; 1 << 20];
    loop {
        let n = f.read(&mut buf).map_err(|e| Error::io(path, e))?;
        if n == 0 {
            break;
        }
        h.update(&buf[..n]);
    }
    Ok(h.finalize().iter().map(|b| format!("{b:02x}")).collect())
}

/// Write the table to `out` (atomically, 0600); refuse to replace a file unless `force`.
pub fn write(
    t: &ExportTable,
    meta: &Metadata,
    format: Format,
    out: &Path,
    force: bool,
) -> Result<()> {
    if out.exists() && !force {
        return Err(Error::Usage(format!(
            "{} exists; add --force to replace it",
            out.display()
        )));
    }
    let b = formats::bytes(t, meta, format, out)?;
    write_private(out, &b)
}

/// Keep only `wanted` columns, in that order; an unknown name is an error listing the columns.
pub fn select_columns(t: ExportTable, wanted: &[String]) -> Result<ExportTable> {
    let idx: Vec<usize> = wanted
        .iter()
        .map(|w| {
            t.columns.iter().position(|c| c == w.trim()).ok_or_else(|| {
                Error::Usage(format!(
                    "--columns: no column \"{}\"; columns: {}",
                    w.trim(),
                    t.columns.join(", ")
                ))
            })
        })
        .collect::<Result<_>>()?;
    Ok(ExportTable {
        kinds: idx.iter().map(|&i| t.kind(i)).collect(),
        columns: idx.iter().map(|&i| t.columns[i].clone()).collect(),
        rows: t
            .rows
            .into_iter()
            .map(|r| idx.iter().map(|&i| r[i].clone()).collect())
            .collect(),
    })
}

/// Split rows into `k` call sheets balanced by count, keeping each group (household) on one
/// sheet: groups are taken in the order of their best-ranked member and each goes to the sheet
/// with the fewest rows so far (ties to the first sheet). Rows keep their order within a sheet.
pub fn split_sheets(groups: &[Option<String>], k: usize) -> Vec<Vec<usize>> {
    let k = k.max(1);
    let mut order: Vec<(usize, Vec<usize>)> = Vec::new();
    let mut index: std::collections::HashMap<&str, usize> = std::collections::HashMap::new();
    for (row, g) in groups.iter().enumerate() {
        match g.as_deref() {
            Some(key) if !key.is_empty() => match index.get(key) {
                Some(&i) => order[i].1.push(row),
                None => {
                    index.insert(key, order.len());
                    order.push((row, vec![row]));
                }
            },
            _ => order.push((row, vec![row])),
        }
    }
    let mut sheets: Vec<Vec<usize>> = vec![Vec::new(); k];
    for (_, rows) in order {
        let target = (0..k).min_by_key(|&s| (sheets[s].len(), s)).unwrap_or(0);
        sheets[target].extend(rows);
    }
    for s in sheets.iter_mut() {
        s.sort_unstable();
    }
    sheets
}

/// File name of sheet `i` (0-based) of `k`: `list.csv` -> `list-1of3.csv`.
pub fn sheet_path(out: &Path, i: usize, k: usize) -> PathBuf {
    let stem = out
        .file_stem()
        .map(|s| s.to_string_lossy().into_owned())
        .unwrap_or_else(|| "export".into());
    let ext = out
        .extension()
        .map(|e| format!(".{}", e.to_string_lossy()))
        .unwrap_or_default();
    out.with_file_name(format!("{stem}-{}of{k}{ext}", i + 1))
}

/// Write a file atomically (temporary file in the same folder, fsync, rename), mode 0600.
pub fn write_private(path: &Path, bytes: &[u8]) -> Result<()> {
    write_streamed(path, |w| w.write_all(bytes))
}

/// Write a file atomically, mode 0600, streaming: `body` writes into a buffered temporary file
/// in the same folder, which is synced and renamed over `path` only when `body` succeeds (a
/// failed or interrupted write leaves no partial file and no earlier file changed). For files
/// too large to hold in memory, such as the invented exports of `synth`.
pub fn write_streamed<F>(path: &Path, body: F) -> Result<()>
where
    F: FnOnce(&mut std::io::BufWriter<std::fs::File>) -> std::io::Result<()>,
{
    let dir = path
        .parent()
        .filter(|p| !p.as_os_str().is_empty())
        .unwrap_or(Path::new("."));
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_else(|| "out".into());
    let tmp = dir.join(format!(".{name}.{}.tmp", std::process::id()));
    let mut opts = std::fs::OpenOptions::new();
    opts.write(true).create_new(true);
    #[cfg(unix)]
    {
        use std::os::unix::fs::OpenOptionsExt;
        opts.mode(0o600);
    }
    let result = (|| {
        let mut w = std::io::BufWriter::with_capacity(1 << 20, opts.open(&tmp)?);
        body(&mut w)?;
        let f = w.into_inner().map_err(|e| e.into_error())?;
        f.sync_all()?;
        std::fs::rename(&tmp, path)?;
        if let Ok(d) = std::fs::File::open(dir) {
            let _ = d.sync_all();
        }
        Ok(())
    })();
    result.map_err(|e: std::io::Error| {
        let _ = std::fs::remove_file(&tmp);
        Error::write(path, e)
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn formula_cells_are_neutralised() {
        // Characters from OWASP's "CSV Injection" guidance.
        for s in ["=1+1", "+1", "-2", "@SUM(A1)", "\tx", "\rx"] {
            assert!(escape_formula(s).starts_with('\''), "{s:?}");
        }
        assert_eq!(escape_formula("P0001"), "P0001");
    }

    #[test]
    fn pseudonyms_are_keyed_and_stable() {
        // HMAC-SHA256 test vector, RFC 4231 case 2: key "Jefe", data "what do ya want for nothing?".
        assert_eq!(
            pseudonym(b"Jefe", "what do ya want for nothing?"),
            "5bdcc146bf60754e6a042426089575c7"
        );
        assert_ne!(
            pseudonym(b"key-one-0123456789", "P1"),
            pseudonym(b"key-two-0123456789", "P1")
        );
    }

    #[test]
    fn sheets_keep_households_together_and_balance() {
        let g: Vec<Option<String>> = ["H1", "H2", "H1", "H3", "H3", "H3", "H4"]
            .iter()
            .map(|s| Some(s.to_string()))
            .collect();
        let sheets = split_sheets(&g, 2);
        // H1 (rows 0, 2) -> sheet 0; H2 (row 1) -> sheet 1; H3 (3 rows) -> sheet 1; H4 -> sheet 0.
        assert_eq!(sheets, vec![vec![0, 2, 6], vec![1, 3, 4, 5]]);
        assert_eq!(
            sheet_path(Path::new("/x/list.csv"), 1, 3),
            Path::new("/x/list-2of3.csv")
        );
    }
}
