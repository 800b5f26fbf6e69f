//! Field values: the date parser in every layout (ISO, configured, spreadsheet serials), the
//! day/month ambiguity check, missing-value codes and ID normalisation, composite joining,
//! encoding labels. Invariants: no panic; a parsed date formats back to a date that parses to
//! the same day; an ID is trimmed and in NFC.
#![no_main]

use hubwatch::ingest::dates::{self, DateParser};
use hubwatch::ingest::mapping::join_parts;
use hubwatch::ingest::reconcile::{IdValue, Rules};
use libfuzzer_sys::fuzz_target;

const LAYOUTS: [&str; 5] = ["", "%d/%m/%Y", "%m/%d/%Y", "%Y%m%d", "%d.%m.%y"];

fuzz_target!(|data: &[u8]| {
    let Some((&sel, body)) = data.split_first() else {
        return;
    };
    let text = String::from_utf8_lossy(body);
    let p = DateParser::new(LAYOUTS[sel as usize % 5], sel & 0x80 != 0);
    if let Ok(day) = p.parse(&text) {
        let iso = dates::iso(day);
        assert_eq!(dates::parse_iso(&iso).ok(), Some(day), "{text:?} -> {iso}");
    }
    let parts: Vec<&str> = text.split('\n').collect();
    let _ = dates::ambiguity_message(&parts);
    let rules = Rules::new(&["NA".into(), "99".into(), "unknown".into()], 0, 1e5);
    if let IdValue::Id(id, _) = rules.id(Some(&text)) {
        assert_eq!(id.trim(), id.as_ref());
        assert!(!id.is_empty());
    }
    let _ = rules.value(Some(&text));
    let opt: Vec<Option<&str>> = parts.iter().map(|p| Some(*p)).collect();
    let _ = join_parts(&opt);
    let _ = hubwatch::config::EncodingSetting::parse(&text);
    let _ = text.trim().parse::<f64>();
});
