//! The column-mapping syntax (`FIELD=HEADER`, `FIELD=N`, `FIELD=A+B`) against any headers.
//! Invariants: no panic; every mapped index is a column of the file or one of its joined
//! columns; the missing-field message names the file.
#![no_main]

use hubwatch::config::{Config, EXPOSURE_FIELDS, PEOPLE_FIELDS};
use hubwatch::ingest::mapping;
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let text = String::from_utf8_lossy(data);
    let mut lines = text.split('\n');
    let headers: Vec<String> = lines
        .next()
        .unwrap_or("")
        .split(',')
        .map(str::to_string)
        .collect();
    let overrides: Vec<(String, mapping::ColumnRef)> =
        lines.filter_map(|l| mapping::parse_override(l).ok()).collect();
    let c = Config::default();
    for fields in [&PEOPLE_FIELDS[..], &EXPOSURE_FIELDS[..]] {
        let m = mapping::resolve(&headers, &c, &overrides, fields);
        for &i in m.fields.values() {
            assert!(i < headers.len() + m.joined.len());
            let _ = m.column_name(&headers, i);
        }
        for (_, parts) in &m.joined {
            assert!(parts.iter().all(|&p| p < headers.len()));
        }
    }
    let e = mapping::missing_field_error(std::path::Path::new("f.csv"), &headers, "source_id", &c, false);
    assert!(e.to_string().contains("f.csv"));
});
