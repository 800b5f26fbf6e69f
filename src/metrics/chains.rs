//! Time-respecting chains over dated exposures: who could have been exposed after whom.
//!
//! A *step* is an exposure between two people on one day (a row with a first and a last
//! exposure date counts on every day from the one to the other). A chain is a sequence of
//! steps in which each step falls within `min_gap..=max_gap` days after the step that reached
//! the person passing it on: the window in which someone exposed on day `a` could pass the
//! infection on (`min_gap = 0` allows the same day). The first step starts at a seed and
//! must fall within the seed's own window (a case's infectious period).
//!
//! Chains are walks: a person may appear twice on one, because the day on which a person was
//! infected is not known and any of their exposures may be the one. Finding a restless
//! temporal *path* (no person twice, bounded waiting) is NP-hard, while restless *walks*
//! are found in polynomial time (Casteigts, Himmel, Molter & Zschoche, "Finding temporal
//! paths under waiting time constraints", Algorithmica 83, 2021). Walks can only add people,
//! never lose one, which is the safe side for tracing.
//!
//! The search is a label-setting search over (person, day) states in order of (day, steps):
//! the state's steps are final when it is taken from the queue, as every step leads to a
//! later day or, on the same day, to one more step. Each person's earliest state gives the
//! earliest day they could have been exposed and the chain that gives it; the fewest steps
//! over all their states is their generation.

use std::cmp::Reverse;
use std::collections::BinaryHeap;

use crate::graph::{Adjacency, Edges};

/// How chains may continue.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Rules {
    /// Fewest days from being exposed to passing it on (0: the same day counts).
    pub min_gap: i32,
    /// Most days from being exposed to passing it on.
    pub max_gap: i32,
    /// Longest chain followed, in steps (1: the seeds' own contacts only).
    pub generations: u16,
}

/// A person chains start from, and the days on which they could pass it on (inclusive).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Seed {
    /// Node.
    pub node: u32,
    /// First day (i32::MIN: no bound).
    pub from: i32,
    /// Last day (i32::MAX: no bound).
    pub to: i32,
}

const NONE: u32 = u32::MAX;

/// Everyone reached from the seeds, with the states behind each.
#[derive(Debug, Clone, Default)]
pub struct Reach {
    /// Per state: node, day, steps, previous state (NONE: the first step, from `via`).
    node: Vec<u32>,
    day: Vec<i32>,
    steps: Vec<u16>,
    prev: Vec<u32>,
    via: Vec<u32>,
    /// Per node: its earliest state (NONE: not reached).
    earliest: Vec<u32>,
    /// Per node: fewest steps over its states (0: not reached).
    fewest: Vec<u16>,
}

/// One step of a chain: `from` exposed `to` on `day`.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Step {
    /// Who passed it on.
    pub from: u32,
    /// Who was exposed.
    pub to: u32,
    /// The day.
    pub day: i32,
}

impl Reach {
    /// The earliest day `v` could have been exposed, with the steps of that chain.
    pub fn earliest(&self, v: u32) -> Option<(i32, u16)> {
        let s = *self.earliest.get(v as usize)?;
        (s != NONE).then(|| (self.day[s as usize], self.steps[s as usize]))
    }

    /// The fewest steps of any chain to `v` (its generation).
    pub fn generation(&self, v: u32) -> Option<u16> {
        self.fewest.get(v as usize).copied().filter(|&g| g > 0)
    }

    /// The chain giving `v` its earliest day, from the seed.
    pub fn chain(&self, v: u32) -> Vec<Step> {
        let mut out = Vec::new();
        let Some(&s) = self.earliest.get(v as usize) else {
            return out;
        };
        let mut s = s;
        while s != NONE {
            let i = s as usize;
            let from = match self.prev[i] {
                NONE => self.via[i],
                p => self.node[p as usize],
            };
            out.push(Step {
                from,
                to: self.node[i],
                day: self.day[i],
            });
            s = self.prev[i];
        }
        out.reverse();
        out
    }

    /// Everyone reached, in node order.
    pub fn reached(&self) -> impl Iterator<Item = u32> + '_ {
        (0..self.earliest.len() as u32).filter(|&v| self.earliest[v as usize] != NONE)
    }

    /// How many (person, day) states the search settled.
    pub fn states(&self) -> usize {
        self.node.len()
    }
}

/// The days within `lo..=hi` on which pair `e` met.
fn days_within(edges: &Edges, e: usize, lo: i32, hi: i32, mut f: impl FnMut(i32)) {
    for (a, b) in edges.day_spans(e) {
        let (x, y) = (a.max(lo), b.min(hi));
        for t in x..=y {
            f(t);
        }
    }
}

