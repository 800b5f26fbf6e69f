//! What every table's rows share: people's attributes (one code per node per column), the
//! context of the file being read, and the field checks that record problems in the ledger
//! (people rows: `people`; exposure rows: `rows`).
//!
//! People rows are interned first, so the people table fixes the first node indices; exposure
//! rows are checked for usable IDs *before* their IDs are interned, so a quarantined row adds
//! neither its pair nor its people.

use super::cells::Cells;

use super::dates::{self, DateParser, DateProblem};
use super::ledger::{Counts, FieldProblem, ProblemKind, ReasonFacts};
use super::mapping::Mapping;
pub use super::rules::{IdValue, Rules};
use super::table::TableMeta;
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
    /// The code of no value.
    pub const NONE: u32 = u32::MAX;

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

    /// The distinct values (a value's code is its index, see [`IdMap::intern`]) and each
    /// node's code, borrowed apart.
    pub(super) fn parts_mut(&mut self) -> (&mut IdMap, &mut Vec<u32>) {
        (&mut self.distinct, &mut self.codes)
    }

    /// The code of node `i`'s value, [`AttrColumn::NONE`] if it has none.
    pub(super) fn code(&self, i: usize) -> u32 {
        self.codes.get(i).copied().unwrap_or(Self::NONE)
    }

    /// Set node `i`'s value by its code.
    pub(super) fn set_code(&mut self, i: usize, code: u32) {
        self.codes[i] = code;
    }

    /// Each node's value code ([`AttrColumn::NONE`] where it has none).
    pub fn codes(&self) -> &[u32] {
        &self.codes
    }

    /// Number of value codes (some may be held by no node).
    pub fn distinct_len(&self) -> usize {
        self.distinct.len()
    }

    /// The text of a code.
    pub fn text(&self, code: u32) -> &str {
        self.distinct.name(code)
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

    /// `f` of each node's value (`none` where it has none), `f` evaluated once per distinct
    /// value rather than once per node.
    pub fn map_values<T: Clone>(&self, none: T, mut f: impl FnMut(&str) -> T) -> Vec<T> {
        let per_value: Vec<T> = (0..self.distinct.len() as u32)
            .map(|c| f(self.distinct.name(c)))
            .collect();
        self.codes
            .iter()
            .map(|&c| {
                if c == Self::NONE {
                    none.clone()
                } else {
                    per_value[c as usize].clone()
                }
            })
            .collect()
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

/// The value without white space at either end; `None` when missing or blank.
#[inline]
pub(super) fn trimmed(v: Option<&str>) -> Option<&str> {
    let s = v?;
    // The usual value starts and ends with a printable ASCII character, which no white space
    // is (all ASCII white space is at or below the space character; a UTF-8 sequence starts
    // and ends at or above 0x80): it is returned as it is, without looking at its characters.
    let b = s.as_bytes();
    let plain = |x: u8| x > b' ' && x < 0x80;
    if b.first().is_some_and(|&x| plain(x)) && b.last().is_some_and(|&x| plain(x)) {
        return Some(s);
    }
    Some(s.trim()).filter(|s| !s.is_empty())
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

    /// A checker with the same settings and no problems yet (for checks made on the side,
    /// whose problems are kept or dropped afterwards).
    pub(super) fn scratch(&self) -> FieldChecker {
        FieldChecker {
            parser: self.parser.clone(),
            as_of: self.as_of,
            rules: self.rules.clone(),
            problems: Vec::new(),
        }
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
        match self.classify_date(v) {
            Ok(d) => d,
            Err(kind) => self.bad(ctx, (line, c, v), kind),
        }
    }

    /// A (trimmed, present) date value's day number, or the kind of problem it has; nothing
    /// is recorded.
    pub fn classify_date(&self, v: &str) -> std::result::Result<i32, ProblemKind> {
        match self.parser.parse(v) {
            Ok(d) if d > self.as_of => Err(ProblemKind::FutureDate),
            Ok(d) if d < self.rules.oldest_day => Err(ProblemKind::ImplausibleDate),
            Ok(d) => Ok(d),
            Err(DateProblem::Impossible) => Err(ProblemKind::ImpossibleDate),
            Err(DateProblem::Unreadable) => Err(ProblemKind::UnreadableDate),
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
    pub(super) fn bad(
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
        // Whole minutes (the usual value) without the general number parser: the same
        // value, as an integer of up to 15 digits is exact in an f64.
        if v.len() <= 15 && v.bytes().all(|b| b.is_ascii_digit()) {
            let x = v.bytes().fold(0u64, |a, b| a * 10 + u64::from(b - b'0')) as f64;
            if x <= self.rules.max_minutes {
                return x as f32;
            }
        }
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

#[cfg(test)]
mod tests {
    use super::*;

    /// The shortcut for values that start and end with printable ASCII gives what trimming
    /// every value gives (the standard library's `str::trim`, Unicode white space).
    #[test]
    fn trimmed_is_str_trim() {
        for v in [
            "P1",
            " P1",
            "P1 ",
            "\tP1\r",
            "",
            " ",
            "\u{a0}P1",
            "P1\u{3000}",
            "é",
            " é ",
            "a b",
            "\u{1c}P1",
            "~",
            "\u{85}",
        ] {
            let want = Some(v.trim()).filter(|s| !s.is_empty());
            assert_eq!(trimmed(Some(v)), want, "{v:?}");
        }
        assert_eq!(trimmed(None), None);
    }

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
