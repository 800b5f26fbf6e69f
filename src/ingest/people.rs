//! People-table chunks -> people (IDs interned in row order, so the people table fixes the
//! first node indices) and their attributes, each distinct value stored once.
//!
//! A large chunk is worked on two cores: one interns the IDs, the other turns the attribute
//! columns into value codes (dates checked and written as ISO 8601), each attribute a task of
//! the pool, so the core done with the IDs takes the attributes still to do. A last pass in row
//! order then keeps each person's first value and records the problems, in the order reading
//! the rows one by one would record them.

use super::cells::CellColumn;
use super::dates;
use super::ledger::{ProblemKind, QuarantinedRow, ReasonFacts};
use super::reconcile::{AttrColumn, Attributes, FieldChecker, FileCtx, IdValue, Rules};
use super::table::Chunk;
use crate::error::{Error, Result};
use crate::ids::IdMap;

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

/// Below this many rows, a second thread costs more than it saves.
const PARALLEL_ROWS: usize = 50_000;

/// Fields of the people table whose values are dates.
const PEOPLE_DATE_FIELDS: [&str; 2] = ["onset_date", "report_date"];

/// Each row's node and whether the row created it; `None` for a row set aside.
type RowNodes = Vec<Option<(u32, bool)>>;

/// One attribute column of a chunk, coded: each row's value code (`AttrColumn::NONE` for no
/// value) and the rows whose date could not be kept, with the value and the problem.
struct Coded<'a> {
    codes: Vec<u32>,
    problems: Vec<(u32, &'a str, ProblemKind)>,
}

