//! Network statistics against the check values of ../shared/reference/check-inputs/
//! expected-values.csv (computed there with networkx 3.6.1 and direct formulas; methods.md
//! §1-3), plus property tests of their invariants.

use crate::common;

use std::collections::HashMap;

use common::{check_input, load};
use hubwatch::dataset::Dataset;
use hubwatch::ingest::sniff::{split_fields, Separator};
use hubwatch::metrics::{degree, mixing, neighbours, structure};

/// expected-values.csv as id -> value text.
fn expected() -> Option<HashMap<String, String>> {
    let text = std::fs::read_to_string(check_input("expected-values.csv")?).ok()?;
    Some(
        text.lines()
            .filter(|l| !l.starts_with('#'))
            .map(|l| split_fields(l.as_bytes(), Separator::Byte(b',')))
            .filter(|f| f.len() >= 3)
            .map(|f| (f[0].clone(), f[2].clone()))
            .collect(),
    )
}

fn num(e: &HashMap<String, String>, id: &str) -> f64 {
    e.get(id)
        .unwrap_or_else(|| panic!("no {id} in expected-values.csv"))
        .parse()
        .unwrap()
}

fn close(got: f64, want: f64, rel: f64, what: &str) {
    assert!(
        (got - want).abs() <= rel * want.abs().max(1e-300) || got == want,
        "{what}: got {got}, want {want}"
    );
}

/// The graphs of methods.md §1 (file, key in expected-values.csv).
const GRAPHS: [(&str, &str); 5] = [
    ("graph-star6.csv", "star6"),
    ("graph-path5.csv", "path5"),
    ("graph-k23.csv", "k23"),
    ("graph-cycle5.csv", "cycle5"),
    ("graph-karate.csv", "karate"),
];

