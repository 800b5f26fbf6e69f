//! Chunks -> the usable exposure rows, checked and in input order. The pool's workers take
//! runs of a chunk's rows and, row by row, decide whether each row can form an exposure, look
//! its IDs up (see `intern`) and check its dates, minutes and setting (see `fields`); the runs
//! are then joined in row order, the IDs no person had numbered, and unmapped columns kept per
//! row.

use std::ops::Range;

use super::cells::{CellColumn, Cells};
use super::fields::{ExposureFields, OptionalColumns, RunFields};
use super::intern::{NewIds, Open};
use super::ledger::{Counts, ProblemKind, QuarantineReason, QuarantinedRow};
use super::mapping::Mapping;
use super::reconcile::{Attributes, FieldChecker, FileCtx, IdValue, Rules};
use super::table::{Chunk, TableMeta};
use crate::error::{Error, Result};
use crate::ids::IdMap;

/// Below this many rows in a chunk, a second thread costs more than it saves.
const PARALLEL_ROWS: usize = 50_000;

/// Rows per run of a chunk checked on the pool (about; see [`run_bounds`]).
const RUN_ROWS: usize = 16_384;

/// The runs of a chunk of `n` rows: one below [`PARALLEL_ROWS`], else runs of about
/// [`RUN_ROWS`] rows, at least two.
fn run_bounds(n: usize) -> Vec<Range<usize>> {
    if n < PARALLEL_ROWS {
        return std::iter::once(0..n).collect();
    }
    let k = n.div_ceil(RUN_ROWS).max(2);
    (0..k).map(|i| i * n / k..(i + 1) * n / k).collect()
}

/// IDs looked up per batch (see `intern::Lookup`): the batch's memory is asked for before any
/// of it is read.
const BATCH: usize = 512;

/// Append the values of unmapped columns for the usable rows of a chunk. `rows_after` is the
/// number of usable rows stored once this chunk is counted; columns that earlier files lacked
/// are padded with empty values first.
fn keep_extra_columns(
    extras: &mut Attributes,
    (cells, meta, mapping): (&Cells, &TableMeta, &Mapping),
    rules: &Rules,
    usable: &[u32],
    rows_after: usize,
) -> Result<()> {
    let before = rows_after - usable.len();
    for c in (0..meta.columns.len()).filter(|c| !mapping.fields.values().any(|i| i == c)) {
        let k = extras.ensure_column(&meta.columns[c], before);
        let col = cells
            .column(Some(c), &meta.path)?
            .into_iter()
            .flat_map(|s| s.iter());
        let values = &mut extras.values[k];
        values.resize(before);
        let mut next = usable.iter().peekable();
        for (row, v) in col.enumerate() {
            if next.peek().is_some_and(|&&u| u as usize == row) {
                next.next();
                values.push(rules.value(v));
            }
        }
    }
    for v in extras.values.iter_mut() {
        v.resize(rows_after);
    }
    Ok(())
}

/// What one core found in its run of a chunk's rows.
struct Run<'c> {
    /// The usable rows (chunk row numbers), in order.
    usable: Vec<u32>,
    /// Source and target node of each usable row (`intern::OPEN` for an ID in `open`).
    nodes: Vec<u32>,
    /// The IDs no person of the people map has, in row order.
    open: Vec<Open<'c>>,
    /// Rows set aside, in order.
    quarantined: Vec<QuarantinedRow>,
    /// Rows read, set aside, IDs normalised, field problems.
    counts: Counts,
    /// The optional fields of the usable rows.
    fields: RunFields<'c>,
}

/// The columns a run reads.
#[derive(Clone, Copy)]
struct RunColumns<'c, 'a> {
    src: CellColumn<'c, 'a>,
    tgt: CellColumn<'c, 'a>,
    optional: OptionalColumns<'c, 'a>,
}

