//! `hubwatch priority`: the ranked follow-up list, as text or JSON.

use crate::cli::{emit, to_json, workspace_states, LoadArgs, PriorityArgs};
use crate::error::Result;
use crate::report::{priority, Parts, Report};

/// Print the first `top` people of the list (0: all).
pub fn run(load: &LoadArgs, rank: &PriorityArgs, top: usize, as_json: bool) -> Result<()> {
    let d = load.load()?;
    let mut parts = ranking_parts(load, rank, None)?;
    if let Some(req) = parts.rank.as_mut() {
        // Only the shown people are ordered; the counts still cover everyone.
        req.top = (top > 0).then_some(top);
    }
    let r = Report::build(d, parts)?;
    let list = r.list.as_ref().expect("ranking asked for");
    emit(&if as_json {
        to_json(&priority::priority_json(&r.d, list, top))?
    } else {
        priority::priority_text(&r.d, list, top)
    })
}

/// The parts of a report that ranks: statistics without the null model, the ranking request,
/// and the workspace's states.
pub fn ranking_parts(
    load: &LoadArgs,
    rank: &PriorityArgs,
    workspace: Option<&std::path::Path>,
) -> Result<Parts> {
    Ok(Parts {
        metrics: crate::analysis::stats::MetricOptions {
            null_replicates: 0,
            ..Default::default()
        },
        rank: Some(rank.request()),
        plan: None,
        states: workspace_states(&load.workspace(workspace))?,
    })
}
