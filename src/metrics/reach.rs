//! Reach-out planning on the actual graph: remove people in a given order (they are reached and
//! no longer transmit) and follow, for every n, the exact largest cluster of the remaining
//! network and its mean excess degree kappa' = sum k'(k'-1) / sum k' (methods sheet §5).
//!
//! The whole curve costs one pass: people are added back in reverse order with a union-find,
//! updating cluster sizes and the residual degree sums as each person returns, instead of one
//! graph walk per n.

use rand::seq::SliceRandom;
use rand::Rng;

use super::Stat;
use crate::graph::Adjacency;
use crate::ids::IdMap;

/// The curve for one removal order.
#[derive(Debug, Clone, PartialEq)]
pub struct ReachCurve {
    /// `largest[n]`: people in the largest cluster after removing the first n of the order.
    pub largest: Vec<u32>,
    /// `kappa[n]`: mean excess degree of the remaining network (undefined when no contact is left).
    pub kappa: Vec<Stat>,
    /// `s1[n]`: sum of residual degrees (twice the contacts left).
    pub s1: Vec<u64>,
    /// `s2[n]`: sum of k'(k'-1) over the people left.
    pub s2: Vec<u64>,
}

fn find(parent: &mut [u32], mut x: u32) -> u32 {
    while parent[x as usize] != x {
        let p = parent[x as usize];
        parent[x as usize] = parent[p as usize];
        x = p;
    }
    x
}

/// Join the clusters of `a` and `b` (union by size); returns the size of the joined cluster.
fn union(parent: &mut [u32], size: &mut [u32], a: u32, b: u32) -> u32 {
    let (a, b) = (find(parent, a), find(parent, b));
    if a == b {
        return size[a as usize];
    }
    let (big, small) = if size[a as usize] >= size[b as usize] {
        (a, b)
    } else {
        (b, a)
    };
    parent[small as usize] = big;
    size[big as usize] += size[small as usize];
    size[big as usize]
}

fn kappa_of(s1: u64, s2: u64) -> Stat {
    if s1 == 0 {
        Err("no contacts left")
    } else {
        Ok(s2 as f64 / s1 as f64)
    }
}

/// Curve for removing `order` (distinct node indices; people not in it are never removed).
pub fn reach_curve(g: &Adjacency, order: &[u32]) -> ReachCurve {
    let n = g.node_count();
    let m = order.len();
    let mut present = vec![true; n];
    for &v in order {
        present[v as usize] = false;
    }
    let mut parent: Vec<u32> = (0..n as u32).collect();
    let mut size = vec![1u32; n];
    let mut deg = vec![0u64; n];
    // Residual sums over present people: S1 = sum k', S2 = sum k'(k'-1).
    let (mut s1, mut s2) = (0u64, 0u64);
    let mut largest = 0u32;
    // Start from the network with everyone in `order` removed.
    for v in 0..n as u32 {
        if !present[v as usize] {
            continue;
        }
        largest = largest.max(1);
        for &w in g.neighbors_slice(v) {
            if present[w as usize] {
                deg[v as usize] += 1;
                if v < w {
                    largest = largest.max(union(&mut parent, &mut size, v, w));
                }
            }
        }
    }
    for v in 0..n {
        if present[v] {
            s1 += deg[v];
            s2 += deg[v] * deg[v].saturating_sub(1);
        }
    }
    let mut largest_rev = vec![largest];
    let mut kappa_rev = vec![kappa_of(s1, s2)];
    let mut s1_rev = vec![s1];
    let mut s2_rev = vec![s2];
    for &v in order.iter().rev() {
        let vi = v as usize;
        present[vi] = true;
        largest = largest.max(1);
        let mut k = 0u64;
        for &w in g.neighbors_slice(v) {
            let wi = w as usize;
            if !present[wi] || w == v {
                continue;
            }
            k += 1;
            // w gains a contact: k'(k'-1) grows by 2k' (old k'), sum k' by 1.
            s2 += 2 * deg[wi];
            s1 += 1;
            deg[wi] += 1;
            largest = largest.max(union(&mut parent, &mut size, v, w));
        }
        deg[vi] = k;
        s1 += k;
        s2 += k * k.saturating_sub(1);
        largest_rev.push(largest);
        kappa_rev.push(kappa_of(s1, s2));
        s1_rev.push(s1);
        s2_rev.push(s2);
    }
    largest_rev.reverse();
    kappa_rev.reverse();
    s1_rev.reverse();
    s2_rev.reverse();
    debug_assert_eq!(largest_rev.len(), m + 1);
    ReachCurve {
        largest: largest_rev,
        kappa: kappa_rev,
        s1: s1_rev,
        s2: s2_rev,
    }
}

