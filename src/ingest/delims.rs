//! Where the separators, line ends and quote characters of delimited text are, 64 bytes at a
//! time: one bit per byte in three masks, made with SSE2 compares (part of every x86-64
//! processor; a plain loop elsewhere). The line check ([`count_fields_per_line`]) and the tokeniser
//! ([`super::cells::TextCells::tokenise`]) walk the set bits instead of searching for each
//! separator in turn, which costs a call and a restart per field.

/// Bytes per block.
pub const BLOCK: usize = 64;

/// One block: its offset in the text, and the bits of its separators, its line ends and its
/// quote characters (bit i is byte `base + i`; bytes past the end of the text are none).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Block {
    pub base: usize,
    pub sep: u64,
    pub nl: u64,
    pub quote: u64,
}

/// The blocks of `text` in order.
pub fn blocks(text: &[u8], sep: u8) -> impl Iterator<Item = Block> + '_ {
    let whole = text.len() / BLOCK * BLOCK;
    let full = text[..whole]
        .chunks_exact(BLOCK)
        .enumerate()
        .map(move |(i, b)| {
            let b: &[u8; BLOCK] = b.try_into().expect("a whole block");
            let (s, n, q) = masks(b, sep);
            Block {
                base: i * BLOCK,
                sep: s,
                nl: n,
                quote: q,
            }
        });
    // The tail, padded with zero bytes whose bits are then cleared.
    let tail = (whole < text.len()).then(|| {
        let mut b = [0u8; BLOCK];
        b[..text.len() - whole].copy_from_slice(&text[whole..]);
        let (s, n, q) = masks(&b, sep);
        let keep = (1u64 << (text.len() - whole)) - 1;
        Block {
            base: whole,
            sep: s & keep,
            nl: n & keep,
            quote: q & keep,
        }
    });
    full.chain(tail)
}

/// The separator, line-end and quote bits of one block.
#[inline]
fn masks(b: &[u8; BLOCK], sep: u8) -> (u64, u64, u64) {
    #[cfg(target_arch = "x86_64")]
    {
        // SAFETY: SSE2 is part of the x86-64 baseline; the four unaligned loads read the 64
        // bytes of `b` and nothing else.
        unsafe {
            use std::arch::x86_64::{
                __m128i, _mm_cmpeq_epi8, _mm_loadu_si128, _mm_movemask_epi8, _mm_set1_epi8,
            };
            let (vs, vn) = (_mm_set1_epi8(sep as i8), _mm_set1_epi8(b'\n' as i8));
            let vq = _mm_set1_epi8(b'"' as i8);
            let (mut s, mut n, mut q) = (0u64, 0u64, 0u64);
            for k in 0..4 {
                let v = _mm_loadu_si128(b.as_ptr().add(16 * k).cast::<__m128i>());
                let ms = _mm_movemask_epi8(_mm_cmpeq_epi8(v, vs)) as u32 as u64;
                let mn = _mm_movemask_epi8(_mm_cmpeq_epi8(v, vn)) as u32 as u64;
                let mq = _mm_movemask_epi8(_mm_cmpeq_epi8(v, vq)) as u32 as u64;
                s |= (ms & 0xffff) << (16 * k);
                n |= (mn & 0xffff) << (16 * k);
                q |= (mq & 0xffff) << (16 * k);
            }
            (s, n, q)
        }
    }
    #[cfg(not(target_arch = "x86_64"))]
    {
        let (mut s, mut n, mut q) = (0u64, 0u64, 0u64);
        for (i, &c) in b.iter().enumerate() {
            s |= u64::from(c == sep) << i;
            n |= u64::from(c == b'\n') << i;
            q |= u64::from(c == b'"') << i;
        }
        (s, n, q)
    }
}

/// Call `line(start, end, separators)` for every line of `text` (`end` at its line end, or at
/// the end of the text for a last line without one), with the number of separators in it;
/// stop at the first `false`, and return it. For plain text only: a quote character anywhere
/// also stops the walk with `false` (such text needs the quote-aware reader).
pub fn count_fields_per_line(
    text: &[u8],
    sep: u8,
    mut line: impl FnMut(usize, usize, u32) -> bool,
) -> bool {
    let mut start = 0usize;
    let mut carried = 0u32;
    for b in blocks(text, sep) {
        if b.quote != 0 {
            return false;
        }
        let mut seps = b.sep;
        let mut ends = b.nl;
        while ends != 0 {
            let i = ends.trailing_zeros();
            // The separators before this line end, and after the previous one.
            let before = (1u64 << i) - 1;
            let count = carried + (seps & before).count_ones();
            if !line(start, b.base + i as usize, count) {
                return false;
            }
            seps &= !before;
            carried = 0;
            start = b.base + i as usize + 1;
            ends &= ends - 1;
        }
        carried += seps.count_ones();
    }
    start >= text.len() || line(start, text.len(), carried)
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    /// The masks agree with a byte-by-byte reading, for texts of every length around the
    /// block size (common practice, no source: checked against the plain definition).
    #[test]
    fn masks_match_bytes() {
        let text: Vec<u8> = (0..300u32)
            .map(|i| match i % 7 {
                0 => b',',
                3 => b'\n',
                5 if i % 3 == 0 => b'"',
                _ => b'a' + (i % 26) as u8,
            })
            .collect();
        for len in 0..text.len() {
            let t = &text[..len];
            let (mut s, mut n, mut q) = (Vec::new(), Vec::new(), Vec::new());
            for b in blocks(t, b',') {
                for i in 0..BLOCK {
                    for (mask, into) in [(b.sep, &mut s), (b.nl, &mut n), (b.quote, &mut q)] {
                        if mask >> i & 1 == 1 {
                            into.push(b.base + i);
                        }
                    }
                }
            }
            let at = |c: u8| -> Vec<usize> { (0..len).filter(|&i| t[i] == c).collect() };
            assert_eq!((s, n, q), (at(b','), at(b'\n'), at(b'"')), "length {len}");
        }
    }

    proptest! {
        /// Lines and their separator counts are those of splitting at line ends.
        #[test]
        fn lines_match_split(text in "[a,;\n]{0,200}") {
            let t = text.as_bytes();
            let mut mine = Vec::new();
            assert!(count_fields_per_line(t, b',', |a, b, c| {
                mine.push((a, b, c));
                true
            }));
            let commas = |line: &[u8]| line.iter().filter(|&&x| x == b',').count() as u32;
            let mut want = Vec::new();
            let mut start = 0;
            for (i, &c) in t.iter().enumerate() {
                if c == b'\n' {
                    want.push((start, i, commas(&t[start..i])));
                    start = i + 1;
                }
            }
            if start < t.len() {
                want.push((start, t.len(), commas(&t[start..])));
            }
            prop_assert_eq!(mine, want);
        }

        /// A quote character anywhere stops the walk with false.
        #[test]
        fn a_quote_stops_the_walk(text in "[a,\n]{0,150}", at in 0usize..150) {
            let mut t = text.into_bytes();
            let at = at.min(t.len());
            t.insert(at, b'"');
            prop_assert!(!count_fields_per_line(&t, b',', |_, _, _| true));
        }
    }
}