fn graphs() -> Vec<(Dataset, &'static str)> {
    let mut v: Vec<(Dataset, &'static str)> = GRAPHS
        .iter()
        .filter_map(|(f, key)| check_input(f).map(|p| (load(&[&p], &[]), *key)))
        .collect();
    if let (Some(p), Some(e)) = (
        check_input("toy-people.csv"),
        check_input("toy-exposures.csv"),
    ) {
        v.push((load(&[&p, &e], &[]), "toy"));
    }
    v
}

/// Pairs as (a, b) arrays.
fn pairs(d: &Dataset) -> (&[u32], &[u32]) {
    (&d.edges.a, &d.edges.b)
}

#[test]
fn degree_moments_and_excess_degree() {
    let Some(e) = expected() else {
        common::skip("../shared/reference/check-inputs not found");
        return;
    };
    for (d, key) in graphs() {
        let deg = degree::degrees(&d.graph);
        let s = degree::degree_stats(&deg);
        assert_eq!(s.n as f64, num(&e, &format!("deg.{key}.N")), "{key} N");
        assert_eq!(s.m as f64, num(&e, &format!("deg.{key}.M")), "{key} M");
        // Closed forms: 1e-9 relative (methods.md tolerance).
        for (field, got) in [
            ("mean_k", s.mean),
            ("mean_k2", s.mean_sq),
            ("var_k", s.variance),
            ("edge_end_mean", s.edge_end_mean),
            ("mean_excess", s.mean_excess),
            ("gap", s.gap),
        ] {
            close(
                got.unwrap(),
                num(&e, &format!("deg.{key}.{field}")),
                1e-9,
                &format!("{key} {field}"),
            );
        }
        let p: f64 = s.p().iter().sum();
        let q: f64 = s.q().iter().sum();
        assert!(
            (p - 1.0).abs() < 1e-12 && (q - 1.0).abs() < 1e-12,
            "{key}: sum p {p}, sum q {q}"
        );
    }
}

#[test]
fn karate_degree_histogram_and_q() {
    let Some(e) = expected() else { return };
    let Some(p) = check_input("graph-karate.csv") else {
        return;
    };
    let d = load(&[&p], &[]);
    let s = degree::degree_stats(&degree::degrees(&d.graph));
    let counts: HashMap<String, u64> = serde_json::from_str(&e["deg.karate.p_k_counts"]).unwrap();
    for (k, c) in counts {
        assert_eq!(s.histogram[k.parse::<usize>().unwrap()], c, "n_{k}");
    }
    let q = s.q();
    let want: HashMap<String, f64> = serde_json::from_str(&e["deg.karate.q_k"]).unwrap();
    for (k, v) in want {
        // The file rounds q_k to 12 digits.
        close(q[k.parse::<usize>().unwrap()], v, 1e-10, &format!("q_{k}"));
    }
    // methods.md §1: q_16 = 17/156 exactly.
    close(q[16], 17.0 / 156.0, 1e-12, "q_16");
}

#[test]
fn friendship_paradox_three_versions_and_knn() {
    let Some(e) = expected() else { return };
    for (d, key) in graphs() {
        let deg = degree::degrees(&d.graph);
        let nb = neighbours::neighbours(&d.graph, &deg);
        assert_eq!(
            nb.n_active as f64,
            num(&e, &format!("fp.{key}.n_active")),
            "{key}"
        );
        for (field, got) in [
            ("mean_k_active", nb.mean_active),
            ("a_edge_end_mean", nb.edge_end_mean),
            ("b_mean_of_neighbour_means", nb.contact_mean),
            ("c_share_friends_have_more", nb.share_more),
            ("c_share_friends_have_fewer", nb.share_fewer),
            ("c_share_equal", nb.share_equal),
        ] {
            close(
                got.unwrap(),
                num(&e, &format!("fp.{key}.{field}")),
                1e-9,
                &format!("{key} {field}"),
            );
        }
        let want: HashMap<String, f64> =
            serde_json::from_str(&e[&format!("knn.{key}.knn_k")]).unwrap();
        assert_eq!(nb.knn.len(), want.len(), "{key} knn degrees");
        for (k, v) in &nb.knn {
            // The file rounds k_nn to 12 digits.
            close(*v, want[&k.to_string()], 1e-10, &format!("{key} knn({k})"));
        }
    }
}

#[test]
fn assortativity_and_jackknife() {
    let Some(e) = expected() else { return };
    for (d, key) in graphs() {
        let deg = degree::degrees(&d.graph);
        let (a, b) = pairs(&d);
        let r = mixing::assortativity(a, b, &deg);
        match e[&format!("r.{key}.r")].as_str() {
            "undefined (0/0)" => assert!(r.is_err(), "{key}: {r:?}"),
            v => close(r.unwrap(), v.parse().unwrap(), 1e-9, &format!("{key} r")),
        }
    }
    // Jackknife variant A, Newman's form (expected-values.csv r.karate / r.toy
    // sigma_newman_A_fixed_degrees; methods.md §3).
    for (d, key) in graphs()
        .into_iter()
        .filter(|(_, k)| *k == "karate" || *k == "toy")
    {
        let deg = degree::degrees(&d.graph);
        let (a, b) = pairs(&d);
        let se = mixing::jackknife_se(a, b, &deg).unwrap();
        close(
            se,
            num(&e, &format!("r.{key}.sigma_newman_A_fixed_degrees")),
            1e-9,
            &format!("{key} jackknife"),
        );
    }
}

#[test]
fn path_graphs_have_r_minus_one_over_n_minus_two() {
    // methods.md §3: path of n >= 3 people, r = -1/(n-2) (derived there; networkx agrees n=3..8).
    for n in 3u32..=8 {
        let a: Vec<u32> = (0..n - 1).collect();
        let b: Vec<u32> = (1..n).collect();
        let mut deg = vec![2u32; n as usize];
        deg[0] = 1;
        deg[n as usize - 1] = 1;
        close(
            mixing::assortativity(&a, &b, &deg).unwrap(),
            -1.0 / f64::from(n - 2),
            1e-12,
            &format!("path {n}"),
        );
    }
}

#[test]
fn null_model_keeps_degrees_and_is_reproducible() {
    let Some(p) = check_input("graph-karate.csv") else {
        return;
    };
    let d = load(&[&p], &[]);
    let deg = degree::degrees(&d.graph);
    let (a, b) = pairs(&d);
    let x = mixing::null_model(a, b, &deg, 5, 10, 42);
    let y = mixing::null_model(a, b, &deg, 5, 10, 42);
    assert_eq!(x, y, "same seed, same result");
    let mean = x.mean.unwrap();
    // Under randomisation the strongly disassortative karate network (r = -0.476) moves towards
    // the structural value of its degree sequence; it must lie in [-1, 1] and above the observed r.
    assert!((-1.0..=1.0).contains(&mean) && mean > -0.4756, "{x:?}");
    assert!(x.acceptance > 0.0 && x.sd.unwrap() >= 0.0);
}

#[test]
fn undefined_results_are_reported_not_zero() {
    // methods.md §0/§1: N = 0 -> everything undefined; M = 0 -> moments 0, the rest undefined.
    let s = degree::degree_stats(&[]);
    assert!(s.mean.is_err() && s.gap.is_err());
    let s = degree::degree_stats(&[0, 0, 0]);
    assert_eq!((s.mean, s.mean_sq, s.variance), (Ok(0.0), Ok(0.0), Ok(0.0)));
    assert!(
        s.edge_end_mean.is_err() && s.mean_excess.is_err() && s.gap.is_err() && s.q().is_empty()
    );
    assert!(mixing::assortativity(&[], &[], &[]).is_err());
    assert!(mixing::jackknife_se(&[0], &[1], &[1, 1]).is_err());
}

mod properties {
    use super::*;
    use proptest::prelude::*;

    /// A random simple graph over `n` people as sorted-unique pairs, loaded through a CSV so the
    /// whole pipeline is exercised.
    fn graph(n: u32, raw: &[(u32, u32)]) -> Dataset {
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("e.csv");
        let mut s = String::from("person_id\n");
        for i in 0..n {
            s.push_str(&format!("N{i}\n"));
        }
        std::fs::write(dir.path().join("people.csv"), s).unwrap();
        let mut t = String::from("source_id,target_id\n");
        for (x, y) in raw {
            t.push_str(&format!("N{},N{}\n", x % n, y % n));
        }
        std::fs::write(&p, t).unwrap();
        load(&[&dir.path().join("people.csv"), &p], &[])
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(64))]
        #[test]
        fn invariants_hold(n in 2u32..40, raw in proptest::collection::vec((0u32..40, 0u32..40), 0..150)) {
            let d = graph(n, &raw);
            let deg = degree::degrees(&d.graph);
            let s = degree::degree_stats(&deg);
            let sum_p: f64 = s.p().iter().sum();
            prop_assert!((sum_p - 1.0).abs() < 1e-12);
            prop_assert!(s.variance.unwrap() >= -1e-12);
            if s.m > 0 {
                let sum_q: f64 = s.q().iter().sum();
                prop_assert!((sum_q - 1.0).abs() < 1e-12);
                prop_assert!(s.gap.unwrap() >= -1e-12);
                prop_assert!(s.edge_end_mean.unwrap() >= s.mean.unwrap() - 1e-12);
                let nb = neighbours::neighbours(&d.graph, &deg);
                // (b) >= <k>+ (methods.md §2), and the shares sum to 1.
                prop_assert!(nb.contact_mean.unwrap() >= nb.mean_active.unwrap() - 1e-9);
                let shares = nb.share_more.unwrap() + nb.share_fewer.unwrap() + nb.share_equal.unwrap();
                prop_assert!((shares - 1.0).abs() < 1e-12);
                let ce: f64 = nb.contact_excess.iter().sum();
                prop_assert!((ce - 1.0).abs() < 1e-9);
                if let Ok(r) = mixing::assortativity(&d.edges.a, &d.edges.b, &deg) {
                    prop_assert!((-1.0 - 1e-12..=1.0 + 1e-12).contains(&r));
                }
                let c = structure::clustering(&d.graph, &deg);
                if let Ok(t) = c.transitivity {
                    prop_assert!((0.0..=1.0).contains(&t));
                }
                // Every person's core number is at most their degree.
                let core = structure::core_numbers(&d.graph, &deg);
                prop_assert!(core.iter().zip(&deg).all(|(c, k)| c <= k));
            }
        }
    }
}

