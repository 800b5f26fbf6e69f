//! The day's work: what changed since an earlier load (from the workspace's snapshots) and
//! what is due today (windows, overdue, people with many contacts still to call, people
//! unreachable for two days), with follow-up progress over the last 14 days from the audit
//! trail. Every count here is defined in its field's documentation; the reports repeat it.

use std::collections::{BTreeMap, HashMap, HashSet};

use chrono::{DateTime, Duration, Utc};

use crate::analysis::priority::Ranked;
use crate::analysis::stats::NetworkStats;
use crate::dataset::Dataset;
use crate::ingest::dates;
use crate::workspace::snapshot::{Snapshot, SnapshotInfo, BRIDGE, HIGH_DEGREE};
use crate::workspace::{Change, PersonState};

/// The snapshot of a loaded export: `ranked` must hold everyone (the whole list).
pub fn snapshot_of(d: &Dataset, stats: &NetworkStats, ranked: &[Ranked]) -> Snapshot {
    let n = d.people();
    let mut s = Snapshot {
        ids: (0..n as u32).map(|v| d.ids.name(v).to_string()).collect(),
        degree: stats.degrees.clone(),
        rank: vec![0; n],
        score: vec![0.0; n],
        component: stats.components.0.clone(),
        window_end: vec![i32::MIN; n],
        marks: vec![0; n],
        pairs: d
            .edges
            .a
            .iter()
            .copied()
            .zip(d.edges.b.iter().copied())
            .collect(),
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

/// A cluster that formed from several earlier clusters, or an earlier cluster now in parts.
#[derive(Debug, Clone, PartialEq)]
pub struct ClusterChange {
    /// Size of the cluster that merged (now) or split (before).
    pub size: usize,
    /// Sizes of the parts (before, for a merge; now, for a split), largest first.
    pub parts: Vec<usize>,
    /// One person in it (the first by ID), to find it.
    pub example: String,
}

/// What changed between two loads.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Changes {
    /// People in this load and not in the earlier one (by ID).
    pub new_people: Vec<String>,
    /// People in the earlier load and not in this one.
    pub gone: Vec<String>,
    /// High-degree now, not in the earlier load (new people included).
    pub became_high_degree: Vec<String>,
    /// High-degree in the earlier load, present and not high-degree now.
    pub no_longer_high_degree: Vec<String>,
    /// Bridges (articulation points) now that were not in the earlier load (new people included).
    pub new_bridges: Vec<String>,
    /// Clusters (2 people or more) now that hold people of 2 or more earlier clusters of 2 or
    /// more people.
    pub merged: Vec<ClusterChange>,
    /// Earlier clusters (2 or more) whose people still here are now in 2 or more clusters of 2
    /// or more people.
    pub split: Vec<ClusterChange>,
    /// Pairs now that were not pairs before, between people both in the earlier load.
    pub new_exposures: Vec<(String, String)>,
    /// Pairs before that are not pairs now, between people both still here.
    pub lost_exposures: usize,
    /// How many places at the top of the list are compared.
    pub top: usize,
    /// In the top now, not before: (ID, rank before (0: not in that load), rank now).
    pub into_top: Vec<(String, u32, u32)>,
    /// In the top before, not now: (ID, rank before, rank now (0: gone)).
    pub out_of_top: Vec<(String, u32, u32)>,
}

/// Compare an earlier load with this one.
pub fn compare(before: &Snapshot, now: &Snapshot, top: usize) -> Changes {
    let idx_b: hashbrown::HashMap<&str, u32> = before
        .ids
        .iter()
        .enumerate()
        .map(|(i, s)| (s.as_str(), i as u32))
        .collect();
    let idx_n: hashbrown::HashMap<&str, u32> = now
        .ids
        .iter()
        .enumerate()
        .map(|(i, s)| (s.as_str(), i as u32))
        .collect();
    // Now's index -> before's index (u32::MAX: new).
    let was: Vec<u32> = now
        .ids
        .iter()
        .map(|id| idx_b.get(id.as_str()).copied().unwrap_or(u32::MAX))
        .collect();
    let mut c = Changes {
        top,
        ..Changes::default()
    };
    let sorted = |mut v: Vec<String>| {
        v.sort();
        v
    };
    c.new_people = sorted(
        (0..now.ids.len())
            .filter(|&i| was[i] == u32::MAX)
            .map(|i| now.ids[i].clone())
            .collect(),
    );
    c.gone = sorted(
        before
            .ids
            .iter()
            .filter(|id| !idx_n.contains_key(id.as_str()))
            .cloned()
            .collect(),
    );
    let mark = |s: &Snapshot, i: u32, m: u8| s.marks[i as usize] & m != 0;
    for (i, &b) in was.iter().enumerate() {
        let (hub_now, bridge_now) = (
            mark(now, i as u32, HIGH_DEGREE),
            mark(now, i as u32, BRIDGE),
        );
        let (hub_b, bridge_b) = match b {
            u32::MAX => (false, false),
            b => (mark(before, b, HIGH_DEGREE), mark(before, b, BRIDGE)),
        };
        if hub_now && !hub_b {
            c.became_high_degree.push(now.ids[i].clone());
        }
        if !hub_now && hub_b {
            c.no_longer_high_degree.push(now.ids[i].clone());
        }
        if bridge_now && !bridge_b {
            c.new_bridges.push(now.ids[i].clone());
        }
    }
    c.became_high_degree.sort();
    c.no_longer_high_degree.sort();
    c.new_bridges.sort();
    // Pairs in before's indices, both lists sorted, then merged: new pairs (now only) and
    // lost ones (before only, both people still here).
    let key = |x: u32, y: u32| (x.min(y) as u64) << 32 | x.max(y) as u64;
    let sorted_keys = |mut k: Vec<u64>| {
        let mut pos: Vec<u32> = (0..k.len() as u32).collect();
        crate::sort::radix_sort_by_key(&mut k, &mut pos);
        (k, pos)
    };
    let (kb, _) = sorted_keys(before.pairs.iter().map(|&(x, y)| key(x, y)).collect());
    let known: Vec<u32> = (0..now.pairs.len() as u32)
        .filter(|&i| {
            let (x, y) = now.pairs[i as usize];
            was[x as usize] != u32::MAX && was[y as usize] != u32::MAX
        })
        .collect();
    let (kn, at) = sorted_keys(
        known
            .iter()
            .map(|&i| {
                let (x, y) = now.pairs[i as usize];
                key(was[x as usize], was[y as usize])
            })
            .collect(),
    );
    let still = |b: u32| idx_n.contains_key(before.ids[b as usize].as_str());
    let (mut i, mut j) = (0, 0);
    while i < kb.len() || j < kn.len() {
        if j == kn.len() || (i < kb.len() && kb[i] < kn[j]) {
            let (x, y) = ((kb[i] >> 32) as u32, kb[i] as u32);
            c.lost_exposures += usize::from(still(x) && still(y));
            i += 1;
        } else if i == kb.len() || kn[j] < kb[i] {
            let (x, y) = now.pairs[known[at[j] as usize] as usize];
            let (p, q) = (now.ids[x as usize].clone(), now.ids[y as usize].clone());
            c.new_exposures.push(if p < q { (p, q) } else { (q, p) });
            j += 1;
        } else {
            i += 1;
            j += 1;
        }
    }
    c.new_exposures.sort();
    clusters(before, now, &was, &mut c);
    top_moves(before, now, &was, &idx_n, &mut c);
    c
}

fn sizes(s: &Snapshot) -> hashbrown::HashMap<u32, usize> {
    let mut m = hashbrown::HashMap::new();
    for &l in &s.component {
        *m.entry(l).or_insert(0) += 1;
    }
    m
}

/// Merges and splits of clusters of 2 or more people, over the people in both loads.
fn clusters(before: &Snapshot, now: &Snapshot, was: &[u32], c: &mut Changes) {
    let (size_b, size_n) = (sizes(before), sizes(now));
    // (now's cluster, before's cluster) for each person in both, both clusters of 2+.
    let mut links: Vec<(u32, u32, u32)> = Vec::new();
    for (i, &b) in was.iter().enumerate() {
        if b == u32::MAX {
            continue;
        }
        let (cn, cb) = (now.component[i], before.component[b as usize]);
        if size_n[&cn] >= 2 && size_b[&cb] >= 2 {
            links.push((cn, cb, i as u32));
        }
    }
    let mut by_now: BTreeMap<u32, (HashSet<u32>, String)> = BTreeMap::new();
    let mut by_before: BTreeMap<u32, (HashSet<u32>, String)> = BTreeMap::new();
    for &(cn, cb, i) in &links {
        let id = &now.ids[i as usize];
        let e = by_now
            .entry(cn)
            .or_insert_with(|| (HashSet::new(), id.clone()));
        e.0.insert(cb);
        if *id < e.1 {
            e.1 = id.clone();
        }
        let e = by_before
            .entry(cb)
            .or_insert_with(|| (HashSet::new(), id.clone()));
        e.0.insert(cn);
        if *id < e.1 {
            e.1 = id.clone();
        }
    }
    for (cn, (parts, example)) in by_now {
        if parts.len() >= 2 {
            let mut p: Vec<usize> = parts.iter().map(|x| size_b[x]).collect();
            p.sort_unstable_by(|a, b| b.cmp(a));
            c.merged.push(ClusterChange {
                size: size_n[&cn],
                parts: p,
                example,
            });
        }
    }
    for (cb, (parts, example)) in by_before {
        if parts.len() >= 2 {
            let mut p: Vec<usize> = parts.iter().map(|x| size_n[x]).collect();
            p.sort_unstable_by(|a, b| b.cmp(a));
            c.split.push(ClusterChange {
                size: size_b[&cb],
                parts: p,
                example,
            });
        }
    }
    c.merged
        .sort_by(|a, b| b.size.cmp(&a.size).then(a.example.cmp(&b.example)));
    c.split
        .sort_by(|a, b| b.size.cmp(&a.size).then(a.example.cmp(&b.example)));
}

/// Moves into and out of the first `c.top` places.
fn top_moves(
    before: &Snapshot,
    now: &Snapshot,
    was: &[u32],
    idx_n: &hashbrown::HashMap<&str, u32>,
    c: &mut Changes,
) {
    let top = c.top as u32;
    let in_top = |r: u32| r >= 1 && r <= top;
    for (i, &b) in was.iter().enumerate() {
        let rn = now.rank[i];
        let rb = match b {
            u32::MAX => 0,
            b => before.rank[b as usize],
        };
        if in_top(rn) && !in_top(rb) {
            c.into_top.push((now.ids[i].clone(), rb, rn));
        }
    }
    for (b, id) in before.ids.iter().enumerate() {
        let rb = before.rank[b];
        let rn = idx_n.get(id.as_str()).map_or(0, |&i| now.rank[i as usize]);
        if in_top(rb) && !in_top(rn) {
            c.out_of_top.push((id.clone(), rb, rn));
        }
    }
    c.into_top.sort_by_key(|x| x.2);
    c.out_of_top.sort_by_key(|x| x.1);
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

// ---------------------------------------------------------------------------------------------
// Today.
// ---------------------------------------------------------------------------------------------

/// Follow-up progress of one group of people (all, an area, a setting).
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Progress {
    /// People first seen in a load in the last 14 days, at least 24 hours ago.
    pub seen_24: usize,
    /// Of those, first marked reached (or completed) within 24 hours of being first seen.
    pub reached_24: usize,
    /// People first seen in the last 14 days, at least 48 hours ago.
    pub seen_48: usize,
    /// Of those, first marked reached (or completed) within 48 hours.
    pub reached_48: usize,
    /// Marked reached in the last 14 days (changes to "reached" in the audit).
    pub reached: usize,
    /// Marked completed in the last 14 days.
    pub completed: usize,
}

/// One day of the last 14.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct DayCount {
    /// The day (UTC).
    pub day: i32,
    /// People first seen in a load that day.
    pub first_seen: usize,
    /// Changes of follow-up to "reached" that day.
    pub reached: usize,
    /// Changes of follow-up to "completed" that day.
    pub completed: usize,
}

/// What is due today and how follow-up is going.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Today {
    /// The as-of date (windows are counted against it).
    pub as_of: i32,
    /// The time of the counts based on times (UTC).
    pub now: String,
    /// Monitoring ends on the as-of day; follow-up not completed. Nodes, by rank.
    pub ending_today: Vec<u32>,
    /// Ends the day after.
    pub ending_tomorrow: Vec<u32>,
    /// Ends 2 or 3 days after.
    pub ending_in_3_days: Vec<u32>,
    /// Window over, follow-up not completed.
    pub overdue: Vec<u32>,
    /// High-degree people whose follow-up is neither reached nor completed (nor unreachable).
    pub hubs_to_call: Vec<u32>,
    /// Follow-up "unreachable" since at least 48 hours (the audit's last change to it):
    /// (node, since).
    pub unreachable_2_days: Vec<(u32, String)>,
    /// The last 14 days, oldest first.
    pub days: Vec<DayCount>,
    /// Everyone.
    pub all: Progress,
    /// By the people table's `area` (people without one under "(none)").
    pub by_area: Vec<(String, Progress)>,
    /// By each setting of a person's exposures (a person in several settings counts in each).
    pub by_setting: Vec<(String, Progress)>,
}

