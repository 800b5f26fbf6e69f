//! The row ledger on the reference toy export and on crafted dirty files.

use crate::common;

use std::fs;

use common::{assert_balanced, check_input, degree, load, load_with};
use hubwatch::config::Config;
use hubwatch::ingest::ledger::{ProblemKind, QuarantineReason};

#[test]
fn toy_export_gives_the_reference_network() {
    // Source: ../shared/reference/methods.md §0 and check-inputs/expected-values.csv rows
    // `toy.clean` ([13 rows, 1 self-loop, 2 repeats, 10 people, 10 edges]) and `toy.degrees`.
    let (Some(p), Some(e)) = (
        check_input("toy-people.csv"),
        check_input("toy-exposures.csv"),
    ) else {
        common::skip("../shared/reference/check-inputs not found");
        return;
    };
    let d = load(&[&p, &e], &[]);
    assert_eq!(d.people(), 10);
    assert_eq!(d.edges.len(), 10);
    let expected = [
        ("P01", 4),
        ("P02", 2),
        ("P03", 2),
        ("P04", 2),
        ("P05", 2),
        ("P06", 2),
        ("P07", 3),
        ("P08", 2),
        ("P09", 1),
        ("P10", 0),
    ];
    for (id, k) in expected {
        assert_eq!(degree(&d, id), k, "degree of {id}");
    }
    let x = &d.ledger.exposures;
    assert_eq!((x.read, x.used, x.merged, x.quarantined), (13, 10, 2, 1));
    assert_eq!(
        d.ledger.quarantined[0].reason,
        QuarantineReason::SelfExposure
    );
    // Multiplicity (expected-values.csv `toy.multiplicity`): P01-P02 twice, P04-P06 twice.
    let pairs = common::edge_set(&d);
    assert!(pairs.contains(&("P01".into(), "P02".into(), 2)));
    assert!(pairs.contains(&("P04".into(), "P06".into(), 2)));
    assert_balanced(&d);
}

const PEOPLE: &str = "\
person_id,role,onset_date,area
A1,case,2024-03-01,North
A2,contact,,North
A2,contact,,South
,contact,,North
A3,case,2024-02-30,East
A4,contact,2031-01-01,East
A5,contact,,
";

const EXPOSURES: &str = "\
source_id,target_id,exposure_date,first_exposure_date,setting,duration_min
A1,A2,2024-03-02,2024-03-01,household,30
A2,A1,2024-03-04,,Household,15
A1,A2,2024-03-03,,workplace,abc
A1,A3,03-03-2024,,school,-5
A1,A1,2024-03-02,,household,10
,A3,2024-03-02,,household,10
A3, ,2024-03-02,,household,10
A3,B9,2024-03-05,2024-03-07,community,
A4,A3,2024-03-06,,community,1e9999
A4,A3,extra,field,here,1,2
";

/// Several exposure files: a row repeating a pair another file made first is merged in its own
/// file, and each file counts its own used and merged rows (counted by hand below).
#[test]
fn used_and_merged_rows_are_counted_in_the_file_they_came_from() {
    let dir = tempfile::tempdir().unwrap();
    let header = "source_id,target_id,exposure_date\n";
    let files = [
        ("e1.csv", "A1,A2,2024-03-01\nA2,A3,2024-03-01\n"),
        (
            "e2.csv",
            "A2,A1,2024-03-02\nA3,A4,2024-03-02\nA4,A3,2024-03-03\nA5,A5,2024-03-03\n",
        ),
        ("e3.csv", "A1,A2,2024-03-04\nA6,A1,2024-03-04\n"),
    ];
    let paths: Vec<std::path::PathBuf> = files
        .iter()
        .map(|(name, rows)| {
            let p = dir.path().join(name);
            fs::write(&p, format!("{header}{rows}")).unwrap();
            p
        })
        .collect();
    let refs: Vec<&std::path::Path> = paths.iter().map(|p| p.as_path()).collect();
    let d = load(&refs, &[]);
    assert_balanced(&d);
    let counts = |name: &str| {
        let f = d
            .ledger
            .files
            .iter()
            .find(|f| f.path.ends_with(name))
            .unwrap_or_else(|| panic!("no report for {name}"));
        let c = f.counts;
        (c.read, c.used, c.merged, c.quarantined)
    };
    // e1 makes A1-A2 and A2-A3; e2 repeats A1-A2 (merged), makes A3-A4 and repeats it
    // (merged), and names A5 twice (quarantined); e3 repeats A1-A2 and makes A1-A6.
    assert_eq!(counts("e1.csv"), (2, 2, 0, 0));
    assert_eq!(counts("e2.csv"), (4, 1, 2, 1));
    assert_eq!(counts("e3.csv"), (2, 1, 1, 0));
    let x = d.ledger.exposures;
    assert_eq!((x.read, x.used, x.merged, x.quarantined), (8, 4, 3, 1));
}