#[test]
fn karate_clustering_cores_and_bridges() {
    // Check values from networkx 3.6.1 (installed from PyPI into a throw-away virtual
    // environment and run on ../shared/reference/check-inputs/graph-karate.csv):
    // transitivity 0.2556818181818182, average_clustering 0.5706384782076823, 45 triangles,
    // articulation_points {0}, core_number as below.
    let Some(p) = check_input("graph-karate.csv") else {
        return;
    };
    let d = load(&[&p], &[]);
    let deg = degree::degrees(&d.graph);
    let c = structure::clustering(&d.graph, &deg);
    close(
        c.transitivity.unwrap(),
        0.2556818181818182,
        1e-12,
        "transitivity",
    );
    close(
        c.mean_local.unwrap(),
        0.5706384782076823,
        1e-12,
        "mean local clustering",
    );
    assert_eq!(c.triangles.iter().sum::<u64>() / 3, 45);
    let core = structure::core_numbers(&d.graph, &deg);
    let want = [
        4, 4, 4, 4, 3, 3, 3, 4, 4, 2, 3, 1, 2, 4, 2, 2, 2, 2, 2, 3, 2, 2, 2, 3, 3, 3, 2, 3, 3, 3,
        4, 3, 4, 4,
    ];
    for (id, k) in want.iter().enumerate() {
        assert_eq!(
            core[d.ids.get(&id.to_string()).unwrap() as usize],
            *k,
            "core of {id}"
        );
    }
    let cut: Vec<&str> = structure::articulation_points(&d.graph)
        .iter()
        .map(|&v| d.ids.name(v))
        .collect();
    assert_eq!(cut, ["0"]);
}

