//! End to end in a real terminal: the dashboard in a detached tmux session (120×40) on a copy of
//! the sample export: wait for the overview, go to the priority list, find an ID, flag it,
//! export the view, quit; then check the exported file, the flag in the workspace and that the
//! terminal is back in normal mode. Skips with a message when tmux is not installed.
//!
//! With HUBWATCH_CAPTURE_DIR set, also saves a text capture of each pane there.

use std::path::{Path, PathBuf};
use std::process::Command;
use std::time::{Duration, Instant};

struct Tmux {
    socket: PathBuf,
}

impl Tmux {
    /// A detached session of `width`×`height` running `sh script`, on a private socket in `dir`.
    fn start(dir: &Path, script: &Path, width: u16, height: u16) -> Tmux {
        let t = Tmux {
            socket: dir.join("tmux.sock"),
        };
        t.run(&[
            "new-session",
            "-d",
            "-s",
            "hw",
            "-x",
            &width.to_string(),
            "-y",
            &height.to_string(),
            &format!("sh '{}'", script.display()),
        ]);
        t
    }

    fn run(&self, args: &[&str]) -> String {
        let out = Command::new("tmux")
            .arg("-S")
            .arg(&self.socket)
            .args(args)
            .output()
            .expect("run tmux");
        String::from_utf8_lossy(&out.stdout).into_owned()
    }

    /// The terminal is back in normal mode: canonical input and echo on (the `stty -a` the
    /// script wrote after hubwatch ended), main screen.
    fn assert_restored(&self, stty: &Path) {
        let modes = std::fs::read_to_string(stty).unwrap();
        let words: Vec<&str> = modes.split_whitespace().collect();
        assert!(
            words.contains(&"icanon") && words.contains(&"echo"),
            "{modes}"
        );
        assert_eq!(
            self.run(&["display", "-p", "-t", "hw", "#{alternate_on}"])
                .trim(),
            "0"
        );
    }

    fn capture(&self) -> String {
        self.run(&["capture-pane", "-p", "-t", "hw"])
    }

    fn keys(&self, keys: &[&str]) {
        let mut args = vec!["send-keys", "-t", "hw"];
        args.extend_from_slice(keys);
        self.run(&args);
    }

    fn literal(&self, text: &str) {
        self.run(&["send-keys", "-t", "hw", "-l", text]);
    }

    fn wait_for(&self, what: &str, secs: u64) -> String {
        let start = Instant::now();
        loop {
            let screen = self.capture();
            if screen.contains(what) {
                return screen;
            }
            if start.elapsed() > Duration::from_secs(secs) {
                panic!("waited {secs} s for {what:?}; screen:\n{screen}");
            }
            std::thread::sleep(Duration::from_millis(100));
        }
    }
}

impl Drop for Tmux {
    fn drop(&mut self) {
        let _ = Command::new("tmux")
            .arg("-S")
            .arg(&self.socket)
            .arg("kill-server")
            .output();
    }
}

fn have_tmux() -> bool {
    Command::new("tmux")
        .arg("-V")
        .output()
        .is_ok_and(|o| o.status.success())
}

fn wait_file(p: &Path, secs: u64) {
    let start = Instant::now();
    while !p.exists() {
        assert!(
            start.elapsed() < Duration::from_secs(secs),
            "{} never appeared",
            p.display()
        );
        std::thread::sleep(Duration::from_millis(100));
    }
    std::thread::sleep(Duration::from_millis(200));
}

