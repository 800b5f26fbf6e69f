//! The day's work over three loads of a changing export: `changes` and `today` against counts
//! made here, independently, from the files and from the follow-up changes the test makes at
//! times it sets (`HUBWATCH_NOW`).
//!
//! The export is `hubwatch synth` (invented), changed between loads: people removed with their
//! exposures, people added with exposures, exposures added between people already there. The
//! network is rebuilt here with the cleaning rules the networkx cross-check uses (IDs trimmed;
//! blank IDs and self-exposures dropped; pairs in either order merged; every person of the
//! people table is a node); high-degree is "more contacts than <k^2>/<k>" (the shipped hub
//! rule); articulation points by removing each person in turn; clusters by union-find.

use std::collections::{BTreeMap, BTreeSet, HashMap};
use std::path::Path;

use serde_json::Value;

type Table = (Vec<String>, Vec<Vec<String>>);
type Load = (BTreeSet<String>, BTreeSet<(String, String)>, Vec<String>);

fn read(path: &Path) -> Table {
    let text = std::fs::read_to_string(path).unwrap();
    let mut lines = text.lines();
    let header: Vec<String> = lines.next().unwrap().split(',').map(String::from).collect();
    let rows = lines
        .filter(|l| !l.is_empty())
        .map(|l| l.split(',').map(String::from).collect())
        .collect();
    (header, rows)
}

fn write(path: &Path, (h, rows): &Table) {
    let mut s = h.join(",");
    s.push('\n');
    for r in rows {
        s.push_str(&r.join(","));
        s.push('\n');
    }
    std::fs::write(path, s).unwrap();
}

fn col(t: &Table, name: &str) -> usize {
    t.0.iter().position(|c| c == name).unwrap()
}

/// People and pairs under the cross-check's cleaning rules.
fn network(people: &Table, exposures: &Table) -> (BTreeSet<String>, BTreeSet<(String, String)>) {
    let mut ids = BTreeSet::new();
    let pid = col(people, "person_id");
    for r in &people.1 {
        let id = r[pid].trim();
        if !id.is_empty() {
            ids.insert(id.to_string());
        }
    }
    let (s, t) = (col(exposures, "source_id"), col(exposures, "target_id"));
    let mut pairs = BTreeSet::new();
    for r in &exposures.1 {
        let (a, b) = (r[s].trim(), r[t].trim());
        if a.is_empty() || b.is_empty() || a == b {
            continue;
        }
        ids.insert(a.to_string());
        ids.insert(b.to_string());
        let (x, y) = if a < b { (a, b) } else { (b, a) };
        pairs.insert((x.to_string(), y.to_string()));
    }
    (ids, pairs)
}

struct Net {
    ids: Vec<String>,
    idx: HashMap<String, usize>,
    adj: Vec<Vec<usize>>,
}

impl Net {
    fn new(ids: &BTreeSet<String>, pairs: &BTreeSet<(String, String)>) -> Net {
        let ids: Vec<String> = ids.iter().cloned().collect();
        let idx: HashMap<String, usize> = ids
            .iter()
            .enumerate()
            .map(|(i, s)| (s.clone(), i))
            .collect();
        let mut adj = vec![Vec::new(); ids.len()];
        for (a, b) in pairs {
            adj[idx[a]].push(idx[b]);
            adj[idx[b]].push(idx[a]);
        }
        Net { ids, idx, adj }
    }

    fn high_degree(&self) -> BTreeSet<String> {
        let (s1, s2) = self.adj.iter().fold((0u64, 0u64), |(a, b), v| {
            let k = v.len() as u64;
            (a + k, b + k * k)
        });
        let t = s2 as f64 / s1 as f64;
        (0..self.ids.len())
            .filter(|&i| self.adj[i].len() as f64 > t)
            .map(|i| self.ids[i].clone())
            .collect()
    }

