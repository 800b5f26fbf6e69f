//! Structure: clustering (triangles), k-core numbers and articulation points ("bridges": people
//! whose removal splits their cluster). Components are in [`crate::graph::components`], and come
//! with the articulation points from their one search ([`cut_points_and_components`]).
//!
//! Household cliques make clustering high in tracing networks; the configuration-model
//! indicators assume a locally tree-like network, so a high transitivity is a warning sign for
//! them.

use super::Stat;
use crate::graph::Adjacency;
use crate::prefetch::prefetch;

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

/// Count triangles by merging sorted lists of higher-ranked contacts (each triangle found once).
pub fn clustering(g: &Adjacency, deg: &[u32]) -> Clustering {
    let n = deg.len();
    let t = triangle_counts(g, deg);
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

/// People per block of the triangle walk.
const BLOCK: usize = 1 << 14;

/// Each person's contacts of higher rank, ranks ordered by (degree, node index): a triangle's
/// lowest-ranked corner finds it, once, by merging its list with its middle corner's. Lists of
/// higher rank stay short even at hubs (at most about the square root of twice the number of
/// pairs), which bounds the merging work (Schank & Wagner 2005, "forward" ordering).
///
/// Every pair is in exactly one list, and pair numbers are `u32` throughout the graph, so the
/// list starts fit `u32` (half the memory of `usize`, more of them cached in the walk).
struct Forward {
    start: Vec<u32>,
    list: Vec<u32>,
}

impl Forward {
    /// Built in two halves of the people, one per core, joined in order.
    fn new(g: &Adjacency, deg: &[u32]) -> Forward {
        let n = deg.len();
        let half = |range: std::ops::Range<usize>| {
            let above = |u: u32, v: u32| (deg[v as usize], v) > (deg[u as usize], u);
            let mut ends = Vec::with_capacity(range.len());
            let mut list = Vec::new();
            for u in range {
                let u = u as u32;
                // Neighbour lists are sorted by node index, and so stay the filtered ones.
                list.extend(g.neighbors_slice(u).iter().filter(|&&v| above(u, v)));
                ends.push(list.len() as u32);
            }
            (ends, list)
        };
        let mid = n / 2;
        let ((mut ends, mut list), (ends_hi, list_hi)) =
            crate::par::beside(n >= 100_000, || half(mid..n), || half(0..mid));
        let base = list.len() as u32;
        list.extend_from_slice(&list_hi);
        drop(list_hi);
        let mut start = Vec::with_capacity(n + 1);
        start.push(0u32);
        start.append(&mut ends);
        start.extend(ends_hi.iter().map(|&e| e + base));
        Forward { start, list }
    }

    #[inline]
    fn of(&self, u: u32) -> &[u32] {
        &self.list[self.start[u as usize] as usize..self.start[u as usize + 1] as usize]
    }
}

/// Triangles through each person. Blocks of people go to as many tasks as there are worker
/// threads, each with one count array of its own (so at most that many arrays of n counts
/// exist at once, however the work is split), summed at the end: integers, so the result is the
/// same however the blocks fall.
fn triangle_counts(g: &Adjacency, deg: &[u32]) -> Vec<u64> {
    use std::sync::atomic::{AtomicUsize, Ordering};
    use std::sync::Mutex;
    let n = deg.len();
    let fwd = Forward::new(g, deg);
    let next = AtomicUsize::new(0);
    let parts: Mutex<Vec<Vec<u64>>> = Mutex::new(Vec::new());
    rayon::scope(|s| {
        for _ in 0..rayon::current_num_threads().max(1) {
            s.spawn(|_| {
                // The array is made only once this task gets a block (a task that starts after
                // the others took every block costs nothing).
                let mut t: Vec<u64> = Vec::new();
                loop {
                    let start = next.fetch_add(BLOCK, Ordering::Relaxed);
                    if start >= n {
                        break;
                    }
                    if t.is_empty() {
                        t = vec![0u64; n];
                    }
                    for u in start..(start + BLOCK).min(n) {
                        triangles_at(&fwd, u as u32, &mut t);
                    }
                }
                if !t.is_empty() {
                    parts.lock().unwrap_or_else(|e| e.into_inner()).push(t);
                }
            });
        }
    });
    let mut parts = parts.into_inner().unwrap_or_else(|e| e.into_inner());
    let mut t = parts.pop().unwrap_or_else(|| vec![0u64; n]);
    for p in parts {
        t.iter_mut().zip(&p).for_each(|(x, y)| *x += y);
    }
    t
}

/// How many people ahead of the walk the lists of their contacts are asked for (the list
/// starts of the contacts of the person twice as far on are asked for first, so that finding
/// where a list lies does not itself wait). One person (about five lists) measured best: with
/// four, the requests outnumber what the processor keeps in flight (clustering at 10.6M rows
/// 0.42 s against 0.47 s, and 0.62 s with no request ahead). The counts are not asked for:
/// few pairs close a triangle, so most such requests would be wasted.
const AHEAD: u32 = 1;

/// The triangles whose lowest-ranked corner is `u`, added to each corner's count.
///
/// The lists of u's contacts sit anywhere in memory; those of person `u + AHEAD`'s contacts
/// are asked for now, so that they have arrived by the time the walk gets there.
#[inline]
fn triangles_at(fwd: &Forward, u: u32, t: &mut [u64]) {
    let people = fwd.start.len() - 1;
    let far = (u + 2 * AHEAD) as usize;
    if far < people {
        for &v in fwd.of(far as u32) {
            prefetch(&fwd.start, v as usize);
        }
    }
    let ahead = (u + AHEAD) as usize;
    if ahead < people {
        for &v in fwd.of(ahead as u32) {
            prefetch(&fwd.list, fwd.start[v as usize] as usize);
        }
    }
    let nu = fwd.of(u);
    for &v in nu {
        let nv = fwd.of(v);
        // Common contacts of higher rank than both (both lists sorted by node index).
        let (mut i, mut j) = (0, 0);
        // Without branches on the comparison (which way it goes is a coin toss): a
        // common contact is rare, so only that test is a branch.
        while i < nu.len() && j < nv.len() {
            let (a, b) = (nu[i], nv[j]);
            if a == b {
                t[u as usize] += 1;
                t[v as usize] += 1;
                t[a as usize] += 1;
            }
            i += usize::from(a <= b);
            j += usize::from(b <= a);
        }
    }
}

/// How many people ahead of the k-core peeling their lists are asked for (and half as far
/// ahead, their contacts' degrees).
const CORE_AHEAD: usize = 8;

/// A person already peeled off, in the k-core walk's degree array.
const PEELED: u32 = u32::MAX;

/// k-core number of every person, by peeling in levels: at level k, everyone whose degree
/// among the people left is at most k is taken off (their core number is k), with each
/// contact left losing one degree and, at k or below, following them in the same level.
///
/// The same numbers as Batagelj & Zaversnik's bucket order (2003), with one random access per
/// contact (its degree, and whether it is gone, in one word) where the bucket moves took three;
/// each level scans the people still left in order.
pub fn core_numbers(g: &Adjacency, deg: &[u32]) -> Vec<u32> {
    let n = deg.len();
    let mut left_deg = deg.to_vec();
    let mut core = vec![0u32; n];
    let mut left: Vec<u32> = (0..n as u32).collect();
    let mut queue: Vec<u32> = Vec::new();
    // Everyone left has a degree above the last level: the next level is the least degree
    // among them (found while the level's people are dropped from `left`).
    let mut least = deg.iter().copied().min().unwrap_or(0);
    let mut k = 0u32;
    while !left.is_empty() {
        k = least.max(k);
        queue.clear();
        for &v in &left {
            if left_deg[v as usize] <= k {
                left_deg[v as usize] = PEELED;
                queue.push(v);
            }
        }
        let mut i = 0;
        while i < queue.len() {
            if let Some(&x) = queue.get(i + CORE_AHEAD) {
                prefetch(g.neighbors_slice(x), 0);
            }
            if let Some(&x) = queue.get(i + CORE_AHEAD / 2) {
                for &u in g.neighbors_slice(x) {
                    prefetch(&left_deg, u as usize);
                }
            }
            let v = queue[i];
            core[v as usize] = k;
            for &u in g.neighbors_slice(v) {
                let d = &mut left_deg[u as usize];
                if *d == PEELED {
                    continue;
                }
                *d -= 1;
                if *d <= k {
                    *d = PEELED;
                    queue.push(u);
                }
            }
            i += 1;
        }
        least = u32::MAX;
        left.retain(|&v| {
            let d = left_deg[v as usize];
            least = least.min(d);
            d != PEELED
        });
    }
    core
}

/// How many frames down the search path the lists of contacts still to look at are asked for,
/// and their discovery times.
const UNWIND_FAR: usize = 8;
const UNWIND_NEAR: usize = 4;

/// People whose removal disconnects their cluster (articulation points), by an iterative
/// depth-first search with low-link values (Hopcroft & Tarjan 1973), sorted by node index.
pub fn articulation_points(g: &Adjacency) -> Vec<u32> {
    cut_points_and_components(g).0
}

/// [`articulation_points`] and the connected components (labels and sizes exactly as
/// [`crate::graph::components`] gives them) from the one depth-first search: each search
/// starts at the lowest node not yet seen, so a cluster's label is the order of its first
/// node.
pub fn cut_points_and_components(g: &Adjacency) -> (Vec<u32>, (Vec<u32>, Vec<u32>)) {
    /// A node on the search path: its contacts still to look at, its parent, its discovery
    /// time and its low-link value. The low-link lives here, not in an array: a child hands
    /// it to the frame below when it is done, so the search touches one array per node
    /// (discovery times) instead of two.
    struct Frame<'a> {
        contacts: std::slice::Iter<'a, u32>,
        v: u32,
        parent: u32,
        disc: u32,
        low: u32,
    }
    let n = g.node_count();
    let mut label = vec![0u32; n];
    let mut sizes: Vec<u32> = Vec::new();
    const UNSEEN: u32 = u32::MAX;
    let mut disc = vec![UNSEEN; n];
    let mut is_cut = vec![false; n];
    let mut time = 0u32;
    let mut stack: Vec<Frame> = Vec::new();
    for root in 0..n as u32 {
        if disc[root as usize] != UNSEEN {
            continue;
        }
        let mut root_children = 0;
        let c = sizes.len() as u32;
        let mut size = 1u32;
        label[root as usize] = c;
        disc[root as usize] = time;
        stack.push(Frame {
            contacts: g.neighbors_slice(root).iter(),
            v: root,
            parent: UNSEEN,
            disc: time,
            low: time,
        });
        time += 1;
        while let Some(top) = stack.last_mut() {
            if let Some(&w) = top.contacts.next() {
                if w == top.parent {
                    continue;
                }
                let seen = disc[w as usize];
                if seen != UNSEEN {
                    top.low = top.low.min(seen);
                    continue;
                }
                let v = top.v;
                label[w as usize] = c;
                size += 1;
                disc[w as usize] = time;
                if v == root {
                    root_children += 1;
                }
                // w's contacts are looked at next: ask for their discovery times now.
                let contacts = g.neighbors_slice(w);
                for &x in contacts {
                    prefetch(&disc, x as usize);
                }
                stack.push(Frame {
                    contacts: contacts.iter(),
                    v: w,
                    parent: v,
                    disc: time,
                    low: time,
                });
                time += 1;
            } else {
                let done = stack.pop().expect("a frame");
                // Going back down the path: the frames below are looked at again soon, and
                // their contacts were asked for long ago (since pushed out of the cache by the
                // subtree above them). Ask again: the list of the frame UNWIND_FAR down, and
                // the discovery times of the contacts of the one UNWIND_NEAR down.
                let len = stack.len();
                if len > UNWIND_FAR {
                    prefetch(stack[len - 1 - UNWIND_FAR].contacts.as_slice(), 0);
                }
                if len > UNWIND_NEAR {
                    for &x in stack[len - 1 - UNWIND_NEAR].contacts.as_slice() {
                        prefetch(&disc, x as usize);
                    }
                }
                if let Some(p) = stack.last_mut() {
                    p.low = p.low.min(done.low);
                    if p.v != root && done.low >= p.disc {
                        is_cut[p.v as usize] = true;
                    }
                }
            }
        }
        if root_children >= 2 {
            is_cut[root as usize] = true;
        }
        sizes.push(size);
    }
    let cut = (0..n as u32).filter(|&v| is_cut[v as usize]).collect();
    (cut, (label, sizes))
}
