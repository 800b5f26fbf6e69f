//! The file formats of the one writer: CSV and TSV (metadata as `#` lines, text guarded
//! against formulas), JSON, Parquet and xlsx (typed columns, metadata exact).

use std::path::Path;

use super::{Cell, ExportTable, Format, Kind, Metadata};
use crate::error::{Error, Result};

/// A field of delimited text: quoted when it holds the delimiter, a quote or a line break.
fn delimited_field(v: &str, sep: char) -> String {
    if v.contains([sep, '"', '\n', '\r']) {
        format!("\"{}\"", v.replace('"', "\"\""))
    } else {
        v.to_string()
    }
}

pub(super) fn bytes(
    t: &ExportTable,
    meta: &Metadata,
    format: Format,
    path: &Path,
) -> Result<Vec<u8>> {
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
            Kind::Int => Column::new(name, cells().map(Cell::int).collect::<Vec<_>>()),
            Kind::Num => Column::new(name, cells().map(Cell::num).collect::<Vec<_>>()),
            Kind::Bool => Column::new(name, cells().map(Cell::boolean).collect::<Vec<_>>()),
            Kind::Date => Column::new(name, cells().map(Cell::unix_day).collect::<Vec<_>>())
                .cast(&DataType::Date)
                .map_err(polars_err)?,
            Kind::Text => Column::new(name, cells().map(Cell::text).collect::<Vec<_>>()),
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
