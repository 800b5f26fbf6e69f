//! `changes` and `today`: what changed since an earlier load and what is due today, as text,
//! JSON and tables, each figure with how it is counted.

use serde_json::{json, Value};

use crate::analysis::daywork::{DayWork, Progress, Today};
use crate::analysis::priority::Ranked;
use crate::dataset::Dataset;
use crate::export::{Cell, ExportTable, Kind};
use crate::ingest::dates::iso;
use crate::workspace::snapshot::SnapshotInfo;

/// How each count of `changes` is made.
pub const CHANGES_COUNTED: [(&str, &str); 9] = [
    ("new_people", "IDs in this load and not in the earlier one"),
    ("gone", "IDs in the earlier load and not in this one"),
    ("became_high_degree", "high-degree now (the hub rule of the priority settings), not in the earlier load; new people included"),
    ("no_longer_high_degree", "high-degree in the earlier load, here and not high-degree now"),
    ("new_bridges", "articulation points now that were not in the earlier load; new people included"),
    ("merged", "clusters of 2 or more now holding people of 2 or more earlier clusters of 2 or more"),
    ("split", "earlier clusters of 2 or more whose people here are now in 2 or more clusters of 2 or more"),
    ("new_exposures", "contact pairs now that were not pairs before, both people in the earlier load"),
    ("top", "entries into and exits from the first N places of the list (same preset)"),
];

/// How each count of `today` is made.
pub const TODAY_COUNTED: [(&str, &str); 8] = [
    ("ending", "monitoring ends on the as-of day (today), the day after (tomorrow) or 2-3 days after; follow-up not completed"),
    ("overdue", "monitoring window over, follow-up not completed"),
    ("hubs_to_call", "high-degree people whose follow-up (workspace, else the export's column) is not reached, completed or unreachable"),
    ("unreachable_2_days", "follow-up unreachable in the workspace, set at least 48 hours before now (the audit's last change to it)"),
    ("days", "per day of the last 14 (UTC): people first seen in a load; changes of follow-up to reached; to completed"),
    ("reached_24h", "of the people first seen in a load in the last 14 days and at least 24 hours ago, those first marked reached or completed within 24 hours of being first seen"),
    ("reached_48h", "the same with 48 hours"),
    ("groups", "the same by the people table's area, and by each setting of a person's exposures (a person in several settings counts in each)"),
];

fn info_json(s: &Option<SnapshotInfo>) -> Value {
    match s {
        None => Value::Null,
        Some(s) => {
            json!({"number": s.id, "recorded_at": s.at, "as_of": s.as_of, "people": s.people, "pairs": s.pairs})
        }
    }
}

fn share(a: usize, b: usize) -> Value {
    if b == 0 {
        Value::Null
    } else {
        json!(a as f64 / b as f64)
    }
}

fn pct(a: usize, b: usize) -> String {
    if b == 0 {
        "-".into()
    } else {
        format!("{:.0} % ({a} of {b})", 100.0 * a as f64 / b as f64)
    }
}

/// The changes as JSON.
pub fn changes_json(w: &DayWork) -> Value {
    let c = w.changes.clone().unwrap_or_default();
    let moves = |v: &[(String, u32, u32)]| -> Vec<Value> {
        v.iter()
            .map(|(id, b, n)| json!({"person_id": id, "rank_before": (*b > 0).then_some(*b), "rank_now": (*n > 0).then_some(*n)}))
            .collect()
    };
    let clusters = |v: &[crate::analysis::daywork::ClusterChange]| -> Vec<Value> {
        v.iter()
            .map(|x| json!({"size": x.size, "parts": x.parts, "example": x.example}))
            .collect()
    };
    json!({
        "this_load": info_json(&w.snapshot),
        "recorded": w.recorded,
        "compared_with": match w.changes { Some(_) => info_json(&w.earlier), None => Value::Null },
        "problem": w.problem,
        "counted": CHANGES_COUNTED.iter().map(|(k, v)| (k.to_string(), json!(v))).collect::<serde_json::Map<_, _>>(),
        "new_people": c.new_people,
        "gone": c.gone,
        "became_high_degree": c.became_high_degree,
        "no_longer_high_degree": c.no_longer_high_degree,
        "new_bridges": c.new_bridges,
        "merged": clusters(&c.merged),
        "split": clusters(&c.split),
        "new_exposures": c.new_exposures.iter().map(|(a, b)| json!([a, b])).collect::<Vec<_>>(),
        "lost_exposures": c.lost_exposures,
        "top": c.top,
        "into_top": moves(&c.into_top),
        "out_of_top": moves(&c.out_of_top),
    })
}

fn names(v: &[String], n: usize) -> String {
    let mut s = v.iter().take(n).cloned().collect::<Vec<_>>().join(", ");
    if v.len() > n {
        s.push_str(&format!(", ... ({} more)", v.len() - n));
    }
    s
}

