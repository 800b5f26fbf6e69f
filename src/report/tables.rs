//! The lists hubwatch exports: the priority list (with every score component, window, flags and
//! notes), the flagged list, and the quarantine list. Builds tables; `export` writes them.

use crate::analysis::priority::{Ranked, COMPONENTS};
use crate::dataset::Dataset;
use crate::export::{pseudonym, Cell, ExportTable, Kind};
use crate::ingest::dates;
use crate::workspace::PersonState;

/// How person IDs appear: as in the export, or pseudonymised with a key.
pub struct Ids<'a> {
    /// The dataset's IDs.
    pub d: &'a Dataset,
    /// HMAC key when pseudonymising.
    pub key: Option<&'a [u8]>,
    /// Direct-identifier column names (from the config), dropped when pseudonymising.
    pub direct_identifiers: &'a [String],
}

impl Ids<'_> {
    /// True when a column is dropped from this export.
    fn drops(&self, column: &str) -> bool {
        let f = crate::ingest::mapping::fold_header(column);
        self.key.is_some()
            && self
                .direct_identifiers
                .iter()
                .any(|d| crate::ingest::mapping::fold_header(d) == f)
    }

    /// A person's ID as this export shows it.
    pub fn show(&self, node: u32) -> String {
        let id = self.d.ids.name(node);
        match self.key {
            Some(k) => pseudonym(k, id),
            None => id.to_string(),
        }
    }
}

/// The priority list (or the flagged list, when `flagged_only`).
pub fn priority_table(
    ids: &Ids,
    ranked: &[Ranked],
    preset: &crate::analysis::priority::Preset,
    states: &[PersonState],
    top: usize,
    flagged_only: bool,
) -> ExportTable {
    let d = ids.d;
    let state_of: std::collections::HashMap<&str, &PersonState> =
        states.iter().map(|s| (s.person_id.as_str(), s)).collect();
    let attrs: Vec<usize> = (0..d.attrs.names.len())
        .filter(|&c| !ids.drops(&d.attrs.names[c]))
        .collect();
    let mut columns: Vec<String> = [
        "rank",
        "person_id",
        "score",
        "degree",
        "last_exposure",
        "window_end",
        "days_left",
        "overdue",
        "high_degree",
        "bridge",
        "followup",
        "flags",
        "note",
    ]
    .iter()
    .map(|s| s.to_string())
    .collect();
    columns.extend(COMPONENTS.iter().map(|c| format!("score_{c}")));
    columns.extend(attrs.iter().map(|&c| d.attrs.names[c].clone()));
    use Kind::*;
    let mut kinds = vec![
        Int, Text, Num, Int, Date, Date, Int, Bool, Bool, Bool, Text, Text, Text,
    ];
    kinds.extend(COMPONENTS.iter().map(|_| Num));
    kinds.extend(attrs.iter().map(|_| Text));
    let mut rows = Vec::new();
    let text = |s: Option<&str>| s.map_or(Cell::Empty, |v| Cell::Text(v.to_string()));
    let day = |x: Option<i32>| x.and_then(dates::from_days).map_or(Cell::Empty, Cell::Date);
    for (i, r) in ranked.iter().enumerate() {
        let st = state_of.get(d.ids.name(r.node)).copied();
        if flagged_only && st.is_none_or(|s| s.flags.is_empty()) {
            continue;
        }
        if top > 0 && rows.len() >= top {
            break;
        }
        let mut row = vec![
            Cell::Int(i as i64 + 1),
            Cell::Text(ids.show(r.node)),
            Cell::Num(r.score),
            Cell::Int(i64::from(r.degree)),
            day(r.last_exposure),
            day(r.window_end),
            r.days_left.map_or(Cell::Empty, |x| Cell::Int(i64::from(x))),
            Cell::Bool(r.overdue),
            Cell::Bool(r.high_degree),
            Cell::Bool(r.bridge),
            text(st.and_then(|s| s.followup.as_deref())),
            st.map_or(Cell::Empty, |s| Cell::Text(s.flags.join(", "))),
            text(st.and_then(|s| s.note.as_deref())),
        ];
        row.extend(r.parts(preset).iter().map(|p| Cell::Num(p.contribution)));
        row.extend(
            attrs
                .iter()
                .map(|&c| text(d.attrs.values[c].get(r.node as usize))),
        );
        rows.push(row);
    }
    ExportTable {
        columns,
        rows,
        kinds,
    }
}

/// Every quarantined row and field problem, with file, line, column, value and reason.
/// (Raw rows may contain IDs: this list is refused with `--pseudonymise`.)
pub fn quarantine_table(d: &Dataset) -> ExportTable {
    let columns = ["kind", "file", "line", "column", "value", "reason"]
        .iter()
        .map(|s| s.to_string())
        .collect();
    let mut rows = Vec::new();
    for q in &d.ledger.quarantined {
        let f = &d.ledger.files[q.file];
        rows.push(vec![
            Cell::Text("quarantined".into()),
            Cell::Text(f.path.display().to_string()),
            Cell::Int(q.line as i64),
            Cell::Empty,
            Cell::Text(q.raw.clone()),
            Cell::Text(format!("{}: {}", q.reason.code(), q.reason.describe())),
        ]);
    }
    for p in &d.ledger.problems {
        let f = &d.ledger.files[p.file];
        rows.push(vec![
            Cell::Text("field_problem".into()),
            Cell::Text(f.path.display().to_string()),
            Cell::Int(p.line as i64),
            Cell::Text(p.column.clone()),
            Cell::Text(p.value.clone()),
            Cell::Text(format!("{}: {}", p.kind.code(), p.reason)),
        ]);
    }
    use Kind::*;
    ExportTable {
        columns,
        rows,
        kinds: vec![Text, Text, Int, Text, Text, Text],
    }
}

/// The sentinel sample: each sentinel with their number of contacts and who led to them.
pub fn sentinel_table(
    ids: &Ids,
    picks: &[crate::analysis::sentinel::Pick],
    degrees: &[u32],
) -> ExportTable {
    let d = ids.d;
    let attrs: Vec<usize> = (0..d.attrs.names.len())
        .filter(|&c| !ids.drops(&d.attrs.names[c]))
        .collect();
    let mut columns: Vec<String> = ["order", "person_id", "degree", "drawn_via"]
        .iter()
        .map(|s| s.to_string())
        .collect();
    columns.extend(attrs.iter().map(|&c| d.attrs.names[c].clone()));
    let rows = picks
        .iter()
        .enumerate()
        .map(|(i, p)| {
            let mut row = vec![
                Cell::Int(i as i64 + 1),
                Cell::Text(ids.show(p.node)),
                Cell::Int(i64::from(degrees[p.node as usize])),
                Cell::Text(ids.show(p.via)),
            ];
            row.extend(attrs.iter().map(|&c| {
                d.attrs.values[c]
                    .get(p.node as usize)
                    .map_or(Cell::Empty, |v| Cell::Text(v.to_string()))
            }));
            row
        })
        .collect();
    let mut kinds = vec![Kind::Int, Kind::Text, Kind::Int, Kind::Text];
    kinds.extend(attrs.iter().map(|_| Kind::Text));
    ExportTable {
        columns,
        rows,
        kinds,
    }
}
