//! `hubwatch-bench`: load-pipeline benchmark against a Python polars reference.
//!
//! ```text
//! cargo run --release --bin hubwatch-bench -- [--sizes 100000,1000000,10000000] [--dir DIR] [--repeat 3] [--no-reference]
//! ```
//!
//! For each size it writes a synth export (people = rows / 6.8, the generator's ratio), then in
//! a child process (so that peak memory is per run) loads it through the whole pipeline and
//! reports per stage: wall time, rows per second and peak resident memory, plus the floor
//! (reading the file's bytes). In the same run it times `bench/reference.py` (Python polars in a
//! throw-away virtual environment) on the same files and prints the ratio. Each figure is the
//! best of `--repeat` runs: noise on a shared machine only ever adds time. A second table
//! compares petgraph's `Csr` (used) with its `Graph` built from the same pairs.

use std::path::{Path, PathBuf};
use std::process::Command;
use std::time::Instant;

use hubwatch::config::Config;
use hubwatch::dataset::{self, Dataset};
use hubwatch::ingest::{Input, LoadOptions};
use serde_json::{json, Value};

/// Build petgraph's adjacency-list `Graph` from the same pairs and time, on both structures,
/// the walk the statistics make: every person's contacts and their degrees (the sum over
/// people of their contacts' degrees). Returns (Graph build s, Graph walk s, Csr walk s).
fn graph_alternative(d: &Dataset) -> (f64, f64, f64) {
    use petgraph::graph::{Graph, NodeIndex};
    let t = Instant::now();
    let mut g: Graph<(), u32, petgraph::Undirected, u32> =
        Graph::with_capacity(d.people(), d.edges.len());
    for _ in 0..d.people() {
        g.add_node(());
    }
    for e in 0..d.edges.len() {
        g.add_edge(
            NodeIndex::new(d.edges.a[e] as usize),
            NodeIndex::new(d.edges.b[e] as usize),
            e as u32,
        );
    }
    let build = t.elapsed().as_secs_f64();
    let t = Instant::now();
    let deg: Vec<u64> = g
        .node_indices()
        .map(|n| g.neighbors(n).count() as u64)
        .collect();
    let sum_graph: u64 = g
        .node_indices()
        .map(|n| g.neighbors(n).map(|m| deg[m.index()]).sum::<u64>())
        .sum();
    let walk_graph = t.elapsed().as_secs_f64();
    let t = Instant::now();
    let c = &d.graph;
    let deg: Vec<u64> = (0..c.node_count() as u32)
        .map(|n| c.out_degree(n) as u64)
        .collect();
    let sum_csr: u64 = (0..c.node_count() as u32)
        .map(|n| {
            c.neighbors_slice(n)
                .iter()
                .map(|&m| deg[m as usize])
                .sum::<u64>()
        })
        .sum();
    let walk_csr = t.elapsed().as_secs_f64();
    assert_eq!(sum_graph, sum_csr, "both structures hold the same graph");
    (build, walk_graph, walk_csr)
}

/// Bytes of each structure's arrays (u32 indices and weights): Csr keeps row offsets and two
/// (neighbour, weight) entries per pair; Graph keeps two list heads per node and, per pair, a
/// weight, two endpoints and two next-links.
fn structure_bytes(d: &Dataset) -> (usize, usize) {
    let (n, m) = (d.people(), d.edges.len());
    ((n + 1) * 4 + m * 2 * 8, n * 8 + m * 20)
}