/// Check the rows `rows` of a chunk, in order: which can form an exposure (both IDs present,
/// not the same person; decided before any ID is looked up, so a quarantined row adds
/// nothing), their IDs looked up in `ids` (the people map, read-only), their optional fields
/// checked (`checker`: a scratch copy, whose problems become the run's).
fn check_run<'c>(
    rows: Range<usize>,
    (chunk, cols): (&'c Chunk<'_>, RunColumns<'c, '_>),
    (mut ctx, mut checker): (FileCtx, FieldChecker),
    (new_ids, ids): (&NewIds, &IdMap),
) -> Run<'c> {
    let len = rows.len();
    let mut run = Run {
        usable: Vec::with_capacity(len),
        nodes: Vec::with_capacity(2 * len),
        open: Vec::new(),
        quarantined: Vec::new(),
        counts: Counts::default(),
        fields: RunFields::new(&cols.optional, len),
    };
    let mut lookup = new_ids.lookup(ids);
    for row in rows {
        let (s, t) = (cols.src.get(row), cols.tgt.get(row));
        let values = cols.optional.values(row);
        ctx.counts.read += 1;
        let reason = match (checker.rules.id(s), checker.rules.id(t)) {
            (IdValue::Id(a, _), IdValue::Id(b, _)) if ids.same(&a, &b) => {
                QuarantineReason::SelfExposure
            }
            (IdValue::Id(a, ca), IdValue::Id(b, cb)) => {
                ctx.counts.ids_normalised += u64::from(ca) + u64::from(cb);
                run.usable.push(row as u32);
                lookup.ask(a);
                lookup.ask(b);
                let line = chunk.lines.line(row);
                run.fields
                    .check((&mut checker, &mut ctx), line, &cols.optional, values);
                if lookup.waiting() >= BATCH {
                    lookup.answer(&mut run.nodes, &mut run.open);
                }
                continue;
            }
            (s, t) => s
                .missing("source_id")
                .or_else(|| t.missing("target_id"))
                .expect("one of the two IDs is blank or a code"),
        };
        ctx.counts.quarantined += 1;
        run.quarantined.push(QuarantinedRow {
            file: ctx.file,
            line: chunk.lines.line(row),
            reason,
            raw: chunk.cells.raw_row(row),
        });
    }
    lookup.answer(&mut run.nodes, &mut run.open);
    run.fields.problems = checker.problems;
    run.counts = ctx.counts;
    run
}

/// Append the pair key and direction of each row whose source and target nodes are `parts`
/// (two per row, the parts in row order).
fn append_keys(keys: &mut Vec<u64>, forward: &mut Vec<bool>, parts: &[&[u32]]) {
    let rows = parts.iter().map(|p| p.len()).sum::<usize>() / 2;
    keys.reserve(rows);
    forward.reserve(rows);
    for st in parts.iter().flat_map(|p| p.chunks_exact(2)) {
        let (a, b) = (st[0], st[1]);
        let (lo, hi) = if a < b { (a, b) } else { (b, a) };
        keys.push(u64::from(lo) << 32 | u64::from(hi));
        forward.push(a < b);
    }
}

/// Exposure rows kept for aggregation, in input order.
#[derive(Debug, Default)]
pub struct ExposureRows {
    /// `min(a, b) << 32 | max(a, b)` for each usable row.
    pub keys: Vec<u64>,
    /// True when the row named the smaller node as source.
    pub forward: Vec<bool>,
    /// Dates, minutes and settings of each usable row.
    pub fields: ExposureFields,
    /// (file index, number of usable rows) in read order.
    pub per_file: Vec<(usize, usize)>,
    /// Rows quarantined.
    pub quarantined: Vec<QuarantinedRow>,
    /// Columns of the exposures table(s) that map to no field: kept per usable row.
    pub extras: Attributes,
    /// 1 when the row is a known infector -> infectee link (source infected target), else 0;
    /// empty when no file maps the `transmission` field.
    pub links: Vec<u8>,
    /// IDs first seen in the table being read (see [`ExposureRows::finish_ids`]).
    new_ids: Option<NewIds>,
}

impl ExposureRows {
    /// An empty store; setting labels compare case-insensitively.
    pub fn new() -> ExposureRows {
        ExposureRows {
            fields: ExposureFields {
                settings: IdMap::new(false),
                ..ExposureFields::default()
            },
            ..ExposureRows::default()
        }
    }