#[test]
fn articulation_points_on_small_shapes() {
    // By hand (common practice, no source needed): a path's inner people are cut points; a
    // cycle has none; a star's hub is the only one.
    for (file, want) in [
        ("graph-path5.csv", vec!["1", "2", "3"]),
        ("graph-cycle5.csv", vec![]),
        ("graph-star6.csv", vec!["0"]),
    ] {
        let Some(p) = check_input(file) else { return };
        let d = load(&[&p], &[]);
        let mut cut: Vec<&str> = structure::articulation_points(&d.graph)
            .iter()
            .map(|&v| d.ids.name(v))
            .collect();
        cut.sort_unstable();
        assert_eq!(cut, want, "{file}");
    }
}

/// The simple graph over `n` people (numbered modulo `n`) of the pairs `raw`: self-pairs
/// dropped, repeats merged; its pairs as (smaller, larger), sorted, and its adjacency.
fn simple_graph(n: usize, raw: &[(u32, u32)]) -> (Vec<(u32, u32)>, hubwatch::graph::Adjacency) {
    let mut edges: Vec<(u32, u32)> = raw
        .iter()
        .map(|&(a, b)| (a % n as u32, b % n as u32))
        .filter(|(a, b)| a != b)
        .map(|(a, b)| (a.min(b), a.max(b)))
        .collect();
    edges.sort_unstable();
    edges.dedup();
    let mut list: Vec<(u32, u32, u32)> = edges
        .iter()
        .flat_map(|&(a, b)| [(a, b, 0), (b, a, 0)])
        .collect();
    list.sort_unstable();
    let mut g: hubwatch::graph::Adjacency = petgraph::csr::Csr::from_sorted_edges(&list).unwrap();
    while g.node_count() < n {
        g.add_node(());
    }
    (edges, g)
}