/// Child mode: load one export and print a JSON line of timings.
fn one(dir: &Path) -> Result<(), String> {
    let t = Instant::now();
    let bytes = std::fs::read(dir.join("exposures.csv")).map_err(|e| e.to_string())?;
    let floor = t.elapsed().as_secs_f64();
    let size = bytes.len();
    drop(bytes);
    let opts = LoadOptions::new(hubwatch::cli::today());
    let t = Instant::now();
    let d = dataset::load(&[Input::Path(dir.to_path_buf())], &Config::default(), &opts)
        .map_err(|e| e.to_string())?;
    let total = t.elapsed().as_secs_f64();
    // Every statistic but the null model, then the null model alone (default settings) where
    // the export is small enough for it to be asked for.
    let t = Instant::now();
    let no_null = hubwatch::analysis::stats::MetricOptions {
        null_replicates: 0,
        ..Default::default()
    };
    let stats = hubwatch::analysis::stats::compute(&d, &no_null);
    let stats_seconds = t.elapsed().as_secs_f64();
    // Ranking everyone with the default preset (after the statistics it reads).
    let config =
        hubwatch::analysis::priority::PriorityConfig::load(None).map_err(|e| e.to_string())?;
    let preset = config
        .preset("balanced")
        .map_err(|e| e.to_string())?
        .clone();
    let t = Instant::now();
    let ranked =
        hubwatch::analysis::ranking::rank(&d, &stats, &config, &preset, 14, &Default::default())
            .map_err(|e| e.to_string())?;
    let rank_seconds = t.elapsed().as_secs_f64();
    std::hint::black_box(&ranked);
    // The first 1,000 only, as `priority --top 1000` asks for them (settings loaded as well).
    let t = Instant::now();
    let top = hubwatch::analysis::ranking::rank_list(
        &d,
        &stats,
        &hubwatch::analysis::ranking::RankRequest {
            top: Some(1000),
            ..Default::default()
        },
        &[],
    )
    .map_err(|e| e.to_string())?;
    let rank_top_seconds = t.elapsed().as_secs_f64();
    std::hint::black_box(&top.ranked);
    let null_seconds = if d.ledger.exposures.read <= 2_000_000 {
        null_model_seconds(&d)
    } else {
        f64::NAN
    };
    // Outlook: full reach curves (everyone) for the degree and acquaintance strategies (one
    // order each), and the S(T) curve of 101 points; baseline in the same process: one
    // connected-components pass over the same graph.
    let t = Instant::now();
    std::hint::black_box(hubwatch::graph::components(&d.graph));
    let components_seconds = t.elapsed().as_secs_f64();
    let t = Instant::now();
    let order = hubwatch::metrics::reach::degree_order(&d.graph, &d.ids);
    let curve = hubwatch::metrics::reach::reach_curve(&d.graph, &order);
    std::hint::black_box(&curve);
    let degree_curve_seconds = t.elapsed().as_secs_f64();
    let t = Instant::now();
    let mut rng = <rand_chacha::ChaCha8Rng as rand::SeedableRng>::seed_from_u64(1);
    let order = hubwatch::metrics::reach::acquaintance_order(&d.graph, &mut rng);
    let curve = hubwatch::metrics::reach::reach_curve(&d.graph, &order);
    std::hint::black_box(&curve);
    let acquaintance_curve_seconds = t.elapsed().as_secs_f64();
    let p = hubwatch::metrics::degree::degree_stats(d.graph.degrees()).p();
    let t = Instant::now();
    std::hint::black_box(hubwatch::metrics::outlook::curve(&p, 101));
    let t_curve_seconds = t.elapsed().as_secs_f64();
    // Chains from every case: forward (default generations) and backward, with the windows of
    // the default pathogen.
    let (chains_forward_seconds, chains_backward_seconds, chains_reached, chains_sources) = {
        use hubwatch::analysis::chains::{self, ChainRequest, People, Windows};
        let w = Windows::settle(&config, &ChainRequest::default()).map_err(|e| e.to_string())?;
        let t = Instant::now();
        let people = People::of(&d);
        let cases = people.cases();
        let f = chains::forward(&d, &people, &w, &cases);
        let fs = t.elapsed().as_secs_f64();
        let t = Instant::now();
        let b = chains::backward(&d, &people, &w, &cases);
        (
            fs,
            t.elapsed().as_secs_f64(),
            f.reached.len(),
            b.sources.len(),
        )
    };
    let (graph_build, graph_walk, csr_walk) = graph_alternative(&d);
    let (csr_bytes, graph_bytes) = structure_bytes(&d);
    let out = json!({
        "rows": d.ledger.exposures.read, "bytes": size, "people": d.people(), "pairs": d.edges.len(),
        "floor": floor, "total": total, "stages": d.timings,
        "stats_seconds": stats_seconds, "rank_seconds": rank_seconds, "rank_top_seconds": rank_top_seconds, "ranked": ranked.len(), "null_seconds": null_seconds, "peak_after_stats": hubwatch::ingest::peak_mib(),
        "csr_bytes": csr_bytes, "csr_walk": csr_walk,
        "components_seconds": components_seconds, "degree_curve_seconds": degree_curve_seconds,
        "acquaintance_curve_seconds": acquaintance_curve_seconds, "t_curve_seconds": t_curve_seconds, "max_degree": p.len() - 1,
        "chains_forward_seconds": chains_forward_seconds, "chains_backward_seconds": chains_backward_seconds,
        "chains_reached": chains_reached, "chains_sources": chains_sources,
        "graph_build": graph_build, "graph_walk": graph_walk, "graph_bytes": graph_bytes,
    });
    println!("{out}");
    Ok(())
}