impl Today {
    /// Everyone on today's list, by rank, once, with the reasons in words.
    pub fn list(&self, ranked: &[Ranked]) -> Vec<(usize, Vec<&'static str>)> {
        let mut why: HashMap<u32, Vec<&'static str>> = HashMap::new();
        let groups: [(&[u32], &'static str); 5] = [
            (&self.overdue, "overdue"),
            (&self.ending_today, "window ends today"),
            (&self.ending_tomorrow, "window ends tomorrow"),
            (&self.ending_in_3_days, "window ends in 2-3 days"),
            (&self.hubs_to_call, "many contacts, not reached"),
        ];
        for (nodes, w) in groups {
            for &v in nodes {
                why.entry(v).or_default().push(w);
            }
        }
        for (v, _) in &self.unreachable_2_days {
            why.entry(*v)
                .or_default()
                .push("unreachable 2 days or more");
        }
        ranked
            .iter()
            .enumerate()
            .filter_map(|(i, r)| why.remove(&r.node).map(|w| (i, w)))
            .collect()
    }
}

/// What today's counts read of one entry of the list (a light copy, so that a worker can
/// count without the list).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Due {
    /// Node.
    pub node: u32,
    /// Days from the as-of date to the window end.
    pub days_left: Option<i32>,
    /// Window over, follow-up not completed.
    pub overdue: bool,
    /// Above the hub threshold.
    pub high_degree: bool,
}

