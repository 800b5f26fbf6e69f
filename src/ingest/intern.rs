//! Exposure IDs -> node indices on two cores, with the numbering of one sequential pass.
//!
//! Interning is a hash lookup per ID, each one a cache miss at millions of people, and it was
//! the load's critical path. The IDs of a chunk are split by a bit of their hash: each half is
//! looked up by its own worker, first in the (read-only, shared) map of IDs already numbered,
//! then in that worker's own table of IDs new in this table. A short sequential pass then gives
//! each new ID its node index in order of first appearance, so the numbering is exactly the one
//! interning row by row would give; [`NewIds::finish`] appends the new IDs to the map in that
//! order when the table ends.

use std::borrow::Cow;

use crate::ids::{DenseIds, IdMap};

/// Marks a worker's answer as an index into its own table of new IDs (not yet numbered).
const NEW: u32 = 1 << 31;
/// A position the worker does not own.
const NOT_MINE: u32 = u32::MAX;

/// IDs first seen in the exposures table being read, not yet in the shared map.
#[derive(Debug)]
pub struct NewIds {
    /// Each worker's table of new IDs (index = local index).
    shards: [IdMap; 2],
    /// Local index -> node index, `NOT_MINE` until numbered.
    node: [Vec<u32>; 2],
    /// (worker, local index) of each numbered new ID, in node order.
    order: Vec<(u8, u32)>,
    /// The direct index of the people map, when its IDs are numbers behind one prefix.
    dense: Option<DenseIds>,
}

impl NewIds {
    /// No new IDs yet, for lookups in `ids` (the people map; it does not change until
    /// [`NewIds::finish`]).
    pub fn new(ids: &IdMap) -> NewIds {
        let case_sensitive = ids.case_sensitive();
        NewIds {
            shards: [IdMap::new(case_sensitive), IdMap::new(case_sensitive)],
            node: [Vec::new(), Vec::new()],
            order: Vec::new(),
            dense: DenseIds::build(ids),
        }
    }

    /// Node indices of the (source, target) pairs, in order, two per pair; the two halves of
    /// the lookups run on two cores when `parallel` is set.
    pub fn number(
        &mut self,
        ids: &IdMap,
        pairs: &[(Cow<'_, str>, Cow<'_, str>)],
        parallel: bool,
    ) -> Vec<u32> {
        assert!(
            ids.len() + self.order.len() < NEW as usize,
            "too many people"
        );
        let [s0, s1] = &mut self.shards;
        let dense = self.dense.as_ref();
        let (h0, h1) = crate::par::beside(
            parallel,
            || look_up((ids, dense), s1, 1, pairs),
            || look_up((ids, dense), s0, 0, pairs),
        );
        self.merge(ids.len(), &h0, &h1)
    }

    /// One pass in row order: numbered IDs as they are, new ones numbered on first sight.
    fn merge(&mut self, known: usize, h0: &[u32], h1: &[u32]) -> Vec<u32> {
        for (w, node) in self.node.iter_mut().enumerate() {
            node.resize(self.shards[w].len(), NOT_MINE);
        }
        let mut out = Vec::with_capacity(h0.len());
        for (&a, &b) in h0.iter().zip(h1) {
            let (w, v) = if a == NOT_MINE { (1, b) } else { (0, a) };
            if v & NEW == 0 {
                out.push(v);
                continue;
            }
            let local = v & !NEW;
            let slot = &mut self.node[w][local as usize];
            if *slot == NOT_MINE {
                *slot = (known + self.order.len()) as u32;
                self.order.push((w as u8, local));
            }
            out.push(*slot);
        }
        out
    }

    /// Append the new IDs to `ids` in node order.
    pub fn finish(self, ids: &mut IdMap) {
        for &(w, local) in &self.order {
            let (i, new) = ids.intern(self.shards[w as usize].name(local));
            debug_assert!(new && i as usize + 1 == ids.len());
        }
    }
}

/// How many IDs ahead of the lookup the table line is asked for: enough to cover a memory
/// access with the work of the IDs in between.
const AHEAD: usize = 16;

/// An ID position as one worker sees it ahead of its lookup.
enum Ahead<'a> {
    /// The other worker's.
    NotMine,
    /// An entry of the people map's direct index.
    Dense(usize),
    /// A key and its hash, for the hash table.
    Hashed(Cow<'a, str>, u64),
}

