//! Exposure rows -> one undirected simple graph over all people.
//!
//! Repeated pairs (in either order) collapse into one edge that keeps what the rows said:
//! how many rows, first and last date, total minutes, the settings, and who named whom.
//! The adjacency is a petgraph [`Csr`] (compressed sparse rows): one offsets array and one
//! neighbours array, sorted, which is the most compact of petgraph's graph types and gives
//! neighbour slices without pointer chasing (see DEVELOPERS.md for the measurement).
//! This module opens no files.

use std::mem::MaybeUninit;

use petgraph::csr::Csr;
use petgraph::Undirected;

use crate::ingest::reconcile::NO_DATE;
use crate::ingest::rows::ExposureRows;
use crate::sort::radix_sort_by_key;

mod csr;
pub use csr::{adjacency, lists, AdjacencyCell, Lists};

/// The adjacency: node weights unused, edge weight = index into [`Edges`].
pub type Adjacency = Csr<(), u32, Undirected, u32>;

/// One entry per distinct unordered pair, `a < b`.
#[derive(Debug, Clone, Default)]
pub struct Edges {
    /// Smaller node of the pair.
    pub a: Vec<u32>,
    /// Larger node of the pair.
    pub b: Vec<u32>,
    /// Exposure rows merged into the pair.
    pub rows: Vec<u32>,
    /// Rows in which `a` was the source (named `b`).
    pub a_named_b: Vec<u32>,
    /// Earliest date seen (first exposure, else last exposure), or NO_DATE.
    pub first: Vec<i32>,
    /// Latest last-exposure date, or NO_DATE.
    pub last: Vec<i32>,
    /// Total minutes over rows that gave a duration (NaN when none did).
    pub minutes: Vec<f64>,
    /// Offsets into `setting_codes`: edge e has `setting_codes[setting_off[e]..setting_off[e+1]]`.
    pub setting_off: Vec<u32>,
    /// Setting codes (1-based into the settings list), sorted, distinct per edge.
    pub setting_codes: Vec<u16>,
    /// Rows marking `a` as infector of `b` (empty when no file maps `transmission`).
    pub links_ab: Vec<u32>,
    /// Rows marking `b` as infector of `a`.
    pub links_ba: Vec<u32>,
    /// The dated exposures of pairs whose rows give more than one distinct date span (a row's
    /// span runs from its first exposure date to its last; a row with one date is one day):
    /// pair `span_pairs[i]` has spans `spans[span_off[i]..span_off[i + 1]]`, sorted. Every
    /// other dated pair has the one span `first..=last` (see [`Edges::day_spans`]).
    pub span_pairs: Vec<u32>,
    /// Offsets into `spans` (one more than `span_pairs`, or empty when there are none).
    pub span_off: Vec<u32>,
    /// Date spans (first day, last day), inclusive.
    pub spans: Vec<(i32, i32)>,
}

impl Edges {
    /// Number of distinct pairs.
    pub fn len(&self) -> usize {
        self.a.len()
    }

    /// True when there is no pair.
    pub fn is_empty(&self) -> bool {
        self.a.is_empty()
    }

    /// Setting codes of edge `e`.
    pub fn settings(&self, e: usize) -> &[u16] {
        if self.setting_off.is_empty() {
            return &[];
        }
        &self.setting_codes[self.setting_off[e] as usize..self.setting_off[e + 1] as usize]
    }

    /// Each distinct date span (first day, last day; inclusive) of pair `e`'s rows, sorted
    /// (none when no row of the pair is dated).
    pub fn day_spans(&self, e: usize) -> impl Iterator<Item = (i32, i32)> + '_ {
        // A pair of one row has one span: only pairs of several rows are looked up.
        let several = self.rows[e] > 1 && !self.span_pairs.is_empty();
        let found = if several {
            self.span_pairs.binary_search(&(e as u32))
        } else {
            Err(0)
        };
        let (many, one) = match found {
            Ok(i) => (
                &self.spans[self.span_off[i] as usize..self.span_off[i + 1] as usize],
                None,
            ),
            Err(_) => {
                let (first, last) = (self.first[e], self.last[e]);
                let one = match (first != NO_DATE, last != NO_DATE) {
                    (true, true) => Some((first, last)),
                    (true, false) => Some((first, first)),
                    _ => None,
                };
                (&self.spans[..0], one)
            }
        };
        many.iter().copied().chain(one)
    }
}

