//! The terminal dashboard: `hubwatch [PATH...]` on a terminal.
//!
//! Data flow: the export is loaded and every figure computed once ([`model`]: what the first
//! frame shows before it, the list, the outlook and the null model on workers); terminal events
//! become actions ([`event`], keys through the one key table [`keys`]) that change the state
//! ([`app`]); [`ui`] draws the state and
//! computes nothing. The terminal is restored on quit, on error, on panic and on SIGTERM, SIGHUP
//! or SIGINT; a dashboard whose terminal goes away (session closed, connection dropped) exits
//! within a second, as it does on those signals, even when reading the terminal hangs
//! (see [`watchdog`]).

pub mod app;
pub mod event;
pub mod keys;
pub mod model;
pub mod panes;
pub mod state;
pub mod theme;
pub mod ui;
pub mod watchdog;

use std::io::IsTerminal;
use std::path::PathBuf;
use std::sync::atomic::{AtomicUsize, Ordering};
use std::sync::Arc;
use std::time::Duration;

use crossterm::event::{DisableMouseCapture, EnableMouseCapture, Event};
use crossterm::execute;
use crossterm::terminal::{
    disable_raw_mode, enable_raw_mode, EnterAlternateScreen, LeaveAlternateScreen,
};
use ratatui::backend::CrosstermBackend;
use ratatui::Terminal;

use crate::analysis::ranking::RankRequest;
use crate::config::Config;
use crate::error::{Error, Result};
use crate::ingest::{Input, LoadOptions};
use crate::workspace::Workspace;

use app::App;
use model::Model;
use theme::Theme;

/// True when NO_COLOR is set to a non-empty value (no-color.org).
pub fn no_color() -> bool {
    std::env::var_os("NO_COLOR").is_some_and(|v| !v.is_empty())
}

/// True when both stdin and stdout are terminals (else the default action prints the summary).
pub fn interactive() -> bool {
    std::io::stdin().is_terminal() && std::io::stdout().is_terminal()
}

/// What the dashboard opens: the inputs and every setting, decided by the caller.
#[derive(Debug, Clone)]
pub struct Start {
    /// Export files or folders.
    pub inputs: Vec<Input>,
    /// The effective configuration.
    pub config: Config,
    /// Loading options.
    pub load: LoadOptions,
    /// How to rank.
    pub rank: RankRequest,
    /// The workspace file (it need not exist yet).
    pub workspace: PathBuf,
}

/// Load, compute and build the state (everything before the first frame).
pub fn prepare(start: &Start) -> Result<(Model, App)> {
    let d = crate::dataset::load(&start.inputs, &start.config, &start.load)?;
    if std::io::stderr().is_terminal() {
        eprintln!(
            "hubwatch: {} people, {} contacts loaded; computing statistics …",
            d.people(),
            d.edges.len()
        );
    }
    let ws_path = start.workspace.clone();
    let states = if ws_path.exists() {
        Workspace::open(&ws_path)?.all()?
    } else {
        Vec::new()
    };
    let export_dir = ws_path
        .parent()
        .filter(|p| !p.as_os_str().is_empty())
        .map(|p| p.to_path_buf())
        .unwrap_or_else(|| PathBuf::from("."));
    let model = Model::build(
        d,
        &start.rank,
        &states,
        ws_path,
        export_dir,
        &start.config.dashboard,
        &start.config.workspace,
    )?;
    let app = App::new(&model, states);
    Ok((model, app))
}

fn restore_terminal() {
    let _ = disable_raw_mode();
    let _ = execute!(std::io::stdout(), DisableMouseCapture, LeaveAlternateScreen);
    let _ = execute!(std::io::stdout(), crossterm::cursor::Show);
}

/// Restores the terminal when dropped (normal return, error, or unwinding panic).
struct Guard;

impl Drop for Guard {
    fn drop(&mut self) {
        restore_terminal();
    }
}

