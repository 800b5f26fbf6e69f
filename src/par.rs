//! Two pieces of work at once on the two cores hubwatch is made for: one on this thread, one
//! on a thread of its own, or both here, one after the other, when the work is too small to
//! be worth a thread.

/// `main` here and `side` on a thread of its own when `parallel` is set, else `main` then
/// `side`; returns both results (a panic on the side is passed on).
pub fn beside<M, S: Send>(
    parallel: bool,
    side: impl FnOnce() -> S + Send,
    main: impl FnOnce() -> M,
) -> (M, S) {
    if !parallel {
        let m = main();
        return (m, side());
    }
    std::thread::scope(|sc| {
        let handle = sc.spawn(side);
        let m = main();
        let s = handle
            .join()
            .unwrap_or_else(|p| std::panic::resume_unwind(p));
        (m, s)
    })
}

/// [`beside`] on the thread pool's workers (`rayon::join`), for work done many times in a row
/// (each piece of a table): no thread is made for each call. Only where the pool is otherwise
/// idle, as while a table is read: with both workers busy, `side` waits and runs after `main`.
pub fn on_pool<M: Send, S: Send>(
    parallel: bool,
    side: impl FnOnce() -> S + Send,
    main: impl FnOnce() -> M + Send,
) -> (M, S) {
    if !parallel {
        let m = main();
        return (m, side());
    }
    rayon::join(main, side)
}

/// An array that the two halves of a piece of work write through at places of their own (each
/// index written by one half only), where the places of a half are not one slice: rows moved
/// to where their keys sort.
#[derive(Clone, Copy)]
pub struct Disjoint<T>(*mut T);

// SAFETY: a `Disjoint` is only written through at indices no other thread touches meanwhile
// (the contract of `Disjoint::write`), so sending or sharing it is sending the places.
unsafe impl<T: Send> Send for Disjoint<T> {}
// SAFETY: as above.
unsafe impl<T: Send> Sync for Disjoint<T> {}

impl<T> Disjoint<T> {
    /// Writes through `start`, the start of an array that outlives every write.
    pub fn new(start: *mut T) -> Disjoint<T> {
        Disjoint(start)
    }

    /// Write `v` at index `i` (the old value, if any, is not dropped).
    ///
    /// # Safety
    /// `i` is within the array, and no other thread writes or reads index `i` meanwhile.
    #[inline]
    pub unsafe fn write(self, i: usize, v: T) {
        // SAFETY: as the caller promises.
        unsafe { self.0.add(i).write(v) }
    }
}