fn venv_python() -> Result<PathBuf, String> {
    let venv = std::env::temp_dir().join("hubwatch-bench-venv");
    let py = venv.join("bin/python");
    if !py.exists()
        && !Command::new("python3")
            .args(["-m", "venv"])
            .arg(&venv)
            .status()
            .map_err(|e| e.to_string())?
            .success()
    {
        return Err("python3 -m venv failed".into());
    }
    if !Command::new(&py)
        .args(["-m", "pip", "install", "-q", "polars"])
        .status()
        .map_err(|e| e.to_string())?
        .success()
    {
        return Err("pip install polars failed (is the package registry reachable?)".into());
    }
    Ok(py)
}

/// Best (fastest) of `repeat` child runs.
fn run_child(exe: &Path, dir: &Path, repeat: usize) -> Value {
    let mut best: Option<Value> = None;
    for _ in 0..repeat {
        let out = Command::new(exe)
            .arg("--one")
            .arg(dir)
            .output()
            .expect("run child");
        if !out.status.success() {
            eprintln!("{}", String::from_utf8_lossy(&out.stderr));
            std::process::exit(1);
        }
        let v: Value = serde_json::from_slice(&out.stdout).expect("child JSON");
        if best
            .as_ref()
            .is_none_or(|b| v["total"].as_f64() < b["total"].as_f64())
        {
            best = Some(v);
        }
    }
    best.expect("at least one run")
}

/// Best of `repeat` reference runs of `script` under bench/: (seconds, peak MiB).
fn run_reference(py: &Path, script: &str, dir: &Path, repeat: usize, pairs: &Value) -> (f64, f64) {
    let script = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("bench")
        .join(script);
    let mut best = (f64::NAN, f64::NAN);
    for _ in 0..repeat {
        let o = Command::new(py)
            .arg(&script)
            .arg(dir.join("people.csv"))
            .arg(dir.join("exposures.csv"))
            .output()
            .expect("python");
        let r: Value = serde_json::from_slice(&o.stdout).unwrap_or_default();
        if r["pairs"] != *pairs {
            eprintln!(
                "warning: reference found {} pairs, hubwatch {pairs}",
                r["pairs"]
            );
        }
        let secs = r["seconds"].as_f64().unwrap_or(f64::NAN);
        if best.0.is_nan() || secs < best.0 {
            best = (secs, r["peak_mib"].as_f64().unwrap_or(f64::NAN));
        }
    }
    best
}