    /// Component label of each person (without `skip`), and the number of components.
    fn components(&self, skip: Option<usize>) -> (Vec<usize>, usize) {
        let mut label = vec![usize::MAX; self.ids.len()];
        let mut count = 0;
        for s in 0..self.ids.len() {
            if Some(s) == skip || label[s] != usize::MAX {
                continue;
            }
            let mut stack = vec![s];
            label[s] = count;
            while let Some(v) = stack.pop() {
                for &w in &self.adj[v] {
                    if Some(w) != skip && label[w] == usize::MAX {
                        label[w] = count;
                        stack.push(w);
                    }
                }
            }
            count += 1;
        }
        (label, count)
    }

    fn bridges(&self) -> BTreeSet<String> {
        let (_, c) = self.components(None);
        (0..self.ids.len())
            .filter(|&v| {
                let (_, cv) = self.components(Some(v));
                // An isolated person removed takes a component with it.
                cv > c - usize::from(self.adj[v].is_empty())
            })
            .map(|v| self.ids[v].clone())
            .collect()
    }
}

/// (merged, split) counts between two networks, by the documented definition.
fn cluster_changes(before: &Net, now: &Net) -> (usize, usize) {
    let (lb, _) = before.components(None);
    let (ln, _) = now.components(None);
    let size = |l: &[usize]| {
        let mut m: HashMap<usize, usize> = HashMap::new();
        for &x in l {
            *m.entry(x).or_default() += 1;
        }
        m
    };
    let (sb, sn) = (size(&lb), size(&ln));
    let mut into: BTreeMap<usize, BTreeSet<usize>> = BTreeMap::new();
    let mut from: BTreeMap<usize, BTreeSet<usize>> = BTreeMap::new();
    for (id, &i) in &now.idx {
        let Some(&j) = before.idx.get(id) else {
            continue;
        };
        let (cn, cb) = (ln[i], lb[j]);
        if sn[&cn] >= 2 && sb[&cb] >= 2 {
            into.entry(cn).or_default().insert(cb);
            from.entry(cb).or_default().insert(cn);
        }
    }
    (
        into.values().filter(|s| s.len() >= 2).count(),
        from.values().filter(|s| s.len() >= 2).count(),
    )
}

fn run(args: &[&str], now: &str) -> Value {
    let out = std::process::Command::new(env!("CARGO_BIN_EXE_hubwatch"))
        .args(args)
        .env("HUBWATCH_NOW", now)
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{args:?}: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    serde_json::from_slice(&out.stdout).unwrap_or(Value::Null)
}

fn set(dir: &Path, ws: &Path, person: &str, state: &str, now: &str) {
    let out = std::process::Command::new(env!("CARGO_BIN_EXE_hubwatch"))
        .args([
            "followup",
            dir.to_str().unwrap(),
            "--person",
            person,
            "--set",
            state,
            "--workspace",
            ws.to_str().unwrap(),
        ])
        .env("HUBWATCH_NOW", now)
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
}

fn strings(v: &Value) -> BTreeSet<String> {
    v.as_array()
        .unwrap()
        .iter()
        .map(|x| x.as_str().unwrap().to_string())
        .collect()
}

