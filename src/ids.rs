//! Person IDs <-> dense node indices, in one pass.
//!
//! Names are stored once in an arena; an open-addressing table of slots finds them. Each slot
//! holds the ID's first eight bytes and its length beside the node index, so the usual short
//! IDs are compared inside the table without a second, cache-missing trip to the arena (the
//! difference is large at millions of people). The table is one array probed linearly, so a
//! lookup usually costs a single cache line, and a caller that knows the hashes ahead can ask
//! for that line early ([`IdMap::prefetch`]). Node indices are handed out in order of first
//! sight (people table first, then exposures), so the map is stable for a given input and the
//! reverse lookup is a slice.

use std::hash::BuildHasher;

mod dense;
pub use dense::DenseIds;

/// One entry of the table: node index (`EMPTY` for a free slot), the key's first eight bytes,
/// and its next three bytes with its length (see [`tail`]).
#[derive(Debug, Clone, Copy)]
struct Slot {
    head: u64,
    tail: u32,
    idx: u32,
}

/// Marks a free slot.
const EMPTY: u32 = u32::MAX;
const FREE: Slot = Slot {
    head: 0,
    tail: 0,
    idx: EMPTY,
};

/// Keys up to this long are compared inside the table alone.
const IN_SLOT: usize = 11;

/// Bytes 8 to 10 of a key (zero-padded) and its length (255 for 255 and more) as an integer.
/// With [`head`], it determines a key of up to [`IN_SLOT`] bytes exactly: the length tells
/// padding from zero bytes.
fn tail(key: &[u8]) -> u32 {
    let mut b = [0u8; 4];
    if key.len() > 8 {
        let n = (key.len() - 8).min(3);
        b[..n].copy_from_slice(&key[8..8 + n]);
    }
    b[3] = key.len().min(255) as u8;
    u32::from_le_bytes(b)
}

/// `a == b`, with strings of 4 to 16 bytes (most IDs and labels) compared as two machine
/// words each, without a call to the C library's comparison.
#[inline]
pub fn equal(a: &str, b: &str) -> bool {
    let (a, b) = (a.as_bytes(), b.as_bytes());
    let n = a.len();
    if n != b.len() {
        return false;
    }
    match n {
        8..=16 => {
            let w = |s: &[u8], i: usize| u64::from_le_bytes(s[i..i + 8].try_into().expect("8"));
            w(a, 0) == w(b, 0) && w(a, n - 8) == w(b, n - 8)
        }
        4..=7 => {
            let w = |s: &[u8], i: usize| u32::from_le_bytes(s[i..i + 4].try_into().expect("4"));
            w(a, 0) == w(b, 0) && w(a, n - 4) == w(b, n - 4)
        }
        _ => a == b,
    }
}

/// The first (up to) eight bytes of a key as an integer, zero-padded.
fn head(key: &[u8]) -> u64 {
    let mut b = [0u8; 8];
    let n = key.len().min(8);
    b[..n].copy_from_slice(&key[..n]);
    u64::from_le_bytes(b)
}

/// A two-way map between person IDs and node indices `0..len()`.
#[derive(Debug, Default, Clone)]
pub struct IdMap {
    /// The IDs as compared (case-folded when IDs are case-insensitive), concatenated.
    arena: String,
    /// End offset in `arena` of each ID.
    ends: Vec<usize>,
    /// Display spelling for case-insensitive maps (first spelling seen); empty otherwise.
    display: Vec<Box<str>>,
    /// Open addressing with linear probing; a power of two long, at most half full.
    slots: Vec<Slot>,
    hasher: foldhash::fast::FixedState,
    case_sensitive: bool,
}

impl IdMap {
    /// An empty map; `case_sensitive = false` folds IDs to lower case for comparison.
    pub fn new(case_sensitive: bool) -> IdMap {
        IdMap {
            case_sensitive,
            hasher: foldhash::fast::FixedState::with_seed(0x9e37_79b9),
            ..IdMap::default()
        }
    }

    /// Number of IDs.
    pub fn len(&self) -> usize {
        self.ends.len()
    }

    /// True when no ID has been added.
    pub fn is_empty(&self) -> bool {
        self.ends.is_empty()
    }