/// The pairs, and what became of each usable row.
pub struct Aggregated {
    /// The pairs.
    pub edges: Edges,
    /// Per entry of the rows' `per_file`: how many of its rows created their pair (the others
    /// were merged into a pair already made).
    pub used_per_file: Vec<u64>,
    /// Number of usable rows.
    pub rows: usize,
    /// Per usable row: the pair it went into (filled only when `want_row_edges`).
    pub edge_of_row: Vec<u32>,
}

/// One pair's rows folded together: first and last date, minutes, who named whom, links, and
/// the settings seen (`codes` is a buffer reused from pair to pair).
struct Pair<'c> {
    first: i32,
    last: i32,
    minutes: f64,
    named: u32,
    links: (u32, u32),
    codes: &'c mut Vec<u16>,
    spans: &'c mut Vec<(i32, i32)>,
}

impl<'c> Pair<'c> {
    fn new(codes: &'c mut Vec<u16>, spans: &'c mut Vec<(i32, i32)>) -> Pair<'c> {
        codes.clear();
        spans.clear();
        Pair {
            first: NO_DATE,
            last: NO_DATE,
            minutes: f64::NAN,
            named: 0,
            links: (0, 0),
            codes,
            spans,
        }
    }

    /// Fold in row `r`.
    #[inline]
    fn add(&mut self, rows: &ExposureRows, r: usize) {
        if rows.forward[r] {
            self.named += 1;
        }
        let l = rows.fields.last.get(r).copied().unwrap_or(NO_DATE);
        let f = rows.fields.first.get(r).copied().unwrap_or(NO_DATE);
        if l != NO_DATE {
            self.last = self.last.max(l);
        }
        let span = match (f != NO_DATE, l != NO_DATE) {
            (true, true) => Some((f.min(l), f.max(l))),
            (true, false) => Some((f, f)),
            (false, true) => Some((l, l)),
            (false, false) => None,
        };
        if let Some(sp) = span {
            if !self.spans.contains(&sp) {
                self.spans.push(sp);
            }
        }
        for d in [f, l] {
            if d != NO_DATE && (self.first == NO_DATE || d < self.first) {
                self.first = d;
            }
        }
        if let Some(&m) = rows.fields.minutes.get(r) {
            if !m.is_nan() {
                self.minutes = if self.minutes.is_nan() {
                    f64::from(m)
                } else {
                    self.minutes + f64::from(m)
                };
            }
        }
        if rows.links.get(r) == Some(&1) {
            if rows.forward[r] {
                self.links.0 += 1;
            } else {
                self.links.1 += 1;
            }
        }
        if let Some(&c) = rows.fields.setting.get(r) {
            if c != 0 && !self.codes.contains(&c) {
                self.codes.push(c);
            }
        }
    }

    /// Write the folded pair as pair `at` of a half.
    #[inline]
    fn put(self, half: &mut Half, at: usize, (a, b): (u32, u32), n: u32) {
        let out = &mut half.slots;
        out.a[at].write(a);
        out.b[at].write(b);
        out.rows[at].write(n);
        out.a_named_b[at].write(self.named);
        out.first[at].write(self.first);
        out.last[at].write(self.last);
        out.minutes[at].write(self.minutes);
        if !out.links_ab.is_empty() {
            out.links_ab[at].write(self.links.0);
            out.links_ba[at].write(self.links.1);
        }
        let tail = &mut half.tail;
        if self.spans.len() > 1 {
            self.spans.sort_unstable();
            if tail.span_off.is_empty() {
                tail.span_off.push(0);
            }
            tail.span_pairs.push(half.first_pair + at as u32);
            tail.spans.extend_from_slice(self.spans);
            tail.span_off.push(tail.spans.len() as u32);
        }
        if !out.setting_end.is_empty() {
            self.codes.sort_unstable();
            tail.setting_codes.extend_from_slice(self.codes);
            out.setting_end[at].write(tail.setting_codes.len() as u32);
        }
    }
}

