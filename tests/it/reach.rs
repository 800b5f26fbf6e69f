//! Reach-out curves: the one-pass reverse union-find equals a direct recomputation for every n
//! (property test), and the karate removal table of methods.md §5.

use crate::common;

use hubwatch::metrics::reach::{
    acquaintance_order, acquaintance_probabilities, average, configuration_model_kappa,
    configuration_model_largest, degree_order, random_order, random_removal_exact, reach_curve,
};
use proptest::prelude::*;
use rand::SeedableRng;

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
        common::skip("../shared/reference/check-inputs not found");
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
    // The static degree ranking (ties by smaller ID) starts 33, 0, 32, 2 on karate (methods.md §5).
    let by_degree: Vec<&str> = degree_order(&d.graph, &d.ids)
        .iter()
        .take(4)
        .map(|&v| d.ids.name(v))
        .collect();
    assert_eq!(by_degree, ["33", "0", "32", "2"]);
}

#[test]
fn ties_by_smaller_id() {
    // Star with centre 9 and leaves 10, 2, 7 (common practice: state the tie rule; methods.md §5
    // says smaller ID). Numeric IDs compare as numbers, so 2 < 7 < 10.
    let dir = tempfile::tempdir().unwrap();
    let e = dir.path().join("e.csv");
    std::fs::write(&e, "source_id,target_id\n9,10\n9,2\n9,7\n").unwrap();
    let d = common::load(&[&e], &[]);
    let names: Vec<&str> = degree_order(&d.graph, &d.ids)
        .iter()
        .map(|&v| d.ids.name(v))
        .collect();
    assert_eq!(names, ["9", "2", "7", "10"]);
}

#[test]
fn karate_random_removal_matches_the_exact_finite_ratio() {
    // methods.md §5: m of N = 34 removed uniformly: E[sum k'(k'-1)] / E[sum k'] =
    // kappa (N-m-2)/(N-2): m = 4 -> 5.923077, m = 10 -> 4.653846. Monte Carlo over 20,000 seeded
    // orders must land within 1%.
    let Some(p) = common::check_input("graph-karate.csv") else {
        common::skip("../shared/reference/check-inputs not found");
        return;
    };
    let d = common::load(&[&p], &[]);
    assert!((random_removal_exact(6.769231, 34, 4).unwrap() - 5.923077).abs() < 1e-6);
    assert!((random_removal_exact(6.769231, 34, 10).unwrap() - 4.653846).abs() < 1e-6);
    let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(7);
    let curves: Vec<_> = (0..20_000)
        .map(|_| {
            let order = random_order(34, &mut rng);
            reach_curve(&d.graph, &order[..10])
        })
        .collect();
    let mean = average(&curves);
    for (m, want) in [(4, 5.923077), (10, 4.653846)] {
        let got = mean.kappa[m].unwrap();
        assert!((got - want).abs() < 0.01 * want, "m = {m}: {got} vs {want}");
    }
}

#[test]
fn karate_acquaintance_probabilities() {
    // methods.md §5: largest pi_j: 33 0.1696078, 0 0.1527778, 32 0.1095732; expected degree of
    // a pick 9.610210.
    let Some(p) = common::check_input("graph-karate.csv") else {
        common::skip("../shared/reference/check-inputs not found");
        return;
    };
    let d = common::load(&[&p], &[]);
    let pi = acquaintance_probabilities(&d.graph);
    assert!((pi.iter().sum::<f64>() - 1.0).abs() < 1e-12);
    for (id, want) in [("33", 0.1696078), ("0", 0.1527778), ("32", 0.1095732)] {
        let got = pi[d.ids.get(id).unwrap() as usize];
        assert!((got - want).abs() < 5e-7, "pi_{id}: {got}");
    }
    let mean_pick: f64 = (0..34u32)
        .map(|v| pi[v as usize] * d.graph.out_degree(v) as f64)
        .sum();
    assert!((mean_pick - 9.610210).abs() < 5e-6, "{mean_pick}");
    // The sampled order: the share of 10,000 seeded orders whose first pick is person 33 is
    // pi_33 within 3 standard errors (binomial; common practice, no source).
    let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(11);
    let centre = d.ids.get("33").unwrap();
    let hits = (0..10_000)
        .filter(|_| acquaintance_order(&d.graph, &mut rng)[0] == centre)
        .count() as f64
        / 10_000.0;
    let se = (0.1696078f64 * (1.0 - 0.1696078) / 10_000.0).sqrt();
    assert!((hits - 0.1696078).abs() < 3.0 * se, "{hits}");
    // Everyone with a contact appears exactly once.
    let mut o = acquaintance_order(&d.graph, &mut rng);
    o.sort();
    assert_eq!(o, (0..34).collect::<Vec<u32>>());
}

