//! A stable least-significant-digit radix sort of integer keys with a payload carried along,
//! and the order of people by an integer key with ties broken by ID.
//!
//! Merging repeated exposure pairs and laying out the adjacency arrays both need tens of
//! millions of integer keys in order; a radix sort does that in a few linear passes, where a
//! comparison sort or a hash map of pairs would dominate the load time. Lists of people (the
//! priority list, the most-connected people, ID order) compare integers first and IDs only
//! where the integers tie: [`by_key_then_name`].

use rayon::prelude::*;

/// Sort `keys` and carry `rows` along (the same permutation), keeping the input order of
/// equal keys. Keys and payloads live in separate arrays: 12 bytes a row in each buffer
/// instead of a padded 16-byte pair, and the counting pass reads only the keys.
///
/// One pass on the highest digit splits the rows into runs (stable; up to 2048, of about
/// [`RUN_ROWS`] rows each where there are fewer), on two cores for many rows; each run, small
/// enough to stay in cache, is then sorted on the remaining digits on its own, the runs spread
/// over the cores.
pub fn radix_sort_by_key(keys: &mut Vec<u64>, rows: &mut Vec<u32>) {
    radix_sort_on(keys, rows, Cores::Two);
}

/// [`radix_sort_by_key`] on this thread alone, for a sort that runs beside other work on the
/// other core (a second core's share would only crowd that work).
pub fn radix_sort_by_key_here(keys: &mut Vec<u64>, rows: &mut Vec<u32>) {
    radix_sort_on(keys, rows, Cores::This);
}

/// Where a sort runs.
#[derive(Clone, Copy, PartialEq)]
enum Cores {
    /// On two cores where there are many rows.
    Two,
    /// On this thread only.
    This,
}

fn radix_sort_on(keys: &mut Vec<u64>, rows: &mut Vec<u32>, cores: Cores) {
    assert_eq!(keys.len(), rows.len(), "one payload per key");
    if keys.len() < 2 {
        return;
    }
    let max = keys.iter().copied().max().unwrap_or(0);
    let bits = 64 - max.leading_zeros();
    if keys.len() < 256 {
        return small_sort(keys, rows);
    }
    let width = bits.min(highest_digit_width(keys.len()));
    let shift = bits - width;
    let parallel = cores == Cores::Two && keys.len() >= PARALLEL_ROWS;
    let (mut key_to, mut row_to, starts) =
        split_by_highest_digit(keys, rows, (shift, width), parallel);
    std::mem::swap(keys, &mut key_to);
    std::mem::swap(rows, &mut row_to);
    drop((key_to, row_to));
    if shift == 0 {
        return;
    }
    // The runs of equal highest digit, each sorted on the lower `shift` bits.
    let mut runs: Vec<(&mut [u64], &mut [u32])> = Vec::with_capacity(starts.len());
    let (mut k_rest, mut r_rest) = (&mut keys[..], &mut rows[..]);
    for w in starts.windows(2) {
        let len = w[1] - w[0];
        let (k, kr) = k_rest.split_at_mut(len);
        let (r, rr) = r_rest.split_at_mut(len);
        (k_rest, r_rest) = (kr, rr);
        if len > 1 {
            runs.push((k, r));
        }
    }
    // Each worker keeps its scratch arrays from run to run.
    match cores {
        Cores::Two => runs.into_par_iter().for_each_init(
            || (Vec::new(), Vec::new()),
            |scratch, (k, r)| lsd_sort(k, r, shift, scratch),
        ),
        Cores::This => {
            let mut scratch = (Vec::new(), Vec::new());
            for (k, r) in runs {
                lsd_sort(k, r, shift, &mut scratch);
            }
        }
    }
}

/// Digits of at most 11 bits: 2048 buckets keep the scatter within cache and TLB reach,
/// which matters more than the number of passes.
const DIGIT: u32 = 11;

