//! Exports as they really come and files made to hurt: each case builds its file in the test
//! (encodings by encoding the same text), then checks what hubwatch does with it.
//! Sources: encodings per the WHATWG Encoding Standard (windows-1252 and UTF-16 byte layouts);
//! Unicode normalisation per UAX #15 (NFC composes "e" + U+0301 into U+00E9); the open school
//! contact logs (utah-middle-school-contact-logs/SOURCE.md) for missing-value codes.

use std::io::Write;

use hubwatch::config::Config;
use hubwatch::ingest::ledger::Role;
use hubwatch::ingest::{dates, mapping, Input, LoadOptions};

use crate::common::{self, assert_balanced, hubwatch, load, load_with, write};

const TEXT: &str = "source_id,target_id,setting\nA,B,crèche\nB,C,café\nC,D,crèche\n";

/// windows-1252: every character of TEXT is one byte; é = 0xE9, è = 0xE8 (WHATWG index).
fn cp1252(s: &str) -> Vec<u8> {
    s.chars()
        .map(|c| match c {
            'é' => 0xE9,
            'è' => 0xE8,
            c if c.is_ascii() => c as u8,
            c => panic!("not in the test's table: {c}"),
        })
        .collect()
}

fn utf16(s: &str, le: bool) -> Vec<u8> {
    let mut v = if le {
        vec![0xFF, 0xFE]
    } else {
        vec![0xFE, 0xFF]
    };
    for u in s.encode_utf16() {
        v.extend(if le { u.to_le_bytes() } else { u.to_be_bytes() });
    }
    v
}

fn settings(d: &hubwatch::dataset::Dataset) -> Vec<String> {
    let mut s = d.settings.clone();
    s.sort();
    s
}

#[test]
fn spreadsheet_encodings_are_read_and_named() {
    let dir = tempfile::tempdir().unwrap();
    let reference = load(&[&write(dir.path(), "u8.csv", TEXT.as_bytes())], &[]);
    assert_eq!(settings(&reference), ["café", "crèche"]);
    for (name, bytes) in [
        ("cp1252.csv", cp1252(TEXT)),
        ("u16le.csv", utf16(TEXT, true)),
        ("u16be.csv", utf16(TEXT, false)),
        (
            "bom.csv",
            [b"\xEF\xBB\xBF".as_slice(), TEXT.as_bytes()].concat(),
        ),
    ] {
        let p = write(dir.path(), name, &bytes);
        let d = load(&[&p], &[]);
        assert_eq!(common::edge_set(&d), common::edge_set(&reference), "{name}");
        assert_eq!(settings(&d), settings(&reference), "{name}");
        assert_balanced(&d);
        let enc = d.ledger.files[0].encoding.clone().unwrap();
        let expect = match name {
            "cp1252.csv" => "windows-1252 (detected: not valid UTF-8 (line 2, byte 0xE8)",
            "u16le.csv" => "UTF-16LE (byte-order mark)",
            "u16be.csv" => "UTF-16BE (byte-order mark)",
            _ => "UTF-8 (byte-order mark)",
        };
        assert!(enc.starts_with(expect), "{name}: {enc}");
    }
    // ISO-8859-1 when named: the same bytes, read as Latin-1.
    let p = write(dir.path(), "latin1.csv", cp1252(TEXT));
    let mut c = Config::default();
    c.input.encoding = "iso-8859-1".into();
    let d = load_with(&[&p], &[], &c).unwrap();
    assert_eq!(settings(&d), settings(&reference));
    assert!(d.ledger.files[0]
        .encoding
        .as_deref()
        .unwrap()
        .starts_with("ISO-8859-1 (set by"));
    // Forcing UTF-8 on windows-1252 bytes: the line, the byte and the option to use.
    let (code, _, err) = hubwatch(&["check", p.to_str().unwrap(), "--encoding", "utf-8"]);
    assert_eq!(code, 4, "{err}");
    assert!(
        err.contains("line 2 is not valid UTF-8 (byte 0xE8)")
            && err.contains("--encoding windows-1252"),
        "{err}"
    );
    // And `check` says which encoding and how it was decided.
    let (code, out, err) = hubwatch(&["check", p.to_str().unwrap()]);
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("encoding windows-1252 (detected"), "{out}");
}

