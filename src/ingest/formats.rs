//! Parquet, newline-delimited JSON and spreadsheets: read whole into a polars frame, then every
//! column turned to text so that all formats flow through the same checks as CSV.

use std::path::Path;

use calamine::{open_workbook_auto, Data, Reader};
use polars::prelude::*;

use super::table::{check_unique_columns, FileKind, LineMap, Rejected, Table, TableMeta};
use crate::error::{Error, Result};

fn polars_err(path: &Path) -> impl Fn(PolarsError) -> Error + '_ {
    move |e| Error::Polars {
        path: path.to_path_buf(),
        source: e,
    }
}

/// Turn every column to text (dates print as ISO 8601, numbers as written by polars).
fn to_text_columns(path: &Path, frame: DataFrame) -> Result<DataFrame> {
    let cols = frame
        .columns()
        .iter()
        .map(|c| {
            c.cast(&DataType::String).map_err(|e| {
                Error::format(
                    path,
                    format!(
                        "column \"{}\" ({}) cannot be read as text: {e}",
                        c.name(),
                        c.dtype()
                    ),
                )
            })
        })
        .collect::<Result<Vec<_>>>()?;
    DataFrame::new(frame.height(), cols).map_err(polars_err(path))
}

fn meta(path: &Path, kind: FileKind, frame: &DataFrame, unit: &'static str) -> Result<TableMeta> {
    let columns: Vec<String> = frame
        .get_column_names()
        .iter()
        .map(|s| s.to_string())
        .collect();
    check_unique_columns(path, &columns)?;
    Ok(TableMeta {
        path: path.to_path_buf(),
        kind,
        columns,
        headerless: false,
        separator: None,
        unit,
        excel_serials: kind == FileKind::Excel,
        encoding: None,
    })
}

/// Read a Parquet file; positions are 1-based record numbers.
pub fn read_parquet(path: &Path) -> Result<Table> {
    let file = std::fs::File::open(path).map_err(|e| Error::io(path, e))?;
    let frame = guarded(path, "Parquet file", || {
        ParquetReader::new(file).finish().map_err(polars_err(path))
    })?;
    let frame = to_text_columns(path, frame)?;
    let meta = meta(path, FileKind::Parquet, &frame, "record")?;
    Ok(Table::from_frame(
        meta,
        frame,
        LineMap::Contiguous { first: 1 },
        Vec::new(),
    ))
}

/// Read newline-delimited JSON; blank lines are skipped and positions are source lines.
pub fn read_ndjson(path: &Path) -> Result<Table> {
    let bytes = std::fs::read(path).map_err(|e| Error::io(path, e))?;
    let bytes = if bytes.starts_with(&[0x1f, 0x8b]) {
        let mut out = Vec::new();
        std::io::Read::read_to_end(&mut flate2::read::MultiGzDecoder::new(&bytes[..]), &mut out)
            .map_err(|e| Error::format(path, format!("not a readable gzip file: {e}")))?;
        out
    } else {
        bytes
    };
    let body = bytes.strip_prefix(super::sniff::BOM).unwrap_or(&bytes);
    // Keep the source line of every non-blank line, and hand polars only those lines.
    let mut clean = Vec::with_capacity(body.len());
    let mut lines = Vec::new();
    for (i, (_, line)) in super::sniff::lines(body).enumerate() {
        if !super::sniff::is_blank(line) {
            lines.push(i as u64 + 1);
            clean.extend_from_slice(line);
            clean.push(b'\n');
        }
    }
    if lines.is_empty() {
        return Err(Error::format(path, "the file is empty (no JSON lines)"));
    }
    let frame = guarded(path, "JSON lines file", || read_json_lines(path, clean))?;
    finish_ndjson(path, frame, lines)
}

fn read_json_lines(path: &Path, clean: Vec<u8>) -> Result<DataFrame> {
    JsonReader::new(std::io::Cursor::new(clean))
        .with_json_format(JsonFormat::JsonLines)
        .infer_schema_len(None)
        .finish()
        .map_err(polars_err(path))
}

fn finish_ndjson(path: &Path, frame: DataFrame, lines: Vec<u64>) -> Result<Table> {
    let frame = to_text_columns(path, frame)?;
    let meta = meta(path, FileKind::NdJson, &frame, "line")?;
    Ok(Table::from_frame(
        meta,
        frame,
        LineMap::Explicit(lines),
        Vec::new(),
    ))
}

/// Excel's day zero for serial dates after February 1900 (the 1900 leap-year quirk).
fn serial_to_iso(serial: f64) -> Option<String> {
    if !(1.0..=2_958_465.0).contains(&serial) {
        return None;
    }
    let base = chrono::NaiveDate::from_ymd_opt(1899, 12, 30)?;
    let day = base.checked_add_signed(chrono::TimeDelta::days(serial.floor() as i64))?;
    Some(day.format("%Y-%m-%d").to_string())
}

