//! The cells of one chunk of rows, all as text: either a polars frame (Parquet, NDJSON,
//! spreadsheets, quoted text) or plain delimited text tokenised in place.
//!
//! Plain text (no quote character, every line a row with the table's number of fields) needs
//! no copy of its values: one pass checks that it is plain and records where each field
//! starts, and a cell is a slice of the text. This reads the same cells as polars does (an
//! empty field is missing, a carriage return before the line end is not part of the last
//! field), without building string columns first.

use polars::prelude::*;

use crate::error::{Error, Result};

/// The rows of one chunk, every column as text.
pub enum Cells<'a> {
    /// A frame of String columns.
    Frame(DataFrame),
    /// Plain delimited text with the start of every field.
    Text(TextCells<'a>),
}

/// What makes a line of delimited text a row of data: not blank, not a comment, not over the
/// length limit (a carriage return before the line end not counted).
#[derive(Debug, Clone, Copy)]
pub struct RowLines<'c> {
    /// Longest line read, in bytes.
    pub max_line: usize,
    /// Comment prefix (empty: none).
    pub comment: &'c [u8],
}

impl RowLines<'_> {
    /// Every line that holds something.
    pub const ANY: RowLines<'static> = RowLines {
        max_line: usize::MAX,
        comment: b"",
    };

    /// True when the line `start..end` of `text` (without its line end), whose fields are
    /// already counted as the table's, is a row of data. With two fields or more, split at a
    /// separator other than a space or a tab, the line cannot be blank or empty
    /// (`blank_possible` false: see [`RowLines::blank_possible`]); the comment prefix is
    /// looked for only where the line starts with its first byte.
    #[inline(always)]
    pub fn is_row(&self, text: &[u8], (start, end): (usize, usize), blank_possible: bool) -> bool {
        use super::sniff::{is_blank, trim_cr};
        if end - start > self.max_line && trim_cr(&text[start..end]).len() > self.max_line {
            return false;
        }
        if let Some(&c) = self.comment.first() {
            if text.get(start) == Some(&c) && text[start..end].starts_with(self.comment) {
                return false;
            }
        }
        !(blank_possible && is_blank(trim_cr(&text[start..end])))
    }

    /// Whether a line of `ncols` fields split at `sep` can be blank (see [`RowLines::is_row`]).
    pub fn blank_possible(ncols: usize, sep: u8) -> bool {
        ncols == 1 || sep == b' ' || sep == b'\t'
    }
}

/// Plain delimited text and where its fields start.
pub struct TextCells<'a> {
    text: &'a str,
    ncols: usize,
    /// Row r's field c spans `bounds[r * ncols + c] .. bounds[r * ncols + c + 1] - 1` (the
    /// byte before the next bound is a separator or the line end); one bound past the last row.
    bounds: Vec<u32>,
}

