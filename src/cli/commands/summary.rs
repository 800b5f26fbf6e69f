//! `hubwatch summary` (and the default action without a terminal): headline figures and every
//! statistic, as text or as the JSON contract.

use crate::cli::{emit, leave, to_json, LoadArgs, StatsArgs};
use crate::error::{Error, Result};
use crate::report::{json, summary, Parts, Report};

/// Print the summary of the export.
pub fn run(load: &LoadArgs, stats: &StatsArgs, as_json: bool) -> Result<()> {
    let parts = Parts {
        metrics: stats.options(),
        ..Parts::default()
    };
    let (t, cpu) = (std::time::Instant::now(), crate::ingest::cpu_secs());
    let d = match &load.aggregates {
        Some(dir) => {
            let opts = load.options(false)?;
            crate::dataset::aggregates_take_no_view(&opts.view)?;
            let tables = crate::ingest::aggregates::read(dir)?;
            if tables.pairs.is_none() {
                return degree_tables_only(&tables, as_json);
            }
            crate::dataset::from_aggregates(tables, opts.as_of)?
        }
        None => load.load()?,
    };
    let (loaded, load_cpu) = (t.elapsed().as_secs_f64(), crate::ingest::cpu_secs() - cpu);
    let r = Report::build(d, parts)?;
    let statistics = t.elapsed().as_secs_f64() - loaded;
    crate::cli::stages(&r.d.timings, (loaded, load_cpu), statistics);
    if !as_json {
        emit(&summary::summary_text(&r.summary, &r.stats, &r.d))?;
        leave(r);
        return Ok(());
    }
    let mut v = serde_json::to_value(&r.summary)
        .map_err(|e| Error::Usage(format!("JSON output failed: {e}")))?;
    if let serde_json::Value::Object(o) = &mut v {
        let mut extra = json::stats_members(&r.stats, &r.d);
        // Component sizes sit under the summary's own `components` object.
        if let (Some(sizes), Some(serde_json::Value::Object(c))) =
            (extra.remove("components_sizes"), o.get_mut("components"))
        {
            c.insert("sizes".into(), sizes);
        }
        o.extend(extra);
    }
    emit(&to_json(&v)?)?;
    leave(r);
    Ok(())
}

/// The summary from the degree tables alone (the folder has no pair table).
fn degree_tables_only(t: &crate::ingest::aggregates::AggregateTables, as_json: bool) -> Result<()> {
    use crate::report::degree_tables;
    let st = crate::analysis::degree_tables::compute(t)?;
    match as_json {
        true => emit(&to_json(&degree_tables::to_json(t, &st))?),
        false => emit(&degree_tables::to_text(t, &st)),
    }
}
