//! One input file opened as a table: its columns, and its rows delivered as text cells in
//! bounded chunks (see [`super::cells`]), each row tied to its 1-based source line (or record).
//!
//! Rows that cannot be split into the table's columns (wrong number of fields) never reach a
//! frame: they are returned as [`Rejected`] with their line, so that nothing is lost.

use std::path::{Path, PathBuf};

use polars::prelude::*;

use super::cells::Cells;
use super::decode::{self, Bytes, EncodingSetting, EncodingUsed, Limits};
pub use super::pieces::FirstPiece;
use super::sniff::{self, Separator};
use crate::config::Config;
use crate::error::{Error, Result};

/// The file formats hubwatch reads.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum FileKind {
    /// Delimited text, possibly gzip-compressed.
    Text,
    /// Apache Parquet.
    Parquet,
    /// Newline-delimited JSON, one object per line.
    NdJson,
    /// Excel workbook (.xlsx, .xlsm, .xls, .ods through calamine).
    Excel,
}

impl FileKind {
    /// Choose by file name (ignoring a trailing `.gz`) and, for text, by content later.
    pub fn from_path(path: &Path) -> FileKind {
        let name = path
            .file_name()
            .map(|n| n.to_string_lossy().to_lowercase())
            .unwrap_or_default();
        let name = name.strip_suffix(".gz").unwrap_or(&name);
        if name.ends_with(".parquet") || name.ends_with(".pq") {
            FileKind::Parquet
        } else if name.ends_with(".ndjson") || name.ends_with(".jsonl") || name.ends_with(".json") {
            FileKind::NdJson
        } else if [".xlsx", ".xlsm", ".xls", ".ods"]
            .iter()
            .any(|e| name.ends_with(e))
        {
            FileKind::Excel
        } else {
            FileKind::Text
        }
    }

    /// True for file names hubwatch would pick up from a folder (`.json` only when named
    /// explicitly: in a folder it is more often a manifest than a table).
    pub fn is_table_file(path: &Path) -> bool {
        let name = path
            .file_name()
            .map(|n| n.to_string_lossy().to_lowercase())
            .unwrap_or_default();
        let name = name.strip_suffix(".gz").unwrap_or(&name);
        [
            ".csv", ".tsv", ".txt", ".dat", ".tab", ".parquet", ".pq", ".ndjson", ".jsonl",
            ".xlsx", ".xlsm", ".xls", ".ods",
        ]
        .iter()
        .any(|e| name.ends_with(e))
    }
}

/// Maps a frame row to the line (text, NDJSON, spreadsheet) or record (Parquet) it came from.
#[derive(Debug, Clone)]
pub enum LineMap {
    /// Row r came from line `first + r`.
    Contiguous {
        /// Line of row 0.
        first: u64,
    },
    /// Row r came from line `lines[r]`.
    Explicit(Vec<u64>),
}

impl LineMap {
    /// The 1-based source line of frame row `row`.
    pub fn line(&self, row: usize) -> u64 {
        match self {
            LineMap::Contiguous { first } => first + row as u64,
            LineMap::Explicit(v) => v[row],
        }
    }
}

/// A row rejected before it could become a frame row.
#[derive(Debug, Clone)]
pub struct Rejected {
    /// 1-based source line.
    pub line: u64,
    /// Why it was set aside.
    pub reason: String,
    /// The raw text of the line (shortened if very long).
    pub raw: String,
}

/// A batch of rows, all columns as text.
pub struct Chunk<'a> {
    /// Columns in the order of [`TableMeta::columns`], all as text.
    pub cells: Cells<'a>,
    /// Source line of each row.
    pub lines: LineMap,
    /// Rows still to come after this chunk, estimated from the bytes left at this chunk's
    /// rows per byte (0 when this is the last chunk or the reader cannot tell), so that a
    /// table growing with the rows can take room for all of them at once.
    pub rows_ahead: usize,
}

/// What is known about a table before its rows are read.
#[derive(Debug, Clone)]
pub struct TableMeta {
    /// The file.
    pub path: PathBuf,
    /// Its format.
    pub kind: FileKind,
    /// Column names (from the header, or `column_1`, `column_2`… without one).
    pub columns: Vec<String>,
    /// True when the file had no header line.
    pub headerless: bool,
    /// Separator used (delimited text only).
    pub separator: Option<Separator>,
    /// "line" or "record": how to name a position in this file.
    pub unit: &'static str,
    /// True for spreadsheets, whose numeric cells in date columns are serial dates.
    pub excel_serials: bool,
    /// The text encoding read and how it was decided (delimited text only).
    pub encoding: Option<EncodingUsed>,
}

/// Options from the command line that affect reading.
#[derive(Debug, Clone, Default)]
pub struct ReadOptions {
    /// Worksheet name for spreadsheets (first sheet if none).
    pub sheet: Option<String>,
    /// Rows per chunk handed to the consumer (0 = default).
    pub chunk_rows: usize,
}

/// An opened table: its metadata and what is needed to produce its rows.
pub struct Table {
    /// Columns and format.
    pub meta: TableMeta,
    body: Body,
}

