//! Ranking: a score computed by hand on the reference toy export, window date arithmetic,
//! filters, the high-degree rule and stability under row shuffles.

use crate::common;

use common::{check_input, load_with};
use hubwatch::analysis::filters::{self, FilterIndex};
use hubwatch::analysis::priority::{Preset, PriorityConfig, Ranked};
use hubwatch::analysis::stats::NetworkStats;
use hubwatch::analysis::stats::{compute, MetricOptions};
use hubwatch::config::Config;
use hubwatch::dataset::Dataset;
use hubwatch::ingest::dates::{iso, parse_iso};

/// The filters of the command line, as these tests state them.
#[derive(Default)]
struct Filters {
    equals: Vec<(String, String)>,
    setting: Option<String>,
    still_in_window: bool,
    not_reached: bool,
    cluster_of: Option<String>,
}

/// Rank everyone, then apply the filters through the one filter engine (as `priority` does).
fn rank(
    d: &Dataset,
    stats: &NetworkStats,
    c: &PriorityConfig,
    p: &Preset,
    days: u32,
    f: &Filters,
) -> hubwatch::error::Result<Vec<Ranked>> {
    let none = Default::default();
    let ranked = hubwatch::analysis::ranking::rank(d, stats, c, p, days, &none)?;
    let mut want = filters::Filters {
        setting: f.setting.clone(),
        still_in_window: f.still_in_window,
        not_reached: f.not_reached,
        ..Default::default()
    };
    for (k, v) in &f.equals {
        want.set(k, Some(v.clone()));
    }
    if let Some(id) = &f.cluster_of {
        let node = d
            .ids
            .get(id)
            .ok_or_else(|| hubwatch::error::Error::Usage(format!("no person {id}")))?;
        want.cluster = Some(stats.components.0[node as usize]);
    }
    let keep = FilterIndex::build(d, stats, &ranked, &none).apply(&want, d)?;
    Ok(keep.iter().map(|&i| ranked[i as usize].clone()).collect())
}

fn toy() -> Option<hubwatch::dataset::Dataset> {
    let (p, e) = (
        check_input("toy-people.csv")?,
        check_input("toy-exposures.csv")?,
    );
    let mut d = load_with(&[&p, &e], &[], &Config::default()).unwrap();
    d.as_of = parse_iso("2024-03-10").unwrap();
    Some(d)
}

fn no_null() -> MetricOptions {
    MetricOptions {
        null_replicates: 0,
        ..Default::default()
    }
}

#[test]
fn toy_score_by_hand() {
    let Some(d) = toy() else {
        common::skip("../shared/reference/check-inputs not found");
        return;
    };
    let stats = compute(&d, &no_null());
    let c = PriorityConfig::load(None).unwrap();
    let ranked = rank(
        &d,
        &stats,
        &c,
        c.preset("balanced").unwrap(),
        14,
        &Filters::default(),
    )
    .unwrap();
    let p04 = ranked.iter().find(|r| d.ids.name(r.node) == "P04").unwrap();
    // By hand from toy-exposures.csv and config/priority.toml (preset balanced), as of 2024-03-10:
    // P04 meets P01 (a case) and P06: degree 2 -> 2/20 x 3 = 0.3; one case -> 1/3 x 2;
    // last exposure 2024-03-03 (P04-P06, second row), 7 of 14 days gone -> 0.5 x 2 = 1.0;
    // setting workplace 0.6 x 1; no minutes; not a bridge; 2-core -> 2/5 x 1 = 0.4;
    // contacts' mean degree (4 + 2)/2 = 3 -> 3/20 x 1 = 0.15.
    let want = 0.3 + 2.0 / 3.0 + 1.0 + 0.6 + 0.0 + 0.0 + 0.4 + 0.15;
    assert!(
        (p04.score - want).abs() < 1e-12,
        "P04 score {} want {want}",
        p04.score
    );
    assert_eq!(iso(p04.window_end.unwrap()), "2024-03-17");
    assert_eq!(p04.days_left, Some(7));
    assert!(!p04.bridge && !p04.overdue);
    let contributions: f64 = p04
        .parts(c.preset("balanced").unwrap())
        .iter()
        .map(|p| p.contribution)
        .sum();
    assert!(
        (contributions - p04.score).abs() < 1e-12,
        "the parts add up to the score"
    );
    // Bridges of the toy network (by hand: P01 joins the P02-P03 triangle; P07 and P08 the tail).
    let mut bridges: Vec<&str> = ranked
        .iter()
        .filter(|r| r.bridge)
        .map(|r| d.ids.name(r.node))
        .collect();
    bridges.sort_unstable();
    assert_eq!(bridges, ["P01", "P07", "P08"]);
    // High-degree by the default rule: more than <k^2>/<k> = 2.5 contacts -> P01 (4), P07 (3).
    let mut hubs: Vec<&str> = ranked
        .iter()
        .filter(|r| r.high_degree)
        .map(|r| d.ids.name(r.node))
        .collect();
    hubs.sort_unstable();
    assert_eq!(hubs, ["P01", "P07"]);
    // P10 has no exposure: no window, never overdue.
    let p10 = ranked.iter().find(|r| d.ids.name(r.node) == "P10").unwrap();
    assert_eq!((p10.window_end, p10.overdue), (None, false));
}

