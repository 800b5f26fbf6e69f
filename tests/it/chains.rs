//! Forward and backward tracing along dated exposures.
//!
//! The small networks below are worked out by hand in the comments (no outside source is
//! needed for them: the rule is the definition of a time-respecting chain). The property test
//! compares the search with a brute-force enumeration of every chain on random small
//! networks. The open-data check against networkx is `tests/crosscheck/chains_check.py`.

use std::collections::HashMap;

use hubwatch::analysis::chains::{self, ChainRequest, Listed, People, Windows};
use hubwatch::analysis::priority::PriorityConfig;
use hubwatch::graph::{adjacency, Edges};
use hubwatch::ingest::dates::iso;
use hubwatch::ingest::reconcile::NO_DATE;
use hubwatch::metrics::chains::{forward, forward_many, Rules, Seed};
use proptest::prelude::*;

use crate::common::{hubwatch, load, write};

fn windows(req: ChainRequest) -> Windows {
    Windows::settle(&PriorityConfig::load(None).unwrap(), &req).unwrap()
}

fn gaps(min: u32, max: u32, generations: u16) -> ChainRequest {
    ChainRequest {
        min_gap: Some(min),
        max_gap: Some(max),
        generations: Some(generations),
        ..ChainRequest::default()
    }
}

/// The forward network, days in March 2026 (gaps 0..=5 days, same day allowed):
///
/// - C is the case (no onset date, so every dated exposure of C counts).
/// - C-A on the 1st: A is reached, generation 1, on the 1st.
/// - A-B on the 3rd (2 days after A's exposure, inside 0..=5): B, generation 2, the 3rd.
/// - A-Y on the 1st, the same day A was exposed: Y, generation 2, the 1st (same day allowed).
/// - Y-Z on 28 February, before Y was exposed: too early, Z is not reached through Y.
/// - A-X on the 9th (8 days after A's exposure: past the window); B-X on the 7th (4 days after
///   B's): X is reached through B, generation 3, the 7th.
/// - B-Y on the 4th closes a cycle A-B-Y: it offers B and Y later days at generation 3,
///   which change neither their earliest day nor their generation.
/// - X-W on the 8th: W would be generation 4, past the 3 steps followed.
/// - A also met B again on the 4th (a second row of the pair): the 3rd is still the earliest.
/// - B and W are not in the people table: "not listed".
const PEOPLE: &str = "person_id,role\nC,case\nA,contact\nY,contact\nX,contact\nZ,contact\n";
const EXPOSURES: &str = "source_id,target_id,exposure_date\n\
C,A,2026-03-01\nA,B,2026-03-03\nA,Y,2026-03-01\nY,Z,2026-02-28\nA,X,2026-03-09\n\
B,X,2026-03-07\nB,Y,2026-03-04\nX,W,2026-03-08\nB,A,2026-03-04\n";

fn forward_of(
    people: &str,
    exposures: &str,
    req: ChainRequest,
) -> HashMap<String, (u16, String, Listed, Vec<String>)> {
    let dir = tempfile::tempdir().unwrap();
    let p = write(dir.path(), "people.csv", people);
    let e = write(dir.path(), "exposures.csv", exposures);
    let d = load(&[&p, &e], &[]);
    let ppl = People::of(&d);
    let w = windows(req);
    let f = chains::forward(&d, &ppl, &w, &ppl.cases());
    f.reached
        .iter()
        .map(|r| {
            let chain = r
                .chain
                .iter()
                .map(|s| format!("{}>{}@{}", d.ids.name(s.from), d.ids.name(s.to), iso(s.day)))
                .collect();
            (
                d.ids.name(r.node).to_string(),
                (r.generation, iso(r.earliest), r.listed, chain),
            )
        })
        .collect()
}

