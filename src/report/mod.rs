//! One computed report and its renderings. [`Report::build`] runs the analyses of one dataset
//! once (statistics, ranking, outlook, as asked); the submodules turn it into text, JSON and
//! tables: `check` (the ledger), `summary` (text), `json` (the summary's JSON contract),
//! `priority` (the list), `outlook` (threshold and reach-out), `tables` (the exported lists),
//! `meta` (the one metadata builder of every file) and `fmt` (the one formatter of a statistic).
//! Nothing here reads an input file; files are written by `export`.

pub mod brief;
pub mod chains;
pub mod check;
pub mod daywork;
pub mod degree_tables;
pub mod figures;
pub mod fmt;
pub mod json;
pub mod meta;
pub mod outlook;
pub mod priority;
pub mod summary;
pub mod tables;

use crate::analysis::planning::{self, Plan, PlanOptions};
use crate::analysis::ranking::{rank_settled, settings, RankRequest, RankedList};
use crate::analysis::stats::{self, MetricOptions, NetworkStats};
use crate::analysis::summary::{summarise, Summary};
use crate::dataset::Dataset;
use crate::error::Result;
use crate::workspace::PersonState;

/// What to compute beside the statistics.
#[derive(Debug, Clone, Default)]
pub struct Parts {
    /// Options of the statistics (null model).
    pub metrics: MetricOptions,
    /// Rank the people with these settings.
    pub rank: Option<RankRequest>,
    /// Compute the outlook with these options (the priority strategy follows the list).
    pub plan: Option<PlanOptions>,
    /// Workspace states (follow-up first from here).
    pub states: Vec<PersonState>,
}

/// Everything one run shows, computed once.
pub struct Report {
    /// The dataset.
    pub d: Dataset,
    /// Headline counts.
    pub summary: Summary,
    /// Every network statistic.
    pub stats: NetworkStats,
    /// The ranked list, if asked.
    pub list: Option<RankedList>,
    /// The outlook, if asked.
    pub plan: Option<Plan>,
    /// Workspace states.
    pub states: Vec<PersonState>,
    /// Each person's position in ID order, when the outlook needed it.
    pub id_rank: Option<Vec<u32>>,
}

impl Report {
    /// Compute the parts asked for, each once.
    pub fn build(d: Dataset, parts: Parts) -> Result<Report> {
        // Load and check the preset and pathogen before the statistics (a bad name fails fast),
        // once.
        let settled = parts.rank.as_ref().map(settings).transpose()?;
        let t = std::time::Instant::now();
        let lap = |what: &str| stage_lap("report", what, t);
        let stats = stats::compute(&d, &parts.metrics);
        lap("statistics");
        let list = match (&parts.rank, settled) {
            (Some(req), Some(s)) if parts.plan.is_some() && req.top.is_some() => {
                // The outlook's priority strategy follows the whole list.
                let whole = RankRequest {
                    top: None,
                    ..req.clone()
                };
                Some(rank_settled(&d, &stats, &whole, &parts.states, s)?)
            }
            (Some(req), Some(s)) => Some(rank_settled(&d, &stats, req, &parts.states, s)?),
            _ => None,
        };
        lap("ranking");
        let mut id_rank = None;
        let plan = parts.plan.as_ref().map(|opts| {
            let order = opts
                .strategies
                .contains(&planning::Strategy::Priority)
                .then(|| {
                    list.as_ref()
                        .map(|l| l.ranked.iter().map(|r| r.node).collect())
                })
                .flatten();
            let ranks = crate::metrics::reach::id_ranks(&d.ids);
            let t = planning::transmissibility_from(opts.transmissibility, &stats.cases);
            let plan = planning::plan_with(&d, order, opts, &ranks, t);
            id_rank = Some(ranks);
            plan
        });
        lap("outlook");
        Ok(Report {
            summary: summarise(&d, &stats.degrees, &stats.components.1),
            stats,
            list,
            plan,
            states: parts.states,
            id_rank,
            d,
        })
    }
}

/// With `HUBWATCH_STAGES` set, say on stderr how long `part` has taken to reach `what` since
/// `since` (for benchmarks; `cli::stages` prints the load's stages).
pub fn stage_lap(part: &str, what: &str, since: std::time::Instant) {
    if std::env::var_os("HUBWATCH_STAGES").is_some() {
        eprintln!("{part}: {what} at {:.3} s", since.elapsed().as_secs_f64());
    }
}
