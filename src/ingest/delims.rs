//! Where the separators and line ends of plain delimited text are, 64 bytes at a time: one
//! bit per byte in two masks, made with SSE2 compares (part of every x86-64 processor; a plain
//! loop elsewhere). The line check ([`count_fields_per_line`]) and the tokeniser
//! ([`super::cells::TextCells::tokenise`]) walk the set bits instead of searching for each
//! separator in turn, which costs a call and a restart per field.

/// Bytes per block.
pub const BLOCK: usize = 64;

/// One block: its offset in the text, and the bits of its separators and of its line ends
/// (bit i is byte `base + i`; bytes past the end of the text are neither).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Block {
    pub base: usize,
    pub sep: u64,
    pub nl: u64,
}

/// The blocks of `text` in order.
pub fn blocks(text: &[u8], sep: u8) -> impl Iterator<Item = Block> + '_ {
    let whole = text.len() / BLOCK * BLOCK;
    let full = text[..whole]
        .chunks_exact(BLOCK)
        .enumerate()
        .map(move |(i, b)| {
            let b: &[u8; BLOCK] = b.try_into().expect("a whole block");
            let (s, n) = masks(b, sep);
            Block {
                base: i * BLOCK,
                sep: s,
                nl: n,
            }
        });
    // The tail, padded with zero bytes whose bits are then cleared.
    let tail = (whole < text.len()).then(|| {
        let mut b = [0u8; BLOCK];
        b[..text.len() - whole].copy_from_slice(&text[whole..]);
        let (s, n) = masks(&b, sep);
        let keep = (1u64 << (text.len() - whole)) - 1;
        Block {
            base: whole,
            sep: s & keep,
            nl: n & keep,
        }
    });
    full.chain(tail)
}

/// The separator and line-end bits of one block.
#[inline]
fn masks(b: &[u8; BLOCK], sep: u8) -> (u64, u64) {
    #[cfg(target_arch = "x86_64")]
    {
        // SAFETY: SSE2 is part of the x86-64 baseline; the four unaligned loads read the 64
        // bytes of `b` and nothing else.
        unsafe {
            use std::arch::x86_64::{
                __m128i, _mm_cmpeq_epi8, _mm_loadu_si128, _mm_movemask_epi8, _mm_set1_epi8,
            };
            let (vs, vn) = (_mm_set1_epi8(sep as i8), _mm_set1_epi8(b'\n' as i8));
            let (mut s, mut n) = (0u64, 0u64);
            for k in 0..4 {
                let v = _mm_loadu_si128(b.as_ptr().add(16 * k).cast::<__m128i>());
                let ms = _mm_movemask_epi8(_mm_cmpeq_epi8(v, vs)) as u32 as u64;
                let mn = _mm_movemask_epi8(_mm_cmpeq_epi8(v, vn)) as u32 as u64;
                s |= (ms & 0xffff) << (16 * k);
                n |= (mn & 0xffff) << (16 * k);
            }
            (s, n)
        }
    }
    #[cfg(not(target_arch = "x86_64"))]
    {
        let (mut s, mut n) = (0u64, 0u64);
        for (i, &c) in b.iter().enumerate() {
            s |= u64::from(c == sep) << i;
            n |= u64::from(c == b'\n') << i;
        }
        (s, n)
    }
}

/// Call `line(start, end, separators)` for every line of `text` (`end` at its line end, or at
/// the end of the text for a last line without one), with the number of separators in it;
/// stop at the first `false`, and return it.
pub fn count_fields_per_line(
    text: &[u8],
    sep: u8,
    mut line: impl FnMut(usize, usize, u32) -> bool,
) -> bool {
    let mut start = 0usize;
    let mut carried = 0u32;
    for b in blocks(text, sep) {
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
                _ => b'a' + (i % 26) as u8,
            })
            .collect();
        for len in 0..text.len() {
            let t = &text[..len];
            let (mut s, mut n) = (Vec::new(), Vec::new());
            for b in blocks(t, b',') {
                for i in 0..BLOCK {
                    if b.sep >> i & 1 == 1 {
                        s.push(b.base + i);
                    }
                    if b.nl >> i & 1 == 1 {
                        n.push(b.base + i);
                    }
                }
            }
            let want_s: Vec<usize> = (0..len).filter(|&i| t[i] == b',').collect();
            let want_n: Vec<usize> = (0..len).filter(|&i| t[i] == b'\n').collect();
            assert_eq!((s, n), (want_s, want_n), "length {len}");
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
            let mut want = Vec::new();
            let mut start = 0;
            for (i, &c) in t.iter().enumerate() {
                if c == b'\n' {
                    want.push((start, i, t[start..i].iter().filter(|&&x| x == b',').count() as u32));
                    start = i + 1;
                }
            }
            if start < t.len() {
                want.push((start, t.len(), t[start..].iter().filter(|&&x| x == b',').count() as u32));
            }
            prop_assert_eq!(mine, want);
        }
    }
}