impl<'a> TextCells<'a> {
    /// Tokenise `piece`: lines of exactly `ncols` fields split at `sep`, each a row of data
    /// by `rows`, no quote character anywhere. `None` when it is not so, or the piece is not
    /// valid UTF-8 or too long for 32-bit offsets: the caller then reads it with the line scan
    /// or polars, which report what they find.
    pub fn tokenise(
        piece: &'a [u8],
        sep: u8,
        ncols: usize,
        rows: RowLines<'_>,
    ) -> Option<TextCells<'a>> {
        if ncols == 0 || piece.len() >= u32::MAX as usize {
            return None;
        }
        let text = simdutf8::basic::from_utf8(piece).ok()?;
        let mut bounds: Vec<u32> = Vec::with_capacity(piece.len() / 6 + 2);
        bounds.push(0);
        let mut row_start = 0usize;
        let mut line_start = 0usize;
        let blank_possible = RowLines::blank_possible(ncols, sep);
        for b in super::delims::blocks(piece, sep) {
            if b.quote != 0 {
                return None;
            }
            let mut found = b.sep | b.nl;
            while found != 0 {
                let i = found.trailing_zeros();
                let at = b.base + i as usize;
                bounds.push(at as u32 + 1);
                if b.nl >> i & 1 == 1 {
                    row_start += ncols;
                    if bounds.len() != row_start + 1
                        || !rows.is_row(piece, (line_start, at), blank_possible)
                    {
                        return None;
                    }
                    line_start = at + 1;
                }
                found &= found - 1;
            }
        }
        if bounds.len() != row_start + 1 {
            // A last line without a line end.
            bounds.push(piece.len() as u32 + 1);
            row_start += ncols;
            let end = piece.len();
            if bounds.len() != row_start + 1
                || !rows.is_row(piece, (line_start, end), blank_possible)
            {
                return None;
            }
        }
        Some(TextCells {
            text,
            ncols,
            bounds,
        })
    }

    /// The field starts [`TextCells::tokenise`] found in `piece` (taken apart with
    /// [`TextCells::into_bounds`]), put back together; `None` if `piece` is not valid UTF-8.
    pub fn from_bounds(piece: &'a [u8], ncols: usize, bounds: Vec<u32>) -> Option<TextCells<'a>> {
        let text = simdutf8::basic::from_utf8(piece).ok()?;
        Some(TextCells {
            text,
            ncols,
            bounds,
        })
    }

    /// The field starts, owned (see [`TextCells::from_bounds`]).
    pub fn into_bounds(self) -> Vec<u32> {
        self.bounds
    }

    /// Number of rows.
    pub fn height(&self) -> usize {
        (self.bounds.len() - 1) / self.ncols
    }

    /// The value of row `r`, column `c` (`None` when empty).
    #[inline]
    pub fn get(&self, r: usize, c: usize) -> Option<&'a str> {
        let i = r * self.ncols + c;
        let (start, end) = (self.bounds[i] as usize, self.bounds[i + 1] as usize - 1);
        let mut v = &self.text[start..end.min(self.text.len())];
        if c + 1 == self.ncols {
            v = v.strip_suffix('\r').unwrap_or(v);
        }
        (!v.is_empty()).then_some(v)
    }
}

/// One column of a chunk.
#[derive(Clone, Copy)]
pub enum CellColumn<'c, 'a> {
    /// A polars String column.
    Frame(&'c StringChunked),
    /// Column `c` of plain text.
    Text(&'c TextCells<'a>, usize),
}

impl<'c, 'a: 'c> CellColumn<'c, 'a> {
    /// The values in row order (`None` for a missing value).
    pub fn iter(self) -> CellIter<'c, 'a> {
        match self {
            CellColumn::Frame(s) => CellIter::Frame(Box::new(s.iter())),
            CellColumn::Text(t, c) => CellIter::Text {
                cells: t,
                c,
                r: 0,
                end: t.height(),
            },
        }
    }

    /// The value of row `r` (`None` for a missing value): for text, two reads of the cell
    /// bounds.
    #[inline]
    pub fn get(&self, r: usize) -> Option<&'c str> {
        match *self {
            CellColumn::Frame(s) => s.get(r),
            CellColumn::Text(t, c) => t.get(r, c),
        }
    }
}

/// The values of a [`CellColumn`] in row order.
pub enum CellIter<'c, 'a> {
    /// From a polars column.
    Frame(Box<dyn Iterator<Item = Option<&'c str>> + Send + 'c>),
    /// From plain text.
    Text {
        /// The text.
        cells: &'c TextCells<'a>,
        /// Column.
        c: usize,
        /// Next row.
        r: usize,
        /// Row after the last.
        end: usize,
    },
}