/// The list as [`Due`] entries, in list order.
pub fn dues(ranked: &[Ranked]) -> Vec<Due> {
    ranked
        .iter()
        .map(|r| Due {
            node: r.node,
            days_left: r.days_left,
            overdue: r.overdue,
            high_degree: r.high_degree,
        })
        .collect()
}

/// What a follow-up state means here (workspace first, then the export's column).
/// `column` is the people table's `followup_status` column, if any. No allocation: the
/// states compare without case.
fn state_of<'a>(
    d: &'a Dataset,
    states: &'a hashbrown::HashMap<&str, &PersonState>,
    column: Option<usize>,
    v: u32,
) -> Option<&'a str> {
    let ws = match states.is_empty() {
        true => None,
        false => states
            .get(d.ids.name(v))
            .and_then(|s| s.followup.as_deref()),
    };
    ws.or_else(|| {
        column
            .and_then(|c| d.attrs.values[c].get(v as usize))
            .and_then(|x| x.as_deref())
            .map(str::trim)
    })
}

fn is(state: Option<&str>, words: &[&str]) -> bool {
    state.is_some_and(|s| words.iter().any(|w| s.eq_ignore_ascii_case(w)))
}

fn time(s: &str) -> Option<DateTime<Utc>> {
    DateTime::parse_from_rfc3339(s)
        .ok()
        .map(|t| t.with_timezone(&Utc))
}

