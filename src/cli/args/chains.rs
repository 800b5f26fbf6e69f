//! Options of `hubwatch chains forward` and `hubwatch chains backward`.

use std::path::PathBuf;

use clap::{Args, Subcommand};

use super::{ListOutput, LoadArgs};
use crate::analysis::chains::ChainRequest;

/// Which way to trace.
#[derive(Debug, Subcommand)]
pub enum ChainDirection {
    /// Who may have been exposed through the case(s), along dated exposures: generation,
    /// earliest date, the chain that gives it, and whether they are listed yet.
    Forward(ForwardArgs),
    /// Where the case(s) may have been infected: the people they met in the days before onset,
    /// common sources of several cases first.
    Backward(BackwardArgs),
}

/// Options both directions share.
#[derive(Debug, Args)]
pub struct ChainCommon {
    /// Loading options and paths.
    #[command(flatten)]
    pub load: LoadArgs,
    /// Pathogen preset whose incubation and infectious periods time the chains.
    #[arg(long, value_name = "NAME")]
    pub pathogen: Option<String>,
    /// Priority settings file laid over config/priority.toml (periods, [chains]).
    #[arg(long, value_name = "FILE")]
    pub priority_config: Option<PathBuf>,
    /// Fewest days from being exposed to passing it on (default: from the pathogen).
    #[arg(long, value_name = "DAYS")]
    pub min_gap: Option<u32>,
    /// Most days from being exposed to passing it on (default: from the pathogen).
    #[arg(long, value_name = "DAYS")]
    pub max_gap: Option<u32>,
    /// A chain may not continue on the day the person was exposed.
    #[arg(long)]
    pub no_same_day: bool,
    /// People shown in the text (0 = all; JSON and files hold everyone).
    #[arg(long, default_value_t = 30, value_name = "N")]
    pub top: usize,
    /// Printing and writing the list.
    #[command(flatten)]
    pub output: ListOutput,
    /// Replace person IDs in the --out file with a keyed hash (HMAC-SHA256).
    #[arg(long, requires = "out")]
    pub pseudonymise: bool,
    /// File holding the pseudonymisation key (else HUBWATCH_PSEUDONYM_KEY).
    #[arg(long, value_name = "FILE")]
    pub key_file: Option<PathBuf>,
}

/// Options of `hubwatch chains forward`.
#[derive(Debug, Args)]
pub struct ForwardArgs {
    /// Shared options.
    #[command(flatten)]
    pub common: ChainCommon,
    /// Start from this person (repeat for several). (`--from DATE` is the date view every
    /// command shares.)
    #[arg(long, value_name = "ID", required_unless_present = "from_cases")]
    pub from_person: Vec<String>,
    /// Start from every case in the people table.
    #[arg(long, conflicts_with = "from_person")]
    pub from_cases: bool,
    /// Longest chain followed, in steps (default: [chains] generations, 3).
    #[arg(long, value_name = "N")]
    pub generations: Option<u16>,
}

/// Options of `hubwatch chains backward`.
#[derive(Debug, Args)]
pub struct BackwardArgs {
    /// Search the sources of this case (repeat for several). (`--to DATE` is the date view
    /// every command shares.)
    #[arg(long, value_name = "ID", required_unless_present = "to_cases")]
    pub to_person: Vec<String>,
    /// Search the sources of every case in the people table.
    #[arg(long, conflicts_with = "to_person")]
    pub to_cases: bool,
    /// Look this many days back from onset (default: the pathogen's incubation period).
    #[arg(long, value_name = "N")]
    pub days: Option<u32>,
    /// Shared options.
    #[command(flatten)]
    pub common: ChainCommon,
}

impl ChainCommon {
    /// The request these options make.
    pub fn request(&self, generations: Option<u16>, days: Option<u32>) -> ChainRequest {
        ChainRequest {
            pathogen: self.pathogen.clone(),
            min_gap: self.min_gap,
            max_gap: self.max_gap,
            generations,
            no_same_day: self.no_same_day,
            days,
        }
    }
}