/// Signals and a lost terminal ask the loop to stop (so the terminal is restored on the way
/// out), and the watchdog ends the process if the loop cannot (a read of a dead terminal
/// hangs); a panic restores the terminal before its message is printed.
fn watch_signals() -> Result<Arc<AtomicUsize>> {
    let stop = Arc::new(AtomicUsize::new(0));
    for sig in [
        signal_hook::consts::SIGTERM,
        signal_hook::consts::SIGHUP,
        signal_hook::consts::SIGINT,
    ] {
        signal_hook::flag::register_usize(sig, Arc::clone(&stop), sig as usize)
            .map_err(|e| Error::Usage(format!("cannot watch signals: {e}")))?;
    }
    watchdog::start(Arc::clone(&stop), restore_terminal);
    // Panics: restore before the message is printed (the guard also runs while unwinding).
    // Only a panic of the thread that draws restores the terminal: a worker's panic must not
    // touch it (the terminal belongs to the loop, which may hold what restoring needs), and
    // its worker reports the failure in the pane instead.
    let ui = std::thread::current().id();
    let previous = std::panic::take_hook();
    std::panic::set_hook(Box::new(move |info| {
        if std::thread::current().id() == ui {
            restore_terminal();
        }
        previous(info);
    }));
    Ok(stop)
}

/// Open the dashboard.
pub fn run(start: Start) -> Result<()> {
    if !interactive() {
        return Err(Error::Usage(
            "the dashboard needs a terminal; use `hubwatch summary` (or priority, outlook, export) in scripts".into(),
        ));
    }
    let progress = std::io::stderr().is_terminal();
    if progress {
        eprintln!("hubwatch: loading …");
    }
    let t = std::time::Instant::now();
    let (model, mut app) = prepare(&start)?;
    if progress {
        eprintln!(
            "hubwatch: ready in {:.1} s ({} people, {} contacts); opening the dashboard",
            t.elapsed().as_secs_f64(),
            model.d.people(),
            model.d.edges.len()
        );
    }
    let theme = Theme::pick(&model.theme, no_color());
    let model = Arc::new(model);
    app.shared = Some(Arc::clone(&model));
    let stop = watch_signals()?;
    let io = |e: std::io::Error| Error::Usage(format!("terminal: {e}"));
    enable_raw_mode().map_err(io)?;
    let _guard = Guard;
    execute!(std::io::stdout(), EnterAlternateScreen, EnableMouseCapture).map_err(io)?;
    let mut terminal = Terminal::new(CrosstermBackend::new(std::io::stdout())).map_err(io)?;
    terminal.clear().map_err(io)?;
    let size = terminal.size().map_err(io)?;
    app.act(&model, keys::Action::Resize(size.width, size.height));
    let mut dirty = true;
    let mut null_shown = model.null.get().is_some();
    let mut day_shown = model.day.get().is_some();
    while !app.quit && stop.load(Ordering::Relaxed) == 0 {
        if dirty {
            terminal
                .draw(|f| ui::draw(f, &model, &app, &theme))
                .map_err(io)?;
            dirty = false;
            // Hidden hook for the end-to-end test that a panic restores the terminal.
            if std::env::var_os("HUBWATCH_TEST_PANIC").is_some() {
                panic!("panic requested by HUBWATCH_TEST_PANIC");
            }
        }
        if app.poll_jobs(&model) || app.catch_up(&model) {
            dirty = true;
        }
        // Shorter waits while work the panes show is on its way.
        let wait = if app.scope_pending.is_some() || !app.listed {
            30
        } else {
            200
        };
        let ready = match crossterm::event::poll(Duration::from_millis(wait)) {
            Ok(r) => r,
            // A read error is the terminal going away: stop (the guard restores what it can).
            Err(_) => break,
        };
        if !ready {
            // Redraw once when the background null model arrives, and once when the day's
            // work does (it comes after the null model: without its own redraw it could wait
            // for a key).
            if !null_shown && model.null.get().is_some() {
                null_shown = true;
                dirty = true;
            }
            if !day_shown && model.day.get().is_some() {
                day_shown = true;
                dirty = true;
            }
            continue;
        }
        match crossterm::event::read() {
            Ok(ev) => dirty = handle_event(&model, &mut app, ev),
            Err(_) => break,
        }
    }
    drop(terminal);
    Ok(())
}

/// Apply one terminal event to the state; true when a redraw is needed.
pub fn handle_event(model: &Model, app: &mut App, ev: Event) -> bool {
    let actions = event::actions(event::Context::of(app), &ev);
    let redraw = !actions.is_empty() || matches!(ev, Event::Key(_));
    for action in actions {
        app.act(model, action);
    }
    redraw
}
