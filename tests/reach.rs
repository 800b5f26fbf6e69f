//! Reach-out curves: the one-pass reverse union-find equals a direct recomputation for every n
//! (property test), and the karate removal table of methods.md §5.

mod common;

use hubwatch::metrics::reach::{degree_order, reach_curve};
use proptest::prelude::*;

fn direct(n: usize, edges: &[(u32, u32)], removed: &[u32]) -> (u32, Option<f64>) {
    let gone: std::collections::HashSet<u32> = removed.iter().copied().collect();
    let mut adj = vec![Vec::new(); n];
    for &(a, b) in edges {
        if !gone.contains(&a) && !gone.contains(&b) {
            adj[a as usize].push(b);
            adj[b as usize].push(a);
        }
    }
    let (mut s1, mut s2) = (0u64, 0u64);
    for (v, nb) in adj.iter().enumerate() {
        if !gone.contains(&(v as u32)) {
            let k = nb.len() as u64;
            s1 += k;
            s2 += k * k.saturating_sub(1);
        }
    }
    let mut seen = vec![false; n];
    let mut best = 0;
    for s in 0..n {
        if seen[s] || gone.contains(&(s as u32)) {
            continue;
        }
        let (mut stack, mut size) = (vec![s], 0);
        seen[s] = true;
        while let Some(v) = stack.pop() {
            size += 1;
            for &w in &adj[v] {
                if !seen[w as usize] {
                    seen[w as usize] = true;
                    stack.push(w as usize);
                }
            }
        }
        best = best.max(size);
    }
    (best as u32, (s1 > 0).then(|| s2 as f64 / s1 as f64))
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(64))]
    #[test]
    fn one_pass_equals_direct_recomputation(n in 1usize..30, raw in proptest::collection::vec((0u32..30, 0u32..30), 0..80), seed in any::<u64>()) {
        let dir = tempfile::tempdir().unwrap();
        let mut people = String::from("person_id\n");
        for i in 0..n { people.push_str(&format!("N{i}\n")); }
        let mut ex = String::from("source_id,target_id\n");
        for (a, b) in &raw { ex.push_str(&format!("N{},N{}\n", a % n as u32, b % n as u32)); }
        std::fs::write(dir.path().join("p.csv"), people).unwrap();
        std::fs::write(dir.path().join("e.csv"), ex).unwrap();
        let d = common::load(&[&dir.path().join("p.csv"), &dir.path().join("e.csv")], &[]);
        let edges: Vec<(u32, u32)> = d.edges.a.iter().zip(&d.edges.b).map(|(&a, &b)| (a, b)).collect();
        // A removal order: every person, shuffled by the seed.
        let mut order: Vec<u32> = (0..n as u32).collect();
        let mut x = seed | 1;
        for i in (1..order.len()).rev() { x ^= x << 13; x ^= x >> 7; x ^= x << 17; order.swap(i, (x % (i as u64 + 1)) as usize); }
        let c = reach_curve(&d.graph, &order);
        prop_assert_eq!(c.largest.len(), n + 1);
        for k in 0..=n {
            let (largest, kappa) = direct(n, &edges, &order[..k]);
            prop_assert_eq!(c.largest[k], largest, "largest after removing {}", k);
            prop_assert_eq!(c.kappa[k].ok(), kappa, "kappa after removing {}", k);
        }
    }
}

#[test]
fn karate_removal_table() {
    // methods.md §5 (static degree ranking, ties by smaller ID): none -> kappa' 6.769231, largest
    // 34; {33} -> 5.639344, 33; {33, 0} -> 3.888889, 26; {33, 0, 32, 2} -> 2.038462, 10.
    let Some(p) = common::check_input("graph-karate.csv") else {
        eprintln!("SKIP: ../shared/reference/check-inputs not found");
        return;
    };
    let d = common::load(&[&p], &[]);
    let node = |id: &str| d.ids.get(id).unwrap();
    let order: Vec<u32> = ["33", "0", "32", "2"].iter().map(|s| node(s)).collect();
    let c = reach_curve(&d.graph, &order);
    for (k, kappa, largest) in [
        (0, 6.769231, 34),
        (1, 5.639344, 33),
        (2, 3.888889, 26),
        (4, 2.038462, 10),
    ] {
        assert!(
            (c.kappa[k].unwrap() - kappa).abs() < 5e-7,
            "kappa' after {k}: {:?}",
            c.kappa[k]
        );
        assert_eq!(c.largest[k], largest, "largest after {k}");
    }
    // The static degree ranking (ties by smaller node index) starts 33, 0, 32, 2 on karate
    // (node indices follow first sight in the file; compare by ID).
    let by_degree: Vec<&str> = degree_order(&d.graph)
        .iter()
        .take(4)
        .map(|&v| d.ids.name(v))
        .collect();
    assert_eq!(by_degree[..3], ["33", "0", "32"]);
}