/// Everyone reachable from `seeds` along chains that follow `rules`.
pub fn forward(g: &Adjacency, edges: &Edges, seeds: &[Seed], rules: &Rules) -> Reach {
    let n = g.node_count();
    let mut r = Reach {
        earliest: vec![NONE; n],
        fewest: vec![0; n],
        ..Reach::default()
    };
    if rules.generations == 0 || rules.max_gap < rules.min_gap {
        return r;
    }
    let mut index: hashbrown::HashMap<(u32, i32), u32> = hashbrown::HashMap::new();
    let mut queue: BinaryHeap<Reverse<(i32, u16, u32)>> = BinaryHeap::new();
    // Offer state (v, t) with `steps`, reached from state `prev` (or from seed `via`).
    let mut offer = |r: &mut Reach,
                     queue: &mut BinaryHeap<Reverse<(i32, u16, u32)>>,
                     (v, t, steps, prev, via): (u32, i32, u16, u32, u32)| {
        match index.entry((v, t)) {
            hashbrown::hash_map::Entry::Occupied(o) => {
                let s = *o.get() as usize;
                if steps < r.steps[s] {
                    r.steps[s] = steps;
                    r.prev[s] = prev;
                    r.via[s] = via;
                    queue.push(Reverse((t, steps, s as u32)));
                }
            }
            hashbrown::hash_map::Entry::Vacant(slot) => {
                let s = r.node.len() as u32;
                slot.insert(s);
                r.node.push(v);
                r.day.push(t);
                r.steps.push(steps);
                r.prev.push(prev);
                r.via.push(via);
                queue.push(Reverse((t, steps, s)));
            }
        }
    };
    for seed in seeds {
        let u = seed.node;
        if u as usize >= n {
            continue;
        }
        for (&v, &e) in g.neighbors_slice(u).iter().zip(g.edges_slice(u)) {
            days_within(edges, e as usize, seed.from, seed.to, |t| {
                offer(&mut r, &mut queue, (v, t, 1, NONE, u));
            });
        }
    }
    while let Some(Reverse((a, steps, s))) = queue.pop() {
        let si = s as usize;
        if steps > r.steps[si] {
            continue; // improved since it was queued
        }
        if steps >= rules.generations {
            continue;
        }
        let u = r.node[si];
        let (lo, hi) = (
            a.saturating_add(rules.min_gap),
            a.saturating_add(rules.max_gap),
        );
        for (&v, &e) in g.neighbors_slice(u).iter().zip(g.edges_slice(u)) {
            days_within(edges, e as usize, lo, hi, |t| {
                offer(&mut r, &mut queue, (v, t, steps + 1, s, u));
            });
        }
    }
    for s in 0..r.node.len() {
        let (v, t, g) = (r.node[s] as usize, r.day[s], r.steps[s]);
        let cur = r.earliest[v];
        let better = cur == NONE || {
            let c = cur as usize;
            (t, g) < (r.day[c], r.steps[c])
        };
        if better {
            r.earliest[v] = s as u32;
        }
        if r.fewest[v] == 0 || g < r.fewest[v] {
            r.fewest[v] = g;
        }
    }
    r
}

/// A person whose possible sources are sought, and the days in which they could have been
/// infected (inclusive).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Target {
    /// Node.
    pub node: u32,
    /// First day of the window.
    pub from: i32,
    /// Last day of the window.
    pub to: i32,
}

/// One possible source of one target: `source` met `target` on `day` (the earliest day inside
/// the target's window).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Candidate {
    /// The target's index in the targets given.
    pub target: usize,
    /// The possible source.
    pub source: u32,
    /// Earliest day of their exposure inside the target's window.
    pub day: i32,
}

/// The people each target met inside its window, once per (target, source).
pub fn backward(g: &Adjacency, edges: &Edges, targets: &[Target]) -> Vec<Candidate> {
    let mut out = Vec::new();
    for (i, t) in targets.iter().enumerate() {
        if t.node as usize >= g.node_count() {
            continue;
        }
        for (&v, &e) in g.neighbors_slice(t.node).iter().zip(g.edges_slice(t.node)) {
            let first = edges
                .day_spans(e as usize)
                .filter(|&(a, b)| a <= t.to && b >= t.from)
                .map(|(a, _)| a.max(t.from))
                .min();
            if let Some(day) = first {
                out.push(Candidate {
                    target: i,
                    source: v,
                    day,
                });
            }
        }
    }
    out
}
