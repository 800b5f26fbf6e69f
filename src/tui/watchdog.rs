//! The dashboard's watchdog: a thread that ends the process when the dashboard should stop but
//! its loop cannot. Reading a terminal that has gone away can spin forever inside the terminal
//! library without returning (a known fault of its event reader), so neither a signal flag nor
//! an EOF check in the loop is enough on its own.
//!
//! Every 100 ms it looks at the stop flag (set by SIGTERM, SIGHUP or SIGINT) and at the
//! terminal (standard input reporting a hang-up or an error). When either says stop, it sets
//! the flag for the loop and gives the loop [`GRACE`] to end by itself; then it restores what
//! it can of the terminal and exits. A workspace write in flight is one SQLite transaction,
//! which is either committed or rolled back, never half-written.

use std::sync::atomic::{AtomicUsize, Ordering};
use std::sync::Arc;
use std::time::{Duration, Instant};

/// How long the loop gets to end by itself once told to stop.
pub const GRACE: Duration = Duration::from_millis(600);

/// The value stored in the stop flag when the terminal went away (no signal arrived).
pub const TERMINAL_GONE: usize = 1000;

/// True when standard input is a terminal that has hung up or reports an error.
pub fn terminal_gone() -> bool {
    #[cfg(unix)]
    {
        let mut fds = libc::pollfd {
            fd: 0,
            events: 0,
            revents: 0,
        };
        // SAFETY: one valid pollfd, a zero timeout; poll only writes `revents`.
        let n = unsafe { libc::poll(&mut fds, 1, 0) };
        n > 0 && fds.revents & (libc::POLLHUP | libc::POLLERR | libc::POLLNVAL) != 0
    }
    #[cfg(not(unix))]
    {
        false
    }
}

/// The process exit code for a stop reason: 128 + the signal, or 129 (as for a hang-up) when
/// the terminal went away.
pub fn exit_code(reason: usize) -> i32 {
    if reason == TERMINAL_GONE {
        128 + libc::SIGHUP
    } else {
        128 + reason as i32
    }
}

/// Start the watchdog thread; `restore` puts the terminal back (best effort).
pub fn start(stop: Arc<AtomicUsize>, restore: fn()) {
    let spawned = std::thread::Builder::new()
        .name("hubwatch-watchdog".into())
        .spawn(move || watch(&stop, restore));
    // Without the thread the loop still stops on signals and read errors by itself.
    drop(spawned);
}

fn watch(stop: &AtomicUsize, restore: fn()) {
    let mut since: Option<Instant> = None;
    loop {
        std::thread::sleep(Duration::from_millis(100));
        if stop.load(Ordering::Relaxed) == 0 && terminal_gone() {
            stop.store(TERMINAL_GONE, Ordering::Relaxed);
        }
        let reason = stop.load(Ordering::Relaxed);
        if reason == 0 {
            continue;
        }
        let t = *since.get_or_insert_with(Instant::now);
        if t.elapsed() >= GRACE {
            restore();
            std::process::exit(exit_code(reason));
        }
    }
}
