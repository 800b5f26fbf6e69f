//! The optional fields of exposure rows (dates, minutes, setting): checked for every row of a
//! chunk on a core of its own while the IDs are looked at, then kept for the usable rows only,
//! so that a quarantined row adds no value, no problem and no setting label.

use super::ledger::{FieldProblem, ProblemKind, ReasonFacts};
use super::reconcile::{FieldChecker, FileCtx, Values, NO_DATE};
use super::table::LineMap;
use crate::ids::IdMap;

/// The optional exposure columns of one chunk: (column index, values).
pub(super) struct OptionalColumns<'a> {
    /// Last exposure date.
    pub last: (Option<usize>, Values<'a>),
    /// First exposure date.
    pub first: (Option<usize>, Values<'a>),
    /// Setting.
    pub setting: (Option<usize>, Values<'a>),
    /// Minutes.
    pub minutes: (Option<usize>, Values<'a>),
}

impl OptionalColumns<'_> {
    /// Which fields this chunk maps (last, first, minutes, setting).
    pub fn mapped(&self) -> [bool; 4] {
        [
            self.last.0.is_some(),
            self.first.0.is_some(),
            self.minutes.0.is_some(),
            self.setting.0.is_some(),
        ]
    }
}

/// The optional fields of the usable exposure rows. A field no file maps stays empty.
#[derive(Debug, Default)]
pub struct ExposureFields {
    /// Last exposure date (day number or NO_DATE), if the field is mapped anywhere.
    pub last: Vec<i32>,
    /// First exposure date.
    pub first: Vec<i32>,
    /// Minutes (NaN when missing).
    pub minutes: Vec<f32>,
    /// Setting code (0 = none; `settings.name(code - 1)` otherwise).
    pub setting: Vec<u16>,
    /// Distinct setting labels.
    pub settings: IdMap,
    /// Each spelling seen -> its setting code (saves folding case on every row).
    pub(super) setting_spellings: hashbrown::HashMap<Box<str>, u16>,
}

/// The fields of every row of a chunk, as checked on the side: values, the problems found
/// (in row order), and each row's setting as an index into the chunk's spellings (0: none).
pub(super) struct ChunkFields<'a> {
    last: Vec<i32>,
    first: Vec<i32>,
    minutes: Vec<f32>,
    spelling: Vec<u32>,
    spellings: Vec<&'a str>,
    problems: Vec<FieldProblem>,
}

/// Check dates, durations and settings of every row of a chunk, in row order, with a checker
/// of its own (`checker`: a scratch copy whose problems are kept or dropped afterwards).
pub(super) fn check_rows<'a>(
    cols: OptionalColumns<'a>,
    lines: &LineMap,
    ctx: &mut FileCtx,
    mut checker: FieldChecker,
) -> ChunkFields<'a> {
    let OptionalColumns {
        last,
        first,
        setting,
        minutes,
    } = cols;
    let (last_c, first_c, set_c, min_c) = (last.0, first.0, setting.0, minutes.0);
    let rows = last
        .1
        .zip(first.1)
        .zip(setting.1.zip(minutes.1))
        .enumerate();
    let mut out = ChunkFields {
        last: Vec::new(),
        first: Vec::new(),
        minutes: Vec::new(),
        spelling: Vec::new(),
        spellings: Vec::new(),
        problems: Vec::new(),
    };
    let mut index: hashbrown::HashMap<&str, u32> = hashbrown::HashMap::new();
    for (row, ((l, f), (st, mi))) in rows {
        let line = lines.line(row);
        let ld = checker.date(ctx, line, last_c, l);
        let mut fd = checker.date(ctx, line, first_c, f);
        if ld != NO_DATE && fd != NO_DATE && fd > ld {
            let v = f.unwrap_or("").trim().to_string();
            let msg = ProblemKind::DateOrder.reason(&ReasonFacts {
                last: ld,
                ..checker.facts(&v)
            });
            let c = first_c.unwrap_or(0);
            checker.problem(ctx, line, c, &v, ProblemKind::DateOrder, msg);
            fd = NO_DATE;
        }
        if last_c.is_some() {
            out.last.push(ld);
        }
        if first_c.is_some() {
            out.first.push(fd);
        }
        if min_c.is_some() {
            out.minutes.push(checker.minutes(ctx, line, min_c, mi));
        }
        if set_c.is_some() {
            let s = match checker.rules.value(st) {
                None => 0,
                Some(label) => *index.entry(label).or_insert_with(|| {
                    out.spellings.push(label);
                    out.spellings.len() as u32
                }),
            };
            out.spelling.push(s);
        }
    }
    out.problems = checker.problems;
    out
}