#[test]
fn forward_follows_dates_windows_same_day_and_generations() {
    let got = forward_of(PEOPLE, EXPOSURES, gaps(0, 5, 3));
    let want = |g: u16, day: &str, listed: Listed, chain: &[&str]| {
        (
            g,
            day.to_string(),
            listed,
            chain.iter().map(|s| s.to_string()).collect::<Vec<_>>(),
        )
    };
    assert_eq!(got.len(), 4, "{got:?}");
    assert_eq!(
        got["A"],
        want(1, "2026-03-01", Listed::Contact, &["C>A@2026-03-01"])
    );
    assert_eq!(
        got["B"],
        want(
            2,
            "2026-03-03",
            Listed::New,
            &["C>A@2026-03-01", "A>B@2026-03-03"]
        )
    );
    assert_eq!(
        got["Y"],
        want(
            2,
            "2026-03-01",
            Listed::Contact,
            &["C>A@2026-03-01", "A>Y@2026-03-01"]
        )
    );
    assert_eq!(
        got["X"],
        want(
            3,
            "2026-03-07",
            Listed::Contact,
            &["C>A@2026-03-01", "A>B@2026-03-03", "B>X@2026-03-07"]
        )
    );
    assert!(!got.contains_key("Z") && !got.contains_key("W") && !got.contains_key("C"));

    // Four steps: W (X-W on the 8th, 1 day after X's exposure) joins at generation 4.
    let got = forward_of(PEOPLE, EXPOSURES, gaps(0, 5, 4));
    assert_eq!(got["W"].0, 4);
    assert_eq!(got["W"].1, "2026-03-08");

    // Two steps: X (generation 3) is left out.
    let got = forward_of(PEOPLE, EXPOSURES, gaps(0, 5, 2));
    assert_eq!(got.keys().count(), 3);
    assert!(!got.contains_key("X"));

    // No same day: A-Y on the 1st (the day A was exposed) no longer counts; Y is reached
    // only around the cycle, B-Y on the 4th (1 day after B's exposure), at generation 3. B
    // (2 days after A) and X stay as they were.
    let mut req = gaps(0, 5, 3);
    req.no_same_day = true;
    let got = forward_of(PEOPLE, EXPOSURES, req);
    assert_eq!(
        got["Y"],
        want(
            3,
            "2026-03-04",
            Listed::Contact,
            &["C>A@2026-03-01", "A>B@2026-03-03", "B>Y@2026-03-04"]
        )
    );
    assert_eq!(got["B"].0, 2);
    assert_eq!(got["X"].0, 3);

    // A window of at most 1 day: B-X (4 days after B) is too late, and A-B (2 days) too.
    let got = forward_of(PEOPLE, EXPOSURES, gaps(0, 1, 3));
    let mut names: Vec<_> = got.keys().cloned().collect();
    names.sort();
    assert_eq!(names, ["A", "Y"]);
}

/// A case with an onset date passes it on only inside their infectious period: covid-19 in
/// the shipped settings is 2 days before to 10 days after onset. Case K, onset 10 March:
/// K-P on 5 March (5 days before: too early), K-Q on 8 March (2 days before: in), K-R on
/// 21 March (11 days after: too late), K-S on 20 March (10 days after: in).
#[test]
fn a_case_passes_it_on_only_inside_the_infectious_period() {
    let people = "person_id,role,onset_date\nK,case,2026-03-10\n";
    let exposures = "source_id,target_id,exposure_date\nK,P,2026-03-05\nK,Q,2026-03-08\nK,R,2026-03-21\nK,S,2026-03-20\n";
    let got = forward_of(
        people,
        exposures,
        ChainRequest {
            generations: Some(1),
            ..ChainRequest::default()
        },
    );
    let mut names: Vec<_> = got.keys().cloned().collect();
    names.sort();
    assert_eq!(names, ["Q", "S"]);
}

