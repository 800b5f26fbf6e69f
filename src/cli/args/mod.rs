//! The command line, as clap reads it: the commands and the option blocks they share
//! (loading, ranking, statistics), each declared once and flattened where used, with the
//! conversions into the library's own request types.

use std::path::{Path, PathBuf};

use clap::{Args, Parser, Subcommand};

use crate::analysis::filters::Filters;
use crate::analysis::ranking::RankRequest;
use crate::analysis::stats::MetricOptions;
use crate::config::Config;
use crate::dataset::Dataset;
use crate::error::{Error, Result};
use crate::ingest::ledger::Role;
use crate::ingest::{dates, mapping, table::ReadOptions, Input, LoadOptions};
use crate::sample;
use crate::workspace::Workspace;

mod chains;
mod day;
mod outputs;
mod sql;
pub use chains::{BackwardArgs, ChainCommon, ChainDirection, ForwardArgs};
pub use day::{ChangesArgs, DayArgs};
pub use outputs::{
    BriefArgs, ExportArgs, FigureArgs, FigureFormat, FiguresArgs, ListKind, ListOutput, OutlookArgs,
};
pub use sql::SqlArgs;

/// hubwatch: see who to reach first in a contact-tracing export.
#[derive(Debug, Parser)]
#[command(
    name = "hubwatch",
    version,
    about,
    args_conflicts_with_subcommands = true
)]
#[command(
    after_help = "Exit codes: 0 success, 2 usage or configuration error, 3 file not found or unreadable, \
4 input that cannot be read as a tracing export. Outputs support, and do not replace, the judgement of \
public-health staff; treat every export as sensitive personal data."
)]
pub struct Cli {
    /// What to do (default: the summary of PATH).
    #[command(subcommand)]
    pub command: Option<Command>,
    /// Loading options and paths, for the default action.
    #[command(flatten)]
    pub load: LoadArgs,
    /// Ranking options, for the dashboard.
    #[command(flatten)]
    pub rank: PriorityArgs,
    /// Workspace file (flags, follow-up states, notes), for the dashboard.
    #[arg(long, value_name = "FILE")]
    pub workspace: Option<PathBuf>,
}

