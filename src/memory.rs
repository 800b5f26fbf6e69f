//! Whether freed memory goes back to the system during a load.
//!
//! A load allocates and frees large buffers stage after stage (text pieces and their cell
//! bounds, the sort's arrays, the pair list the adjacency is built from). Given back, each
//! one is faulted in afresh, page by page, by the next stage that needs memory: at 10.6M rows
//! that was over half a million page faults and about 1.2 s of system time. Kept in the
//! process, it is reused without faults, at the price of a higher peak. So a load of an export
//! up to [`KEEP_UP_TO`] bytes keeps it (the peak at 10.6M rows rises from about 1.08 to
//! 1.3 GiB), and a larger one gives it back between stages, as the peak then matters more.
//! Once the load is done, what it freed goes back in either case
//! ([`give_back_after_load`]): the statistics then allocate their own arrays afresh, fewer
//! than the load freed, and the kept blocks would otherwise add to their peak (at 10.6M rows,
//! 9 alternating runs: median peak 1304 MiB against 1362, the highest 1349 against 1441; wall
//! 0.99x).

use std::sync::atomic::{AtomicBool, Ordering};

/// Exports of at most this many bytes keep freed memory for reuse.
pub const KEEP_UP_TO: u64 = 1 << 30;

/// A compressed file counts as this many times its size.
const COMPRESSED_FACTOR: u64 = 8;

static KEEP: AtomicBool = AtomicBool::new(false);

/// How many bytes of text the files at `paths` hold, about (folders one level deep; a
/// compressed file by [`COMPRESSED_FACTOR`]). Unreadable entries count nothing.
pub fn input_bytes<'a>(paths: impl IntoIterator<Item = &'a std::path::Path>) -> u64 {
    fn file_bytes(p: &std::path::Path, meta: &std::fs::Metadata) -> u64 {
        let gz = p.extension().is_some_and(|e| e.eq_ignore_ascii_case("gz"));
        meta.len()
            .saturating_mul(if gz { COMPRESSED_FACTOR } else { 1 })
    }
    let mut total = 0u64;
    for p in paths {
        let Ok(meta) = std::fs::metadata(p) else {
            continue;
        };
        if meta.is_dir() {
            let entries = std::fs::read_dir(p).into_iter().flatten().flatten();
            for e in entries {
                if let Ok(m) = e.metadata() {
                    total = total.saturating_add(file_bytes(&e.path(), &m));
                }
            }
        } else {
            total = total.saturating_add(file_bytes(p, &meta));
        }
    }
    total
}

/// Keep freed memory in the process from now on (see the module): large blocks come from the
/// heap rather than mappings of their own, and the heap is not trimmed.
pub fn keep_freed_memory() {
    #[cfg(all(target_os = "linux", target_env = "gnu"))]
    // SAFETY: mallopt only changes the allocator's thresholds for later calls.
    unsafe {
        libc::mallopt(libc::M_MMAP_MAX, 0);
        libc::mallopt(libc::M_TRIM_THRESHOLD, i32::MAX);
    }
    KEEP.store(true, Ordering::Relaxed);
}

/// Return the allocator's freed memory to the system between load stages, unless it is kept:
/// the reader's chunk buffers and the merge's sort arrays are freed by then, but glibc keeps
/// freed blocks of the main heap resident until asked, and they would add to the next stage's
/// peak.
pub fn give_back_freed_memory() {
    if !KEEP.load(Ordering::Relaxed) {
        trim();
    }
}

/// Return the allocator's freed memory to the system, kept or not (see the module): for the
/// end of a load.
pub fn give_back_after_load() {
    trim();
}

/// Return the allocator's freed memory to the system (glibc; elsewhere a no-op).
fn trim() {
    #[cfg(all(target_os = "linux", target_env = "gnu"))]
    // SAFETY: malloc_trim only returns free memory of the allocator to the system.
    unsafe {
        libc::malloc_trim(0);
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Files count their size, folders the files directly in them, compressed files eight
    /// times theirs, and paths that are not there nothing. (This module's own rule.)
    #[test]
    fn input_bytes_of_files_folders_and_compressed_files() {
        let dir = tempfile::tempdir().unwrap();
        let sub = dir.path().join("export");
        std::fs::create_dir(&sub).unwrap();
        std::fs::write(sub.join("people.csv"), [b'x'; 100]).unwrap();
        std::fs::write(sub.join("exposures.csv.gz"), [b'x'; 10]).unwrap();
        let single = dir.path().join("one.csv");
        std::fs::write(&single, [b'x'; 7]).unwrap();
        let missing = dir.path().join("missing.csv");
        assert_eq!(input_bytes([single.as_path()]), 7);
        assert_eq!(input_bytes([sub.as_path()]), 100 + 80);
        let all = [sub.as_path(), single.as_path(), missing.as_path()];
        assert_eq!(input_bytes(all), 187);
    }
}
