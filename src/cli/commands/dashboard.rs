//! `hubwatch dashboard` (and `hubwatch [PATH...]` on a terminal): hands the loading options,
//! the ranking request and the workspace path to the terminal dashboard.

use std::path::PathBuf;

use crate::cli::{LoadArgs, PriorityArgs};
use crate::error::Result;
use crate::tui::{self, Start};

/// The dashboard's start from the command line.
pub fn start(load: &LoadArgs, rank: &PriorityArgs, workspace: Option<PathBuf>) -> Result<Start> {
    Ok(Start {
        inputs: load.inputs(),
        config: load.config()?,
        load: load.options(true)?,
        rank: rank.request(),
        workspace: load.workspace(workspace.as_deref()),
    })
}

/// Open the dashboard.
pub fn run(load: &LoadArgs, rank: &PriorityArgs, workspace: Option<PathBuf>) -> Result<()> {
    tui::run(start(load, rank, workspace)?)
}
