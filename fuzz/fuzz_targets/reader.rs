//! The reader on any bytes: the first byte picks the format and dialect (delimited text with
//! each separator, header and encoding setting, gzip of that text, raw gzip, NDJSON, xlsx,
//! Parquet); the rest is the file. Invariants: no panic, no hang, and for every input that is
//! read at all, every file's ledger balances (read = used + merged + quarantined).
#![no_main]

use std::io::Write;

use hubwatch::config::Config;
use hubwatch::ingest::{dates, Input, LoadOptions};
use libfuzzer_sys::fuzz_target;

const SEPARATORS: [&str; 6] = ["auto", ",", ";", "\t", "|", "whitespace"];
const ENCODINGS: [&str; 4] = ["auto", "utf-8", "windows-1252", "utf-16le"];
const HEADERS: [&str; 3] = ["auto", "yes", "no"];

fuzz_target!(|data: &[u8]| {
    let Some((&sel, body)) = data.split_first() else {
        return;
    };
    let mut config = Config::default();
    config.csv.separator = SEPARATORS[(sel as usize) % 6].into();
    config.input.encoding = ENCODINGS[(sel as usize / 6) % 4].into();
    config.csv.header = HEADERS[(sel as usize / 24) % 3].into();
    config.input.max_line_bytes = 4096;
    config.input.max_decompressed_bytes = 1 << 20;
    config.input.missing_values.push("99".into());
    let (name, bytes): (&str, Vec<u8>) = match sel % 8 {
        0 => ("x.csv.gz", gzip(body)),
        1 => ("x.gz", body.to_vec()),
        2 => ("x.ndjson", body.to_vec()),
        3 => ("x.xlsx", body.to_vec()),
        4 => ("x.parquet", body.to_vec()),
        _ => ("x.csv", body.to_vec()),
    };
    let dir = tempfile::tempdir().expect("temp dir");
    let path = dir.path().join(name);
    std::fs::write(&path, &bytes).expect("write");
    let mut opts = LoadOptions::new(dates::parse_iso("2026-12-01").expect("date"));
    if sel & 0x80 != 0 {
        opts.overrides = vec![
            hubwatch::ingest::mapping::parse_override("source_id=1").expect("override"),
            hubwatch::ingest::mapping::parse_override("target_id=2").expect("override"),
        ];
    }
    if let Ok(d) = hubwatch::dataset::load(&[Input::Path(path)], &config, &opts) {
        for f in &d.ledger.files {
            assert!(f.counts.balanced(), "{:?}", f.counts);
        }
        assert!(d.ledger.exposures.balanced() && d.ledger.people.balanced());
    }
});

fn gzip(b: &[u8]) -> Vec<u8> {
    let mut e = flate2::write::GzEncoder::new(Vec::new(), flate2::Compression::fast());
    e.write_all(b).expect("gzip");
    e.finish().expect("gzip")
}
