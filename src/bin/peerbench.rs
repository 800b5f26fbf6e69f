//! `hubwatch-peerbench`: the whole job against the Python peers, as users run it.
//!
//! ```text
//! cargo build --release --bins
//! target/release/hubwatch-peerbench --data DIR [--data DIR ...] [--runs 5] \
//!     [--python PYTHON] [--peers ../shared/bench/peers.py] [--stack polars]
//! ```
//!
//! For each export made by `../shared/bench/gen_export.py` it runs, alternately (A B A B …),
//! `hubwatch summary --null-replicates 0 --json` and `peers.py --stack polars` as whole
//! processes, measures each run with the kernel's accounting (wall, user and system CPU, peak
//! resident memory of the process), and prints medians and the median of the pairwise ratios,
//! with the CPU/wall of hubwatch's load alone (from its `HUBWATCH_STAGES` line); then the
//! dashboard's first frame (`hubwatch-dashbench --first-frame`, whole process). It
//! checks that both found the same people, contacts, r and components. Runs by hand, not in CI.

use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};
use std::time::Instant;

/// The column mapping of the generator's export.
const MAPPING: [&str; 6] = [
    "person_id=pid",
    "source_id=src",
    "target_id=dst",
    "exposure_date=last_contact",
    "duration_min=minutes",
    "setting=setting",
];

#[derive(clap::Parser)]
struct Args {
    /// An export written by gen_export.py (repeatable).
    #[arg(long, required = true)]
    data: Vec<PathBuf>,
    /// Counted runs of each command (after one warm-up of each).
    #[arg(long, default_value_t = 5)]
    runs: usize,
    /// Python with the peer's packages (polars, numpy, scipy).
    #[arg(long, default_value = "python3")]
    python: PathBuf,
    /// The peer script.
    #[arg(long, default_value = "../shared/bench/peers.py")]
    peers: PathBuf,
    /// The peer stack.
    #[arg(long, default_value = "polars")]
    stack: String,
}

/// One finished run: wall, user, system seconds and peak resident MiB.
#[derive(Clone, Copy)]
struct Run {
    wall: f64,
    user: f64,
    sys: f64,
    peak_mib: f64,
}

/// Run a command to completion with its output in `out` (its messages in `out` with the
/// extension `err`); the kernel's figures for it.
#[allow(clippy::zombie_processes)] // reaped by wait4 below
fn run(cmd: &mut Command, out: &Path) -> Run {
    let t = Instant::now();
    let err = std::fs::File::create(out.with_extension("err")).map_or(Stdio::null(), Stdio::from);
    let child = cmd
        .stdout(std::fs::File::create(out).expect("output file"))
        .stderr(err)
        .spawn()
        .expect("start");
    let mut status = 0;
    // SAFETY: wait4 on our own child into a zeroed rusage.
    let mut u: libc::rusage = unsafe { std::mem::zeroed() };
    unsafe { libc::wait4(child.id() as i32, &mut status, 0, &mut u) };
    let secs = |tv: libc::timeval| tv.tv_sec as f64 + tv.tv_usec as f64 * 1e-6;
    assert!(
        libc::WIFEXITED(status) && libc::WEXITSTATUS(status) == 0,
        "{cmd:?} failed"
    );
    Run {
        wall: t.elapsed().as_secs_f64(),
        user: secs(u.ru_utime),
        sys: secs(u.ru_stime),
        peak_mib: u.ru_maxrss as f64 / 1024.0,
    }
}

fn median(mut v: Vec<f64>) -> f64 {
    v.sort_by(|a, b| a.total_cmp(b));
    v[v.len() / 2]
}

fn bin(name: &str) -> PathBuf {
    std::env::current_exe()
        .expect("own path")
        .with_file_name(name)
}

fn hubwatch(dir: &Path) -> Command {
    let mut c = Command::new(bin("hubwatch"));
    c.env("HUBWATCH_STAGES", "1").arg("summary").arg(dir).args([
        "--null-replicates",
        "0",
        "--json",
    ]);
    for m in MAPPING {
        c.args(["--column", m]);
    }
    c
}

