//! What is due today, and how follow-up went over the last 14 days (from the audit).

use std::collections::HashMap;

use chrono::{DateTime, Duration, Utc};

use crate::analysis::priority::Ranked;
use crate::dataset::Dataset;
use crate::ingest::dates;
use crate::workspace::{Change, PersonState};

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
    /// The first ten people of today's list (see [`Today::list`]), in list order, with why.
    pub first: Vec<(u32, Vec<&'static str>)>,
}

impl Today {
    /// Everyone on today's list, by rank, once, with the reasons in words.
    /// `order` is the list's nodes in list order; the result gives each one's position in it.
    pub fn list(&self, order: impl Iterator<Item = u32>) -> Vec<(usize, Vec<&'static str>)> {
        let mut why: HashMap<u32, Vec<&'static str>> = HashMap::new();
        let groups: [(&[u32], &'static str); 5] = [
            (&self.overdue, "overdue"),
            (&self.ending_today, "window ends today"),
            (&self.ending_tomorrow, "window ends tomorrow"),
            (&self.ending_in_3_days, "window ends in 2-3 days"),
            (&self.hubs_to_call, "many contacts and not reached"),
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
        order
            .enumerate()
            .filter_map(|(i, v)| why.remove(&v).map(|w| (i, w)))
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
        area.and_then(|c| d.attrs.values[c].get(v as usize))
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
    t.first = t
        .list(ranked.iter().map(|r| r.node))
        .into_iter()
        .take(10)
        .map(|(i, w)| (ranked[i].node, w))
        .collect();
    t
}