/// Highest degree first: a static ranking on the original degrees, ties by the smaller ID
/// (numeric IDs compare as numbers, others as text). This is the rule methods.md §5 states;
/// adaptive re-ranking after each removal would be a different strategy.
pub fn degree_order(g: &Adjacency, ids: &IdMap) -> Vec<u32> {
    degree_order_by(g, &id_ranks(ids))
}

/// Each person's position in ID order (numeric IDs compare as numbers when every ID is a
/// number, else as text).
pub fn id_ranks(ids: &IdMap) -> Vec<u32> {
    let n = ids.len();
    let mut by_id: Vec<u32> = (0..n as u32).collect();
    let numeric: Option<Vec<u64>> = (0..n as u32)
        .map(|v| ids.name(v).parse::<u64>().ok())
        .collect();
    match &numeric {
        Some(num) => by_id.sort_unstable_by_key(|&v| num[v as usize]),
        None => {
            // By each ID's first eight bytes first (big-endian, zero-padded: their order is
            // the texts' order wherever they differ), the whole text only where they tie.
            let heads = (0..n as u32)
                .map(|v| (text_head(ids.name(v)), 0, v))
                .collect();
            by_id = crate::sort::by_key_then_name(heads, None, |v| ids.name(v));
        }
    }
    let mut id_rank = vec![0u32; n];
    for (r, &v) in by_id.iter().enumerate() {
        id_rank[v as usize] = r as u32;
    }
    id_rank
}

/// The first eight bytes of a text as a big-endian number, zero-padded.
fn text_head(s: &str) -> u64 {
    let mut b = [0u8; 8];
    let k = s.len().min(8);
    b[..k].copy_from_slice(&s.as_bytes()[..k]);
    u64::from_be_bytes(b)
}

/// Highest degree first, ties by `id_rank` (see [`id_ranks`]).
pub fn degree_order_by(g: &Adjacency, id_rank: &[u32]) -> Vec<u32> {
    let mut v: Vec<u32> = (0..g.node_count() as u32).collect();
    v.sort_unstable_by_key(|&a| (std::cmp::Reverse(g.out_degree(a)), id_rank[a as usize]));
    v
}

/// Acquaintance draw (Cohen, Havlin & ben-Avraham 2003): a random person with contacts, then a
/// random contact of theirs. Person j is picked with probability
/// pi_j = (1/N+) sum over contacts i of j of 1/k_i (methods.md §5), N+ = people with contacts.
pub fn acquaintance_probabilities(g: &Adjacency) -> Vec<f64> {
    let n = g.node_count();
    let with_contacts = (0..n as u32).filter(|&v| g.out_degree(v) > 0).count();
    let mut pi = vec![0.0; n];
    if with_contacts == 0 {
        return pi;
    }
    for i in 0..n as u32 {
        let k = g.out_degree(i);
        if k == 0 {
            continue;
        }
        let share = 1.0 / (k as f64 * with_contacts as f64);
        for &j in g.neighbors_slice(i) {
            pi[j as usize] += share;
        }
    }
    pi
}