/// The day's work. `ranked` is the whole list; `audit` every change (oldest first);
/// `first_seen` the first-seen times by ID; `now` the time the time-based counts use.
pub fn today(
    d: &Dataset,
    ranked: &[Due],
    states: &[PersonState],
    audit: &[Change],
    first_seen: &HashMap<String, String>,
    now: DateTime<Utc>,
) -> Today {
    let by_id: hashbrown::HashMap<&str, &PersonState> =
        states.iter().map(|s| (s.person_id.as_str(), s)).collect();
    let column = d.attrs.column("followup_status");
    let mut t = Today {
        as_of: d.as_of,
        now: now.format("%Y-%m-%dT%H:%M:%SZ").to_string(),
        ..Today::default()
    };
    for r in ranked {
        if r.overdue {
            t.overdue.push(r.node);
        }
        let due = matches!(r.days_left, Some(0..=3));
        if !due && !r.high_degree {
            continue;
        }
        let st = state_of(d, &by_id, column, r.node);
        if due && !is(st, &["completed", "complete"]) {
            match r.days_left {
                Some(0) => t.ending_today.push(r.node),
                Some(1) => t.ending_tomorrow.push(r.node),
                _ => t.ending_in_3_days.push(r.node),
            }
        }
        if r.high_degree && !is(st, &["reached", "completed", "complete", "unreachable"]) {
            t.hubs_to_call.push(r.node);
        }
    }
    // Unreachable since: the last change of follow-up to "unreachable" in the audit.
    let mut since: HashMap<&str, &str> = HashMap::new();
    // First time marked reached or completed.
    let mut first_reached: HashMap<&str, DateTime<Utc>> = HashMap::new();
    let start_day = dates::to_days(now.date_naive()) - 13;
    let mut reached_day: Vec<(&str, i32, &str)> = Vec::new();
    for c in audit.iter().filter(|c| c.field == "followup") {
        let new = c.new_value.as_deref().unwrap_or("");
        if new == "unreachable" {
            since.insert(c.person_id.as_str(), c.at.as_str());
        }
        if let Some(at) = time(&c.at) {
            if matches!(new, "reached" | "completed") {
                first_reached.entry(c.person_id.as_str()).or_insert(at);
            }
            let day = dates::to_days(at.date_naive());
            if day >= start_day && matches!(new, "reached" | "completed") {
                reached_day.push((
                    c.person_id.as_str(),
                    day,
                    if new == "reached" { "r" } else { "c" },
                ));
            }
        }
    }
    // Unreachable in the workspace since at least 48 hours, in list order.
    let mut pos: Vec<u32> = Vec::new();
    let mut un: Vec<(u32, String)> = states
        .iter()
        .filter(|s| s.followup.as_deref() == Some("unreachable"))
        .filter_map(|s| {
            let at = since.get(s.person_id.as_str())?;
            let long = time(at).is_some_and(|x| now - x >= Duration::hours(48));
            Some((d.ids.get(&s.person_id)?, at.to_string())).filter(|_| long)
        })
        .collect();
    if !un.is_empty() {
        pos = vec![u32::MAX; d.people()];
        for (i, r) in ranked.iter().enumerate() {
            pos[r.node as usize] = i as u32;
        }
    }
    un.sort_by_key(|(v, _)| pos[*v as usize]);
    t.unreachable_2_days = un;
    // Per day, and progress per group.
    t.days = (0..14)
        .map(|i| DayCount {
            day: start_day + i,
            ..DayCount::default()
        })
        .collect();
    let area = d.attrs.column("area");
    let group_area = |v: u32| -> &str {
        area.and_then(|c| d.attrs.values[c].get(v as usize).and_then(|x| x.as_deref()))
            .map_or("(none)", |x| x.trim())
    };
    // Each person's settings as a bit mask, in one pass over the pairs (codes past 64 are
    // looked up person by person).
    let mut mask = vec![0u64; d.people()];
    let many = d.settings.len() > 64;
    if !many {
        for e in 0..d.edges.len() {
            let m = d
                .edges
                .settings(e)
                .iter()
                .fold(0u64, |m, &c| m | 1 << (c - 1));
            if m != 0 {
                mask[d.edges.a[e] as usize] |= m;
                mask[d.edges.b[e] as usize] |= m;
            }
        }
    }
    let mut codes: Vec<u16> = Vec::new();
    let mut by_area: hashbrown::HashMap<&str, Progress> = hashbrown::HashMap::new();
    let mut by_code: hashbrown::HashMap<u16, Progress> = hashbrown::HashMap::new();
    let mut add = |v: u32, f: &dyn Fn(&mut Progress)| {
        f(&mut t.all);
        f(by_area.entry(group_area(v)).or_default());
        codes.clear();
        if many {
            for &e in d.graph.edges_slice(v) {
                codes.extend_from_slice(d.edges.settings(e as usize));
            }
            codes.sort_unstable();
            codes.dedup();
        } else {
            let mut m = mask[v as usize];
            while m != 0 {
                codes.push(m.trailing_zeros() as u16 + 1);
                m &= m - 1;
            }
        }
        for &c in codes.iter() {
            f(by_code.entry(c).or_default());
        }
    };
    // Loads are few: each first-seen time is parsed once.
    let mut parsed: hashbrown::HashMap<&str, Option<DateTime<Utc>>> = hashbrown::HashMap::new();
    for (id, at) in first_seen {
        let seen = *parsed.entry(at.as_str()).or_insert_with(|| time(at));
        let (Some(v), Some(seen)) = (d.ids.get(id), seen) else {
            continue;
        };
        let day = dates::to_days(seen.date_naive());
        if day < start_day || seen > now {
            continue;
        }
        let reached = first_reached.get(id.as_str()).copied();
        let within = |h: i64| reached.is_some_and(|r| r - seen <= Duration::hours(h));
        let age = now - seen;
        let (w24, w48) = (within(24), within(48));
        add(v, &|p: &mut Progress| {
            if age >= Duration::hours(24) {
                p.seen_24 += 1;
                p.reached_24 += usize::from(w24);
            }
            if age >= Duration::hours(48) {
                p.seen_48 += 1;
                p.reached_48 += usize::from(w48);
            }
        });
        t.days[(day - start_day) as usize].first_seen += 1;
    }
    for (id, day, what) in reached_day {
        if let Some(dc) = t.days.get_mut((day - start_day) as usize) {
            match what {
                "r" => dc.reached += 1,
                _ => dc.completed += 1,
            }
        }
        if let Some(v) = d.ids.get(id) {
            add(v, &|p: &mut Progress| match what {
                "r" => p.reached += 1,
                _ => p.completed += 1,
            });
        }
    }
    let mut areas: Vec<(String, Progress)> = by_area
        .into_iter()
        .map(|(k, p)| (k.to_string(), p))
        .collect();
    areas.sort_by(|a, b| a.0.cmp(&b.0));
    let mut settings: Vec<(String, Progress)> = by_code
        .into_iter()
        .map(|(c, p)| (d.settings[c as usize - 1].clone(), p))
        .collect();
    settings.sort_by(|a, b| a.0.cmp(&b.0));
    t.by_area = areas;
    t.by_setting = settings;
    t
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
    /// This load's snapshot.
    pub snap: Snapshot,
    /// The list, lightly.
    pub dues: Vec<Due>,
}

impl DayInput {
    /// Take it from the statistics and the whole list.
    pub fn of(d: &Dataset, stats: &NetworkStats, ranked: &[Ranked]) -> DayInput {
        DayInput {
            snap: snapshot_of(d, stats, ranked),
            dues: dues(ranked),
        }
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
    let (body, changes) = std::thread::scope(|sc| -> crate::error::Result<_> {
        let body = sc.spawn(|| record.then(|| snap.encode()));
        let changes = match (&ws, &earlier) {
            (Some(w), Some(e)) => {
                let before = w.snapshot(e.id)?;
                lap("earlier snapshot read");
                Some(compare(&before, &snap, req.top))
            }
            _ => None,
        };
        let body = body.join().unwrap_or_else(|p| std::panic::resume_unwind(p));
        Ok((body, changes))
    })?;
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
    let since = (crate::workspace::now_utc() - Duration::days(15))
        .format("%Y-%m-%dT%H:%M:%S%.3fZ")
        .to_string();
    let (states, audit, first_seen) = match &ws {
        Some(w) => (w.all()?, w.audit(None)?, w.first_seen(&since)?),
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
    })
}
