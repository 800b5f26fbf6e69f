//! Options of the commands that write files: `outlook`, `figures`, `brief` and `export`.

use std::path::PathBuf;

use clap::Args;

use super::{LoadArgs, PriorityArgs};

/// Options of `hubwatch outlook`.
#[derive(Debug, Args)]
pub struct OutlookArgs {
    /// Loading options and paths.
    #[command(flatten)]
    pub load: LoadArgs,
    /// Ranking options (for the priority strategy).
    #[command(flatten)]
    pub rank: PriorityArgs,
    /// Transmissibility T in [0, 1] (default: the secondary attack rate of the export).
    #[arg(long, value_name = "T")]
    pub transmissibility: Option<f64>,
    /// Strategies to follow (comma-separated; default all).
    #[arg(long, value_enum, value_delimiter = ',')]
    pub strategy: Vec<crate::analysis::planning::Strategy>,
    /// Follow the reach curves up to N people (0 = everyone).
    #[arg(long, default_value_t = 1000, value_name = "N")]
    pub max_reach: usize,
    /// Seeded repeats averaged for the random and acquaintance strategies.
    #[arg(long, default_value_t = 10, value_name = "N")]
    pub repeats: usize,
    /// Seed of the first repeat.
    #[arg(long, default_value_t = 1, value_name = "S")]
    pub seed: u64,
    /// Write the reach curves (every strategy, every n) to FILE.
    #[arg(long, value_name = "FILE")]
    pub curves_out: Option<PathBuf>,
    /// Write the curve of R0 and final size over T to FILE.
    #[arg(long, value_name = "FILE")]
    pub t_curve_out: Option<PathBuf>,
    /// Format of the curve files (default: from the extension).
    #[arg(long, value_enum)]
    pub format: Option<crate::export::Format>,
    /// Replace existing curve files.
    #[arg(long)]
    pub force: bool,
    /// Workspace file (follow-up states used by the priority strategy).
    #[arg(long, value_name = "FILE")]
    pub workspace: Option<PathBuf>,
    /// Print one JSON object (keys documented in the README).
    #[arg(long)]
    pub json: bool,
}

/// Image formats of `hubwatch figures`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum FigureFormat {
    /// Scalable vector graphics.
    Svg,
    /// Portable network graphics.
    Png,
    /// Both.
    Both,
}

/// What the figures are drawn from, shared by `figures` and `brief`.
#[derive(Debug, Args)]
pub struct FigureArgs {
    /// Loading options and paths.
    #[command(flatten)]
    pub load: LoadArgs,
    /// Ranking options (the list, and the priority strategy of the outlook).
    #[command(flatten)]
    pub rank: PriorityArgs,
    /// TrueType font for the text (default: DejaVu Sans where installed).
    #[arg(long, value_name = "FILE")]
    pub font: Option<PathBuf>,
    /// Transmissibility T in [0, 1] for the outlook (default: the secondary attack rate).
    #[arg(long, value_name = "T")]
    pub transmissibility: Option<f64>,
    /// Follow the reach curves up to N people.
    #[arg(long, default_value_t = 1000, value_name = "N")]
    pub max_reach: usize,
    /// Randomised networks for the null-model band of r in the neighbour-degree figure (0: not
    /// run; each takes about as long as the load).
    #[arg(long, default_value_t = 0, value_name = "N")]
    pub null_replicates: usize,
    /// Workspace file (follow-up states: the list, the priority strategy, follow-up progress).
    #[arg(long, value_name = "FILE")]
    pub workspace: Option<PathBuf>,
}

/// Options of `hubwatch figures`.
#[derive(Debug, Args)]
pub struct FiguresArgs {
    /// What the figures are drawn from.
    #[command(flatten)]
    pub from: FigureArgs,
    /// Folder to write the figures into (created if absent).
    #[arg(long, value_name = "DIR")]
    pub out: PathBuf,
    /// Image format.
    #[arg(long, value_enum, default_value = "svg")]
    pub format: FigureFormat,
    /// Also write each figure's numbers as NAME.data.EXT in this table format.
    #[arg(long, value_enum, value_name = "FORMAT")]
    pub with_data: Option<crate::export::Format>,
    /// Replace existing figure files.
    #[arg(long)]
    pub force: bool,
}

