//! The row ledger: every input row ends in exactly one bucket (used, merged, quarantined), and
//! every bad optional value is a field problem. Nothing is dropped or changed silently.

use std::collections::BTreeMap;
use std::path::PathBuf;

use serde::Serialize;

/// Which table a file played.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, PartialOrd, Ord)]
#[serde(rename_all = "lowercase")]
pub enum Role {
    /// The people table.
    People,
    /// The exposures table.
    Exposures,
}

impl Role {
    /// Lower-case name used in messages and JSON.
    pub fn name(self) -> &'static str {
        match self {
            Role::People => "people",
            Role::Exposures => "exposures",
        }
    }
}

/// Row counts of one table (or one file).
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq, Serialize)]
pub struct Counts {
    /// Data rows read (header, comment and blank lines are not rows).
    pub read: u64,
    /// Rows that made a person or an exposure pair.
    pub used: u64,
    /// Rows that repeated a person or a pair already seen and were aggregated into it.
    pub merged: u64,
    /// Rows that could make nothing, each with its reason.
    pub quarantined: u64,
    /// Bad optional values (the row was still used or merged).
    pub field_problems: u64,
    /// ID values put into Unicode NFC (written in decomposed form).
    #[serde(skip_serializing_if = "is_zero")]
    pub ids_normalised: u64,
}

fn is_zero(n: &u64) -> bool {
    *n == 0
}

impl Counts {
    /// `read = used + merged + quarantined`.
    pub fn balanced(&self) -> bool {
        self.read == self.used + self.merged + self.quarantined
    }

    /// Add another file's counts.
    pub fn add(&mut self, o: &Counts) {
        self.read += o.read;
        self.used += o.used;
        self.merged += o.merged;
        self.quarantined += o.quarantined;
        self.field_problems += o.field_problems;
        self.ids_normalised += o.ids_normalised;
    }
}

/// Why a row could not be used at all.
#[derive(Debug, Clone, PartialEq, Eq, PartialOrd, Ord, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum QuarantineReason {
    /// A required ID is missing or blank.
    MissingId {
        /// The canonical field (person_id, source_id, target_id).
        field: String,
    },
    /// A required ID holds a missing-value code (NA, 99, …).
    MissingValueCode {
        /// The canonical field.
        field: String,
        /// The code as written.
        code: String,
    },
    /// Both ends of an exposure are the same person.
    SelfExposure,
    /// The line does not split into the table's columns.
    WrongFieldCount {
        /// Description from the reader.
        detail: String,
    },
}

impl QuarantineReason {
    /// A stable short code, for counting and filtering.
    pub fn code(&self) -> &'static str {
        match self {
            QuarantineReason::MissingId { .. } => "missing_id",
            QuarantineReason::MissingValueCode { .. } => "missing_value_code",
            QuarantineReason::SelfExposure => "self_exposure",
            QuarantineReason::WrongFieldCount { .. } => "wrong_field_count",
        }
    }

    /// A sentence for people.
    pub fn describe(&self) -> String {
        match self {
            QuarantineReason::MissingId { field } => format!("{field} is missing or blank"),
            QuarantineReason::MissingValueCode { field, code } => {
                format!("{field} is \"{code}\", a missing-value code ([input] missing_values)")
            }
            QuarantineReason::SelfExposure => "source and target are the same person".to_string(),
            QuarantineReason::WrongFieldCount { detail } => detail.clone(),
        }
    }
}

/// One quarantined row.
#[derive(Debug, Clone, Serialize)]
pub struct QuarantinedRow {
    /// Index into [`crate::dataset::Dataset::files`].
    pub file: usize,
    /// 1-based line (or record) in that file.
    pub line: u64,
    /// Why.
    pub reason: QuarantineReason,
    /// The row's values as read, comma-joined (or the raw line for shape errors).
    pub raw: String,
}

/// Kinds of field problem.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Serialize, Hash)]
#[serde(rename_all = "snake_case")]
pub enum ProblemKind {
    /// Not a date in the expected layout.
    UnreadableDate,
    /// A date that does not exist (2024-02-30).
    ImpossibleDate,
    /// A date after the as-of date.
    FutureDate,
    /// A date implausibly long before the as-of date.
    ImplausibleDate,
    /// First exposure after the last exposure.
    DateOrder,
    /// Duration is not a number.
    UnreadableNumber,
    /// Duration below zero.
    NegativeNumber,
    /// Duration beyond any plausible exposure.
    ImplausibleNumber,
    /// A repeated person row disagrees with the first.
    ConflictingValue,
    /// A yes/no field holds something else.
    UnreadableFlag,
}

impl ProblemKind {
    /// A stable short code.
    pub fn code(self) -> &'static str {
        match self {
            ProblemKind::UnreadableDate => "unreadable_date",
            ProblemKind::ImpossibleDate => "impossible_date",
            ProblemKind::FutureDate => "future_date",
            ProblemKind::ImplausibleDate => "implausible_date",
            ProblemKind::DateOrder => "first_after_last_exposure",
            ProblemKind::UnreadableNumber => "unreadable_number",
            ProblemKind::NegativeNumber => "negative_number",
            ProblemKind::ImplausibleNumber => "implausible_number",
            ProblemKind::UnreadableFlag => "unreadable_flag",
            ProblemKind::ConflictingValue => "conflicting_value",
        }
    }

    /// The kind of a short code ([`ProblemKind::code`]), as tables written elsewhere give it.
    pub fn from_code(code: &str) -> Option<ProblemKind> {
        use ProblemKind::*;
        [
            UnreadableDate,
            ImpossibleDate,
            FutureDate,
            ImplausibleDate,
            DateOrder,
            UnreadableNumber,
            NegativeNumber,
            ImplausibleNumber,
            ConflictingValue,
            UnreadableFlag,
        ]
        .into_iter()
        .find(|k| k.code() == code)
    }
}