/// Run `check` on 300 random simple graphs (see [`simple_graph`]) of `people` people (a number
/// in that range), made from up to `pairs` random pairs of numbers below its end.
fn on_random_graphs(
    people: std::ops::Range<usize>,
    pairs: usize,
    check: impl Fn(
        usize,
        Vec<(u32, u32)>,
        hubwatch::graph::Adjacency,
    ) -> Result<(), proptest::test_runner::TestCaseError>,
) {
    use proptest::prelude::*;
    let top = people.end as u32;
    let mut runner = proptest::test_runner::TestRunner::new(ProptestConfig::with_cases(300));
    runner
        .run(
            &(
                people,
                proptest::collection::vec((0..top, 0..top), 0..pairs),
            ),
            |(n, raw)| {
                let (edges, g) = simple_graph(n, &raw);
                check(n, edges, g)
            },
        )
        .unwrap();
}

/// The components that come with the articulation points are those of the plain search, on
/// small shapes (a real network: `real_data::transmission_pairs_line_list`).
#[test]
fn components_from_the_cut_point_search_match_the_plain_search() {
    use hubwatch::metrics::structure;
    for edges in [
        vec![(0u32, 1u32), (1, 2), (3, 4), (5, 5)],
        vec![(0, 1), (1, 2), (2, 0), (2, 3), (6, 7), (7, 8)],
        vec![],
    ] {
        let (_, g) = simple_graph(10, &edges);
        let (cut, parts) = structure::cut_points_and_components(&g);
        assert_eq!(parts, hubwatch::graph::components(&g));
        assert_eq!(cut, structure::articulation_points(&g));
    }
}

/// The pairs counted by their end degrees, with degrees on both sides of the dense table's
/// limit (a star of 900 leaves, a hub of 730 and small ones), against a plain count. (The
/// definition of the joint degree count; no external source.)
#[test]
fn joint_degree_counts_across_the_dense_limit() {
    let (mut a, mut b) = (Vec::new(), Vec::new());
    // Node 0: a star with 900 leaves (1..=900); node 1000: 730 leaves (1001..=1730); a path
    // 2000-2001-2002 and a pair between the two hubs.
    for leaf in 1..=900u32 {
        a.push(0);
        b.push(leaf);
    }
    for leaf in 1001..=1730u32 {
        a.push(1000);
        b.push(leaf);
    }
    a.extend([2000, 2001, 0]);
    b.extend([2001, 2002, 1000]);
    let mut deg = vec![0u32; 2003];
    for (&x, &y) in a.iter().zip(&b) {
        deg[x as usize] += 1;
        deg[y as usize] += 1;
    }
    let mut want: std::collections::BTreeMap<(u32, u32), u64> = Default::default();
    for (&x, &y) in a.iter().zip(&b) {
        let (j, k) = (deg[x as usize], deg[y as usize]);
        *want.entry((j.min(k), j.max(k))).or_default() += 1;
    }
    let want: Vec<((u32, u32), u64)> = want.into_iter().collect();
    assert_eq!(
        want,
        [
            ((1, 2), 2),
            ((1, 731), 730),
            ((1, 901), 900),
            ((2, 2), 0),
            ((731, 901), 1)
        ]
        .into_iter()
        .filter(|p| p.1 > 0)
        .collect::<Vec<_>>()
    );
    assert_eq!(mixing::joint_degree_counts(&a, &b, &deg), want);
    // Degrees of people without pairs (here a larger one than any pair's end) change nothing.
    let mut more = deg.clone();
    more.push(5000);
    assert_eq!(mixing::joint_degree_counts(&a, &b, &more), want);
    // r from the counts is r from the pairs, to the bit (the same integer sums).
    assert_eq!(
        mixing::assortativity_from_joint(&want).unwrap().to_bits(),
        mixing::assortativity(&a, &b, &deg).unwrap().to_bits()
    );
}

