//! A direct index for IDs that are numbers behind one prefix ("P0000123", "C-4711", "88012"):
//! the number read from the ID's digits picks the node from an array, with no hashing and no
//! probing, and the array is a small fraction of the hash table's size (4 bytes per number
//! against 32 per person), so that at millions of people it mostly stays in cache.
//!
//! It is built from a map whose every ID has the same shape: one ASCII prefix (the same for
//! all), then 1 to 9 ASCII digits, either all of one width (leading zeros allowed) or all
//! written without leading zeros. Under that shape the digits and the number determine each
//! other, so an ID of the shape is in the map exactly when its number's entry holds a node.
//! An ID of any other shape is left to the hash table (with IDs compared without case, a
//! character outside ASCII may fold into the prefix). With IDs compared without case, the
//! prefix is compared without ASCII case (the map holds it folded).

use std::sync::atomic::{AtomicU32, Ordering};

use super::IdMap;

/// Marks a number no ID of the map has.
const NONE: u32 = u32::MAX;

/// Most digits read (so that the number fits 32 bits).
const MAX_DIGITS: usize = 9;

/// From this many people on, the index is built on two cores.
const PARALLEL_FROM: usize = 200_000;

/// The shape and range of the numbers of a run of IDs.
struct Shape {
    same_width: bool,
    canonical: bool,
    low: u32,
    high: u32,
}

/// The direct index of a map (see the module).
#[derive(Debug, Clone)]
pub struct DenseIds {
    prefix: Box<[u8]>,
    /// `Some(w)`: every ID has `w` digits; `None`: no ID has a leading zero.
    width: Option<usize>,
    /// Smallest number.
    low: u32,
    /// Node of each number from `low` on (`NONE`: no such ID).
    node: Vec<u32>,
    case_sensitive: bool,
}

/// An ID's prefix and the value of its digits, when it ends in 1 to 9 ASCII digits after a
/// prefix without digits at its end.
fn split(id: &[u8]) -> Option<(&[u8], &[u8], u32)> {
    let digits = id.iter().rev().take_while(|b| b.is_ascii_digit()).count();
    if digits == 0 || digits > MAX_DIGITS {
        return None;
    }
    let (prefix, d) = id.split_at(id.len() - digits);
    let value = d.iter().fold(0u32, |v, &b| v * 10 + u32::from(b - b'0'));
    Some((prefix, d, value))
}

impl DenseIds {
    /// The index of `ids`, when every ID has the shape and the numbers are dense enough (the
    /// array at most four entries per person, plus a little): else None.
    pub fn build(ids: &IdMap) -> Option<DenseIds> {
        let n = ids.len();
        if n == 0 {
            return None;
        }
        let first = split(ids.key_of(0).as_bytes())?;
        let prefix: Box<[u8]> = first.0.into();
        if !prefix.is_ascii() {
            return None;
        }
        let width = first.1.len();
        // Two passes over the IDs, each on two cores from this many people on: the shape and
        // range of the numbers, then each number's node.
        let parallel = n >= PARALLEL_FROM;
        let halves = [0..n / 2, n / 2..n];
        let shape_of = |range: std::ops::Range<usize>| -> Option<Shape> {
            let mut shape = Shape {
                same_width: true,
                canonical: true,
                low: u32::MAX,
                high: 0,
            };
            for i in range {
                let (p, d, v) = split(ids.key_of(i as u32).as_bytes())?;
                if *p != *prefix {
                    return None;
                }
                shape.same_width &= d.len() == width;
                shape.canonical &= d.len() == 1 || d[0] != b'0';
                if !shape.same_width && !shape.canonical {
                    return None;
                }
                shape.low = shape.low.min(v);
                shape.high = shape.high.max(v);
            }
            Some(shape)
        };
        let [h0, h1] = halves.clone();
        let (s0, s1) = crate::par::beside(parallel, || shape_of(h1), || shape_of(h0));
        let (s0, s1) = (s0?, s1?);
        let (same_width, canonical) =
            (s0.same_width && s1.same_width, s0.canonical && s1.canonical);
        if !same_width && !canonical {
            return None;
        }
        let (low, high) = (s0.low.min(s1.low), s0.high.max(s1.high));
        let span = (high - low) as usize + 1;
        if span > 4 * n + 1024 {
            return None;
        }
        // Under the shape every ID has its own number, so the two halves write different
        // entries.
        let node: Vec<AtomicU32> = (0..span).map(|_| AtomicU32::new(NONE)).collect();
        let place = |range: std::ops::Range<usize>| {
            for i in range {
                if let Some((_, _, v)) = split(ids.key_of(i as u32).as_bytes()) {
                    node[(v - low) as usize].store(i as u32, Ordering::Relaxed);
                }
            }
        };
        let [h0, h1] = halves;
        crate::par::beside(parallel, || place(h1), || place(h0));
        let node: Vec<u32> = node.into_iter().map(AtomicU32::into_inner).collect();
        Some(DenseIds {
            prefix,
            width: same_width.then_some(width),
            low,
            node,
            case_sensitive: ids.case_sensitive(),
        })
    }