#[test]
fn every_row_lands_in_one_bucket_with_its_reason() {
    let dir = tempfile::tempdir().unwrap();
    let (p, e) = (
        dir.path().join("people.csv"),
        dir.path().join("exposures.csv"),
    );
    fs::write(&p, PEOPLE).unwrap();
    fs::write(&e, EXPOSURES).unwrap();
    let d = load(&[&p, &e], &[]);
    assert_balanced(&d);

    // People: 7 rows; A2 repeated (merged, area conflict), one blank ID (quarantined).
    let pc = d.ledger.people;
    assert_eq!((pc.read, pc.used, pc.merged, pc.quarantined), (7, 5, 1, 1));
    // Exposures: 10 rows; 3 quarantined (self, blank source, blank target), 1 wrong field
    // count; A1-A2 three times in both orders -> 1 used + 2 merged; A4-A3 once.
    let xc = d.ledger.exposures;
    assert_eq!((xc.read, xc.used, xc.merged, xc.quarantined), (10, 4, 2, 4));

    let reasons = crate::common::quarantined(&d);
    assert!(reasons.contains(&(5, "missing_id")), "{reasons:?}"); // people line 5: blank person_id
    assert!(reasons.contains(&(6, "self_exposure")), "{reasons:?}");
    assert!(reasons.contains(&(7, "missing_id")), "{reasons:?}");
    assert!(reasons.contains(&(8, "missing_id")), "{reasons:?}"); // "A3, " blank after trim
    assert!(reasons.contains(&(11, "wrong_field_count")), "{reasons:?}");

    // B9 appears only in exposures: implied. A quarantined row adds no person.
    assert_eq!(d.implied(), 1);
    assert!(d.is_implied(d.ids.get("B9").unwrap()));
    assert_eq!(d.people(), 6);

    let problems: Vec<(u64, &str, ProblemKind)> = d
        .ledger
        .problems
        .iter()
        .map(|p| (p.line, p.column.as_str(), p.kind))
        .collect();
    let expect = [
        (4, "area", ProblemKind::ConflictingValue),
        (6, "onset_date", ProblemKind::ImpossibleDate),
        (7, "onset_date", ProblemKind::FutureDate),
        (4, "duration_min", ProblemKind::UnreadableNumber),
        (5, "exposure_date", ProblemKind::UnreadableDate),
        (5, "duration_min", ProblemKind::NegativeNumber),
        (9, "first_exposure_date", ProblemKind::DateOrder),
        (10, "duration_min", ProblemKind::UnreadableNumber),
    ];
    for x in expect {
        assert!(problems.contains(&x), "missing {x:?} in {problems:?}");
    }
    assert_eq!(problems.len(), expect.len(), "{problems:?}");

    // The merged pair keeps what its rows said.
    let a1 = d.ids.get("A1").unwrap();
    let e = (0..d.edges.len())
        .find(|&e| d.edges.a[e] == a1 && d.ids.name(d.edges.b[e]) == "A2")
        .unwrap();
    assert_eq!(d.edges.rows[e], 3);
    assert_eq!(
        d.edges.a_named_b[e], 2,
        "A1 named A2 twice, A2 named A1 once"
    );
    assert_eq!(
        d.edges.minutes[e], 45.0,
        "the unreadable duration adds nothing"
    );
    assert_eq!(hubwatch::ingest::dates::iso(d.edges.first[e]), "2024-03-01");
    assert_eq!(hubwatch::ingest::dates::iso(d.edges.last[e]), "2024-03-04");
    let settings: Vec<&str> = d
        .edges
        .settings(e)
        .iter()
        .map(|&c| d.settings[c as usize - 1].as_str())
        .collect();
    assert_eq!(
        settings,
        ["household", "workplace"],
        "settings compare without case"
    );
    // Attributes: the first value is kept.
    assert_eq!(d.attrs.get("area", d.ids.get("A2").unwrap()), Some("North"));
}