/// The commands.
// Parsed once per run, so the size of the largest variant does not matter.
#[allow(clippy::large_enum_variant)]
#[derive(Debug, Subcommand)]
pub enum Command {
    /// The terminal dashboard (what `hubwatch [PATH...]` opens on a terminal).
    Dashboard {
        /// Loading options and paths.
        #[command(flatten)]
        load: LoadArgs,
        /// Ranking options.
        #[command(flatten)]
        rank: PriorityArgs,
        /// Workspace file for flags, follow-up states and notes.
        #[arg(long, value_name = "FILE")]
        workspace: Option<PathBuf>,
    },
    /// Account for every input row: used, merged or quarantined, and every field problem.
    Check {
        /// Loading options and paths.
        #[command(flatten)]
        load: LoadArgs,
        /// Write every quarantined row and field problem, with its reason and line, to FILE (CSV).
        #[arg(long, value_name = "FILE")]
        quarantine: Option<PathBuf>,
        /// Print one JSON object instead of text.
        #[arg(long)]
        json: bool,
    },
    /// Headline figures and statistics of the contact network.
    Summary {
        /// Loading options and paths.
        #[command(flatten)]
        load: LoadArgs,
        /// Statistics options.
        #[command(flatten)]
        stats: StatsArgs,
        /// Print one JSON object (keys documented in the README).
        #[arg(long)]
        json: bool,
    },
    /// The ranked follow-up list: who to reach first, and why.
    Priority {
        /// Loading options and paths.
        #[command(flatten)]
        load: LoadArgs,
        /// Ranking options.
        #[command(flatten)]
        rank: PriorityArgs,
        /// How many people to show (0 = all).
        #[arg(long, default_value_t = 30, value_name = "N")]
        top: usize,
        /// Print one JSON object instead of text.
        #[arg(long)]
        json: bool,
    },
    /// Epidemic threshold, expected outbreak size, and how many people to reach (and whom) to
    /// bring R below 1.
    Outlook(OutlookArgs),
    /// Figures for reports and the wall: the degree and excess degree distributions with their
    /// fits, contacts' contacts, the friendship paradox, cluster sizes and the outlook, as SVG
    /// and/or PNG.
    Figures(FiguresArgs),
    /// One self-contained HTML page to send or print: headline figures, the row ledger, the top
    /// of the list (pseudonymised unless --raw-ids), follow-up progress, the outlook and the
    /// figures.
    Brief(BriefArgs),
    /// Write a list for the callers: the priority list, the flagged people, or the quarantine.
    Export(ExportArgs),
    /// What changed since an earlier load of the export: people new and gone, people who
    /// crossed the high-degree threshold, new bridges, clusters merged or split, new exposures
    /// between known people, moves into and out of the top of the list.
    Changes(ChangesArgs),
    /// The day's work: windows ending today, tomorrow and within three days, overdue, people
    /// with many contacts still to call, people unreachable for two days, and follow-up
    /// progress over the last 14 days.
    Today(DayArgs),
    /// The SQL that makes, in DuckDB or Spark, the aggregate tables `--aggregates DIR` reads:
    /// the same rules as the reader of files (ledger, people, pairs, degree tables), for
    /// exports too large for one machine.
    Sql(SqlArgs),
    /// Trace along dated exposures: forward from cases to whom they may have exposed (and
    /// those people's contacts), or backward from cases to where they may have been infected.
    Chains {
        /// Forward or backward.
        #[command(subcommand)]
        direction: ChainDirection,
    },
    /// Set a person's follow-up state (to call, reached, unreachable, completed).
    Followup {
        /// Loading options and paths (the person must be in the export).
        #[command(flatten)]
        load: LoadArgs,
        /// Person ID.
        #[arg(long, value_name = "ID")]
        person: String,
        /// The new state.
        #[arg(long, value_name = "STATE")]
        set: String,
        /// Workspace file (default: hubwatch-workspace.sqlite beside the export).
        #[arg(long, value_name = "FILE")]
        workspace: Option<PathBuf>,
    },
    /// Add or remove a manual flag on a person.
    Flag {
        /// Loading options and paths (the person must be in the export).
        #[command(flatten)]
        load: LoadArgs,
        /// Person ID.
        #[arg(long, value_name = "ID")]
        person: String,
        /// Flag to add.
        #[arg(
            long,
            value_name = "FLAG",
            required_unless_present = "remove",
            conflicts_with = "remove"
        )]
        add: Option<String>,
        /// Flag to remove.
        #[arg(long, value_name = "FLAG")]
        remove: Option<String>,
        /// Workspace file (default: hubwatch-workspace.sqlite beside the export).
        #[arg(long, value_name = "FILE")]
        workspace: Option<PathBuf>,
    },
    /// Set or clear a person's note.
    Note {
        /// Loading options and paths (the person must be in the export).
        #[command(flatten)]
        load: LoadArgs,
        /// Person ID.
        #[arg(long, value_name = "ID")]
        person: String,
        /// The note (leave out to clear it).
        #[arg(long, value_name = "TEXT")]
        text: Option<String>,
        /// Workspace file (default: hubwatch-workspace.sqlite beside the export).
        #[arg(long, value_name = "FILE")]
        workspace: Option<PathBuf>,
    },
    /// Show the workspace: every person's state, people no longer in the export, the audit;
    /// or check it, or restore it from a daily backup.
    Workspace {
        /// Loading options and paths.
        #[command(flatten)]
        load: LoadArgs,
        /// Workspace file (default: hubwatch-workspace.sqlite beside the export).
        #[arg(long, value_name = "FILE")]
        workspace: Option<PathBuf>,
        /// Print one JSON object instead of text.
        #[arg(long)]
        json: bool,
        /// Run SQLite's integrity check and list the backups (exit status 4 when damaged).
        #[arg(long, conflicts_with = "restore")]
        check: bool,
        /// Put a backup in place of the workspace (the newest, or --backup); the current file
        /// is kept beside it as FILE.damaged-TIME.
        #[arg(long)]
        restore: bool,
        /// The backup to restore (default: the newest in FILE.backups/).
        #[arg(long, value_name = "FILE", requires = "restore")]
        backup: Option<PathBuf>,
    },
    /// Write changes in a loop, printing each after it is committed (for the crash test).
    #[command(hide = true)]
    WorkspaceStress {
        /// Workspace file.
        #[arg(long)]
        workspace: PathBuf,
        /// Number of changes.
        #[arg(long)]
        count: usize,
    },
    /// Write an invented outbreak export (people.csv, exposures.csv, manifest.json).
    Synth {
        /// Number of people.
        #[arg(long, default_value_t = 1000)]
        people: usize,
        /// Random seed: the same seed gives the same files.
        #[arg(long, default_value_t = 1)]
        seed: u64,
        /// Folder to write into (created if needed).
        #[arg(long, value_name = "DIR")]
        out: PathBuf,
        /// Last day of the scenario (YYYY-MM-DD; default: today).
        #[arg(long, value_name = "DATE")]
        end: Option<String>,
    },
}

