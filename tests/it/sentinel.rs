//! Sentinel sample (friend sampling): reproducible by seed, and the mean degree of picks
//! converges to version (b) of the friendship paradox (methods.md §2 and §5: karate 9.610210,
//! against 4.588235 for a uniformly random person).

use crate::common;

use common::{check_input, load};
use hubwatch::analysis::sentinel::{friend_sample, mean_pick_degree};

#[test]
fn reproducible_distinct_and_converging_to_version_b() {
    let Some(p) = check_input("graph-karate.csv") else {
        common::skip("../shared/reference/check-inputs not found");
        return;
    };
    let d = load(&[&p], &[]);
    let a = friend_sample(&d.graph, 10, 7);
    assert_eq!(a, friend_sample(&d.graph, 10, 7), "same seed, same sample");
    assert_ne!(a, friend_sample(&d.graph, 10, 8));
    let mut nodes: Vec<u32> = a.iter().map(|p| p.node).collect();
    nodes.sort_unstable();
    nodes.dedup();
    assert_eq!(nodes.len(), 10, "sentinels are distinct");
    for pick in &a {
        assert!(
            d.graph.neighbors_slice(pick.via).contains(&pick.node),
            "each sentinel is a contact of the person drawn"
        );
    }
    // 400,000 single draws: the standard error of the mean is about sd(k)/sqrt(n) < 0.01.
    let m = mean_pick_degree(&d.graph, 400_000, 11).unwrap();
    assert!(
        (m - 9.610210).abs() < 0.05,
        "mean degree of picks {m}, expected 9.610210 (methods.md §5)"
    );
    // The sample cannot hold more distinct people than have a contact.
    assert!(friend_sample(&d.graph, 1000, 1).len() <= 34);
}