/// The fixed-width arrays of one half's pairs, written in place (links and setting ends empty
/// when the rows have none).
struct Slots<'s> {
    a: &'s mut [MaybeUninit<u32>],
    b: &'s mut [MaybeUninit<u32>],
    rows: &'s mut [MaybeUninit<u32>],
    a_named_b: &'s mut [MaybeUninit<u32>],
    first: &'s mut [MaybeUninit<i32>],
    last: &'s mut [MaybeUninit<i32>],
    minutes: &'s mut [MaybeUninit<f64>],
    links_ab: &'s mut [MaybeUninit<u32>],
    links_ba: &'s mut [MaybeUninit<u32>],
    /// Where each pair's setting codes end, counted from the half's first code.
    setting_end: &'s mut [MaybeUninit<u32>],
}

/// What varies in length in one half: setting codes and date spans (`span_pairs` already
/// counted among all pairs).
#[derive(Default)]
struct Tail {
    setting_codes: Vec<u16>,
    span_pairs: Vec<u32>,
    span_off: Vec<u32>,
    spans: Vec<(i32, i32)>,
    /// Rows used (that made their pair), per file.
    used: Vec<u64>,
}

/// One half of the pairs being folded.
struct Half<'s> {
    slots: Slots<'s>,
    tail: Tail,
    /// Index of the half's first pair among all pairs.
    first_pair: u32,
}

/// Room for `total` pairs in `e`'s fixed-width arrays (left uninitialised: every slot is
/// written once by one half), cut after `left` pairs into two halves' slots.
fn halves(e: &mut Edges, total: usize, left: usize, links: bool, settings: bool) -> [Slots<'_>; 2] {
    fn room<T>(v: &mut Vec<T>, n: usize, left: usize) -> [&mut [MaybeUninit<T>]; 2] {
        v.reserve_exact(n);
        let (l, r) = v.spare_capacity_mut()[..n].split_at_mut(left.min(n));
        [l, r]
    }
    let opt = |on: bool| if on { total } else { 0 };
    if settings {
        e.setting_off.push(0);
    }
    let [a0, a1] = room(&mut e.a, total, left);
    let [b0, b1] = room(&mut e.b, total, left);
    let [r0, r1] = room(&mut e.rows, total, left);
    let [n0, n1] = room(&mut e.a_named_b, total, left);
    let [f0, f1] = room(&mut e.first, total, left);
    let [l0, l1] = room(&mut e.last, total, left);
    let [m0, m1] = room(&mut e.minutes, total, left);
    let [x0, x1] = room(&mut e.links_ab, opt(links), left);
    let [y0, y1] = room(&mut e.links_ba, opt(links), left);
    let [s0, s1] = room(&mut e.setting_off, opt(settings), left);
    let slots =
        |a, b, rows, a_named_b, first, last, minutes, links_ab, links_ba, setting_end| Slots {
            a,
            b,
            rows,
            a_named_b,
            first,
            last,
            minutes,
            links_ab,
            links_ba,
            setting_end,
        };
    [
        slots(a0, b0, r0, n0, f0, l0, m0, x0, y0, s0),
        slots(a1, b1, r1, n1, f1, l1, m1, x1, y1, s1),
    ]
}

