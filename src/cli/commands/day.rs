//! `hubwatch changes` and `hubwatch today`: the load recorded in the workspace, compared with
//! an earlier one, and the day's work counted; text or JSON, and the list through the writer.

use crate::analysis::daywork::{day_work, DayRequest, DayWork, Since};
use crate::cli::args::{ChangesArgs, DayArgs};
use crate::cli::commands::priority::ranking_parts;
use crate::cli::{emit, parse_day, to_json, LoadArgs, PriorityArgs};
use crate::error::Result;
use crate::export::{Cell, ExportTable, Kind};
use crate::report::{daywork as rep, meta, tables, Report};
use std::path::Path;

/// Load, rank everyone, record the snapshot, compare, count the day's work.
pub fn run_day(
    d: crate::dataset::Dataset,
    (load, rank, workspace): (&LoadArgs, &PriorityArgs, Option<&Path>),
    record: bool,
    since: Since,
    top: Option<usize>,
) -> Result<(Report, DayWork)> {
    let config = load.config()?;
    let t0 = std::time::Instant::now();
    let lap = |what: &str| crate::report::stage_lap("day", what, t0);
    let mut parts = ranking_parts(load, rank, workspace)?;
    if let Some(req) = parts.rank.as_mut() {
        req.filters = Default::default();
        req.cluster_of = None;
    }
    let r = Report::build(d, parts)?;
    lap("statistics and list");
    let paths = meta::input_paths(&r.d);
    let inputs = match paths.is_empty() {
        true => "built-in sample".to_string(),
        false => meta::input_hashes(&paths)?
            .into_iter()
            .map(|h| h.unwrap_or_default())
            .collect::<Vec<_>>()
            .join(","),
    };
    lap("inputs hashed");
    let req = DayRequest {
        workspace: &load.workspace(workspace),
        inputs,
        since,
        top: top.unwrap_or(config.workspace.changes_top),
        keep: config.workspace.keep_snapshots,
        record,
    };
    let list = r.list.as_ref().expect("ranking asked for");
    let w = day_work(&r.d, &r.stats, &list.ranked, &req)?;
    Ok((r, w))
}

/// Write `table` to --out when given.
fn write_out(a: &DayArgs, r: &Report, table: ExportTable, list: &str) -> Result<()> {
    if a.output.out.is_none() {
        return Ok(());
    }
    let mut m = meta::Meta::new(&r.d, list);
    if let Some(l) = &r.list {
        m = m.ranking(l);
    }
    a.output.write(&table, &m.inputs(&r.d)?.finish())
}

/// `hubwatch changes`.
pub fn changes(a: &ChangesArgs) -> Result<()> {
    let since = match (&a.since, a.since_load) {
        (Some(day), _) => Since::Day(parse_day("--since", day)?),
        (None, n) => Since::Loads(n.unwrap_or(1)),
    };
    let d = &a.day;
    let (r, w) = run_day(
        d.load.load()?,
        (&d.load, &d.rank, d.workspace.as_deref()),
        !d.no_record,
        since,
        a.top,
    )?;
    write_out(&a.day, &r, rep::changes_table(&w), "changes")?;
    emit(&match a.day.output.json {
        true => to_json(&rep::changes_json(&w))?,
        false => rep::changes_text(&w),
    })
}

/// `hubwatch today`.
pub fn today(a: &DayArgs) -> Result<()> {
    let (r, w) = run_day(
        a.load.load()?,
        (&a.load, &a.rank, a.workspace.as_deref()),
        !a.no_record,
        Since::Loads(1),
        None,
    )?;
    if a.output.out.is_some() {
        write_out(a, &r, today_table(&r, &w, None), "today")?;
    }
    emit(&match a.output.json {
        true => to_json(&rep::today_json(&r.d, &w.today))?,
        false => rep::today_text(&r.d, &w.today),
    })
}

/// Today's list as the priority list's columns plus `today` (why), pseudonymised with `key`.
pub fn today_table(r: &Report, w: &DayWork, key: Option<&[u8]>) -> ExportTable {
    let list = r.list.as_ref().expect("ranking asked for");
    let (ranked, why) = rep::today_rows(&w.today, &list.ranked);
    let ids = tables::Ids {
        d: &r.d,
        key,
        direct_identifiers: &list.config.export.direct_identifiers,
    };
    let mut t = tables::priority_table(&ids, &ranked, &list.preset.1, &r.states, 0, false);
    t.columns.insert(1, "today".into());
    if !t.kinds.is_empty() {
        t.kinds.insert(1, Kind::Text);
    }
    for (row, why) in t.rows.iter_mut().zip(why) {
        row.insert(1, Cell::Text(why));
    }
    t
}
