//! Frames -> people and their attributes, with the field checks every table shares, filling
//! the ledger (exposure rows: `rows`).
//!
//! People rows are interned first, so the people table fixes the first node indices; exposure
//! rows are checked for usable IDs *before* their IDs are interned, so a quarantined row adds
//! neither its pair nor its people.

use super::cells::{CellColumn, Cells};

use super::dates::{self, DateParser, DateProblem};
use super::ledger::{
    Counts, FieldProblem, ProblemKind, QuarantineReason, QuarantinedRow, ReasonFacts,
};
use super::mapping::Mapping;
pub use super::rules::{IdValue, Rules};
use super::table::{Chunk, TableMeta};
use crate::error::{Error, Result};
use crate::ids::IdMap;

/// Marks a missing date in the day-number arrays.
pub const NO_DATE: i32 = i32::MIN;

/// Attributes of people, one value per node per column (implied people have none).
#[derive(Debug, Clone, Default)]
pub struct Attributes {
    /// Column names: canonical field names where mapped, the file's header otherwise.
    pub names: Vec<String>,
    /// `values[c]`: column `c`, read by node with [`AttrColumn::get`].
    pub values: Vec<AttrColumn>,
}

impl Attributes {
    /// Column index by name.
    pub fn column(&self, name: &str) -> Option<usize> {
        self.names.iter().position(|n| n == name)
    }

    /// Value of a column for a node.
    pub fn get(&self, name: &str, node: u32) -> Option<&str> {
        let c = self.column(name)?;
        self.values[c].get(node as usize)
    }

    pub(crate) fn ensure_column(&mut self, name: &str, nodes: usize) -> usize {
        match self.column(name) {
            Some(c) => c,
            None => {
                self.names.push(name.to_string());
                let mut col = AttrColumn::default();
                col.resize(nodes);
                self.values.push(col);
                self.names.len() - 1
            }
        }
    }
}

/// One attribute column: each distinct value stored once, and a code per node. Attributes
/// are mostly categories (role, status, area, age group, dates), so millions of people share
/// a handful of values; one text per person cost an allocation and about 40 bytes each.
#[derive(Debug, Clone)]
pub struct AttrColumn {
    /// The distinct values (exact text), in order of first appearance.
    distinct: IdMap,
    /// Index into `distinct` per node, [`AttrColumn::NONE`] where there is no value.
    codes: Vec<u32>,
}

impl Default for AttrColumn {
    fn default() -> AttrColumn {
        AttrColumn {
            distinct: IdMap::new(true),
            codes: Vec::new(),
        }
    }
}

impl AttrColumn {
    const NONE: u32 = u32::MAX;

    /// The value of node `i`, if any.
    pub fn get(&self, i: usize) -> Option<&str> {
        match self.codes.get(i) {
            Some(&c) if c != Self::NONE => Some(self.distinct.name(c)),
            _ => None,
        }
    }

    /// Set the value of node `i` (which must exist).
    pub fn set(&mut self, i: usize, value: &str) {
        let (c, _) = self.distinct.intern(value);
        self.codes[i] = c;
    }

    /// Append a node with `value`.
    pub fn push(&mut self, value: Option<&str>) {
        let c = value.map_or(Self::NONE, |v| self.distinct.intern(v).0);
        self.codes.push(c);
    }

    /// Grow (with empty values) or shrink to `n` nodes.
    pub fn resize(&mut self, n: usize) {
        self.codes.resize(n, Self::NONE);
    }

    /// Number of nodes.
    pub fn len(&self) -> usize {
        self.codes.len()
    }

    /// True when the column has no nodes.
    pub fn is_empty(&self) -> bool {
        self.codes.is_empty()
    }

    /// The values in node order.
    pub fn iter(&self) -> impl Iterator<Item = Option<&str>> + '_ {
        (0..self.codes.len()).map(|i| self.get(i))
    }
}

/// Shared context of one file while its rows are processed.
pub struct FileCtx<'a> {
    /// Index of the file in the ledger.
    pub file: usize,
    /// Its metadata.
    pub meta: &'a TableMeta,
    /// Its field mapping.
    pub mapping: &'a Mapping,
    /// Its counts (updated as rows are processed).
    pub counts: Counts,
}

/// Values of an optional column as an iterator of `Option<&str>` (all `None` if unmapped).
pub(super) fn values<'a>(col: Option<CellColumn<'a, '_>>, n: usize) -> Values<'a> {
    match col {
        Some(c) => Box::new(c.iter()),
        None => Box::new(std::iter::repeat_n(None, n)),
    }
}