/// Options of the ranking, shared by `priority` and `export`.
#[derive(Debug, Args, Clone, Default)]
pub struct PriorityArgs {
    /// Ranking preset (see config/priority.toml: balanced, "spread first", "window first").
    #[arg(long, value_name = "NAME")]
    pub preset: Option<String>,
    /// Monitoring-window preset (covid-19, ebola, mpox, measles, or one of your own).
    #[arg(long, value_name = "NAME")]
    pub pathogen: Option<String>,
    /// Monitoring window in days, overriding the pathogen preset.
    #[arg(long, value_name = "DAYS")]
    pub window_days: Option<u32>,
    /// Priority settings file laid over config/priority.toml.
    #[arg(long, value_name = "FILE")]
    pub priority_config: Option<PathBuf>,
    /// Only people with this role (case / contact).
    #[arg(long, value_name = "ROLE")]
    pub role: Option<String>,
    /// Only people with this status.
    #[arg(long, value_name = "STATUS")]
    pub status: Option<String>,
    /// Only people in this area.
    #[arg(long, value_name = "AREA")]
    pub area: Option<String>,
    /// Only people in this age group.
    #[arg(long, value_name = "GROUP")]
    pub age_group: Option<String>,
    /// Only people with an exposure in this setting.
    #[arg(long, value_name = "LABEL")]
    pub in_setting: Option<String>,
    /// Only people still inside their monitoring window.
    #[arg(long)]
    pub still_in_window: bool,
    /// Only people whose follow-up status is not reached or completed.
    #[arg(long)]
    pub not_reached: bool,
    /// Only people in the same cluster as this person.
    #[arg(long, value_name = "ID")]
    pub cluster_of: Option<String>,
}

impl PriorityArgs {
    /// The ranking request these options describe.
    pub fn request(&self) -> RankRequest {
        let mut filters = Filters {
            setting: self.in_setting.clone(),
            still_in_window: self.still_in_window,
            not_reached: self.not_reached,
            ..Filters::default()
        };
        filters.set("role", self.role.clone());
        filters.set("status", self.status.clone());
        filters.set("area", self.area.clone());
        filters.set("age_group", self.age_group.clone());
        RankRequest {
            preset: self.preset.clone(),
            pathogen: self.pathogen.clone(),
            window_days: self.window_days,
            priority_config: self.priority_config.clone(),
            filters,
            cluster_of: self.cluster_of.clone(),
            top: None,
        }
    }
}

/// Options of the statistics that cost time or use random numbers.
#[derive(Debug, Args, Clone)]
pub struct StatsArgs {
    /// Degree-preserving randomisations for the null model of r (0 skips it).
    #[arg(long, default_value_t = 5, value_name = "N")]
    pub null_replicates: usize,
    /// Swap attempts per contact pair in each randomisation.
    #[arg(long, default_value_t = 10, value_name = "N")]
    pub null_swaps: usize,
    /// Seed of the null model's random numbers (same seed, same result).
    #[arg(long, default_value_t = 1, value_name = "S")]
    pub seed: u64,
}

impl Default for StatsArgs {
    fn default() -> Self {
        let o = MetricOptions::default();
        StatsArgs {
            null_replicates: o.null_replicates,
            null_swaps: o.null_swaps_per_edge,
            seed: o.seed,
        }
    }
}

