//! Delimited text read in pieces cut at line ends. Each piece is tokenised on a thread of its
//! own while the sink checks the one before, so reading and checking overlap on two cores.
//!
//! Most exports are plain: no quote character, every line a row with the table's number of
//! fields. Such a piece is checked by the tokeniser itself as it goes ([`TextCells::tokenise`]),
//! so the text is not walked once more beforehand. At the first piece that is not plain, the
//! line scan ([`scan_lines`]) takes over for the rest of the text: it sets aside what is not a
//! row (with its line) and, where it must, makes a clean copy; the rows before that piece were
//! all plain, one per line, so the rest's first line is known. The rows, their lines and the
//! lines set aside are the same as from one scan of the whole text first.

use std::sync::{Arc, OnceLock};

use polars::prelude::*;

use super::cells::{Cells, RowLines, TextCells};
use super::scan::{scan_lines, Scan};
use super::sniff::Separator;
use super::table::{parse_piece, Chunk, LineMap, ReadOptions, Rejected, TableMeta, TextBody};
use crate::error::{Error, Result};

/// Most bytes of text read as one piece (bounds peak memory).
const CHUNK_BYTES: usize = 48 << 20;
/// Fewest bytes of text read as one piece, unless the file is smaller.
const MIN_CHUNK_BYTES: usize = 4 << 20;

/// The first piece of a table's text, tokenised ahead of its read (while the table before it
/// is read): where it ends in the data lines, and where its fields start.
pub struct FirstPiece {
    end: usize,
    bounds: Vec<u32>,
}

/// The first piece of `body`, tokenised, if it is plain (see [`FirstPiece`]).
pub(super) fn first_piece(
    meta: &TableMeta,
    body: &TextBody,
    opts: &ReadOptions,
) -> Option<FirstPiece> {
    let (end, t) = Reader::new(meta, body, opts).plain_piece(0)?;
    Some(FirstPiece {
        end,
        bounds: t.into_bounds(),
    })
}

/// One piece, ready for the sink.
struct Piece<'a> {
    cells: Cells<'a>,
    lines: LineMap,
    rows_ahead: usize,
    /// The piece came straight from the file's text, which is read up to here (offset in the
    /// data region): its pages need not stay resident once the sink is done with it.
    read_to: Option<usize>,
}

/// Deliver the rows of a delimited text table to `sink` in pieces; return the lines set aside.
///
/// `first` is the first piece if tokenised ahead; `then` runs on the parsing thread once it
/// has sent the last piece (while the sink checks that), and its result is returned.
pub(super) fn read_text<T: Send>(
    meta: &TableMeta,
    body: TextBody,
    (opts, first, then): (
        &ReadOptions,
        Option<FirstPiece>,
        Option<impl FnOnce() -> Option<T> + Send>,
    ),
    sink: &mut dyn FnMut(Chunk<'_>) -> Result<()>,
) -> Result<(Vec<Rejected>, Option<T>)> {
    let reader = Reader::new(meta, &body, opts);
    // At most one parsed piece waits. Pieces arrive in order; an error on either side stops
    // both.
    let (tx, rx) = std::sync::mpsc::sync_channel::<Result<Piece>>(1);
    let ahead = std::thread::scope(|s| -> Result<Option<T>> {
        // Moved in, so that an early return drops it and a parser waiting to send stops.
        let rx = rx;
        let r = &reader;
        // Owns the sender: when it is done, the receiving loop ends.
        let parser = s.spawn(move || {
            if r.parse_all(tx, first) {
                then.and_then(|f| f())
            } else {
                None
            }
        });
        for piece in rx.iter() {
            let Piece {
                cells,
                lines,
                rows_ahead,
                read_to,
            } = piece?;
            sink(Chunk {
                cells,
                lines,
                rows_ahead,
            })?;
            if let Some(end) = read_to {
                body.bytes.release_before(body.data_start + end);
            }
        }
        Ok(parser
            .join()
            .unwrap_or_else(|p| std::panic::resume_unwind(p)))
    })?;
    let mut rejected = reader
        .rest
        .into_inner()
        .map_or_else(Vec::new, |r| r.1.rejected);
    if !body.long_lines.is_empty() {
        rejected.extend(body.long_lines.iter().cloned());
        rejected.sort_by_key(|r| r.line);
    }
    Ok((rejected, ahead))
}

/// The parsing side of [`read_text`].
struct Reader<'a> {
    meta: &'a TableMeta,
    body: &'a TextBody,
    /// The data lines.
    region: &'a [u8],
    /// Rows per piece asked for (0: by the size of the text).
    chunk_rows: usize,
    /// Where the first piece that is not plain starts in `region`, and the line scan of the
    /// text from there on (set once, by the parsing thread).
    rest: OnceLock<(usize, Scan)>,
}

