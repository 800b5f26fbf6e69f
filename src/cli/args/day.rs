//! Options of `hubwatch changes` and `hubwatch today`.

use std::path::PathBuf;

use clap::Args;

use super::{ListOutput, LoadArgs, PriorityArgs};

/// Options both commands share.
#[derive(Debug, Args)]
pub struct DayArgs {
    /// Loading options and paths.
    #[command(flatten)]
    pub load: LoadArgs,
    /// Ranking options (the list whose top is compared and whose people are due; filters
    /// are not applied: the day's work covers everyone).
    #[command(flatten)]
    pub rank: PriorityArgs,
    /// Workspace file (default: hubwatch-workspace.sqlite beside the export).
    #[arg(long, value_name = "FILE")]
    pub workspace: Option<PathBuf>,
    /// Do not record this load's snapshot in the workspace.
    #[arg(long)]
    pub no_record: bool,
    /// Printing and writing the list.
    #[command(flatten)]
    pub output: ListOutput,
}

/// Options of `hubwatch changes`.
#[derive(Debug, Args)]
pub struct ChangesArgs {
    /// Shared options.
    #[command(flatten)]
    pub day: DayArgs,
    /// Compare with the newest load recorded on or before this day (YYYY-MM-DD, UTC).
    #[arg(long, value_name = "DATE", conflicts_with = "since_load")]
    pub since: Option<String>,
    /// Compare with the load N loads before this one (default 1: the previous).
    #[arg(long, value_name = "N")]
    pub since_load: Option<usize>,
    /// Report entries into and exits from the first N places (default: [workspace] changes_top).
    #[arg(long, value_name = "N")]
    pub top: Option<usize>,
}
