//! `hubwatch export`: a list for the callers (priority, flagged, quarantine, sentinel) with its
//! metadata, through the one writer; one file or K call sheets.

use crate::analysis::sentinel::{friend_sample, Gain};
use crate::analysis::stats::{self, MetricOptions};
use crate::cli::args::{ExportArgs, ListKind};
use crate::cli::commands::priority::ranking_parts;
use crate::cli::emit;
use crate::error::{Error, Result};
use crate::export::{self as ex, Cell, ExportTable, Format};
use crate::report::{meta::Meta, tables, Report};

/// Build the list, attach the metadata, write it.
pub fn run(e: &ExportArgs) -> Result<()> {
    let format = ex::format_for(&e.out, e.format)?;
    // Check the key before any work, so a missing key fails fast.
    let key = match e.pseudonymise {
        true => Some(ex::pseudonym_key(e.key_file.as_deref())?),
        false => None,
    };
    if key.is_some() && e.list == ListKind::Quarantine {
        return Err(Error::Usage("the quarantine list holds raw rows with IDs and cannot be pseudonymised; export it only where the source data may go".into()));
    }
    let d = e.load.load()?;
    let dropped =
        crate::analysis::priority::PriorityConfig::load(e.rank.priority_config.as_deref())?
            .export
            .direct_identifiers;
    let mut meta = Meta::new(&d, &format!("{:?}", e.list).to_lowercase());
    let mut note = String::new();
    let table = match e.list {
        ListKind::Quarantine => tables::quarantine_table(&d),
        ListKind::Sentinel => {
            let picks = friend_sample(&d.graph, e.sample, e.seed);
            let opts = MetricOptions {
                null_replicates: 0,
                ..Default::default()
            };
            let st = stats::compute(&d, &opts);
            let gain = Gain::of(&picks, &st.degrees, &st.neighbours).describe();
            meta = meta.with(
                "sentinel",
                format!("{} people, seed {}; {gain}", picks.len(), e.seed),
            );
            note = format!("{gain}\n");
            let ids = tables::Ids {
                d: &d,
                key: key.as_deref(),
                direct_identifiers: &dropped,
            };
            tables::sentinel_table(&ids, &picks, &st.degrees)
        }
        ListKind::Today => {
            // The day's work as of this load; exporting records no snapshot.
            let (r, w) = crate::cli::commands::day::run_day(
                d,
                (&e.load, &e.rank, e.workspace.as_deref()),
                false,
                crate::analysis::daywork::Since::Loads(1),
                None,
            )?;
            if let Some(list) = &r.list {
                meta = meta.ranking(list);
            }
            let t = crate::cli::commands::day::today_table(&r, &w, key.as_deref());
            let t = match e.top {
                0 => t,
                n => {
                    let keep: Vec<usize> = (0..t.rows.len().min(n)).collect();
                    t.subset(&keep)
                }
            };
            return finish(e, t, meta, key.is_some(), &r.d, format, note);
        }
        ListKind::Priority | ListKind::Flagged => {
            let r = Report::build(d, ranking_parts(&e.load, &e.rank, e.workspace.as_deref())?)?;
            let list = r.list.as_ref().expect("ranking asked for");
            meta = meta.ranking(list);
            let ids = tables::Ids {
                d: &r.d,
                key: key.as_deref(),
                direct_identifiers: &dropped,
            };
            let t = tables::priority_table(
                &ids,
                &list.ranked,
                &list.preset.1,
                &r.states,
                e.top,
                e.list == ListKind::Flagged,
            );
            return finish(e, t, meta, key.is_some(), &r.d, format, note);
        }
    };
    finish(e, table, meta, key.is_some(), &d, format, note)
}

/// Pseudonym note, input checksums, column choice, then one file or K sheets.
fn finish(
    e: &ExportArgs,
    table: ExportTable,
    mut meta: Meta,
    pseudonymised: bool,
    d: &crate::dataset::Dataset,
    format: Format,
    note: String,
) -> Result<()> {
    if pseudonymised {
        meta = meta.with("pseudonymised", "person IDs replaced by HMAC-SHA256 under a key that is not stored; direct identifier columns dropped");
    }
    let meta = meta.inputs(d)?.finish();
    let table = if e.export_columns.is_empty() {
        table
    } else {
        ex::select_columns(table, &e.export_columns)?
    };
    match e.split {
        None | Some(1) => {
            ex::write(&table, &meta, format, &e.out, e.force)?;
            emit(&format!(
                "{note}wrote {} rows to {}\n",
                table.rows.len(),
                e.out.display()
            ))
        }
        Some(0) => Err(Error::Usage("--split needs at least 1 sheet".into())),
        Some(k) => write_sheets(e, &table, &meta, format, k),
    }
}

/// K call sheets balanced by count, households kept together.
fn write_sheets(
    e: &ExportArgs,
    table: &ExportTable,
    meta: &ex::Metadata,
    format: Format,
    k: usize,
) -> Result<()> {
    let hh = table.columns.iter().position(|c| c == "household_id");
    let groups: Vec<Option<String>> = table
        .rows
        .iter()
        .map(|r| {
            hh.and_then(|c| match &r[c] {
                Cell::Text(t) => Some(t.clone()),
                _ => None,
            })
        })
        .collect();
    let mut lines = String::new();
    for (i, rows) in ex::split_sheets(&groups, k).into_iter().enumerate() {
        let sheet = table.subset(&rows);
        let path = ex::sheet_path(&e.out, i, k);
        ex::write(&sheet, meta, format, &path, e.force)?;
        lines.push_str(&format!(
            "wrote {} rows to {}\n",
            sheet.rows.len(),
            path.display()
        ));
    }
    emit(&lines)
}
