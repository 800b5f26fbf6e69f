//! Exposure IDs -> node indices, with the numbering of one sequential pass.
//!
//! Looking an ID up is a cache miss at millions of people, and it was the load's critical
//! path. The cores that check a chunk's rows each take a run of rows and look their IDs up as
//! they go, in batches ([`Lookup`]): the whole batch's table lines (or entries of the direct
//! index, when the people's IDs are numbers behind one prefix) are asked for first, then read,
//! so the misses of a batch overlap. An ID no person has is set aside ([`Open`]) with where
//! its node goes. The IDs set aside by all cores, in row order, are then numbered on two cores
//! ([`NewIds::number`]): split by a bit of their hash, each half is interned into that
//! worker's own table of IDs new in this table, and a short sequential pass gives each new ID
//! its node index in order of first appearance, so the numbering is exactly the one interning
//! row by row would give; [`NewIds::finish`] appends the new IDs to the map in that order when
//! the table ends.

use std::borrow::Cow;

use crate::ids::{DenseIds, IdMap};

/// Marks a worker's answer as an index into its own table of new IDs (not yet numbered).
const NEW: u32 = 1 << 31;
/// A position the worker does not own.
const NOT_MINE: u32 = u32::MAX;
/// The node of an ID set aside in the list of open IDs, until it is numbered.
pub const OPEN: u32 = u32::MAX;

/// An ID that no person of the people map has: where its node goes in the caller's list of
/// nodes, the ID as written, and the hash of its key.
#[derive(Debug)]
pub struct Open<'a> {
    /// Position of the node in the caller's list.
    pub at: usize,
    /// The ID (trimmed, normalised).
    pub id: Cow<'a, str>,
    /// [`IdMap::hash_key`] of the ID's key.
    hash: u64,
}

impl Open<'_> {
    /// The same ID with its node `by` places further on (runs joined into one list).
    pub fn moved(self, by: usize) -> Self {
        Open {
            at: self.at + by,
            ..self
        }
    }
}

/// An ID between being asked for and being answered.
enum Look<'a> {
    /// An entry of the people map's direct index.
    Dense(usize, Cow<'a, str>),
    /// A key for the hash table, its hash, and the ID.
    Hashed(Cow<'a, str>, u64, Cow<'a, str>),
}

/// Looks IDs up in the people map (read-only) in batches: [`Lookup::ask`] computes where each
/// ID is and asks for that memory, [`Lookup::answer`] reads the answers in order.
pub struct Lookup<'i, 'a> {
    ids: &'i IdMap,
    dense: Option<&'i DenseIds>,
    asked: Vec<Look<'a>>,
}

impl<'i, 'a> Lookup<'i, 'a> {
    /// How many IDs wait for [`Lookup::answer`].
    pub fn waiting(&self) -> usize {
        self.asked.len()
    }

    /// Ask for an ID (trimmed, normalised): find its entry or hash and ask for the memory the
    /// answer will read.
    #[inline]
    pub fn ask(&mut self, id: Cow<'a, str>) {
        if let Some(d) = self.dense {
            if let Some(e) = d.entry(&id) {
                d.prefetch(e);
                self.asked.push(Look::Dense(e, id));
                return;
            }
        }
        let key = match &id {
            Cow::Borrowed(s) => self.ids.key(s),
            Cow::Owned(s) => Cow::Owned(self.ids.key(s).into_owned()),
        };
        let h = self.ids.hash_key(&key);
        self.ids.prefetch(h);
        self.asked.push(Look::Hashed(key, h, id));
    }

