//! Follow-up state that lasts: manual flags, follow-up status and a note per person, in an
//! embedded SQLite file (WAL journal, full sync, one transaction per change), with an
//! append-only audit table. Keyed by person ID, so loading a newer export of the same outbreak
//! keeps every flag; people who vanished from the export are listed, never deleted.
//!
//! The file is created readable by its owner only (0600); SQLite gives its journal files the
//! same permissions.

use std::path::{Path, PathBuf};

use rusqlite::{params, Connection, OptionalExtension, TransactionBehavior};
use serde::Serialize;

use crate::error::{Error, Result};
use crate::ids::IdMap;

pub mod backup;
pub mod snapshot;

/// File name used beside the export when no `--workspace` is given.
pub const DEFAULT_NAME: &str = "hubwatch-workspace.sqlite";

/// Follow-up states a person can be in.
pub const FOLLOWUP_STATES: [&str; 4] = ["to call", "reached", "unreachable", "completed"];

/// An open workspace.
pub struct Workspace {
    conn: Connection,
    /// Where it lives.
    pub path: PathBuf,
    /// Why today's backup could not be made, if it could not (the work goes on).
    pub backup_problem: Option<String>,
}

/// The lasting state of one person.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct PersonState {
    /// Person ID as in the export.
    pub person_id: String,
    /// Follow-up state, if set.
    pub followup: Option<String>,
    /// Manual flags, sorted.
    pub flags: Vec<String>,
    /// Free-text note.
    pub note: Option<String>,
    /// Who changed it last.
    pub updated_by: Option<String>,
    /// When (UTC, RFC 3339).
    pub updated_at: Option<String>,
}

/// One audited change.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct Change {
    /// Change number (increasing).
    pub id: i64,
    /// Person ID.
    pub person_id: String,
    /// "followup", "flags" or "note".
    pub field: String,
    /// Value before.
    pub old_value: Option<String>,
    /// Value after.
    pub new_value: Option<String>,
    /// When (UTC, RFC 3339).
    pub at: String,
    /// Who (from the environment: USER or USERNAME).
    pub user: String,
}

const SCHEMA: &str = "
CREATE TABLE IF NOT EXISTS person_state (
    person_id  TEXT PRIMARY KEY,
    followup   TEXT,
    flags      TEXT NOT NULL DEFAULT '',
    note       TEXT,
    updated_by TEXT,
    updated_at TEXT
);
CREATE TABLE IF NOT EXISTS audit (
    id        INTEGER PRIMARY KEY AUTOINCREMENT,
    person_id TEXT NOT NULL,
    field     TEXT NOT NULL,
    old_value TEXT,
    new_value TEXT,
    at        TEXT NOT NULL,
    user      TEXT NOT NULL
);
CREATE TRIGGER IF NOT EXISTS audit_no_update BEFORE UPDATE ON audit
BEGIN SELECT RAISE(ABORT, 'the audit table is append-only'); END;
CREATE TRIGGER IF NOT EXISTS audit_no_delete BEFORE DELETE ON audit
BEGIN SELECT RAISE(ABORT, 'the audit table is append-only'); END;
";

fn db_err(path: &Path) -> impl Fn(rusqlite::Error) -> Error + '_ {
    move |e| damage_or(path, e)
}

/// A workspace error: a damaged file says which backup to restore and how.
fn damage_or(path: &Path, e: rusqlite::Error) -> Error {
    if backup::is_damage(&e) {
        Error::format(path, backup::damaged_message(path, &e.to_string()))
    } else {
        Error::format(path, format!("workspace: {e}"))
    }
}

/// The user name recorded in the audit.
pub fn current_user() -> String {
    std::env::var("USER")
        .or_else(|_| std::env::var("USERNAME"))
        .unwrap_or_else(|_| "unknown".into())
}

/// The time written with each change and snapshot (UTC, RFC 3339 with milliseconds).
/// `HUBWATCH_NOW` (an RFC 3339 time) stands in for the clock: scripted runs and tests replay
/// days of work with it.
pub fn now() -> String {
    now_utc().format("%Y-%m-%dT%H:%M:%S%.3fZ").to_string()
}

/// The clock, or `HUBWATCH_NOW` when set to an RFC 3339 time.
pub fn now_utc() -> chrono::DateTime<chrono::Utc> {
    std::env::var("HUBWATCH_NOW")
        .ok()
        .and_then(|v| chrono::DateTime::parse_from_rfc3339(v.trim()).ok())
        .map(|t| t.with_timezone(&chrono::Utc))
        .unwrap_or_else(chrono::Utc::now)
}