/// Options of `hubwatch brief`.
#[derive(Debug, Args)]
pub struct BriefArgs {
    /// What the page's figures and list are drawn from.
    #[command(flatten)]
    pub from: FigureArgs,
    /// The page to write (.html).
    #[arg(long, value_name = "FILE")]
    pub out: PathBuf,
    /// People listed.
    #[arg(long, default_value_t = 20, value_name = "N")]
    pub top: usize,
    /// Show the export's own person IDs instead of pseudonyms (the page then carries a warning).
    #[arg(long)]
    pub raw_ids: bool,
    /// Key for stable pseudonyms (else HUBWATCH_PSEUDONYM_KEY; else a one-off key).
    #[arg(long, value_name = "FILE")]
    pub key_file: Option<PathBuf>,
    /// Replace an existing page.
    #[arg(long)]
    pub force: bool,
}

/// Options of `hubwatch export`.
#[derive(Debug, Args)]
pub struct ExportArgs {
    /// Loading options and paths.
    #[command(flatten)]
    pub load: LoadArgs,
    /// Ranking options (for the priority and flagged lists).
    #[command(flatten)]
    pub rank: PriorityArgs,
    /// Which list.
    #[arg(long, value_enum, default_value = "priority")]
    pub list: ListKind,
    /// File format (default: from the extension of --out).
    #[arg(long, value_enum)]
    pub format: Option<crate::export::Format>,
    /// Output file (with --split, one file per sheet: NAME-1ofK.EXT ...).
    #[arg(long, value_name = "FILE")]
    pub out: PathBuf,
    /// Only the first N people (0 = all).
    #[arg(long, default_value_t = 0, value_name = "N")]
    pub top: usize,
    /// Only these columns, in this order (comma-separated; see the full export for names).
    #[arg(long = "columns", value_name = "A,B,...", value_delimiter = ',')]
    pub export_columns: Vec<String>,
    /// Write K call sheets balanced by count, households kept together.
    #[arg(long, value_name = "K")]
    pub split: Option<usize>,
    /// Replace an existing file.
    #[arg(long)]
    pub force: bool,
    /// Replace person IDs with a keyed hash (HMAC-SHA256) and drop direct identifiers.
    #[arg(long)]
    pub pseudonymise: bool,
    /// File holding the pseudonymisation key (else HUBWATCH_PSEUDONYM_KEY).
    #[arg(long, value_name = "FILE")]
    pub key_file: Option<PathBuf>,
    /// Workspace file for flags, follow-up states and notes.
    #[arg(long, value_name = "FILE")]
    pub workspace: Option<PathBuf>,
    /// Size of the sentinel sample (with --list sentinel).
    #[arg(long, default_value_t = 50, value_name = "N")]
    pub sample: usize,
    /// Seed of the sentinel sample (same seed, same sample).
    #[arg(long, default_value_t = 1, value_name = "S")]
    pub seed: u64,
}

/// Which list to export.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum ListKind {
    /// The ranked follow-up list.
    Priority,
    /// Ranked people who carry a manual flag.
    Flagged,
    /// Every quarantined row and field problem.
    Quarantine,
    /// A sentinel sample: random people each replaced by one random contact (--sample, --seed).
    Sentinel,
    /// The day's work: people whose window ends within 3 days, overdue, with many contacts
    /// and not reached, or unreachable for 2 days, in list order, with why.
    Today,
}

/// Output options of the commands that print a list and may also write it (`chains`,
/// `changes`, `today`).
#[derive(Debug, Args)]
pub struct ListOutput {
    /// Print one JSON object (keys documented in the README).
    #[arg(long)]
    pub json: bool,
    /// Also write the list to FILE (CSV, TSV, JSON, Parquet or xlsx, by extension).
    #[arg(long, value_name = "FILE")]
    pub out: Option<PathBuf>,
    /// Format of --out (default: from the extension).
    #[arg(long, value_enum)]
    pub format: Option<crate::export::Format>,
    /// Replace an existing --out file.
    #[arg(long)]
    pub force: bool,
}

impl ListOutput {
    /// The format of --out, checked before any work (None without --out).
    pub fn checked_format(&self) -> crate::error::Result<Option<crate::export::Format>> {
        self.out
            .as_deref()
            .map(|o| crate::export::format_for(o, self.format))
            .transpose()
    }

    /// Write `table` to --out (nothing without it), saying so on stderr: stdout may hold JSON.
    pub fn write(
        &self,
        table: &crate::export::ExportTable,
        meta: &crate::export::Metadata,
    ) -> crate::error::Result<()> {
        let (Some(out), Some(format)) = (&self.out, self.checked_format()?) else {
            return Ok(());
        };
        crate::export::write(table, meta, format, out, self.force)?;
        eprintln!("wrote {} rows to {}", table.rows.len(), out.display());
        Ok(())
    }
}