    /// The entry of an ID (trimmed, as given) when it has the map's shape: then
    /// [`DenseIds::node`] answers for it. None for another shape: ask the hash table.
    #[inline]
    pub fn entry(&self, id: &str) -> Option<usize> {
        let (p, d, v) = split(id.as_bytes())?;
        // Byte by byte: the prefix is short, and a call to `memcmp` per ID showed up in the
        // profile.
        let fold = !self.case_sensitive;
        let prefix_ok = p.len() == self.prefix.len()
            && p.iter()
                .zip(self.prefix.iter())
                .all(|(&x, &y)| x == y || (fold && x.eq_ignore_ascii_case(&y)));
        let digits_ok = match self.width {
            Some(w) => d.len() == w,
            None => d.len() == 1 || d[0] != b'0',
        };
        if !(prefix_ok && digits_ok) {
            return None;
        }
        // Numbers outside the range are no one's: an entry past the end.
        Some(v.checked_sub(self.low).map_or(usize::MAX, |x| x as usize))
    }

    /// Ask for the line of an entry, so that a lookup a few IDs later finds it in cache.
    #[inline]
    pub fn prefetch(&self, entry: usize) {
        crate::prefetch::prefetch(&self.node, entry);
    }

    /// The node of an entry from [`DenseIds::entry`], if an ID of the map has it.
    #[inline]
    pub fn node(&self, entry: usize) -> Option<u32> {
        self.node.get(entry).copied().filter(|&v| v != NONE)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn map(ids: &[&str], case_sensitive: bool) -> IdMap {
        let mut m = IdMap::new(case_sensitive);
        for id in ids {
            m.intern(id);
        }
        m
    }

    /// Whatever the map and the IDs asked, where the index answers it answers as the hash
    /// table does, and it answers for every ID of the map.
    fn agrees(m: &IdMap, asked: &[&str]) {
        let d = DenseIds::build(m).expect("an index");
        for id in asked {
            if let Some(e) = d.entry(id) {
                assert_eq!(d.node(e), m.get(id), "{id:?}");
            }
        }
        for i in 0..m.len() as u32 {
            let id = m.name(i);
            assert_eq!(d.entry(id).and_then(|e| d.node(e)), Some(i), "{id:?}");
        }
    }

    const ASKED: [&str; 22] = [
        "P0000001",
        "P0000002",
        "P0000009",
        "P000001",
        "P00000001",
        "P1",
        "p0000001",
        "Q0000001",
        "P0000001 ",
        "P-0000001",
        "0000001",
        "P",
        "",
        "P0000000",
        "P0000010",
        "P9999999",
        "P12",
        "P012",
        "P0",
        "P00",
        "\u{212A}1",
        "P１",
    ];

    #[test]
    fn fixed_width_numbers() {
        let m = map(&["P0000001", "P0000003", "P0000002", "P0000010"], true);
        agrees(&m, &ASKED);
        let m = map(&["P0000001", "p0000003", "P0000002"], false);
        agrees(&m, &ASKED);
    }

    #[test]
    fn numbers_without_leading_zeros() {
        let m = map(&["P1", "P12", "P3", "P0"], true);
        agrees(&m, &ASKED);
        // A character outside ASCII that folds into the prefix is left to the hash table.
        let m = map(&["k1", "k2"], false);
        agrees(&m, &["\u{212A}1", "K1", "k3"]);
        let m = map(&["12", "7", "100"], true);
        agrees(&m, &["12", "012", "7", "07", "100", "1000", "x12", ""]);
    }

    #[test]
    fn no_index_for_other_shapes() {
        for ids in [
            &["P01", "P1", "P002"][..],
            &["P1", "Q2"],
            &["P1", "P2x"],
            &["P1", "P1234567890"],
            &["É1", "É2"],
            &["P1", "P100000"],
        ] {
            assert!(DenseIds::build(&map(ids, true)).is_none(), "{ids:?}");
        }
    }

    /// Built on two cores (from `PARALLEL_FROM` people on): the same answers, in either
    /// order of the IDs; and no index when the halves differ in shape (fixed width in one,
    /// no leading zeros in the other) or one half has an ID of another shape.
    #[test]
    fn built_on_two_cores() {
        let n = PARALLEL_FROM as u32 + 1000;
        let shuffled = |i: u32| (i * 7919) % n;
        let ids: Vec<String> = (0..n).map(|i| format!("P{:07}", shuffled(i))).collect();
        let m = map(&ids.iter().map(String::as_str).collect::<Vec<_>>(), true);
        agrees(&m, &ASKED);
        let half = n as usize / 2;
        let widths: Vec<String> = (0..n as usize)
            .map(|i| match i < half {
                true => format!("P{:07}", i + 1_000_000),
                false => format!("P{}", i + 1_000_000 + half),
            })
            .collect();
        let m = map(&widths.iter().map(String::as_str).collect::<Vec<_>>(), true);
        agrees(&m, &["P1000000", "P01000000"]);
        let mut mixed: Vec<String> = (0..n).map(|i| format!("P{:07}", i)).collect();
        mixed[half + 5] = "P0000000x".into();
        let m = map(&mixed.iter().map(String::as_str).collect::<Vec<_>>(), true);
        assert!(DenseIds::build(&m).is_none());
        let zeros: Vec<String> = (0..n as usize)
            .map(|i| match i < half {
                true => format!("P{:08}", i),
                false => format!("P{}", i),
            })
            .collect();
        let m = map(&zeros.iter().map(String::as_str).collect::<Vec<_>>(), true);
        assert!(
            DenseIds::build(&m).is_none(),
            "fixed width and canonical numbers mixed"
        );
    }
}