/// One worker's half: for each ID position the worker owns, the node index (from `ids`) or
/// `NEW | local index`; `NOT_MINE` elsewhere. An ID the direct index answers for is owned by
/// the low bit of its entry, any other by a bit of its hash. Each ID's entry or table line is
/// prefetched [`AHEAD`] IDs before it is looked up, so the cache misses of successive lookups
/// overlap.
fn look_up(
    (ids, dense): (&IdMap, Option<&DenseIds>),
    shard: &mut IdMap,
    w: u64,
    pairs: &[(Cow<'_, str>, Cow<'_, str>)],
) -> Vec<u32> {
    let id_at = |p: usize| -> &str {
        let (s, t) = &pairs[p / 2];
        if p.is_multiple_of(2) {
            s
        } else {
            t
        }
    };
    let n = pairs.len() * 2;
    let mut out = Vec::with_capacity(n);
    // The next AHEAD positions.
    let mut ring: std::collections::VecDeque<Ahead<'_>> =
        std::collections::VecDeque::with_capacity(AHEAD + 1);
    let ahead = |p: usize| -> Ahead<'_> {
        let id = id_at(p);
        if let Some(e) = dense.and_then(|d| d.entry(id)) {
            if (e as u64) & 1 != w {
                return Ahead::NotMine;
            }
            dense.expect("an index").prefetch(e);
            return Ahead::Dense(e);
        }
        let key = ids.key(id);
        let h = ids.hash_key(&key);
        if (h >> 40) & 1 != w {
            return Ahead::NotMine;
        }
        ids.prefetch(h);
        Ahead::Hashed(key, h)
    };
    for p in 0..n.min(AHEAD) {
        ring.push_back(ahead(p));
    }
    for p in 0..n {
        if p + AHEAD < n {
            ring.push_back(ahead(p + AHEAD));
        }
        let (key, h) = match ring.pop_front().unwrap_or(Ahead::NotMine) {
            Ahead::NotMine => {
                out.push(NOT_MINE);
                continue;
            }
            Ahead::Dense(e) => match dense.and_then(|d| d.node(e)) {
                Some(i) => {
                    out.push(i);
                    continue;
                }
                // Not a person of the map: new, looked up and kept by its hash.
                None => {
                    let key = ids.key(id_at(p));
                    let h = ids.hash_key(&key);
                    (key, h)
                }
            },
            Ahead::Hashed(key, h) => match ids.find_hashed(&key, h) {
                Some(i) => {
                    out.push(i);
                    continue;
                }
                None => (key, h),
            },
        };
        let (l, _) = shard.intern_hashed(&key, h, id_at(p));
        out.push(NEW | l);
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Number `pairs` against `people` in two parts (the first `split` pairs on two cores, the
    /// rest on one), add the new IDs to `people`, and check against interning row by row: the
    /// same nodes, the same people in the same order. Returns the nodes.
    fn numbered_as_one_pass(
        people: &mut IdMap,
        pairs: &[(Cow<str>, Cow<str>)],
        split: usize,
    ) -> Vec<u32> {
        let mut plain = people.clone();
        let want: Vec<u32> = pairs
            .iter()
            .flat_map(|(s, t)| [plain.intern(s).0, plain.intern(t).0])
            .collect();
        let mut new = NewIds::new(people);
        let half1 = new.number(people, &pairs[..split], true);
        let half2 = new.number(people, &pairs[split..], false);
        new.finish(people);
        let got: Vec<u32> = half1.into_iter().chain(half2).collect();
        assert_eq!(got, want, "case sensitive: {}", people.case_sensitive());
        assert_eq!(people.len(), plain.len());
        for i in 0..people.len() as u32 {
            assert_eq!(people.name(i), plain.name(i));
        }
        got
    }

    fn pairs_of(names: &[String]) -> Vec<(Cow<'_, str>, Cow<'_, str>)> {
        names
            .chunks(2)
            .map(|c| (Cow::from(c[0].as_str()), Cow::from(c[1].as_str())))
            .collect()
    }

    /// The numbering is the one of interning row by row, whatever the split.
    #[test]
    fn same_numbering_as_one_pass() {
        for case_sensitive in [true, false] {
            let mut people = IdMap::new(case_sensitive);
            for p in ["A", "B", "c"] {
                people.intern(p);
            }
            let names: Vec<String> = (0..500).map(|i| format!("X{}", (i * 37) % 211)).collect();
            let mut pairs = pairs_of(&names);
            pairs.push(("C".into(), "b".into()));
            let got = numbered_as_one_pass(&mut people, &pairs, 100);
            if !case_sensitive {
                // "C" and "b" are the people "c" and "B" when case is folded.
                assert_eq!(&got[got.len() - 2..], &[2, 1]);
            }
        }
    }

    /// The same with people whose IDs are numbers behind one prefix (the direct index answers
    /// for IDs of that shape): people found, new IDs of the shape (numbers inside and outside
    /// the people's range, repeated), IDs of other shapes, in both case rules.
    #[test]
    fn same_numbering_with_the_direct_index() {
        for case_sensitive in [true, false] {
            let mut people = IdMap::new(case_sensitive);
            for i in (0..400).filter(|i| i % 7 != 3) {
                people.intern(&format!("P{:05}", i + 100));
            }
            assert!(DenseIds::build(&people).is_some());
            let names: Vec<String> = (0..2000u32)
                .map(|i| match i % 11 {
                    0 => format!("p{:05}", (i * 13) % 600),
                    1 => format!("P{}", (i * 7) % 500),
                    2 => format!("Q{:05}", i % 50),
                    3 => format!("P{:05}", 99_000 + i % 37),
                    _ => format!("P{:05}", (i * 31) % 520),
                })
                .collect();
            numbered_as_one_pass(&mut people, &pairs_of(&names), 300);
        }
    }
}