pub(super) fn trimmed(v: Option<&str>) -> Option<&str> {
    v.map(str::trim).filter(|s| !s.is_empty())
}

/// Checks dates, durations and records field problems.
pub struct FieldChecker {
    parser: DateParser,
    as_of: i32,
    /// Missing-value codes, ID normalisation, plausible bounds.
    pub rules: Rules,
    /// Every field problem seen.
    pub problems: Vec<FieldProblem>,
}

impl FieldChecker {
    /// Dates in `format` (empty = ISO), none after `as_of`.
    pub fn new(format: &str, excel_serials: bool, as_of: i32, rules: Rules) -> FieldChecker {
        FieldChecker {
            parser: DateParser::new(format, excel_serials),
            as_of,
            rules,
            problems: Vec::new(),
        }
    }

    pub(super) fn problem(
        &mut self,
        ctx: &mut FileCtx,
        line: u64,
        column: usize,
        value: &str,
        kind: ProblemKind,
        reason: String,
    ) {
        ctx.counts.field_problems += 1;
        self.problems.push(FieldProblem {
            file: ctx.file,
            line,
            column: ctx.meta.columns[column].clone(),
            value: value.to_string(),
            kind,
            reason,
        });
    }

    /// A date value: the day number, or `NO_DATE` with a field problem recorded.
    pub fn date(
        &mut self,
        ctx: &mut FileCtx,
        line: u64,
        column: Option<usize>,
        v: Option<&str>,
    ) -> i32 {
        let (Some(c), Some(v)) = (column, self.rules.value(v)) else {
            return NO_DATE;
        };
        match self.parser.parse(v) {
            Ok(d) if d > self.as_of => self.bad(ctx, (line, c, v), ProblemKind::FutureDate),
            Ok(d) if d < self.rules.oldest_day => {
                self.bad(ctx, (line, c, v), ProblemKind::ImplausibleDate)
            }
            Ok(d) => d,
            Err(DateProblem::Impossible) => {
                self.bad(ctx, (line, c, v), ProblemKind::ImpossibleDate)
            }
            Err(DateProblem::Unreadable) => {
                self.bad(ctx, (line, c, v), ProblemKind::UnreadableDate)
            }
        }
    }

    /// The facts a problem's sentence needs, from this checker's settings.
    pub fn facts<'a>(&'a self, value: &'a str) -> ReasonFacts<'a> {
        ReasonFacts {
            as_of: self.as_of,
            oldest: self.rules.oldest_day,
            layout: self.parser.layout(),
            max_minutes: self.rules.max_minutes,
            value,
            ..ReasonFacts::default()
        }
    }

    /// Record a problem of `kind` in the wording of [`ProblemKind::reason`]; the date is empty.
    fn bad(
        &mut self,
        ctx: &mut FileCtx,
        (line, c, v): (u64, usize, &str),
        kind: ProblemKind,
    ) -> i32 {
        let msg = kind.reason(&self.facts(v));
        self.problem(ctx, line, c, v, kind, msg);
        NO_DATE
    }

    /// A duration in minutes: the value, or NaN with a field problem recorded.
    pub fn minutes(
        &mut self,
        ctx: &mut FileCtx,
        line: u64,
        column: Option<usize>,
        v: Option<&str>,
    ) -> f32 {
        let (Some(c), Some(v)) = (column, self.rules.value(v)) else {
            return f32::NAN;
        };
        let kind = match v.parse::<f64>() {
            Ok(x) if x > self.rules.max_minutes && x.is_finite() => ProblemKind::ImplausibleNumber,
            Ok(x) if x.is_finite() && x >= 0.0 => return x as f32,
            Ok(x) if x < 0.0 => ProblemKind::NegativeNumber,
            _ => ProblemKind::UnreadableNumber,
        };
        self.bad(ctx, (line, c, v), kind);
        f32::NAN
    }

    /// Stop the load if a date column is day/month ambiguous (ISO layout only).
    pub fn check_ambiguity(
        &self,
        meta: &TableMeta,
        cells: &Cells,
        columns: &[Option<usize>],
    ) -> Result<()> {
        if !self.parser.layout().starts_with("YYYY") {
            return Ok(());
        }
        for &c in columns.iter().flatten() {
            let col = cells
                .column(Some(c), &meta.path)?
                .into_iter()
                .flat_map(|s| s.iter().take(2000));
            let sample: Vec<&str> = col.flatten().collect();
            if let Some(message) = dates::ambiguity_message(&sample) {
                return Err(Error::Dates {
                    path: meta.path.clone(),
                    column: meta.columns[c].clone(),
                    message,
                });
            }
        }
        Ok(())
    }
}

