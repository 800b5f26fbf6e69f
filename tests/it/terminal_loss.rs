//! A dashboard whose terminal goes away exits within two seconds: the tmux session killed (the
//! terminal hangs up), SIGTERM while the worker threads are busy, and a pseudo-terminal closed
//! under a process that has it as standard input but not as controlling terminal (so no
//! hang-up signal arrives at all: only the terminal itself says it is gone). Also: SIGTERM in
//! the middle of a burst of workspace writes leaves the workspace consistent.
//!
//! The exit must not depend on the terminal library's read returning: reading a dead terminal
//! can spin forever inside it (common practice to guard against, no source beyond the
//! library's own issue tracker).

use std::path::{Path, PathBuf};
use std::process::Command;
use std::time::{Duration, Instant};

use crate::common;

fn have_tmux() -> bool {
    Command::new("tmux")
        .arg("-V")
        .output()
        .is_ok_and(|o| o.status.success())
}

/// True while the process runs (a zombie has exited and only waits to be reaped).
fn alive(pid: u32) -> bool {
    match std::fs::read_to_string(format!("/proc/{pid}/status")) {
        Ok(s) => !s
            .lines()
            .any(|l| l.starts_with("State:") && l.contains('Z')),
        Err(_) => false,
    }
}

/// Seconds until the process is gone, at most `limit`.
fn time_to_exit(pid: u32, limit: f64) -> f64 {
    let t = Instant::now();
    while alive(pid) && t.elapsed().as_secs_f64() < limit {
        std::thread::sleep(Duration::from_millis(20));
    }
    t.elapsed().as_secs_f64()
}

