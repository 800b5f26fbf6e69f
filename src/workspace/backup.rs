//! Rolling daily backups of a workspace, its damage check and its restore. The first open of a
//! sound workspace on a day copies it (SQLite's online backup) to `<file>.backups/DATE.sqlite`;
//! the newest [`KEEP`] copies are kept. A damaged workspace is never overwritten or deleted: a
//! restore sets it aside as `<file>.damaged-TIME` (with its journal files) and puts the chosen
//! backup in its place.

use std::path::{Path, PathBuf};

use rusqlite::{Connection, OpenFlags};

use crate::error::{Error, Result};

/// Daily copies kept.
pub const KEEP: usize = 7;

/// The folder of a workspace's backups.
pub fn folder(ws: &Path) -> PathBuf {
    let mut name = ws.file_name().unwrap_or_default().to_os_string();
    name.push(".backups");
    ws.with_file_name(name)
}

/// The backups of a workspace, newest first.
pub fn list(ws: &Path) -> Vec<PathBuf> {
    let mut v: Vec<PathBuf> = std::fs::read_dir(folder(ws))
        .map(|rd| {
            rd.filter_map(|e| e.ok().map(|e| e.path()))
                .filter(|p| p.extension().is_some_and(|e| e == "sqlite"))
                .collect()
        })
        .unwrap_or_default();
    v.sort();
    v.reverse();
    v
}

fn today() -> String {
    chrono::Utc::now().format("%Y-%m-%d").to_string()
}

fn private_dir(dir: &Path) -> std::io::Result<()> {
    let mut b = std::fs::DirBuilder::new();
    b.recursive(true);
    #[cfg(unix)]
    {
        use std::os::unix::fs::DirBuilderExt;
        b.mode(0o700);
    }
    b.create(dir)
}

/// Copy an open database to `to` with the online backup (consistent while others write), into
/// a private temporary file renamed into place.
fn copy(conn: &Connection, to: &Path) -> Result<()> {
    let tmp = to.with_extension(format!("tmp{}", std::process::id()));
    let err = |e: rusqlite::Error| Error::format(to, format!("workspace backup: {e}"));
    {
        crate::export::write_private(&tmp, b"")?;
        let mut dst = Connection::open(&tmp).map_err(err)?;
        let b = rusqlite::backup::Backup::new(conn, &mut dst).map_err(err)?;
        b.run_to_completion(256, std::time::Duration::from_millis(0), None)
            .map_err(err)?;
    }
    std::fs::rename(&tmp, to).map_err(|e| Error::write(to, e))
}

/// Today's backup file (it may not exist yet).
fn todays(ws: &Path) -> PathBuf {
    folder(ws).join(format!("{}.sqlite", today()))
}

/// True when today's backup has been made.
pub fn made_today(ws: &Path) -> bool {
    todays(ws).exists()
}

/// Make today's backup if there is none yet, and keep the newest [`KEEP`]. Called when a sound
/// workspace is opened; a failure here never stops the work (the reason is returned).
pub fn daily(conn: &Connection, ws: &Path) -> Result<Option<PathBuf>> {
    let dir = folder(ws);
    let target = todays(ws);
    if target.exists() {
        return Ok(None);
    }
    private_dir(&dir).map_err(|e| Error::write(&dir, e))?;
    copy(conn, &target)?;
    for old in list(ws).into_iter().skip(KEEP) {
        let _ = std::fs::remove_file(old);
    }
    Ok(Some(target))
}

/// True when an SQLite error means the file is damaged or not a database.
pub fn is_damage(e: &rusqlite::Error) -> bool {
    matches!(
        e.sqlite_error_code(),
        Some(rusqlite::ErrorCode::DatabaseCorrupt | rusqlite::ErrorCode::NotADatabase)
    )
}

/// The message for a damaged workspace: what happened, which backup to restore, how.
pub fn damaged_message(ws: &Path, what: &str) -> String {
    let backups = list(ws);
    let advice = match backups.first() {
        Some(b) => format!(
            "the newest backup is {} ({} in all); restore it with `hubwatch workspace --restore --workspace {}` \
             (the damaged file is kept beside it, nothing is deleted)",
            b.display(),
            backups.len(),
            ws.display()
        ),
        None => format!(
            "there is no backup in {}; keep the file for a specialist and start a new workspace with --workspace NEWFILE",
            folder(ws).display()
        ),
    };
    format!("the workspace is damaged ({what}); {advice}")
}

/// Put a backup in place of the workspace: the current file (and its journal files) are
/// renamed to `<file>.damaged-TIME`, never deleted. Returns (backup used, where the old file
/// went, if there was one).
pub fn restore(ws: &Path, from: Option<&Path>) -> Result<(PathBuf, Option<PathBuf>)> {
    let source = match from {
        Some(p) => p.to_path_buf(),
        None => list(ws).into_iter().next().ok_or_else(|| {
            Error::Usage(format!(
                "no backup to restore: {} holds none",
                folder(ws).display()
            ))
        })?,
    };
    let src = Connection::open_with_flags(&source, OpenFlags::SQLITE_OPEN_READ_ONLY)
        .map_err(|e| Error::format(&source, format!("backup: {e}")))?;
    let ok: String = src
        .query_row("PRAGMA integrity_check", [], |r| r.get(0))
        .map_err(|e| Error::format(&source, format!("backup: {e}")))?;
    if ok != "ok" {
        return Err(Error::format(
            &source,
            format!("this backup is damaged too ({ok}); name another with --backup"),
        ));
    }
    let stamp = chrono::Utc::now().format("%Y%m%dT%H%M%S").to_string();
    let mut aside = None;
    for suffix in ["", "-wal", "-shm"] {
        let mut name = ws.as_os_str().to_os_string();
        name.push(suffix);
        let p = PathBuf::from(name);
        if p.exists() {
            let mut to = ws.as_os_str().to_os_string();
            to.push(format!(".damaged-{stamp}{suffix}"));
            let to = PathBuf::from(to);
            std::fs::rename(&p, &to).map_err(|e| Error::write(&to, e))?;
            if suffix.is_empty() {
                aside = Some(to);
            }
        }
    }
    copy(&src, ws)?;
    Ok((source, aside))
}
