//! Reach-out planning on the actual graph: remove people in a given order (they are reached and
//! no longer transmit) and follow, for every n, the exact largest cluster of the remaining
//! network and its mean excess degree kappa' = sum k'(k'-1) / sum k' (methods sheet §5).
//!
//! The whole curve costs one pass: people are added back in reverse order with a union-find,
//! updating cluster sizes and the residual degree sums as each person returns, instead of one
//! graph walk per n.

use super::Stat;
use crate::graph::Adjacency;

/// The curve for one removal order.
#[derive(Debug, Clone, PartialEq)]
pub struct ReachCurve {
    /// `largest[n]`: people in the largest cluster after removing the first n of the order.
    pub largest: Vec<u32>,
    /// `kappa[n]`: mean excess degree of the remaining network (undefined when no contact is left).
    pub kappa: Vec<Stat>,
}

fn find(parent: &mut [u32], mut x: u32) -> u32 {
    while parent[x as usize] != x {
        let p = parent[x as usize];
        parent[x as usize] = parent[p as usize];
        x = p;
    }
    x
}

/// Join the clusters of `a` and `b` (union by size); returns the size of the joined cluster.
fn union(parent: &mut [u32], size: &mut [u32], a: u32, b: u32) -> u32 {
    let (a, b) = (find(parent, a), find(parent, b));
    if a == b {
        return size[a as usize];
    }
    let (big, small) = if size[a as usize] >= size[b as usize] {
        (a, b)
    } else {
        (b, a)
    };
    parent[small as usize] = big;
    size[big as usize] += size[small as usize];
    size[big as usize]
}

/// Curve for removing `order` (distinct node indices; people not in it are never removed).
pub fn reach_curve(g: &Adjacency, order: &[u32]) -> ReachCurve {
    let n = g.node_count();
    let m = order.len();
    let mut present = vec![true; n];
    for &v in order {
        present[v as usize] = false;
    }
    let mut parent: Vec<u32> = (0..n as u32).collect();
    let mut size = vec![1u32; n];
    let mut deg = vec![0u64; n];
    // Residual sums over present people: S1 = sum k', S2 = sum k'(k'-1).
    let (mut s1, mut s2) = (0u64, 0u64);
    let mut largest = 0u32;
    // Start from the network with everyone in `order` removed.
    for v in 0..n as u32 {
        if !present[v as usize] {
            continue;
        }
        largest = largest.max(1);
        for &w in g.neighbors_slice(v) {
            if present[w as usize] {
                deg[v as usize] += 1;
                if v < w {
                    largest = largest.max(union(&mut parent, &mut size, v, w));
                }
            }
        }
    }
    for v in 0..n {
        if present[v] {
            s1 += deg[v];
            s2 += deg[v] * deg[v].saturating_sub(1);
        }
    }
    let kappa_of = |s1: u64, s2: u64| -> Stat {
        if s1 == 0 {
            Err("no contacts left")
        } else {
            Ok(s2 as f64 / s1 as f64)
        }
    };
    let mut largest_rev = vec![largest];
    let mut kappa_rev = vec![kappa_of(s1, s2)];
    for &v in order.iter().rev() {
        let vi = v as usize;
        present[vi] = true;
        largest = largest.max(1);
        let mut k = 0u64;
        for &w in g.neighbors_slice(v) {
            let wi = w as usize;
            if !present[wi] || w == v {
                continue;
            }
            k += 1;
            // w gains a contact: k'(k'-1) grows by 2k' (old k'), sum k' by 1.
            s2 += 2 * deg[wi];
            s1 += 1;
            deg[wi] += 1;
            largest = largest.max(union(&mut parent, &mut size, v, w));
        }
        deg[vi] = k;
        s1 += k;
        s2 += k * k.saturating_sub(1);
        largest_rev.push(largest);
        kappa_rev.push(kappa_of(s1, s2));
    }
    largest_rev.reverse();
    kappa_rev.reverse();
    debug_assert_eq!(largest_rev.len(), m + 1);
    ReachCurve {
        largest: largest_rev,
        kappa: kappa_rev,
    }
}

/// Highest degree first: a static ranking on the original degrees, ties by smaller node index
/// (state the rule with the results; adaptive re-ranking would be a different strategy).
pub fn degree_order(g: &Adjacency) -> Vec<u32> {
    let mut v: Vec<u32> = (0..g.node_count() as u32).collect();
    v.sort_by(|&a, &b| g.out_degree(b).cmp(&g.out_degree(a)).then(a.cmp(&b)));
    v
}
