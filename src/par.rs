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
