//! `hubwatch-dashbench`: how fast the dashboard answers, on synth exports.
//!
//! ```text
//! cargo run --release --bin hubwatch-dashbench -- [--sizes 1000000,10000000] [--dir bench-data]
//! ```
//!
//! For each size (exposure rows; the export is generated with `synth` if missing) it times
//! opening the export to the first frame (load, statistics, ranking, outlook, first draw into
//! ratatui's TestBackend at 200×60; the null model of r runs in the background and is not
//! waited for), then each pane's draw, then key presses: state update plus full redraw, per
//! kind of key. The baseline, run in the same process, is drawing a one-line frame at the same
//! size. Target (issue): every key under 16 ms at 10M rows; first frame under 3 s at 1M.

use std::path::{Path, PathBuf};
use std::time::Instant;

use hubwatch::config::Config;
use hubwatch::dataset;
use hubwatch::ingest::{Input, LoadOptions};
use hubwatch::tui::app::App;
use hubwatch::tui::keys::{Action, Pane};
use hubwatch::tui::model::Model;
use hubwatch::tui::theme::Theme;
use hubwatch::tui::ui;
use ratatui::backend::TestBackend;
use ratatui::Terminal;

const W: u16 = 200;
const H: u16 = 60;

fn median(v: &mut [f64]) -> f64 {
    v.sort_by(|a, b| a.total_cmp(b));
    v[v.len() / 2]
}

struct Bench {
    term: Terminal<TestBackend>,
    theme: Theme,
}

impl Bench {
    fn draw(&mut self, m: &Model, app: &App) -> f64 {
        let t = Instant::now();
        self.term
            .draw(|f| ui::draw(f, m, app, &self.theme))
            .expect("draw");
        t.elapsed().as_secs_f64()
    }

    /// State update plus redraw for one action; seconds.
    fn key(&mut self, m: &Model, app: &mut App, a: Action) -> f64 {
        let t = Instant::now();
        app.act(m, a);
        self.term
            .draw(|f| ui::draw(f, m, app, &self.theme))
            .expect("draw");
        t.elapsed().as_secs_f64()
    }
}