enum Body {
    Text(TextBody),
    Frame(DataFrame, LineMap, Vec<Rejected>),
}

/// Delimited text, opened: its bytes and what is known of their layout.
pub(super) struct TextBody {
    pub(super) bytes: Bytes,
    /// Offset of the first data line (after the header, if any).
    pub(super) data_start: usize,
    /// 1-based line number of the first data line.
    pub(super) data_line: u64,
    pub(super) sep: Separator,
    pub(super) comment: Vec<u8>,
    /// Lines set aside while decoding for their length.
    pub(super) long_lines: Vec<Rejected>,
    /// Lines longer than this are set aside by the line scan.
    pub(super) max_line: usize,
}

impl Table {
    /// Open a file and read its header (cheap: the body is parsed by [`Table::read`]).
    pub fn open(path: &Path, config: &Config, opts: &ReadOptions) -> Result<Table> {
        if !path.exists() {
            return Err(Error::NotFound {
                path: path.to_path_buf(),
            });
        }
        match FileKind::from_path(path) {
            FileKind::Text => open_text(path, config),
            FileKind::Parquet => super::formats::read_parquet(path),
            FileKind::NdJson => super::formats::read_ndjson(path),
            FileKind::Excel => super::formats::read_excel(path, opts.sheet.as_deref()),
        }
    }

    /// Build a table from a frame already in memory (used by the other formats).
    pub(super) fn from_frame(
        meta: TableMeta,
        mut frame: DataFrame,
        lines: LineMap,
        rejected: Vec<Rejected>,
    ) -> Table {
        // One chunk per column, so that reading a cell by its row is one step.
        frame.rechunk_mut_par();
        Table {
            meta,
            body: Body::Frame(frame, lines, rejected),
        }
    }

    /// The values of the first `n` data rows (before any check), for deciding a file's role.
    pub fn sample_rows(&self, n: usize) -> Vec<Vec<String>> {
        match &self.body {
            Body::Frame(frame, _, _) => {
                let cols: Vec<Option<&StringChunked>> =
                    frame.columns().iter().map(|c| c.str().ok()).collect();
                (0..frame.height().min(n))
                    .map(|r| {
                        cols.iter()
                            .map(|c| c.and_then(|c| c.get(r)).unwrap_or("").to_string())
                            .collect()
                    })
                    .collect()
            }
            Body::Text(b) => {
                let region = &b.bytes[b.data_start.min(b.bytes.len())..];
                sniff::lines(region)
                    .map(|(_, l)| sniff::trim_cr(l))
                    .filter(|l| {
                        l.len() <= b.max_line
                            && !sniff::is_blank(l)
                            && !sniff::is_comment(l, &b.comment)
                    })
                    .take(n)
                    .map(|l| sniff::split_fields(l, b.sep))
                    .collect()
            }
        }
    }

    /// The first piece of delimited text, tokenised ahead of [`Table::read`] (which is given
    /// it), when it is plain; `None` otherwise (the read then starts from the text).
    pub fn first_piece(&self, opts: &ReadOptions) -> Option<FirstPiece> {
        match &self.body {
            Body::Text(body) => super::pieces::first_piece(&self.meta, body, opts),
            Body::Frame(..) => None,
        }
    }

    /// Deliver every row in chunks, starting with `first` if it was tokenised ahead (see
    /// [`Table::first_piece`]); return the rows rejected for their shape, and the `next`
    /// table's first piece: delimited text is parsed on a thread of its own, which tokenises
    /// that once it has parsed this table's last piece, while the sink checks it.
    pub fn read(
        self,
        opts: &ReadOptions,
        (first, next): (Option<FirstPiece>, Option<&Table>),
        mut sink: impl FnMut(Chunk<'_>) -> Result<()>,
    ) -> Result<(Vec<Rejected>, Option<FirstPiece>)> {
        match self.body {
            Body::Frame(frame, lines, rejected) => {
                sink(Chunk {
                    cells: Cells::Frame(frame),
                    lines,
                    rows_ahead: 0,
                })?;
                Ok((rejected, None))
            }
            Body::Text(body) => {
                let next = next.map(|t| move || t.first_piece(opts));
                super::pieces::read_text(&self.meta, body, (opts, first, next), &mut sink)
            }
        }
    }
}

/// The encoding setting and limits of the configuration.
fn reading(config: &Config) -> Result<(EncodingSetting, Limits)> {
    Ok((
        EncodingSetting::parse(&config.input.encoding)?,
        Limits {
            max_line_bytes: usize::try_from(config.input.max_line_bytes).unwrap_or(usize::MAX),
            max_decompressed_bytes: config.input.max_decompressed_bytes,
        },
    ))
}

impl Table {
    /// Open delimited text held in memory (the built-in sample), shown under `name`.
    pub fn open_bytes(name: &Path, bytes: Vec<u8>, config: &Config) -> Result<Table> {
        let (enc, limits) = reading(config)?;
        open_text_bytes(
            name,
            decode::decode_owned(name, bytes, enc, limits)?,
            config,
        )
    }
}

fn open_text(path: &Path, config: &Config) -> Result<Table> {
    let (enc, limits) = reading(config)?;
    open_text_bytes(path, decode::read_file(path, enc, limits)?, config)
}

/// The first content line: byte offset, 1-based line, its text.
type FirstLine<'a> = (usize, u64, &'a [u8]);

