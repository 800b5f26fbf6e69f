//! What changed between two loads: people, marks, pairs, clusters, the top of the list.

use std::collections::{BTreeMap, HashSet};

use crate::workspace::snapshot::{Snapshot, BRIDGE, HIGH_DEGREE};

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
