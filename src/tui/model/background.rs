//! The dashboard's background work: the null model of r, the outlook, and the day's work
//! (after both, at a lower priority). Each fills a cell the panes read; empty until done.

use std::path::PathBuf;
use std::sync::{Arc, OnceLock};

use crate::analysis::daywork::{day_work_from, DayInput, DayRequest, DayWork, Since};
use crate::analysis::planning::{Plan, PlanOptions, Strategy};
use crate::analysis::ranking::RankedList;
use crate::analysis::stats::{MetricOptions, NetworkStats};
use crate::config::WorkspaceConfig;
use crate::dataset::Dataset;
use crate::metrics::mixing::NullModel;

/// The input files' checksums (None for the built-in sample), or why they could not be read.
pub type InputHashes = std::result::Result<Vec<Option<String>>, String>;
/// The day's work, or why it failed.
pub type DayResult = std::result::Result<DayWork, String>;

/// Give the calling thread a lower scheduling priority (nice 10; Linux keeps the nice value
/// per thread). Elsewhere a no-op.
fn lower_priority() {
    #[cfg(target_os = "linux")]
    // SAFETY: setpriority only reads its arguments; `who` 0 is the calling thread on Linux.
    unsafe {
        libc::setpriority(libc::PRIO_PROCESS, 0, 10);
    }
}

/// The null model of r, computed on a background thread; the cell is empty until it is done.
pub(super) fn background_null_model(d: &Dataset, degrees: &[u32]) -> Arc<OnceLock<NullModel>> {
    let null = Arc::new(OnceLock::new());
    let cell = Arc::clone(&null);
    let (a, b, deg) = (d.edges.a.clone(), d.edges.b.clone(), degrees.to_vec());
    let o = MetricOptions::default();
    std::thread::spawn(move || {
        let r = crate::metrics::mixing::null_model(
            &a,
            &b,
            &deg,
            o.null_replicates,
            o.null_swaps_per_edge,
            o.seed,
        );
        let _ = cell.set(r);
    });
    null
}

/// The outlook (reach curves, the S(T) curve), computed on a worker thread so that the first
/// frame does not wait for it; the cell is empty until it is done. The priority strategy
/// follows the list's order.
pub(super) fn background_plan(
    d: &Arc<Dataset>,
    list: &RankedList,
    stats: &NetworkStats,
    opts: PlanOptions,
    id_rank: &Arc<Vec<u32>>,
) -> Arc<OnceLock<Plan>> {
    let cell = Arc::new(OnceLock::new());
    let out = Arc::clone(&cell);
    let (d, id_rank) = (Arc::clone(d), Arc::clone(id_rank));
    let order = opts
        .strategies
        .contains(&Strategy::Priority)
        .then(|| list.ranked.iter().map(|r| r.node).collect());
    let t = crate::analysis::planning::transmissibility_from(opts.transmissibility, &stats.cases);
    std::thread::spawn(move || {
        let plan = crate::analysis::planning::plan_with(&d, order, &opts, &id_rank, t);
        let _ = out.set(plan);
    });
    cell
}

/// The inputs' checksums, then the day's work (it records this load's snapshot in the
/// workspace and compares it with the previous one), on one worker: it starts after the
/// outlook and the null model, at a lower priority. Both cells are empty until done.
pub(super) fn day_work(
    d: &Arc<Dataset>,
    input: DayInput,
    (plan_done, null_done): (&Arc<OnceLock<Plan>>, &Arc<OnceLock<NullModel>>),
    ws: PathBuf,
    work: &WorkspaceConfig,
) -> (Arc<OnceLock<InputHashes>>, Arc<OnceLock<DayResult>>) {
    let input_hashes = Arc::new(OnceLock::new());
    let day = Arc::new(OnceLock::new());
    let (cell, paths) = (
        Arc::clone(&input_hashes),
        crate::report::meta::input_paths(d),
    );
    let (day_cell, dd) = (Arc::clone(&day), Arc::clone(d));
    let (keep, top) = (work.keep_snapshots, work.changes_top);
    let (plan_done, null_done) = (Arc::clone(plan_done), Arc::clone(null_done));
    std::thread::spawn(move || {
        let hashes = crate::report::meta::input_hashes(&paths).map_err(|e| e.to_string());
        let inputs = match (&hashes, paths.is_empty()) {
            (_, true) => "built-in sample".to_string(),
            (Ok(h), false) => h
                .iter()
                .map(|x| x.clone().unwrap_or_default())
                .collect::<Vec<_>>()
                .join(","),
            (Err(e), false) => format!("unreadable: {e}"),
        };
        let _ = cell.set(hashes);
        // The day's work after the outlook and the null model, and below the key handler:
        // the Overview's lower half can wait a few seconds, a key cannot (a third worker on
        // two cores made filter keys at 10M rows take up to 28 ms).
        while plan_done.get().is_none() || null_done.get().is_none() {
            std::thread::sleep(std::time::Duration::from_millis(50));
        }
        lower_priority();
        let req = DayRequest {
            workspace: &ws,
            inputs,
            since: Since::Loads(1),
            top,
            keep,
            record: true,
        };
        // A failure of the day's work is said in its pane, never left as "computing".
        let work = std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| {
            let mut input = input;
            input.add_names_and_pairs(&dd);
            day_work_from(&dd, input, &req).map_err(|e| e.to_string())
        }))
        .unwrap_or_else(|p| {
            let why = p
                .downcast_ref::<&str>()
                .map(|s| s.to_string())
                .or_else(|| p.downcast_ref::<String>().cloned())
                .unwrap_or_default();
            Err(format!("the day's work failed: {why}"))
        });
        let _ = day_cell.set(work);
    });
    (input_hashes, day)
}