/// Articulation points by their definition: a person whose removal leaves their cluster in
/// more pieces (removing each person in turn and counting clusters with union-find; no
/// external source needed), on random small networks with several clusters, against the one
/// depth-first search; its components against the plain search.
#[test]
fn cut_points_match_removing_each_person_in_turn() {
    use hubwatch::metrics::structure;
    use proptest::prelude::*;
    fn clusters(n: usize, edges: &[(u32, u32)], without: Option<u32>) -> usize {
        let mut parent: Vec<usize> = (0..n).collect();
        fn find(p: &mut [usize], mut x: usize) -> usize {
            while p[x] != x {
                p[x] = p[p[x]];
                x = p[x];
            }
            x
        }
        for &(a, b) in edges {
            if Some(a) == without || Some(b) == without {
                continue;
            }
            let (ra, rb) = (find(&mut parent, a as usize), find(&mut parent, b as usize));
            parent[ra] = rb;
        }
        (0..n)
            .filter(|&v| Some(v as u32) != without && find(&mut parent, v) == v)
            .count()
    }
    on_random_graphs(2..30, 60, |n, edges, g| {
        let all = clusters(n, &edges, None);
        let want: Vec<u32> = (0..n as u32)
            .filter(|&v| {
                let isolated = !edges.iter().any(|&(a, b)| a == v || b == v);
                !isolated && clusters(n, &edges, Some(v)) > all
            })
            .collect();
        let (cut, parts) = structure::cut_points_and_components(&g);
        prop_assert_eq!(cut, want);
        prop_assert_eq!(parts, hubwatch::graph::components(&g));
        Ok(())
    });
}