/// Rows per run after the highest digit's pass, where there are few enough rows for fewer than
/// 2048 runs: a run of this size and its scratch (12 bytes a row each, 384 KiB together) sit
/// in a core's 1 MiB second-level cache, and the fewer buckets of a narrower first digit keep
/// that pass's writes together. Sorting 1.05M random pair keys alone: 7-12 ms against 11-15
/// ms for runs of 4096 rows and 18-23 ms for 2048 runs on one core; 10.6M keys: 137-145 ms
/// against 186-199 ms.
const RUN_ROWS: usize = 16384;

/// From this many rows on, the highest digit's pass runs on two cores.
const PARALLEL_ROWS: usize = 100_000;

/// Width in bits of the highest digit for `n` rows: runs of about [`RUN_ROWS`] rows, at most
/// [`DIGIT`] bits.
fn highest_digit_width(n: usize) -> u32 {
    let runs = n.div_ceil(RUN_ROWS).max(2);
    (usize::BITS - (runs - 1).leading_zeros()).min(DIGIT)
}

/// The stable counting pass on the highest digit (`width` bits at `shift`) into new arrays,
/// and where each digit's run starts (and the end). With many rows, each core counts and
/// moves one half: the first half's rows of a digit go before the second half's, so the
/// order is the one pass's. The new arrays are not zeroed first: every place is written once.
fn split_by_highest_digit(
    keys: &[u64],
    rows: &[u32],
    (shift, width): (u32, u32),
    parallel: bool,
) -> (Vec<u64>, Vec<u32>, Vec<usize>) {
    let n = keys.len();
    let mask = (1u64 << width) - 1;
    let digit = |k: u64| ((k >> shift) & mask) as usize;
    let buckets = 1usize << width;
    let mid = if parallel { n / 2 } else { n };
    let count = |part: &[u64]| {
        let mut c = vec![0usize; buckets];
        for &k in part {
            c[digit(k)] += 1;
        }
        c
    };
    let (first, second) =
        crate::par::beside(parallel, || count(&keys[mid..]), || count(&keys[..mid]));
    let mut starts = Vec::with_capacity(buckets + 1);
    let (mut at_first, mut at_second) = (Vec::with_capacity(buckets), Vec::with_capacity(buckets));
    let mut total = 0;
    for d in 0..buckets {
        starts.push(total);
        at_first.push(total);
        at_second.push(total + first[d]);
        total += first[d] + second[d];
    }
    starts.push(total);
    let mut key_to: Vec<u64> = Vec::with_capacity(n);
    let mut row_to: Vec<u32> = Vec::with_capacity(n);
    let (kp, rp) = (
        crate::par::Disjoint::new(key_to.as_mut_ptr()),
        crate::par::Disjoint::new(row_to.as_mut_ptr()),
    );
    let fill = |part: (&[u64], &[u32]), mut at: Vec<usize>| {
        for (&k, &r) in part.0.iter().zip(part.1) {
            let d = digit(k);
            // SAFETY: `at[d]` runs through the places counted for this half's rows of digit
            // d, disjoint from the other half's and all below `n`, the arrays' capacity.
            unsafe {
                kp.write(at[d], k);
                rp.write(at[d], r);
            }
            at[d] += 1;
        }
    };
    crate::par::beside(
        parallel,
        || fill((&keys[mid..], &rows[mid..]), at_second),
        || fill((&keys[..mid], &rows[..mid]), at_first),
    );
    // SAFETY: the counts sum to `n`, and each row wrote one place: all `n` are written.
    unsafe {
        key_to.set_len(n);
        row_to.set_len(n);
    }
    (key_to, row_to, starts)
}

/// One stable counting pass on the digit of `width` bits at `shift`: `keys` and `rows` into
/// `to`; returns where each digit's run starts (and the end).
fn scatter(
    keys: &[u64],
    rows: &[u32],
    to: (&mut [u64], &mut [u32]),
    shift: u32,
    width: u32,
) -> Vec<usize> {
    let mask = (1u64 << width) - 1;
    let mut counts = vec![0usize; (1 << width) + 1];
    for k in keys {
        counts[((k >> shift) & mask) as usize + 1] += 1;
    }
    for d in 0..1 << width {
        counts[d + 1] += counts[d];
    }
    let starts = counts.clone();
    let (key_to, row_to) = to;
    for (&k, &r) in keys.iter().zip(rows) {
        let d = ((k >> shift) & mask) as usize;
        key_to[counts[d]] = k;
        row_to[counts[d]] = r;
        counts[d] += 1;
    }
    starts
}