#[test]
fn filters_and_order() {
    let Some(d) = toy() else { return };
    let stats = compute(&d, &no_null());
    let c = PriorityConfig::load(None).unwrap();
    let p = c.preset("spread first").unwrap();
    let contacts = rank(
        &d,
        &stats,
        &c,
        p,
        14,
        &Filters {
            equals: vec![("role".into(), "Contact".into())],
            ..Filters::default()
        },
    )
    .unwrap();
    assert_eq!(contacts.len(), 7, "10 people, 3 cases");
    let school = rank(
        &d,
        &stats,
        &c,
        p,
        14,
        &Filters {
            setting: Some("school".into()),
            ..Filters::default()
        },
    )
    .unwrap();
    let mut ids: Vec<&str> = school.iter().map(|r| d.ids.name(r.node)).collect();
    ids.sort_unstable();
    assert_eq!(ids, ["P05", "P07", "P08"]);
    // A 5-day window as of 2024-03-10: only exposures from 2024-03-05 on are still inside.
    let inside = rank(
        &d,
        &stats,
        &c,
        p,
        5,
        &Filters {
            still_in_window: true,
            ..Filters::default()
        },
    )
    .unwrap();
    let mut ids: Vec<&str> = inside.iter().map(|r| d.ids.name(r.node)).collect();
    ids.sort_unstable();
    assert_eq!(ids, ["P06", "P07", "P08", "P09"]);
    // Scores never increase down the list; ties by degree then ID.
    let all = rank(&d, &stats, &c, p, 14, &Filters::default()).unwrap();
    for w in all.windows(2) {
        assert!(
            w[0].score > w[1].score
                || (w[0].score == w[1].score
                    && (w[0].degree, d.ids.name(w[1].node))
                        >= (w[1].degree, d.ids.name(w[0].node)))
        );
    }
    assert!(rank(
        &d,
        &stats,
        &c,
        p,
        14,
        &Filters {
            cluster_of: Some("nobody".into()),
            ..Filters::default()
        }
    )
    .is_err());
}

#[test]
fn windows_across_month_year_ends_and_leap_days() {
    // Window end = last exposure + N days (day 0 = last exposure; common practice, no single
    // source, methods.md §9). Calendar facts: 2024 is a leap year, 2023 is not.
    let dir = tempfile::tempdir().unwrap();
    let f = dir.path().join("e.csv");
    std::fs::write(
        &f,
        "source_id,target_id,exposure_date\nA,B,2024-02-20\nC,D,2023-02-20\nE,F,2024-12-25\nG,H,2024-01-31\n",
    )
    .unwrap();
    let mut d = load_with(&[&f], &[], &Config::default()).unwrap();
    d.as_of = parse_iso("2025-01-01").unwrap();
    let stats = compute(&d, &no_null());
    let c = PriorityConfig::load(None).unwrap();
    let r = rank(
        &d,
        &stats,
        &c,
        c.preset("balanced").unwrap(),
        14,
        &Filters::default(),
    )
    .unwrap();
    let end = |id: &str| {
        iso(r
            .iter()
            .find(|x| d.ids.name(x.node) == id)
            .unwrap()
            .window_end
            .unwrap())
    };
    assert_eq!(end("A"), "2024-03-05");
    assert_eq!(end("C"), "2023-03-06");
    assert_eq!(end("E"), "2025-01-08");
    assert_eq!(end("G"), "2024-02-14");
    let e = r.iter().find(|x| d.ids.name(x.node) == "E").unwrap();
    assert_eq!((e.days_left, e.overdue), (Some(7), false));
    let a = r.iter().find(|x| d.ids.name(x.node) == "A").unwrap();
    assert!(a.overdue, "window over and not completed");
}

