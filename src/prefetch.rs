//! Hints about memory: asking the processor for a line ahead of its use, and the kernel for
//! large pages under a large table probed at random.
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

/// Tables at least this large are worth large pages.
const LARGE: usize = 32 << 20;
const HUGE_PAGE: usize = 2 << 20;

/// Ask the kernel to back the (not yet written) capacity of `v` with 2 MiB pages, where it
/// offers them on request (Linux transparent huge pages in `madvise` or `always` mode); only
/// for tables of at least 32 MiB. Nothing changes but how the pages are backed.
pub fn advise_huge_pages<T>(v: &Vec<T>) {
    let bytes = v.capacity() * std::mem::size_of::<T>();
    if bytes < LARGE {
        return;
    }
    #[cfg(target_os = "linux")]
    {
        let start = (v.as_ptr() as usize).next_multiple_of(HUGE_PAGE);
        let end = (v.as_ptr() as usize + bytes) / HUGE_PAGE * HUGE_PAGE;
        if end > start {
            // SAFETY: the range lies inside the vector's own allocation; the advice changes how
            // the kernel backs the pages, never their contents.
            unsafe {
                libc::madvise(start as *mut libc::c_void, end - start, libc::MADV_HUGEPAGE);
            }
        }
    }
}
