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

/// A field of delimited text: quoted when it holds the delimiter, a quote or a line break.
fn delimited_field(v: &str, sep: char) -> String {
    if v.contains([sep, '"', '\n', '\r']) {
        format!("\"{}\"", v.replace('"', "\"\""))
    } else {
        v.to_string()
    }
}

fn bytes(t: &ExportTable, meta: &Metadata, format: Format, path: &Path) -> Result<Vec<u8>> {
    match format {
        Format::Csv => Ok(delimited_bytes(t, meta, ',')),
        Format::Tsv => Ok(delimited_bytes(t, meta, '\t')),
        Format::Json => json_bytes(t, meta, path),
        Format::Parquet => parquet_bytes(t, meta, path),
        Format::Xlsx => xlsx_bytes(t, meta, path),
    }
}

/// A metadata line of delimited text, `# key: value`, kept to one cell when a spreadsheet
/// opens the file: no delimiter, quote or line break (commas and tabs become semicolons,
/// double quotes single ones). The exact values are in the JSON, Parquet and xlsx metadata.
fn metadata_line(k: &str, v: &str) -> String {
    let clean = |s: &str| {
        s.chars()
            .map(|c| match c {
                ',' | '\t' => ';',
                '"' => '\'',
                '\n' | '\r' => ' ',
                c => c,
            })
            .collect::<String>()
    };
    format!("# {}: {}\n", clean(k), clean(v))
}

/// CSV or TSV: metadata as leading `#` lines, then the table; text cells guarded against
/// formulas.
fn delimited_bytes(t: &ExportTable, meta: &Metadata, sep: char) -> Vec<u8> {
    let mut s = String::new();
    for (k, v) in &meta.entries {
        s.push_str(&metadata_line(k, v));
    }
    let sep_text = sep.to_string();
    let header: Vec<String> = t.columns.iter().map(|c| delimited_field(c, sep)).collect();
    s.push_str(&header.join(&sep_text));
    s.push('\n');
    for r in &t.rows {
        let cells: Vec<String> = r
            .iter()
            .map(|c| delimited_field(&c.delimited(), sep))
            .collect();
        s.push_str(&cells.join(&sep_text));
        s.push('\n');
    }
    s.into_bytes()
}

/// One JSON object: metadata, columns, rows.
fn json_bytes(t: &ExportTable, meta: &Metadata, path: &Path) -> Result<Vec<u8>> {
    let meta: serde_json::Map<String, serde_json::Value> = meta
        .entries
        .iter()
        .map(|(k, v)| (k.clone(), v.clone().into()))
        .collect();
    let rows: Vec<serde_json::Value> = t
        .rows
        .iter()
        .map(|r| {
            serde_json::Value::Object(
                t.columns
                    .iter()
                    .cloned()
                    .zip(r.iter().map(Cell::json))
                    .collect(),
            )
        })
        .collect();
    let v = serde_json::json!({"metadata": meta, "columns": t.columns, "rows": rows});
    serde_json::to_vec_pretty(&v).map_err(|e| Error::format(path, e.to_string()))
}