/// A row with a first and a last exposure date counts on every day between them. Case C (no
/// onset) met A from 1 to 10 March (one row); A met B on 14 March. With gaps 0..=5, A's
/// exposure on the 9th or 10th makes the 14th reachable (14 - 9 = 5): B is generation 2,
/// reached on the 14th, through A exposed on the 9th (the earliest day that allows it;
/// ties go to the earliest chain, and A's state on the 9th is settled before the 10th).
/// Without the range (last date only, the 10th) the result is the same; with only the first
/// date it would not be: 14 - 1 = 13 > 5.
#[test]
fn a_date_range_counts_on_every_day() {
    let people = "person_id,role\nC,case\n";
    let exposures = "source_id,target_id,first_exposure_date,exposure_date\nC,A,2026-03-01,2026-03-10\nA,B,,2026-03-14\n";
    let got = forward_of(people, exposures, gaps(0, 5, 3));
    assert_eq!(got["A"].1, "2026-03-01");
    assert_eq!(got["B"].0, 2);
    assert_eq!(got["B"].1, "2026-03-14");
    assert_eq!(got["B"].3, ["C>A@2026-03-09", "A>B@2026-03-14"]);
    // Two rows of one pair, on the 1st and on the 10th (not a range): only those two days
    // count, and the 10th still reaches B.
    let exposures =
        "source_id,target_id,exposure_date\nC,A,2026-03-01\nA,C,2026-03-10\nA,B,2026-03-14\n";
    let got = forward_of(people, exposures, gaps(0, 5, 3));
    assert_eq!(got["B"].3, ["C>A@2026-03-10", "A>B@2026-03-14"]);
    // With the 1st only, B is out of reach.
    let exposures = "source_id,target_id,exposure_date\nC,A,2026-03-01\nA,B,2026-03-14\n";
    let got = forward_of(people, exposures, gaps(0, 5, 3));
    assert!(!got.contains_key("B"));
}

/// Backward, covid-19 settings (infected 2 to 14 days before onset):
/// - case T, onset 20 March: window 6-18 March. S1 met T on the 10th (in), S2 on the 19th
///   (1 day before onset: too late), S3 on 1 March (19 days before: too early).
/// - case U, onset 25 March: window 11-23 March. S1 met U on the 15th (in), S4 on the 12th (in).
/// - case V has no onset or report date: left out. Case Rp has only a report date (22 March:
///   window 8-20 March) and met S4 on the 9th.
///
/// So S1 met two cases (a common source, first), then S4 (two cases: U on the 12th, Rp on the
/// 9th; earliest the 9th)... S1's earliest is the 10th, S4's the 9th: both met two cases, so
/// the earlier, S4, comes first. Then nobody else.
#[test]
fn backward_finds_common_sources_inside_the_infection_window() {
    let dir = tempfile::tempdir().unwrap();
    let p = write(
        dir.path(),
        "people.csv",
        "person_id,role,onset_date,report_date\nT,case,2026-03-20,\nU,case,2026-03-25,\nV,case,,\nRp,case,,2026-03-22\nS1,contact,,\n",
    );
    let e = write(
        dir.path(),
        "exposures.csv",
        "source_id,target_id,exposure_date\nS1,T,2026-03-10\nS2,T,2026-03-19\nT,S3,2026-03-01\nS1,U,2026-03-15\nU,S4,2026-03-12\nV,S1,2026-03-12\nRp,S4,2026-03-09\n",
    );
    let d = load(&[&p, &e], &[]);
    let ppl = People::of(&d);
    let w = windows(ChainRequest::default());
    assert_eq!(w.infection, (2, 14));
    let b = chains::backward(&d, &ppl, &w, &ppl.cases());
    let name = |v: u32| d.ids.name(v).to_string();
    assert_eq!(
        b.undated.iter().map(|&v| name(v)).collect::<Vec<_>>(),
        ["V"]
    );
    let got: Vec<(String, usize, String)> = b
        .sources
        .iter()
        .map(|s| (name(s.node), s.targets.len(), iso(s.earliest)))
        .collect();
    assert_eq!(
        got,
        [
            ("S4".to_string(), 2, "2026-03-09".to_string()),
            ("S1".to_string(), 2, "2026-03-10".to_string()),
        ]
    );
    assert_eq!(b.sources[1].listed, Listed::Contact);
    assert_eq!(b.sources[0].listed, Listed::New);
    // --days 20 looks 0-20 days before onset: S2 (1 day before T's onset) and S3 (19 days)
    // join, each with one case.
    let w = windows(ChainRequest {
        days: Some(20),
        ..ChainRequest::default()
    });
    let b = chains::backward(&d, &ppl, &w, &ppl.cases());
    let mut names: Vec<String> = b.sources.iter().map(|s| name(s.node)).collect();
    names.sort();
    assert_eq!(names, ["S1", "S2", "S3", "S4"]);

    // The gain, recomputed here from its definition: forward from every case, one step, under
    // the covid-19 windows (T passes it on 18-30 March; U 23 March-4 April; Rp 20 March-1
    // April; V, undated, any day) reaches S2 (T on the 19th) and S1 (V on the 12th); backward
    // reaches S1 and S4. Contacts: S1 met T, U and V (3); S2 met T (1); S4 met U and Rp (2).
    let degrees = hubwatch::graph::degrees(&d.graph);
    let g = chains::gain(&d, &ppl, &windows(ChainRequest::default()), &degrees);
    assert_eq!(g.forward_people, 2);
    assert_eq!(g.forward_mean_degree, Some(2.0));
    assert_eq!(g.forward_case_share, Some(0.0));
    assert_eq!(g.backward_people, 2);
    assert_eq!(g.backward_mean_degree, Some(2.5));
    assert_eq!(g.backward_case_share, Some(0.0));
    let ends: u32 = degrees.iter().sum();
    assert_eq!(g.mean_degree, Some(f64::from(ends) / degrees.len() as f64));
    let sq: u32 = degrees.iter().map(|k| k * k).sum();
    assert_eq!(g.edge_end_mean, Some(f64::from(sq) / f64::from(ends)));
}