#[test]
fn ids_are_trimmed_and_case_is_a_setting() {
    let dir = tempfile::tempdir().unwrap();
    let e = dir.path().join("x.csv");
    fs::write(&e, "source_id,target_id\n a1 ,B2\nA1,b2\nb2,B2\n").unwrap();
    let d = load(&[&e], &[]);
    assert_eq!(d.people(), 4);
    assert_eq!(d.edges.len(), 3);
    let mut c = Config::default();
    c.ids.case_sensitive = false;
    let d = load_with(&[&e], &[], &c).unwrap();
    assert_eq!(d.people(), 2);
    assert_eq!(d.edges.len(), 1);
    assert_eq!(
        d.ledger.exposures.quarantined, 1,
        "b2-B2 is a self-exposure when case is ignored"
    );
    assert_eq!(d.ids.name(0), "a1", "first spelling kept, trimmed");
}

#[test]
fn exposures_alone_imply_every_person() {
    let dir = tempfile::tempdir().unwrap();
    let e = dir.path().join("only.csv");
    fs::write(&e, "from,to\nX,Y\nY,Z\n").unwrap();
    let d = load(&[&e], &[]);
    assert_eq!((d.people(), d.implied(), d.edges.len()), (3, 3, 2));
}

#[test]
fn synth_manifest_matches_the_ledger() {
    // The generator states what it planted; the ledger must find exactly that. 12,000 people
    // give about 80,000 rows, enough for the two-thread path of the row checks (>= 50,000
    // usable rows in a chunk) to run.
    let dir = tempfile::tempdir().unwrap();
    let end = hubwatch::ingest::dates::parse_iso("2026-11-27").unwrap();
    let m = hubwatch::synth::generate(
        dir.path(),
        &hubwatch::synth::SynthOptions::new(12_000, 11, end),
    )
    .unwrap();
    let d = load(&[dir.path()], &[]);
    assert_balanced(&d);
    let (x, p) = (d.ledger.exposures, d.ledger.people);
    assert_eq!(x.read, m.exposure_rows);
    assert_eq!(x.quarantined, m.self_exposures + m.blank_targets);
    assert_eq!(x.used, m.pairs);
    assert_eq!(x.field_problems, m.bad_dates + m.bad_durations);
    assert_eq!(p.read, m.people_rows);
    assert_eq!(p.merged, m.repeated_people);
    assert_eq!(p.quarantined, m.blank_people);
    assert_eq!(d.implied() as u64, m.implied_people);
    assert_eq!(d.people() as u64, m.people + m.implied_people);
    // Same seed, same bytes.
    let dir2 = tempfile::tempdir().unwrap();
    hubwatch::synth::generate(
        dir2.path(),
        &hubwatch::synth::SynthOptions::new(12_000, 11, end),
    )
    .unwrap();
    for f in ["people.csv", "exposures.csv"] {
        assert_eq!(
            fs::read(dir.path().join(f)).unwrap(),
            fs::read(dir2.path().join(f)).unwrap()
        );
    }
}

#[test]
fn unmapped_exposure_columns_are_kept_per_row_with_their_pair() {
    let dir = tempfile::tempdir().unwrap();
    let a = dir.path().join("a.csv");
    let b = dir.path().join("b.csv");
    fs::write(
        &a,
        "source_id,target_id,venue\nA,B,Mill Street hall\nB,A,Quay cafe\nC,C,nowhere\nA,C,\n",
    )
    .unwrap();
    fs::write(&b, "source_id,target_id,interviewer\nC,D,team 2\n").unwrap();
    let d = load(&[&a, &b], &[]);
    let x = &d.exposure_extras;
    assert_eq!(x.names, ["venue", "interviewer"]);
    // Four usable rows (the self-exposure C,C is quarantined and keeps nothing).
    assert_eq!(d.edge_of_row.len(), 4);
    let venue: Vec<Option<&str>> = x.values[0].iter().collect();
    assert_eq!(
        venue,
        [Some("Mill Street hall"), Some("Quay cafe"), None, None]
    );
    let interviewer: Vec<Option<&str>> = x.values[1].iter().collect();
    assert_eq!(interviewer, [None, None, None, Some("team 2")]);
    // Rows 0 and 1 went into the same pair A-B.
    assert_eq!(d.edge_of_row[0], d.edge_of_row[1]);
    let e = d.edge_of_row[3] as usize;
    assert_eq!(
        (d.ids.name(d.edges.a[e]), d.ids.name(d.edges.b[e])),
        ("C", "D")
    );
}
