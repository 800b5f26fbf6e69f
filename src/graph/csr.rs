//! The adjacency (petgraph's [`Csr`]) of the pairs. Each person's neighbour list is placed by a
//! counting sort on two cores ([`lists`]); petgraph then builds its adjacency from the lists in
//! one pass on one core. A load runs that pass on a thread of its own ([`AdjacencyCell`]) while
//! the statistics that need only the pairs and the degrees begin; whatever needs the graph
//! waits for it on first use.

use std::mem::MaybeUninit;
use std::sync::{Arc, Mutex, OnceLock};
use std::thread::JoinHandle;

use petgraph::csr::Csr;

use super::{Adjacency, Edges};
use crate::prefetch::{prefetch, PAIRS_AHEAD};

/// Neighbour lists of fewer entries are made into the graph at once (a thread costs more).
/// Larger ones of any size are made into it beside the statistics: the lists and the graph's
/// growing arrays then share memory with the statistics' first arrays, but at 106M rows the
/// peak stayed under 10 GiB (9862-10091 MiB in five runs, 9883 MiB built at once) and the
/// whole run took 57.2-61.3 s against 69.5 s.
const BESIDE_FROM: usize = 100_000;

/// Every person's neighbour list, sorted, each entry with its pair (what petgraph's adjacency
/// is built from), and every person's degree.
pub struct Lists {
    /// (person, neighbour, pair), by person then neighbour.
    list: Vec<(u32, u32, u32)>,
    nodes: usize,
    degrees: Vec<u32>,
}

impl Lists {
    /// Degree of every person.
    pub fn degrees(&self) -> &[u32] {
        &self.degrees
    }

    /// petgraph's adjacency of the lists (one pass on this core).
    pub fn build(self) -> Adjacency {
        build(&self.list, self.nodes)
    }
}

/// The adjacency over `nodes` people from their sorted lists.
fn build(list: &[(u32, u32, u32)], nodes: usize) -> Adjacency {
    // Sorted and unique by construction, so this cannot fail; a failure would leave an empty
    // graph, which the tests on every loader path would catch.
    let mut g: Adjacency = Csr::from_sorted_edges(list).unwrap_or_else(|_| Csr::new());
    while g.node_count() < nodes {
        g.add_node(());
    }
    g
}

/// Build the adjacency over `nodes` people (isolated ones included), on this thread.
pub fn adjacency(nodes: usize, edges: &Edges) -> Adjacency {
    lists(nodes, edges).build()
}

/// The neighbour lists of `nodes` people (isolated ones included).
///
/// `edges` come sorted by (a, b) with a < b (as [`super::aggregate`] leaves them). Placing each pair
/// into both rows with a counting sort then yields every row already sorted: row v first
/// receives its smaller neighbours (from pairs (x, v), in increasing x) and then its larger ones
/// (from pairs (v, y), in increasing y). So no second sort is needed.
pub fn lists(nodes: usize, edges: &Edges) -> Lists {
    let mut offset = vec![0usize; nodes + 1];
    for (e, (&a, &b)) in edges.a.iter().zip(&edges.b).enumerate() {
        crate::prefetch::second_end_ahead(&offset[1..], &edges.b, e, 1);
        offset[a as usize + 1] += 1;
        offset[b as usize + 1] += 1;
    }
    let degrees: Vec<u32> = offset[1..].iter().map(|&k| k as u32).collect();
    for i in 0..nodes {
        offset[i + 1] += offset[i];
    }
    // Two workers, each writing the lists of its own half of the nodes (about half of the
    // entries each) while reading every pair in order, so each list keeps pair order. The
    // list is not zeroed first (that was a pass over it on one core): every entry is written
    // once by the fill.
    let total = offset[nodes];
    let mut list: Vec<(u32, u32, u32)> = Vec::with_capacity(total);
    let mid = offset.partition_point(|&o| o < total / 2).min(nodes);
    let (list_lo, list_hi) = list.spare_capacity_mut()[..total].split_at_mut(offset[mid]);
    let (next_lo, next_hi) = offset.split_at_mut(mid);
    type Room = [MaybeUninit<(u32, u32, u32)>];
    let fill = |list: &mut Room, next: &mut [usize], (first, base): (usize, usize)| {
        let end = first + next.len();
        for (e, (&a, &b)) in edges.a.iter().zip(&edges.b).enumerate() {
            // The second ends come at random: ask for their next slots ahead, and for the
            // list entries those slots point at half as far ahead.
            let ahead = |d: usize| edges.b.get(e + d).map(|&y| y as usize);
            if let Some(y) = ahead(PAIRS_AHEAD).filter(|y| (first..end).contains(y)) {
                prefetch(next, y - first);
            }
            if let Some(y) = ahead(PAIRS_AHEAD / 2).filter(|y| (first..end).contains(y)) {
                prefetch(list, next[y - first].wrapping_sub(base));
            }
            for (v, w) in [(a, b), (b, a)] {
                let v = v as usize;
                if (first..end).contains(&v) {
                    let slot = &mut next[v - first];
                    list[*slot - base].write((v as u32, w, e as u32));
                    *slot += 1;
                }
            }
        }
    };
    let hi_base = next_hi.first().copied().unwrap_or(total);
    crate::par::beside(
        edges.a.len() >= 100_000,
        || fill(list_hi, next_hi, (mid, hi_base)),
        || fill(list_lo, next_lo, (0, 0)),
    );
    // SAFETY: the counts give each node `degree` slots, together exactly `0..total`, and each
    // pair wrote one entry into a slot of each of its two nodes: every entry is written.
    unsafe { list.set_len(total) };
    Lists {
        list,
        nodes,
        degrees,
    }
}