impl<'c, 'a: 'c> Iterator for CellIter<'c, 'a> {
    type Item = Option<&'c str>;

    #[inline]
    fn next(&mut self) -> Option<Option<&'c str>> {
        match self {
            CellIter::Frame(it) => it.next(),
            CellIter::Text { cells, c, r, end } => {
                if *r >= *end {
                    return None;
                }
                let v = cells.get(*r, *c);
                *r += 1;
                Some(v)
            }
        }
    }

    fn size_hint(&self) -> (usize, Option<usize>) {
        match self {
            CellIter::Frame(it) => it.size_hint(),
            CellIter::Text { r, end, .. } => {
                let n = end.saturating_sub(*r);
                (n, Some(n))
            }
        }
    }
}

impl<'a> Cells<'a> {
    /// Number of rows.
    pub fn height(&self) -> usize {
        match self {
            Cells::Frame(f) => f.height(),
            Cells::Text(t) => t.height(),
        }
    }

    /// Column `idx` (`None` when the field is not mapped).
    pub fn column(
        &self,
        idx: Option<usize>,
        path: &std::path::Path,
    ) -> Result<Option<CellColumn<'_, 'a>>> {
        let Some(i) = idx else { return Ok(None) };
        match self {
            Cells::Frame(f) => f.columns()[i]
                .str()
                .map(|s| Some(CellColumn::Frame(s)))
                .map_err(|e| Error::Polars {
                    path: path.to_path_buf(),
                    source: e,
                }),
            Cells::Text(t) => Ok(Some(CellColumn::Text(t, i))),
        }
    }

    /// The row's values comma-joined (a missing value as empty), for the quarantine report.
    pub fn raw_row(&self, row: usize) -> String {
        match self {
            Cells::Frame(frame) => frame
                .columns()
                .iter()
                .map(|c| c.str().ok().and_then(|s| s.get(row)).unwrap_or(""))
                .collect::<Vec<_>>()
                .join(","),
            Cells::Text(t) => (0..t.ncols)
                .map(|c| t.get(row, c).unwrap_or(""))
                .collect::<Vec<_>>()
                .join(","),
        }
    }

