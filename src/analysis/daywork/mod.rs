//! The day's work: what changed since an earlier load (from the workspace's snapshots) and
//! what is due today (windows, overdue, people with many contacts still to call, people
//! unreachable for two days), with follow-up progress over the last 14 days from the audit
//! trail. Every count is defined in its field's documentation; the reports repeat it.
//! `changes` compares two snapshots; `today` counts the day's work; this module makes the
//! snapshot of a load and runs the whole, recording the load in the workspace.

mod changes;
mod today;

pub use changes::{compare, Changes, ClusterChange};
pub use today::{dues, today, DayCount, Due, Progress, Today};

use chrono::Duration;

use crate::analysis::priority::Ranked;
use crate::analysis::stats::NetworkStats;
use crate::dataset::Dataset;
use crate::ingest::dates;
use crate::workspace::snapshot::{Snapshot, SnapshotInfo, BRIDGE, HIGH_DEGREE};

/// The IDs' text and the pairs of a snapshot made by [`snapshot_without_names`] (most of its
/// time: a text per person), from the dataset alone.
pub fn add_names_and_pairs(s: &mut Snapshot, d: &Dataset) {
    s.ids = (0..d.people() as u32)
        .map(|v| d.ids.name(v).to_string())
        .collect();
    s.pairs = d
        .edges
        .a
        .iter()
        .copied()
        .zip(d.edges.b.iter().copied())
        .collect();
}

/// The snapshot of a loaded export without the IDs' text and the pairs (see
/// [`add_names_and_pairs`]): `ranked` must hold everyone (the whole list).
pub fn snapshot_without_names(stats: &NetworkStats, ranked: &[Ranked]) -> Snapshot {
    let n = stats.degrees.len();
    let mut s = Snapshot {
        ids: Vec::new(),
        degree: stats.degrees.clone(),
        rank: vec![0; n],
        score: vec![0.0; n],
        component: stats.components.0.clone(),
        window_end: vec![i32::MIN; n],
        marks: vec![0; n],
        pairs: Vec::new(),
    };
    for (i, r) in ranked.iter().enumerate() {
        let v = r.node as usize;
        s.rank[v] = i as u32 + 1;
        s.score[v] = r.score;
        s.window_end[v] = r.window_end.unwrap_or(i32::MIN);
        s.marks[v] = u8::from(r.high_degree) * HIGH_DEGREE;
    }
    for &b in &stats.bridges {
        s.marks[b as usize] |= BRIDGE;
    }
    s
}

/// Which earlier snapshot to compare with.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Since {
    /// The load N loads before the current one (1: the previous).
    Loads(usize),
    /// The newest load recorded on or before this day (UTC).
    Day(i32),
}

/// The earlier snapshot `since` names, among `stored` (oldest first), `current` excluded.
pub fn pick(stored: &[SnapshotInfo], current: i64, since: Since) -> Option<&SnapshotInfo> {
    let earlier: Vec<&SnapshotInfo> = stored.iter().filter(|s| s.id < current).collect();
    match since {
        Since::Loads(n) => earlier.len().checked_sub(n.max(1)).map(|i| earlier[i]),
        Since::Day(day) => earlier.into_iter().rev().find(|s| {
            s.at.get(..10)
                .and_then(|d| dates::parse_iso(d).ok())
                .is_some_and(|d| d <= day)
        }),
    }
}

/// Everything of the day's work for one load.
#[derive(Debug, Clone)]
pub struct DayWork {
    /// This load's snapshot (None when not recorded and the inputs differ from every stored one).
    pub snapshot: Option<SnapshotInfo>,
    /// Whether this run recorded it (false: an identical load was already stored, or
    /// recording was off).
    pub recorded: bool,
    /// The earlier load compared with (None: none recorded before).
    pub earlier: Option<SnapshotInfo>,
    /// What changed since it.
    pub changes: Option<Changes>,
    /// What is due today.
    pub today: Today,
    /// Why there is no comparison although an earlier load is recorded (its snapshot could not
    /// be read).
    pub problem: Option<String>,
}

/// The first-seen times today's counts read: the last 15 days (UTC, RFC 3339).
fn recent() -> String {
    (crate::workspace::now_utc() - Duration::days(15))
        .format("%Y-%m-%dT%H:%M:%S%.3fZ")
        .to_string()
}

/// Today's counts with the workspace as it is now (after follow-up changes made since the
/// load); nothing is recorded.
pub fn today_now(
    d: &Dataset,
    dues: &[Due],
    workspace: &std::path::Path,
) -> crate::error::Result<Today> {
    let now = crate::workspace::now_utc();
    if !workspace.exists() {
        return Ok(today(d, dues, &[], &[], &Default::default(), now));
    }
    let w = crate::workspace::Workspace::open(workspace)?;
    Ok(today(
        d,
        dues,
        &w.all()?,
        &w.audit(None)?,
        &w.first_seen(&recent())?,
        now,
    ))
}

/// What [`day_work`] needs besides the dataset.
pub struct DayRequest<'a> {
    /// The workspace file (created if absent when recording).
    pub workspace: &'a std::path::Path,
    /// Checksum of the inputs (one string).
    pub inputs: String,
    /// Which earlier load to compare with.
    pub since: Since,
    /// Places at the top of the list compared.
    pub top: usize,
    /// Snapshots kept.
    pub keep: usize,
    /// Record this load.
    pub record: bool,
}