impl Workspace {
    /// The default place: beside the export (inside it when it is a folder), or the current
    /// folder for the built-in sample.
    pub fn default_path(first_input: Option<&Path>) -> PathBuf {
        match first_input {
            Some(p) if p.is_dir() => p.join(DEFAULT_NAME),
            Some(p) => p
                .parent()
                .filter(|d| !d.as_os_str().is_empty())
                .unwrap_or(Path::new("."))
                .join(DEFAULT_NAME),
            None => PathBuf::from(DEFAULT_NAME),
        }
    }

    /// Open (creating it private if needed) and make sure the tables exist.
    pub fn open(path: &Path) -> Result<Workspace> {
        if !path.exists() {
            let mut o = std::fs::OpenOptions::new();
            o.write(true).create_new(true);
            #[cfg(unix)]
            {
                use std::os::unix::fs::OpenOptionsExt;
                o.mode(0o600);
            }
            o.open(path).map_err(|e| Error::write(path, e))?;
        }
        let conn = Connection::open(path).map_err(db_err(path))?;
        let init = |c: &Connection| -> rusqlite::Result<()> {
            c.busy_timeout(std::time::Duration::from_secs(10))?;
            c.pragma_update(None, "journal_mode", "WAL")?;
            c.pragma_update(None, "synchronous", "FULL")?;
            c.execute_batch(SCHEMA)?;
            c.execute_batch(snapshot::SCHEMA)
        };
        init(&conn).map_err(|e| damage_or(path, e))?;
        let backup_problem = Self::daily_backup(&conn, path)?;
        Ok(Workspace {
            conn,
            path: path.to_path_buf(),
            backup_problem,
        })
    }

    /// Today's backup, once a day, of a workspace found sound by SQLite's quick check (a
    /// damaged one is refused with the way back instead of being copied over a good backup).
    fn daily_backup(conn: &Connection, path: &Path) -> Result<Option<String>> {
        if backup::made_today(path) {
            return Ok(None);
        }
        let check: String = conn
            .query_row("PRAGMA quick_check", [], |r| r.get(0))
            .map_err(|e| damage_or(path, e))?;
        if check != "ok" {
            return Err(Error::format(path, backup::damaged_message(path, &check)));
        }
        Ok(backup::daily(conn, path).err().map(|e| e.to_string()))
    }

    /// The state of one person, if any was ever set.
    pub fn get(&self, person: &str) -> Result<Option<PersonState>> {
        self.conn
            .query_row(
                "SELECT person_id, followup, flags, note, updated_by, updated_at FROM person_state WHERE person_id = ?1",
                params![person],
                row_state,
            )
            .optional()
            .map_err(db_err(&self.path))
    }

    /// Every person with a state, by ID.
    pub fn all(&self) -> Result<Vec<PersonState>> {
        let mut st = self
            .conn
            .prepare("SELECT person_id, followup, flags, note, updated_by, updated_at FROM person_state ORDER BY person_id")
            .map_err(db_err(&self.path))?;
        let rows = st.query_map([], row_state).map_err(db_err(&self.path))?;
        rows.collect::<rusqlite::Result<Vec<_>>>()
            .map_err(db_err(&self.path))
    }

    /// Every change, oldest first (optionally of one person).
    pub fn audit(&self, person: Option<&str>) -> Result<Vec<Change>> {
        let sql = "SELECT id, person_id, field, old_value, new_value, at, user FROM audit WHERE ?1 IS NULL OR person_id = ?1 ORDER BY id";
        let mut st = self.conn.prepare(sql).map_err(db_err(&self.path))?;
        let rows = st
            .query_map(params![person], |r| {
                Ok(Change {
                    id: r.get(0)?,
                    person_id: r.get(1)?,
                    field: r.get(2)?,
                    old_value: r.get(3)?,
                    new_value: r.get(4)?,
                    at: r.get(5)?,
                    user: r.get(6)?,
                })
            })
            .map_err(db_err(&self.path))?;
        rows.collect::<rusqlite::Result<Vec<_>>>()
            .map_err(db_err(&self.path))
    }

    /// IDs with a state that the given export does not contain (listed, never deleted).
    pub fn vanished(&self, ids: &IdMap) -> Result<Vec<String>> {
        Ok(self
            .all()?
            .into_iter()
            .map(|s| s.person_id)
            .filter(|p| ids.get(p).is_none())
            .collect())
    }