#[test]
fn completed_follow_up_is_not_overdue_and_rules_for_hubs() {
    let dir = tempfile::tempdir().unwrap();
    let (p, e) = (dir.path().join("p.csv"), dir.path().join("e.csv"));
    std::fs::write(
        &p,
        "person_id,followup_status\nA,completed\nB,to call\nC,reached\nD,\n",
    )
    .unwrap();
    std::fs::write(
        &e,
        "source_id,target_id,exposure_date\nA,B,2024-01-01\nA,C,2024-01-01\nA,D,2024-01-01\n",
    )
    .unwrap();
    let mut d = load_with(&[&p, &e], &[], &Config::default()).unwrap();
    d.as_of = parse_iso("2024-06-01").unwrap();
    let stats = compute(&d, &no_null());
    let mut c = PriorityConfig::load(None).unwrap();
    let preset = c.preset("balanced").unwrap().clone();
    let r = rank(&d, &stats, &c, &preset, 14, &Filters::default()).unwrap();
    let by = |id: &str| r.iter().find(|x| d.ids.name(x.node) == id).unwrap().clone();
    assert!(!by("A").overdue && by("B").overdue);
    let open = rank(
        &d,
        &stats,
        &c,
        &preset,
        14,
        &Filters {
            not_reached: true,
            ..Filters::default()
        },
    )
    .unwrap();
    assert_eq!(open.len(), 2, "A completed and C reached are left out");
    c.hub.rule = "fixed".into();
    c.hub.value = 1.0;
    assert_eq!(
        rank(&d, &stats, &c, &preset, 14, &Filters::default())
            .unwrap()
            .iter()
            .filter(|x| x.high_degree)
            .count(),
        4
    );
    c.hub.rule = "top_percent".into();
    c.hub.value = 25.0;
    let top: Vec<String> = rank(&d, &stats, &c, &preset, 14, &Filters::default())
        .unwrap()
        .iter()
        .filter(|x| x.high_degree)
        .map(|x| d.ids.name(x.node).to_string())
        .collect();
    assert_eq!(top, ["A"]);
}

#[test]
fn ranking_does_not_depend_on_row_order() {
    let Some(e) = check_input("toy-exposures.csv") else {
        return;
    };
    let text = std::fs::read_to_string(&e).unwrap();
    let (head, rows): (Vec<&str>, Vec<&str>) = text
        .lines()
        .partition(|l| l.starts_with('#') || l.starts_with("person_a"));
    let dir = tempfile::tempdir().unwrap();
    let f = dir.path().join("reversed.csv");
    let mut out: Vec<&str> = head.clone();
    out.extend(rows.iter().rev());
    std::fs::write(&f, out.join("\n") + "\n").unwrap();
    let p = check_input("toy-people.csv").unwrap();
    let c = PriorityConfig::load(None).unwrap();
    let run = |path: &std::path::Path| {
        let mut d = load_with(&[&p, path], &[], &Config::default()).unwrap();
        d.as_of = parse_iso("2024-03-10").unwrap();
        let s = compute(&d, &no_null());
        rank(
            &d,
            &s,
            &c,
            c.preset("balanced").unwrap(),
            14,
            &Filters::default(),
        )
        .unwrap()
        .iter()
        .map(|r| (d.ids.name(r.node).to_string(), (r.score * 1e12).round()))
        .collect::<Vec<_>>()
    };
    assert_eq!(run(&e), run(&f));
}

#[test]
fn shipped_priority_settings_parse_and_bad_ones_are_named() {
    let c = PriorityConfig::load(None).unwrap();
    for name in ["balanced", "spread first", "window first"] {
        assert!(c.preset(name).is_ok(), "{name}");
    }
    for (name, days) in [
        ("covid-19", 14),
        ("ebola", 21),
        ("mpox", 21),
        ("measles", 21),
    ] {
        assert_eq!(
            c.pathogen(name).unwrap().days,
            days,
            "{name} (methods.md §9)"
        );
    }
    let dir = tempfile::tempdir().unwrap();
    let bad = dir.path().join("p.toml");
    std::fs::write(
        &bad,
        "[presets.mine]\nweights = { degre = 1.0 }\ncaps = {}\n",
    )
    .unwrap();
    let e = PriorityConfig::load(Some(&bad)).unwrap_err().to_string();
    assert!(e.contains("unknown component `degre`"), "{e}");
    assert!(c
        .preset("nope")
        .unwrap_err()
        .to_string()
        .contains("presets: along chains, balanced"));
}