/// What the day's work reads of a loaded and ranked export, taken before the work starts
/// (cheap; the rest can run on a worker with the dataset alone).
pub struct DayInput {
    /// This load's snapshot (without the IDs' text and the pairs until
    /// [`DayInput::add_names_and_pairs`]).
    pub snap: Snapshot,
    /// The list, lightly.
    pub dues: Vec<Due>,
}

impl DayInput {
    /// Take it from the statistics and the whole list.
    pub fn of(d: &Dataset, stats: &NetworkStats, ranked: &[Ranked]) -> DayInput {
        let mut input = DayInput::without_names(stats, ranked);
        input.add_names_and_pairs(d);
        input
    }

    /// The same without the IDs' text and the pairs, for a worker to finish with
    /// [`DayInput::add_names_and_pairs`] (the dashboard's first frame does not wait for them).
    pub fn without_names(stats: &NetworkStats, ranked: &[Ranked]) -> DayInput {
        DayInput {
            snap: snapshot_without_names(stats, ranked),
            dues: dues(ranked),
        }
    }

    /// Complete the snapshot from the dataset.
    pub fn add_names_and_pairs(&mut self, d: &Dataset) {
        add_names_and_pairs(&mut self.snap, d);
    }
}

/// Record this load (when asked), compare it with the earlier one, and count today's work.
pub fn day_work(
    d: &Dataset,
    stats: &NetworkStats,
    ranked: &[Ranked],
    req: &DayRequest,
) -> crate::error::Result<DayWork> {
    day_work_from(d, DayInput::of(d, stats, ranked), req)
}

/// The same from a [`DayInput`].
pub fn day_work_from(
    d: &Dataset,
    input: DayInput,
    req: &DayRequest,
) -> crate::error::Result<DayWork> {
    use crate::workspace::Workspace;
    let t0 = std::time::Instant::now();
    let lap = |what: &str| {
        if std::env::var_os("HUBWATCH_STAGES").is_some() {
            eprintln!("day's work: {what} at {:.3} s", t0.elapsed().as_secs_f64());
        }
    };
    let DayInput { snap, dues } = input;
    lap("snapshot made");
    let as_of = dates::iso(d.as_of);
    let mut ws = match (req.workspace.exists(), req.record) {
        (false, false) => None,
        _ => Some(Workspace::open(req.workspace)?),
    };
    let stored = match &ws {
        Some(w) => w.snapshots()?,
        None => Vec::new(),
    };
    // The same load already stored (same inputs, as-of date and people) stands for this one.
    let same = stored
        .last()
        .filter(|l| l.inputs == req.inputs && l.as_of == as_of && l.people == snap.ids.len() as i64)
        .cloned();
    let current = same.as_ref().map_or(i64::MAX, |s| s.id);
    let earlier = pick(&stored, current, req.since).cloned();
    let record = req.record && same.is_none();
    // The body is compressed on another core while the earlier load is read and compared.
    // A damaged earlier snapshot leaves this load without a comparison (said), not without
    // its record and today's counts.
    let mut problem = None;
    let (body, changes) = std::thread::scope(|sc| {
        let body = sc.spawn(|| record.then(|| snap.encode()));
        let changes = match (&ws, &earlier) {
            (Some(w), Some(e)) => match w.snapshot(e.id) {
                Ok(before) => {
                    lap("earlier snapshot read");
                    Some(compare(&before, &snap, req.top))
                }
                Err(err) => {
                    problem = Some(err.to_string());
                    None
                }
            },
            _ => None,
        };
        let body = body.join().unwrap_or_else(|p| std::panic::resume_unwind(p));
        (body, changes)
    });
    lap("compared");
    let info = match (&mut ws, body) {
        (Some(w), Some(body)) => {
            // Only people new since the newest stored load can be missing from first_seen
            // (every recorded load adds its people); without one, everyone is offered.
            let latest_compared = earlier.as_ref().map(|e| e.id) == stored.last().map(|l| l.id);
            let all: Box<dyn Iterator<Item = &str>> = match (&changes, latest_compared) {
                (Some(c), true) => Box::new(c.new_people.iter().map(|s| s.as_str())),
                _ => Box::new(snap.ids.iter().map(|s| s.as_str())),
            };
            let meta = (
                as_of.as_str(),
                req.inputs.as_str(),
                snap.ids.len(),
                snap.pairs.len(),
            );
            Some(w.record_snapshot(&body, meta, all, req.keep)?)
        }
        _ => same,
    };
    let recorded = record && info.is_some();
    lap("snapshot recorded");
    let (states, audit, first_seen) = match &ws {
        Some(w) => (w.all()?, w.audit(None)?, w.first_seen(&recent())?),
        None => Default::default(),
    };
    lap("workspace read");
    let today = today(
        d,
        &dues,
        &states,
        &audit,
        &first_seen,
        crate::workspace::now_utc(),
    );
    lap("today counted");
    Ok(DayWork {
        snapshot: info,
        recorded,
        earlier,
        changes,
        today,
        problem,
    })
}