/// A file column that fills an attribute: (file column, attribute column, holds dates).
type AttrWork = (usize, usize, bool);

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

    /// The attribute column each file column fills (canonical name where mapped), for every
    /// column but the ID column (the key, not an attribute).
    fn attribute_columns(
        &mut self,
        ctx: &FileCtx,
        id_col: usize,
        dates: &[usize],
    ) -> Vec<AttrWork> {
        let nodes = self.ids.len();
        (0..ctx.meta.columns.len())
            .filter(|&c| c != id_col)
            .map(|c| {
                let name = ctx.mapping.field_of(c).unwrap_or(&ctx.meta.columns[c]);
                (c, self.attrs.ensure_column(name, nodes), dates.contains(&c))
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
        let dates: Vec<usize> = date_cols.iter().flatten().copied().collect();
        let work = self.attribute_columns(ctx, id_col, &dates);
        let columns: Vec<CellColumn> = (0..meta.columns.len())
            .map(|c| cells.column(Some(c), &meta.path).map(|o| o.expect("some")))
            .collect::<Result<_>>()?;
        let n = cells.height();
        // Room for every row's ID being new (the usual case), this chunk's and, by estimate,
        // the chunks still to come: the table is laid out once, not grown and rehashed chunk
        // by chunk (an estimate short by a few rows costs one more layout at the end). The
        // estimate is held to 16 times the rows read so far, in case the first rows are
        // much shorter than the rest.
        let ahead = chunk.rows_ahead.min(16 * (self.ids.len() + n));
        self.ids.reserve(n + ahead);
        let Self {
            ids,
            attrs,
            first_line,
            quarantined,
        } = self;
        let checker_ref = &*checker;
        // Each attribute's distinct values (coded on one side) apart from its codes per
        // person (grown on the other once the people are known).
        let (mut distinct, codes): (Vec<&mut IdMap>, Vec<&mut Vec<u32>>) =
            attrs.values.iter_mut().map(AttrColumn::parts_mut).unzip();
        // The attributes coded apart from each other (the file columns that fill the same
        // attribute in order, one after the other), as tasks of the pool: the worker done
        // with the IDs takes the attributes still to do.
        let code_all = || -> Vec<Coded> {
            let mut groups: Vec<(&mut IdMap, Vec<usize>)> = Vec::new();
            for (a, d) in distinct.iter_mut().enumerate() {
                let items: Vec<usize> = (0..work.len()).filter(|&k| work[k].1 == a).collect();
                if !items.is_empty() {
                    groups.push((&mut **d, items));
                }
            }
            let code_group = |(d, items): (&mut IdMap, Vec<usize>)| -> Vec<(usize, Coded)> {
                let coded = items.into_iter().map(|k| {
                    let (c, _, is_date) = work[k];
                    (k, code_column(columns[c], &mut *d, is_date, checker_ref))
                });
                coded.collect()
            };
            let mut coded: Vec<(usize, Coded)> = if n >= PARALLEL_ROWS {
                use rayon::prelude::*;
                groups.into_par_iter().flat_map_iter(code_group).collect()
            } else {
                groups.into_iter().flat_map(code_group).collect()
            };
            coded.sort_by_key(|(k, _)| *k);
            coded.into_iter().map(|(_, c)| c).collect()
        };
        let mut interned = Interning {
            ids,
            first_line,
            quarantined,
            ctx: &mut *ctx,
            rules: &checker.rules,
        };
        let (nodes, coded) = crate::par::on_pool(n >= PARALLEL_ROWS, code_all, || {
            let nodes = interned.rows(columns[id_col], chunk);
            // The people first seen in this chunk have no value yet.
            let people = interned.ids.len();
            for c in codes {
                c.resize(people, AttrColumn::NONE);
            }
            nodes
        });
        self.keep_values(ctx, checker, (chunk, &work), (&nodes, &coded));
        Ok(())
    }

    /// The last pass, in row order: a new person's values are kept, a value that differs
    /// from the one kept for the same person is a field problem (the first is kept), and a
    /// date that could not be kept is one too. The attribute columns are shared out between
    /// two cores (the file columns that fill one attribute on the same core); the problems
    /// are then recorded in row order, and in column order within a row, as one pass would.
    fn keep_values(
        &mut self,
        ctx: &mut FileCtx,
        checker: &mut FieldChecker,
        (chunk, work): (&Chunk, &[AttrWork]),
        (nodes, coded): (&RowNodes, &[Coded]),
    ) {
        // The work items of the attribute columns before the middle item's on one core, the
        // others on the other.
        let mut filled: Vec<usize> = work.iter().map(|w| w.1).collect();
        filled.sort_unstable();
        let half = filled.get(filled.len() / 2).copied().unwrap_or(0);
        let (low, high) = self.attrs.values.split_at_mut(half);
        let share = |first: usize, columns: &mut [AttrColumn]| {
            let items: Vec<usize> = (0..work.len())
                .filter(|&k| (first..first + columns.len()).contains(&work[k].1))
                .collect();
            keep_column_values(nodes, (work, &items, coded), (first, columns))
        };
        let (notes_high, notes_low) = crate::par::beside(
            nodes.len() >= PARALLEL_ROWS,
            || share(half, high),
            || share(0, low),
        );
        let mut notes = notes_low;
        notes.extend(notes_high);
        notes.sort_by_key(|n| (n.row, n.item));
        for note in notes {
            let line = chunk.lines.line(note.row);
            let (c, a, _) = work[note.item];
            match note.what {
                Noted::Unkept(v, kind) => {
                    checker.bad(ctx, (line, c, v), kind);
                }
                Noted::Conflict { node, kept, value } => {
                    let column = &self.attrs.values[a];
                    let (f, l) = self.first_line[node as usize];
                    let at = if f == ctx.file {
                        format!("line {l}")
                    } else {
                        format!("file {} line {l}", f + 1)
                    };
                    let (kept, value) = (column.text(kept), column.text(value));
                    let msg = ProblemKind::ConflictingValue.reason(&ReasonFacts {
                        person: self.ids.name(node),
                        kept,
                        at: &at,
                        ..ReasonFacts::default()
                    });
                    checker.problem(ctx, line, c, value, ProblemKind::ConflictingValue, msg);
                }
            }
        }
    }
}

/// A problem found while keeping values, recorded afterwards in order.
struct Note<'a> {
    row: usize,
    /// The work item (file column) it belongs to.
    item: usize,
    what: Noted<'a>,
}

/// What a [`Note`] says.
enum Noted<'a> {
    /// A date that could not be kept, with its problem.
    Unkept(&'a str, ProblemKind),
    /// A value other than the one kept for the person (both as codes of the column).
    Conflict { node: u32, kept: u32, value: u32 },
}

/// [`PeopleBuilder::keep_values`] for the work `items` whose attributes are `columns`
/// (attribute `first` onwards), in row order: keeps each person's first value, and notes the
/// problems.
fn keep_column_values<'a>(
    nodes: &RowNodes,
    (work, items, coded): (&[AttrWork], &[usize], &[Coded<'a>]),
    (first, columns): (usize, &mut [AttrColumn]),
) -> Vec<Note<'a>> {
    let mut notes = Vec::new();
    let mut problems: Vec<_> = items
        .iter()
        .map(|&k| coded[k].problems.iter().peekable())
        .collect();
    for (row, at) in nodes.iter().enumerate() {
        let Some((node, _)) = *at else {
            // A row set aside records no problem of its values.
            for p in problems.iter_mut() {
                while p.next_if(|(r, _, _)| *r as usize == row).is_some() {}
            }
            continue;
        };
        for (i, &k) in items.iter().enumerate() {
            if let Some((_, v, kind)) = problems[i].next_if(|(r, _, _)| *r as usize == row) {
                let what = Noted::Unkept(v, *kind);
                notes.push(Note { row, item: k, what });
            }
            let code = coded[k].codes[row];
            if code == AttrColumn::NONE {
                continue;
            }
            let column = &mut columns[work[k].1 - first];
            let kept = column.code(node as usize);
            if kept == AttrColumn::NONE {
                column.set_code(node as usize, code);
            } else if kept != code {
                let what = Noted::Conflict {
                    node,
                    kept,
                    value: code,
                };
                notes.push(Note { row, item: k, what });
            }
        }
    }
    notes
}