/// The changes in words.
pub fn changes_text(w: &DayWork) -> String {
    let mut s = String::new();
    match &w.snapshot {
        Some(i) => s.push_str(&format!(
            "This load: snapshot {} ({}, as of {}; {}).\n",
            i.id,
            i.at,
            i.as_of,
            if w.recorded {
                "recorded now"
            } else {
                "the same inputs were already recorded"
            }
        )),
        None => s.push_str("This load: not recorded (--no-record).\n"),
    }
    if let Some(p) = &w.problem {
        s.push_str(&format!("No comparison: {p}\n"));
        return s;
    }
    let (Some(e), Some(c)) = (&w.earlier, &w.changes) else {
        s.push_str("No earlier load is recorded in this workspace to compare with: run again after the next export (the dashboard, `changes` and `today` record each load).\n");
        return s;
    };
    s.push_str(&format!(
        "Compared with snapshot {} ({}, as of {}; {} people, {} pairs).\n\n",
        e.id, e.at, e.as_of, e.people, e.pairs
    ));
    let line = |s: &mut String, what: &str, v: &[String]| {
        s.push_str(&format!("  {:<34} {:>7}", what, v.len()));
        if !v.is_empty() {
            s.push_str(&format!("   {}", names(v, 8)));
        }
        s.push('\n');
    };
    line(&mut s, "new people", &c.new_people);
    line(&mut s, "people gone", &c.gone);
    line(&mut s, "became high-degree", &c.became_high_degree);
    line(&mut s, "no longer high-degree", &c.no_longer_high_degree);
    line(&mut s, "new bridges", &c.new_bridges);
    let pairs: Vec<String> = c
        .new_exposures
        .iter()
        .map(|(a, b)| format!("{a}-{b}"))
        .collect();
    line(&mut s, "new exposures between known people", &pairs);
    s.push_str(&format!(
        "  {:<34} {:>7}\n",
        "pairs no longer in the export", c.lost_exposures
    ));
    for (what, v) in [("clusters merged", &c.merged), ("clusters split", &c.split)] {
        s.push_str(&format!("  {:<34} {:>7}", what, v.len()));
        let shown: Vec<String> = v
            .iter()
            .take(4)
            .map(|x| {
                format!(
                    "{} people ({} parts: {:?}; e.g. {})",
                    x.size,
                    x.parts.len(),
                    x.parts,
                    x.example
                )
            })
            .collect();
        if !shown.is_empty() {
            s.push_str(&format!("   {}", shown.join("; ")));
        }
        s.push('\n');
    }
    let moves = |v: &[(String, u32, u32)]| -> Vec<String> {
        v.iter()
            .map(|(id, b, n)| {
                let r = |x: &u32| {
                    if *x == 0 {
                        "-".to_string()
                    } else {
                        x.to_string()
                    }
                };
                format!("{id} ({} -> {})", r(b), r(n))
            })
            .collect()
    };
    line(
        &mut s,
        &format!("into the top {}", c.top),
        &moves(&c.into_top),
    );
    line(
        &mut s,
        &format!("out of the top {}", c.top),
        &moves(&c.out_of_top),
    );
    s.push_str("\nHow each line is counted:\n");
    for (k, v) in CHANGES_COUNTED {
        s.push_str(&format!("  {k}: {v}\n"));
    }
    s
}

fn progress_json(p: &Progress) -> Value {
    json!({
        "seen_24h": p.seen_24, "reached_24h": p.reached_24, "share_24h": share(p.reached_24, p.seen_24),
        "seen_48h": p.seen_48, "reached_48h": p.reached_48, "share_48h": share(p.reached_48, p.seen_48),
        "reached": p.reached, "completed": p.completed,
    })
}

/// Today as JSON; IDs from `d`.
pub fn today_json(d: &Dataset, t: &Today) -> Value {
    let ids = |v: &[u32]| -> Vec<&str> { v.iter().map(|&x| d.ids.name(x)).collect() };
    json!({
        "as_of": iso(t.as_of),
        "now": t.now,
        "counted": TODAY_COUNTED.iter().map(|(k, v)| (k.to_string(), json!(v))).collect::<serde_json::Map<_, _>>(),
        "ending_today": ids(&t.ending_today),
        "ending_tomorrow": ids(&t.ending_tomorrow),
        "ending_in_2_3_days": ids(&t.ending_in_3_days),
        "overdue": ids(&t.overdue),
        "hubs_to_call": ids(&t.hubs_to_call),
        "unreachable_2_days": t.unreachable_2_days.iter().map(|(v, at)| json!({"person_id": d.ids.name(*v), "since": at})).collect::<Vec<_>>(),
        "first_on_list": t.first.iter().map(|(v, why)| json!({"person_id": d.ids.name(*v), "why": why})).collect::<Vec<_>>(),
        "days": t.days.iter().map(|x| json!({"day": iso(x.day), "first_seen": x.first_seen, "reached": x.reached, "completed": x.completed})).collect::<Vec<_>>(),
        "progress": progress_json(&t.all),
        "by_area": t.by_area.iter().map(|(k, p)| (k.clone(), progress_json(p))).collect::<serde_json::Map<_, _>>(),
        "by_setting": t.by_setting.iter().map(|(k, p)| (k.clone(), progress_json(p))).collect::<serde_json::Map<_, _>>(),
    })
}

