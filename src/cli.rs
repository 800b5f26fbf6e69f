//! Command-line interface: argument definitions (clap) and the non-interactive commands.
//!
//! Every command that takes PATH uses the bundled sample scenario when none is given.

use std::io::Write;
use std::path::PathBuf;

use clap::{Args, Parser, Subcommand};

use crate::config::Config;
use crate::error::{Error, Result};
use crate::ingest::{self, dates, mapping, table::ReadOptions, Input, LoadOptions};
use crate::{report, sample, summary, synth};

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
    Outlook {
        /// Loading options and paths.
        #[command(flatten)]
        load: LoadArgs,
        /// Ranking options (for the priority strategy).
        #[command(flatten)]
        rank: PriorityArgs,
        /// Transmissibility T in [0, 1] (default: the secondary attack rate of the export).
        #[arg(long, value_name = "T")]
        transmissibility: Option<f64>,
        /// Strategies to follow (comma-separated; default all).
        #[arg(long, value_enum, value_delimiter = ',')]
        strategy: Vec<crate::planning::Strategy>,
        /// Follow the reach curves up to N people (0 = everyone).
        #[arg(long, default_value_t = 1000, value_name = "N")]
        max_reach: usize,
        /// Seeded repeats averaged for the random and acquaintance strategies.
        #[arg(long, default_value_t = 10, value_name = "N")]
        repeats: usize,
        /// Seed of the first repeat.
        #[arg(long, default_value_t = 1, value_name = "S")]
        seed: u64,
        /// Write the reach curves (every strategy, every n) to FILE.
        #[arg(long, value_name = "FILE")]
        curves_out: Option<PathBuf>,
        /// Write the curve of R0 and final size over T to FILE.
        #[arg(long, value_name = "FILE")]
        t_curve_out: Option<PathBuf>,
        /// Format of the curve files (default: from the extension).
        #[arg(long, value_enum)]
        format: Option<crate::export::Format>,
        /// Replace existing curve files.
        #[arg(long)]
        force: bool,
        /// Workspace file (follow-up states used by the priority strategy).
        #[arg(long, value_name = "FILE")]
        workspace: Option<PathBuf>,
        /// Print one JSON object (keys documented in the README).
        #[arg(long)]
        json: bool,
    },
    /// Write a list for the callers: the priority list, the flagged people, or the quarantine.
    Export {
        /// Loading options and paths.
        #[command(flatten)]
        load: LoadArgs,
        /// Ranking options (for the priority and flagged lists).
        #[command(flatten)]
        rank: PriorityArgs,
        /// Which list.
        #[arg(long, value_enum, default_value = "priority")]
        list: ListKind,
        /// File format (default: from the extension of --out).
        #[arg(long, value_enum)]
        format: Option<crate::export::Format>,
        /// Output file (with --split, one file per sheet: NAME-1ofK.EXT ...).
        #[arg(long, value_name = "FILE")]
        out: PathBuf,
        /// Only the first N people (0 = all).
        #[arg(long, default_value_t = 0, value_name = "N")]
        top: usize,
        /// Only these columns, in this order (comma-separated; see the full export for names).
        #[arg(long = "columns", value_name = "A,B,...", value_delimiter = ',')]
        export_columns: Vec<String>,
        /// Write K call sheets balanced by count, households kept together.
        #[arg(long, value_name = "K")]
        split: Option<usize>,
        /// Replace an existing file.
        #[arg(long)]
        force: bool,
        /// Replace person IDs with a keyed hash (HMAC-SHA256) and drop direct identifiers.
        #[arg(long)]
        pseudonymise: bool,
        /// File holding the pseudonymisation key (else HUBWATCH_PSEUDONYM_KEY).
        #[arg(long, value_name = "FILE")]
        key_file: Option<PathBuf>,
        /// Workspace file for flags, follow-up states and notes.
        #[arg(long, value_name = "FILE")]
        workspace: Option<PathBuf>,
        /// Size of the sentinel sample (with --list sentinel).
        #[arg(long, default_value_t = 50, value_name = "N")]
        sample: usize,
        /// Seed of the sentinel sample (same seed, same sample).
        #[arg(long, default_value_t = 1, value_name = "S")]
        seed: u64,
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
    /// Show the workspace: every person's state, people no longer in the export, the audit.
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

/// A ranked list with the settings that produced it.
pub struct RankedList {
    /// The people, best first.
    pub ranked: Vec<crate::priority::Ranked>,
    /// Preset name and weights.
    pub preset: (String, crate::priority::Preset),
    /// Pathogen name, window days, source.
    pub window: (String, u32, String),
}

impl PriorityArgs {
    /// Rank the dataset with these options; follow-up states from the workspace take
    /// precedence over the export's column.
    pub fn rank(
        &self,
        d: &crate::ingest::Dataset,
        states: &[crate::workspace::PersonState],
    ) -> Result<RankedList> {
        // Fail on a bad preset or pathogen before the statistics.
        let config = crate::priority::PriorityConfig::load(self.priority_config.as_deref())?;
        config.preset(self.preset.as_deref().unwrap_or(&config.preset))?;
        config.pathogen(self.pathogen.as_deref().unwrap_or(&config.pathogen))?;
        let stats = crate::metrics::network::compute(
            d,
            &crate::metrics::network::MetricOptions {
                null_replicates: 0,
                ..Default::default()
            },
        );
        self.rank_with(d, &stats, states)
    }

    /// Same, with statistics already computed.
    pub fn rank_with(
        &self,
        d: &crate::ingest::Dataset,
        stats: &crate::metrics::network::NetworkStats,
        states: &[crate::workspace::PersonState],
    ) -> Result<RankedList> {
        let config = crate::priority::PriorityConfig::load(self.priority_config.as_deref())?;
        let preset_name = self.preset.clone().unwrap_or_else(|| config.preset.clone());
        let p = config.preset(&preset_name)?.clone();
        let pathogen_name = self
            .pathogen
            .clone()
            .unwrap_or_else(|| config.pathogen.clone());
        let pathogen = config.pathogen(&pathogen_name)?.clone();
        let days = self.window_days.unwrap_or(pathogen.days);
        let source = if self.window_days.is_some() {
            "set with --window-days".to_string()
        } else {
            pathogen.source.clone()
        };
        let equals = [
            ("role", &self.role),
            ("status", &self.status),
            ("area", &self.area),
            ("age_group", &self.age_group),
        ]
        .into_iter()
        .filter_map(|(f, v)| v.clone().map(|v| (f.to_string(), v)))
        .collect();
        let filters = crate::priority::Filters {
            equals,
            setting: self.in_setting.clone(),
            still_in_window: self.still_in_window,
            not_reached: self.not_reached,
            cluster_of: self.cluster_of.clone(),
            followup: states
                .iter()
                .filter_map(|s| s.followup.clone().map(|f| (s.person_id.clone(), f)))
                .collect(),
        };
        let ranked = crate::priority::rank(d, stats, &config, &p, days, &filters)?;
        Ok(RankedList {
            ranked,
            preset: (preset_name, p),
            window: (pathogen_name, days, source),
        })
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

impl StatsArgs {
    /// As metric options.
    pub fn options(&self) -> crate::metrics::network::MetricOptions {
        crate::metrics::network::MetricOptions {
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

/// Today's local date as a day number.
pub fn today() -> i32 {
    dates::to_days(chrono::Local::now().date_naive())
}

/// Parse a `YYYY-MM-DD` argument.
pub fn parse_day(flag: &str, v: &str) -> Result<i32> {
    dates::parse_iso(v.trim())
        .map_err(|_| Error::Usage(format!("{flag} {v}: expected a date as YYYY-MM-DD")))
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
        c.validate()?;
        Ok(c)
    }

    /// Load options from the flags.
    pub fn options(&self, progress: bool) -> Result<LoadOptions> {
        let overrides = self
            .columns
            .iter()
            .map(|c| mapping::parse_override(c))
            .collect::<Result<_>>()?;
        let as_of = match &self.as_of {
            Some(v) => parse_day("--as-of", v)?,
            None => today(),
        };
        let view = crate::ingest::View {
            settings: self.settings.clone(),
            exclude_settings: self.exclude_settings.clone(),
            from: match (&self.from, self.last_days) {
                (Some(v), _) => Some(parse_day("--from", v)?),
                (None, Some(n)) if n >= 1 => Some(as_of - n as i32 + 1),
                (None, Some(_)) => {
                    return Err(Error::Usage("--last-days must be at least 1".into()))
                }
                (None, None) => None,
            },
            to: match (&self.to, self.last_days) {
                (Some(v), _) => Some(parse_day("--to", v)?),
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

    /// The inputs: the paths given, or the bundled sample.
    pub fn inputs(&self) -> Vec<Input> {
        if self.paths.is_empty() {
            sample::inputs()
        } else {
            self.paths.iter().map(|p| Input::Path(p.clone())).collect()
        }
    }

    /// Load the export described by these arguments.
    pub fn load(&self) -> Result<ingest::Dataset> {
        let config = self.config()?;
        ingest::load(&self.inputs(), &config, &self.options(true)?)
    }
}

/// The workspace's states, if the workspace exists (it is never created just to read it).
fn workspace_states(
    load: &LoadArgs,
    workspace: Option<&std::path::Path>,
) -> Result<Vec<crate::workspace::PersonState>> {
    let path = workspace.map(|p| p.to_path_buf()).unwrap_or_else(|| {
        crate::workspace::Workspace::default_path(load.paths.first().map(|p| p.as_path()))
    });
    if path.exists() {
        crate::workspace::Workspace::open(&path)?.all()
    } else {
        Ok(Vec::new())
    }
}

/// `hubwatch export`: build the list, attach the metadata, write one file or K call sheets.
#[allow(clippy::too_many_arguments)]
fn export(
    load: &LoadArgs,
    rank: &PriorityArgs,
    list: ListKind,
    format: Option<crate::export::Format>,
    out: &std::path::Path,
    top: usize,
    split: Option<usize>,
    force: bool,
    pseudonymise: Option<Option<&std::path::Path>>,
    workspace: Option<&std::path::Path>,
    sentinel: (usize, u64),
    columns: &[String],
) -> Result<()> {
    use crate::export as ex;
    let format = ex::format_for(out, format)?;
    // Check the key before any work, so a missing key fails fast.
    let key = match pseudonymise {
        Some(key_file) => Some(ex::pseudonym_key(key_file)?),
        None => None,
    };
    if key.is_some() && list == ListKind::Quarantine {
        return Err(Error::Usage("the quarantine list holds raw rows with IDs and cannot be pseudonymised; export it only where the source data may go".into()));
    }
    let d = load.load()?;
    let dropped = crate::priority::PriorityConfig::load(rank.priority_config.as_deref())?
        .export
        .direct_identifiers;
    let mut meta = vec![
        ("caution".to_string(), crate::CAUTION.to_string()),
        (
            "generated".to_string(),
            chrono::Utc::now().format("%Y-%m-%dT%H:%M:%SZ").to_string(),
        ),
        ("as_of".to_string(), dates::iso(d.as_of)),
        ("list".to_string(), format!("{list:?}").to_lowercase()),
        ("view".to_string(), d.view.0.describe()),
    ];
    let mut note = String::new();
    let table = match list {
        ListKind::Quarantine => crate::lists::quarantine_table(&d),
        ListKind::Sentinel => {
            let picks = crate::sentinel::friend_sample(&d.graph, sentinel.0, sentinel.1);
            let stats = crate::metrics::network::compute(
                &d,
                &crate::metrics::network::MetricOptions {
                    null_replicates: 0,
                    ..Default::default()
                },
            );
            let mean_picks = picks
                .iter()
                .map(|p| f64::from(stats.degrees[p.node as usize]))
                .sum::<f64>()
                / picks.len().max(1) as f64;
            let (plain, expected) = (stats.neighbours.mean_active, stats.neighbours.contact_mean);
            let gain = match (plain, expected) {
                (Ok(p), Ok(e)) => format!(
                    "expected contacts of a sentinel {e:.2} against {p:.2} for a person drawn at random ({:+.0}%); this sample: {mean_picks:.2}",
                    100.0 * (e / p - 1.0)
                ),
                _ => "undefined (no contacts)".into(),
            };
            meta.push((
                "sentinel".into(),
                format!("{} people, seed {}; {gain}", picks.len(), sentinel.1),
            ));
            note = format!("{gain}\n");
            let ids = crate::lists::Ids {
                d: &d,
                key: key.as_deref(),
                direct_identifiers: &dropped,
            };
            crate::lists::sentinel_table(&ids, &picks, &stats.degrees)
        }
        ListKind::Priority | ListKind::Flagged => {
            let states = workspace_states(load, workspace)?;
            let r = rank.rank(&d, &states)?;
            meta.push(("preset".into(), r.preset.0.clone()));
            meta.push((
                "weights".into(),
                serde_json::to_string(&r.preset.1.weights).unwrap_or_default(),
            ));
            meta.push((
                "caps".into(),
                serde_json::to_string(&r.preset.1.caps).unwrap_or_default(),
            ));
            meta.push((
                "monitoring_window".into(),
                format!("{} days ({}; {})", r.window.1, r.window.0, r.window.2),
            ));
            let ids = crate::lists::Ids {
                d: &d,
                key: key.as_deref(),
                direct_identifiers: &dropped,
            };
            crate::lists::priority_table(
                &ids,
                &r.ranked,
                &r.preset.1,
                &states,
                top,
                list == ListKind::Flagged,
            )
        }
    };
    if key.is_some() {
        meta.push(("pseudonymised".into(), "person IDs replaced by HMAC-SHA256 under a key that is not stored; direct identifier columns dropped".into()));
    }
    for f in &d.ledger.files {
        let sum = if f.path.exists() {
            ex::file_sha256(&f.path)?
        } else {
            "built-in sample".into()
        };
        meta.push((
            format!("input {}", f.role.name()),
            format!("{} sha256 {sum}", f.path.display()),
        ));
    }
    let table = if columns.is_empty() {
        table
    } else {
        ex::select_columns(table, columns)?
    };
    let meta = ex::Metadata { entries: meta };
    match split {
        None | Some(1) => {
            ex::write(&table, &meta, format, out, force)?;
            emit(&format!(
                "{note}wrote {} rows to {}\n",
                table.rows.len(),
                out.display()
            ))
        }
        Some(0) => Err(Error::Usage("--split needs at least 1 sheet".into())),
        Some(k) => {
            let hh = table.columns.iter().position(|c| c == "household_id");
            let groups: Vec<Option<String>> = table
                .rows
                .iter()
                .map(|r| {
                    hh.and_then(|c| match &r[c] {
                        ex::Cell::Text(t) => Some(t.clone()),
                        _ => None,
                    })
                })
                .collect();
            let mut lines = String::new();
            for (i, rows) in ex::split_sheets(&groups, k).into_iter().enumerate() {
                let sheet = ex::ExportTable {
                    columns: table.columns.clone(),
                    rows: rows.iter().map(|&r| table.rows[r].clone()).collect(),
                };
                let path = ex::sheet_path(out, i, k);
                ex::write(&sheet, &meta, format, &path, force)?;
                lines.push_str(&format!(
                    "wrote {} rows to {}\n",
                    sheet.rows.len(),
                    path.display()
                ));
            }
            emit(&lines)
        }
    }
}

/// Load the export, check the person is in it, and open the workspace.
fn open_for_person(
    load: &LoadArgs,
    workspace: &Option<PathBuf>,
    person: &str,
) -> Result<(crate::workspace::Workspace, String)> {
    let d = load.load()?;
    let node = d
        .ids
        .get(person.trim())
        .ok_or_else(|| Error::Usage(format!("no person \"{}\" in this export", person.trim())))?;
    let path = workspace.clone().unwrap_or_else(|| {
        crate::workspace::Workspace::default_path(load.paths.first().map(|p| p.as_path()))
    });
    Ok((
        crate::workspace::Workspace::open(&path)?,
        d.ids.name(node).to_string(),
    ))
}

/// Write to stdout; a closed pipe (`hubwatch … | head`) ends quietly.
fn emit(text: &str) -> Result<()> {
    let mut out = std::io::stdout().lock();
    match out.write_all(text.as_bytes()).and_then(|_| out.flush()) {
        Err(e) if e.kind() == std::io::ErrorKind::BrokenPipe => std::process::exit(0),
        r => r.map_err(|e| Error::io("<stdout>", e)),
    }
}

fn to_json<T: serde::Serialize>(v: &T) -> Result<String> {
    serde_json::to_string_pretty(v)
        .map(|s| s + "\n")
        .map_err(|e| Error::Usage(format!("JSON output failed: {e}")))
}

/// Run the parsed command line.
pub fn run(cli: Cli) -> Result<()> {
    match cli.command {
        None if crate::dashboard::interactive() => {
            crate::dashboard::run(&cli.load, &cli.rank, cli.workspace)
        }
        None => {
            let d = cli.load.load()?;
            let stats = crate::metrics::network::compute(&d, &Default::default());
            emit(&report::summary_text(&summary::summarise(&d), &stats, &d))
        }
        Some(Command::Dashboard {
            load,
            rank,
            workspace,
        }) => crate::dashboard::run(&load, &rank, workspace),
        Some(Command::Summary { load, stats, json }) => {
            let d = load.load()?;
            let s = summary::summarise(&d);
            let net = crate::metrics::network::compute(&d, &stats.options());
            if json {
                let mut v = serde_json::to_value(&s)
                    .map_err(|e| Error::Usage(format!("JSON output failed: {e}")))?;
                if let serde_json::Value::Object(o) = &mut v {
                    let mut extra = net.to_json(&d);
                    // Component sizes sit under the summary's own `components` object.
                    if let (Some(sizes), Some(serde_json::Value::Object(c))) =
                        (extra.remove("components_sizes"), o.get_mut("components"))
                    {
                        c.insert("sizes".into(), sizes);
                    }
                    o.extend(extra);
                }
                emit(&to_json(&v)?)
            } else {
                emit(&report::summary_text(&s, &net, &d))
            }
        }
        Some(Command::Check {
            load,
            quarantine,
            json,
        }) => {
            let d = load.load()?;
            if let Some(path) = &quarantine {
                report::write_quarantine(path, &d.ledger)?;
            }
            let r = report::check_report(&d.ledger);
            emit(&if json {
                to_json(&r)?
            } else {
                report::check_text(&r, &dates::iso(d.as_of))
            })
        }
        Some(Command::Priority {
            load,
            rank,
            top,
            json,
        }) => {
            let d = load.load()?;
            let list = rank.rank(&d, &workspace_states(&load, None)?)?;
            let (pathogen, days, source) = &list.window;
            let window = report::WindowInfo {
                pathogen,
                days: *days,
                source,
            };
            emit(&if json {
                to_json(&report::priority_json(
                    &d,
                    &list.ranked,
                    top,
                    &list.preset.0,
                    &list.preset.1,
                    &window,
                ))?
            } else {
                report::priority_text(
                    &d,
                    &list.ranked,
                    top,
                    &list.preset.0,
                    &list.preset.1,
                    &window,
                )
            })
        }
        Some(Command::Outlook {
            load,
            rank,
            transmissibility,
            strategy,
            max_reach,
            repeats,
            seed,
            curves_out,
            t_curve_out,
            format,
            force,
            workspace,
            json,
        }) => {
            use crate::planning::{self, Strategy};
            if let Some(t) = transmissibility {
                if !(0.0..=1.0).contains(&t) {
                    return Err(Error::Usage(format!(
                        "--transmissibility {t}: T is a probability, give a value from 0 to 1"
                    )));
                }
            }
            let outs: Vec<(&std::path::Path, crate::export::Format)> = [&curves_out, &t_curve_out]
                .into_iter()
                .flatten()
                .map(|p| Ok((p.as_path(), crate::export::format_for(p, format)?)))
                .collect::<Result<_>>()?;
            for (p, _) in &outs {
                if p.exists() && !force {
                    return Err(Error::Usage(format!(
                        "{} exists; add --force to replace it",
                        p.display()
                    )));
                }
            }
            let d = load.load()?;
            let strategies = if strategy.is_empty() {
                Strategy::ALL.to_vec()
            } else {
                strategy
            };
            let priority_order = if strategies.contains(&Strategy::Priority) {
                let list = rank.rank(&d, &workspace_states(&load, workspace.as_deref())?)?;
                Some(list.ranked.iter().map(|r| r.node).collect())
            } else {
                None
            };
            let opts = planning::PlanOptions {
                transmissibility,
                strategies,
                max_reach,
                repeats,
                seed,
                ..Default::default()
            };
            let plan = planning::plan(&d, priority_order, &opts);
            let meta = crate::export::Metadata {
                entries: vec![
                    ("caution".to_string(), crate::CAUTION.to_string()),
                    (
                        "model_caution".to_string(),
                        planning::MODEL_CAUTION.to_string(),
                    ),
                    ("assumption".to_string(), plan.assumption()),
                    ("as_of".to_string(), dates::iso(d.as_of)),
                    ("view".to_string(), d.view.0.describe()),
                    (
                        "generated".to_string(),
                        chrono::Utc::now().format("%Y-%m-%dT%H:%M:%SZ").to_string(),
                    ),
                ],
            };
            let mut written = String::new();
            if let Some(p) = &curves_out {
                let f = crate::export::format_for(p, format)?;
                crate::export::write(&plan.reach_table(), &meta, f, p, force)?;
                written.push_str(&format!("wrote the reach curves to {}\n", p.display()));
            }
            if let Some(p) = &t_curve_out {
                let f = crate::export::format_for(p, format)?;
                crate::export::write(&plan.transmissibility_table(), &meta, f, p, force)?;
                written.push_str(&format!("wrote the curve over T to {}\n", p.display()));
            }
            if json {
                emit(&to_json(&plan.to_json(&d.ids))?)?;
                if !written.is_empty() {
                    eprint!("{written}");
                }
                Ok(())
            } else {
                emit(&format!("{}{written}", plan.text(&d.ids)))
            }
        }
        Some(Command::Export {
            load,
            rank,
            list,
            format,
            out,
            top,
            split,
            force,
            pseudonymise,
            key_file,
            workspace,
            sample,
            seed,
            export_columns,
        }) => export(
            &load,
            &rank,
            list,
            format,
            &out,
            top,
            split,
            force,
            pseudonymise.then_some(key_file.as_deref()),
            workspace.as_deref(),
            (sample, seed),
            &export_columns,
        ),
        Some(Command::Followup {
            load,
            person,
            set,
            workspace,
        }) => {
            let (mut ws, person) = open_for_person(&load, &workspace, &person)?;
            let id = ws.set_followup(&person, &set)?;
            emit(&format!(
                "change {id}: {person} follow-up set to \"{}\" in {}\n",
                set.trim().to_lowercase(),
                ws.path.display()
            ))
        }
        Some(Command::Flag {
            load,
            person,
            add,
            remove,
            workspace,
        }) => {
            let (mut ws, person) = open_for_person(&load, &workspace, &person)?;
            let (id, what) = match (add, remove) {
                (Some(f), _) => (ws.add_flag(&person, &f)?, format!("flag \"{f}\" added")),
                (None, Some(f)) => (
                    ws.remove_flag(&person, &f)?,
                    format!("flag \"{f}\" removed"),
                ),
                (None, None) => {
                    return Err(Error::Usage("give --add FLAG or --remove FLAG".into()))
                }
            };
            emit(&format!(
                "change {id}: {person} {what} in {}\n",
                ws.path.display()
            ))
        }
        Some(Command::Note {
            load,
            person,
            text,
            workspace,
        }) => {
            let (mut ws, person) = open_for_person(&load, &workspace, &person)?;
            let id = ws.set_note(&person, text.as_deref())?;
            emit(&format!(
                "change {id}: {person} note {} in {}\n",
                if text.is_some() { "set" } else { "cleared" },
                ws.path.display()
            ))
        }
        Some(Command::Workspace {
            load,
            workspace,
            json,
        }) => {
            let d = load.load()?;
            let path = workspace.unwrap_or_else(|| {
                crate::workspace::Workspace::default_path(load.paths.first().map(|p| p.as_path()))
            });
            let ws = crate::workspace::Workspace::open(&path)?;
            let states = ws.all()?;
            let vanished = ws.vanished(&d.ids)?;
            let audit = ws.audit(None)?;
            if json {
                emit(&to_json(
                    &serde_json::json!({"workspace": path, "people": states, "vanished": vanished, "changes": audit.len()}),
                )?)
            } else {
                let mut s = format!(
                    "workspace {} ({} people with a state, {} changes audited)\n",
                    path.display(),
                    states.len(),
                    audit.len()
                );
                for st in &states {
                    s.push_str(&format!(
                        "  {:<14} {:<12} flags: {:<24} note: {}\n",
                        st.person_id,
                        st.followup.as_deref().unwrap_or("-"),
                        st.flags.join(", "),
                        st.note.as_deref().unwrap_or("")
                    ));
                }
                if !vanished.is_empty() {
                    s.push_str(&format!(
                        "no longer in this export (kept, not deleted): {}\n",
                        vanished.join(", ")
                    ));
                }
                emit(&s)
            }
        }
        Some(Command::WorkspaceStress { workspace, count }) => {
            let mut ws = crate::workspace::Workspace::open(&workspace)?;
            let states = crate::workspace::FOLLOWUP_STATES;
            for i in 0..count {
                let person = format!("S{:04}", i % 97);
                let id = ws.set_followup(&person, states[i % states.len()])?;
                emit(&format!(
                    "committed {id} {person} {}\n",
                    states[i % states.len()]
                ))?;
            }
            Ok(())
        }
        Some(Command::Synth {
            people,
            seed,
            out,
            end,
        }) => {
            let end = match end {
                Some(v) => parse_day("--end", &v)?,
                None => today(),
            };
            let m = synth::generate(&out, &synth::SynthOptions::new(people, seed, end))?;
            emit(&format!(
                "wrote {} people rows and {} exposure rows ({} distinct pairs, {} cases) to {}\n\
                 planted: {} self-exposures, {} blank targets, {} bad dates, {} bad durations, {} implied people, {} repeated people, {} blank person IDs\n",
                m.people_rows,
                m.exposure_rows,
                m.pairs,
                m.cases,
                out.display(),
                m.self_exposures,
                m.blank_targets,
                m.bad_dates,
                m.bad_durations,
                m.implied_people,
                m.repeated_people,
                m.blank_people
            ))
        }
    }
}