/// A comparison sort (stable) of a few keys with their payloads, where counting passes cost
/// more than they save.
fn small_sort(keys: &mut [u64], rows: &mut [u32]) {
    let mut pairs: Vec<(u64, u32)> = keys.iter().copied().zip(rows.iter().copied()).collect();
    pairs.sort_by_key(|p| p.0);
    for (i, (k, r)) in pairs.into_iter().enumerate() {
        keys[i] = k;
        rows[i] = r;
    }
}

/// Sort a run on its lowest `bits` bits, least significant digit first (stable), with
/// `scratch` arrays (grown to the run's length where shorter; their contents do not matter).
fn lsd_sort(keys: &mut [u64], rows: &mut [u32], bits: u32, scratch: &mut (Vec<u64>, Vec<u32>)) {
    if keys.len() < 64 {
        // The run shares its higher bits: sorting on the whole key is sorting on these.
        return small_sort(keys, rows);
    }
    let passes = bits.div_ceil(DIGIT).max(1);
    let width = bits.div_ceil(passes);
    let len = keys.len();
    if scratch.0.len() < len {
        scratch.0.resize(len, 0);
        scratch.1.resize(len, 0);
    }
    let (key_buf, row_buf) = (&mut scratch.0[..len], &mut scratch.1[..len]);
    let mut in_buf = false;
    let mut shift = 0;
    while shift < bits {
        let w = width.min(bits - shift);
        if in_buf {
            scatter(key_buf, row_buf, (keys, rows), shift, w);
        } else {
            scatter(keys, rows, (key_buf, row_buf), shift, w);
        }
        in_buf = !in_buf;
        shift += w;
    }
    if in_buf {
        keys.copy_from_slice(key_buf);
        rows.copy_from_slice(row_buf);
    }
}

/// The first eight bytes of `s` as a big-endian integer (zeros after a shorter text): where two
/// texts' values differ, they order as the texts do.
fn head8(s: &str) -> u64 {
    let mut b = [0u8; 8];
    let n = s.len().min(8);
    b[..n].copy_from_slice(&s.as_bytes()[..n]);
    u64::from_be_bytes(b)
}