#[test]
fn gzip_of_a_utf16_file_streams_through_the_decoder() {
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("u16.csv.gz");
    let mut gz = flate2::write::GzEncoder::new(
        std::fs::File::create(&p).unwrap(),
        flate2::Compression::fast(),
    );
    gz.write_all(&utf16(TEXT, true)).unwrap();
    gz.finish().unwrap();
    let d = load(&[&p], &[]);
    assert_eq!(settings(&d), ["café", "crèche"]);
    assert_eq!(d.edges.len(), 3);
}

#[test]
fn missing_value_codes_are_missing_and_counted() {
    let dir = tempfile::tempdir().unwrap();
    let p = write(
        dir.path(),
        "e.csv",
        b"source_id,target_id,exposure_date\nA,B,NA\nA,NA,2026-11-01\nn/a,B,2026-11-01\nA,99,2026-11-01\nB,C,null\n",
    );
    // Defaults: empty, NA, N/A and null are missing (any letter case).
    let d = load(&[&p], &[]);
    assert_balanced(&d);
    let e = &d.ledger.exposures;
    assert_eq!(
        (e.read, e.used, e.quarantined, e.field_problems),
        (5, 3, 2, 0)
    );
    let codes: Vec<String> = d
        .ledger
        .quarantined
        .iter()
        .map(|q| q.reason.describe())
        .collect();
    assert!(
        codes[0].contains("target_id is \"NA\", a missing-value code"),
        "{codes:?}"
    );
    assert!(codes[1].contains("source_id is \"n/a\""), "{codes:?}");
    assert!(
        d.ids.get("99").is_some(),
        "99 is an ID until it is declared a code"
    );
    // --missing-values adds codes (command line).
    let (code, out, err) = hubwatch(&[
        "check",
        p.to_str().unwrap(),
        "--missing-values",
        "99",
        "--json",
    ]);
    assert_eq!(code, 0, "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    assert_eq!(v["quarantined"]["exposures"]["missing_value_code"], 3);
}

#[test]
fn a_code_like_id_with_many_contacts_is_warned_about() {
    // 99 named by 60 people, everyone else in pairs: 99 is a hub only because it is a code.
    let dir = tempfile::tempdir().unwrap();
    let mut s = String::from("source_id,target_id\n");
    for i in 0..60 {
        s.push_str(&format!("P{i},99\nP{i},Q{i}\n"));
    }
    let p = write(dir.path(), "e.csv", s.as_bytes());
    let (code, out, err) = hubwatch(&["check", p.to_str().unwrap()]);
    assert_eq!(code, 0, "{err}");
    assert!(
        out.contains("code_like_id_with_many_contacts: \"99\" (60 contacts)")
            && out.contains("--missing-values"),
        "{out}"
    );
    let (_, out, _) = hubwatch(&["check", p.to_str().unwrap(), "--missing-values", "99"]);
    assert!(!out.contains("code_like_id"), "{out}");
}

#[test]
fn school_logs_with_unmatched_contacts_coded_99() {
    // utah-middle-school-contact-logs/SOURCE.md: contactId 99 (or NA) for 5,627 rows; the
    // matched rows: 5,154 in all, 6 naming oneself, 3,921 distinct pairs, 544 students.
    let Some(shared) = common::shared() else {
        common::skip("../shared is absent: the school contact logs were not read");
        return;
    };
    let p = shared.join("data/utah-middle-school-contact-logs/pone.0153690.s003.csv");
    if !p.exists() {
        common::skip(&format!("{} not found", p.display()));
        return;
    }
    let mut c = Config::default();
    c.input.missing_values.push("99".into());
    let d = load_with(&[&p], &["source_id=id", "target_id=contactId"], &c).unwrap();
    let e = &d.ledger.exposures;
    let codes = d.ledger.quarantine_counts(Role::Exposures);
    assert_eq!(codes.get("missing_value_code"), Some(&5627));
    assert_eq!(codes.get("self_exposure"), Some(&6));
    assert_eq!(e.used + e.merged + 6, 5154);
    assert_eq!((d.edges.len(), d.people()), (3921, 544));
    // Without the code, 99 is a hub with 437 contacts, and check says so.
    let d = load(&[&p], &["source_id=id", "target_id=contactId"]);
    assert_eq!(common::degree(&d, "99"), 437);
    assert!(d
        .ledger
        .warnings
        .iter()
        .any(|w| w.code == "code_like_id_with_many_contacts"));
}

#[test]
fn one_name_in_two_unicode_forms_is_one_person() {
    let dir = tempfile::tempdir().unwrap();
    // "José" composed (U+00E9) and decomposed ("e" + U+0301), UAX #15.
    let p = write(
        dir.path(),
        "e.csv",
        "source_id,target_id\nJos\u{e9},Ana\nJose\u{301},Luis\nP01,X\np01,Y\nQ 7,Z\nQ7,W\n"
            .as_bytes(),
    );
    let d = load(&[&p], &[]);
    assert_eq!(common::degree(&d, "Jos\u{e9}"), 2);
    assert!(d.ids.get("Jose\u{301}").is_none() || common::degree(&d, "Jos\u{e9}") == 2);
    assert_eq!(d.ledger.exposures.ids_normalised, 1);
    let w = d
        .ledger
        .warnings
        .iter()
        .find(|w| w.code == "ids_differ_only_by_case_width_or_spaces")
        .expect("warning");
    assert_eq!(w.count, 2, "{}", w.message);
    assert!(w.message.contains("\"P01\" / \"p01\"") && w.message.contains("\"Q 7\" / \"Q7\""));
}

#[test]
fn a_headerless_people_file_is_not_taken_for_exposures() {
    let dir = tempfile::tempdir().unwrap();
    // People: id, class, gender (no header); exposures: t i j (no header).
    let mut people = String::new();
    let mut exposures = String::new();
    for i in 0..60 {
        let class = ["7A", "7B", "8A"][i % 3];
        let g = ["F", "M"][i % 2];
        people.push_str(&format!("{} {class} {g}\n", 1000 + i));
        exposures.push_str(&format!(
            "{} {} {}\n",
            20 * i,
            1000 + i,
            1000 + (i + 1) % 60
        ));
    }
    let pp = write(dir.path(), "people.txt", people.as_bytes());
    let ep = write(dir.path(), "contacts.txt", exposures.as_bytes());
    let map = ["--column", "source_id=2", "--column", "target_id=3"];
    let mut args = vec!["check", pp.to_str().unwrap(), ep.to_str().unwrap()];
    args.extend(map);
    let (code, _, err) = hubwatch(&args);
    assert_eq!(code, 4, "{err}");
    assert!(
        err.contains("people.txt")
            && err.contains("column 2 (mapped to source_id) holds few distinct values")
            && err.contains("--people"),
        "{err}"
    );
    // Said explicitly, both load; check says how each role was decided.
    let mut args = vec![
        "check",
        "--people",
        pp.to_str().unwrap(),
        "--exposures",
        ep.to_str().unwrap(),
        "--column",
        "person_id=1",
    ];
    args.extend(map);
    let (code, out, err) = hubwatch(&args);
    assert_eq!(code, 0, "{err}");
    assert!(
        out.contains("role given: --people") && out.contains("role given: --exposures"),
        "{out}"
    );
    // The configuration can say it too, by file name.
    let mut c = Config::default();
    c.input.people.push("people.txt".into());
    let d = load_with(
        &[&pp, &ep],
        &["person_id=1", "source_id=2", "target_id=3"],
        &c,
    )
    .unwrap();
    assert_eq!((d.people(), d.implied(), d.edges.len()), (60, 0, 60));
}

#[test]
fn composite_ids_join_two_columns() {
    let dir = tempfile::tempdir().unwrap();
    write(
        dir.path(),
        "people.csv",
        b"hh,member,role\nH1,1,case\nH1,2,contact\nH2,1,contact\na/b,c,contact\na,b/c,contact\n",
    );
    write(
        dir.path(),
        "exposures.csv",
        b"src_hh,src_m,dst_hh,dst_m\nH1,1,H1,2\nH1,1,H2,1\nH1,,H2,1\na/b,c,a,b/c\n",
    );
    let d = load(
        &[dir.path()],
        &[
            "person_id=hh+member",
            "source_id=src_hh+src_m",
            "target_id=dst_hh+dst_m",
        ],
    );
    assert_balanced(&d);
    assert_eq!((d.people(), d.implied()), (5, 0));
    assert_eq!(common::degree(&d, "H1/1"), 2);
    // The separator inside a part is escaped: two different people, one contact between them.
    assert_eq!(common::degree(&d, "a\\/b/c"), 1);
    assert_eq!(common::degree(&d, "a/b\\/c"), 1);
    // A row with a blank part has no ID.
    assert_eq!(d.ledger.exposures.quarantined, 1);
}

#[test]
fn long_lines_are_quarantined_and_never_held_whole() {
    let dir = tempfile::tempdir().unwrap();
    // A gzip file whose middle line is 40 MiB; the limit is 4 MiB by default.
    let p = dir.path().join("e.csv.gz");
    let mut gz = flate2::write::GzEncoder::new(
        std::fs::File::create(&p).unwrap(),
        flate2::Compression::fast(),
    );
    gz.write_all(b"source_id,target_id\nA,B\n").unwrap();
    let chunk = vec![b'x'; 1 << 20];
    for _ in 0..40 {
        gz.write_all(&chunk).unwrap();
    }
    gz.write_all(b",Y\nB,C\n").unwrap();
    gz.finish().unwrap();
    let d = load(&[&p], &[]);
    assert_balanced(&d);
    let q = &d.ledger.quarantined;
    assert_eq!(q.len(), 1);
    assert_eq!(q[0].line, 3);
    assert!(
        q[0].reason
            .describe()
            .contains("longer than the limit of 4194304"),
        "{:?}",
        q[0]
    );
    assert_eq!(q[0].raw.len(), 200);
    assert_eq!(d.edges.len(), 2);
    // Memory: reading the 40 MiB line costs far less than the line (kernel's accounting of the
    // whole process, against the same command on a small file).
    let small = write(dir.path(), "small.csv", b"source_id,target_id\nA,B\nB,C\n");
    let base = peak_kib_of(&["check", small.to_str().unwrap()]);
    let peak = peak_kib_of(&["check", p.to_str().unwrap()]);
    assert!(
        peak - base < 16 * 1024,
        "peak {peak} KiB against {base} KiB on a small file, reading a 40 MiB line"
    );
    // A plain (memory-mapped) file: the same line is quarantined by the line scan.
    let plain = dir.path().join("plain.csv");
    let mut f = std::fs::File::create(&plain).unwrap();
    f.write_all(b"source_id,target_id\nA,B\n").unwrap();
    for _ in 0..5 {
        f.write_all(&chunk).unwrap();
    }
    f.write_all(b",Y\n").unwrap();
    drop(f);
    let d = load(&[&plain], &[]);
    assert_eq!(d.ledger.quarantined.len(), 1);
    assert_eq!(d.ledger.exposures.used, 1);
}

/// Peak resident memory (KiB) of the binary run with `args`, from the kernel's accounting
/// (`wait4` reaps the child).
#[allow(clippy::zombie_processes)]
fn peak_kib_of(args: &[&str]) -> i64 {
    let child = std::process::Command::new(env!("CARGO_BIN_EXE_hubwatch"))
        .args(args)
        .stdout(std::process::Stdio::null())
        .stderr(std::process::Stdio::null())
        .spawn()
        .unwrap();
    let mut status = 0;
    // SAFETY: wait4 on our own child, filling a zeroed rusage.
    let mut usage: libc::rusage = unsafe { std::mem::zeroed() };
    let pid = unsafe { libc::wait4(child.id() as i32, &mut status, 0, &mut usage) };
    assert_eq!(pid, child.id() as i32);
    usage.ru_maxrss
}

#[test]
fn decompressed_size_is_capped_with_a_clear_message() {
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("e.csv.gz");
    let mut gz = flate2::write::GzEncoder::new(
        std::fs::File::create(&p).unwrap(),
        flate2::Compression::fast(),
    );
    gz.write_all(b"source_id,target_id\n").unwrap();
    for i in 0..5000 {
        gz.write_all(format!("A{i},B{i}\n").as_bytes()).unwrap();
    }
    gz.finish().unwrap();
    let cfg = write(
        dir.path(),
        "c.toml",
        b"[input]\nmax_decompressed_bytes = 10000\n",
    );
    let (code, _, err) = hubwatch(&[
        "check",
        p.to_str().unwrap(),
        "--config",
        cfg.to_str().unwrap(),
    ]);
    assert_eq!(code, 4, "{err}");
    assert!(
        err.contains("e.csv.gz") && err.contains("decompresses to more than 10000 bytes"),
        "{err}"
    );
}

#[test]
fn implausible_dates_and_durations_are_field_problems() {
    let dir = tempfile::tempdir().unwrap();
    let p = write(
        dir.path(),
        "e.csv",
        b"source_id,target_id,exposure_date,duration_min\nA,B,0001-01-01,10\nB,C,2026-11-01,1e308\nC,D,2026-11-01,30\n",
    );
    let d = load(&[&p], &[]);
    assert_balanced(&d);
    let kinds: Vec<(&str, u64)> = d
        .ledger
        .problems
        .iter()
        .map(|p| (p.kind.code(), p.line))
        .collect();
    assert_eq!(kinds, [("implausible_date", 2), ("implausible_number", 3)]);
    assert_eq!(d.edges.len(), 3, "the rows are kept");
}

#[test]
fn a_write_that_cannot_happen_says_where_and_why() {
    let (code, _, err) = hubwatch(&[
        "export",
        "--out",
        "/missing/dir/x.csv",
        "--as-of",
        "2026-11-28",
    ]);
    assert_eq!(code, 3, "{err}");
    assert!(
        err.contains("/missing/dir/x.csv: cannot write: the folder /missing/dir does not exist"),
        "{err}"
    );
}

#[test]
fn a_damaged_workspace_names_its_backup_and_restores_it() {
    let dir = tempfile::tempdir().unwrap();
    let ws = dir.path().join("ws.sqlite");
    let wss = ws.to_str().unwrap();
    fn with<'a>(first: &[&'a str], ws: &'a str) -> Vec<&'a str> {
        let mut v = first.to_vec();
        v.extend(["--workspace", ws, "--as-of", "2026-11-28"]);
        v
    }
    let (code, _, err) = hubwatch(&with(
        &["flag", "--person", "P0000089", "--add", "call first"],
        wss,
    ));
    assert_eq!(code, 0, "{err}");
    let (code, out, _) = hubwatch(&with(&["workspace", "--check"], wss));
    assert_eq!(code, 0);
    assert!(
        out.contains("integrity ok") && out.contains("ws.sqlite.backups"),
        "{out}"
    );
    let backups = hubwatch::workspace::backup::list(&ws);
    assert_eq!(backups.len(), 1);
    // Damage the file's header.
    let mut bytes = std::fs::read(&ws).unwrap();
    bytes[..100].fill(b'x');
    std::fs::write(&ws, bytes).unwrap();
    let (code, _, err) = hubwatch(&with(&["workspace"], wss));
    assert_eq!(code, 4);
    assert!(
        err.contains("the workspace is damaged")
            && err.contains(&backups[0].display().to_string())
            && err.contains("hubwatch workspace --restore"),
        "{err}"
    );
    let (code, out, err) = hubwatch(&with(&["workspace", "--restore"], wss));
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("the previous file is kept as"), "{out}");
    // Nothing deleted: the damaged file sits beside the restored one.
    let kept = std::fs::read_dir(dir.path())
        .unwrap()
        .filter_map(|e| e.ok())
        .any(|e| {
            e.file_name()
                .to_string_lossy()
                .starts_with("ws.sqlite.damaged-")
        });
    assert!(kept);
    let w = hubwatch::workspace::Workspace::open(&ws).unwrap();
    assert_eq!(w.integrity().unwrap(), "ok");
}