    /// Change one field in one transaction with its audit row; returns the change number.
    fn change(
        &mut self,
        person: &str,
        field: &str,
        new: impl FnOnce(&Option<PersonState>) -> Option<String>,
    ) -> Result<i64> {
        let user = current_user();
        let at = now();
        let path = self.path.clone();
        let tx = self
            .conn
            .transaction_with_behavior(TransactionBehavior::Immediate)
            .map_err(db_err(&path))?;
        let old_state = tx
            .query_row(
                "SELECT person_id, followup, flags, note, updated_by, updated_at FROM person_state WHERE person_id = ?1",
                params![person],
                row_state,
            )
            .optional()
            .map_err(db_err(&path))?;
        let old = old_state.as_ref().and_then(|s| match field {
            "followup" => s.followup.clone(),
            "flags" => Some(s.flags.join(",")),
            _ => s.note.clone(),
        });
        let new_value = new(&old_state);
        let column = match field {
            "followup" => "followup",
            "flags" => "flags",
            _ => "note",
        };
        tx.execute(
            "INSERT INTO person_state (person_id) VALUES (?1) ON CONFLICT(person_id) DO NOTHING",
            params![person],
        )
        .map_err(db_err(&path))?;
        let stored = if field == "flags" {
            Some(new_value.clone().unwrap_or_default())
        } else {
            new_value.clone()
        };
        tx.execute(
            &format!("UPDATE person_state SET {column} = ?2, updated_by = ?3, updated_at = ?4 WHERE person_id = ?1"),
            params![person, stored, user, at],
        )
        .map_err(db_err(&path))?;
        tx.execute(
            "INSERT INTO audit (person_id, field, old_value, new_value, at, user) VALUES (?1, ?2, ?3, ?4, ?5, ?6)",
            params![person, field, old, new_value, at, user],
        )
        .map_err(db_err(&path))?;
        let id = tx.last_insert_rowid();
        tx.commit().map_err(db_err(&path))?;
        Ok(id)
    }

    /// Set the follow-up state (one of [`FOLLOWUP_STATES`]).
    pub fn set_followup(&mut self, person: &str, state: &str) -> Result<i64> {
        let state = state.trim().to_lowercase();
        if !FOLLOWUP_STATES.contains(&state.as_str()) {
            return Err(Error::Usage(format!(
                "follow-up state \"{state}\": use one of {}",
                FOLLOWUP_STATES.join(", ")
            )));
        }
        self.change(person, "followup", |_| Some(state))
    }

    /// Add a manual flag (letters, digits, spaces, hyphens; no commas).
    pub fn add_flag(&mut self, person: &str, flag: &str) -> Result<i64> {
        let flag = check_flag(flag)?;
        self.change(person, "flags", |old| {
            let mut f: Vec<String> = old.as_ref().map(|s| s.flags.clone()).unwrap_or_default();
            if !f.contains(&flag) {
                f.push(flag);
            }
            f.sort();
            Some(f.join(","))
        })
    }

    /// Remove a manual flag.
    pub fn remove_flag(&mut self, person: &str, flag: &str) -> Result<i64> {
        let flag = check_flag(flag)?;
        self.change(person, "flags", |old| {
            let f: Vec<String> = old
                .as_ref()
                .map(|s| s.flags.clone())
                .unwrap_or_default()
                .into_iter()
                .filter(|x| *x != flag)
                .collect();
            Some(f.join(","))
        })
    }

    /// Set (or with `None`, clear) the note.
    pub fn set_note(&mut self, person: &str, note: Option<&str>) -> Result<i64> {
        let note = note.map(str::to_string);
        self.change(person, "note", |_| note)
    }

    /// Run one SQL statement directly (tests use it to prove the audit refuses rewrites).
    #[doc(hidden)]
    pub fn raw_execute_for_tests(&self, sql: &str) -> Result<usize> {
        self.conn.execute(sql, []).map_err(db_err(&self.path))
    }

    /// SQLite's own consistency check ("ok" when sound).
    pub fn integrity(&self) -> Result<String> {
        self.conn
            .query_row("PRAGMA integrity_check", [], |r| r.get(0))
            .map_err(db_err(&self.path))
    }
}

fn check_flag(flag: &str) -> Result<String> {
    let f = flag.trim().to_lowercase();
    if f.is_empty() || f.contains(',') || f.len() > 40 {
        return Err(Error::Usage(format!(
            "flag \"{flag}\": use 1 to 40 characters, no commas"
        )));
    }
    Ok(f)
}

fn row_state(r: &rusqlite::Row) -> rusqlite::Result<PersonState> {
    let flags: String = r.get(2)?;
    Ok(PersonState {
        person_id: r.get(0)?,
        followup: r.get(1)?,
        flags: flags
            .split(',')
            .filter(|s| !s.is_empty())
            .map(str::to_string)
            .collect(),
        note: r.get(3)?,
        updated_by: r.get(4)?,
        updated_at: r.get(5)?,
    })
}