/// A dataset's adjacency: ready, or being built on a thread of its own (see the module), with
/// every person's degree known from the start. It dereferences to the [`Adjacency`], waiting
/// for it the first time if it is still being built.
pub struct AdjacencyCell {
    degrees: Vec<u32>,
    ready: OnceLock<Adjacency>,
    building: Mutex<Option<JoinHandle<Adjacency>>>,
}

impl AdjacencyCell {
    /// The adjacency of `lists`, built on a thread of its own when the lists are of a size
    /// worth it (see [`BESIDE_FROM`]), else here and now.
    pub fn new(lists: Lists) -> AdjacencyCell {
        let Lists {
            list,
            nodes,
            degrees,
        } = lists;
        if list.len() < BESIDE_FROM {
            return AdjacencyCell::with_degrees(build(&list, nodes), degrees);
        }
        let list = Arc::new(list);
        let mine = Arc::clone(&list);
        let spawned = std::thread::Builder::new()
            .name("adjacency".into())
            .spawn(move || build(&mine, nodes));
        match spawned {
            Ok(handle) => AdjacencyCell {
                degrees,
                ready: OnceLock::new(),
                building: Mutex::new(Some(handle)),
            },
            // No thread to be had: built here.
            Err(_) => AdjacencyCell::with_degrees(build(&list, nodes), degrees),
        }
    }

    fn with_degrees(g: Adjacency, degrees: Vec<u32>) -> AdjacencyCell {
        AdjacencyCell {
            degrees,
            ready: OnceLock::from(g),
            building: Mutex::new(None),
        }
    }

    /// Degree of every person (without waiting for the adjacency).
    pub fn degrees(&self) -> &[u32] {
        &self.degrees
    }

    /// The adjacency, once built (the first call waits for it while it is being built).
    pub fn get(&self) -> &Adjacency {
        self.ready.get_or_init(|| {
            let handle = self
                .building
                .lock()
                .unwrap_or_else(|e| e.into_inner())
                .take()
                .expect("an adjacency not ready is being built");
            handle
                .join()
                .unwrap_or_else(|p| std::panic::resume_unwind(p))
        })
    }
}

impl std::ops::Deref for AdjacencyCell {
    type Target = Adjacency;

    fn deref(&self) -> &Adjacency {
        self.get()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Pairs sorted by (a, b), a < b, distinct: enough of them for the lists to be built into
    /// the graph on a thread of their own.
    fn edges(nodes: u32, pairs: usize) -> Edges {
        let mut x = 0x2545_f491_4f6c_dd1d_u64;
        let mut next = || {
            x ^= x << 13;
            x ^= x >> 7;
            x ^= x << 17;
            (x % u64::from(nodes)) as u32
        };
        let mut p: Vec<(u32, u32)> = (0..pairs)
            .map(|_| (next(), next()))
            .filter(|(a, b)| a != b)
            .map(|(a, b)| (a.min(b), a.max(b)))
            .collect();
        p.sort_unstable();
        p.dedup();
        Edges {
            a: p.iter().map(|x| x.0).collect(),
            b: p.iter().map(|x| x.1).collect(),
            ..Edges::default()
        }
    }

    /// Built on its own thread, read from two threads at once: the same adjacency (contacts
    /// and pair of each) and degrees as built here, people without contacts included.
    #[test]
    fn built_beside_is_built_here() {
        let nodes = 30_000;
        let e = edges(nodes as u32 - 5, 80_000);
        let here = adjacency(nodes, &e);
        let cell = AdjacencyCell::new(lists(nodes, &e));
        let on_thread = cell.building.lock().unwrap().is_some();
        assert!(
            on_thread,
            "lists of this size are built on a thread of their own"
        );
        assert_eq!(cell.degrees(), &super::super::degrees(&here)[..]);
        std::thread::scope(|s| {
            for _ in 0..2 {
                s.spawn(|| {
                    let g = cell.get();
                    assert_eq!(g.node_count(), nodes);
                    for v in 0..nodes as u32 {
                        assert_eq!(g.neighbors_slice(v), here.neighbors_slice(v));
                        assert_eq!(g.edges_slice(v), here.edges_slice(v));
                    }
                });
            }
        });
        let small = AdjacencyCell::new(lists(10, &edges(10, 20)));
        assert!(
            small.building.lock().unwrap().is_none(),
            "small lists are built at once"
        );
        assert_eq!(small.degrees(), &super::super::degrees(&small)[..]);
    }
}