fn cell_text(cell: &Data) -> Option<String> {
    match cell {
        Data::Empty => None,
        Data::String(s) => Some(s.clone()),
        Data::Int(i) => Some(i.to_string()),
        Data::Float(f) if f.fract() == 0.0 && f.abs() < 1e15 => Some(format!("{}", *f as i64)),
        Data::Float(f) => Some(f.to_string()),
        Data::Bool(b) => Some(b.to_string()),
        Data::DateTime(d) => serial_to_iso(d.as_f64()),
        Data::DateTimeIso(s) | Data::DurationIso(s) => Some(s.clone()),
        Data::Error(e) => Some(format!("#ERROR {e}")),
    }
}

/// The worksheet asked for, or the first; an unknown name lists the workbook's sheets.
fn pick_sheet(path: &Path, names: &[String], sheet: Option<&str>) -> Result<String> {
    match sheet {
        Some(s) => names
            .iter()
            .find(|n| n.as_str() == s)
            .cloned()
            .ok_or_else(|| {
                Error::format(
                    path,
                    format!(
                        "no worksheet named \"{s}\"; the workbook has: {}",
                        names.join(", ")
                    ),
                )
            }),
        None => names
            .first()
            .cloned()
            .ok_or_else(|| Error::format(path, "the workbook has no worksheet")),
    }
}

/// Read the first (or the named) worksheet; the first non-empty row is the header.
/// Positions are the spreadsheet's own row numbers; fully empty rows are skipped; a row with
/// values beyond the named columns is set aside with its row number.
pub fn read_excel(path: &Path, sheet: Option<&str>) -> Result<Table> {
    guarded(path, "spreadsheet", || read_excel_unguarded(path, sheet))
}

/// Run a third-party reader so that a panic inside it on a malformed file (it happens: one was
/// found by fuzzing in the spreadsheet reader) becomes a clear error instead of a crash, with no
/// panic message printed.
pub(super) fn guarded<T>(path: &Path, what: &str, read: impl FnOnce() -> Result<T>) -> Result<T> {
    let previous = std::panic::take_hook();
    std::panic::set_hook(Box::new(|_| {}));
    let out = std::panic::catch_unwind(std::panic::AssertUnwindSafe(read));
    std::panic::set_hook(previous);
    out.unwrap_or_else(|_| {
        Err(Error::format(
            path,
            format!(
                "not a readable {what}: the file is damaged or not in the format its name says"
            ),
        ))
    })
}

fn read_excel_unguarded(path: &Path, sheet: Option<&str>) -> Result<Table> {
    let mut book = open_workbook_auto(path)
        .map_err(|e| Error::format(path, format!("not a readable spreadsheet: {e}")))?;
    let name = pick_sheet(path, &book.sheet_names(), sheet)?;
    let range = book
        .worksheet_range(&name)
        .map_err(|e| Error::format(path, format!("worksheet \"{name}\": {e}")))?;
    let row0 = range.start().map_or(0, |(r, _)| r as u64);
    let mut rows = range
        .rows()
        .enumerate()
        .filter(|(_, r)| r.iter().any(|c| !matches!(c, Data::Empty)));
    let Some((hdr_idx, header)) = rows.next() else {
        return Err(Error::format(
            path,
            format!("worksheet \"{name}\" is empty"),
        ));
    };
    let _ = hdr_idx;
    let columns: Vec<String> = header
        .iter()
        .map(|c| cell_text(c).unwrap_or_default().trim().to_string())
        .collect();
    check_unique_columns(path, &columns)?;
    let mut values: Vec<Vec<Option<String>>> = vec![Vec::new(); columns.len()];
    let mut lines = Vec::new();
    let mut rejected = Vec::new();
    for (i, row) in rows {
        let line = row0 + i as u64 + 1;
        if row.len() > columns.len()
            && row[columns.len()..]
                .iter()
                .any(|c| !matches!(c, Data::Empty))
        {
            rejected.push(Rejected {
                line,
                reason: format!(
                    "wrong number of fields: values beyond the {} named columns",
                    columns.len()
                ),
                raw: row
                    .iter()
                    .filter_map(cell_text)
                    .collect::<Vec<_>>()
                    .join(" | "),
            });
            continue;
        }
        lines.push(line);
        for (c, col) in values.iter_mut().enumerate() {
            col.push(row.get(c).and_then(cell_text));
        }
    }
    let cols: Vec<Column> = columns
        .iter()
        .zip(values)
        .map(|(name, v)| Column::new(name.as_str().into(), v))
        .collect();
    let frame = DataFrame::new(lines.len(), cols).map_err(polars_err(path))?;
    let meta = meta(path, FileKind::Excel, &frame, "row")?;
    Ok(Table::from_frame(
        meta,
        frame,
        LineMap::Explicit(lines),
        rejected,
    ))
}

#[cfg(test)]
mod tests {
    use super::serial_to_iso;

    #[test]
    fn excel_serial_dates() {
        // 45352 is 2024-03-01 in Excel's 1900 date system (common practice, no source;
        // checked by hand: 2024-03-01 minus 1899-12-30 is 45352 days).
        assert_eq!(serial_to_iso(45352.0).as_deref(), Some("2024-03-01"));
        assert_eq!(serial_to_iso(45352.75).as_deref(), Some("2024-03-01"));
        assert_eq!(serial_to_iso(0.0), None);
    }
}
