//! `hubwatch-bench`: load-pipeline benchmark against a Python polars reference.
//!
//! ```text
//! cargo run --release --bin hubwatch-bench -- [--sizes 100000,1000000,10000000] [--dir DIR] [--no-reference]
//! ```
//!
//! For each size it writes a synth export (people = rows / 6.8, the generator's ratio), then in
//! a child process (so that peak memory is per run) loads it through the whole pipeline and
//! reports per stage: wall time, rows per second, and peak resident memory, plus the floor
//! (reading the file's bytes). In the same run it times `bench/reference.py` (Python polars in a
//! throw-away virtual environment) on the same files and prints the ratio.

use std::path::{Path, PathBuf};
use std::process::Command;
use std::time::Instant;

use hubwatch::config::Config;
use hubwatch::ingest::{self, table::ReadOptions, Input, LoadOptions};

fn peak_mib() -> f64 {
    let status = std::fs::read_to_string("/proc/self/status").unwrap_or_default();
    status
        .lines()
        .find(|l| l.starts_with("VmHWM:"))
        .and_then(|l| l.split_whitespace().nth(1))
        .and_then(|v| v.parse::<f64>().ok())
        .map_or(f64::NAN, |kib| kib / 1024.0)
}

/// Child mode: load one export and print a JSON line of timings.
fn one(dir: &Path) -> Result<(), String> {
    let exposures = dir.join("exposures.csv");
    let t = Instant::now();
    let bytes = std::fs::read(&exposures).map_err(|e| e.to_string())?;
    let floor = t.elapsed().as_secs_f64();
    let size = bytes.len();
    drop(bytes);
    let opts = LoadOptions {
        overrides: Vec::new(),
        as_of: hubwatch::cli::today(),
        read: ReadOptions::default(),
        progress: false,
    };
    let t = Instant::now();
    let d = ingest::load(&[Input::Path(dir.to_path_buf())], &Config::default(), &opts)
        .map_err(|e| e.to_string())?;
    let total = t.elapsed().as_secs_f64();
    let out = serde_json::json!({
        "rows": d.ledger.exposures.read,
        "bytes": size,
        "people": d.people(),
        "pairs": d.edges.len(),
        "floor": floor,
        "total": total,
        "stages": d.timings,
        "peak_mib": peak_mib(),
    });
    println!("{out}");
    Ok(())
}

fn venv_python() -> Result<PathBuf, String> {
    let venv = std::env::temp_dir().join("hubwatch-bench-venv");
    let py = venv.join("bin/python");
    if !py.exists() {
        let ok = Command::new("python3")
            .args(["-m", "venv"])
            .arg(&venv)
            .status()
            .map_err(|e| e.to_string())?;
        if !ok.success() {
            return Err("python3 -m venv failed".into());
        }
    }
    let ok = Command::new(&py)
        .args(["-m", "pip", "install", "-q", "polars"])
        .status()
        .map_err(|e| e.to_string())?;
    if !ok.success() {
        return Err("pip install polars failed (is the package registry reachable?)".into());
    }
    Ok(py)
}

fn main() {
    let args: Vec<String> = std::env::args().collect();
    if let Some(i) = args.iter().position(|a| a == "--one") {
        if let Err(e) = one(Path::new(&args[i + 1])) {
            eprintln!("hubwatch-bench: {e}");
            std::process::exit(1);
        }
        return;
    }
    let get = |flag: &str| {
        args.iter()
            .position(|a| a == flag)
            .and_then(|i| args.get(i + 1))
            .cloned()
    };
    let sizes: Vec<usize> = get("--sizes")
        .unwrap_or_else(|| "100000,1000000,10000000".into())
        .split(',')
        .filter_map(|s| s.trim().parse().ok())
        .collect();
    let base = PathBuf::from(get("--dir").unwrap_or_else(|| "bench-data".into()));
    let reference = !args.iter().any(|a| a == "--no-reference");
    let py = if reference {
        match venv_python() {
            Ok(p) => Some(p),
            Err(e) => {
                eprintln!("hubwatch-bench: reference unavailable: {e}");
                std::process::exit(1);
            }
        }
    } else {
        None
    };
    let script = Path::new(env!("CARGO_MANIFEST_DIR")).join("bench/reference.py");
    let exe = std::env::current_exe().expect("own path");
    println!("| rows | MB | read bytes (floor) | parse | check+intern | merge pairs | graph | total | rows/s | peak MiB | reference | ref. peak MiB | ratio |");
    println!("|---|---|---|---|---|---|---|---|---|---|---|---|---|");
    for rows in sizes {
        let dir = base.join(format!("synth-{rows}"));
        if !dir.join("exposures.csv").exists() {
            let people = (rows as f64 / 6.8) as usize;
            let t = Instant::now();
            let end = hubwatch::cli::today() - 1;
            if let Err(e) =
                hubwatch::synth::generate(&dir, &hubwatch::synth::SynthOptions::new(people, 1, end))
            {
                eprintln!("hubwatch-bench: synth failed: {e}");
                std::process::exit(1);
            }
            eprintln!(
                "generated {} in {:.1} s",
                dir.display(),
                t.elapsed().as_secs_f64()
            );
        }
        let out = Command::new(&exe)
            .arg("--one")
            .arg(&dir)
            .output()
            .expect("run child");
        if !out.status.success() {
            eprintln!("{}", String::from_utf8_lossy(&out.stderr));
            std::process::exit(1);
        }
        let v: serde_json::Value = serde_json::from_slice(&out.stdout).expect("child JSON");
        let f = |k: &str| v[k].as_f64().unwrap_or(f64::NAN);
        let s = |k: &str| v["stages"][k].as_f64().unwrap_or(f64::NAN);
        let (reference_s, reference_peak) = match &py {
            Some(py) => {
                let o = Command::new(py)
                    .arg(&script)
                    .arg(dir.join("people.csv"))
                    .arg(dir.join("exposures.csv"))
                    .output()
                    .expect("python");
                let r: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap_or_default();
                if r["pairs"].as_u64() != v["pairs"].as_u64() {
                    eprintln!(
                        "warning: reference found {} pairs, hubwatch {}",
                        r["pairs"], v["pairs"]
                    );
                }
                (
                    r["seconds"].as_f64().unwrap_or(f64::NAN),
                    r["peak_mib"].as_f64().unwrap_or(f64::NAN),
                )
            }
            None => (f64::NAN, f64::NAN),
        };
        let total = f("total");
        println!(
            "| {} | {:.0} | {:.3} s | {:.3} s | {:.3} s | {:.3} s | {:.3} s | {:.3} s | {:.2} M | {:.0} | {:.3} s | {:.0} | {:.2}x |",
            v["rows"],
            f("bytes") / 1e6,
            f("floor"),
            s("parse"),
            s("reconcile"),
            s("merge_pairs"),
            s("graph"),
            total,
            f("rows") / total / 1e6,
            f("peak_mib"),
            reference_s,
            reference_peak,
            reference_s / total
        );
    }
}