/// A pathogen without periods needs the gaps from the command line.
#[test]
fn a_pathogen_without_periods_says_what_is_missing() {
    let dir = tempfile::tempdir().unwrap();
    let cfg = write(
        dir.path(),
        "p.toml",
        "[pathogens.plain]\ndays = 10\nsource = \"local rule\"\n",
    );
    let config = PriorityConfig::load(Some(&cfg)).unwrap();
    let req = ChainRequest {
        pathogen: Some("plain".into()),
        ..ChainRequest::default()
    };
    let err = Windows::settle(&config, &req).unwrap_err().to_string();
    assert!(err.contains("--min-gap") && err.contains("plain"), "{err}");
    let req = ChainRequest {
        pathogen: Some("plain".into()),
        min_gap: Some(1),
        max_gap: Some(9),
        days: Some(12),
        ..ChainRequest::default()
    };
    let w = Windows::settle(&config, &req).unwrap();
    assert_eq!(
        (w.rules.min_gap, w.rules.max_gap, w.infection),
        (1, 9, (0, 12))
    );
}

// ----------------------------------------------------------------------------------------
// Brute force: every chain on random small temporal networks.
// ----------------------------------------------------------------------------------------

/// Build pairs (a < b) with their distinct days from (u, v, day) events, as the merge does.
fn edges_of(n: u32, events: &[(u32, u32, i32)]) -> (hubwatch::graph::Adjacency, Edges) {
    let mut days: std::collections::BTreeMap<(u32, u32), Vec<i32>> = Default::default();
    for &(u, v, t) in events {
        if u != v {
            let k = (u.min(v), u.max(v));
            let e = days.entry(k).or_default();
            if !e.contains(&t) {
                e.push(t);
            }
        }
    }
    let mut e = Edges::default();
    for ((a, b), mut ds) in days {
        ds.sort();
        let i = e.a.len() as u32;
        e.a.push(a);
        e.b.push(b);
        e.rows.push(ds.len() as u32);
        e.a_named_b.push(0);
        e.first.push(ds[0]);
        e.last.push(*ds.last().unwrap());
        e.minutes.push(f64::NAN);
        if ds.len() > 1 {
            if e.span_off.is_empty() {
                e.span_off.push(0);
            }
            e.span_pairs.push(i);
            e.spans.extend(ds.iter().map(|&t| (t, t)));
            e.span_off.push(e.spans.len() as u32);
        }
    }
    let _ = NO_DATE;
    (adjacency(n as usize, &e), e)
}