/// What a field problem's sentence needs to say (one wording for files and aggregate tables).
#[derive(Debug, Clone, Copy, Default)]
pub struct ReasonFacts<'a> {
    /// The as-of date (day number).
    pub as_of: i32,
    /// The oldest plausible day.
    pub oldest: i32,
    /// The date layout read.
    pub layout: &'a str,
    /// The largest plausible duration.
    pub max_minutes: f64,
    /// The value as read (a number of minutes, for the implausible ones).
    pub value: &'a str,
    /// The row's last exposure date (for a first date after it).
    pub last: i32,
    /// The repeated person, the value kept, and where it was kept from.
    pub person: &'a str,
    /// The value kept.
    pub kept: &'a str,
    /// "line N" or "file F line N".
    pub at: &'a str,
}

impl ProblemKind {
    /// The sentence a field problem of this kind carries: what was wrong and what was done.
    pub fn reason(self, f: &ReasonFacts) -> String {
        use super::dates::iso;
        match self {
            ProblemKind::FutureDate => format!("after the as-of date {}; left empty", iso(f.as_of)),
            ProblemKind::ImplausibleDate => format!(
                "before {}, implausibly long before the as-of date ([dates] oldest_years); left empty",
                iso(f.oldest)
            ),
            ProblemKind::ImpossibleDate => "no such calendar day; left empty".into(),
            ProblemKind::UnreadableDate => format!("not a date in the layout {}; left empty", f.layout),
            ProblemKind::DateOrder => format!(
                "first exposure after the last exposure ({}); left empty",
                iso(f.last)
            ),
            ProblemKind::ImplausibleNumber => format!(
                "{} minutes is more than {} ([input] max_duration_min); left empty",
                f.value.parse::<f64>().unwrap_or(f64::NAN),
                f.max_minutes
            ),
            ProblemKind::NegativeNumber => "negative duration; left empty".into(),
            ProblemKind::UnreadableNumber => "not a number of minutes; left empty".into(),
            ProblemKind::UnreadableFlag => "not yes or no; read as no".into(),
            ProblemKind::ConflictingValue => {
                format!("person {} repeated; kept \"{}\" from {}", f.person, f.kept, f.at)
            }
        }
    }
}

/// One bad optional value; the row itself was kept.
#[derive(Debug, Clone, Serialize)]
pub struct FieldProblem {
    /// Index into the dataset's files.
    pub file: usize,
    /// 1-based line (or record).
    pub line: u64,
    /// Column header as in the file.
    pub column: String,
    /// The value as read.
    pub value: String,
    /// The kind.
    pub kind: ProblemKind,
    /// A sentence saying what was done.
    pub reason: String,
}

/// A file that took part in the load.
#[derive(Debug, Clone, Serialize)]
pub struct FileReport {
    /// Path as given (or the name of the built-in sample).
    pub path: PathBuf,
    /// Role it played.
    pub role: Role,
    /// Format and separator, in words.
    pub format: String,
    /// Whether it had a header line.
    pub header: bool,
    /// Canonical field -> header used.
    pub mapping: BTreeMap<String, String>,
    /// Text encoding read and how it was decided (delimited text only).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub encoding: Option<String>,
    /// How the role was decided.
    pub role_by: String,
    /// Row counts of this file.
    pub counts: Counts,
}

/// Everything the load has to say about the rows.
#[derive(Debug, Clone, Default, Serialize)]
pub struct Ledger {
    /// Files in the order read.
    pub files: Vec<FileReport>,
    /// Totals of the people files.
    pub people: Counts,
    /// Totals of the exposures files.
    pub exposures: Counts,
    /// Every quarantined row.
    pub quarantined: Vec<QuarantinedRow>,
    /// Every field problem.
    pub problems: Vec<FieldProblem>,
    /// Files in a folder that were not used, with the reason.
    pub ignored: Vec<(PathBuf, String)>,
    /// Things worth a look that changed nothing (IDs that differ only by case or spacing, an
    /// ID that looks like a missing-value code with far more contacts than anyone else).
    pub warnings: Vec<Warning>,
}

/// A warning of the load: nothing was changed, but a person should look.
#[derive(Debug, Clone, Serialize)]
pub struct Warning {
    /// A stable short code.
    pub code: &'static str,
    /// What was seen and what to do, in words.
    pub message: String,
    /// How many IDs (or values) it concerns.
    pub count: u64,
}

impl Ledger {
    /// Quarantined rows per reason code, sorted by code.
    pub fn quarantine_counts(&self, role: Role) -> BTreeMap<&'static str, u64> {
        let mut m = BTreeMap::new();
        for q in self
            .quarantined
            .iter()
            .filter(|q| self.files[q.file].role == role)
        {
            *m.entry(q.reason.code()).or_insert(0) += 1;
        }
        m
    }

    /// Field problems per kind code, sorted by code.
    pub fn problem_counts(&self, role: Role) -> BTreeMap<&'static str, u64> {
        let mut m = BTreeMap::new();
        for p in self
            .problems
            .iter()
            .filter(|p| self.files[p.file].role == role)
        {
            *m.entry(p.kind.code()).or_insert(0) += 1;
        }
        m
    }
}