#[test]
fn a_day_in_the_dashboard() {
    if !have_tmux() {
        eprintln!("SKIPPED: tmux is not installed; the end-to-end dashboard test did not run");
        return;
    }
    let dir = tempfile::tempdir().unwrap();
    let export = dir.path().join("export");
    std::fs::create_dir(&export).unwrap();
    let sample = Path::new(env!("CARGO_MANIFEST_DIR")).join("sample-contacts");
    for f in ["people.csv", "exposures.csv"] {
        std::fs::copy(sample.join(f), export.join(f)).unwrap();
    }
    let done = dir.path().join("done.txt");
    let stty = dir.path().join("stty.txt");
    let script = dir.path().join("run.sh");
    std::fs::write(
        &script,
        format!(
            "'{}' '{}' --as-of 2026-11-28 2> '{}/stderr.txt'\necho $? > '{}/status.txt'\nstty -a > '{}'\necho done > '{}'\nsleep 120\n",
            env!("CARGO_BIN_EXE_hubwatch"),
            export.display(),
            dir.path().display(),
            dir.path().display(),
            stty.display(),
            done.display()
        ),
    )
    .unwrap();
    let t = Tmux::start(dir.path(), &script, 120, 40);
    t.wait_for("1 Overview", 120);
    t.wait_for("people 262", 30);
    if let Some(out) = std::env::var_os("HUBWATCH_CAPTURE_DIR") {
        let out = PathBuf::from(out);
        std::fs::create_dir_all(&out).unwrap();
        for (key, title) in [
            ("1", "1 Overview"),
            ("2", "2 Degrees"),
            ("3", "3 Neighbours"),
            ("4", "4 Clusters"),
            ("5", "5 Priority"),
            ("7", "7 Outlook"),
        ] {
            t.keys(&[key]);
            std::thread::sleep(Duration::from_millis(300));
            let s = t.wait_for(title, 10);
            std::fs::write(out.join(format!("pane-{key}.txt")), s).unwrap();
        }
        t.keys(&["5", "Enter"]);
        let s = t.wait_for("6 Person", 10);
        std::fs::write(out.join("pane-6.txt"), s).unwrap();
        t.keys(&["Escape"]);
    }
    t.keys(&["5"]);
    t.wait_for("5 Priority", 10);
    t.keys(&["/"]);
    t.wait_for("find ID", 10);
    t.literal("P0000089");
    t.keys(&["Enter"]);
    t.keys(&["f"]);
    t.wait_for("flag (Enter", 10);
    t.keys(&["Enter"]);
    t.wait_for("flag \"call first\" added", 10);
    t.keys(&["E"]);
    t.wait_for("export the list as shown to", 10);
    t.keys(&["Enter"]);
    let screen = t.wait_for("wrote 262 people", 30);
    assert!(screen.contains("call first"), "{screen}");
    t.keys(&["q"]);
    wait_file(&done, 30);
    // Exit status 0, nothing on stderr but the loading lines.
    let status = std::fs::read_to_string(dir.path().join("status.txt")).unwrap();
    assert_eq!(status.trim(), "0");
    // The exported view: every person, the flag, private.
    let exported = export.join("hubwatch-view-2026-11-28.csv");
    let body = std::fs::read_to_string(&exported).unwrap();
    let line = body
        .lines()
        .find(|l| l.contains("P0000089"))
        .expect("ID in export");
    assert!(line.contains("call first"), "{line}");
    #[cfg(unix)]
    {
        use std::os::unix::fs::PermissionsExt;
        let mode = std::fs::metadata(&exported).unwrap().permissions().mode();
        assert_eq!(mode & 0o777, 0o600);
    }
    // The flag is in the workspace beside the export.
    let ws =
        hubwatch::workspace::Workspace::open(&export.join("hubwatch-workspace.sqlite")).unwrap();
    assert_eq!(ws.get("P0000089").unwrap().unwrap().flags, ["call first"]);
    // The terminal is back in normal mode: canonical input and echo on, main screen.
    t.assert_restored(&stty);
}

#[test]
fn a_panic_restores_the_terminal() {
    if !have_tmux() {
        eprintln!("SKIPPED: tmux is not installed; the panic test did not run");
        return;
    }
    let dir = tempfile::tempdir().unwrap();
    let done = dir.path().join("done.txt");
    let stty = dir.path().join("stty.txt");
    let script = dir.path().join("run.sh");
    std::fs::write(
        &script,
        format!(
            "HUBWATCH_TEST_PANIC=1 '{}' dashboard --as-of 2026-11-28 --workspace '{}/ws.sqlite' 2> '{}/stderr.txt'\necho $? > '{}/status.txt'\nstty -a > '{}'\necho done > '{}'\nsleep 120\n",
            env!("CARGO_BIN_EXE_hubwatch"),
            dir.path().display(),
            dir.path().display(),
            dir.path().display(),
            stty.display(),
            done.display()
        ),
    )
    .unwrap();
    let t = Tmux::start(dir.path(), &script, 100, 30);
    wait_file(&done, 120);
    let status = std::fs::read_to_string(dir.path().join("status.txt")).unwrap();
    assert_ne!(status.trim(), "0");
    let err = std::fs::read_to_string(dir.path().join("stderr.txt")).unwrap();
    assert!(err.contains("panic requested"), "{err}");
    t.assert_restored(&stty);
}

#[test]
fn sigterm_restores_the_terminal() {
    if !have_tmux() {
        eprintln!("SKIPPED: tmux is not installed; the signal test did not run");
        return;
    }
    let dir = tempfile::tempdir().unwrap();
    let done = dir.path().join("done.txt");
    let stty = dir.path().join("stty.txt");
    let pid = dir.path().join("pid.txt");
    // The inner shell writes its PID and then becomes hubwatch (exec), in the foreground.
    let inner = dir.path().join("inner.sh");
    std::fs::write(
        &inner,
        format!(
            "echo $$ > '{}'\nexec '{}' dashboard --as-of 2026-11-28 --workspace '{}/ws.sqlite'\n",
            pid.display(),
            env!("CARGO_BIN_EXE_hubwatch"),
            dir.path().display(),
        ),
    )
    .unwrap();
    let outer = dir.path().join("outer.sh");
    std::fs::write(
        &outer,
        format!(
            "sh '{}'\necho $? > '{}/status.txt'\nstty -a > '{}'\necho done > '{}'\nsleep 120\n",
            inner.display(),
            dir.path().display(),
            stty.display(),
            done.display()
        ),
    )
    .unwrap();
    let t = Tmux::start(dir.path(), &outer, 100, 30);
    t.wait_for("1 Overview", 120);
    let pid = std::fs::read_to_string(&pid).unwrap();
    let ok = Command::new("kill")
        .args(["-TERM", pid.trim()])
        .status()
        .unwrap();
    assert!(ok.success());
    wait_file(&done, 30);
    t.assert_restored(&stty);
}