/// A load straight from the library, for the property tests below.
fn load_bytes(bytes: &[u8], name: &str) -> hubwatch::error::Result<hubwatch::dataset::Dataset> {
    let dir = tempfile::tempdir().unwrap();
    let p = write(dir.path(), name, bytes);
    let opts = LoadOptions::new(dates::parse_iso("2026-12-01").unwrap());
    hubwatch::dataset::load(&[Input::Path(p)], &Config::default(), &opts)
}

mod properties {
    use super::*;
    use proptest::prelude::*;

    proptest! {
        #![proptest_config(ProptestConfig { cases: 64, ..ProptestConfig::default() })]

        /// Any bytes: no panic; when read at all, every row accounted for.
        #[test]
        fn arbitrary_text_never_panics_and_balances(
            body in proptest::collection::vec(
                prop_oneof![
                    Just(b','), Just(b'\n'), Just(b'"'), Just(b';'), Just(b'\t'), Just(b' '),
                    Just(b'A'), Just(b'B'), Just(b'9'), Just(b'-'), Just(0xE9u8), Just(0xFFu8),
                    any::<u8>()
                ],
                0..400
            ),
            header in prop_oneof![Just("source_id,target_id,exposure_date\n"), Just(""), Just("\u{feff}a;b\n")],
            gz in any::<bool>(),
        ) {
            let mut bytes = header.as_bytes().to_vec();
            bytes.extend(&body);
            let (bytes, name) = if gz {
                let mut e = flate2::write::GzEncoder::new(Vec::new(), flate2::Compression::fast());
                e.write_all(&bytes).unwrap();
                (e.finish().unwrap(), "x.csv.gz")
            } else {
                (bytes, "x.csv")
            };
            if let Ok(d) = load_bytes(&bytes, name) {
                for f in &d.ledger.files {
                    prop_assert!(f.counts.balanced(), "{:?}", f.counts);
                }
            }
        }

        /// Column mappings: any text is parsed or refused, never a panic.
        #[test]
        fn column_mapping_syntax_never_panics(s in "\\PC{0,40}") {
            let _ = mapping::parse_override(&s);
        }

        /// Dates and configuration files: any text is read or refused, never a panic.
        #[test]
        fn dates_and_configuration_never_panic(s in "\\PC{0,60}", fmt in prop_oneof![Just(""), Just("%d/%m/%Y"), Just("%Y%m%d")]) {
            let p = dates::DateParser::new(fmt, true);
            let _ = p.parse(&s);
            let _ = dates::ambiguity_message(&[s.as_str()]);
            let dir = tempfile::tempdir().unwrap();
            let cfg = write(dir.path(), "c.toml", s.as_bytes());
            let _ = Config::load(Some(&cfg));
        }
    }
}

