//! A stable least-significant-digit radix sort of `(key, payload)` pairs.
//!
//! Merging repeated exposure pairs and laying out the adjacency arrays both need tens of
//! millions of integer keys in order; a radix sort does that in a few linear passes, where a
//! comparison sort or a hash map of pairs would dominate the load time.

/// Sort by key, keeping the input order of equal keys.
pub fn radix_sort_pairs(pairs: &mut Vec<(u64, u32)>) {
    if pairs.len() < 2 {
        return;
    }
    let max = pairs.iter().map(|p| p.0).max().unwrap_or(0);
    let bits = 64 - max.leading_zeros();
    if pairs.len() < 256 {
        pairs.sort_by_key(|p| p.0);
        return;
    }
    // Digits of at most 11 bits: 2048 buckets keep the scatter within cache and TLB reach,
    // which matters more than the number of passes.
    let passes = bits.div_ceil(11).max(1);
    let width = bits.div_ceil(passes);
    let mask = (1u64 << width) - 1;
    let mut buf = vec![(0u64, 0u32); pairs.len()];
    let mut shift = 0;
    while shift < bits {
        let mut counts = vec![0usize; 1 << width];
        for p in pairs.iter() {
            counts[((p.0 >> shift) & mask) as usize] += 1;
        }
        let mut sum = 0;
        for c in counts.iter_mut() {
            let n = *c;
            *c = sum;
            sum += n;
        }
        for p in pairs.iter() {
            let d = ((p.0 >> shift) & mask) as usize;
            buf[counts[d]] = *p;
            counts[d] += 1;
        }
        std::mem::swap(pairs, &mut buf);
        shift += width;
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    proptest! {
        #[test]
        fn matches_a_stable_comparison_sort(v in proptest::collection::vec((0u64..5_000_000_000u64, any::<u32>()), 0..2000)) {
            let mut a = v.clone();
            radix_sort_pairs(&mut a);
            let mut b = v;
            b.sort_by_key(|p| p.0);
            prop_assert_eq!(a, b);
        }
    }
}