/// The people `keys.2` in order of `(keys.0, keys.1)` ascending, ties by `name`; only the
/// first `top` when asked. The integer keys are sorted first, names compared only within runs
/// of equal keys; for `top`, the entries that can be among the first `top` are selected in
/// linear time and only they are sorted.
pub fn by_key_then_name<'a>(
    mut keys: Vec<(u64, u32, u32)>,
    top: Option<usize>,
    name: impl Fn(u32) -> &'a str + Sync,
) -> Vec<u32> {
    let int = |k: &(u64, u32, u32)| (k.0, k.1);
    let top = top.filter(|&t| t > 0);
    if let Some(top) = top.filter(|&t| t < keys.len()) {
        // Everything before the pivot has a key no greater, everything after no smaller; the
        // entries after it with the pivot's key are tied with it and may belong in the top.
        let pivot = int(keys.select_nth_unstable_by_key(top - 1, int).1);
        let mut end = top;
        for j in top..keys.len() {
            if int(&keys[j]) == pivot {
                keys.swap(end, j);
                end += 1;
            }
        }
        keys.truncate(end);
    }
    keys.par_sort_unstable_by_key(int);
    // Within a run of equal keys, by name: each name's first eight bytes are read once as an
    // integer (the same order where they differ), whole names compared only where they agree.
    keys.par_chunk_by_mut(|x, y| int(x) == int(y))
        .filter(|run| run.len() > 1)
        .for_each(|run| {
            let mut named: Vec<(u64, u32)> = run.iter().map(|k| (head8(name(k.2)), k.2)).collect();
            named.sort_unstable_by(|a, b| a.0.cmp(&b.0).then_with(|| name(a.1).cmp(name(b.1))));
            for (k, (_, node)) in run.iter_mut().zip(named) {
                k.2 = node;
            }
        });
    let mut order: Vec<u32> = keys.into_iter().map(|k| k.2).collect();
    if let Some(top) = top {
        order.truncate(top);
    }
    order
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    /// The radix sort of (key, row) pairs, on two cores and on one, against the standard
    /// library's stable sort.
    fn same_as_stable_sort(v: Vec<(u64, u32)>) -> Result<(), TestCaseError> {
        let mut b = v.clone();
        b.sort_by_key(|p| p.0);
        for sort in [radix_sort_by_key, radix_sort_by_key_here] {
            let (mut keys, mut rows): (Vec<u64>, Vec<u32>) = v.iter().copied().unzip();
            sort(&mut keys, &mut rows);
            let a: Vec<(u64, u32)> = keys.into_iter().zip(rows).collect();
            prop_assert_eq!(&a, &b);
        }
        Ok(())
    }

    /// Enough rows for the highest digit's pass on two cores (and the same on one), keys drawn
    /// from a few thousand values (many equal keys, whose rows must keep their order) and from
    /// a wide range.
    #[test]
    fn matches_a_stable_comparison_sort_on_two_cores() {
        let mut x: u64 = 0x9E37_79B9_7F4A_7C15;
        let mut next = move || {
            x ^= x << 13;
            x ^= x >> 7;
            x ^= x << 17;
            x
        };
        for range in [3000, 1 << 36] {
            let v: Vec<(u64, u32)> = (0..300_000u32).map(|i| (next() % range, i)).collect();
            same_as_stable_sort(v).unwrap();
        }
    }

    proptest! {
        #[test]
        fn matches_a_stable_comparison_sort(v in proptest::collection::vec((0u64..5_000_000_000u64, any::<u32>()), 0..5000)) {
            same_as_stable_sort(v)?;
        }

        /// Integer keys first, then names (some sharing their first eight bytes, some shorter,
        /// one with a NUL byte), against a plain comparison sort; whole and top 3.
        #[test]
        fn key_then_name_is_the_plain_sort(
            keys in proptest::collection::vec((0u64..3, 0u32..2), 1..60),
            tails in proptest::collection::vec("[a-c\u{0}]{0,3}", 60),
        ) {
            let names: Vec<String> = tails
                .iter()
                .enumerate()
                .map(|(i, t)| match i % 3 {
                    0 => format!("ABCDEFGH{t}{i}"),
                    1 => format!("AB{t}{i}"),
                    _ => format!("{t}{i}"),
                })
                .collect();
            let entries: Vec<(u64, u32, u32)> =
                keys.iter().enumerate().map(|(i, &(a, b))| (a, b, i as u32)).collect();
            let mut want: Vec<u32> = (0..entries.len() as u32).collect();
            want.sort_by(|&x, &y| {
                let (a, b) = (entries[x as usize], entries[y as usize]);
                (a.0, a.1, names[x as usize].as_str()).cmp(&(b.0, b.1, names[y as usize].as_str()))
            });
            let got = by_key_then_name(entries.clone(), None, |i| names[i as usize].as_str());
            prop_assert_eq!(&got, &want);
            let top = by_key_then_name(entries, Some(3), |i| names[i as usize].as_str());
            prop_assert_eq!(&top[..], &want[..want.len().min(3)]);
        }

        /// Many equal keys and runs of every size (one highest digit shared by most rows).
        #[test]
        fn stable_with_skewed_keys(v in proptest::collection::vec((prop_oneof![0u64..50, 1u64 << 40..(1u64 << 40) + 3000], any::<u32>()), 0..5000)) {
            same_as_stable_sort(v)?;
        }
    }
}
