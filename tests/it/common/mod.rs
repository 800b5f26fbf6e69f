//! Helpers shared by the integration tests.
#![allow(dead_code)]

use std::path::{Path, PathBuf};

use hubwatch::config::Config;
use hubwatch::dataset::{self, Dataset};
use hubwatch::ingest::{dates, mapping, table::ReadOptions, Input, LoadOptions};

/// Write `contents` to the file `name` in `dir`; its path.
pub fn write(dir: &Path, name: &str, contents: impl AsRef<[u8]>) -> PathBuf {
    let p = dir.join(name);
    std::fs::write(&p, contents).unwrap();
    p
}

/// The quarantined rows of a load: (line, reason code), in the ledger's order.
pub fn quarantined(d: &Dataset) -> Vec<(u64, &'static str)> {
    d.ledger
        .quarantined
        .iter()
        .map(|q| (q.line, q.reason.code()))
        .collect()
}

/// The shared reference folder beside the checkout, if present.
pub fn shared() -> Option<PathBuf> {
    let p = Path::new(env!("CARGO_MANIFEST_DIR")).join("../shared");
    p.is_dir().then_some(p)
}

/// Say that a test needs `../shared` and did not run: "SKIPPED: reason" on stderr, or, when
/// `HUBWATCH_REQUIRE_SHARED` is set (CI sets it), a failure: a missing folder must not pass.
pub fn skip(reason: &str) {
    if std::env::var_os("HUBWATCH_REQUIRE_SHARED").is_some_and(|v| !v.is_empty()) {
        panic!("needed and missing: {reason} (HUBWATCH_REQUIRE_SHARED is set)");
    }
    eprintln!("SKIPPED: {reason}");
}

/// A file under ../shared/reference/check-inputs.
pub fn check_input(name: &str) -> Option<PathBuf> {
    shared()
        .map(|s| s.join("reference/check-inputs").join(name))
        .filter(|p| p.exists())
}

/// Load paths with overrides like "source_id=2", as of 2030-01-01 unless given.
pub fn load_with(
    paths: &[&Path],
    overrides: &[&str],
    config: &Config,
) -> hubwatch::error::Result<Dataset> {
    let opts = LoadOptions {
        overrides: overrides
            .iter()
            .map(|o| mapping::parse_override(o).unwrap())
            .collect(),
        as_of: dates::parse_iso("2030-01-01").unwrap(),
        read: ReadOptions::default(),
        progress: false,
        view: Default::default(),
    };
    let inputs: Vec<Input> = paths.iter().map(|p| Input::Path(p.to_path_buf())).collect();
    dataset::load(&inputs, config, &opts)
}

/// Load with the default configuration.
pub fn load(paths: &[&Path], overrides: &[&str]) -> Dataset {
    load_with(paths, overrides, &Config::default()).unwrap_or_else(|e| panic!("load failed: {e}"))
}

/// Degree of a person by ID.
pub fn degree(d: &Dataset, id: &str) -> usize {
    let n = d.ids.get(id).unwrap_or_else(|| panic!("no person {id}"));
    d.graph.out_degree(n)
}

/// The edge set as sorted (id, id, rows) triples, IDs in sorted order within a pair.
pub fn edge_set(d: &Dataset) -> Vec<(String, String, u32)> {
    let mut v: Vec<(String, String, u32)> = (0..d.edges.len())
        .map(|e| {
            let (a, b) = (
                d.ids.name(d.edges.a[e]).to_string(),
                d.ids.name(d.edges.b[e]).to_string(),
            );
            let (a, b) = if a < b { (a, b) } else { (b, a) };
            (a, b, d.edges.rows[e])
        })
        .collect();
    v.sort();
    v
}

/// Assert that every file's ledger balances.
pub fn assert_balanced(d: &Dataset) {
    for f in &d.ledger.files {
        assert!(f.counts.balanced(), "{}: {:?}", f.path.display(), f.counts);
    }
    assert!(d.ledger.people.balanced() && d.ledger.exposures.balanced());
}

/// Load with a sub-network view.
pub fn load_view(paths: &[&Path], view: hubwatch::ingest::View) -> Dataset {
    let opts = LoadOptions {
        overrides: Vec::new(),
        as_of: dates::parse_iso("2030-01-01").unwrap(),
        read: ReadOptions::default(),
        progress: false,
        view,
    };
    let inputs: Vec<Input> = paths.iter().map(|p| Input::Path(p.to_path_buf())).collect();
    dataset::load(&inputs, &Config::default(), &opts).unwrap_or_else(|e| panic!("load failed: {e}"))
}

/// Run the built binary; (exit code, stdout, stderr).
pub fn hubwatch(args: &[&str]) -> (i32, String, String) {
    let out = std::process::Command::new(env!("CARGO_BIN_EXE_hubwatch"))
        .args(args)
        .output()
        .expect("run hubwatch");
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}
