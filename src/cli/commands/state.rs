//! The workspace commands: `followup`, `flag`, `note` (one change each, audited) and
//! `workspace` (every person's state, people no longer in the export, the audit's size).

use std::path::Path;

use crate::cli::{emit, to_json, LoadArgs};
use crate::error::{Error, Result};
use crate::workspace::{backup, Workspace, FOLLOWUP_STATES};

/// Load the export, check the person is in it, and open the workspace.
fn open_for_person(
    load: &LoadArgs,
    workspace: Option<&Path>,
    person: &str,
) -> Result<(Workspace, String)> {
    let d = load.load()?;
    let node = d
        .ids
        .get(person.trim())
        .ok_or_else(|| Error::Usage(format!("no person \"{}\" in this export", person.trim())))?;
    let ws = Workspace::open(&load.workspace(workspace))?;
    Ok((ws, d.ids.name(node).to_string()))
}

/// `hubwatch followup`.
pub fn followup(load: &LoadArgs, workspace: Option<&Path>, person: &str, set: &str) -> Result<()> {
    let (mut ws, person) = open_for_person(load, workspace, person)?;
    let id = ws.set_followup(&person, set)?;
    emit(&format!(
        "change {id}: {person} follow-up set to \"{}\" in {}\n",
        set.trim().to_lowercase(),
        ws.path.display()
    ))
}

/// `hubwatch flag`.
pub fn flag(
    load: &LoadArgs,
    workspace: Option<&Path>,
    person: &str,
    add: Option<String>,
    remove: Option<String>,
) -> Result<()> {
    let (mut ws, person) = open_for_person(load, workspace, person)?;
    let (id, what) = match (add, remove) {
        (Some(f), _) => (ws.add_flag(&person, &f)?, format!("flag \"{f}\" added")),
        (None, Some(f)) => (
            ws.remove_flag(&person, &f)?,
            format!("flag \"{f}\" removed"),
        ),
        (None, None) => return Err(Error::Usage("give --add FLAG or --remove FLAG".into())),
    };
    emit(&format!(
        "change {id}: {person} {what} in {}\n",
        ws.path.display()
    ))
}

/// `hubwatch note`.
pub fn note(
    load: &LoadArgs,
    workspace: Option<&Path>,
    person: &str,
    text: Option<&str>,
) -> Result<()> {
    let (mut ws, person) = open_for_person(load, workspace, person)?;
    let id = ws.set_note(&person, text)?;
    emit(&format!(
        "change {id}: {person} note {} in {}\n",
        if text.is_some() { "set" } else { "cleared" },
        ws.path.display()
    ))
}

/// `hubwatch workspace`.
pub fn show(load: &LoadArgs, workspace: Option<&Path>, as_json: bool) -> Result<()> {
    let d = load.load()?;
    let path = load.workspace(workspace);
    let ws = Workspace::open(&path)?;
    let states = ws.all()?;
    let vanished = ws.vanished(&d.ids)?;
    let audit = ws.audit(None)?;
    if as_json {
        return emit(&to_json(
            &serde_json::json!({"workspace": path, "people": states, "vanished": vanished, "changes": audit.len()}),
        )?);
    }
    let mut s = format!(
        "workspace {} ({} people with a state, {} changes audited)\n",
        path.display(),
        states.len(),
        audit.len()
    );
    for st in &states {
        s.push_str(&format!(
            "  {:<14} {:<12} flags: {:<24} note: {}\n",
            st.person_id,
            st.followup.as_deref().unwrap_or("-"),
            st.flags.join(", "),
            st.note.as_deref().unwrap_or("")
        ));
    }
    if !vanished.is_empty() {
        s.push_str(&format!(
            "no longer in this export (kept, not deleted): {}\n",
            vanished.join(", ")
        ));
    }
    emit(&s)
}

/// `hubwatch workspace --check`: SQLite's integrity check and the backups; a damaged workspace
/// is an error (exit status 4) that names the backup to restore.
pub fn check(path: &Path, as_json: bool) -> Result<()> {
    if !path.exists() {
        return Err(Error::NotFound {
            path: path.to_path_buf(),
        });
    }
    let ws = Workspace::open(path)?;
    let verdict = ws.integrity()?;
    let backups = backup::list(path);
    if verdict != "ok" {
        return Err(Error::format(path, backup::damaged_message(path, &verdict)));
    }
    let changes = ws.audit(None)?.len();
    if as_json {
        return emit(&to_json(&serde_json::json!({
            "workspace": path,
            "integrity": verdict,
            "changes": changes,
            "backups": backups,
            "backup_problem": ws.backup_problem,
        }))?);
    }
    let mut s = format!(
        "workspace {}: integrity ok, {changes} changes audited\nbackups in {} (newest first, {} kept):\n",
        path.display(),
        backup::folder(path).display(),
        backup::KEEP
    );
    for b in &backups {
        s.push_str(&format!("  {}\n", b.display()));
    }
    if let Some(p) = &ws.backup_problem {
        s.push_str(&format!("today's backup could not be made: {p}\n"));
    }
    emit(&s)
}

/// `hubwatch workspace --restore`: a backup in place of the workspace; nothing is deleted.
pub fn restore(path: &Path, from: Option<&Path>) -> Result<()> {
    let (used, aside) = backup::restore(path, from)?;
    let ws = Workspace::open(path)?;
    let changes = ws.audit(None)?.len();
    emit(&format!(
        "restored {} from {} ({changes} changes audited in it){}\n",
        path.display(),
        used.display(),
        match aside {
            Some(a) => format!("; the previous file is kept as {}", a.display()),
            None => String::new(),
        }
    ))
}

/// Write changes in a loop, printing each after it is committed (for the crash test).
pub fn stress(workspace: &Path, count: usize) -> Result<()> {
    let mut ws = Workspace::open(workspace)?;
    for i in 0..count {
        let person = format!("S{:04}", i % 97);
        let state = FOLLOWUP_STATES[i % FOLLOWUP_STATES.len()];
        let id = ws.set_followup(&person, state)?;
        emit(&format!("committed {id} {person} {state}\n"))?;
    }
    Ok(())
}
