//! Configuration files: the settings file and the priority settings file from any text.
//! Invariants: no panic; a file that loads validates.
#![no_main]

use hubwatch::analysis::priority::PriorityConfig;
use hubwatch::config::Config;
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let dir = tempfile::tempdir().expect("temp dir");
    let p = dir.path().join("c.toml");
    std::fs::write(&p, data).expect("write");
    if let Ok(c) = Config::load(Some(&p)) {
        c.validate().expect("a loaded configuration validates");
    }
    let _ = PriorityConfig::load(Some(&p));
});