impl ExposureFields {
    /// Pad to `n` rows the fields that are mapped (`mapped`: last, first, minutes, setting).
    pub(super) fn pad(&mut self, n: usize, mapped: [bool; 4]) {
        if mapped[0] && self.last.len() < n {
            self.last.resize(n, NO_DATE);
        }
        if mapped[1] && self.first.len() < n {
            self.first.resize(n, NO_DATE);
        }
        if mapped[2] && self.minutes.len() < n {
            self.minutes.resize(n, f32::NAN);
        }
        if mapped[3] && self.setting.len() < n {
            self.setting.resize(n, 0);
        }
    }

    /// The fields mapped so far (non-empty arrays).
    pub(super) fn mapped(&self) -> [bool; 4] {
        [
            !self.last.is_empty(),
            !self.first.is_empty(),
            !self.minutes.is_empty(),
            !self.setting.is_empty(),
        ]
    }

    /// Keep the checked fields of the usable rows (`usable`, sorted) of a chunk of `n` rows,
    /// with their problems (those of rows set aside are dropped), added to `problems` and
    /// counted in `ctx`. A setting label is numbered on its first usable row.
    pub(super) fn keep_usable(
        &mut self,
        rows: ChunkFields,
        (usable, n, lines): (&[u32], usize, &LineMap),
        mapped: [bool; 4],
        (ctx, problems): (&mut FileCtx, &mut Vec<FieldProblem>),
    ) {
        fn keep<T: Copy>(to: &mut Vec<T>, from: Vec<T>, usable: &[u32], all: bool) {
            if all {
                to.extend(from);
            } else {
                to.extend(usable.iter().map(|&r| from[r as usize]));
            }
        }
        let all = usable.len() == n;
        if all {
            ctx.counts.field_problems += rows.problems.len() as u64;
            problems.extend(rows.problems);
        } else {
            // Lines of the rows set aside, in order (a row's line grows with the row).
            let mut next = usable.iter().peekable();
            let aside: Vec<u64> = (0..n)
                .filter(|&r| next.next_if(|&&u| u as usize == r).is_none())
                .map(|r| lines.line(r))
                .collect();
            let before = problems.len();
            problems.extend(
                rows.problems
                    .into_iter()
                    .filter(|p| aside.binary_search(&p.line).is_err()),
            );
            ctx.counts.field_problems += (problems.len() - before) as u64;
        }
        if mapped[0] {
            keep(&mut self.last, rows.last, usable, all);
        }
        if mapped[1] {
            keep(&mut self.first, rows.first, usable, all);
        }
        if mapped[2] {
            keep(&mut self.minutes, rows.minutes, usable, all);
        }
        if mapped[3] {
            // Chunk spelling -> setting code, filled on first use.
            let mut code: Vec<Option<u16>> = vec![None; rows.spellings.len() + 1];
            code[0] = Some(0);
            self.setting.reserve(usable.len());
            for &r in usable {
                let s = rows.spelling[r as usize] as usize;
                let c = match code[s] {
                    Some(c) => c,
                    None => {
                        let c = self.setting_code(rows.spellings[s - 1]);
                        code[s] = Some(c);
                        c
                    }
                };
                self.setting.push(c);
            }
        }
    }

    /// The code of a setting label as spelled (labels compare without case).
    fn setting_code(&mut self, label: &str) -> u16 {
        match self.setting_spellings.get(label) {
            Some(&c) => c,
            None => {
                let (i, _) = self.settings.intern(label);
                let c = u16::try_from(i + 1).unwrap_or(u16::MAX);
                self.setting_spellings.insert(label.into(), c);
                c
            }
        }
    }
}