#[test]
fn dist_small_configuration_model_removal() {
    // methods.md §5, dist-small (p_0..p_8 = .1,.2,.3,.2,0,.1,0,0,.1 as ten people): removing all
    // with k >= 5 (20%) -> kappa' = 2/3; removing a random 20% -> 2.785185 (from 3.481481), the
    // mean over all 45 pairs of removed people.
    let degrees = [0u32, 1, 1, 2, 2, 2, 3, 3, 5, 8];
    let c = configuration_model_kappa(&degrees, &[9, 8]);
    assert!((c[0].unwrap() - 3.4814815).abs() < 5e-7);
    assert!((c[2].unwrap() - 2.0 / 3.0).abs() < 1e-12);
    let mut sum = 0.0;
    let mut pairs = 0;
    for a in 0..10u32 {
        for b in a + 1..10 {
            sum += configuration_model_kappa(&degrees, &[a, b])[2].unwrap();
            pairs += 1;
        }
    }
    assert!(
        (sum / pairs as f64 - 2.785185).abs() < 5e-7,
        "{}",
        sum / pairs as f64
    );
}

#[test]
fn configuration_model_largest_cluster() {
    // Poisson degrees with mean 4 (ten million people, counts N p_k rounded to even numbers),
    // half of every degree class removed: site percolation with phi = 1/2 on a Poisson network
    // is the same equation as transmissibility T = 1/2, so the giant cluster is
    // phi * 0.7968121 = 0.39840605 of all people (methods.md §4 Poisson row; the equivalence
    // of uniform site and bond occupation for the cluster equation is derived here).
    let n = 10_000_000f64;
    let mut degrees = Vec::new();
    let mut p = (-4.0f64).exp();
    for k in 0..60u32 {
        if k > 0 {
            p *= 4.0 / k as f64;
        }
        let count = 2 * ((n * p / 2.0).round() as usize);
        degrees.extend(std::iter::repeat_n(k, count));
    }
    let total = degrees.len();
    // Remove every other person in degree order: exactly half of each (even) class.
    let order: Vec<u32> = (0..total as u32).step_by(2).collect();
    let got = configuration_model_largest(&degrees, &order, &[0, order.len()]);
    let whole = got[0].unwrap() / total as f64;
    // Nobody removed: S = 1 - exp(-4 S) (the methods.md §4 Poisson form with R0 = 4),
    // S = 0.9801726 (solved by iteration in Python for this comment).
    assert!((whole - 0.9801726).abs() < 1e-5, "{whole}");
    let half = got[1].unwrap() / total as f64;
    assert!((half - 0.39840605).abs() < 1e-5, "{half}");
    // Below the residual threshold there is no giant cluster (dist-small, k >= 5 removed:
    // kappa' = 2/3, methods.md §5).
    let small = [0u32, 1, 1, 2, 2, 2, 3, 3, 5, 8];
    let got = configuration_model_largest(&small, &[9, 8], &[2]);
    assert_eq!(got[0], Ok(0.0));
}