fn summarise(name: &str, v: &[Run]) -> String {
    let wall = median(v.iter().map(|r| r.wall).collect());
    let cpu = median(v.iter().map(|r| (r.user + r.sys) / r.wall).collect());
    let peak = median(v.iter().map(|r| r.peak_mib).collect());
    format!("{name}: {wall:.3} s wall, CPU/wall {cpu:.2}, peak {peak:.0} MiB")
}

/// The load's CPU/wall from the stage line hubwatch wrote next to its output `out`.
fn load_cpu_per_wall(out: &Path) -> Option<f64> {
    let text = std::fs::read_to_string(out.with_extension("err")).ok()?;
    let line = text.lines().find(|l| l.starts_with("stages:"))?;
    let after = line.split("CPU/wall ").nth(1)?;
    after.split(')').next()?.trim().parse().ok()
}

/// The figures both must agree on, from hubwatch's JSON and the peer's result.json.
fn same_results(ours: &Path, peer_dir: &Path) -> String {
    let read = |p: &Path| -> serde_json::Value {
        serde_json::from_str(&std::fs::read_to_string(p).expect("read")).expect("json")
    };
    let a = read(ours);
    let b = read(&peer_dir.join("result.json"));
    format!(
        "people {} / {}, contacts {} / {}, r {} / {}, components {} / {}",
        a["people"],
        b["nodes"],
        a["contacts"],
        b["edges"],
        a["assortativity"]["r"],
        b["assortativity_r"],
        a["components"]["count"],
        b["components"]
    )
}

fn one(args: &Args, dir: &Path) {
    let tmp = std::env::temp_dir().join(format!("hubwatch-peerbench-{}", std::process::id()));
    std::fs::create_dir_all(&tmp).expect("temp");
    let ours = tmp.join("ours.json");
    let peer_out = tmp.join("peer");
    let peer = || {
        let mut c = Command::new(&args.python);
        c.arg(&args.peers)
            .args(["--stack", &args.stack, "--out"])
            .arg(&peer_out)
            .arg(dir);
        c
    };
    // Warm-up of each (page cache, imports), then A B A B ...
    run(&mut hubwatch(dir), &ours);
    run(&mut peer(), &tmp.join("peer.txt"));
    let (mut a, mut b, mut ratio, mut load) = (Vec::new(), Vec::new(), Vec::new(), Vec::new());
    for _ in 0..args.runs {
        let x = run(&mut hubwatch(dir), &ours);
        load.extend(load_cpu_per_wall(&ours));
        let y = run(&mut peer(), &tmp.join("peer.txt"));
        ratio.push(x.wall / y.wall);
        a.push(x);
        b.push(y);
    }
    let mut ff = Vec::new();
    for _ in 0..args.runs.min(3) {
        let mut c = Command::new(bin("hubwatch-dashbench"));
        c.arg("--first-frame").arg(dir);
        for m in MAPPING {
            c.args(["--column", m]);
        }
        ff.push(run(&mut c, &tmp.join("ff.txt")));
    }
    let summary = median(a.iter().map(|r| r.wall).collect());
    let first = median(ff.iter().map(|r| r.wall).collect());
    println!("\n### {}\n", dir.display());
    println!(
        "- {}",
        summarise("hubwatch summary --null-replicates 0 --json", &a)
    );
    if !load.is_empty() {
        println!(
            "- hubwatch's load alone: CPU/wall {:.2} (min {:.2}, max {:.2})",
            median(load.clone()),
            load.iter().cloned().fold(f64::INFINITY, f64::min),
            load.iter().cloned().fold(0.0, f64::max)
        );
    }
    println!(
        "- {}",
        summarise(&format!("peers.py --stack {}", args.stack), &b)
    );
    println!(
        "- ratio hubwatch / peer (median of {} alternating pairs): {:.2} (min {:.2}, max {:.2})",
        ratio.len(),
        median(ratio.clone()),
        ratio.iter().cloned().fold(f64::INFINITY, f64::min),
        ratio.iter().cloned().fold(0.0, f64::max)
    );
    println!(
        "- dashboard first frame (whole process): {first:.3} s = {:.2} x the summary",
        first / summary
    );
    println!(
        "- same results (hubwatch / peer): {}",
        same_results(&ours, &peer_out)
    );
    let _ = std::fs::remove_dir_all(&tmp);
}
fn main() {
    let args = <Args as clap::Parser>::parse();
    for dir in &args.data {
        one(&args, dir);
    }
}