/// Two mornings in the dashboard on one workspace: the sample as of 27 November, then the
/// next day's export (one person and two exposures added, one follow-up set in between). The
/// second morning's Overview says what changed since the first load and what is due.
#[test]
fn two_loads_in_the_dashboard() {
    if !have_tmux() {
        eprintln!("SKIPPED: tmux is not installed; the two-load dashboard test did not run");
        return;
    }
    let dir = tempfile::tempdir().unwrap();
    let export = dir.path().join("export");
    std::fs::create_dir(&export).unwrap();
    let sample = Path::new(env!("CARGO_MANIFEST_DIR")).join("sample-contacts");
    for f in ["people.csv", "exposures.csv"] {
        std::fs::copy(sample.join(f), export.join(f)).unwrap();
    }
    let morning = |day: &str, now: &str, n: usize| {
        let done = dir.path().join(format!("done{n}.txt"));
        let script = dir.path().join(format!("run{n}.sh"));
        std::fs::write(
            &script,
            format!(
                "HUBWATCH_NOW={now} '{}' '{}' --as-of {day} 2> '{}/stderr{n}.txt'\necho $? > '{}/status{n}.txt'\necho done > '{}'\nsleep 120\n",
                env!("CARGO_BIN_EXE_hubwatch"),
                export.display(),
                dir.path().display(),
                dir.path().display(),
                done.display()
            ),
        )
        .unwrap();
        (script, done)
    };
    // First morning.
    let (script, done) = morning("2026-11-27", "2026-11-27T08:00:00Z", 1);
    {
        let t = Tmux::start(dir.path(), &script, 120, 40);
        t.wait_for("people 262", 120);
        // The day's work runs on a lower-priority worker after the outlook and the null model:
        // beside the rest of the test suite on two cores it can wait a while for the CPU.
        t.wait_for("nothing to compare with yet", 240);
        t.keys(&["q"]);
        wait_file(&done, 30);
    }
    // In between: a follow-up set, and the next export with a new contact of P0000089.
    let ws = export.join("hubwatch-workspace.sqlite");
    let out = Command::new(env!("CARGO_BIN_EXE_hubwatch"))
        .args([
            "followup",
            export.to_str().unwrap(),
            "--person",
            "P0000089",
            "--set",
            "reached",
        ])
        .env("HUBWATCH_NOW", "2026-11-27T10:00:00Z")
        .output()
        .unwrap();
    assert!(out.status.success());
    let mut e = std::fs::read_to_string(export.join("exposures.csv")).unwrap();
    e.push_str("P0000089,Q9990001,2026-11-27,household,60,no\nQ9990001,P0000002,2026-11-27,household,30,no\n");
    std::fs::write(export.join("exposures.csv"), e).unwrap();
    // Second morning.
    let (script, done) = morning("2026-11-28", "2026-11-28T08:00:00Z", 2);
    let t = Tmux::start(dir.path(), &script, 120, 40);
    t.wait_for("people 263", 120);
    let screen = t.wait_for("compared with load 1 (as of 2026-11-27)", 240);
    assert!(screen.contains("new people 1 · gone 0"), "{screen}");
    assert!(screen.contains("monitoring ends today"), "{screen}");
    if let Some(out) = std::env::var_os("HUBWATCH_CAPTURE_DIR") {
        std::fs::write(PathBuf::from(out).join("overview-two-loads.txt"), &screen).unwrap();
    }
    // A follow-up set in the session: today's counts are made again on a worker.
    t.keys(&["5"]);
    t.wait_for("5 Priority", 10);
    t.keys(&["u"]);
    t.keys(&["1"]);
    t.wait_for("with this session's follow-up", 30);
    t.keys(&["q"]);
    wait_file(&done, 30);
    let status = std::fs::read_to_string(dir.path().join("status2.txt")).unwrap();
    assert_eq!(status.trim(), "0");
    // Two snapshots in the workspace; the new person first seen on the second morning.
    let w = hubwatch::workspace::Workspace::open(&ws).unwrap();
    assert_eq!(w.snapshots().unwrap().len(), 2);
    let seen = w.first_seen("").unwrap();
    assert_eq!(seen["Q9990001"], "2026-11-28T08:00:00.000Z");
    assert_eq!(seen["P0000089"], "2026-11-27T08:00:00.000Z");
}