impl StatsArgs {
    /// As metric options.
    pub fn options(&self) -> MetricOptions {
        MetricOptions {
            null_replicates: self.null_replicates,
            null_swaps_per_edge: self.null_swaps,
            seed: self.seed,
        }
    }
}

/// Options shared by every command that loads an export.
#[derive(Debug, Args, Clone, Default)]
pub struct LoadArgs {
    /// Export files, or a folder holding them (default: the bundled sample scenario).
    #[arg(value_name = "PATH")]
    pub paths: Vec<PathBuf>,
    /// Configuration file laid over the defaults (see config/default.toml).
    #[arg(long, value_name = "FILE", global = true)]
    pub config: Option<PathBuf>,
    /// Map a field to a header or a 1-based column number: source_id=Reporter, source_id=2.
    #[arg(long = "column", value_name = "FIELD=HEADER", global = true)]
    pub columns: Vec<String>,
    /// Date layout for non-ISO dates, e.g. "%d/%m/%Y".
    #[arg(long, value_name = "LAYOUT", global = true)]
    pub date_format: Option<String>,
    /// Separator: auto, ",", ";", "\t" (or tab), "|", " " (or space), whitespace.
    #[arg(long, value_name = "SEP", global = true)]
    pub separator: Option<String>,
    /// Whether the first line is a header: auto, yes or no.
    #[arg(long, value_name = "WHEN", global = true)]
    pub header: Option<String>,
    /// Comment-line prefix ("" for none).
    #[arg(long, value_name = "PREFIX", global = true)]
    pub comment_prefix: Option<String>,
    /// Reference date for future dates and monitoring windows (YYYY-MM-DD; default: today).
    #[arg(long, value_name = "DATE", global = true)]
    pub as_of: Option<String>,
    /// Worksheet to read from a spreadsheet (default: the first).
    #[arg(long, value_name = "NAME", global = true)]
    pub sheet: Option<String>,
    /// Treat IDs that differ only in letter case as the same person.
    #[arg(long, global = true)]
    pub ids_ignore_case: bool,
    /// Text encoding of delimited files: auto (default), utf-8, utf-16le, utf-16be,
    /// windows-1252, iso-8859-1, ...
    #[arg(long, value_name = "ENCODING", global = true)]
    pub encoding: Option<String>,
    /// Values that mean "missing" (added to [input] missing_values), e.g. 99,NA,unknown.
    #[arg(long, value_name = "CODES", value_delimiter = ',', global = true)]
    pub missing_values: Vec<String>,
    /// Read the aggregate tables (Parquet) that the SQL of `hubwatch sql` made in a database
    /// engine, instead of export files.
    #[arg(long, value_name = "DIR", global = true)]
    pub aggregates: Option<PathBuf>,
    /// A people table, whatever its columns (repeatable).
    #[arg(long = "people", value_name = "FILE")]
    pub people_files: Vec<PathBuf>,
    /// An exposures table, whatever its columns (repeatable).
    #[arg(long = "exposures", value_name = "FILE")]
    pub exposure_files: Vec<PathBuf>,
    /// Build the network from exposures in this setting only (repeatable: any of them).
    #[arg(long = "setting", value_name = "LABEL", global = true)]
    pub settings: Vec<String>,
    /// Leave out exposures in this setting (repeatable).
    #[arg(long = "exclude-setting", value_name = "LABEL", global = true)]
    pub exclude_settings: Vec<String>,
    /// Only exposures on or after this date (YYYY-MM-DD).
    #[arg(long, value_name = "DATE", global = true)]
    pub from: Option<String>,
    /// Only exposures on or before this date (YYYY-MM-DD).
    #[arg(long, value_name = "DATE", global = true)]
    pub to: Option<String>,
    /// Only exposures in the last N days up to the as-of date (N = 1: the as-of day itself).
    #[arg(long, value_name = "N", global = true, conflicts_with_all = ["from", "to"])]
    pub last_days: Option<u32>,
}