impl<'a> Reader<'a> {
    fn new(meta: &'a TableMeta, body: &'a TextBody, opts: &ReadOptions) -> Reader<'a> {
        Reader {
            meta,
            body,
            region: &body.bytes[body.data_start.min(body.bytes.len())..],
            chunk_rows: opts.chunk_rows,
            rest: OnceLock::new(),
        }
    }

    /// Bytes of text per piece, for `len` bytes of text.
    fn piece_bytes(&self, len: usize) -> usize {
        piece_bytes(self.chunk_rows, len)
    }

    /// What makes a line of this text a row.
    fn rows(&self) -> RowLines<'a> {
        RowLines {
            max_line: self.body.max_line,
            comment: &self.body.comment,
        }
    }

    /// The piece of the data lines starting at `pos`, tokenised, and where it ends, when the
    /// separator is a byte and the piece is plain; `None` otherwise (and at the end).
    fn plain_piece(&self, pos: usize) -> Option<(usize, TextCells<'a>)> {
        let Separator::Byte(sep) = self.body.sep else {
            return None;
        };
        if pos >= self.region.len() {
            return None;
        }
        let end = cut(self.region, pos, self.piece_bytes(self.region.len()), false);
        let ncols = self.meta.columns.len();
        let t = TextCells::tokenise(&self.region[pos..end], sep, ncols, self.rows())?;
        Some((end, t))
    }

    /// Send every piece in order: plain pieces straight from the text, then, from the first
    /// that is not plain, the pieces of the line scan's rest. Stops when the receiver has gone
    /// or at the first error (which is sent); returns true when every piece was sent.
    fn parse_all<'s>(
        &'s self,
        tx: std::sync::mpsc::SyncSender<Result<Piece<'s>>>,
        mut first: Option<FirstPiece>,
    ) -> bool {
        let ncols = self.meta.columns.len();
        let body = self.body;
        let rows = self.rows();
        let mut pos = 0usize;
        let mut rows_done = 0u64;
        loop {
            // The first piece may have been tokenised ahead.
            let given = first.take().and_then(|f| {
                TextCells::from_bounds(&self.region[..f.end], ncols, f.bounds).map(|t| (f.end, t))
            });
            let Some((end, t)) = given.or_else(|| self.plain_piece(pos)) else {
                break;
            };
            let n = t.height();
            let piece = Piece {
                cells: Cells::Text(t),
                lines: LineMap::Contiguous {
                    first: body.data_line + rows_done,
                },
                rows_ahead: ahead(self.region.len() - end, n, end - pos),
                read_to: Some(end),
            };
            if tx.send(Ok(piece)).is_err() {
                return false;
            }
            rows_done += n as u64;
            pos = end;
        }
        if pos >= self.region.len() {
            return true;
        }
        let (start, scan) = self.rest.get_or_init(|| {
            let first_line = body.data_line + rows_done;
            let scan = scan_lines(&self.region[pos..], first_line, ncols, body.sep, rows);
            (pos, scan)
        });
        let data: &[u8] = scan.clean.as_deref().unwrap_or(&self.region[*start..]);
        let schema: Schema = self
            .meta
            .columns
            .iter()
            .map(|c| Field::new(c.as_str().into(), DataType::String))
            .collect();
        let schema = Arc::new(schema);
        let piece_bytes = self.piece_bytes(data.len());
        let (mut at, mut rows_in_rest) = (0usize, 0usize);
        while at < data.len() {
            let end = cut(data, at, piece_bytes, scan.quoted);
            let piece = self
                .parse_cells(&data[at..end], &schema, rows, !scan.quoted)
                .and_then(|cells| {
                    let n = cells.height();
                    let lines = match &scan.lines {
                        None => LineMap::Contiguous {
                            first: body.data_line + rows_done + rows_in_rest as u64,
                        },
                        Some(v) => {
                            let slice = v.get(rows_in_rest..rows_in_rest + n).ok_or_else(|| {
                                Error::format(
                                    &self.meta.path,
                                    "internal error: row count differs from the line scan; please report",
                                )
                            })?;
                            LineMap::Explicit(slice.to_vec())
                        }
                    };
                    rows_in_rest += n;
                    Ok(Piece {
                        cells,
                        lines,
                        rows_ahead: ahead(data.len() - end, n, end - at),
                        read_to: scan.clean.is_none().then_some(start + end),
                    })
                });
            let failed = piece.is_err();
            if tx.send(piece).is_err() || failed {
                return false;
            }
            at = end;
        }
        true
    }

    /// The cells of one piece of clean delimited text: tokenised in place when it holds no
    /// quote (`plain`), else (or if that fails) parsed by polars.
    fn parse_cells<'s>(
        &self,
        piece: &'s [u8],
        schema: &SchemaRef,
        rows: RowLines<'_>,
        plain: bool,
    ) -> Result<Cells<'s>> {
        let sep = self.body.sep;
        let sep_byte = match sep {
            Separator::Byte(b) => b,
            Separator::Whitespace => b'\t',
        };
        if plain {
            let ncols = self.meta.columns.len();
            if let Some(t) = TextCells::tokenise(piece, sep_byte, ncols, rows) {
                return Ok(Cells::Text(t));
            }
        }
        parse_piece(self.meta, piece, schema, sep).map(|mut f| {
            f.rechunk_mut_par();
            Cells::Frame(f)
        })
    }
}

/// Bytes of text per piece, for `len` bytes of text and `chunk_rows` rows per piece asked for
/// (0: by the size of the text).
fn piece_bytes(chunk_rows: usize, len: usize) -> usize {
    if chunk_rows > 0 {
        chunk_rows * 40
    } else {
        // At least eight pieces where the file allows, so that reading the next piece
        // overlaps checking this one in smaller exports too.
        (len / 8).clamp(MIN_CHUNK_BYTES, CHUNK_BYTES)
    }
}

/// The end of the piece of `text` starting at `pos`: the first line end after `bytes` more,
/// or the end of the text (always when `whole`).
fn cut(text: &[u8], pos: usize, bytes: usize, whole: bool) -> usize {
    if whole || text.len() - pos <= bytes {
        return text.len();
    }
    memchr::memchr(b'\n', &text[pos + bytes..]).map_or(text.len(), |i| pos + bytes + i + 1)
}

/// Rows still to come after a piece of `rows` rows in `bytes` bytes, with `left` bytes after
/// it: estimated at the piece's rows per byte.
fn ahead(left: usize, rows: usize, bytes: usize) -> usize {
    (left as u128 * rows as u128 / bytes.max(1) as u128) as usize
}
