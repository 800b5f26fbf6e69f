//! Structure: clustering (triangles), k-core numbers and articulation points ("bridges": people
//! whose removal splits their cluster). Components are in [`crate::graph::components`].
//!
//! Household cliques make clustering high in tracing networks; the configuration-model
//! indicators assume a locally tree-like network, so a high transitivity is a warning sign for
//! them.

use super::Stat;
use crate::graph::Adjacency;

/// Clustering figures.
#[derive(Debug, Clone, PartialEq)]
pub struct Clustering {
    /// Triangles through each person.
    pub triangles: Vec<u64>,
    /// Global transitivity: 3 x triangles / connected triples.
    pub transitivity: Stat,
    /// Mean of local clustering over all people, 0 for people with fewer than two contacts
    /// (the networkx `average_clustering` convention).
    pub mean_local: Stat,
}

/// Count triangles by merging sorted neighbour lists (each triangle u < v < w found once).
pub fn clustering(g: &Adjacency, deg: &[u32]) -> Clustering {
    use rayon::prelude::*;
    let n = deg.len();
    // People are split into blocks walked on all cores; each block's counts go into an array of
    // its worker's own, summed at the end (integers, so the result is the same however split).
    let t = (0..n as u32)
        .into_par_iter()
        .with_min_len(1 << 14)
        .fold(
            || vec![0u64; n],
            |mut t, u| {
                triangles_at(g, u, &mut t);
                t
            },
        )
        .reduce_with(|mut x, y| {
            x.iter_mut().zip(&y).for_each(|(x, y)| *x += y);
            x
        })
        .unwrap_or_default();
    let triples: u128 = deg
        .iter()
        .map(|&k| u128::from(k) * u128::from(k.saturating_sub(1)) / 2)
        .sum();
    let closed: u128 = t.iter().map(|&x| u128::from(x)).sum();
    let transitivity = if triples == 0 {
        Err("no person has two contacts")
    } else {
        Ok(closed as f64 / triples as f64)
    };
    let mean_local = if n == 0 {
        Err("no people")
    } else {
        let s: f64 = (0..n)
            .filter(|&i| deg[i] >= 2)
            .map(|i| t[i] as f64 / (f64::from(deg[i]) * f64::from(deg[i] - 1) / 2.0))
            .sum();
        Ok(s / n as f64)
    };
    Clustering {
        triangles: t,
        transitivity,
        mean_local,
    }
}

/// The triangles (u, v, w), u < v < w, that `u` closes, added to each corner's count.
#[inline]
fn triangles_at(g: &Adjacency, u: u32, t: &mut [u64]) {
    let nu = g.neighbors_slice(u);
    for &v in nu.iter().filter(|&&v| v > u) {
        let nv = g.neighbors_slice(v);
        // Common neighbours w > v.
        let (mut i, mut j) = (
            nu.partition_point(|&w| w <= v),
            nv.partition_point(|&w| w <= v),
        );
        while i < nu.len() && j < nv.len() {
            match nu[i].cmp(&nv[j]) {
                std::cmp::Ordering::Less => i += 1,
                std::cmp::Ordering::Greater => j += 1,
                std::cmp::Ordering::Equal => {
                    t[u as usize] += 1;
                    t[v as usize] += 1;
                    t[nu[i] as usize] += 1;
                    i += 1;
                    j += 1;
                }
            }
        }
    }
}

/// k-core number of every person (Batagelj & Zaversnik 2003, O(M)).
pub fn core_numbers(g: &Adjacency, deg: &[u32]) -> Vec<u32> {
    let n = deg.len();
    let max = deg.iter().copied().max().unwrap_or(0) as usize;
    let mut d: Vec<u32> = deg.to_vec();
    // Bucket people by degree; pos/vert give the order and each person's place in it.
    let mut bin = vec![0usize; max + 2];
    for &k in &d {
        bin[k as usize + 1] += 1;
    }
    for k in 1..bin.len() {
        bin[k] += bin[k - 1];
    }
    let mut pos = vec![0usize; n];
    let mut vert = vec![0u32; n];
    let mut next = bin.clone();
    for v in 0..n {
        let k = d[v] as usize;
        pos[v] = next[k];
        vert[next[k]] = v as u32;
        next[k] += 1;
    }
    for i in 0..n {
        let v = vert[i] as usize;
        for &u in g.neighbors_slice(v as u32) {
            let u = u as usize;
            if d[u] > d[v] {
                // Move u to the front of its bucket, then shrink its degree by one.
                let du = d[u] as usize;
                let pu = pos[u];
                let pw = bin[du];
                let w = vert[pw] as usize;
                if u != w {
                    vert.swap(pu, pw);
                    pos[u] = pw;
                    pos[w] = pu;
                }
                bin[du] += 1;
                d[u] -= 1;
            }
        }
    }
    d
}

/// People whose removal disconnects their cluster (articulation points), by an iterative
/// depth-first search with low-link values (Hopcroft & Tarjan 1973), sorted by node index.
pub fn articulation_points(g: &Adjacency) -> Vec<u32> {
    let n = g.node_count();
    const UNSEEN: u32 = u32::MAX;
    let mut disc = vec![UNSEEN; n];
    let mut low = vec![0u32; n];
    let mut is_cut = vec![false; n];
    let mut time = 0u32;
    // Stack of (node, parent, index of next neighbour to visit).
    let mut stack: Vec<(u32, u32, usize)> = Vec::new();
    for root in 0..n as u32 {
        if disc[root as usize] != UNSEEN {
            continue;
        }
        let mut root_children = 0;
        disc[root as usize] = time;
        low[root as usize] = time;
        time += 1;
        stack.push((root, UNSEEN, 0));
        while let Some(&mut (v, parent, ref mut next)) = stack.last_mut() {
            let nb = g.neighbors_slice(v);
            if *next < nb.len() {
                let w = nb[*next];
                *next += 1;
                if w == parent {
                    continue;
                }
                if disc[w as usize] == UNSEEN {
                    disc[w as usize] = time;
                    low[w as usize] = time;
                    time += 1;
                    if v == root {
                        root_children += 1;
                    }
                    stack.push((w, v, 0));
                } else {
                    low[v as usize] = low[v as usize].min(disc[w as usize]);
                }
            } else {
                stack.pop();
                if parent != UNSEEN {
                    low[parent as usize] = low[parent as usize].min(low[v as usize]);
                    if parent != root && low[v as usize] >= disc[parent as usize] {
                        is_cut[parent as usize] = true;
                    }
                }
            }
        }
        if root_children >= 2 {
            is_cut[root as usize] = true;
        }
    }
    (0..n as u32).filter(|&v| is_cut[v as usize]).collect()
}