impl LoadArgs {
    /// The effective configuration: defaults, the config file, then command-line options.
    pub fn config(&self) -> Result<Config> {
        let mut c = Config::load(self.config.as_deref())?;
        if let Some(f) = &self.date_format {
            c.dates.format = f.clone();
        }
        if let Some(s) = &self.separator {
            c.csv.separator = s.clone();
        }
        if let Some(h) = &self.header {
            c.csv.header = h.clone();
        }
        if let Some(p) = &self.comment_prefix {
            c.csv.comment_prefix = p.clone();
        }
        if self.ids_ignore_case {
            c.ids.case_sensitive = false;
        }
        if let Some(e) = &self.encoding {
            c.input.encoding = e.clone();
        }
        c.input
            .missing_values
            .extend(self.missing_values.iter().cloned());
        c.validate()?;
        Ok(c)
    }

    /// Load options from the flags.
    pub fn options(&self, progress: bool) -> Result<LoadOptions> {
        if self.aggregates.is_some()
            && !(self.paths.is_empty()
                && self.people_files.is_empty()
                && self.exposure_files.is_empty())
        {
            return Err(Error::Usage(
                "--aggregates reads a folder of aggregate tables on its own: give no export files with it".into(),
            ));
        }
        let overrides = self
            .columns
            .iter()
            .map(|c| mapping::parse_override(c))
            .collect::<Result<_>>()?;
        let as_of = match &self.as_of {
            Some(v) => super::parse_day("--as-of", v)?,
            None => super::today(),
        };
        let view = crate::ingest::View {
            settings: self.settings.clone(),
            exclude_settings: self.exclude_settings.clone(),
            from: match (&self.from, self.last_days) {
                (Some(v), _) => Some(super::parse_day("--from", v)?),
                (None, Some(n)) if n >= 1 => Some(as_of - n as i32 + 1),
                (None, Some(_)) => {
                    return Err(Error::Usage("--last-days must be at least 1".into()))
                }
                (None, None) => None,
            },
            to: match (&self.to, self.last_days) {
                (Some(v), _) => Some(super::parse_day("--to", v)?),
                (None, Some(_)) => Some(as_of),
                (None, None) => None,
            },
        };
        if let (Some(f), Some(t)) = (view.from, view.to) {
            if f > t {
                return Err(Error::Usage(format!(
                    "--from {} is after --to {}",
                    dates::iso(f),
                    dates::iso(t)
                )));
            }
        }
        Ok(LoadOptions {
            view,
            overrides,
            as_of,
            read: ReadOptions {
                sheet: self.sheet.clone(),
                chunk_rows: 0,
            },
            progress,
        })
    }

    /// The inputs: the paths given and the files with a given role, or the bundled sample.
    pub fn inputs(&self) -> Vec<Input> {
        if let Some(dir) = &self.aggregates {
            return vec![Input::Aggregates(dir.clone())];
        }
        if self.paths.is_empty() && self.people_files.is_empty() && self.exposure_files.is_empty() {
            return sample::inputs();
        }
        let given = |files: &[PathBuf], role| {
            files
                .iter()
                .map(move |p| Input::Given {
                    path: p.clone(),
                    role,
                })
                .collect::<Vec<_>>()
        };
        let mut v: Vec<Input> = self.paths.iter().map(|p| Input::Path(p.clone())).collect();
        v.extend(given(&self.people_files, Role::People));
        v.extend(given(&self.exposure_files, Role::Exposures));
        v
    }

    /// The workspace file: the one given, else the default beside the first input (the one
    /// place that decides it).
    pub fn workspace(&self, given: Option<&Path>) -> PathBuf {
        given.map(Path::to_path_buf).unwrap_or_else(|| {
            // Beside a folder of aggregate tables, not in it: each day's folder is new, the
            // follow-up state is not.
            if let Some(dir) = &self.aggregates {
                let parent = dir.parent().filter(|p| !p.as_os_str().is_empty());
                return Workspace::default_path(Some(parent.unwrap_or(Path::new("."))));
            }
            let first = self
                .paths
                .first()
                .or(self.exposure_files.first())
                .or(self.people_files.first());
            Workspace::default_path(first.map(|p| p.as_path()))
        })
    }

    /// Load the export described by these arguments.
    pub fn load(&self) -> Result<Dataset> {
        let config = self.config()?;
        crate::dataset::load(&self.inputs(), &config, &self.options(true)?)
    }
}