    /// Process one chunk of an exposures file, interning IDs into `ids`.
    pub fn add_chunk(
        &mut self,
        ctx: &mut FileCtx,
        chunk: &Chunk,
        ids: &mut IdMap,
        checker: &mut FieldChecker,
    ) -> Result<()> {
        let cells = &chunk.cells;
        let meta = ctx.meta;
        let m = ctx.mapping;
        let (src_c, tgt_c) = (m.get("source_id"), m.get("target_id"));
        let (last_c, first_c, set_c, min_c) = (
            m.get("exposure_date"),
            m.get("first_exposure_date"),
            m.get("setting"),
            m.get("duration_min"),
        );
        if ctx.counts.read == 0 {
            checker.check_ambiguity(meta, cells, &[last_c, first_c])?;
        }
        let src = cells.column(src_c, &meta.path)?;
        let tgt = cells.column(tgt_c, &meta.path)?;
        let (Some(src), Some(tgt)) = (src, tgt) else {
            return Err(Error::format(
                &meta.path,
                "source_id and target_id must be mapped",
            ));
        };
        if self.per_file.last().is_none_or(|(f, _)| *f != ctx.file) {
            self.per_file.push((ctx.file, 0));
        }
        self.pad_new_fields([last_c, first_c, min_c, set_c]);
        let n = cells.height();
        let optional = OptionalColumns {
            last: (last_c, cells.column(last_c, &meta.path)?),
            first: (first_c, cells.column(first_c, &meta.path)?),
            setting: (set_c, cells.column(set_c, &meta.path)?),
            minutes: (min_c, cells.column(min_c, &meta.path)?),
        };
        let mapped = optional.mapped();
        // Room for this chunk's rows and, by estimate, the rows still to come, so that the
        // arrays are laid out once rather than grown (and moved) chunk by chunk; the estimate
        // is held to 16 times the rows so far, as in the people table.
        let ahead = chunk.rows_ahead.min(16 * (self.keys.len() + n));
        self.keys.reserve(n + ahead);
        self.forward.reserve(n + ahead);
        self.fields.reserve(n + ahead, mapped);
        let cols = RunColumns { src, tgt, optional };
        // Runs of rows on the pool's workers, each counting and checking on its own; the
        // runs are then joined in row order. Several runs per worker, so that a worker held
        // up (by the thread reading the next piece) leaves its share to the other.
        let runs = run_bounds(n);
        let parallel = runs.len() > 1;
        let new_ids = self.new_ids.get_or_insert_with(|| NewIds::new(ids));
        let run = |rows: Range<usize>| {
            let run_ctx = FileCtx {
                counts: Counts::default(),
                ..*ctx
            };
            let shared = (&*new_ids, &*ids);
            check_run(rows, (chunk, cols), (run_ctx, checker.scratch()), shared)
        };
        let mut runs: Vec<Run> = if parallel {
            use rayon::prelude::*;
            runs.into_par_iter().map(run).collect()
        } else {
            runs.into_iter().map(run).collect()
        };
        // The IDs no person has, every run's in row order, numbered; their nodes put in place.
        let (mut starts, mut open, mut start) = (Vec::with_capacity(runs.len()), Vec::new(), 0);
        for r in runs.iter_mut() {
            starts.push(start);
            open.extend(r.open.drain(..).map(|o| o.moved(start)));
            start += r.nodes.len();
        }
        let numbered = new_ids.number(ids.len(), &open, open.len() >= PARALLEL_ROWS);
        for (o, v) in open.iter().zip(numbered) {
            let k = starts.partition_point(|&s| s <= o.at) - 1;
            runs[k].nodes[o.at - starts[k]] = v;
        }
        drop(open);
        // The runs joined in row order: the pair keys on one core, the fields on the other.
        let mut usable = Vec::with_capacity(runs.iter().map(|r| r.usable.len()).sum());
        let (mut nodes, mut run_fields) = (Vec::new(), Vec::new());
        for r in runs {
            usable.extend_from_slice(&r.usable);
            ctx.counts.add(&r.counts);
            self.quarantined.extend(r.quarantined);
            nodes.push(r.nodes);
            run_fields.push(r.fields);
        }
        let parts: Vec<&[u32]> = nodes.iter().map(Vec::as_slice).collect();
        let (keys, forward, fields) = (&mut self.keys, &mut self.forward, &mut self.fields);
        let (problems, ()) = crate::par::on_pool(
            parallel,
            || append_keys(keys, forward, &parts),
            || {
                let mut problems = Vec::new();
                for f in run_fields {
                    problems.extend(fields.keep(f, mapped));
                }
                problems
            },
        );
        checker.problems.extend(problems);
        let (meta, m) = (ctx.meta, ctx.mapping);
        keep_extra_columns(
            &mut self.extras,
            (cells, meta, m),
            &checker.rules,
            &usable,
            self.keys.len(),
        )?;
        if let Some(c) = m.get("transmission") {
            self.read_links(ctx, chunk, checker, c, &usable)?;
        }
        if let Some(last) = self.per_file.last_mut() {
            last.1 += usable.len();
        }
        Ok(())
    }