/// Builds people and their attributes from people-table chunks.
pub struct PeopleBuilder {
    /// Node of each person.
    pub ids: IdMap,
    /// Attributes per node.
    pub attrs: Attributes,
    /// Source line of the row that created each node from the people table.
    pub first_line: Vec<(usize, u64)>,
    /// Rows quarantined.
    pub quarantined: Vec<QuarantinedRow>,
}

/// An ID as the map compares it, with its hash.
type HashedKey<'a> = (std::borrow::Cow<'a, str>, u64);

/// How many people rows ahead of the interning their ID's table line is asked for.
const PEOPLE_AHEAD: usize = 16;

/// Fields of the people table whose values are dates.
const PEOPLE_DATE_FIELDS: [&str; 2] = ["onset_date", "report_date"];

impl PeopleBuilder {
    /// Start with an empty ID map.
    pub fn new(case_sensitive: bool) -> PeopleBuilder {
        PeopleBuilder {
            ids: IdMap::new(case_sensitive),
            attrs: Attributes::default(),
            first_line: Vec::new(),
            quarantined: Vec::new(),
        }
    }

    /// A people row without an ID (blank, or a missing-value code) is quarantined.
    fn quarantine_missing_id(
        &mut self,
        ctx: &mut FileCtx,
        line: u64,
        raw: String,
        reason: QuarantineReason,
    ) {
        ctx.counts.quarantined += 1;
        self.quarantined.push(QuarantinedRow {
            file: ctx.file,
            line,
            reason,
            raw,
        });
    }

    /// Keep one people row's attribute values; a value that differs from the one kept for the
    /// same person is a field problem (the first is kept).
    fn set_attributes(
        &mut self,
        ctx: &mut FileCtx,
        checker: &mut FieldChecker,
        pc: &PeopleColumns,
        (row, line): (usize, u64),
        (node, id): (u32, &str),
    ) {
        for (c, col) in pc.cols.iter().enumerate() {
            if c == pc.id_col {
                continue;
            }
            let raw = checker.rules.value(col[row]);
            let value: Option<std::borrow::Cow<str>> = if pc.date_cols.contains(&Some(c)) {
                let d = checker.date(ctx, line, Some(c), raw);
                (d != NO_DATE).then(|| dates::iso(d).into())
            } else {
                raw.map(Into::into)
            };
            let Some(value) = value else { continue };
            let column = &mut self.attrs.values[pc.attr_of[c]];
            match column.get(node as usize) {
                None => column.set(node as usize, &value),
                Some(old) if *old != *value => {
                    let (f, l) = self.first_line[node as usize];
                    let at = if f == ctx.file {
                        format!("line {l}")
                    } else {
                        format!("file {} line {l}", f + 1)
                    };
                    let msg = ProblemKind::ConflictingValue.reason(&ReasonFacts {
                        person: id,
                        kept: old,
                        at: &at,
                        ..ReasonFacts::default()
                    });
                    checker.problem(ctx, line, c, &value, ProblemKind::ConflictingValue, msg);
                }
                Some(_) => {}
            }
        }
    }

    /// The attribute column each file column fills (canonical name where mapped); the ID
    /// column is the key, not an attribute, and is marked `usize::MAX`.
    fn attribute_columns(&mut self, ctx: &FileCtx, id_col: usize) -> Vec<usize> {
        // Attribute column of each file column (canonical name where mapped).
        let names: Vec<String> = (0..ctx.meta.columns.len())
            .map(|c| {
                ctx.mapping
                    .fields
                    .iter()
                    .find(|(_, &i)| i == c)
                    .map(|(f, _)| f.clone())
                    .unwrap_or_else(|| ctx.meta.columns[c].clone())
            })
            .collect();
        let nodes = self.ids.len();
        // The ID column is the key, not an attribute (usize::MAX marks it; it is skipped below).
        names
            .iter()
            .enumerate()
            .map(|(c, n)| {
                if c == id_col {
                    usize::MAX
                } else {
                    self.attrs.ensure_column(n, nodes)
                }
            })
            .collect()
    }

