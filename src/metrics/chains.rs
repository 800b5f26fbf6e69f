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
//! over all their states is their generation. A person's exposures in a window come from the
//! pairs ([`ByPair`], for a search from a few people) or from a day-sorted [`Timeline`] of
//! everyone's exposures (for a search from many).

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

/// Where a search finds a person's exposures inside a window of days.
pub trait Exposures {
    /// Number of people.
    fn people(&self) -> usize;
    /// Call `f(other, day)` for every day in `lo..=hi` on which `u` met `other`.
    fn within(&self, u: u32, lo: i32, hi: i32, f: &mut dyn FnMut(u32, i32));
}

/// The graph and its pairs: each window walks all of the person's pairs (no set-up; for a
/// search from a few people).
pub struct ByPair<'a> {
    /// Adjacency.
    pub g: &'a Adjacency,
    /// Pairs with their date spans.
    pub edges: &'a Edges,
}

impl Exposures for ByPair<'_> {
    fn people(&self) -> usize {
        self.g.node_count()
    }

    fn within(&self, u: u32, lo: i32, hi: i32, f: &mut dyn FnMut(u32, i32)) {
        for (&v, &e) in self.g.neighbors_slice(u).iter().zip(self.g.edges_slice(u)) {
            for (a, b) in self.edges.day_spans(e as usize) {
                for t in a.max(lo)..=b.min(hi) {
                    f(v, t);
                }
            }
        }
    }
}

/// Every person's exposures as (day, other person), sorted by day: a window is a binary search
/// and a run of the array (for a search from many people; building it reads every pair once).
pub struct Timeline {
    off: Vec<usize>,
    day: Vec<i32>,
    other: Vec<u32>,
}

impl Timeline {
    /// Build from the graph and its pairs; the people are split between the cores.
    pub fn build(g: &Adjacency, edges: &Edges) -> Timeline {
        use rayon::prelude::*;
        let n = g.node_count();
        let days_of = |u: u32| -> usize {
            g.edges_slice(u)
                .iter()
                .map(|&e| {
                    edges
                        .day_spans(e as usize)
                        .map(|(a, b)| (b - a + 1) as usize)
                        .sum::<usize>()
                })
                .sum()
        };
        let counts: Vec<usize> = (0..n as u32).into_par_iter().map(days_of).collect();
        let mut off = Vec::with_capacity(n + 1);
        off.push(0usize);
        for c in &counts {
            off.push(off.last().copied().unwrap_or(0) + c);
        }
        let total = off[n];
        let mut pairs: Vec<(i32, u32)> = vec![(0, 0); total];
        // Cut the array at people boundaries into pieces of about equal size, one task each.
        let pieces = 64.min(n.max(1));
        let mut slices: Vec<(u32, &mut [(i32, u32)])> = Vec::with_capacity(pieces);
        let mut rest: &mut [(i32, u32)] = &mut pairs;
        let mut start = 0usize;
        for k in 1..=pieces {
            let end = if k == pieces { n } else { n * k / pieces };
            let (head, tail) = rest.split_at_mut(off[end] - off[start]);
            slices.push((start as u32, head));
            rest = tail;
            start = end;
        }
        let ends: Vec<usize> = (1..=pieces)
            .map(|k| if k == pieces { n } else { n * k / pieces })
            .collect();
        slices
            .into_par_iter()
            .zip(ends)
            .for_each(|((first, out), end)| {
                let base = off[first as usize];
                for u in first..end as u32 {
                    let seg = &mut out[off[u as usize] - base..off[u as usize + 1] - base];
                    let mut i = 0;
                    for (&v, &e) in g.neighbors_slice(u).iter().zip(g.edges_slice(u)) {
                        for (a, b) in edges.day_spans(e as usize) {
                            for t in a..=b {
                                seg[i] = (t, v);
                                i += 1;
                            }
                        }
                    }
                    seg.sort_unstable();
                }
            });
        let (day, other) = pairs.into_iter().unzip();
        Timeline { off, day, other }
    }
}

impl Exposures for Timeline {
    fn people(&self) -> usize {
        self.off.len() - 1
    }

    fn within(&self, u: u32, lo: i32, hi: i32, f: &mut dyn FnMut(u32, i32)) {
        let (a, b) = (self.off[u as usize], self.off[u as usize + 1]);
        let days = &self.day[a..b];
        let mut i = days.partition_point(|&d| d < lo);
        while i < days.len() && days[i] <= hi {
            f(self.other[a + i], days[i]);
            i += 1;
        }
    }
}

/// Steps levels whose latest expanded day each person remembers (see [`search`]).
const LEVELS: usize = 4;