/// Mixing by several attributes counted in one pass is each attribute's plain count (the
/// definition of the mixing table; networkx checks r itself in
/// `tests/crosscheck/networkx_check.py`): on random pairs over 300 people, with missing values,
/// people past the end of a column, value codes that map to one group, a second attribute with
/// more groups than a mixing table is made for (no table, r says why), and a third.
#[test]
fn attribute_mixing_of_several_attributes_in_one_pass() {
    let mut state = 0x9e37_79b9_7f4a_7c15u64;
    let mut next = move |m: u64| {
        state ^= state << 13;
        state ^= state >> 7;
        state ^= state << 17;
        state % m
    };
    let n = 300u32;
    let mut pairs: Vec<(u32, u32)> = (0..2000)
        .map(|_| (next(n as u64) as u32, next(n as u64) as u32))
        .filter(|(x, y)| x != y)
        .map(|(x, y)| (x.min(y), x.max(y)))
        .collect();
    pairs.sort_unstable();
    pairs.dedup();
    let (a, b): (Vec<u32>, Vec<u32>) = pairs.into_iter().unzip();
    const MISSING: u32 = u32::MAX;
    // Attribute 0: 6 value codes in 4 groups, a tenth missing, the last 20 people absent.
    let small: Vec<u32> = (0..n - 20)
        .map(|_| {
            if next(10) == 0 {
                MISSING
            } else {
                next(6) as u32
            }
        })
        .collect();
    let small_group = vec![2, 0, 3, 1, 0, 2];
    // Attribute 1: 70,000 groups, of which the people hold a few.
    let wide: Vec<u32> = (0..n).map(|_| 69_990 + next(10) as u32).collect();
    let wide_group: Vec<u32> = (0..70_000).collect();
    let labels = |g: usize| (0..g).map(|i| format!("g{i:05}")).collect::<Vec<_>>();
    let grouping = |codes, group: &Vec<u32>, g| mixing::Grouping {
        codes,
        missing: MISSING,
        group: group.clone(),
        labels: labels(g),
    };
    let plain = |codes: &[u32], group: &[u32], g: usize| {
        let of = |v: u32| {
            let c = *codes.get(v as usize)?;
            (c != MISSING).then(|| group[c as usize] as usize)
        };
        let mut counts = vec![vec![0u64; g]; g];
        let (mut known, mut unknown) = (0u64, 0u64);
        for (&x, &y) in a.iter().zip(&b) {
            match (of(x), of(y)) {
                (Some(p), Some(q)) => {
                    counts[p][q] += 1;
                    if p != q {
                        counts[q][p] += 1;
                    }
                    known += 1;
                }
                _ => unknown += 1,
            }
        }
        (counts, known, unknown)
    };
    // A third attribute: 3 value codes, 3 groups, nobody missing.
    let third: Vec<u32> = (0..n).map(|_| next(3) as u32).collect();
    let third_group = vec![0, 1, 2];
    let all = mixing::attribute_mixing(
        (&a, &b),
        n as usize,
        vec![
            grouping(&small, &small_group, 4),
            grouping(&wide, &wide_group, 70_000),
            grouping(&third, &third_group, 3),
        ],
    );
    assert_eq!(all.len(), 3);
    for (i, (codes, group, g)) in [(&small, &small_group, 4), (&third, &third_group, 3)]
        .into_iter()
        .enumerate()
    {
        let m = &all[2 * i];
        let alone = mixing::attribute_mixing((&a, &b), n as usize, vec![grouping(codes, group, g)]);
        assert_eq!(m, &alone[0]);
        let (counts, known, unknown) = plain(codes, group, g);
        assert_eq!(m.pairs, counts);
        assert_eq!(m.unknown, unknown);
        assert!(known > 0 && unknown + known == a.len() as u64);
        let r = m.r.expect("defined");
        assert!((-1.0..=1.0).contains(&r), "r = {r}");
    }
    assert!(all[0].unknown > 0 && all[2].unknown == 0);
    // More groups than a table is made for: no table, and r says why.
    assert!(all[1].groups.is_empty() && all[1].pairs.is_empty());
    assert!(all[1].r.is_err());
    assert!(mixing::attribute_mixing((&a, &b), n as usize, Vec::new()).is_empty());
}

/// Core numbers by their definition: the k-core is what is left after taking off, again and
/// again, everyone with fewer than k contacts among those left, and a person's core number is
/// the largest k whose k-core holds them (Seidman 1983; no external value needed), on random
/// small networks including dense ones with deep cores, against the peeling in levels.
#[test]
fn core_numbers_match_the_definition() {
    use hubwatch::metrics::structure;
    use proptest::prelude::*;
    on_random_graphs(1..25, 200, |n, edges, g| {
        let deg = hubwatch::graph::degrees(&g);
        // Who is in the k-core: take off anyone with fewer than k contacts left until
        // nobody is.
        let k_core = |k: u32| {
            let mut inside = vec![true; n];
            loop {
                let left = |v: usize| {
                    edges
                        .iter()
                        .filter(|&&(a, b)| {
                            (a as usize == v && inside[b as usize])
                                || (b as usize == v && inside[a as usize])
                        })
                        .count() as u32
                };
                let off: Vec<usize> = (0..n).filter(|&v| inside[v] && left(v) < k).collect();
                if off.is_empty() {
                    return inside;
                }
                for v in off {
                    inside[v] = false;
                }
            }
        };
        let max = deg.iter().copied().max().unwrap_or(0);
        let cores: Vec<Vec<bool>> = (0..=max + 1).map(k_core).collect();
        let want: Vec<u32> = (0..n)
            .map(|v| {
                (0..=max)
                    .filter(|&k| cores[k as usize][v])
                    .max()
                    .unwrap_or(0)
            })
            .collect();
        prop_assert_eq!(structure::core_numbers(&g, &deg), want);
        Ok(())
    });
}
