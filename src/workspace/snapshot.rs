//! Snapshots of each load of an export, kept in the workspace: per person their number of
//! contacts, rank, score, cluster, window end and marks, and the contact pairs, with the
//! inputs' checksum and the as-of date. The next load compares with them without reading
//! yesterday's files. The first time each person was seen is kept in its own table (it
//! outlives pruned snapshots).
//!
//! A snapshot is one row: a compact binary body (little-endian arrays, gzip) in a BLOB.

use std::collections::HashMap;
use std::io::{Read, Write};

use rusqlite::{params, OptionalExtension};

use super::{db_err, now, Workspace};
use crate::error::{Error, Result};

/// The tables (created with the workspace's own).
pub(super) const SCHEMA: &str = "
CREATE TABLE IF NOT EXISTS snapshot (
    id      INTEGER PRIMARY KEY AUTOINCREMENT,
    at      TEXT NOT NULL,
    as_of   TEXT NOT NULL,
    inputs  TEXT NOT NULL,
    people  INTEGER NOT NULL,
    pairs   INTEGER NOT NULL,
    body    BLOB NOT NULL
);
CREATE TABLE IF NOT EXISTS first_seen (
    person_id TEXT PRIMARY KEY,
    at        TEXT NOT NULL,
    snapshot  INTEGER NOT NULL
);
";

/// Bit of [`Snapshot::marks`]: above the high-degree threshold.
pub const HIGH_DEGREE: u8 = 1;
/// Bit of [`Snapshot::marks`]: an articulation point.
pub const BRIDGE: u8 = 2;

/// One load, person by person (index i is the same person in every array).
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Snapshot {
    /// Person IDs.
    pub ids: Vec<String>,
    /// Distinct contacts.
    pub degree: Vec<u32>,
    /// Rank on the list, 1-based.
    pub rank: Vec<u32>,
    /// Score.
    pub score: Vec<f64>,
    /// Cluster (connected component) label.
    pub component: Vec<u32>,
    /// Last day of monitoring (day number; i32::MIN: none).
    pub window_end: Vec<i32>,
    /// [`HIGH_DEGREE`] | [`BRIDGE`].
    pub marks: Vec<u8>,
    /// Contact pairs as indices into `ids`.
    pub pairs: Vec<(u32, u32)>,
}

/// A stored snapshot's header.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct SnapshotInfo {
    /// Number (increasing with each load).
    pub id: i64,
    /// When it was recorded (UTC, RFC 3339).
    pub at: String,
    /// The export's as-of date.
    pub as_of: String,
    /// Checksum of the inputs.
    pub inputs: String,
    /// People.
    pub people: i64,
    /// Contact pairs.
    pub pairs: i64,
}

const MAGIC: &[u8; 4] = b"HWS1";

impl Snapshot {
    /// The binary body (gzip of little-endian arrays).
    pub fn encode(&self) -> Vec<u8> {
        let mut b: Vec<u8> = Vec::with_capacity(self.ids.len() * 40 + self.pairs.len() * 8 + 16);
        b.extend_from_slice(MAGIC);
        b.extend_from_slice(&(self.ids.len() as u32).to_le_bytes());
        for id in &self.ids {
            b.extend_from_slice(&(id.len() as u32).to_le_bytes());
            b.extend_from_slice(id.as_bytes());
        }
        for i in 0..self.ids.len() {
            b.extend_from_slice(&self.degree[i].to_le_bytes());
            b.extend_from_slice(&self.rank[i].to_le_bytes());
            b.extend_from_slice(&self.score[i].to_le_bytes());
            b.extend_from_slice(&self.component[i].to_le_bytes());
            b.extend_from_slice(&self.window_end[i].to_le_bytes());
            b.push(self.marks[i]);
        }
        b.extend_from_slice(&(self.pairs.len() as u32).to_le_bytes());
        for &(x, y) in &self.pairs {
            b.extend_from_slice(&x.to_le_bytes());
            b.extend_from_slice(&y.to_le_bytes());
        }
        let mut z = flate2::write::GzEncoder::new(Vec::new(), flate2::Compression::fast());
        // Writing into a Vec cannot fail.
        let _ = z.write_all(&b);
        z.finish().unwrap_or_default()
    }

    /// Read a body written by [`Snapshot::encode`]; None when it is not one.
    pub fn decode(body: &[u8]) -> Option<Snapshot> {
        let mut b = Vec::new();
        flate2::read::GzDecoder::new(body)
            .read_to_end(&mut b)
            .ok()?;
        let mut r = Reader { b: &b, i: 0 };
        if r.take(4)? != MAGIC {
            return None;
        }
        let n = r.u32()? as usize;
        let mut s = Snapshot::default();
        for _ in 0..n {
            let len = r.u32()? as usize;
            s.ids.push(String::from_utf8(r.take(len)?.to_vec()).ok()?);
        }
        for _ in 0..n {
            s.degree.push(r.u32()?);
            s.rank.push(r.u32()?);
            s.score
                .push(f64::from_le_bytes(r.take(8)?.try_into().ok()?));
            s.component.push(r.u32()?);
            s.window_end.push(r.u32()? as i32);
            s.marks.push(r.take(1)?[0]);
        }
        let m = r.u32()? as usize;
        for _ in 0..m {
            s.pairs.push((r.u32()?, r.u32()?));
        }
        (r.i == b.len()).then_some(s)
    }
}

