//! The statistics the degree tables of a database engine give when the pairs do not come to
//! this machine (`hubwatch summary --aggregates DIR` without `pairs`): the degree distribution
//! and its fits, the excess degree, the friendship paradox, k_nn(k), r and its jackknife SE,
//! computed by the same functions as from the network. Figures that need the whole network
//! are listed with the reason they are missing.

use crate::analysis::stats::{fit_degrees, DegreeFits};
use crate::error::{Error, Result};
use crate::ingest::aggregates::AggregateTables;
use crate::metrics::{degree, mixing, neighbours, Stat};

/// The figures that need every pair, and why they are missing here.
pub const UNAVAILABLE: [(&str, &str); 7] = [
    ("components", "clusters need every pair (the pair table)"),
    ("clustering", "triangles need every pair"),
    ("cores", "k-cores need every pair"),
    ("bridges", "articulation points need every pair"),
    (
        "assortativity.null_model",
        "degree-preserving randomisation needs every pair",
    ),
    (
        "mixing",
        "mixing by area, age group and setting needs every pair with its people",
    ),
    (
        "cases",
        "attack rates, offspring and serial intervals need the pairs with their dates and links",
    ),
];

/// What the degree tables give.
pub struct DegreeTableStats {
    /// Each person's number of contacts (node order).
    pub degrees: Vec<u32>,
    /// Distribution and moments.
    pub degree: degree::DegreeStats,
    /// Fits of the distribution.
    pub fits: DegreeFits,
    /// Neighbour degrees and the paradox.
    pub neighbours: neighbours::Neighbours,
    /// Degree assortativity r.
    pub r: Stat,
    /// Its jackknife standard error.
    pub r_se: Stat,
    /// Distinct contact pairs.
    pub contacts: u64,
}

/// Compute the degree statistics; the tables are checked against each other first.
pub fn compute(t: &AggregateTables) -> Result<DegreeTableStats> {
    let bad = |msg: String| Error::format(&t.dir, format!("aggregate tables disagree: {msg}"));
    let degree = degree::degree_stats(&t.node_degree);
    let from_nodes: Vec<(u32, u64)> = degree
        .histogram
        .iter()
        .enumerate()
        .filter(|(_, &n)| n > 0)
        .map(|(k, &n)| (k as u32, n))
        .collect();
    if from_nodes != t.degrees {
        return Err(bad(
            "the nodes' degrees do not give the degrees table".into()
        ));
    }
    let ends: u64 = t.degrees.iter().map(|&(k, n)| u64::from(k) * n).sum();
    let joint_ends: u64 = t.joint.iter().map(|j| j.2).sum();
    if ends != joint_ends || ends % 2 == 1 {
        return Err(bad(format!(
            "degrees add up to {ends} pair ends, the joint table to {joint_ends}"
        )));
    }
    // Pairs counted once by (j <= k): the joint table counts each pair from both ends.
    let mut joint: Vec<((u32, u32), u64)> = Vec::new();
    for &(j, k, n) in &t.joint {
        match j.cmp(&k) {
            std::cmp::Ordering::Less => joint.push(((j, k), n)),
            std::cmp::Ordering::Equal if n % 2 == 0 => joint.push(((j, k), n / 2)),
            std::cmp::Ordering::Equal => {
                return Err(bad(format!(
                    "an odd count of ends ({n}) at degrees ({j}, {k})"
                )))
            }
            std::cmp::Ordering::Greater => {}
        }
    }
    joint.sort_unstable();
    Ok(DegreeTableStats {
        fits: fit_degrees(&degree.histogram),
        neighbours: neighbours::from_tables(&t.degrees, &t.joint, &t.neighbour_sums),
        r: mixing::assortativity_from_joint(&joint),
        r_se: mixing::jackknife_from_joint(&joint),
        contacts: ends / 2,
        degrees: t.node_degree.clone(),
        degree,
    })
}
