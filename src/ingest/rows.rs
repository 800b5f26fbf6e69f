//! Chunks -> the usable exposure rows, checked and in input order: IDs interned only for rows
//! that can form an exposure, dates, minutes and settings checked on a core of their own beside
//! (see `fields`), unmapped columns kept per row.

use std::borrow::Cow;

use super::cells::{CellColumn, Cells};
use super::fields::{check_rows, ExposureFields, OptionalColumns};
use super::intern::NewIds;
use super::ledger::{Counts, ProblemKind, QuarantineReason, QuarantinedRow};
use super::mapping::Mapping;
use super::reconcile::{values, Attributes, FieldChecker, FileCtx, IdValue, Rules};
use super::table::{Chunk, TableMeta};
use crate::error::{Error, Result};
use crate::ids::IdMap;

/// The two IDs of a usable exposure row (borrowed unless normalisation changed them).
type IdPair<'a> = (Cow<'a, str>, Cow<'a, str>);

/// Below this many usable rows in a chunk, a second thread costs more than it saves.
const PARALLEL_ROWS: usize = 50_000;

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

/// Stage A: which rows can form an exposure (both IDs present, not the same person). A
/// quarantined row adds nothing, so this decision comes before any ID is interned.
fn usable_rows<'a>(
    quarantined: &mut Vec<QuarantinedRow>,
    ctx: &mut FileCtx,
    chunk: &Chunk,
    (src, tgt): (CellColumn<'a, '_>, CellColumn<'a, '_>),
    ids: &IdMap,
    rules: &Rules,
) -> (Vec<u32>, Vec<IdPair<'a>>) {
    let n = chunk.cells.height();
    let mut usable: Vec<u32> = Vec::with_capacity(n);
    let mut pairs: Vec<IdPair> = Vec::with_capacity(n);
    for (row, (s, t)) in src.iter().zip(tgt.iter()).enumerate() {
        ctx.counts.read += 1;
        let reason = match (rules.id(s), rules.id(t)) {
            (IdValue::Id(a, _), IdValue::Id(b, _)) if ids.same(&a, &b) => {
                QuarantineReason::SelfExposure
            }
            (IdValue::Id(a, ca), IdValue::Id(b, cb)) => {
                ctx.counts.ids_normalised += u64::from(ca) + u64::from(cb);
                usable.push(row as u32);
                pairs.push((a, b));
                continue;
            }
            (s, t) => s
                .missing("source_id")
                .or_else(|| t.missing("target_id"))
                .expect("one of the two IDs is blank or a code"),
        };
        ctx.counts.quarantined += 1;
        quarantined.push(QuarantinedRow {
            file: ctx.file,
            line: chunk.lines.line(row),
            reason,
            raw: chunk.cells.raw_row(row),
        });
    }
    (usable, pairs)
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
        let cols = OptionalColumns {
            last: (last_c, values(cells.column(last_c, &meta.path)?, n)),
            first: (first_c, values(cells.column(first_c, &meta.path)?, n)),
            setting: (set_c, values(cells.column(set_c, &meta.path)?, n)),
            minutes: (min_c, values(cells.column(min_c, &meta.path)?, n)),
        };
        let mapped = cols.mapped();
        // Stages B (field checks of every row) and A+C (which rows are usable, numbering
        // their IDs) touch disjoint data, so B runs on a core of its own from the start; its
        // problems are kept afterwards for the usable rows only.
        let mut fctx = FileCtx {
            counts: Counts::default(),
            ..*ctx
        };
        let scratch = checker.scratch();
        let lines = &chunk.lines;
        let parallel = n >= PARALLEL_ROWS;
        let new_ids = self.new_ids.get_or_insert_with(|| NewIds::new(ids));
        let quarantined = &mut self.quarantined;
        let ((usable, nodes), fields) = crate::par::beside(
            parallel,
            move || check_rows(cols, lines, &mut fctx, scratch),
            || {
                let (usable, pairs) =
                    usable_rows(quarantined, ctx, chunk, (src, tgt), ids, &checker.rules);
                let nodes = new_ids.number(ids, &pairs, parallel);
                (usable, nodes)
            },
        );
        self.keys.reserve(nodes.len() / 2);
        self.forward.reserve(nodes.len() / 2);
        for st in nodes.chunks_exact(2) {
            let (a, b) = (st[0], st[1]);
            let (lo, hi) = if a < b { (a, b) } else { (b, a) };
            self.keys.push(u64::from(lo) << 32 | u64::from(hi));
            self.forward.push(a < b);
        }
        let sink = (&mut *ctx, &mut checker.problems);
        self.fields
            .keep_usable(fields, (&usable, n, lines), mapped, sink);
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