/// Today in words.
pub fn today_text(d: &Dataset, t: &Today) -> String {
    let ids = |v: &[u32]| -> String {
        let shown: Vec<String> = v
            .iter()
            .take(8)
            .map(|&x| d.ids.name(x).to_string())
            .collect();
        let more = if v.len() > 8 {
            format!(", ... ({} more)", v.len() - 8)
        } else {
            String::new()
        };
        format!("{}{more}", shown.join(", "))
    };
    let mut s = format!(
        "The day's work, as of {} (times as at {})\n\n",
        iso(t.as_of),
        t.now
    );
    for (what, v) in [
        ("monitoring ends today", &t.ending_today),
        ("monitoring ends tomorrow", &t.ending_tomorrow),
        ("monitoring ends in 2-3 days", &t.ending_in_3_days),
        ("overdue", &t.overdue),
        ("many contacts, not reached yet", &t.hubs_to_call),
    ] {
        s.push_str(&format!("  {what:<32} {:>6}   {}\n", v.len(), ids(v)));
    }
    let un: Vec<u32> = t.unreachable_2_days.iter().map(|x| x.0).collect();
    s.push_str(&format!(
        "  {:<32} {:>6}   {}\n",
        "unreachable for 2 days or more",
        un.len(),
        ids(&un)
    ));
    if !t.first.is_empty() {
        s.push_str(
            "\nFirst on today's list (list order; `export --list today` writes all of it):\n",
        );
        for (i, (v, why)) in t.first.iter().enumerate() {
            s.push_str(&format!(
                "  {:>2}. {:<14} {}\n",
                i + 1,
                d.ids.name(*v),
                why.join("; ")
            ));
        }
    }
    s.push_str("\nFollow-up over the last 14 days (from the workspace's audit trail)\n");
    s.push_str(&format!(
        "  reached within 24 h of first appearing: {}\n  reached within 48 h: {}\n  marked reached: {} · completed: {}\n",
        pct(t.all.reached_24, t.all.seen_24),
        pct(t.all.reached_48, t.all.seen_48),
        t.all.reached,
        t.all.completed
    ));
    s.push_str("\n  day         first seen  reached  completed\n");
    for x in &t.days {
        s.push_str(&format!(
            "  {}  {:>10}  {:>7}  {:>9}\n",
            iso(x.day),
            x.first_seen,
            x.reached,
            x.completed
        ));
    }
    for (title, groups) in [("area", &t.by_area), ("setting", &t.by_setting)] {
        if groups.is_empty() {
            continue;
        }
        s.push_str(&format!(
            "\n  by {title:<20} within 24 h            within 48 h            reached  completed\n"
        ));
        for (k, p) in groups {
            s.push_str(&format!(
                "  {k:<23} {:<22} {:<22} {:>7}  {:>9}\n",
                pct(p.reached_24, p.seen_24),
                pct(p.reached_48, p.seen_48),
                p.reached,
                p.completed
            ));
        }
    }
    s.push_str("\nHow each figure is counted:\n");
    for (k, v) in TODAY_COUNTED {
        s.push_str(&format!("  {k}: {v}\n"));
    }
    s
}

/// The changes as one table (kind, person, detail) for the writer.
pub fn changes_table(w: &DayWork) -> ExportTable {
    let c = w.changes.clone().unwrap_or_default();
    let mut rows: Vec<Vec<Cell>> = Vec::new();
    let mut put = |kind: &str, id: &str, detail: String| {
        rows.push(vec![
            Cell::Text(kind.into()),
            Cell::Text(id.into()),
            Cell::Text(detail),
        ])
    };
    for (kind, v) in [
        ("new person", &c.new_people),
        ("gone", &c.gone),
        ("became high-degree", &c.became_high_degree),
        ("no longer high-degree", &c.no_longer_high_degree),
        ("new bridge", &c.new_bridges),
    ] {
        for id in v {
            put(kind, id, String::new());
        }
    }
    for (a, b) in &c.new_exposures {
        put("new exposure", a, b.clone());
    }
    for x in &c.merged {
        put(
            "clusters merged",
            &x.example,
            format!("{} people from parts {:?}", x.size, x.parts),
        );
    }
    for x in &c.split {
        put(
            "cluster split",
            &x.example,
            format!("{} people into parts {:?}", x.size, x.parts),
        );
    }
    for (id, b, n) in &c.into_top {
        put("into the top", id, format!("rank {b} -> {n}"));
    }
    for (id, b, n) in &c.out_of_top {
        put("out of the top", id, format!("rank {b} -> {n}"));
    }
    ExportTable {
        columns: vec!["change".into(), "person_id".into(), "detail".into()],
        kinds: vec![Kind::Text; 3],
        rows,
    }
}

/// Today's list: the priority list's rows for the people due today, with why, in rank order.
pub fn today_rows(t: &Today, ranked: &[Ranked]) -> (Vec<Ranked>, Vec<String>) {
    t.list(ranked.iter().map(|r| r.node))
        .into_iter()
        .map(|(i, why)| (ranked[i].clone(), why.join("; ")))
        .unzip()
}