#[test]
fn role_given_for_a_folder_is_refused_clearly() {
    let dir = tempfile::tempdir().unwrap();
    let (code, _, err) = hubwatch(&["check", "--people", dir.path().to_str().unwrap()]);
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("--people takes a file"), "{err}");
}

#[test]
fn roles_from_the_command_line_reach_the_library() {
    // The role travels as Input::Given.
    let dir = tempfile::tempdir().unwrap();
    let e = write(dir.path(), "x.csv", b"a,b\nA,B\n");
    let opts = LoadOptions::new(dates::parse_iso("2026-12-01").unwrap());
    let mut cfg = Config::default();
    cfg.input.exposures.clear();
    let d = hubwatch::dataset::load(
        &[Input::Given {
            path: e,
            role: Role::Exposures,
        }],
        &cfg,
        &LoadOptions {
            overrides: vec![
                mapping::parse_override("source_id=a").unwrap(),
                mapping::parse_override("target_id=b").unwrap(),
            ],
            ..opts
        },
    )
    .unwrap();
    assert_eq!(d.ledger.files[0].role_by, "given: --exposures");
}

#[test]
fn broken_files_get_a_clear_error_with_status_4() {
    let dir = tempfile::tempdir().unwrap();
    // A gzip stream cut in half.
    let mut e = flate2::write::GzEncoder::new(Vec::new(), flate2::Compression::fast());
    for i in 0..2000 {
        e.write_all(format!("A{i},B{i}\n").as_bytes()).unwrap();
    }
    let gz = e.finish().unwrap();
    let cut = write(dir.path(), "cut.csv.gz", &gz[..gz.len() / 2]);
    // Bytes that are no spreadsheet, no Parquet file; a binary file; an empty file.
    let noise: Vec<u8> = (0..4096u32)
        .map(|i| (i.wrapping_mul(2654435761) >> 13) as u8)
        .collect();
    let xlsx = write(dir.path(), "bad.xlsx", &noise);
    let parquet = write(dir.path(), "bad.parquet", &noise);
    let binary = write(
        dir.path(),
        "bin.csv",
        [&[0u8, 1, 2, 0, 255, 254][..], &noise].concat(),
    );
    let empty = write(dir.path(), "empty.csv", b"");
    for (p, expect) in [
        (&cut, "not a readable gzip file"),
        (&xlsx, "bad.xlsx"),
        (&parquet, "bad.parquet"),
        (&binary, "bin.csv"),
        (&empty, "the file is empty"),
    ] {
        let (code, _, err) = hubwatch(&["check", p.to_str().unwrap()]);
        assert_eq!(code, 4, "{}: {err}", p.display());
        assert!(
            err.contains(expect) && err.lines().count() == 1,
            "{}: {err}",
            p.display()
        );
    }
}

