//! One scan over the data lines of delimited text, from the first piece that is not plain (see
//! [`super::pieces`]) to the end: comment and blank lines skipped, lines with the wrong number
//! of fields or over the length limit set aside with their line, and a clean copy built only
//! when something had to be left out. Text that turns out to be plain after all (no quotes,
//! every line good) is checked on two threads and copies nothing.

use super::cells::RowLines;
use super::sniff::{self, Separator};
use super::table::Rejected;

/// Result of scanning the data lines once.
pub(super) struct Scan {
    /// Clean bytes to parse (None: the original region is already clean).
    pub clean: Option<Vec<u8>>,
    /// Source line of each clean row (None: contiguous from the first data line).
    pub lines: Option<Vec<u64>>,
    /// Lines set aside, with their reason.
    pub rejected: Vec<Rejected>,
    /// True when a quote character occurs (chunks may then not be split at any newline).
    pub quoted: bool,
}

/// Scan the data region: find comment lines, blank lines and lines with the wrong number of
/// fields. When any is found (or separators are whitespace runs), build a clean copy holding
/// only good rows, with the source line of each.
pub(super) fn scan_lines(
    region: &[u8],
    first_line: u64,
    ncols: usize,
    sep: Separator,
    rows: RowLines<'_>,
) -> Scan {
    let (max_line, comment) = (rows.max_line, rows.comment);
    let needs_rewrite = sep == Separator::Whitespace;
    // The fast check fails on any quote character, so text that passes it has none.
    if !needs_rewrite && fast_region_is_clean(region, ncols, sep, rows) {
        return Scan {
            clean: None,
            lines: None,
            rejected: Vec::new(),
            quoted: false,
        };
    }
    let quoted = sep != Separator::Whitespace && memchr::memchr(b'"', region).is_some();
    let mut clean = Vec::with_capacity(region.len());
    let mut lines = Vec::new();
    let mut rejected = Vec::new();
    let mut line_no = first_line;
    let mut pos = 0;
    while pos < region.len() {
        // A record ends at a newline outside quotes.
        let (end, spanned) = record_end(region, pos, quoted);
        let raw = sniff::trim_cr(&region[pos..end]);
        let next = (end + 1).min(region.len().max(end + 1));
        if raw.len() > max_line {
            rejected.push(Rejected {
                line: line_no,
                reason: format!(
                    "line of {} bytes, longer than the limit of {max_line} ([input] max_line_bytes); not read",
                    raw.len()
                ),
                raw: String::from_utf8_lossy(&raw[..raw.len().min(200)]).into_owned(),
            });
        } else if !(sniff::is_blank(raw) || sniff::is_comment(raw, comment)) {
            let n = sniff::count_fields(raw, sep);
            if n == ncols {
                lines.push(line_no);
                if sep == Separator::Whitespace {
                    let mut first = true;
                    for f in raw
                        .split(|b| *b == b' ' || *b == b'\t')
                        .filter(|f| !f.is_empty())
                    {
                        if !first {
                            clean.push(b'\t');
                        }
                        clean.extend_from_slice(f);
                        first = false;
                    }
                } else {
                    clean.extend_from_slice(raw);
                }
                clean.push(b'\n');
            } else {
                let text = String::from_utf8_lossy(&raw[..raw.len().min(200)]).into_owned();
                rejected.push(Rejected {
                    line: line_no,
                    reason: format!("wrong number of fields: {n}, expected {ncols}"),
                    raw: text,
                });
            }
        }
        line_no += 1 + spanned;
        pos = next;
    }
    Scan {
        clean: Some(clean),
        lines: Some(lines),
        rejected,
        quoted,
    }
}

/// End offset of the record starting at `pos`, and how many extra newlines it spans.
fn record_end(region: &[u8], pos: usize, quoted: bool) -> (usize, u64) {
    if !quoted {
        return (
            memchr::memchr(b'\n', &region[pos..]).map_or(region.len(), |i| pos + i),
            0,
        );
    }
    let mut in_quotes = false;
    let mut spanned = 0;
    for (i, &b) in region[pos..].iter().enumerate() {
        match b {
            b'"' => in_quotes = !in_quotes,
            b'\n' if !in_quotes => return (pos + i, spanned),
            b'\n' => spanned += 1,
            _ => {}
        }
    }
    (region.len(), spanned)
}

/// The fast check for the common case: no quote character anywhere, every line non-blank, not
/// a comment, with the right number of separators. Runs on two threads over the two halves of
/// the region.
fn fast_region_is_clean(region: &[u8], ncols: usize, sep: Separator, rows: RowLines<'_>) -> bool {
    let Separator::Byte(s) = sep else {
        return false;
    };
    let blank_possible = RowLines::blank_possible(ncols, s);
    let check = |part: &[u8]| -> bool {
        super::delims::count_fields_per_line(part, s, |start, end, seps| {
            seps as usize + 1 == ncols && rows.is_row(part, (start, end), blank_possible)
        })
    };
    if region.len() < (4 << 20) {
        return check(region);
    }
    let mid = memchr::memchr(b'\n', &region[region.len() / 2..])
        .map_or(region.len(), |i| region.len() / 2 + i + 1);
    let (a, b) = region.split_at(mid);
    std::thread::scope(|sc| {
        let h = sc.spawn(|| check(b));
        let ra = check(a);
        ra && h.join().unwrap_or(false)
    })
}