/// Parquet with typed columns (whole numbers, numbers, booleans, dates, text; null where a cell
/// is empty), the metadata in the file's key-value metadata.
fn parquet_bytes(t: &ExportTable, meta: &Metadata, path: &Path) -> Result<Vec<u8>> {
    use polars::prelude::*;
    let polars_err = |e| Error::Polars {
        path: path.to_path_buf(),
        source: e,
    };
    let mut cols: Vec<Column> = Vec::with_capacity(t.columns.len());
    for (i, name) in t.columns.iter().enumerate() {
        let cells = || t.rows.iter().map(move |r| r.get(i).unwrap_or(&Cell::Empty));
        let name: PlSmallStr = name.as_str().into();
        let col = match t.kind(i) {
            Kind::Int => {
                let v: Vec<Option<i64>> = cells()
                    .map(|c| match c {
                        Cell::Int(x) => Some(*x),
                        _ => None,
                    })
                    .collect();
                Column::new(name, v)
            }
            Kind::Num => {
                let v: Vec<Option<f64>> = cells()
                    .map(|c| match c {
                        Cell::Num(x) => Some(*x),
                        Cell::Int(x) => Some(*x as f64),
                        _ => None,
                    })
                    .collect();
                Column::new(name, v)
            }
            Kind::Bool => {
                let v: Vec<Option<bool>> = cells()
                    .map(|c| match c {
                        Cell::Bool(x) => Some(*x),
                        _ => None,
                    })
                    .collect();
                Column::new(name, v)
            }
            Kind::Date => {
                let v: Vec<Option<i32>> = cells()
                    .map(|c| match c {
                        // Parquet counts dates in days since 1970-01-01.
                        Cell::Date(x) => {
                            Some((*x - chrono::DateTime::UNIX_EPOCH.date_naive()).num_days() as i32)
                        }
                        _ => None,
                    })
                    .collect();
                Column::new(name, v)
                    .cast(&DataType::Date)
                    .map_err(polars_err)?
            }
            Kind::Text => {
                let v: Vec<Option<String>> = cells()
                    .map(|c| (*c != Cell::Empty).then(|| c.plain()))
                    .collect();
                Column::new(name, v)
            }
        };
        cols.push(col);
    }
    let mut df = DataFrame::new(t.rows.len(), cols).map_err(polars_err)?;
    let mut buf = Vec::new();
    let kv = polars::io::parquet::write::KeyValueMetadata::from_static(meta.entries.clone());
    ParquetWriter::new(&mut buf)
        .with_key_value_metadata(Some(kv))
        .finish(&mut df)
        .map_err(polars_err)?;
    Ok(buf)
}

/// An xlsx workbook: the list (numbers as numbers, dates as dates shown in ISO 8601, booleans
/// as booleans, text as text cells, which a spreadsheet never runs as a formula), and an
/// "about" sheet with the metadata.
fn xlsx_bytes(t: &ExportTable, meta: &Metadata, path: &Path) -> Result<Vec<u8>> {
    let err = |e: rust_xlsxwriter::XlsxError| Error::format(path, e.to_string());
    let date_format = rust_xlsxwriter::Format::new().set_num_format("yyyy-mm-dd");
    let mut book = rust_xlsxwriter::Workbook::new();
    let sheet = book.add_worksheet();
    sheet.set_name("list").map_err(err)?;
    for (c, name) in t.columns.iter().enumerate() {
        sheet.write_string(0, c as u16, name).map_err(err)?;
    }
    for (r, row) in t.rows.iter().enumerate() {
        let r = r as u32 + 1;
        for (c, cell) in row.iter().enumerate() {
            let c = c as u16;
            match cell {
                Cell::Num(x) => sheet.write_number(r, c, *x).map(|_| ()),
                Cell::Int(i) => sheet.write_number(r, c, *i as f64).map(|_| ()),
                Cell::Bool(b) => sheet.write_boolean(r, c, *b).map(|_| ()),
                Cell::Date(d) => {
                    use chrono::Datelike;
                    rust_xlsxwriter::ExcelDateTime::from_ymd(
                        d.year() as u16,
                        d.month() as u8,
                        d.day() as u8,
                    )
                    .and_then(|dt| {
                        sheet
                            .write_datetime_with_format(r, c, &dt, &date_format)
                            .map(|_| ())
                    })
                }
                Cell::Text(s) => sheet.write_string(r, c, s).map(|_| ()),
                Cell::Empty => Ok(()),
            }
            .map_err(err)?;
        }
    }
    let about = book.add_worksheet();
    about.set_name("about").map_err(err)?;
    for (i, (k, v)) in meta.entries.iter().enumerate() {
        about.write_string(i as u32, 0, k).map_err(err)?;
        about.write_string(i as u32, 1, v).map_err(err)?;
    }
    book.save_to_buffer().map_err(err)
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
    let b = bytes(t, meta, format, out)?;
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