#[test]
fn a_symlink_at_the_output_path_is_replaced_not_followed() {
    let dir = tempfile::tempdir().unwrap();
    let victim = write(dir.path(), "victim.txt", b"keep me");
    let out = dir.path().join("list.csv");
    std::os::unix::fs::symlink(&victim, &out).unwrap();
    let (code, _, err) = hubwatch(&[
        "export",
        "--out",
        out.to_str().unwrap(),
        "--force",
        "--as-of",
        "2026-11-28",
    ]);
    assert_eq!(code, 0, "{err}");
    assert_eq!(std::fs::read(&victim).unwrap(), b"keep me");
    assert!(!std::fs::symlink_metadata(&out)
        .unwrap()
        .file_type()
        .is_symlink());
}

#[test]
fn four_concurrent_writers_lose_nothing() {
    let dir = tempfile::tempdir().unwrap();
    let ws = dir.path().join("ws.sqlite");
    hubwatch::workspace::Workspace::open(&ws).unwrap();
    let handles: Vec<_> = (0..4)
        .map(|w| {
            let ws = ws.clone();
            std::thread::spawn(move || {
                for i in 0..25 {
                    let (code, _, err) = hubwatch(&[
                        "note",
                        "--person",
                        "P0000089",
                        "--text",
                        &format!("writer {w} note {i}"),
                        "--workspace",
                        ws.to_str().unwrap(),
                        "--as-of",
                        "2026-11-28",
                    ]);
                    assert_eq!(code, 0, "{err}");
                }
            })
        })
        .collect();
    for h in handles {
        h.join().unwrap();
    }
    let w = hubwatch::workspace::Workspace::open(&ws).unwrap();
    assert_eq!(w.audit(None).unwrap().len(), 100);
    assert_eq!(w.integrity().unwrap(), "ok");
}

