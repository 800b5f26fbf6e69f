//! The follow-up workspace: state that survives reopening and a newer export, a complete and
//! append-only audit, private files, crash safety (kill -9 of a writer, in a loop) and a reader
//! that keeps working while another process writes.

use std::io::{BufRead, BufReader};
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

use hubwatch::ids::IdMap;
use hubwatch::workspace::Workspace;

#[test]
fn state_survives_reopen_and_vanished_people_are_listed() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("w.sqlite");
    {
        let mut ws = Workspace::open(&path).unwrap();
        ws.add_flag("P1", "Priority call").unwrap();
        ws.add_flag("P1", "interpreter").unwrap();
        ws.set_followup("P1", "Reached").unwrap();
        ws.set_note("P2", Some("call after 6 pm")).unwrap();
        ws.remove_flag("P1", "interpreter").unwrap();
    }
    let ws = Workspace::open(&path).unwrap();
    let p1 = ws.get("P1").unwrap().unwrap();
    assert_eq!(p1.flags, ["priority call"]);
    assert_eq!(p1.followup.as_deref(), Some("reached"));
    assert_eq!(
        ws.get("P2").unwrap().unwrap().note.as_deref(),
        Some("call after 6 pm")
    );
    // A newer export without P2: P2 is listed as vanished, and its state is still there.
    let mut ids = IdMap::new(true);
    ids.intern("P1");
    ids.intern("P3");
    assert_eq!(ws.vanished(&ids).unwrap(), ["P2"]);
    assert!(ws.get("P2").unwrap().is_some());
    #[cfg(unix)]
    {
        use std::os::unix::fs::PermissionsExt;
        assert_eq!(
            std::fs::metadata(&path).unwrap().permissions().mode() & 0o777,
            0o600
        );
    }
}

#[test]
fn every_change_is_audited_and_the_audit_cannot_be_rewritten() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("w.sqlite");
    let mut ws = Workspace::open(&path).unwrap();
    ws.set_followup("A", "to call").unwrap();
    ws.set_followup("A", "unreachable").unwrap();
    ws.add_flag("A", "x").unwrap();
    ws.set_note("A", Some("n")).unwrap();
    ws.set_note("A", None).unwrap();
    let audit = ws.audit(Some("A")).unwrap();
    let trail: Vec<(&str, Option<&str>, Option<&str>)> = audit
        .iter()
        .map(|c| {
            (
                c.field.as_str(),
                c.old_value.as_deref(),
                c.new_value.as_deref(),
            )
        })
        .collect();
    assert_eq!(
        trail,
        [
            ("followup", None, Some("to call")),
            ("followup", Some("to call"), Some("unreachable")),
            ("flags", Some(""), Some("x")),
            ("note", None, Some("n")),
            ("note", Some("n"), None),
        ]
    );
    assert!(audit.windows(2).all(|w| w[0].id < w[1].id));
    // Bad values are refused with a message, and change nothing.
    assert!(ws
        .set_followup("A", "maybe")
        .unwrap_err()
        .to_string()
        .contains("use one of to call, reached"));
    assert!(ws.add_flag("A", "a,b").is_err());
    assert_eq!(ws.audit(None).unwrap().len(), 5);
    // The audit table refuses updates and deletes (triggers in the schema).
    for sql in ["DELETE FROM audit", "UPDATE audit SET new_value = 'x'"] {
        let e = ws.raw_execute_for_tests(sql).unwrap_err().to_string();
        assert!(e.contains("append-only"), "{sql}: {e}");
    }
    assert_eq!(ws.audit(None).unwrap().len(), 5);
}

#[test]
fn kill_minus_nine_loses_at_most_the_change_in_flight() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("w.sqlite");
    let mut committed: Vec<i64> = Vec::new();
    for round in 0..8u64 {
        let mut child = Command::new(env!("CARGO_BIN_EXE_hubwatch"))
            .args([
                "workspace-stress",
                "--workspace",
                path.to_str().unwrap(),
                "--count",
                "100000",
            ])
            .stdout(Stdio::piped())
            .spawn()
            .unwrap();
        let stdout = child.stdout.take().unwrap();
        let mut lines = BufReader::new(stdout).lines();
        // Let it write for a while (a different number of changes each round), then kill -9.
        let want = 20 + (round as usize * 37) % 150;
        for _ in 0..want {
            match lines.next() {
                Some(Ok(l)) => {
                    committed.push(l.split_whitespace().nth(1).unwrap().parse().unwrap())
                }
                _ => break,
            }
        }
        child.kill().unwrap(); // SIGKILL on unix
        child.wait().unwrap();
        // Reopen: the file is sound and every change reported as committed is there.
        let ws = Workspace::open(&path).unwrap();
        assert_eq!(ws.integrity().unwrap(), "ok", "round {round}");
        let ids: std::collections::HashSet<i64> =
            ws.audit(None).unwrap().iter().map(|c| c.id).collect();
        for id in &committed {
            assert!(
                ids.contains(id),
                "round {round}: committed change {id} lost"
            );
        }
    }
    assert!(committed.len() > 100);
}

#[test]
fn a_reader_works_while_another_process_writes() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("w.sqlite");
    Workspace::open(&path).unwrap();
    let mut child = Command::new(env!("CARGO_BIN_EXE_hubwatch"))
        .args([
            "workspace-stress",
            "--workspace",
            path.to_str().unwrap(),
            "--count",
            "3000",
        ])
        .stdout(Stdio::null())
        .spawn()
        .unwrap();
    let reader = Workspace::open(&path).unwrap();
    let start = Instant::now();
    let mut last = 0usize;
    let mut reads = 0;
    while start.elapsed() < Duration::from_secs(60) {
        let n = reader.audit(None).unwrap().len();
        assert!(n >= last, "the audit never shrinks");
        last = n;
        reads += 1;
        if child.try_wait().unwrap().is_some() {
            break;
        }
    }
    child.wait().unwrap();
    assert!(reads > 1);
    assert_eq!(reader.audit(None).unwrap().len(), 3000);
}