impl Bench {
    /// Show the Degrees pane after a filter change: the key, then the wait until the figures
    /// from the worker thread are drawn; (row name, seconds) each.
    fn degrees_after_filter(&mut self, m: &Model, app: &mut App) -> [(&'static str, f64); 2] {
        let key = self.key(m, app, Action::Go(Pane::Degrees));
        let t0 = Instant::now();
        while app.scope_pending.is_some() && !app.poll_jobs(m) {
            std::thread::sleep(std::time::Duration::from_millis(1));
        }
        self.draw(m, app);
        [
            (
                "show Degrees after a filter change (key; figures on a worker)",
                key,
            ),
            (
                "  ... until the recomputed figures are drawn (not a key press)",
                t0.elapsed().as_secs_f64(),
            ),
        ]
    }
}

fn ensure(dir: &Path, rows: usize) {
    if dir.join("exposures.csv").exists() {
        return;
    }
    let opts = hubwatch::synth::SynthOptions::new(
        (rows as f64 / 6.8) as usize,
        1,
        hubwatch::cli::today() - 1,
    );
    hubwatch::synth::generate(dir, &opts).expect("synth");
}

fn one(dir: &Path) {
    let ws_dir = tempfile_dir();
    let (m, mut app, mut b) = open(dir, &ws_dir);
    // The keys are timed once the outlook has arrived (the null model may still be running,
    // as a user would find it).
    let t = Instant::now();
    while m.plan().is_none() {
        std::thread::sleep(std::time::Duration::from_millis(10));
    }
    app.catch_up(&m);
    println!(
        "The outlook arrived from its worker {:.2} s after the first frame.\n",
        t.elapsed().as_secs_f64()
    );
    let base = pane_draws(&mut b, &m, &mut app);
    // Keys: state update + full redraw.
    let mut rows: Vec<(String, Vec<f64>)> = Vec::new();
    list_keys(&mut b, &m, &mut app, &mut rows);
    other_keys(&mut b, &m, &mut app, &mut rows);
    print_keys(rows, base);
    let _ = std::fs::remove_dir_all(&ws_dir);
}

/// One key's timing under its name.
fn record(rows: &mut Vec<(String, Vec<f64>)>, name: &str, secs: f64) {
    match rows.iter_mut().find(|r| r.0 == name) {
        Some(r) => r.1.push(secs),
        None => rows.push((name.to_string(), vec![secs])),
    }
}

/// Load, build the model and draw the first frame; print the open-to-first-frame time.
/// Then wait for the list (ranked on a worker after the first frame) and say when it came.
fn open(dir: &Path, ws_dir: &Path) -> (std::sync::Arc<Model>, App, Bench) {
    let (m, mut app, b, t) = open_with(dir, ws_dir, &[]);
    app.wait_listed(&m);
    println!(
        "Priority list ranked and taken up (its orders and filter index too) at {:.2} s.\n",
        t.elapsed().as_secs_f64()
    );
    (m, app, b)
}

fn open_with(
    dir: &Path,
    ws_dir: &Path,
    columns: &[String],
) -> (std::sync::Arc<Model>, App, Bench, Instant) {
    let t = Instant::now();
    let mut opts = LoadOptions::new(hubwatch::cli::today());
    opts.overrides = columns
        .iter()
        .map(|c| hubwatch::ingest::mapping::parse_override(c).expect("--column"))
        .collect();
    let d =
        dataset::load(&[Input::Path(dir.to_path_buf())], &Config::default(), &opts).expect("load");
    let load_s = t.elapsed().as_secs_f64();
    let config = Config::default();
    let m = std::sync::Arc::new(
        Model::build(
            d,
            &Default::default(),
            &[],
            ws_dir.join("ws.sqlite"),
            ws_dir.to_path_buf(),
            &config.dashboard,
            &config.workspace,
        )
        .expect("model"),
    );
    let mut app = App::new(&m, Vec::new());
    // As in the terminal: large filtered sets get their figures on a worker thread.
    app.shared = Some(std::sync::Arc::clone(&m));
    app.size = (W, H);
    let mut b = Bench {
        term: Terminal::new(TestBackend::new(W, H)).expect("terminal"),
        theme: Theme::dark(),
    };
    b.draw(&m, &app);
    let first = t.elapsed().as_secs_f64();
    println!(
        "\n### {} exposure rows ({} people, {} contacts)\n",
        m.d.ledger.exposures.read,
        m.d.people(),
        m.d.edges.len()
    );
    println!(
        "Open to first frame: {first:.2} s (load {load_s:.2} s, statistics {:.2} s, first draw the rest); the list, the outlook and the null model still running on workers.\n",
        m.compute_seconds
    );
    (m, app, b, t)
}

/// Each pane's draw time against a one-line frame; returns the baseline.
fn pane_draws(b: &mut Bench, m: &Model, app: &mut App) -> f64 {
    // Baseline: a one-line frame.
    let mut base = Vec::new();
    for _ in 0..50 {
        let t = Instant::now();
        b.term
            .draw(|f| {
                f.render_widget(ratatui::widgets::Paragraph::new("x"), f.area());
            })
            .expect("draw");
        base.push(t.elapsed().as_secs_f64());
    }
    let base = median(&mut base);
    println!(
        "Baseline (one-line frame at {W}×{H}): {:.3} ms\n",
        base * 1e3
    );
    println!("| pane | draw (median of 20) | / baseline |");
    println!("|---|---|---|");
    for p in Pane::ALL {
        app.act(m, Action::Go(p));
        if p == Pane::Person && app.person.is_none() {
            app.act(m, Action::Go(Pane::Priority));
            app.act(m, Action::Open);
        }
        let mut v: Vec<f64> = (0..20).map(|_| b.draw(m, app)).collect();
        let md = median(&mut v);
        println!("| {} | {:.2} ms | {:.0}x |", p.name(), md * 1e3, md / base);
    }
    base
}

/// Time each step (row name, action, presses): the state update plus a full redraw per press.
fn press(
    b: &mut Bench,
    m: &Model,
    app: &mut App,
    rows: &mut Vec<(String, Vec<f64>)>,
    steps: &[(&str, Action, usize)],
) {
    for &(name, action, times) in steps {
        for _ in 0..times {
            let t = b.key(m, app, action);
            record(rows, name, t);
        }
    }
}

/// Keys on the priority list: moving, filters, sorts.
fn list_keys(b: &mut Bench, m: &Model, app: &mut App, rows: &mut Vec<(String, Vec<f64>)>) {
    for p in Pane::ALL {
        press(b, m, app, rows, &[("switch pane (1-7)", Action::Go(p), 1)]);
    }
    app.act(m, Action::Go(Pane::Priority));
    press(
        b,
        m,
        app,
        rows,
        &[
            ("priority: ↓", Action::Down, 50),
            ("priority: PgDn", Action::PageDown, 20),
            ("priority: End / Home", Action::End, 1),
            ("priority: End / Home", Action::Home, 1),
            ("priority: role filter (r)", Action::FilterRole, 3),
            ("priority: window filter (w)", Action::FilterWindow, 1),
        ],
    );
    for (name, t) in b.degrees_after_filter(m, app) {
        record(rows, name, t);
    }
    app.act(m, Action::Go(Pane::Priority));
    // The first sorts by each column, then every column again (orders are kept).
    press(
        b,
        m,
        app,
        rows,
        &[
            ("clear filters (x)", Action::ClearFilters, 1),
            (
                "priority: sort by ID, then contacts (s), first time",
                Action::SortNext,
                2,
            ),
            ("priority: reverse sort (S)", Action::SortReverse, 1),
            (
                "priority: sort (s), the other five columns, first time",
                Action::SortNext,
                5,
            ),
            (
                "priority: sort (s), every column again (kept)",
                Action::SortNext,
                7,
            ),
        ],
    );
}

/// Search, the person walk, the outlook, the charts and the clusters.
fn other_keys(b: &mut Bench, m: &Model, app: &mut App, rows: &mut Vec<(String, Vec<f64>)>) {
    while app.sort.0 != hubwatch::tui::app::SortCol::Rank {
        app.act(m, Action::SortNext);
    }
    app.act(m, Action::Search);
    let ranked = &m.wait_listed().expect("list").list.ranked;
    let target = m.d.ids.name(ranked[ranked.len() / 2].node).to_string();
    for c in target.chars() {
        press(
            b,
            m,
            app,
            rows,
            &[("search: one character typed", Action::Type(c), 1)],
        );
    }
    app.act(m, Action::Submit);
    press(
        b,
        m,
        app,
        rows,
        &[
            ("open person (Enter)", Action::Open, 1),
            ("person: ↓ contacts", Action::Down, 5),
            ("person: open contact (Enter)", Action::Open, 1),
            ("person: back (Backspace)", Action::Back, 1),
        ],
    );
    app.act(m, Action::Go(Pane::Outlook));
    press(b, m, app, rows, &[("outlook: T + 0.01", Action::TUp, 20)]);
    app.act(m, Action::Go(Pane::Degrees));
    press(
        b,
        m,
        app,
        rows,
        &[
            ("degrees: log scale / cut-off", Action::LogScale, 1),
            ("degrees: log scale / cut-off", Action::Cutoff, 1),
        ],
    );
    app.act(m, Action::Go(Pane::Clusters));
    press(b, m, app, rows, &[("clusters: ↓", Action::Down, 1)]);
    app.act(m, Action::Home);
    press(
        b,
        m,
        app,
        rows,
        &[("clusters: select the largest (Enter)", Action::Open, 1)],
    );
    for (name, t) in b.degrees_after_filter(m, app) {
        record(rows, name, t);
    }
    app.act(m, Action::Go(Pane::Clusters));
    press(
        b,
        m,
        app,
        rows,
        &[("clear filters (x)", Action::ClearFilters, 1)],
    );
}

/// The table of key timings.
fn print_keys(rows: Vec<(String, Vec<f64>)>, base: f64) {
    println!("\n| key (state update + full redraw) | presses | median | max | / baseline (median) | under 16 ms |");
    println!("|---|---|---|---|---|---|");
    for (name, mut v) in rows {
        let n = v.len();
        let max = v.iter().cloned().fold(0.0, f64::max);
        let md = median(&mut v);
        println!(
            "| {name} | {n} | {:.2} ms | {:.2} ms | {:.0}x | {} |",
            md * 1e3,
            max * 1e3,
            md / base,
            if name.starts_with("  ...") {
                "–"
            } else if max < 0.016 {
                "yes"
            } else {
                "no"
            }
        );
    }
}

fn tempfile_dir() -> PathBuf {
    let d = std::env::temp_dir().join(format!("hubwatch-dashbench-{}", std::process::id()));
    std::fs::create_dir_all(&d).expect("temp dir");
    d
}

/// The dashboard benchmark: open, draw every pane, press keys, on synth exports of each size.
#[derive(clap::Parser)]
struct Args {
    /// Exposure rows of each export, comma-separated.
    #[arg(long, value_delimiter = ',', default_value = "1000000,10000000")]
    sizes: Vec<usize>,
    /// Where the exports are written (and reused).
    #[arg(long, default_value = "bench-data")]
    dir: PathBuf,
    /// Only open this export to its first frame and exit (timed from outside as a whole
    /// process by the peer benchmark).
    #[arg(long, value_name = "DIR")]
    first_frame: Option<PathBuf>,
    /// Column mapping for --first-frame, as for hubwatch (repeatable).
    #[arg(long = "column", value_name = "FIELD=HEADER")]
    columns: Vec<String>,
}

fn main() {
    let args = <Args as clap::Parser>::parse();
    if let Some(dir) = &args.first_frame {
        let ws = tempfile_dir();
        let _ = open_with(dir, &ws, &args.columns);
        let _ = std::fs::remove_dir_all(ws);
        // The list, the outlook and the null model may still run on workers: leave without
        // waiting, as a user would see the frame.
        std::process::exit(0);
    }
    for rows in args.sizes {
        let dir = args.dir.join(format!("synth-{rows}"));
        ensure(&dir, rows);
        one(&dir);
    }
}
