//! The dashboard's background work, after the first frame: the priority list first, then the
//! null model of r and the outlook, then the day's work (after both, at a lower priority).
//! Each fills a cell the panes read; empty until done.

use std::path::PathBuf;
use std::sync::{Arc, OnceLock};

use super::listing::Listing;
use crate::analysis::daywork::{day_work_from, DayInput, DayRequest, DayWork, Since};
use crate::analysis::planning::{Plan, PlanOptions, Strategy};
use crate::analysis::ranking::{RankRequest, Settings};
use crate::analysis::stats::{MetricOptions, NetworkStats};
use crate::dataset::Dataset;
use crate::metrics::mixing::NullModel;
use crate::workspace::PersonState;

/// The input files' checksums (None for the built-in sample), or why they could not be read.
pub type InputHashes = std::result::Result<Vec<Option<String>>, String>;
/// The day's work, or why it failed.
pub type DayResult = std::result::Result<DayWork, String>;
/// The priority list, or why it could not be ranked.
pub type ListingResult = std::result::Result<Listing, String>;

/// The cells the workers fill.
#[derive(Default)]
pub struct Cells {
    /// The priority list and its indexes.
    pub listing: Arc<OnceLock<ListingResult>>,
    /// The null model of r.
    pub null: Arc<OnceLock<NullModel>>,
    /// The outlook.
    pub plan: Arc<OnceLock<Plan>>,
    /// The inputs' checksums.
    pub input_hashes: Arc<OnceLock<InputHashes>>,
    /// The day's work.
    pub day: Arc<OnceLock<DayResult>>,
}

/// What the workers need besides the dataset and the statistics.
pub struct Work {
    /// How to rank.
    pub rank: RankRequest,
    /// Its settings, checked.
    pub settled: Settings,
    /// Workspace states at load.
    pub states: Vec<PersonState>,
    /// The outlook's options.
    pub plan: PlanOptions,
    /// The workspace file.
    pub workspace: PathBuf,
    /// Snapshots kept and changes listed.
    pub keep_top: (usize, usize),
}

/// Give the calling thread a lower scheduling priority (nice 10; Linux keeps the nice value
/// per thread). Elsewhere a no-op.
fn lower_priority() {
    #[cfg(target_os = "linux")]
    // SAFETY: setpriority only reads its arguments; `who` 0 is the calling thread on Linux.
    unsafe {
        libc::setpriority(libc::PRIO_PROCESS, 0, 10);
    }
}

/// Run `f`, turning a panic into its message (a worker's failure is said in its pane, never
/// left as "computing").
fn caught<T>(what: &str, f: impl FnOnce() -> Result<T, String>) -> Result<T, String> {
    std::panic::catch_unwind(std::panic::AssertUnwindSafe(f)).unwrap_or_else(|p| {
        let why = p
            .downcast_ref::<&str>()
            .map(|s| s.to_string())
            .or_else(|| p.downcast_ref::<String>().cloned())
            .unwrap_or_default();
        Err(format!("{what} failed: {why}"))
    })
}

/// Start the workers: the list on one thread (both cores through the pool), then the null
/// model and the outlook, then the day's work. They start after the first frame's parts, so
/// as not to share the cores with them.
pub(super) fn start(d: &Arc<Dataset>, stats: &Arc<NetworkStats>, work: Work) -> Cells {
    let cells = Cells::default();
    let (d, stats) = (Arc::clone(d), Arc::clone(stats));
    let listing = Arc::clone(&cells.listing);
    let (null, plan) = (Arc::clone(&cells.null), Arc::clone(&cells.plan));
    let (hashes, day) = (Arc::clone(&cells.input_hashes), Arc::clone(&cells.day));
    std::thread::spawn(move || {
        let id_rank = Arc::new(crate::metrics::reach::id_ranks(&d.ids));
        let built = caught("ranking the list", || {
            Listing::build(&d, &stats, &work.rank, &work.states, work.settled, &id_rank)
                .map_err(|e| e.to_string())
        });
        let (order, input) = match built {
            Ok((l, input)) => {
                let order = work
                    .plan
                    .strategies
                    .contains(&Strategy::Priority)
                    .then(|| l.list.ranked.iter().map(|r| r.node).collect());
                let _ = listing.set(Ok(l));
                (order, Ok(input))
            }
            Err(e) => {
                let _ = listing.set(Err(e.clone()));
                (None, Err(format!("the list could not be ranked: {e}")))
            }
        };
        null_model(&d, &stats.degrees, null.clone());
        outlook(&d, order, &stats, work.plan, &id_rank, plan.clone());
        let keep_top = work.keep_top;
        day_work(
            &d,
            input,
            (&plan, &null),
            work.workspace,
            keep_top,
            (hashes, day),
        );
    });
    cells
}

/// The null model of r, computed on a background thread, into `cell`.
fn null_model(d: &Dataset, degrees: &[u32], cell: Arc<OnceLock<NullModel>>) {
    let (a, b, deg) = (d.edges.a.clone(), d.edges.b.clone(), degrees.to_vec());
    let o = MetricOptions::default();
    std::thread::spawn(move || {
        // Below the key handler, as every worker that runs while keys are pressed: on two
        // cores, the null model and the outlook at the same priority as the keys made filter
        // keys at 10M rows take 17-28 ms (and a cluster's selection up to 30 ms).
        lower_priority();
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
}

/// The outlook (reach curves, the S(T) curve), computed on a worker thread, into `cell`. The
/// priority strategy follows `order`, the list's order (none when the list failed).
fn outlook(
    d: &Arc<Dataset>,
    order: Option<Vec<u32>>,
    stats: &NetworkStats,
    opts: PlanOptions,
    id_rank: &Arc<Vec<u32>>,
    cell: Arc<OnceLock<Plan>>,
) {
    let (d, id_rank) = (Arc::clone(d), Arc::clone(id_rank));
    let t = crate::analysis::planning::transmissibility_from(opts.transmissibility, &stats.cases);
    std::thread::spawn(move || {
        lower_priority();
        let plan = crate::analysis::planning::plan_with(&d, order, &opts, &id_rank, t);
        let _ = cell.set(plan);
    });
}

/// The inputs' checksums, then the day's work (it records this load's snapshot in the
/// workspace and compares it with the previous one), on one worker: it starts after the
/// outlook and the null model, at a lower priority, into the two cells.
fn day_work(
    d: &Arc<Dataset>,
    input: Result<DayInput, String>,
    (plan_done, null_done): (&Arc<OnceLock<Plan>>, &Arc<OnceLock<NullModel>>),
    ws: PathBuf,
    (keep, top): (usize, usize),
    (cell, day_cell): (Arc<OnceLock<InputHashes>>, Arc<OnceLock<DayResult>>),
) {
    let paths = crate::report::meta::input_paths(d);
    let dd = Arc::clone(d);
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
        let work = input.and_then(|mut input| {
            caught("the day's work", || {
                input.add_names_and_pairs(&dd);
                day_work_from(&dd, input, &req).map_err(|e| e.to_string())
            })
        });
        let _ = day_cell.set(work);
    });
}