struct Reader<'a> {
    b: &'a [u8],
    i: usize,
}

impl Reader<'_> {
    fn take(&mut self, n: usize) -> Option<&[u8]> {
        let s = self.b.get(self.i..self.i.checked_add(n)?)?;
        self.i += n;
        Some(s)
    }

    fn u32(&mut self) -> Option<u32> {
        Some(u32::from_le_bytes(self.take(4)?.try_into().ok()?))
    }
}

fn info_row(r: &rusqlite::Row) -> rusqlite::Result<SnapshotInfo> {
    Ok(SnapshotInfo {
        id: r.get(0)?,
        at: r.get(1)?,
        as_of: r.get(2)?,
        inputs: r.get(3)?,
        people: r.get(4)?,
        pairs: r.get(5)?,
    })
}

impl Workspace {
    /// Store a snapshot body (from [`Snapshot::encode`]) as the newest load, give the people
    /// in `first_seen` (IDs not seen in an earlier load; others are left as they are) this
    /// load's time, and keep the newest `keep` snapshots (at least 2). One transaction.
    pub fn record_snapshot<'a>(
        &mut self,
        body: &[u8],
        (as_of, inputs, people, pairs): (&str, &str, usize, usize),
        first_seen: impl Iterator<Item = &'a str>,
        keep: usize,
    ) -> Result<SnapshotInfo> {
        let at = now();
        let path = self.path.clone();
        let tx = self
            .conn
            .transaction_with_behavior(rusqlite::TransactionBehavior::Immediate)
            .map_err(db_err(&path))?;
        tx.execute(
            "INSERT INTO snapshot (at, as_of, inputs, people, pairs, body) VALUES (?1, ?2, ?3, ?4, ?5, ?6)",
            params![at, as_of, inputs, people as i64, pairs as i64, body],
        )
        .map_err(db_err(&path))?;
        let id = tx.last_insert_rowid();
        {
            let mut ins = tx
                .prepare("INSERT OR IGNORE INTO first_seen (person_id, at, snapshot) VALUES (?1, ?2, ?3)")
                .map_err(db_err(&path))?;
            for p in first_seen {
                ins.execute(params![p, at, id]).map_err(db_err(&path))?;
            }
        }
        tx.execute(
            "DELETE FROM snapshot WHERE id NOT IN (SELECT id FROM snapshot ORDER BY id DESC LIMIT ?1)",
            params![keep.max(2) as i64],
        )
        .map_err(db_err(&path))?;
        tx.commit().map_err(db_err(&path))?;
        Ok(SnapshotInfo {
            id,
            at,
            as_of: as_of.to_string(),
            inputs: inputs.to_string(),
            people: people as i64,
            pairs: pairs as i64,
        })
    }

    /// The stored snapshots' headers, oldest first.
    pub fn snapshots(&self) -> Result<Vec<SnapshotInfo>> {
        let mut st = self
            .conn
            .prepare("SELECT id, at, as_of, inputs, people, pairs FROM snapshot ORDER BY id")
            .map_err(db_err(&self.path))?;
        let rows = st.query_map([], info_row).map_err(db_err(&self.path))?;
        rows.collect::<rusqlite::Result<Vec<_>>>()
            .map_err(db_err(&self.path))
    }

    /// One snapshot's contents.
    pub fn snapshot(&self, id: i64) -> Result<Snapshot> {
        let body: Option<Vec<u8>> = self
            .conn
            .query_row(
                "SELECT body FROM snapshot WHERE id = ?1",
                params![id],
                |r| r.get(0),
            )
            .optional()
            .map_err(db_err(&self.path))?;
        let body = body.ok_or_else(|| Error::Usage(format!("no snapshot number {id}")))?;
        Snapshot::decode(&body).ok_or_else(|| {
            Error::format(
                &self.path,
                format!("snapshot {id} cannot be read (damaged); the next load records a new one"),
            )
        })
    }

    /// When each person first seen at or after `since` (UTC, RFC 3339; "" for everyone) was
    /// first seen in a load.
    pub fn first_seen(&self, since: &str) -> Result<HashMap<String, String>> {
        let mut st = self
            .conn
            .prepare("SELECT person_id, at FROM first_seen WHERE at >= ?1")
            .map_err(db_err(&self.path))?;
        let rows = st
            .query_map(params![since], |r| Ok((r.get(0)?, r.get(1)?)))
            .map_err(db_err(&self.path))?;
        rows.collect::<rusqlite::Result<HashMap<_, _>>>()
            .map_err(db_err(&self.path))
    }
}