/// A synth export large enough that the null model is still running on worker threads.
fn busy_export(dir: &Path) -> PathBuf {
    let out = dir.join("export");
    let (code, _, err) = common::hubwatch(&[
        "synth",
        "--people",
        "20000",
        "--seed",
        "3",
        "--out",
        out.to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{err}");
    out
}

/// Start the dashboard in a detached tmux session; (socket, pid of hubwatch).
fn in_tmux(dir: &Path, args: &str) -> (PathBuf, u32) {
    let socket = dir.join("tmux.sock");
    let pidfile = dir.join("pid.txt");
    let script = dir.join("run.sh");
    std::fs::write(
        &script,
        format!(
            "echo $$ > '{}'\nexec '{}' {args}\n",
            pidfile.display(),
            env!("CARGO_BIN_EXE_hubwatch"),
        ),
    )
    .unwrap();
    let ok = Command::new("tmux")
        .arg("-S")
        .arg(&socket)
        .args(["new-session", "-d", "-s", "hw", "-x", "120", "-y", "40"])
        .arg(format!("sh '{}'", script.display()))
        .status()
        .unwrap();
    assert!(ok.success());
    let start = Instant::now();
    loop {
        let screen = Command::new("tmux")
            .arg("-S")
            .arg(&socket)
            .args(["capture-pane", "-p", "-t", "hw"])
            .output()
            .unwrap();
        if String::from_utf8_lossy(&screen.stdout).contains("1 Overview") {
            break;
        }
        assert!(start.elapsed() < Duration::from_secs(120), "no dashboard");
        std::thread::sleep(Duration::from_millis(100));
    }
    let pid = std::fs::read_to_string(&pidfile).unwrap();
    (socket, pid.trim().parse().unwrap())
}

/// The dashboard on a busy export in tmux; (socket, pid).
fn busy_dashboard(dir: &Path) -> (PathBuf, u32) {
    let export = busy_export(dir);
    let ws = dir.join("ws.sqlite");
    in_tmux(
        dir,
        &format!(
            "dashboard '{}' --as-of 2026-12-01 --workspace '{}'",
            export.display(),
            ws.display()
        ),
    )
}

fn kill_server(socket: &Path) {
    let _ = Command::new("tmux")
        .arg("-S")
        .arg(socket)
        .arg("kill-server")
        .output();
}

#[test]
fn a_killed_tmux_session_ends_the_dashboard() {
    if !have_tmux() {
        eprintln!("SKIPPED: tmux is not installed; the terminal-loss test did not run");
        return;
    }
    let dir = tempfile::tempdir().unwrap();
    let (socket, pid) = busy_dashboard(dir.path());
    kill_server(&socket);
    let secs = time_to_exit(pid, 5.0);
    assert!(
        !alive(pid),
        "still running {secs:.1} s after the session was killed"
    );
    assert!(secs < 2.0, "took {secs:.2} s");
}

#[test]
fn sigterm_ends_a_busy_dashboard() {
    if !have_tmux() {
        eprintln!("SKIPPED: tmux is not installed; the SIGTERM test did not run");
        return;
    }
    let dir = tempfile::tempdir().unwrap();
    let (socket, pid) = busy_dashboard(dir.path());
    let ok = Command::new("kill")
        .args(["-TERM", &pid.to_string()])
        .status()
        .unwrap();
    assert!(ok.success());
    let secs = time_to_exit(pid, 5.0);
    kill_server(&socket);
    assert!(!alive(pid) && secs < 2.0, "took {secs:.2} s");
}

#[test]
fn a_closed_pseudo_terminal_ends_the_dashboard() {
    // A pseudo-terminal as standard input, output and error, but not the controlling
    // terminal (the child starts a new session and never acquires it): closing the master side
    // sends no signal; hubwatch must notice the hang-up itself.
    let mut master: libc::c_int = -1;
    let mut slave: libc::c_int = -1;
    let ws = libc::winsize {
        ws_row: 40,
        ws_col: 120,
        ws_xpixel: 0,
        ws_ypixel: 0,
    };
    // SAFETY: openpty writes the two descriptors; the other pointers may be null.
    let rc = unsafe {
        libc::openpty(
            &mut master,
            &mut slave,
            std::ptr::null_mut(),
            std::ptr::null_mut(),
            &ws,
        )
    };
    assert_eq!(rc, 0, "openpty");
    // Neither end may leak into the child (nor into other tests' children): a copy of the
    // master held anywhere keeps the terminal alive.
    for fd in [master, slave] {
        // SAFETY: setting a descriptor flag on our own descriptors.
        unsafe { libc::fcntl(fd, libc::F_SETFD, libc::FD_CLOEXEC) };
    }
    let dir = tempfile::tempdir().unwrap();
    use std::os::unix::io::FromRawFd;
    use std::os::unix::process::CommandExt;
    // SAFETY: `slave` is a fresh descriptor owned here; each Stdio takes its own duplicate.
    let stdio = |fd: libc::c_int| unsafe { std::process::Stdio::from_raw_fd(libc::dup(fd)) };
    let mut cmd = Command::new(env!("CARGO_BIN_EXE_hubwatch"));
    cmd.args(["dashboard", "--as-of", "2026-12-01", "--workspace"])
        .arg(dir.path().join("ws.sqlite"))
        .stdin(stdio(slave))
        .stdout(stdio(slave))
        .stderr(stdio(slave));
    // SAFETY: setsid is async-signal-safe; it detaches the child from any controlling tty.
    unsafe {
        cmd.pre_exec(|| {
            libc::setsid();
            Ok(())
        });
    }
    let mut child = cmd.spawn().unwrap();
    // The command holds the parent's copies of the slave: let them go.
    drop(cmd);
    // SAFETY: the parent's copy of the slave is no longer needed.
    unsafe { libc::close(slave) };
    // Drain the master until the dashboard has drawn its tabs.
    let start = Instant::now();
    let mut seen = Vec::new();
    let mut buf = [0u8; 65536];
    let mut answered = 0;
    // SAFETY: master is a valid descriptor; set it non-blocking to poll the output.
    unsafe { libc::fcntl(master, libc::F_SETFL, libc::O_NONBLOCK) };
    while !String::from_utf8_lossy(&seen).contains("Overview") {
        assert!(
            start.elapsed() < Duration::from_secs(60),
            "no dashboard drawn: {}",
            String::from_utf8_lossy(&seen)
        );
        // SAFETY: reading into a local buffer of the given length.
        let n = unsafe { libc::read(master, buf.as_mut_ptr().cast(), buf.len()) };
        if n > 0 {
            seen.extend_from_slice(&buf[..n as usize]);
            // Answer cursor-position queries as a terminal would (row 1, column 1).
            let asked = String::from_utf8_lossy(&seen).matches("\x1b[6n").count();
            while answered < asked {
                let reply = b"\x1b[1;1R";
                // SAFETY: writing a local buffer to the master descriptor.
                unsafe { libc::write(master, reply.as_ptr().cast(), reply.len()) };
                answered += 1;
            }
        } else {
            std::thread::sleep(Duration::from_millis(50));
        }
    }
    std::thread::sleep(Duration::from_millis(300));
    // SAFETY: closing our only copy of the master hangs the terminal up.
    unsafe { libc::close(master) };
    let pid = child.id();
    let secs = time_to_exit(pid, 5.0);
    let gone = !alive(pid);
    if !gone {
        let _ = child.kill();
    }
    let _ = child.wait();
    assert!(gone, "still running {secs:.1} s after its terminal closed");
    assert!(secs < 2.0, "took {secs:.2} s");
}

#[test]
fn sigterm_during_workspace_writes_leaves_the_workspace_consistent() {
    if !have_tmux() {
        eprintln!("SKIPPED: tmux is not installed; the workspace-under-SIGTERM test did not run");
        return;
    }
    let dir = tempfile::tempdir().unwrap();
    let ws = dir.path().join("ws.sqlite");
    let (socket, pid) = in_tmux(
        dir.path(),
        &format!(
            "dashboard --as-of 2026-12-01 --workspace '{}'",
            ws.display()
        ),
    );
    let keys = |k: &[&str]| {
        Command::new("tmux")
            .arg("-S")
            .arg(&socket)
            .args(["send-keys", "-t", "hw"])
            .args(k)
            .status()
            .unwrap();
    };
    keys(&["5"]);
    std::thread::sleep(Duration::from_millis(300));
    // A burst of follow-up changes (each one transaction), with SIGTERM in the middle of it.
    let burst: Vec<&str> = std::iter::repeat_n(["u", "j"], 150).flatten().collect();
    keys(&burst);
    std::thread::sleep(Duration::from_millis(150));
    Command::new("kill")
        .args(["-TERM", &pid.to_string()])
        .status()
        .unwrap();
    time_to_exit(pid, 5.0);
    kill_server(&socket);
    assert!(!alive(pid));
    let w = hubwatch::workspace::Workspace::open(&ws).unwrap();
    assert_eq!(w.integrity().unwrap(), "ok");
    let states = w.all().unwrap();
    assert!(!states.is_empty(), "no write landed before the signal");
    // Every state equals the last value its audit trail records.
    for s in &states {
        let last = w
            .audit(Some(&s.person_id))
            .unwrap()
            .into_iter()
            .rev()
            .find(|c| c.field == "followup")
            .and_then(|c| c.new_value);
        assert_eq!(s.followup, last, "{}", s.person_id);
    }
}