/// The load benchmark: synth exports of each size, hubwatch and the Python polars reference.
#[derive(clap::Parser)]
struct Args {
    /// Exposure rows of each export, comma-separated.
    #[arg(long, value_delimiter = ',', default_value = "100000,1000000,10000000")]
    sizes: Vec<usize>,
    /// Where the exports are written (and reused).
    #[arg(long, default_value = "bench-data")]
    dir: PathBuf,
    /// Runs per size (the best is reported).
    #[arg(long, default_value_t = 3)]
    repeat: usize,
    /// Skip the Python reference.
    #[arg(long)]
    no_reference: bool,
    /// Internal: time one load of DIR in this process and print JSON.
    #[arg(long)]
    one: Option<PathBuf>,
}

fn main() {
    let args = <Args as clap::Parser>::parse();
    if let Some(dir) = &args.one {
        if let Err(e) = one(dir) {
            eprintln!("hubwatch-bench: {e}");
            std::process::exit(1);
        }
        return;
    }
    let (sizes, base, repeat) = (args.sizes, args.dir, args.repeat.max(1));
    let py = if args.no_reference {
        None
    } else {
        match venv_python() {
            Ok(p) => Some(p),
            Err(e) => {
                eprintln!("hubwatch-bench: reference unavailable: {e}");
                std::process::exit(1);
            }
        }
    };
    let exe = std::env::current_exe().expect("own path");
    println!("Best of {repeat} runs per size; peak MiB is resident memory after parse+check / merge / graph.\n");
    println!("| rows | MB | read bytes (floor) | parse | check+intern | merge pairs | graph | total | rows/s | peak MiB | reference (Python polars) | ref. peak MiB | reference / hubwatch |");
    println!("|---|---|---|---|---|---|---|---|---|---|---|---|---|");
    let mut tables = Tables::default();
    for rows in sizes {
        size(rows, &base, repeat, py.as_deref(), &exe, &mut tables);
    }
    print_tables(tables);
}

/// The rows of the later tables, gathered size by size.
#[derive(Default)]
struct Tables {
    graph: Vec<String>,
    outlook: Vec<String>,
    stats: Vec<String>,
}

