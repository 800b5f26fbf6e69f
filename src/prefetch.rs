//! Asking the processor for a memory line ahead of its use.
//!
//! Walks that visit arrays in an order of their own (rows in pair order, people in hash order)
//! wait on one cache miss after another. Naming the element a few steps ahead lets those misses
//! overlap; the result is the same with or without the hint.

/// Ask for the line that holds `v[i]`, if `i` is in bounds (a no-op elsewhere, and on
/// processors without the instruction).
#[inline(always)]
pub fn prefetch<T>(v: &[T], i: usize) {
    #[cfg(target_arch = "x86_64")]
    if i < v.len() {
        // SAFETY: `i` is in bounds; a prefetch reads nothing and cannot fault.
        unsafe {
            use std::arch::x86_64::{_mm_prefetch, _MM_HINT_T0};
            _mm_prefetch::<_MM_HINT_T0>(v.as_ptr().add(i).cast());
        }
    }
    #[cfg(not(target_arch = "x86_64"))]
    let _ = (v, i);
}