/// The order in which repeated acquaintance draws first reach each person. Drawing with
/// replacement and skipping repeats is weighted sampling without replacement in proportion to
/// pi_j, done in one sort with exponential keys E_j / pi_j (Efraimidis & Spirakis 2006, Inf.
/// Process. Lett. 97:181). People without contacts are never drawn and are not in the order.
pub fn acquaintance_order(g: &Adjacency, rng: &mut impl Rng) -> Vec<u32> {
    let pi = acquaintance_probabilities(g);
    let mut keyed: Vec<(f64, u32)> = pi
        .iter()
        .enumerate()
        .filter(|(_, &p)| p > 0.0)
        .map(|(j, &p)| {
            let e: f64 = -(1.0 - rng.random::<f64>()).ln();
            (e / p, j as u32)
        })
        .collect();
    keyed.sort_unstable_by(|a, b| a.0.total_cmp(&b.0).then(a.1.cmp(&b.1)));
    keyed.into_iter().map(|(_, j)| j).collect()
}

/// Everyone in a uniformly random order.
pub fn random_order(n: usize, rng: &mut impl Rng) -> Vec<u32> {
    let mut v: Vec<u32> = (0..n as u32).collect();
    v.shuffle(rng);
    v
}

/// Configuration-model prediction for the same removal: with the original degrees k and the
/// people kept, kappa'_CM = sum over kept k(k-1) / sum over all k (Callaway, Newman, Strogatz &
/// Watts 2000: sum_k k(k-1) p_k phi_k / <k>). It ignores who is next to whom, so the gap to the
/// real curve shows how much the network's structure matters.
pub fn configuration_model_kappa(degrees: &[u32], order: &[u32]) -> Vec<Stat> {
    let k = |v: u32| degrees[v as usize] as u64;
    let total: u64 = degrees.iter().map(|&d| d as u64).sum();
    let mut kept: u64 = degrees
        .iter()
        .map(|&d| d as u64 * (d as u64).saturating_sub(1))
        .sum();
    let value = |kept: u64| -> Stat {
        if total == 0 {
            Err("no contacts")
        } else {
            Ok(kept as f64 / total as f64)
        }
    };
    let mut out = Vec::with_capacity(order.len() + 1);
    out.push(value(kept));
    for &v in order {
        kept -= k(v) * k(v).saturating_sub(1);
        out.push(value(kept));
    }
    out
}

/// Configuration-model expectation of the largest cluster (in people) after removing
/// `order[..n]`, for each n in `at` (increasing): site percolation on a configuration-model
/// network with the original degrees, people kept as in the removal (Callaway, Newman, Strogatz
/// & Watts 2000). With F0(x) = sum_k p_k phi_k x^k and F1(x) = sum_k k p_k phi_k x^(k-1) / <k>,
/// u is the smallest root of u = 1 - F1(1) + F1(u) and the giant cluster holds
/// N (F0(1) - F0(u)) people; below the residual threshold (kappa' <= 1) there is none (0).
pub fn configuration_model_largest(degrees: &[u32], order: &[u32], at: &[usize]) -> Vec<Stat> {
    configuration_model_largest_mean(degrees, &[order], at)
}

/// The same for the mean removal over several orders (seeded repeats of a random strategy):
/// the kept counts per degree are averaged over the orders before the equation is solved.
pub fn configuration_model_largest_mean(
    degrees: &[u32],
    orders: &[&[u32]],
    at: &[usize],
) -> Vec<Stat> {
    let n_people = degrees.len();
    let kmax = degrees.iter().copied().max().unwrap_or(0) as usize;
    let r = orders.len().max(1) as u64;
    // Kept counts summed over the orders (divided by r in the equation).
    let mut kept = vec![0u64; kmax + 1];
    for &d in degrees {
        kept[d as usize] += r;
    }
    let ends: u64 = degrees.iter().map(|&d| d as u64).sum::<u64>() * r;
    let giant = |kept: &[u64]| -> Stat {
        if ends == 0 || n_people == 0 {
            return Err("no contacts");
        }
        let e = ends as f64;
        let kappa: f64 = kept
            .iter()
            .enumerate()
            .map(|(k, &c)| (k * k.saturating_sub(1)) as f64 * c as f64)
            .sum::<f64>()
            / e;
        if kappa <= 1.0 {
            return Ok(0.0);
        }
        // Horner forms over the kept histogram.
        let f1 = |x: f64| {
            (1..kept.len())
                .rev()
                .fold(0.0, |acc, k| acc * x + k as f64 * kept[k] as f64)
                / e
        };
        let f1p = |x: f64| {
            (2..kept.len()).rev().fold(0.0, |acc, k| {
                acc * x + (k * (k - 1)) as f64 * kept[k] as f64
            }) / e
        };
        let f1_at_1 = f1(1.0);
        let u = super::outlook::smallest_fixed_point(&|u| 1.0 - f1_at_1 + f1(u), &f1p)
            .ok_or("did not converge (too close to the threshold)")?;
        let f0 = |x: f64| kept.iter().rev().fold(0.0, |acc, &c| acc * x + c as f64);
        Ok((f0(1.0) - f0(u)) / r as f64)
    };
    let mut out = Vec::with_capacity(at.len());
    let mut removed = 0usize;
    for &n in at {
        while removed < n {
            for o in orders {
                if let Some(&v) = o.get(removed) {
                    kept[degrees[v as usize] as usize] -= 1;
                }
            }
            removed += 1;
        }
        out.push(giant(&kept));
    }
    out
}