/// The first content line (offset, 1-based line, text) after blank and comment lines, and a
/// sample of up to 64 content lines for detecting the separator.
fn first_content<'a>(
    bytes: &'a [u8],
    start: usize,
    comment: &[u8],
) -> (Option<FirstLine<'a>>, Vec<&'a [u8]>) {
    // Skip blank and comment lines before the first content line, and take a sample.
    let mut first: Option<FirstLine> = None;
    let mut sample: Vec<&[u8]> = Vec::new();
    for (i, (off, line)) in sniff::lines(&bytes[start..]).enumerate() {
        if sniff::is_blank(line) || sniff::is_comment(line, comment) {
            continue;
        }
        if first.is_none() {
            first = Some((start + off, i as u64 + 1, line));
        }
        sample.push(line);
        if sample.len() >= 64 {
            break;
        }
    }
    (first, sample)
}

fn open_text_bytes(path: &Path, decoded: decode::Decoded, config: &Config) -> Result<Table> {
    let decode::Decoded {
        bytes,
        encoding,
        long_lines,
    } = decoded;
    let max_line = usize::try_from(config.input.max_line_bytes).unwrap_or(usize::MAX);
    let start = if bytes.starts_with(sniff::BOM) {
        sniff::BOM.len()
    } else {
        0
    };
    let comment = config.csv.comment_prefix.as_bytes().to_vec();
    let (first, sample) = first_content(&bytes, start, &comment);
    let Some((first_off, first_line, first_text)) = first else {
        return Err(Error::format(
            path,
            "the file is empty (no header and no rows)",
        ));
    };
    if first_text.len() > max_line {
        return Err(Error::format(
            path,
            format!(
                "the first line ({first_line}) is {} bytes long, over the limit of {max_line} ([input] max_line_bytes): this is not a table",
                first_text.len()
            ),
        ));
    }
    let sep = match Separator::parse_setting(&config.csv.separator)? {
        Some(s) => s,
        None => sniff::detect_separator(&sample),
    };
    let first_fields = sniff::split_fields(first_text, sep);
    let has_header = sniff::detect_header(&config.csv.header, &first_fields);
    let columns: Vec<String> = if has_header {
        first_fields.iter().map(|f| f.trim().to_string()).collect()
    } else {
        (1..=first_fields.len())
            .map(|i| format!("column_{i}"))
            .collect()
    };
    check_unique_columns(path, &columns)?;
    let (data_start, data_line) = if has_header {
        let end =
            memchr::memchr(b'\n', &bytes[first_off..]).map_or(bytes.len(), |i| first_off + i + 1);
        (end, first_line + 1)
    } else {
        (first_off, first_line)
    };
    let meta = TableMeta {
        path: path.to_path_buf(),
        kind: FileKind::Text,
        columns,
        headerless: !has_header,
        separator: Some(sep),
        unit: "line",
        excel_serials: false,
        encoding: Some(encoding),
    };
    Ok(Table {
        meta,
        body: Body::Text(TextBody {
            bytes,
            data_start,
            data_line,
            sep,
            comment,
            long_lines,
            max_line,
        }),
    })
}

/// Two columns with one name would make the mapping ambiguous: refuse with both positions.
pub(super) fn check_unique_columns(path: &Path, columns: &[String]) -> Result<()> {
    for (i, c) in columns.iter().enumerate() {
        if let Some(j) = columns[..i].iter().position(|d| d == c) {
            if c.is_empty() {
                continue;
            }
            return Err(Error::format(
                path,
                format!(
                    "columns {} and {} are both named \"{c}\"; rename one",
                    j + 1,
                    i + 1
                ),
            ));
        }
    }
    Ok(())
}

/// Parse one piece of clean delimited text with polars, every column as text.
pub(super) fn parse_piece(
    meta: &TableMeta,
    piece: &[u8],
    schema: &SchemaRef,
    sep: Separator,
) -> Result<DataFrame> {
    // Whitespace runs were rewritten to single tabs by the line scan.
    let sep_byte = match sep {
        Separator::Byte(b) => b,
        Separator::Whitespace => b'\t',
    };
    CsvReadOptions::default()
        .with_has_header(false)
        .with_schema(Some(schema.clone()))
        .with_rechunk(false)
        .map_parse_options(|p| {
            p.with_separator(sep_byte)
                .with_quote_char(if sep == Separator::Whitespace {
                    None
                } else {
                    Some(b'"')
                })
                .with_missing_is_null(true)
        })
        .into_reader_with_file_handle(std::io::Cursor::new(piece))
        .finish()
        .map_err(|e| Error::Polars {
            path: meta.path.clone(),
            source: e,
        })
}