/// Every chain from the seeds, by depth-first enumeration: per node the earliest
/// (day, steps) and the fewest steps.
fn brute(
    n: u32,
    events: &[(u32, u32, i32)],
    seeds: &[Seed],
    r: &Rules,
) -> Vec<Option<((i32, u16), u16)>> {
    let mut best: Vec<Option<((i32, u16), u16)>> = vec![None; n as usize];
    fn go(
        x: u32,
        a: i32,
        g: u16,
        events: &[(u32, u32, i32)],
        r: &Rules,
        best: &mut Vec<Option<((i32, u16), u16)>>,
    ) {
        let b = &mut best[x as usize];
        *b = Some(match *b {
            None => ((a, g), g),
            Some((e, f)) => (e.min((a, g)), f.min(g)),
        });
        if g >= r.generations {
            return;
        }
        for &(u, v, t) in events {
            if u == v || t < a + r.min_gap || t > a + r.max_gap {
                continue;
            }
            for (p, q) in [(u, v), (v, u)] {
                if p == x {
                    go(q, t, g + 1, events, r, best);
                }
            }
        }
    }
    for s in seeds {
        for &(u, v, t) in events {
            if u == v || t < s.from || t > s.to {
                continue;
            }
            for (p, q) in [(u, v), (v, u)] {
                if p == s.node {
                    go(q, t, 1, events, r, &mut best);
                }
            }
        }
    }
    best
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(300))]

    #[test]
    fn the_search_finds_what_every_chain_gives(
        n in 2u32..7,
        raw in proptest::collection::vec((0u32..7, 0u32..7, 0i32..12), 0..12),
        seed_nodes in proptest::collection::vec((0u32..7, proptest::option::of((0i32..12, 0i32..6))), 1..3),
        min_gap in 0i32..3,
        extra in 0i32..5,
        generations in 1u16..5,
    ) {
        let events: Vec<(u32, u32, i32)> = raw.iter().map(|&(u, v, t)| (u % n, v % n, t)).collect();
        let seeds: Vec<Seed> = seed_nodes
            .iter()
            .map(|&(v, w)| match w {
                Some((from, len)) => Seed { node: v % n, from, to: from + len },
                None => Seed { node: v % n, from: i32::MIN, to: i32::MAX },
            })
            .collect();
        // One window per seed node (the analysis layer gives each seed one).
        let mut seen = std::collections::HashSet::new();
        let seeds: Vec<Seed> = seeds.into_iter().filter(|s| seen.insert(s.node)).collect();
        let rules = Rules { min_gap, max_gap: min_gap + extra, generations };
        let (g, e) = edges_of(n, &events);
        let want = brute(n, &events, &seeds, &rules);
        // Both sources of exposures: the pairs walked directly, and the day-sorted timeline.
        for reach in [forward(&g, &e, &seeds, &rules), forward_many(&g, &e, &seeds, &rules)] {
        for v in 0..n {
            let got = reach.earliest(v).map(|x| (x, reach.generation(v).unwrap()));
            prop_assert_eq!(got, want[v as usize], "node {}", v);
            // The chain reported is a real chain: starts at a seed inside its window, each
            // step an exposure of the pair on that day inside the gap, ends at v on the day.
            let chain = reach.chain(v);
            if let Some((day, steps)) = reach.earliest(v) {
                prop_assert_eq!(chain.len(), steps as usize);
                prop_assert_eq!(chain.last().unwrap().day, day);
                prop_assert_eq!(chain.last().unwrap().to, v);
                let s0 = seeds.iter().find(|s| s.node == chain[0].from).unwrap();
                prop_assert!(chain[0].day >= s0.from && chain[0].day <= s0.to);
                for (i, st) in chain.iter().enumerate() {
                    prop_assert!(events.iter().any(|&(a, b, t)| t == st.day && ((a, b) == (st.from, st.to) || (b, a) == (st.from, st.to))));
                    if i > 0 {
                        let gap = st.day - chain[i - 1].day;
                        prop_assert!(gap >= rules.min_gap && gap <= rules.max_gap);
                        prop_assert_eq!(chain[i - 1].to, st.from);
                    }
                }
            } else {
                prop_assert!(chain.is_empty());
            }
        }
        }
    }
}

// ----------------------------------------------------------------------------------------
// The command line and the priority component.
// ----------------------------------------------------------------------------------------