#[test]
fn three_loads_changes_and_today_match_counts_made_here() {
    let tmp = tempfile::tempdir().unwrap();
    // One folder rewritten for each load: its default workspace (beside the export) is the
    // one every command uses.
    let dir = tmp.path().join("export");
    std::fs::create_dir_all(&dir).unwrap();
    let ws = dir.join("hubwatch-workspace.sqlite");
    let base = tmp.path().join("synth");
    let out = std::process::Command::new(env!("CARGO_BIN_EXE_hubwatch"))
        .args([
            "synth",
            "--people",
            "600",
            "--seed",
            "11",
            "--out",
            base.to_str().unwrap(),
            "--end",
            "2026-11-20",
        ])
        .output()
        .unwrap();
    assert!(out.status.success());
    let mut people = read(&base.join("people.csv"));
    let mut exposures = read(&base.join("exposures.csv"));
    let pid = col(&people, "person_id");
    let (src, dst, date) = (
        col(&exposures, "source_id"),
        col(&exposures, "target_id"),
        col(&exposures, "exposure_date"),
    );
    // Per load: people, pairs, the list's IDs in rank order.
    let mut loads: Vec<Load> = Vec::new();
    let as_of = ["2026-11-20", "2026-11-21", "2026-11-22"];
    let times = [
        "2026-11-20T08:00:00Z",
        "2026-11-21T08:00:00Z",
        "2026-11-22T08:00:00Z",
    ];
    let top = 20;
    let mut changes: Vec<Value> = Vec::new();
    for load in 0..3 {
        if load > 0 {
            // Remove 8 people of the people table (and their exposures).
            let gone: BTreeSet<String> = people
                .1
                .iter()
                .skip(40 * load)
                .step_by(37)
                .take(8)
                .map(|r| r[pid].trim().to_string())
                .collect();
            people.1.retain(|r| !gone.contains(r[pid].trim()));
            exposures
                .1
                .retain(|r| !gone.contains(r[src].trim()) && !gone.contains(r[dst].trim()));
            // Add 5 new people, each exposed to 3 people already there.
            let known: Vec<String> = people
                .1
                .iter()
                .map(|r| r[pid].trim().to_string())
                .filter(|s| !s.is_empty())
                .collect();
            for k in 0..5 {
                let id = format!("N{load}{k:03}");
                let mut row = vec![String::new(); people.0.len()];
                row[pid] = id.clone();
                row[col(&people, "role")] = "contact".into();
                people.1.push(row);
                for j in 0..3 {
                    let mut e = vec![String::new(); exposures.0.len()];
                    e[src] = known[(k * 31 + j * 97 + load * 13) % known.len()].clone();
                    e[dst] = id.clone();
                    e[date] = as_of[load].into();
                    exposures.1.push(e);
                }
            }
            // 15 new exposures between people already there.
            for j in 0..15 {
                let mut e = vec![String::new(); exposures.0.len()];
                e[src] = known[(j * 53 + load * 7) % known.len()].clone();
                e[dst] = known[(j * 89 + 3 + load * 11) % known.len()].clone();
                e[date] = as_of[load].into();
                exposures.1.push(e);
            }
        }
        write(&dir.join("people.csv"), &people);
        write(&dir.join("exposures.csv"), &exposures);
        let d = dir.to_str().unwrap();
        let c = run(
            &[
                "changes",
                d,
                "--workspace",
                ws.to_str().unwrap(),
                "--as-of",
                as_of[load],
                "--top",
                &top.to_string(),
                "--json",
            ],
            times[load],
        );
        let p = run(
            &[
                "priority",
                d,
                "--as-of",
                as_of[load],
                "--top",
                "0",
                "--json",
            ],
            times[load],
        );
        let ranks: Vec<String> = p["list"]
            .as_array()
            .unwrap()
            .iter()
            .map(|r| r["id"].as_str().unwrap().to_string())
            .collect();
        let (ids, pairs) = network(&people, &exposures);
        loads.push((ids, pairs, ranks));
        changes.push(c);
        // Follow-up work after the first load, at times the test sets.
        if load == 0 {
            let first: Vec<String> = loads[0].2.iter().take(30).cloned().collect();
            for id in &first[0..5] {
                set(&dir, &ws, id, "reached", "2026-11-20T10:00:00Z"); // 2 h after first seen
            }
            for id in &first[5..9] {
                set(&dir, &ws, id, "reached", "2026-11-21T12:00:00Z"); // 28 h after
            }
            for id in &first[9..12] {
                set(&dir, &ws, id, "unreachable", "2026-11-20T09:00:00Z"); // 49 h before the last count
            }
            for id in &first[12..14] {
                set(&dir, &ws, id, "unreachable", "2026-11-21T09:00:00Z"); // 24 h before it
            }
            set(&dir, &ws, &first[0], "completed", "2026-11-22T08:30:00Z");
        }
        if load == 1 {
            for id in ["N1000", "N1001"] {
                set(&dir, &ws, id, "reached", "2026-11-21T20:00:00Z"); // 12 h after first seen
            }
        }
    }
    // The first load has nothing to compare with.
    assert!(changes[0]["compared_with"].is_null());
    for load in 1..3 {
        let c = &changes[load];
        assert_eq!(c["compared_with"]["as_of"], as_of[load - 1]);
        let (ib, pb, rb) = &loads[load - 1];
        let (in_, pn, rn) = &loads[load];
        let new: BTreeSet<String> = in_.difference(ib).cloned().collect();
        let gone: BTreeSet<String> = ib.difference(in_).cloned().collect();
        assert_eq!(strings(&c["new_people"]), new, "load {load}");
        assert_eq!(strings(&c["gone"]), gone, "load {load}");
        let (nb, nn) = (Net::new(ib, pb), Net::new(in_, pn));
        let (hb, hn) = (nb.high_degree(), nn.high_degree());
        assert_eq!(
            strings(&c["became_high_degree"]),
            hn.difference(&hb).cloned().collect()
        );
        assert_eq!(
            strings(&c["no_longer_high_degree"]),
            hb.iter()
                .filter(|x| in_.contains(*x) && !hn.contains(*x))
                .cloned()
                .collect()
        );
        let (bb, bn) = (nb.bridges(), nn.bridges());
        assert_eq!(
            strings(&c["new_bridges"]),
            bn.difference(&bb).cloned().collect()
        );
        let new_pairs: Vec<Value> = pn
            .iter()
            .filter(|(a, b)| {
                ib.contains(a) && ib.contains(b) && !pb.contains(&(a.clone(), b.clone()))
            })
            .map(|(a, b)| serde_json::json!([a, b]))
            .collect();
        assert!(!new_pairs.is_empty());
        assert_eq!(c["new_exposures"].as_array().unwrap(), &new_pairs);
        let lost = pb
            .iter()
            .filter(|(a, b)| {
                in_.contains(a) && in_.contains(b) && !pn.contains(&(a.clone(), b.clone()))
            })
            .count();
        assert_eq!(c["lost_exposures"], lost);
        let (merged, split) = cluster_changes(&nb, &nn);
        assert_eq!(c["merged"].as_array().unwrap().len(), merged, "load {load}");
        assert_eq!(c["split"].as_array().unwrap().len(), split, "load {load}");
        let rank = |r: &[String]| -> HashMap<String, usize> {
            r.iter()
                .enumerate()
                .map(|(i, s)| (s.clone(), i + 1))
                .collect()
        };
        let (rkb, rkn) = (rank(rb), rank(rn));
        let in_top = |m: &HashMap<String, usize>, id: &str| m.get(id).is_some_and(|&r| r <= top);
        let into: BTreeSet<String> = rn
            .iter()
            .filter(|id| in_top(&rkn, id) && !in_top(&rkb, id))
            .cloned()
            .collect();
        let out: BTreeSet<String> = rb
            .iter()
            .filter(|id| in_top(&rkb, id) && !in_top(&rkn, id))
            .cloned()
            .collect();
        let ids_of = |v: &Value| -> BTreeSet<String> {
            v.as_array()
                .unwrap()
                .iter()
                .map(|x| x["person_id"].as_str().unwrap().to_string())
                .collect()
        };
        assert_eq!(ids_of(&c["into_top"]), into, "load {load}");
        assert_eq!(ids_of(&c["out_of_top"]), out, "load {load}");
    }
    // Today, after the third load, at 09:00 on the 22nd.
    let dir3 = dir.clone();
    let now = "2026-11-22T09:00:00Z";
    let t = run(
        &[
            "today",
            dir3.to_str().unwrap(),
            "--workspace",
            ws.to_str().unwrap(),
            "--as-of",
            as_of[2],
            "--json",
        ],
        now,
    );
    let p = run(
        &[
            "priority",
            dir3.to_str().unwrap(),
            "--as-of",
            as_of[2],
            "--top",
            "0",
            "--json",
        ],
        now,
    );
    // What the test set, by person (the last state wins).
    let first = &loads[0].2[..30];
    let mut state: HashMap<String, &str> = HashMap::new();
    for id in &first[0..9] {
        state.insert(id.clone(), "reached");
    }
    for id in &first[9..14] {
        state.insert(id.clone(), "unreachable");
    }
    state.insert(first[0].clone(), "completed");
    for id in ["N1000", "N1001"] {
        state.insert(id.into(), "reached");
    }
    let col_state: HashMap<String, String> = people
        .1
        .iter()
        .map(|r| {
            (
                r[pid].trim().to_string(),
                r[col(&people, "followup_status")].trim().to_lowercase(),
            )
        })
        .collect();
    let effective = |id: &str| -> String {
        state
            .get(id)
            .map(|s| s.to_string())
            .unwrap_or_else(|| col_state.get(id).cloned().unwrap_or_default())
    };
    let as_of_day = hubwatch::ingest::dates::parse_iso(as_of[2]).unwrap();
    let (mut end0, mut end1, mut end23, mut overdue, mut hubs) = (
        BTreeSet::new(),
        BTreeSet::new(),
        BTreeSet::new(),
        BTreeSet::new(),
        BTreeSet::new(),
    );
    for r in p["list"].as_array().unwrap() {
        let id = r["id"].as_str().unwrap().to_string();
        let st = effective(&id);
        let done = st == "completed" || st == "complete";
        if let Some(end) = r["window_end"].as_str() {
            let left = hubwatch::ingest::dates::parse_iso(end).unwrap() - as_of_day;
            if !done {
                match left {
                    0 => end0.insert(id.clone()),
                    1 => end1.insert(id.clone()),
                    2 | 3 => end23.insert(id.clone()),
                    _ => false,
                };
            }
        }
        if r["overdue"].as_bool().unwrap() {
            overdue.insert(id.clone());
        }
        if r["high_degree"].as_bool().unwrap()
            && !["reached", "completed", "complete", "unreachable"].contains(&st.as_str())
        {
            hubs.insert(id.clone());
        }
    }
    assert_eq!(strings(&t["ending_today"]), end0);
    assert_eq!(strings(&t["ending_tomorrow"]), end1);
    assert_eq!(strings(&t["ending_in_2_3_days"]), end23);
    assert_eq!(strings(&t["overdue"]), overdue);
    assert_eq!(strings(&t["hubs_to_call"]), hubs);
    assert!(!end0.is_empty() || !end1.is_empty() || !end23.is_empty());
    // Unreachable since 09:00 on the 20th (48 h before now) counts; since the 21st does not.
    let un: BTreeSet<String> = t["unreachable_2_days"]
        .as_array()
        .unwrap()
        .iter()
        .map(|x| x["person_id"].as_str().unwrap().to_string())
        .collect();
    let want_un: BTreeSet<String> = first[9..12]
        .iter()
        .filter(|id| loads[2].0.contains(*id))
        .cloned()
        .collect();
    assert_eq!(un, want_un);
    // Progress: first seen at 08:00 on the 20th (load 1), the 21st (load 2), the 22nd (load 3);
    // now is 09:00 on the 22nd, so load-1 people count at 24 h and 48 h, load-2 people at 24 h
    // only, load-3 people at neither.
    let now_ids = &loads[2].0;
    let seen1: Vec<&String> = loads[0].0.iter().filter(|x| now_ids.contains(*x)).collect();
    let seen2: Vec<&String> = loads[1]
        .0
        .iter()
        .filter(|x| now_ids.contains(*x) && !loads[0].0.contains(*x))
        .collect();
    let seen3 = now_ids
        .iter()
        .filter(|x| !loads[1].0.contains(*x) && !loads[0].0.contains(*x))
        .count();
    // Reached within 24 h: the 5 reached 2 h after (if still here) and N1000, N1001 (12 h);
    // within 48 h: also the 4 reached 28 h after.
    let here = |ids: &[String]| ids.iter().filter(|x| now_ids.contains(*x)).count();
    let pr = &t["progress"];
    assert_eq!(pr["seen_24h"], seen1.len() + seen2.len());
    assert_eq!(pr["reached_24h"], here(&first[0..5]) + 2);
    assert_eq!(pr["seen_48h"], seen1.len());
    assert_eq!(pr["reached_48h"], here(&first[0..9]));
    // Marked reached in the 14 days: 9 + 2 changes (people still here); completed 1.
    assert_eq!(pr["reached"], here(&first[0..9]) + 2);
    assert_eq!(pr["completed"], here(&first[0..1]));
    // Per day: first seen (people here), reached and completed changes (everyone).
    let days = t["days"].as_array().unwrap();
    let day = |d: &str| days.iter().find(|x| x["day"] == d).unwrap().clone();
    assert_eq!(day("2026-11-20")["first_seen"], seen1.len());
    assert_eq!(day("2026-11-21")["first_seen"], seen2.len());
    assert_eq!(day("2026-11-22")["first_seen"], seen3);
    assert_eq!(day("2026-11-20")["reached"], 5);
    assert_eq!(day("2026-11-21")["reached"], 4 + 2);
    assert_eq!(day("2026-11-22")["completed"], 1);
    // By area: the groups add up to everyone.
    let sum: u64 = t["by_area"]
        .as_object()
        .unwrap()
        .values()
        .map(|g| g["seen_24h"].as_u64().unwrap())
        .sum();
    assert_eq!(sum as usize, seen1.len() + seen2.len());
    // A third run of the same load records nothing new; the snapshots stay three.
    let again = run(
        &[
            "changes",
            dir3.to_str().unwrap(),
            "--workspace",
            ws.to_str().unwrap(),
            "--as-of",
            as_of[2],
            "--json",
        ],
        now,
    );
    assert_eq!(again["recorded"], false);
    assert_eq!(
        again["this_load"]["number"],
        changes[2]["this_load"]["number"]
    );
    // The day's list exports through the writer, with why.
    let f = tmp.path().join("today.csv");
    let out = std::process::Command::new(env!("CARGO_BIN_EXE_hubwatch"))
        .args([
            "export",
            dir3.to_str().unwrap(),
            "--workspace",
            ws.to_str().unwrap(),
            "--as-of",
            as_of[2],
            "--list",
            "today",
            "--split",
            "2",
            "--out",
            f.to_str().unwrap(),
        ])
        .env("HUBWATCH_NOW", now)
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let mut rows = 0;
    for k in 1..=2 {
        let text = std::fs::read_to_string(tmp.path().join(format!("today-{k}of2.csv"))).unwrap();
        let body: Vec<&str> = text.lines().filter(|l| !l.starts_with('#')).collect();
        assert!(body[0].starts_with("rank,today,person_id"), "{}", body[0]);
        rows += body.len() - 1;
    }
    // The first ten of the exported list are `first_on_list`, in the same order.
    let text = std::fs::read_to_string(tmp.path().join("today-1of2.csv")).unwrap()
        + &std::fs::read_to_string(tmp.path().join("today-2of2.csv")).unwrap();
    let mut listed: Vec<(usize, String)> = text
        .lines()
        .filter(|l| !l.starts_with('#') && !l.starts_with("rank,"))
        .map(|l| {
            let f: Vec<&str> = l.split(',').collect();
            (f[0].parse().unwrap(), f[2].to_string())
        })
        .collect();
    listed.sort();
    let first: Vec<String> = t["first_on_list"]
        .as_array()
        .unwrap()
        .iter()
        .map(|x| x["person_id"].as_str().unwrap().to_string())
        .collect();
    let want: Vec<String> = listed.iter().take(10).map(|x| x.1.clone()).collect();
    assert_eq!(first, want);
    let all: BTreeSet<String> = end0
        .iter()
        .chain(&end1)
        .chain(&end23)
        .chain(&overdue)
        .chain(&hubs)
        .chain(&un)
        .cloned()
        .collect();
    assert_eq!(rows, all.len());
}