    /// Room for `more` IDs beyond those held, without growing the table on the way.
    pub fn reserve(&mut self, more: usize) {
        let want = (self.len() + more)
            .saturating_mul(2)
            .next_power_of_two()
            .max(16);
        if want > self.slots.len() {
            self.rebuild(want);
        }
        self.ends.reserve(more);
    }

    /// Lay the table out anew with `size` slots.
    fn rebuild(&mut self, size: usize) {
        // On ordinary pages: at 20 million people (a 1 GiB table) asking for 2 MiB pages made
        // the load slower, not faster, once lookups were asked for in batches (check+intern
        // 20.7-21.3 s against 14.0-16.1 s at 106M rows; fresh 2 MiB pages are slow to fault in
        // on a virtual machine).
        let mut slots = Vec::with_capacity(size);
        slots.resize(size, FREE);
        let mask = size - 1;
        let mut start = 0;
        for (i, &end) in self.ends.iter().enumerate() {
            let key = &self.arena[start..end];
            let mut p = self.hasher.hash_one(key) as usize & mask;
            while slots[p].idx != EMPTY {
                p = (p + 1) & mask;
            }
            slots[p] = Slot {
                head: head(key.as_bytes()),
                tail: tail(key.as_bytes()),
                idx: i as u32,
            };
            start = end;
        }
        self.slots = slots;
    }

    fn key_of(&self, i: u32) -> &str {
        let i = i as usize;
        let start = if i == 0 { 0 } else { self.ends[i - 1] };
        &self.arena[start..self.ends[i]]
    }

    /// The ID of node `i`, as first written in the input (trimmed).
    pub fn name(&self, i: u32) -> &str {
        if self.case_sensitive {
            self.key_of(i)
        } else {
            &self.display[i as usize]
        }
    }

    /// True when two (trimmed) IDs name the same person under this map's case rule.
    #[inline]
    pub fn same(&self, a: &str, b: &str) -> bool {
        if self.case_sensitive {
            equal(a, b)
        } else {
            equal(a, b) || a.to_lowercase() == b.to_lowercase()
        }
    }

    /// Node index of an ID (already trimmed), if known.
    pub fn get(&self, id: &str) -> Option<u32> {
        let key = self.key(id);
        self.find_hashed(&key, self.hash_key(&key))
    }

    fn matches(&self, slot: &Slot, key: &[u8], (key_head, key_tail): (u64, u32)) -> bool {
        slot.head == key_head
            && slot.tail == key_tail
            && (key.len() <= IN_SLOT || self.key_of(slot.idx).as_bytes() == key)
    }

    /// Node index of an ID, adding it if new; the flag says whether it was new.
    pub fn intern(&mut self, id: &str) -> (u32, bool) {
        let key = self.key(id);
        self.intern_hashed(&key, self.hash_key(&key), id)
    }

    /// Whether IDs compare with case.
    pub fn case_sensitive(&self) -> bool {
        self.case_sensitive
    }