/// Everyone reachable from `seeds` along chains that follow `rules`, walking pairs directly
/// (no set-up: for a few seeds).
pub fn forward(g: &Adjacency, edges: &Edges, seeds: &[Seed], rules: &Rules) -> Reach {
    search(&ByPair { g, edges }, seeds, rules)
}

/// The same from many seeds: builds the [`Timeline`] first.
pub fn forward_many(g: &Adjacency, edges: &Edges, seeds: &[Seed], rules: &Rules) -> Reach {
    search(&Timeline::build(g, edges), seeds, rules)
}

/// The states offered so far and the days still to take.
#[derive(Default)]
struct Queue {
    /// (person, day) -> state.
    index: hashbrown::HashMap<(u32, i32), u32>,
    /// Days with states to take, earliest first.
    days: BinaryHeap<Reverse<i32>>,
    /// Per day, the states to take (a state may appear twice when improved).
    bucket: hashbrown::HashMap<i32, Vec<u32>>,
}

impl Queue {
    /// Offer state (v, t) with `steps`, reached from state `prev` (or from seed `via`).
    fn offer(&mut self, r: &mut Reach, (v, t, steps, prev, via): (u32, i32, u16, u32, u32)) {
        let s = match self.index.entry((v, t)) {
            hashbrown::hash_map::Entry::Occupied(o) => {
                let s = *o.get() as usize;
                if steps >= r.steps[s] {
                    return;
                }
                r.steps[s] = steps;
                r.prev[s] = prev;
                r.via[s] = via;
                s as u32
            }
            hashbrown::hash_map::Entry::Vacant(slot) => {
                let s = r.node.len() as u32;
                slot.insert(s);
                r.node.push(v);
                r.day.push(t);
                r.steps.push(steps);
                r.prev.push(prev);
                r.via.push(via);
                s
            }
        };
        let b = self.bucket.entry(t).or_default();
        if b.is_empty() {
            self.days.push(Reverse(t));
        }
        b.push(s);
    }
}

/// The search over any source of exposures.
///
/// States are taken day by day (a queue of days; each day's states in rounds of equal
/// steps). A state (v, t, g) offers the days `t + min_gap ..= t + max_gap`, less those an
/// earlier-taken state of v with at most g steps already offered: that state's window covers
/// this one's from below up to its own last day, with as few steps, so the offers skipped
/// would change nothing (and ties go to the first offer either way).
pub fn search(x: &dyn Exposures, seeds: &[Seed], rules: &Rules) -> Reach {
    let n = x.people();
    let mut r = Reach {
        earliest: vec![NONE; n],
        fewest: vec![0; n],
        ..Reach::default()
    };
    if rules.generations == 0 || rules.max_gap < rules.min_gap {
        return r;
    }
    let mut q = Queue::default();
    for seed in seeds {
        if seed.node as usize >= n {
            continue;
        }
        x.within(seed.node, seed.from, seed.to, &mut |v, t| {
            q.offer(&mut r, (v, t, 1, NONE, seed.node))
        });
    }
    // Per person, the latest day expanded at each steps level below LEVELS.
    let mut latest = vec![[i32::MIN; LEVELS]; n];
    let mut round: Vec<u32> = Vec::new();
    while let Some(Reverse(day)) = q.days.pop() {
        // Rounds of equal steps, fewest first; a round may add states of this day with one
        // more step, taken in a later round.
        while let Some(mut b) = q.bucket.remove(&day) {
            // A state may sit in the bucket more than once (improved since); its current
            // steps decide.
            let Some(low) = b.iter().map(|&s| r.steps[s as usize]).min() else {
                break;
            };
            round.clear();
            b.retain(|&s| {
                let now = r.steps[s as usize] == low;
                if now {
                    round.push(s);
                }
                !now
            });
            round.sort_unstable();
            round.dedup();
            if !b.is_empty() {
                q.bucket.insert(day, b);
            }
            for &s in &round {
                let si = s as usize;
                let (u, steps) = (r.node[si], r.steps[si]);
                if steps >= rules.generations {
                    continue;
                }
                let mut lo = day.saturating_add(rules.min_gap);
                let hi = day.saturating_add(rules.max_gap);
                let lv = &mut latest[u as usize];
                let covered = lv[..LEVELS.min(steps as usize + 1)]
                    .iter()
                    .copied()
                    .max()
                    .unwrap_or(i32::MIN);
                if covered != i32::MIN {
                    lo = lo.max(covered.saturating_add(rules.max_gap).saturating_add(1));
                }
                if (steps as usize) < LEVELS {
                    lv[steps as usize] = day;
                }
                if lo > hi {
                    continue;
                }
                x.within(u, lo, hi, &mut |v, t| {
                    q.offer(&mut r, (v, t, steps + 1, s, u))
                });
            }
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
