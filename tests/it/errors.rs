//! Bad input gets an exact, helpful message (file, columns, what to do) and no panic.

use crate::common;

use std::fs;

use common::load_with;
use hubwatch::config::Config;

fn err(files: &[(&str, &str)], overrides: &[&str], config: &Config) -> String {
    let dir = tempfile::tempdir().unwrap();
    let paths: Vec<std::path::PathBuf> = files
        .iter()
        .map(|(n, c)| {
            let p = dir.path().join(n);
            fs::write(&p, c).unwrap();
            p
        })
        .collect();
    let refs: Vec<&std::path::Path> = paths.iter().map(|p| p.as_path()).collect();
    match load_with(&refs, overrides, config) {
        Ok(_) => panic!("expected an error"),
        Err(e) => e
            .to_string()
            .replace(&dir.path().display().to_string(), "DIR"),
    }
}

#[test]
fn missing_required_field_lists_headers_and_suggests_the_closest() {
    let m = err(
        &[("e.csv", "alpha,beta,when\nA,B,2024-01-01\n")],
        &[],
        &Config::default(),
    );
    assert_eq!(
        m,
        "DIR/e.csv: no column for required field `source_id`. Headers found: \"alpha\", \"beta\", \"when\". \
         Map it with --column source_id=HEADER, or add the header to [columns] source_id in a config file."
    );
    let m = err(
        &[("e.csv", "reporter,contact_person\nA,B\n")],
        &[],
        &Config::default(),
    );
    assert!(
        m.ends_with(
            "Closest header: \"reporter\"; if that is it, add --column source_id=\"reporter\"."
        ),
        "{m}"
    );
    let m = err(
        &[("e.csv", "src_id,target_id\nA,B\n")],
        &[],
        &Config::default(),
    );
    assert!(
        m.ends_with(
            "Closest header: \"src_id\"; if that is it, add --column source_id=\"src_id\"."
        ),
        "{m}"
    );
}

#[test]
fn headerless_file_asks_for_positions() {
    let m = err(&[("t.dat", "100 1 2\n120 1 3\n")], &[], &Config::default());
    assert_eq!(
        m,
        "DIR/t.dat: no column for required field `source_id`. Headers found: \"column_1\", \"column_2\", \"column_3\". \
         The file has no header line; map columns by position, e.g. --column source_id=2 (column numbers start at 1)."
    );
}

#[test]
fn ambiguous_dates_stop_with_examples_and_the_setting() {
    let m = err(
        &[(
            "e.csv",
            "source_id,target_id,exposure_date\nA,B,03/04/2024\nB,C,05/04/2024\nC,D,14/04/2024\n",
        )],
        &[],
        &Config::default(),
    );
    assert_eq!(
        m,
        "DIR/e.csv: column `exposure_date`: dates such as \"03/04/2024\", \"05/04/2024\", \"14/04/2024\" are not ISO 8601 \
         (YYYY-MM-DD) and could be day-first or month-first; hubwatch does not guess. Set the layout with --date-format \
         \"%d/%m/%Y\" (day first) or --date-format \"%m/%d/%Y\" (month first), or in a config file: [dates] format = \
         \"%d/%m/%Y\". \"14/04/2024\" fits only day-first."
    );
    // With the layout set, the same file loads and the dates are read day-first.
    let mut c = Config::default();
    c.dates.format = "%d/%m/%Y".into();
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("e.csv");
    fs::write(&p, "source_id,target_id,exposure_date\nA,B,03/04/2024\n").unwrap();
    let d = load_with(&[&p], &[], &c).unwrap();
    assert_eq!(hubwatch::ingest::dates::iso(d.edges.last[0]), "2024-04-03");
}

#[test]
fn missing_files_and_empty_files() {
    let m = match load_with(
        &[std::path::Path::new("/no/such/export.csv")],
        &[],
        &Config::default(),
    ) {
        Err(e) => e.to_string(),
        Ok(_) => panic!("expected an error"),
    };
    assert_eq!(m, "/no/such/export.csv: no such file or folder");
    let m = err(
        &[("empty.csv", "# only a comment\n\n")],
        &[],
        &Config::default(),
    );
    assert_eq!(
        m,
        "DIR/empty.csv: the file is empty (no header and no rows)"
    );
    let m = err(
        &[("p.csv", "person_id,role\nA,case\n")],
        &[],
        &Config::default(),
    );
    assert!(m.starts_with("DIR/p.csv: no exposures table found"), "{m}");
    let m = err(
        &[("dup.csv", "source_id,target_id,source_id\nA,B,C\n")],
        &[],
        &Config::default(),
    );
    assert_eq!(
        m,
        "DIR/dup.csv: columns 1 and 3 are both named \"source_id\"; rename one"
    );
}

#[test]
fn a_column_override_that_names_no_header_is_reported() {
    let m = err(
        &[("e.csv", "a,b\nX,Y\n")],
        &["source_id=Reporter", "target_id=b"],
        &Config::default(),
    );
    assert!(
        m.contains("no column for required field `source_id`"),
        "{m}"
    );
    assert!(m.contains("Headers found: \"a\", \"b\""), "{m}");
}