/// One size: write the synth export if needed, time hubwatch and the reference, print the load
/// row and keep the others.
fn size(rows: usize, base: &Path, repeat: usize, py: Option<&Path>, exe: &Path, t: &mut Tables) {
    let dir = base.join(format!("synth-{rows}"));
    if !dir.join("exposures.csv").exists() {
        let t = Instant::now();
        let opts = hubwatch::synth::SynthOptions::new(
            (rows as f64 / 6.8) as usize,
            1,
            hubwatch::cli::today() - 1,
        );
        if let Err(e) = hubwatch::synth::generate(&dir, &opts) {
            eprintln!("hubwatch-bench: synth failed: {e}");
            std::process::exit(1);
        }
        eprintln!(
            "generated {} in {:.1} s",
            dir.display(),
            t.elapsed().as_secs_f64()
        );
    }
    let v = run_child(exe, &dir, repeat);
    let (ref_s, ref_peak) = py.as_ref().map_or((f64::NAN, f64::NAN), |py| {
        run_reference(py, "reference.py", &dir, repeat, &v["pairs"])
    });
    let (ref2_s, ref2_peak) = py.as_ref().map_or((f64::NAN, f64::NAN), |py| {
        run_reference(py, "reference_stats.py", &dir, repeat, &v["pairs"])
    });
    let whole =
        v["total"].as_f64().unwrap_or(f64::NAN) + v["stats_seconds"].as_f64().unwrap_or(f64::NAN);
    t.stats.push(format!(
        "| {} | {:.3} s | {:.3} s | {:.3} s | {:.0} | {:.3} s | {:.0} | {:.2}x | {} |",
        v["rows"],
        v["total"].as_f64().unwrap_or(f64::NAN),
        v["stats_seconds"].as_f64().unwrap_or(f64::NAN),
        whole,
        v["peak_after_stats"].as_f64().unwrap_or(f64::NAN),
        ref2_s,
        ref2_peak,
        ref2_s / whole,
        v["null_seconds"]
            .as_f64()
            .map_or("not run".to_string(), |x| format!("{x:.2} s")),
    ));
    let f = |k: &str| v[k].as_f64().unwrap_or(f64::NAN);
    let s = |k: &str| v["stages"][k].as_f64().unwrap_or(f64::NAN);
    let p = |i: usize| v["stages"]["peak_mib"][i].as_f64().unwrap_or(f64::NAN);
    let total = f("total");
    println!(
        "| {} | {:.0} | {:.3} s | {:.3} s | {:.3} s | {:.3} s | {:.3} s | {:.3} s | {:.2} M | {:.0} / {:.0} / {:.0} | {:.3} s | {:.0} | {:.2}x |",
        v["rows"], f("bytes") / 1e6, f("floor"), s("parse"), s("reconcile"), s("merge_pairs"), s("graph"), total,
        f("rows") / total / 1e6, p(0), p(1), p(2), ref_s, ref_peak, ref_s / total
    );
    t.outlook.push(format!(
        "| {} | {} | {:.3} s | {:.3} s ({:.1}x) | {:.3} s ({:.1}x) | {:.1} ms | {} |",
        v["rows"],
        v["people"],
        f("components_seconds"),
        f("degree_curve_seconds"),
        f("degree_curve_seconds") / f("components_seconds"),
        f("acquaintance_curve_seconds"),
        f("acquaintance_curve_seconds") / f("components_seconds"),
        f("t_curve_seconds") * 1e3,
        v["max_degree"],
    ));
    t.graph.push(format!(
        "| {} | {:.3} s | {:.3} s | {:.0} MiB | {:.3} s | {:.3} s | {:.0} MiB |",
        v["rows"],
        s("graph"),
        f("csr_walk"),
        f("csr_bytes") / 1048576.0,
        f("graph_build"),
        f("graph_walk"),
        f("graph_bytes") / 1048576.0
    ));
}

/// The statistics, outlook and adjacency tables.
fn print_tables(t: Tables) {
    println!("\nLoad plus every statistic but the null model, against bench/reference_stats.py (Python polars: load, degree histogram, contacts' mean degree, r, components)\n");
    println!("| rows | load | statistics | whole | peak MiB | reference | ref. peak MiB | reference / hubwatch | null model (5 x 10 swaps per pair) |");
    println!("|---|---|---|---|---|---|---|---|---|");
    for r in t.stats {
        println!("{r}");
    }
    println!("\nOutlook: full reach curves (everyone removed in order; one order each) and the S(T) curve of 101 points; ratio = time / one connected-components pass on the same graph\n");
    println!("| rows | people | components (baseline) | degree curve | acquaintance curve | S(T) 101 points | max degree |");
    println!("|---|---|---|---|---|---|---|");
    for r in t.outlook {
        println!("{r}");
    }
    println!("\nAdjacency: petgraph Csr (used) vs petgraph Graph from the same pairs; walk = every person's contacts' degrees\n");
    println!(
        "| rows | Csr build | Csr walk | Csr arrays | Graph build | Graph walk | Graph arrays |"
    );
    println!("|---|---|---|---|---|---|---|");
    for r in t.graph {
        println!("{r}");
    }
}

/// Seconds for the null model with the default settings.
fn null_model_seconds(d: &Dataset) -> f64 {
    let deg = d.graph.degrees();
    let o = hubwatch::analysis::stats::MetricOptions::default();
    let t = Instant::now();
    let null = hubwatch::metrics::mixing::null_model(
        &d.edges.a,
        &d.edges.b,
        deg,
        o.null_replicates,
        o.null_swaps_per_edge,
        o.seed,
    );
    std::hint::black_box(&null);
    t.elapsed().as_secs_f64()
}