    /// Answer every ID asked for, in order: its node is appended to `nodes`, or, for an ID
    /// no person has, [`OPEN`], with the ID appended to `open`.
    pub fn answer(&mut self, nodes: &mut Vec<u32>, open: &mut Vec<Open<'a>>) {
        for look in self.asked.drain(..) {
            let (found, id, hash) = match look {
                Look::Dense(e, id) => match self.dense.and_then(|d| d.node(e)) {
                    Some(i) => (Some(i), id, 0),
                    None => {
                        let h = self.ids.hash_key(&self.ids.key(&id));
                        (None, id, h)
                    }
                },
                Look::Hashed(key, h, id) => (self.ids.find_hashed(&key, h), id, h),
            };
            match found {
                Some(i) => nodes.push(i),
                None => {
                    open.push(Open {
                        at: nodes.len(),
                        id,
                        hash,
                    });
                    nodes.push(OPEN);
                }
            }
        }
    }
}

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

    /// A lookup of IDs in `ids` (the map this was made for).
    pub fn lookup<'i, 'a>(&'i self, ids: &'i IdMap) -> Lookup<'i, 'a> {
        Lookup {
            ids,
            dense: self.dense.as_ref(),
            asked: Vec::with_capacity(1024),
        }
    }

    /// Node indices of the open IDs (in row order; `known` people in the map), numbered in
    /// order of first appearance after every ID numbered before; the two halves are interned
    /// on two cores when `parallel` is set.
    pub fn number(&mut self, known: usize, open: &[Open<'_>], parallel: bool) -> Vec<u32> {
        assert!(known + self.order.len() < NEW as usize, "too many people");
        let [s0, s1] = &mut self.shards;
        let (h0, h1) = crate::par::beside(
            parallel,
            || intern_mine(s1, 1, open),
            || intern_mine(s0, 0, open),
        );
        self.merge(known, &h0, &h1)
    }

    /// One pass in row order: new IDs numbered on first sight.
    fn merge(&mut self, known: usize, h0: &[u32], h1: &[u32]) -> Vec<u32> {
        for (w, node) in self.node.iter_mut().enumerate() {
            node.resize(self.shards[w].len(), NOT_MINE);
        }
        let mut out = Vec::with_capacity(h0.len());
        for (&a, &b) in h0.iter().zip(h1) {
            let (w, v) = if a == NOT_MINE { (1, b) } else { (0, a) };
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

/// One worker's half of the open IDs: those whose hash bit is `w`, interned into its own
/// table (`NEW | local index`); `NOT_MINE` elsewhere.
fn intern_mine(shard: &mut IdMap, w: u64, open: &[Open<'_>]) -> Vec<u32> {
    open.iter()
        .map(|o| {
            if (o.hash >> 40) & 1 != w {
                return NOT_MINE;
            }
            let key = shard.key(&o.id);
            NEW | shard.intern_hashed(&key, o.hash, &o.id).0
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Number `pairs` against `people` in two parts (the new IDs of the first `split` pairs
    /// numbered on two cores, the rest's on one), add the new IDs to `people`, and check
    /// against interning row by row: the same nodes, the same people in the same order.
    /// Returns the nodes.
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
        let half1 = number_pairs(&mut new, people, &pairs[..split], true);
        let half2 = number_pairs(&mut new, people, &pairs[split..], false);
        new.finish(people);
        let got: Vec<u32> = half1.into_iter().chain(half2).collect();
        assert_eq!(got, want, "case sensitive: {}", people.case_sensitive());
        assert_eq!(people.len(), plain.len());
        for i in 0..people.len() as u32 {
            assert_eq!(people.name(i), plain.name(i));
        }
        got
    }

    /// The nodes of `pairs` as the exposure reader finds them: looked up in batches of
    /// varying size, the open IDs numbered at the end.
    fn number_pairs(
        new: &mut NewIds,
        people: &IdMap,
        pairs: &[(Cow<str>, Cow<str>)],
        parallel: bool,
    ) -> Vec<u32> {
        let (mut nodes, mut open) = (Vec::new(), Vec::new());
        let mut lookup = new.lookup(people);
        for (k, (s, t)) in pairs.iter().enumerate() {
            lookup.ask(s.clone());
            lookup.ask(t.clone());
            if lookup.waiting() > k % 40 {
                lookup.answer(&mut nodes, &mut open);
            }
        }
        lookup.answer(&mut nodes, &mut open);
        drop(lookup);
        for (o, v) in open.iter().zip(new.number(people.len(), &open, parallel)) {
            assert_eq!(nodes[o.at], OPEN);
            nodes[o.at] = v;
        }
        nodes
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