    /// Process one chunk of a people file.
    pub fn add_chunk(
        &mut self,
        ctx: &mut FileCtx,
        chunk: &Chunk,
        checker: &mut FieldChecker,
    ) -> Result<()> {
        let cells = &chunk.cells;
        let meta = ctx.meta;
        let id_col = ctx
            .mapping
            .get("person_id")
            .ok_or_else(|| Error::format(&meta.path, "person_id is not mapped"))?;
        let date_cols: Vec<Option<usize>> = PEOPLE_DATE_FIELDS
            .iter()
            .map(|f| ctx.mapping.get(f))
            .collect();
        if ctx.counts.read == 0 {
            checker.check_ambiguity(meta, cells, &date_cols)?;
        }
        let attr_of = self.attribute_columns(ctx, id_col);
        // Each column read once, in order (a lookup by row number per value cost more than
        // the checks themselves).
        let cols: Vec<Vec<Option<&str>>> = (0..meta.columns.len())
            .map(|c| {
                cells
                    .column(Some(c), &meta.path)
                    .map(|o| o.expect("some").iter().collect())
            })
            .collect::<Result<_>>()?;
        // Room for every row's ID being new (the usual case): the table never grows row by row.
        self.ids.reserve(cells.height());
        // The IDs, folded and hashed up front, so that each one's table line can be asked for
        // a few rows before it is interned (the lookups are cache misses at millions of people).
        let keyed: Vec<(IdValue, Option<HashedKey>)> = cols[id_col]
            .iter()
            .map(|&v| {
                let value = checker.rules.id(v);
                // The key borrows the column's text where the ID is that text.
                let key = match &value {
                    IdValue::Id(std::borrow::Cow::Borrowed(id), _) => Some(self.ids.key(id)),
                    IdValue::Id(std::borrow::Cow::Owned(id), _) => {
                        Some(self.ids.key(id).into_owned().into())
                    }
                    _ => None,
                };
                let key = key.map(|k| {
                    let h = self.ids.hash_key(&k);
                    (k, h)
                });
                (value, key)
            })
            .collect();
        for (row, (value, key)) in keyed.iter().enumerate() {
            if let Some((_, Some((_, h)))) = keyed.get(row + PEOPLE_AHEAD) {
                self.ids.prefetch(*h);
            }
            let line = chunk.lines.line(row);
            ctx.counts.read += 1;
            let (id, (key, h)) = match (value, key) {
                (IdValue::Id(id, changed), Some(key)) => {
                    ctx.counts.ids_normalised += u64::from(*changed);
                    (id, key)
                }
                (missing, _) => {
                    let reason = missing.missing("person_id").expect("not an ID");
                    self.quarantine_missing_id(ctx, line, cells.raw_row(row), reason);
                    continue;
                }
            };
            let id = id.as_ref();
            let (node, new) = self.ids.intern_hashed(key, *h, id);
            if new {
                ctx.counts.used += 1;
                self.first_line.push((ctx.file, line));
                for v in self.attrs.values.iter_mut() {
                    v.push(None);
                }
            } else {
                ctx.counts.merged += 1;
            }
            let pc = PeopleColumns {
                cols: &cols,
                id_col,
                date_cols: &date_cols,
                attr_of: &attr_of,
            };
            self.set_attributes(ctx, checker, &pc, (row, line), (node, id));
        }
        Ok(())
    }
}

/// The columns of one people chunk: text columns, which holds the ID, which are dates, and the
/// attribute each one fills.
struct PeopleColumns<'a> {
    cols: &'a [Vec<Option<&'a str>>],
    id_col: usize,
    date_cols: &'a [Option<usize>],
    attr_of: &'a [usize],
}

/// An optional column's values, row by row.
pub(super) type Values<'a> = Box<dyn Iterator<Item = Option<&'a str>> + Send + 'a>;

#[cfg(test)]
mod tests {
    use super::*;

    /// Values come back as stored, exact text (case and spaces kept), empty where unset.
    #[test]
    fn attribute_column_round_trip() {
        let mut col = AttrColumn::default();
        col.push(Some("Area 1"));
        col.push(None);
        col.push(Some("area 1"));
        col.resize(5);
        col.set(3, "Area 1");
        col.set(1, " x ");
        assert_eq!(col.len(), 5);
        let got: Vec<Option<&str>> = col.iter().collect();
        assert_eq!(
            got,
            [
                Some("Area 1"),
                Some(" x "),
                Some("area 1"),
                Some("Area 1"),
                None
            ]
        );
        assert_eq!(col.get(99), None);
        col.resize(2);
        assert_eq!(col.iter().count(), 2);
        assert!(!col.is_empty());
    }
}
