//! `hubwatch check`: every input row accounted for (used, merged, quarantined) and every field
//! problem, as a report value with its text and JSON forms.

use std::collections::BTreeMap;
use std::fmt::Write as _;

use serde::Serialize;

use crate::ingest::ledger::{Counts, Ledger, Role};

/// How many examples of each reason `check` shows.
pub const EXAMPLES: usize = 3;

/// One example row for a reason.
#[derive(Debug, Serialize)]
pub struct Example {
    /// File path.
    pub file: String,
    /// 1-based line or record.
    pub line: u64,
    /// Column (field problems only).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub column: Option<String>,
    /// Value or raw row.
    pub value: String,
    /// What happened.
    pub reason: String,
}

/// The JSON form of `hubwatch check`.
#[derive(Debug, Serialize)]
pub struct CheckReport<'a> {
    /// Files with role, format, mapping and counts.
    pub files: &'a [crate::ingest::ledger::FileReport],
    /// Totals per table.
    pub rows: BTreeMap<&'static str, Counts>,
    /// Quarantined rows per table and reason code.
    pub quarantined: BTreeMap<&'static str, BTreeMap<&'static str, u64>>,
    /// Field problems per table and kind code.
    pub field_problems: BTreeMap<&'static str, BTreeMap<&'static str, u64>>,
    /// The first examples per reason code.
    pub examples: BTreeMap<String, Vec<Example>>,
    /// Whether read = used + merged + quarantined holds for every file.
    pub balanced: bool,
    /// Files of a folder that were not used, with the reason.
    pub ignored: Vec<(String, String)>,
    /// Warnings: nothing changed, but worth a look.
    pub warnings: &'a [crate::ingest::ledger::Warning],
}

/// Build the check report.
pub fn check_report(ledger: &Ledger) -> CheckReport<'_> {
    let mut examples: BTreeMap<String, Vec<Example>> = BTreeMap::new();
    for q in &ledger.quarantined {
        let f = &ledger.files[q.file];
        let v = examples
            .entry(format!("{}.{}", f.role.name(), q.reason.code()))
            .or_default();
        if v.len() < EXAMPLES {
            v.push(Example {
                file: f.path.display().to_string(),
                line: q.line,
                column: None,
                value: q.raw.clone(),
                reason: q.reason.describe(),
            });
        }
    }
    for p in &ledger.problems {
        let f = &ledger.files[p.file];
        let v = examples
            .entry(format!("{}.{}", f.role.name(), p.kind.code()))
            .or_default();
        if v.len() < EXAMPLES {
            v.push(Example {
                file: f.path.display().to_string(),
                line: p.line,
                column: Some(p.column.clone()),
                value: p.value.clone(),
                reason: p.reason.clone(),
            });
        }
    }
    CheckReport {
        files: &ledger.files,
        rows: BTreeMap::from([("people", ledger.people), ("exposures", ledger.exposures)]),
        quarantined: BTreeMap::from([
            ("people", ledger.quarantine_counts(Role::People)),
            ("exposures", ledger.quarantine_counts(Role::Exposures)),
        ]),
        field_problems: BTreeMap::from([
            ("people", ledger.problem_counts(Role::People)),
            ("exposures", ledger.problem_counts(Role::Exposures)),
        ]),
        examples,
        balanced: ledger.files.iter().all(|f| f.counts.balanced()),
        ignored: ledger
            .ignored
            .iter()
            .map(|(p, w)| (p.display().to_string(), w.clone()))
            .collect(),
        warnings: &ledger.warnings,
    }
}

/// Each file: role and how it was decided, format, mapping, encoding.
fn write_files(s: &mut String, r: &CheckReport) {
    for f in r.files {
        let map: Vec<String> = f
            .mapping
            .iter()
            .map(|(k, v)| format!("{k}=\"{v}\""))
            .collect();
        let _ = writeln!(
            *s,
            "  {:<9} {}\n            {}, {}; columns: {}\n            role {}",
            f.role.name(),
            f.path.display(),
            f.format,
            if f.header {
                "header line"
            } else {
                "no header line"
            },
            map.join(" "),
            f.role_by
        );
        if let Some(e) = &f.encoding {
            let _ = writeln!(*s, "            encoding {e}");
        }
        if f.counts.ids_normalised > 0 {
            let _ = writeln!(
                *s,
                "            {} ID values put into Unicode NFC (same name, decomposed form)",
                f.counts.ids_normalised
            );
        }
    }
}

/// Plain-text rendering of the check report.
pub fn check_text(r: &CheckReport, as_of: &str) -> String {
    let mut s = String::new();
    let _ = writeln!(s, "hubwatch check (as of {as_of})\n\nFiles:");
    write_files(&mut s, r);
    for (p, why) in &r.ignored {
        let _ = writeln!(s, "  ignored   {p}\n            {why}");
    }
    let _ = writeln!(
        s,
        "\nRows            read       used     merged  quarantined  field problems"
    );
    for (name, c) in &r.rows {
        let _ = writeln!(
            s,
            "  {name:<9} {:>10} {:>10} {:>10} {:>12} {:>15}",
            c.read, c.used, c.merged, c.quarantined, c.field_problems
        );
    }
    let _ = writeln!(
        s,
        "  read = used + merged + quarantined: {}",
        if r.balanced {
            "holds for every file"
        } else {
            "DOES NOT HOLD (please report this)"
        }
    );
    for (title, table) in [
        ("Quarantined rows", &r.quarantined),
        (
            "Field problems (row kept, value left empty)",
            &r.field_problems,
        ),
    ] {
        let total: u64 = table.values().flat_map(|m| m.values()).sum();
        let _ = writeln!(s, "\n{title}: {total}");
        for (role, m) in table.iter() {
            for (code, n) in m {
                let _ = writeln!(s, "  {role} {code}: {n}");
                for e in r
                    .examples
                    .get(&format!("{role}.{code}"))
                    .into_iter()
                    .flatten()
                {
                    let col = e
                        .column
                        .as_ref()
                        .map(|c| format!(" column \"{c}\""))
                        .unwrap_or_default();
                    let _ = writeln!(
                        s,
                        "    {} line {}{col}: \"{}\" ({})",
                        e.file, e.line, e.value, e.reason
                    );
                }
            }
        }
    }
    if !r.warnings.is_empty() {
        let _ = writeln!(s, "\nWarnings (nothing was changed):");
        for w in r.warnings {
            let _ = writeln!(s, "  {}: {}", w.code, w.message);
        }
    }
    s
}