/// Collapse rows into pairs. Rows are sorted by pair with a stable radix sort, so the first
/// row of a pair in input order is the one counted as used.
///
/// `keys` are the rows' pair keys (`rows.keys`, handed over so that the sort works in their
/// array: a caller that still needs `rows.keys` passes a copy).
pub fn aggregate(rows: &ExposureRows, mut keys: Vec<u64>, want_row_edges: bool) -> Aggregated {
    let n = keys.len();
    // Pack (lo, hi) into as few bits as the node count needs, so the radix sort makes fewer passes.
    let max_hi = keys.iter().map(|k| k & 0xFFFF_FFFF).max().unwrap_or(0);
    let shift = 64 - max_hi.leading_zeros();
    let pack = |k: u64| (k >> 32) << shift | (k & 0xFFFF_FFFF);
    let unpack = |p: u64| (p >> shift, p & ((1u64 << shift) - 1));
    for k in keys.iter_mut() {
        *k = pack(*k);
    }
    let mut order: Vec<u32> = (0..keys.len() as u32).collect();
    radix_sort_by_key(&mut keys, &mut order);
    // Two halves, cut where a pair ends, are folded on two cores and joined in order: the
    // same pairs in the same order as one pass.
    let mut cut = keys.len() / 2;
    while cut > 0 && cut < keys.len() && keys[cut] == keys[cut - 1] {
        cut += 1;
    }
    let (left, right) = ((&keys[..cut], &order[..cut]), (&keys[cut..], &order[cut..]));
    let has_settings = !rows.fields.setting.is_empty();
    let links = !rows.links.is_empty();
    let parallel = keys.len() >= 100_000;
    // Each half writes its pairs straight into their places in the final arrays: the pairs
    // of each half are counted first (a new key starts a pair), so the right half knows where
    // it starts and nothing is copied afterwards.
    let pairs_in =
        |k: &[u64]| 1 + k.windows(2).filter(|w| w[0] != w[1]).count() - k.is_empty() as usize;
    let (left_pairs, right_pairs) =
        crate::par::beside(parallel, || pairs_in(right.0), || pairs_in(left.0));
    let total = left_pairs + right_pairs;
    let mut e = Edges::default();
    let [slots_l, slots_r] = halves(&mut e, total, left_pairs, links, has_settings);
    // Where each file's rows end among the usable rows, for counting the rows used per file.
    let file_ends: Vec<usize> = rows
        .per_file
        .iter()
        .scan(0, |end, &(_, k)| {
            *end += k;
            Some(*end)
        })
        .collect();
    let half = |slots, first_pair: usize| Half {
        slots,
        tail: Tail {
            used: vec![0; file_ends.len()],
            ..Tail::default()
        },
        first_pair: first_pair as u32,
    };
    let fold = |part: (&[u64], &[u32]), mut h: Half| {
        let written = fold_pairs(rows, part, (&unpack, &file_ends), &mut h);
        (written, h.tail)
    };
    let ((wl, tl), (wr, tr)) = crate::par::beside(
        parallel,
        || fold(right, half(slots_r, left_pairs)),
        || fold(left, half(slots_l, 0)),
    );
    assert_eq!(
        (wl, wr),
        (left_pairs, right_pairs),
        "pairs counted and folded"
    );
    // SAFETY: the halves wrote every slot of the `total` reserved in each array (slots
    // 0..left_pairs and left_pairs..total, one write per pair, as just checked).
    unsafe { e.set_len(total, links, has_settings) };
    let used_per_file = tl.used.iter().zip(&tr.used).map(|(l, r)| l + r).collect();
    e.join_tails(tl, tr, left_pairs);
    // The sorted rows run through the pairs in order; a new key starts the next pair.
    let mut edge_of_row = Vec::new();
    if want_row_edges {
        edge_of_row = vec![0u32; n];
        let mut edge = 0u32;
        for (i, (&key, &r)) in keys.iter().zip(&order).enumerate() {
            edge += u32::from(i > 0 && key != keys[i - 1]);
            edge_of_row[r as usize] = edge;
        }
    }
    Aggregated {
        edges: e,
        used_per_file,
        rows: n,
        edge_of_row,
    }
}

/// How many rows ahead of the fold their attributes are asked for (rows come in pair order,
/// so each row's attributes are a cache miss; asked for early, the misses overlap).
const AHEAD: usize = 12;

