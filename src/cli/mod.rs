//! The command line: `args` declares it (clap), `commands` holds one file per command, and
//! [`run`] sends a parsed command line to its command. Every command that takes PATH uses the
//! bundled sample scenario when none is given.

pub mod args;
pub mod commands;

use std::io::Write;
use std::path::Path;

pub use args::{Cli, Command, ListKind, LoadArgs, PriorityArgs, StatsArgs};

use crate::error::{Error, Result};
use crate::workspace::{PersonState, Workspace};

/// Today's local date as a day number.
pub fn today() -> i32 {
    crate::ingest::dates::to_days(chrono::Local::now().date_naive())
}

/// Parse a `YYYY-MM-DD` argument.
pub fn parse_day(flag: &str, v: &str) -> Result<i32> {
    crate::ingest::dates::parse_iso(v.trim())
        .map_err(|_| Error::Usage(format!("{flag} {v}: expected a date as YYYY-MM-DD")))
}

/// The workspace's states, if the workspace exists (it is never created just to read it).
pub fn workspace_states(path: &Path) -> Result<Vec<PersonState>> {
    if path.exists() {
        Workspace::open(path)?.all()
    } else {
        Ok(Vec::new())
    }
}

/// Write to stdout; a closed pipe (`hubwatch … | head`) ends quietly.
pub fn emit(text: &str) -> Result<()> {
    let mut out = std::io::stdout().lock();
    match out.write_all(text.as_bytes()).and_then(|_| out.flush()) {
        Err(e) if e.kind() == std::io::ErrorKind::BrokenPipe => std::process::exit(0),
        r => r.map_err(|e| Error::io("<stdout>", e)),
    }
}

/// A command's large data once its output is written: the process is about to exit, so leave
/// the memory to the operating system rather than freeing millions of allocations one by one.
pub fn leave<T>(big: T) {
    std::mem::forget(big);
}

/// With `HUBWATCH_STAGES` set, where a command's time went, on stderr (for benchmarks and
/// profiling; not part of any output contract). `load_cpu` is the CPU time of the load (all
/// threads), shown as a multiple of its wall time.
pub fn stages(t: &crate::dataset::Timings, (load, load_cpu): (f64, f64), statistics: f64) {
    if std::env::var_os("HUBWATCH_STAGES").is_none() {
        return;
    }
    eprintln!(
        "stages: parse {:.3} s, check+intern {:.3} s, merge pairs {:.3} s, adjacency {:.3} s \
         (load {load:.3} s, CPU/wall {:.2}), statistics {statistics:.3} s; peak MiB after read, \
         merge, adjacency and at the end: {:.0?}, {:.0}",
        t.parse,
        t.reconcile,
        t.merge_pairs,
        t.graph,
        load_cpu / load,
        t.peak_mib,
        crate::ingest::peak_mib()
    );
}

/// Pretty JSON with a final newline.
pub fn to_json<T: serde::Serialize>(v: &T) -> Result<String> {
    serde_json::to_string_pretty(v)
        .map(|s| s + "\n")
        .map_err(|e| Error::Usage(format!("JSON output failed: {e}")))
}

/// Run the parsed command line.
pub fn run(cli: Cli) -> Result<()> {
    use commands as c;
    match cli.command {
        None if crate::tui::interactive() => c::dashboard::run(&cli.load, &cli.rank, cli.workspace),
        None => c::summary::run(&cli.load, &StatsArgs::default(), false),
        Some(Command::Dashboard {
            load,
            rank,
            workspace,
        }) => c::dashboard::run(&load, &rank, workspace),
        Some(Command::Summary { load, stats, json }) => c::summary::run(&load, &stats, json),
        Some(Command::Check {
            load,
            quarantine,
            json,
        }) => c::check::run(&load, quarantine.as_deref(), json),
        Some(Command::Priority {
            load,
            rank,
            top,
            json,
        }) => c::priority::run(&load, &rank, top, json),
        Some(Command::Outlook(o)) => c::outlook::run(&o),
        Some(Command::Figures(f)) => c::figures::run(&f),
        Some(Command::Brief(b)) => c::brief::run(&b),
        Some(Command::Export(e)) => c::export::run(&e),
        Some(Command::Chains { direction }) => c::chains::run(&direction),
        Some(Command::Sql(a)) => c::sql::run(&cli.load, &a),
        Some(Command::Changes(a)) => c::day::changes(&a),
        Some(Command::Today(a)) => c::day::today(&a),
        Some(Command::Followup {
            load,
            person,
            set,
            workspace,
        }) => c::state::followup(&load, workspace.as_deref(), &person, &set),
        Some(Command::Flag {
            load,
            person,
            add,
            remove,
            workspace,
        }) => c::state::flag(&load, workspace.as_deref(), &person, add, remove),
        Some(Command::Note {
            load,
            person,
            text,
            workspace,
        }) => c::state::note(&load, workspace.as_deref(), &person, text.as_deref()),
        Some(Command::Workspace {
            load,
            workspace,
            json,
            check,
            restore,
            backup,
        }) => {
            let path = load.workspace(workspace.as_deref());
            if check {
                c::state::check(&path, json)
            } else if restore {
                c::state::restore(&path, backup.as_deref())
            } else {
                c::state::show(&load, workspace.as_deref(), json)
            }
        }
        Some(Command::WorkspaceStress { workspace, count }) => c::state::stress(&workspace, count),
        Some(Command::Synth {
            people,
            seed,
            out,
            end,
        }) => c::synth::run(people, seed, &out, end.as_deref()),
    }
}