    /// An ID as this map compares it (folded to lower case when case does not count).
    pub fn key<'a>(&self, id: &'a str) -> std::borrow::Cow<'a, str> {
        if self.case_sensitive {
            id.into()
        } else {
            id.to_lowercase().into()
        }
    }

    /// The hash of a key (from [`IdMap::key`]); maps made with the same case rule agree.
    pub fn hash_key(&self, key: &str) -> u64 {
        self.hasher.hash_one(key)
    }

    /// Ask the processor for the table line where a key hashed to `h` is looked up first, so
    /// that a lookup issued a few IDs later finds it in cache.
    #[inline]
    pub fn prefetch(&self, h: u64) {
        if !self.slots.is_empty() {
            crate::prefetch::prefetch(&self.slots, h as usize & (self.slots.len() - 1));
        }
    }

    /// The slot where a key hashed to `h` is, or the free slot where it would go.
    #[inline]
    fn probe(&self, key: &[u8], h: u64) -> (usize, Option<u32>) {
        let mask = self.slots.len() - 1;
        let kh = (head(key), tail(key));
        let mut p = h as usize & mask;
        loop {
            let s = &self.slots[p];
            if s.idx == EMPTY {
                return (p, None);
            }
            if self.matches(s, key, kh) {
                return (p, Some(s.idx));
            }
            p = (p + 1) & mask;
        }
    }

    /// Node index of a key whose hash is `h`, if known.
    pub fn find_hashed(&self, key: &str, h: u64) -> Option<u32> {
        if self.slots.is_empty() {
            return None;
        }
        self.probe(key.as_bytes(), h).1
    }

    /// [`IdMap::intern`] of a key already folded and hashed; `id` is the spelling shown.
    pub fn intern_hashed(&mut self, key: &str, h: u64, id: &str) -> (u32, bool) {
        if (self.len() + 1) * 2 > self.slots.len() {
            self.rebuild((self.slots.len() * 2).max(16));
        }
        let (p, found) = self.probe(key.as_bytes(), h);
        if let Some(i) = found {
            return (i, false);
        }
        let i = self.ends.len() as u32;
        assert!(i != EMPTY, "too many IDs");
        self.arena.push_str(key);
        self.ends.push(self.arena.len());
        self.slots[p] = Slot {
            head: head(key.as_bytes()),
            tail: tail(key.as_bytes()),
            idx: i,
        };
        if !self.case_sensitive {
            self.display.push(id.into());
        }
        (i, true)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The word-wise comparison is `==` for every length and every position of a difference.
    #[test]
    fn equal_is_string_equality() {
        let base = "abcdefghijklmnopqrstu";
        for n in 0..=base.len() {
            let a = &base[..n];
            assert!(equal(a, a));
            for i in 0..n {
                let mut b = a.as_bytes().to_vec();
                b[i] = b'Z';
                let b = String::from_utf8(b).unwrap();
                assert!(!equal(a, &b), "{a:?} {b:?}");
            }
            assert!(!equal(a, &base[..(n + 1).min(base.len())]) || n == base.len());
        }
    }

    #[test]
    fn two_way_and_stable() {
        let mut m = IdMap::new(true);
        assert_eq!(m.intern("P01"), (0, true));
        assert_eq!(m.intern("P02"), (1, true));
        assert_eq!(m.intern("P01"), (0, false));
        assert_eq!(m.get("P02"), Some(1));
        assert_eq!(m.get("p02"), None);
        assert_eq!(m.name(1), "P02");
        for k in 0..10_000 {
            m.intern(&format!("X{k}"));
        }
        assert_eq!(m.get("X9999"), Some(10_001));
        assert_eq!(m.name(10_001), "X9999");
        // Long IDs that share the first eight bytes, and IDs with a zero byte-like tail.
        let (a, _) = m.intern("ABCDEFGH-1");
        let (b, _) = m.intern("ABCDEFGH-2");
        assert_ne!(a, b);
        assert_eq!(m.get("ABCDEFGH-2"), Some(b));
        assert_eq!(m.get("ABCDEFGH"), None);
        assert_eq!(m.get("ABCDEFGH-"), None);
    }

    /// Keys compared in the slot alone (up to eleven bytes) and beyond it: every one of a set
    /// that shares heads and tails, differs by trailing zero bytes or by length, finds itself
    /// and nothing else.
    #[test]
    fn keys_around_the_in_slot_length() {
        let keys = [
            "",
            "\0",
            "\0\0",
            "P0000000",
            "P0000000\0",
            "P00000000",
            "P00000001",
            "P000000001",
            "P0000000010",
            "P0000000011",
            "P00000000110",
            "P00000000111",
            "P000000001\0",
            "P000000001\0\0",
            "P0000000010\0",
            "ABCDEFGHIJKLMNOP",
            "ABCDEFGHIJKLMNOQ",
        ];
        let mut m = IdMap::new(true);
        for (i, k) in keys.iter().enumerate() {
            assert_eq!(m.intern(k), (i as u32, true), "{k:?}");
        }
        for (i, k) in keys.iter().enumerate() {
            assert_eq!(m.get(k), Some(i as u32), "{k:?}");
            assert_eq!(m.name(i as u32), *k);
        }
        let long = "X".repeat(300);
        let (a, _) = m.intern(&long);
        let (b, new) = m.intern(&format!("{long}Y"));
        assert!(new && a != b);
        assert_eq!(m.get(&long), Some(a));
    }

    #[test]
    fn case_insensitive_keeps_first_spelling() {
        let mut m = IdMap::new(false);
        assert_eq!(m.intern("Ab-1"), (0, true));
        assert_eq!(m.intern("AB-1"), (0, false));
        assert_eq!(m.name(0), "Ab-1");
        assert_eq!(m.get("ab-1"), Some(0));
    }
}