/// The ID side of a people chunk: what interning needs, borrowed apart from the attributes.
struct Interning<'b, 'm> {
    ids: &'b mut IdMap,
    first_line: &'b mut Vec<(usize, u64)>,
    quarantined: &'b mut Vec<QuarantinedRow>,
    ctx: &'b mut FileCtx<'m>,
    rules: &'b Rules,
}

impl Interning<'_, '_> {
    /// Intern each row's ID in order; a row without one (blank, or a missing-value code) is
    /// quarantined.
    fn rows(&mut self, id_column: CellColumn, chunk: &Chunk) -> RowNodes {
        let ids = &mut *self.ids;
        // The IDs, folded and hashed up front, so that each one's table line can be asked for
        // a few rows before it is interned (the lookups are cache misses at millions of people).
        let keyed: Vec<(IdValue, Option<HashedKey>)> = id_column
            .iter()
            .map(|v| {
                let value = self.rules.id(v);
                // The key borrows the column's text where the ID is that text.
                let key = match &value {
                    IdValue::Id(std::borrow::Cow::Borrowed(id), _) => Some(ids.key(id)),
                    IdValue::Id(std::borrow::Cow::Owned(id), _) => {
                        Some(ids.key(id).into_owned().into())
                    }
                    _ => None,
                };
                let key = key.map(|k| {
                    let h = ids.hash_key(&k);
                    (k, h)
                });
                (value, key)
            })
            .collect();
        let ctx = &mut *self.ctx;
        let mut out = Vec::with_capacity(keyed.len());
        for (row, (value, key)) in keyed.iter().enumerate() {
            if let Some((_, Some((_, h)))) = keyed.get(row + PEOPLE_AHEAD) {
                ids.prefetch(*h);
            }
            ctx.counts.read += 1;
            let (id, (key, h)) = match (value, key) {
                (IdValue::Id(id, changed), Some(key)) => {
                    ctx.counts.ids_normalised += u64::from(*changed);
                    (id, key)
                }
                (missing, _) => {
                    let reason = missing.missing("person_id").expect("not an ID");
                    ctx.counts.quarantined += 1;
                    self.quarantined.push(QuarantinedRow {
                        file: ctx.file,
                        line: chunk.lines.line(row),
                        reason,
                        raw: chunk.cells.raw_row(row),
                    });
                    out.push(None);
                    continue;
                }
            };
            let (node, new) = ids.intern_hashed(key, *h, id.as_ref());
            if new {
                ctx.counts.used += 1;
                self.first_line.push((ctx.file, chunk.lines.line(row)));
            } else {
                ctx.counts.merged += 1;
            }
            out.push(Some((node, new)));
        }
        out
    }
}

/// One attribute column's values as codes in `column`'s distinct values; a date is kept as
/// its ISO 8601 text, and one that cannot be kept is noted with its problem (recorded later,
/// in row order, if its row is used).
fn code_column<'c>(
    values: CellColumn<'c, '_>,
    column: &mut IdMap,
    is_date: bool,
    checker: &FieldChecker,
) -> Coded<'c> {
    let mut coded = Coded {
        codes: Vec::new(),
        problems: Vec::new(),
    };
    // Day number -> code: a handful of days among millions of rows.
    let mut day_codes: hashbrown::HashMap<i32, u32> = hashbrown::HashMap::new();
    for (row, v) in values.iter().enumerate() {
        let code = match checker.rules.value(v) {
            None => AttrColumn::NONE,
            Some(v) if is_date => match checker.classify_date(v) {
                Ok(d) => *day_codes
                    .entry(d)
                    .or_insert_with(|| column.intern(&dates::iso(d)).0),
                Err(kind) => {
                    coded.problems.push((row as u32, v, kind));
                    AttrColumn::NONE
                }
            },
            Some(v) => column.intern(v).0,
        };
        coded.codes.push(code);
    }
    coded
}