    /// The `transmission` column of the usable rows as 0/1 links (an unreadable value is a
    /// field problem and reads as no).
    fn read_links(
        &mut self,
        ctx: &mut FileCtx,
        chunk: &Chunk,
        checker: &mut FieldChecker,
        c: usize,
        usable: &[u32],
    ) -> Result<()> {
        let before = self.keys.len() - usable.len();
        self.links.resize(before, 0);
        let col = chunk
            .cells
            .column(Some(c), &ctx.meta.path)?
            .into_iter()
            .flat_map(|s| s.iter());
        let mut next = usable.iter().peekable();
        for (row, v) in col.enumerate() {
            if next.peek().is_none_or(|&&u| u as usize != row) {
                continue;
            }
            next.next();
            let flag = match checker
                .rules
                .value(v)
                .map(str::to_ascii_lowercase)
                .as_deref()
            {
                None | Some("no" | "n" | "false" | "f" | "0") => 0,
                Some("yes" | "y" | "true" | "t" | "1") => 1,
                Some(other) => {
                    let msg = ProblemKind::UnreadableFlag.reason(&checker.facts(other));
                    checker.problem(
                        ctx,
                        chunk.lines.line(row),
                        c,
                        other,
                        ProblemKind::UnreadableFlag,
                        msg,
                    );
                    0
                }
            };
            self.links.push(flag);
        }
        Ok(())
    }

    /// A field this file maps but an earlier file did not: pad the earlier rows first.
    fn pad_new_fields(&mut self, columns: [Option<usize>; 4]) {
        self.fields
            .pad(self.keys.len(), columns.map(|c| c.is_some()));
    }

    /// At the end of an exposures table: add the IDs it introduced to `ids`, numbered as the
    /// rows' node indices already are.
    pub fn finish_ids(&mut self, ids: &mut IdMap) {
        if let Some(n) = self.new_ids.take() {
            n.finish(ids);
        }
    }

    /// Ask for the memory of row `r`'s attributes ahead of a walk in an order of its own.
    #[inline(always)]
    pub fn prefetch(&self, r: usize) {
        use crate::prefetch::prefetch;
        prefetch(&self.forward, r);
        prefetch(&self.fields.last, r);
        prefetch(&self.fields.first, r);
        prefetch(&self.fields.minutes, r);
        prefetch(&self.fields.setting, r);
        prefetch(&self.links, r);
    }

    /// The rows for which `keep` is true (same order), for a sub-network view.
    pub fn subset(&self, keep: &[bool]) -> ExposureRows {
        fn pick<T: Copy>(v: &[T], keep: &[bool]) -> Vec<T> {
            if v.is_empty() {
                return Vec::new();
            }
            v.iter()
                .zip(keep)
                .filter(|(_, &k)| k)
                .map(|(x, _)| *x)
                .collect()
        }
        ExposureRows {
            keys: pick(&self.keys, keep),
            forward: pick(&self.forward, keep),
            fields: ExposureFields {
                last: pick(&self.fields.last, keep),
                first: pick(&self.fields.first, keep),
                minutes: pick(&self.fields.minutes, keep),
                setting: pick(&self.fields.setting, keep),
                ..ExposureRows::new().fields
            },
            links: pick(&self.links, keep),
            ..ExposureRows::new()
        }
    }

    /// Pad attribute arrays when files differ in which optional fields they map, so that
    /// every array has one entry per usable row.
    pub fn pad(&mut self) {
        let n = self.keys.len();
        let mapped = self.fields.mapped();
        self.fields.pad(n, mapped);
        if !self.links.is_empty() && self.links.len() < n {
            self.links.resize(n, 0);
        }
    }
}
