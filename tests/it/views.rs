//! Sub-networks by setting and by exposure date, on the reference toy export. Expected pairs are
//! read off the toy file's 13 rows by hand (methods.md §0 lists them).

use crate::common;

use common::{check_input, edge_set, load_view};
use hubwatch::ingest::{dates::parse_iso, View};

fn pairs(view: View) -> Option<Vec<(String, String)>> {
    let (p, e) = (
        check_input("toy-people.csv")?,
        check_input("toy-exposures.csv")?,
    );
    let d = load_view(&[&p, &e], view);
    // The ledger always accounts for the whole input, whatever the view.
    assert_eq!(
        (
            d.ledger.exposures.read,
            d.ledger.exposures.used,
            d.ledger.exposures.merged
        ),
        (13, 10, 2)
    );
    assert_eq!(d.people(), 10, "the view keeps every person");
    Some(edge_set(&d).into_iter().map(|(a, b, _)| (a, b)).collect())
}

fn p(v: &[(&str, &str)]) -> Vec<(String, String)> {
    v.iter()
        .map(|(a, b)| (a.to_string(), b.to_string()))
        .collect()
}

#[test]
fn household_only_is_the_p01_p02_p03_triangle() {
    let Some(got) = pairs(View {
        settings: vec!["Household".into()],
        ..View::default()
    }) else {
        common::skip("../shared/reference/check-inputs not found");
        return;
    };
    assert_eq!(got, p(&[("P01", "P02"), ("P01", "P03"), ("P02", "P03")]));
}

#[test]
fn everything_but_household() {
    let Some(got) = pairs(View {
        exclude_settings: vec!["household".into()],
        ..View::default()
    }) else {
        return;
    };
    assert_eq!(
        got,
        p(&[
            ("P01", "P04"),
            ("P01", "P05"),
            ("P04", "P06"),
            ("P05", "P07"),
            ("P06", "P07"),
            ("P07", "P08"),
            ("P08", "P09")
        ])
    );
}

#[test]
fn date_window_keeps_rows_dated_inside_it() {
    let d = |s: &str| Some(parse_iso(s).unwrap());
    let Some(got) = pairs(View {
        from: d("2024-03-04"),
        to: d("2024-03-05"),
        ..View::default()
    }) else {
        return;
    };
    assert_eq!(got, p(&[("P05", "P07"), ("P06", "P07")]));
    // P01-P02 has rows on 03-01 and 03-02: a window on 03-02 keeps the pair, one on 03-03 does not
    // (P04-P06's second row is on 03-03, P01-P05 too).
    let got = pairs(View {
        from: d("2024-03-03"),
        to: d("2024-03-03"),
        ..View::default()
    })
    .unwrap();
    assert_eq!(got, p(&[("P01", "P05"), ("P04", "P06")]));
}

#[test]
fn rows_without_a_date_fall_outside_any_window() {
    let dir = tempfile::tempdir().unwrap();
    let f = dir.path().join("e.csv");
    std::fs::write(
        &f,
        "source_id,target_id,exposure_date\nA,B,2024-01-05\nB,C,\nC,D,2024-02-30\n",
    )
    .unwrap();
    let all = load_view(&[&f], View::default());
    assert_eq!(all.edges.len(), 3);
    let w = load_view(
        &[&f],
        View {
            from: Some(parse_iso("2024-01-01").unwrap()),
            ..View::default()
        },
    );
    assert_eq!(edge_set(&w).len(), 1);
    assert_eq!(w.view.1, 1, "one exposure row in the view");
}