/// A split and a merge worked by hand. Load 1: a path A-B-C-D-E (one cluster of 5; B, C and D
/// are bridges) and a pair X-Y (a cluster of 2). Load 2: C is gone with its two exposures, and
/// E meets X. Now the clusters are {A, B} and {D, E, X, Y}. So the cluster of 5 split (its
/// people still here sit in a cluster of 4 and one of 2), and the cluster of 4 merged from the
/// earlier cluster of 5 and the pair X-Y. New bridges: E (between D and X) and X (between E and
/// Y); B and D are no longer bridges. New exposure between known people: E-X. Gone: C.
#[test]
fn a_split_and_a_merge_by_hand() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    let people = "person_id\nA\nB\nC\nD\nE\nX\nY\n";
    std::fs::write(dir.join("people.csv"), people).unwrap();
    std::fs::write(
        dir.join("exposures.csv"),
        "source_id,target_id,exposure_date\nA,B,2026-11-01\nB,C,2026-11-01\nC,D,2026-11-01\nD,E,2026-11-01\nX,Y,2026-11-01\n",
    )
    .unwrap();
    let d = dir.to_str().unwrap();
    let first = run(
        &["changes", d, "--as-of", "2026-11-02", "--json"],
        "2026-11-02T08:00:00Z",
    );
    assert!(first["compared_with"].is_null());
    std::fs::write(dir.join("people.csv"), "person_id\nA\nB\nD\nE\nX\nY\n").unwrap();
    std::fs::write(
        dir.join("exposures.csv"),
        "source_id,target_id,exposure_date\nA,B,2026-11-01\nD,E,2026-11-01\nX,Y,2026-11-01\nE,X,2026-11-02\n",
    )
    .unwrap();
    let c = run(
        &["changes", d, "--as-of", "2026-11-03", "--json"],
        "2026-11-03T08:00:00Z",
    );
    assert_eq!(c["gone"], serde_json::json!(["C"]));
    assert_eq!(c["new_people"], serde_json::json!([]));
    assert_eq!(
        c["split"],
        serde_json::json!([{"size": 5, "parts": [4, 2], "example": "A"}])
    );
    assert_eq!(
        c["merged"],
        serde_json::json!([{"size": 4, "parts": [5, 2], "example": "D"}])
    );
    assert_eq!(c["new_bridges"], serde_json::json!(["E", "X"]));
    assert_eq!(c["new_exposures"], serde_json::json!([["E", "X"]]));
    // B-C and C-D went with C; no pair between two people still here was lost.
    assert_eq!(c["lost_exposures"], 0);
    assert!(c["counted"]["split"]
        .as_str()
        .unwrap()
        .contains("2 or more"));
}

