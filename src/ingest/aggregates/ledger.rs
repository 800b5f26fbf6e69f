//! The ledger tables: counts per table, reason and kind, and the quarantined rows and field
//! problems listed, each checked against the counts.

use std::collections::BTreeMap;
use std::path::Path;

use super::columns::{bad, ints, need, table_files, texts};
use crate::error::Result;
use crate::ingest::dates;
use crate::ingest::ledger::{
    Counts, FieldProblem, FileReport, Ledger, ProblemKind, QuarantineReason, QuarantinedRow,
    ReasonFacts, Role,
};
use crate::ingest::reconcile::NO_DATE;

/// The ledger tables -> the ledger: counts per table, and the rows and problems listed,
/// each checked against the counts.
pub(super) fn read_ledger(dir: &Path, meta: &BTreeMap<String, String>) -> Result<Ledger> {
    let df = need(dir, "ledger")?;
    let role = texts(&df, dir, "ledger", "role")?;
    let item = texts(&df, dir, "ledger", "item")?;
    let count = ints(&df, dir, "ledger", "n")?;
    let mut counts: BTreeMap<(String, String), u64> = BTreeMap::new();
    for ((r, i), n) in role.into_iter().zip(item).zip(count) {
        *counts
            .entry((r.unwrap_or_default(), i.unwrap_or_default()))
            .or_insert(0) += n as u64;
    }
    let has_people = meta.contains_key("people_table");
    let mut ledger = Ledger::default();
    let dialect = meta.get("dialect").cloned().unwrap_or_default();
    for (role, key) in [(Role::People, "people"), (Role::Exposures, "exposures")] {
        if role == Role::People && !has_people {
            continue;
        }
        let c = |item: &str| {
            counts
                .get(&(key.to_string(), item.to_string()))
                .copied()
                .unwrap_or(0)
        };
        let mut file_counts = Counts {
            read: c("read"),
            used: c("used"),
            merged: c("merged"),
            quarantined: c("quarantined"),
            field_problems: 0,
            ids_normalised: c("ids_normalised"),
        };
        file_counts.field_problems = counts
            .iter()
            .filter(|((r, i), _)| r == key && i.starts_with("problem:"))
            .map(|(_, n)| n)
            .sum();
        if !file_counts.balanced() {
            return Err(bad(
                dir,
                "ledger",
                format!(
                    "{key}: read {} is not used {} + merged {} + quarantined {}",
                    file_counts.read, file_counts.used, file_counts.merged, file_counts.quarantined
                ),
            ));
        }
        let mapping: BTreeMap<String, String> = meta
            .iter()
            .filter_map(|(k, v)| {
                k.strip_prefix(&format!("{key}:"))
                    .map(|f| (f.to_string(), v.clone()))
            })
            .collect();
        // The file that holds this table's rows here (its checksum says when they change).
        let held_in = if role == Role::People {
            "nodes"
        } else {
            "pairs"
        };
        let path = match table_files(dir, held_in) {
            Some(_) if dir.join(format!("{held_in}.parquet")).is_file() => {
                dir.join(format!("{held_in}.parquet"))
            }
            Some(_) => dir.join(held_in),
            None => dir.join("ledger.parquet"),
        };
        let table = meta
            .get(&format!("{key}_table"))
            .cloned()
            .unwrap_or_default();
        ledger.files.push(FileReport {
            path,
            role,
            format: format!("aggregate tables made by SQL in {dialect} from the table {table}"),
            header: true,
            mapping,
            encoding: None,
            role_by: "given to `hubwatch sql`".into(),
            counts: file_counts,
        });
        match role {
            Role::People => ledger.people = file_counts,
            Role::Exposures => ledger.exposures = file_counts,
        }
    }
    let file_of = |role: &str| ledger.files.iter().position(|f| f.role.name() == role);
    let q = need(dir, "quarantine")?;
    let (qrole, qord, qreason, qfield, qcode, qraw) = (
        texts(&q, dir, "quarantine", "role")?,
        ints(&q, dir, "quarantine", "ord")?,
        texts(&q, dir, "quarantine", "reason")?,
        texts(&q, dir, "quarantine", "field")?,
        texts(&q, dir, "quarantine", "code")?,
        texts(&q, dir, "quarantine", "raw")?,
    );
    for i in 0..qord.len() {
        let role = qrole[i].clone().unwrap_or_default();
        let file =
            file_of(&role).ok_or_else(|| bad(dir, "quarantine", format!("role {role:?}")))?;
        let field = qfield[i].clone().unwrap_or_default();
        let reason = match qreason[i].as_deref() {
            Some("missing_id") => QuarantineReason::MissingId { field },
            Some("missing_value_code") => QuarantineReason::MissingValueCode {
                field,
                code: qcode[i].clone().unwrap_or_default(),
            },
            Some("self_exposure") => QuarantineReason::SelfExposure,
            other => return Err(bad(dir, "quarantine", format!("unknown reason {other:?}"))),
        };
        ledger.quarantined.push(QuarantinedRow {
            file,
            line: qord[i].max(0) as u64,
            reason,
            raw: qraw[i].clone().unwrap_or_default(),
        });
    }
    let pr = need(dir, "problems")?;
    let (prole, pord, pcol, pval, pkind) = (
        texts(&pr, dir, "problems", "role")?,
        ints(&pr, dir, "problems", "ord")?,
        texts(&pr, dir, "problems", "column_name")?,
        texts(&pr, dir, "problems", "value")?,
        texts(&pr, dir, "problems", "kind")?,
    );
    let (pdetail, pperson) = (
        texts(&pr, dir, "problems", "detail")?,
        texts(&pr, dir, "problems", "person")?,
    );
    let pfirst = texts(&pr, dir, "problems", "first_ord")?;
    let meta_day = |k: &str| {
        meta.get(k)
            .and_then(|v| dates::parse_iso(v).ok())
            .unwrap_or(NO_DATE)
    };
    let (as_of, oldest) = (meta_day("as_of"), meta_day("oldest_day"));
    let max_minutes = meta
        .get("max_minutes")
        .and_then(|v| v.parse::<f64>().ok())
        .unwrap_or(f64::INFINITY);
    for i in 0..pord.len() {
        let role = prole[i].clone().unwrap_or_default();
        let file = file_of(&role).ok_or_else(|| bad(dir, "problems", format!("role {role:?}")))?;
        let code = pkind[i].clone().unwrap_or_default();
        let kind = ProblemKind::from_code(&code)
            .ok_or_else(|| bad(dir, "problems", format!("unknown kind {code:?}")))?;
        let value = pval[i].clone().unwrap_or_default();
        let detail = pdetail[i].as_deref().unwrap_or("");
        let at = pfirst[i]
            .as_deref()
            .map(|l| format!("line {l}"))
            .unwrap_or_default();
        let reason = kind.reason(&ReasonFacts {
            as_of,
            oldest,
            layout: dates::ISO_LAYOUT,
            max_minutes,
            value: &value,
            last: dates::parse_iso(detail).unwrap_or(NO_DATE),
            person: pperson[i].as_deref().unwrap_or(""),
            kept: detail,
            at: &at,
        });
        ledger.problems.push(FieldProblem {
            file,
            line: pord[i].max(0) as u64,
            column: pcol[i].clone().unwrap_or_default(),
            value,
            kind,
            reason,
        });
    }
    for f in &ledger.files {
        let role = f.role;
        let q = ledger.quarantine_counts(role).values().sum::<u64>();
        let p = ledger.problem_counts(role).values().sum::<u64>();
        if q != f.counts.quarantined || p != f.counts.field_problems {
            return Err(bad(
                dir,
                "ledger",
                format!(
                    "{}: the ledger counts {} quarantined rows and {} field problems; the tables list {q} and {p}",
                    role.name(),
                    f.counts.quarantined,
                    f.counts.field_problems
                ),
            ));
        }
    }
    ledger.quarantined.sort_by_key(|q| (q.file, q.line));
    ledger.problems.sort_by_key(|p| (p.file, p.line));
    Ok(ledger)
}
