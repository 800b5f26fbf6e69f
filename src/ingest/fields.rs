//! The optional fields of exposure rows (dates, minutes, setting), checked for the usable
//! rows only (a quarantined row adds no value, no problem and no setting label) by the core
//! that reads them, then kept in row order.

use super::cells::CellColumn;
use super::ledger::{FieldProblem, ProblemKind, ReasonFacts};
use super::reconcile::{FieldChecker, FileCtx, NO_DATE};
use crate::ids::IdMap;

/// An optional column: its index and its cells (both `None` when the field is not mapped).
pub(super) type Optional<'c, 'a> = (Option<usize>, Option<CellColumn<'c, 'a>>);

/// The optional exposure columns of one chunk.
#[derive(Clone, Copy)]
pub(super) struct OptionalColumns<'c, 'a> {
    /// Last exposure date.
    pub last: Optional<'c, 'a>,
    /// First exposure date.
    pub first: Optional<'c, 'a>,
    /// Setting.
    pub setting: Optional<'c, 'a>,
    /// Minutes.
    pub minutes: Optional<'c, 'a>,
}

/// The values of one row's optional fields (last, first, setting, minutes).
pub(super) type FieldValues<'c> = [Option<&'c str>; 4];

impl<'c, 'a: 'c> OptionalColumns<'c, 'a> {
    /// Which fields this chunk maps (last, first, minutes, setting).
    pub fn mapped(&self) -> [bool; 4] {
        [
            self.last.0.is_some(),
            self.first.0.is_some(),
            self.minutes.0.is_some(),
            self.setting.0.is_some(),
        ]
    }

    /// The values of row `r` (`None` for a field not mapped or a missing value).
    #[inline]
    pub fn values(&self, r: usize) -> FieldValues<'c> {
        [self.last, self.first, self.setting, self.minutes].map(|(_, col)| col?.get(r))
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

/// Below this many spellings a run's labels are found by comparing them in turn.
const FEW_SPELLINGS: usize = 16;

/// The fields of the usable rows of a run of rows, as checked: values, the problems found
/// (in row order), and each row's setting as an index into the run's spellings (0: none).
pub(super) struct RunFields<'c> {
    last: Vec<i32>,
    first: Vec<i32>,
    minutes: Vec<f32>,
    spelling: Vec<u32>,
    spellings: Vec<&'c str>,
    index: hashbrown::HashMap<&'c str, u32>,
    /// The problems found, in row order.
    pub problems: Vec<FieldProblem>,
}

impl<'c> RunFields<'c> {
    /// Room for `rows` rows of the fields of `cols`.
    pub fn new(cols: &OptionalColumns, rows: usize) -> RunFields<'c> {
        let [last, first, minutes, setting] = cols.mapped().map(|m| if m { rows } else { 0 });
        RunFields {
            last: Vec::with_capacity(last),
            first: Vec::with_capacity(first),
            minutes: Vec::with_capacity(minutes),
            spelling: Vec::with_capacity(setting),
            spellings: Vec::new(),
            index: hashbrown::HashMap::new(),
            problems: Vec::new(),
        }
    }

    /// Check the dates, duration and setting of one usable row (`values`, from line `line`)
    /// and keep them; problems go to `checker`.
    pub fn check(
        &mut self,
        (checker, ctx): (&mut FieldChecker, &mut FileCtx),
        line: u64,
        cols: &OptionalColumns,
        [l, f, st, mi]: FieldValues<'c>,
    ) {
        let (last_c, first_c, set_c, min_c) =
            (cols.last.0, cols.first.0, cols.setting.0, cols.minutes.0);
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
            self.last.push(ld);
        }
        if first_c.is_some() {
            self.first.push(fd);
        }
        if min_c.is_some() {
            self.minutes.push(checker.minutes(ctx, line, min_c, mi));
        }
        if set_c.is_some() {
            let s = match checker.rules.value(st) {
                None => 0,
                Some(label) => self.spelling_of(label),
            };
            self.spelling.push(s);
        }
    }

    /// The index of a spelling (1-based), added on first sight.
    #[inline]
    fn spelling_of(&mut self, label: &'c str) -> u32 {
        if self.spellings.len() <= FEW_SPELLINGS {
            if let Some(i) = self
                .spellings
                .iter()
                .position(|s| crate::ids::equal(s, label))
            {
                return i as u32 + 1;
            }
        } else if let Some(&i) = self.index.get(label) {
            return i;
        }
        self.spellings.push(label);
        let i = self.spellings.len() as u32;
        self.index.insert(label, i);
        i
    }
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

    /// Room for `more` rows of the fields that are `mapped` (last, first, minutes, setting).
    pub(super) fn reserve(&mut self, more: usize, mapped: [bool; 4]) {
        if mapped[0] {
            self.last.reserve(more);
        }
        if mapped[1] {
            self.first.reserve(more);
        }
        if mapped[2] {
            self.minutes.reserve(more);
        }
        if mapped[3] {
            self.setting.reserve(more);
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

    /// Append the checked fields of a run of usable rows (`mapped`: the fields the chunk
    /// maps); a setting label is numbered on its first usable row. Returns the run's problems.
    pub(super) fn keep(&mut self, run: RunFields, mapped: [bool; 4]) -> Vec<FieldProblem> {
        if mapped[0] {
            self.last.extend(run.last);
        }
        if mapped[1] {
            self.first.extend(run.first);
        }
        if mapped[2] {
            self.minutes.extend(run.minutes);
        }
        if mapped[3] {
            // Run spelling -> setting code, filled on first use.
            let mut code: Vec<Option<u16>> = vec![None; run.spellings.len() + 1];
            code[0] = Some(0);
            self.setting.reserve(run.spelling.len());
            for &s in &run.spelling {
                let s = s as usize;
                let c = match code[s] {
                    Some(c) => c,
                    None => {
                        let c = self.setting_code(run.spellings[s - 1]);
                        code[s] = Some(c);
                        c
                    }
                };
                self.setting.push(c);
            }
        }
        run.problems
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