/// A damaged snapshot (its body overwritten in the file) is reported, and the load is still
/// recorded and today's work still counted; the load after compares with the new one.
#[test]
fn a_damaged_snapshot_is_said_and_the_next_load_compares_again() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    std::fs::write(dir.join("people.csv"), "person_id\nA\nB\nC\n").unwrap();
    std::fs::write(
        dir.join("exposures.csv"),
        "source_id,target_id,exposure_date\nA,B,2026-11-01\n",
    )
    .unwrap();
    let d = dir.to_str().unwrap();
    run(
        &["changes", d, "--as-of", "2026-11-02", "--json"],
        "2026-11-02T08:00:00Z",
    );
    let ws = hubwatch::workspace::Workspace::open(&dir.join("hubwatch-workspace.sqlite")).unwrap();
    ws.raw_execute_for_tests("UPDATE snapshot SET body = x'00112233'")
        .unwrap();
    drop(ws);
    let c = run(
        &["changes", d, "--as-of", "2026-11-03", "--json"],
        "2026-11-03T08:00:00Z",
    );
    assert!(c["problem"].as_str().unwrap().contains("damaged"), "{c}");
    assert!(c["compared_with"].is_null());
    assert_eq!(c["recorded"], true);
    std::fs::write(
        dir.join("exposures.csv"),
        "source_id,target_id,exposure_date\nA,B,2026-11-01\nB,C,2026-11-03\n",
    )
    .unwrap();
    let c = run(
        &["changes", d, "--as-of", "2026-11-04", "--json"],
        "2026-11-04T08:00:00Z",
    );
    assert!(c["problem"].is_null());
    assert_eq!(c["compared_with"]["as_of"], "2026-11-03");
    assert_eq!(c["new_exposures"], serde_json::json!([["B", "C"]]));
}
