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
pub fn radix_sort_by_key(keys: &mut Vec<u64>, rows: &mut Vec<u32>) {
    assert_eq!(keys.len(), rows.len(), "one payload per key");
    if keys.len() < 2 {
        return;
    }
    let max = keys.iter().copied().max().unwrap_or(0);
    let bits = 64 - max.leading_zeros();
    if keys.len() < 256 {
        let mut pairs: Vec<(u64, u32)> = keys.iter().copied().zip(rows.iter().copied()).collect();
        pairs.sort_by_key(|p| p.0);
        for (i, (k, r)) in pairs.into_iter().enumerate() {
            keys[i] = k;
            rows[i] = r;
        }
        return;
    }
    // Digits of at most 11 bits: 2048 buckets keep the scatter within cache and TLB reach,
    // which matters more than the number of passes.
    let passes = bits.div_ceil(11).max(1);
    let width = bits.div_ceil(passes);
    let mask = (1u64 << width) - 1;
    let mut key_buf = vec![0u64; keys.len()];
    let mut row_buf = vec![0u32; rows.len()];
    let mut shift = 0;
    while shift < bits {
        let mut counts = vec![0usize; 1 << width];
        for k in keys.iter() {
            counts[((k >> shift) & mask) as usize] += 1;
        }
        let mut sum = 0;
        for c in counts.iter_mut() {
            let n = *c;
            *c = sum;
            sum += n;
        }
        for (&k, &r) in keys.iter().zip(rows.iter()) {
            let d = ((k >> shift) & mask) as usize;
            key_buf[counts[d]] = k;
            row_buf[counts[d]] = r;
            counts[d] += 1;
        }
        std::mem::swap(keys, &mut key_buf);
        std::mem::swap(rows, &mut row_buf);
        shift += width;
    }
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
    keys.par_chunk_by_mut(|x, y| int(x) == int(y))
        .for_each(|run| run.sort_unstable_by(|a, b| name(a.2).cmp(name(b.2))));
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

    proptest! {
        #[test]
        fn matches_a_stable_comparison_sort(v in proptest::collection::vec((0u64..5_000_000_000u64, any::<u32>()), 0..2000)) {
            let (mut keys, mut rows): (Vec<u64>, Vec<u32>) = v.iter().copied().unzip();
            radix_sort_by_key(&mut keys, &mut rows);
            let mut b = v;
            b.sort_by_key(|p| p.0);
            let a: Vec<(u64, u32)> = keys.into_iter().zip(rows).collect();
            prop_assert_eq!(a, b);
        }
    }
}