/// Fold sorted rows into the pairs of a half, and count the rows used per file (the first of
/// each pair in input order, as the sort is stable; files end at `file_ends` among the rows)
/// into the half's tail; returns how many pairs were written.
fn fold_pairs(
    rows: &ExposureRows,
    (keys, order): (&[u64], &[u32]),
    (unpack, file_ends): (&impl Fn(u64) -> (u64, u64), &[usize]),
    half: &mut Half,
) -> usize {
    let mut codes: Vec<u16> = Vec::new();
    let mut spans: Vec<(i32, i32)> = Vec::new();
    let mut i = 0;
    let mut at = 0;
    while i < keys.len() {
        let key = keys[i];
        let mut j = i;
        let mut pair = Pair::new(&mut codes, &mut spans);
        if file_ends.len() > 1 {
            let first = order[i] as usize;
            half.tail.used[file_ends.partition_point(|&end| end <= first)] += 1;
        }
        while j < keys.len() && keys[j] == key {
            if let Some(&ahead) = order.get(j + AHEAD) {
                rows.prefetch(ahead as usize);
            }
            pair.add(rows, order[j] as usize);
            j += 1;
        }
        let (lo, hi) = unpack(key);
        pair.put(half, at, (lo as u32, hi as u32), (j - i) as u32);
        at += 1;
        i = j;
    }
    if let [_] = file_ends {
        half.tail.used[0] = at as u64;
    }
    at
}

impl Edges {
    /// Mark the `total` pairs the halves wrote into the reserved room as set.
    ///
    /// # Safety
    /// Every slot `0..total` of each fixed-width array in use (and of the setting ends, after
    /// the leading 0) must have been written.
    unsafe fn set_len(&mut self, total: usize, links: bool, settings: bool) {
        self.a.set_len(total);
        self.b.set_len(total);
        self.rows.set_len(total);
        self.a_named_b.set_len(total);
        self.first.set_len(total);
        self.last.set_len(total);
        self.minutes.set_len(total);
        if links {
            self.links_ab.set_len(total);
            self.links_ba.set_len(total);
        }
        if settings {
            self.setting_off.set_len(total + 1);
        }
    }

    /// Take in the two halves' setting codes and date spans: the right half's setting ends
    /// (after `left_pairs` pairs) and span offsets continue after the left half's.
    fn join_tails(&mut self, mut left: Tail, right: Tail, left_pairs: usize) {
        if !self.setting_off.is_empty() {
            let base = left.setting_codes.len() as u32;
            for end in &mut self.setting_off[left_pairs + 1..] {
                *end += base;
            }
        }
        self.setting_codes = left.setting_codes;
        self.setting_codes.extend_from_slice(&right.setting_codes);
        if !right.span_off.is_empty() {
            if left.span_off.is_empty() {
                left.span_off.push(0);
            }
            let spans = left.spans.len() as u32;
            left.span_off
                .extend(right.span_off[1..].iter().map(|o| o + spans));
            left.span_pairs.extend_from_slice(&right.span_pairs);
            left.spans.extend_from_slice(&right.spans);
        }
        self.span_pairs = left.span_pairs;
        self.span_off = left.span_off;
        self.spans = left.spans;
    }
}

/// Degree of every node.
pub fn degrees(g: &Adjacency) -> Vec<u32> {
    (0..g.node_count() as u32)
        .map(|n| g.out_degree(n) as u32)
        .collect()
}

/// Connected components: a label per node (0-based, by order of first node) and sizes.
pub fn components(g: &Adjacency) -> (Vec<u32>, Vec<u32>) {
    let n = g.node_count();
    let mut label = vec![u32::MAX; n];
    let mut sizes = Vec::new();
    let mut stack = Vec::new();
    for s in 0..n {
        if label[s] != u32::MAX {
            continue;
        }
        let c = sizes.len() as u32;
        let mut size = 0u32;
        label[s] = c;
        stack.push(s as u32);
        while let Some(v) = stack.pop() {
            size += 1;
            for &w in g.neighbors_slice(v) {
                let w = w as usize;
                if label[w] == u32::MAX {
                    label[w] = c;
                    stack.push(w as u32);
                }
            }
        }
        sizes.push(size);
    }
    (label, sizes)
}