    /// As a polars frame with the given column names (for adding joined columns).
    pub fn into_frame(self, names: &[String], path: &std::path::Path) -> Result<DataFrame> {
        match self {
            Cells::Frame(f) => Ok(f),
            Cells::Text(t) => {
                let cols: Vec<Column> = names
                    .iter()
                    .enumerate()
                    .take(t.ncols)
                    .map(|(c, name)| {
                        let values: Vec<Option<&str>> =
                            (0..t.height()).map(|r| t.get(r, c)).collect();
                        Column::new(name.as_str().into(), values)
                    })
                    .collect();
                DataFrame::new(t.height(), cols).map_err(|e| Error::Polars {
                    path: path.to_path_buf(),
                    source: e,
                })
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::ingest::sniff::Separator;
    use crate::ingest::table::{parse_piece, FileKind, TableMeta};
    use proptest::prelude::*;

    fn meta(ncols: usize) -> TableMeta {
        TableMeta {
            path: "t.csv".into(),
            kind: FileKind::Text,
            columns: (0..ncols).map(|i| format!("c{i}")).collect(),
            headerless: true,
            separator: None,
            unit: "line",
            excel_serials: false,
            encoding: None,
        }
    }

    /// Every cell as polars reads the same text (the reference: polars' own CSV reader).
    fn by_polars(text: &str, ncols: usize, sep: u8) -> Vec<Vec<Option<String>>> {
        let m = meta(ncols);
        let schema: Schema = m
            .columns
            .iter()
            .map(|c| Field::new(c.as_str().into(), DataType::String))
            .collect();
        let frame = parse_piece(&m, text.as_bytes(), &Arc::new(schema), Separator::Byte(sep))
            .expect("polars reads it");
        let cells = Cells::Frame(frame);
        table_of(&cells, ncols)
    }

    fn table_of(cells: &Cells, ncols: usize) -> Vec<Vec<Option<String>>> {
        let cols: Vec<Vec<Option<String>>> = (0..ncols)
            .map(|c| {
                let col = cells.column(Some(c), "t.csv".as_ref()).unwrap().unwrap();
                col.iter().map(|v| v.map(str::to_string)).collect()
            })
            .collect();
        (0..cells.height())
            .map(|r| cols.iter().map(|c| c[r].clone()).collect())
            .collect()
    }

    /// A value without separators, quotes or line ends: empty, spaces, non-ASCII, a lone CR
    /// inside is left out (polars would read it as a line end).
    fn value() -> impl Strategy<Value = String> {
        prop_oneof![
            Just(String::new()),
            Just(" ".to_string()),
            "[A-Za-z0-9 ._:-]{1,12}",
            "[éßØ語 a-z]{1,6}",
        ]
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(300))]
        /// The in-place reading gives the cells polars gives: values, missing values, rows,
        /// with or without CR LF line ends and a final line end.
        #[test]
        fn same_cells_as_polars(
            rows in proptest::collection::vec(proptest::collection::vec(value(), 3), 1..30),
            crlf in any::<bool>(),
            final_newline in any::<bool>(),
            sep in prop_oneof![Just(b','), Just(b';'), Just(b'\t')],
        ) {
            let end = if crlf { "\r\n" } else { "\n" };
            let lines: Vec<String> = rows.iter().map(|r| r.join(&(sep as char).to_string())).collect();
            // A line of only empty fields split at tabs would be blank: the tokeniser refuses
            // it (the line scan drops it), so leave those out here.
            let lines: Vec<&String> = lines.iter().filter(|l| !l.trim().is_empty()).collect();
            prop_assume!(!lines.is_empty());
            let mut text = lines.iter().map(|l| l.as_str()).collect::<Vec<_>>().join(end);
            if final_newline {
                text.push_str(end);
            }
            let mine = TextCells::tokenise(text.as_bytes(), sep, 3, RowLines::ANY)
                .expect("plain text");
            let mine = Cells::Text(mine);
            prop_assert_eq!(table_of(&mine, 3), by_polars(&text, 3, sep));
            for r in 0..mine.height() {
                let Cells::Text(t) = &mine else { unreachable!() };
                let joined: Vec<&str> = (0..3).map(|c| t.get(r, c).unwrap_or("")).collect();
                prop_assert_eq!(mine.raw_row(r), joined.join(","));
            }
        }
    }

    /// A line with another number of fields, text that is not UTF-8, a quote character, and a
    /// line that is no row of data (blank, a comment, too long) are left to the line scan or
    /// polars.
    #[test]
    fn refuses_what_it_cannot_read() {
        let any = RowLines::ANY;
        assert!(TextCells::tokenise(b"a,b,c\nd,e\n", b',', 3, any).is_none());
        assert!(TextCells::tokenise(b"a,b,c\nd,e,f,g\n", b',', 3, any).is_none());
        assert!(TextCells::tokenise(b"a,\xff,c\n", b',', 3, any).is_none());
        assert!(TextCells::tokenise(b"a,\"b\",c\n", b',', 3, any).is_none());
        assert!(TextCells::tokenise(b"a\n \t\r\nc\n", b',', 1, any).is_none());
        let rows = RowLines {
            max_line: 6,
            comment: b"#",
        };
        assert!(TextCells::tokenise(b"a,b,c\n#,b,c\n", b',', 3, rows).is_none());
        assert!(TextCells::tokenise(b"a,b,c\nd,e,fgh\r\n", b',', 3, rows).is_none());
        assert!(TextCells::tokenise(b"a,b,c\nd,e,fg\r\n", b',', 3, rows).is_some());
        assert!(TextCells::tokenise(b"a,b,c\nd,e,fgh", b',', 3, rows).is_none());
        let t = TextCells::tokenise(b"a,,c\nd,e,f", b',', 3, any).expect("plain");
        assert_eq!(t.height(), 2);
        assert_eq!(t.get(0, 1), None);
        assert_eq!(t.get(1, 2), Some("f"));
    }
}