/// The mean of several curves of the same length (seeded repeats of a random strategy): the
/// mean largest cluster, and kappa' as the ratio of the mean sums, E[sum k'(k'-1)] / E[sum k'],
/// the quantity methods.md §5 gives exactly for random removal.
#[derive(Debug, Clone, PartialEq)]
pub struct MeanCurve {
    /// Mean largest cluster after n removals.
    pub largest: Vec<f64>,
    /// Ratio of mean sums.
    pub kappa: Vec<Stat>,
}

/// Average curves (all must have the same length).
pub fn average(curves: &[ReachCurve]) -> MeanCurve {
    let len = curves.iter().map(|c| c.largest.len()).min().unwrap_or(0);
    let r = curves.len().max(1) as f64;
    let largest = (0..len)
        .map(|i| curves.iter().map(|c| c.largest[i] as f64).sum::<f64>() / r)
        .collect();
    let kappa = (0..len)
        .map(|i| {
            let s1: u64 = curves.iter().map(|c| c.s1[i]).sum();
            let s2: u64 = curves.iter().map(|c| c.s2[i]).sum();
            kappa_of(s1, s2)
        })
        .collect();
    MeanCurve { largest, kappa }
}

impl From<ReachCurve> for MeanCurve {
    fn from(c: ReachCurve) -> MeanCurve {
        MeanCurve {
            largest: c.largest.iter().map(|&x| x as f64).collect(),
            kappa: c.kappa,
        }
    }
}

/// Expected kappa' after removing m of N people uniformly at random, exactly on the finite graph:
/// E[sum k'(k'-1)] / E[sum k'] = kappa (N - m - 2) / (N - 2) (methods.md §5, derived there).
pub fn random_removal_exact(kappa: f64, n: usize, m: usize) -> Stat {
    if n <= 2 || m + 2 > n {
        return Err("too few people left");
    }
    Ok(kappa * (n - m - 2) as f64 / (n - 2) as f64)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The ranks by text are those of sorting the names outright: shared eight-byte heads,
    /// prefixes of one another, a zero byte and letters beyond ASCII included.
    #[test]
    fn text_ranks_are_the_plain_sort() {
        let names = [
            "P0000010",
            "P000001",
            "P00000100",
            "P0000010\u{0}",
            "P0000010A",
            "é1",
            "e1",
            "",
            "P0000009",
            "ABCDEFGHIJ",
            "ABCDEFGHI",
            "ABCDEFGH",
            "Z",
            "P00000100x",
        ];
        let mut ids = IdMap::new(true);
        for s in names {
            ids.intern(s);
        }
        let mut want: Vec<u32> = (0..ids.len() as u32).collect();
        want.sort_by(|&a, &b| ids.name(a).cmp(ids.name(b)));
        let rank = id_ranks(&ids);
        let mut got: Vec<u32> = (0..ids.len() as u32).collect();
        got.sort_by_key(|&v| rank[v as usize]);
        assert_eq!(got, want);
    }
}