#[test]
fn the_command_prints_json_and_writes_a_private_formula_safe_file() {
    let dir = tempfile::tempdir().unwrap();
    let p = write(dir.path(), "people.csv", PEOPLE);
    let e = write(
        dir.path(),
        "exposures.csv",
        format!("{EXPOSURES}B,=SUM(1),2026-03-05\n"),
    );
    let out = dir.path().join("fwd.csv");
    let (code, stdout, stderr) = hubwatch(&[
        "chains",
        "forward",
        "--from-cases",
        "--min-gap",
        "0",
        "--max-gap",
        "5",
        "--json",
        "--out",
        out.to_str().unwrap(),
        p.to_str().unwrap(),
        e.to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{stderr}");
    let j: serde_json::Value = serde_json::from_str(&stdout).unwrap();
    assert_eq!(j["direction"], "forward");
    assert_eq!(j["seeds"], 1);
    // A (1); B and Y (2); X and =SUM(1) (B's contacts after the 3rd) (3); W would be 4.
    assert_eq!(j["by_generation"], serde_json::json!([1, 2, 2]));
    assert_eq!(j["not_listed"], 2); // B and =SUM(1), both only in the exposures
    assert_eq!(j["reached"][0]["person_id"], "A");
    assert!(j["caution"]
        .as_str()
        .unwrap()
        .contains("does not say that anyone was infected"));
    assert!(j["gain"]["edge_end_mean"].is_number());
    let text = std::fs::read_to_string(&out).unwrap();
    assert!(text.contains("'=SUM(1)"), "formula guard: {text}");
    assert!(!text.contains(",=SUM"));
    #[cfg(unix)]
    {
        use std::os::unix::fs::PermissionsExt;
        assert_eq!(
            std::fs::metadata(&out).unwrap().permissions().mode() & 0o777,
            0o600
        );
    }
    // Pseudonymised: no raw ID of a reached person in the file.
    let key = write(dir.path(), "key", "a test key, not a secret");
    let out2 = dir.path().join("bwd.csv");
    let (code, stdout, stderr) = hubwatch(&[
        "chains",
        "backward",
        "--to-person",
        "C",
        "--days",
        "10",
        "--out",
        out2.to_str().unwrap(),
        "--pseudonymise",
        "--key-file",
        key.to_str().unwrap(),
        p.to_str().unwrap(),
        e.to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{stderr}");
    assert!(
        stdout.contains("left out without an onset or report date: C"),
        "{stdout}"
    );
    let text = std::fs::read_to_string(&out2).unwrap();
    assert!(text.contains("pseudonymised"));
    // An unknown person is a usage error naming the ID.
    let (code, _, stderr) = hubwatch(&[
        "chains",
        "forward",
        "--from-person",
        "NOPE",
        p.to_str().unwrap(),
        e.to_str().unwrap(),
    ]);
    assert_eq!(code, 2);
    assert!(stderr.contains("NOPE"), "{stderr}");
}

#[test]
fn the_chain_component_is_off_in_balanced_and_on_in_along_chains() {
    let dir = tempfile::tempdir().unwrap();
    let p = write(dir.path(), "people.csv", PEOPLE);
    let e = write(dir.path(), "exposures.csv", EXPOSURES);
    let run = |preset: &str| {
        let (code, stdout, stderr) = hubwatch(&[
            "priority",
            "--preset",
            preset,
            "--json",
            "--top",
            "0",
            "--as-of",
            "2026-03-10",
            p.to_str().unwrap(),
            e.to_str().unwrap(),
        ]);
        assert_eq!(code, 0, "{stderr}");
        let j: serde_json::Value = serde_json::from_str(&stdout).unwrap();
        j["list"]
            .as_array()
            .unwrap()
            .iter()
            .map(|r| {
                let chain = r["parts"]
                    .as_array()
                    .unwrap()
                    .iter()
                    .find(|x| x["name"] == "chain")
                    .unwrap()
                    .clone();
                (
                    r["id"].as_str().unwrap().to_string(),
                    chain["raw"].as_f64().unwrap(),
                    chain["weight"].as_f64().unwrap(),
                )
            })
            .collect::<Vec<_>>()
    };
    for (_, raw, weight) in run("balanced") {
        assert_eq!((raw, weight), (0.0, 0.0));
    }
    // covid-19 periods: gaps 0..=24 days, 3 steps. From C: A (1st), B, Y (A's contacts), X
    // (through A on the 9th, generation 2; or through B on the 7th, generation 3). W: X-W on
    // the 8th needs X exposed by the 8th, which only the 7th (generation 3) gives, so W would
    // be generation 4: out. Z (28 February, before Y's exposure) is not reached. C is the case.
    let along = run("along chains");
    let on: Vec<&str> = along
        .iter()
        .filter(|x| x.1 == 1.0)
        .map(|x| x.0.as_str())
        .collect();
    let mut on = on.clone();
    on.sort();
    assert_eq!(on, ["A", "B", "X", "Y"]);
    assert!(along.iter().all(|x| x.2 == 3.0));
}