/// Regressions found by fuzzing (fuzz/fuzz_targets), each named for what it found.
mod fuzz_regressions {
    use hubwatch::ingest::dates::{self, DateParser};

    #[test]
    fn fields_a_date_with_a_huge_year_part_does_not_overflow() {
        // fields target, crash-e9e76030…: "///000000100000000006" with the %m/%d/%Y layout; the
        // ambiguity check multiplied the year's digits without a bound.
        let v = "//000000100000000006";
        assert!(dates::ambiguity_message(&[v, v, v]).is_none());
        assert!(DateParser::new("%m/%d/%Y", false).parse(v).is_err());
        assert!(dates::parse_iso("99999999999-01-01").is_err());
    }

    #[test]
    fn fields_a_negative_year_is_no_date() {
        // fields target, crash-7b05148e…: "28/11/-2" with %d/%m/%Y read as the year -2, which
        // then did not survive being written as ISO 8601.
        let p = DateParser::new("%d/%m/%Y", false);
        assert!(p.parse("28/11/-2").is_err());
        assert!(p.parse("28/11/12345").is_err());
        assert_eq!(
            p.parse("28/11/2026").ok(),
            dates::parse_iso("2026-11-28").ok()
        );
    }

    #[test]
    fn reader_a_damaged_spreadsheet_is_an_error_not_a_crash() {
        // reader target, crash-3ead4fd9…: one flipped bit in an xlsx made the spreadsheet
        // library index out of bounds; hubwatch now reports the file instead of panicking.
        let bytes = std::fs::read(concat!(
            env!("CARGO_MANIFEST_DIR"),
            "/fuzz/corpus/reader/regression-xlsx-bit-flip"
        ))
        .unwrap();
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("x.xlsx");
        std::fs::write(&p, &bytes[1..]).unwrap();
        let (code, _, err) = crate::common::hubwatch(&[
            "check",
            p.to_str().unwrap(),
            "--column",
            "source_id=1",
            "--column",
            "target_id=2",
        ]);
        assert_eq!(code, 4, "{err}");
        assert!(!err.contains("panicked"), "{err}");
        assert!(err.contains("x.xlsx"), "{err}");
    }
}
