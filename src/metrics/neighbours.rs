//! Neighbour degree and the friendship paradox, in the three versions of the methods sheet:
//! (a) the edge-end mean <k^2>/<k>; (b) the mean over people (with contacts) of their contacts'
//! mean degree; (c) the shares of people whose contacts have more, fewer or as many contacts
//! as they do, decided in integers (m_i > k_i  <=>  sum_j k_j > k_i^2).
//! Also k_nn(k), the mean of m_i over people of degree k (Pastor-Satorras et al. 2001), and the
//! ego-weighted excess degree of contacts, to set beside q_k.

use super::Stat;
use crate::graph::Adjacency;

/// Per-person neighbour figures and the paradox summary.
#[derive(Debug, Clone, PartialEq)]
pub struct Neighbours {
    /// Sum of contacts' degrees per person (integers, exact).
    pub neighbour_degree_sum: Vec<u64>,
    /// People with at least one contact (N+).
    pub n_active: usize,
    /// Version (a): <k^2>/<k>.
    pub edge_end_mean: Stat,
    /// Version (b): mean over N+ of m_i.
    pub contact_mean: Stat,
    /// <k> over the N+ people with contacts.
    pub mean_active: Stat,
    /// Version (c): share of N+ whose contacts have more contacts than they do.
    pub share_more: Stat,
    /// Share whose contacts have fewer.
    pub share_fewer: Stat,
    /// Share whose contacts have exactly as many.
    pub share_equal: Stat,
    /// k_nn(k) for each degree k >= 1 present: (k, value).
    pub knn: Vec<(u32, f64)>,
    /// Ego-weighted distribution of contacts' excess degree: `(1/N+) sum_i (1/k_i) #{j in N(i):
    /// k_j - 1 = x}` for x = 0..; equals q_x when degrees are uncorrelated.
    pub contact_excess: Vec<f64>,
}

impl Neighbours {
    /// Contacts' mean degree m_i of person i (undefined without contacts).
    pub fn contact_mean_of(&self, deg: &[u32], i: usize) -> Stat {
        match deg[i] {
            0 => Err("no contacts"),
            k => Ok(self.neighbour_degree_sum[i] as f64 / f64::from(k)),
        }
    }
}

/// Compute neighbour figures from the adjacency and degree sequence.
pub fn neighbours(g: &Adjacency, deg: &[u32]) -> Neighbours {
    neighbours_of(g, deg, 0..deg.len() as u32)
}

/// The same figures over some of the people (each one's contacts counted in the whole network,
/// whoever they are); the figures of the whole network when `people` is everyone.
pub fn neighbours_of(g: &Adjacency, deg: &[u32], people: impl Iterator<Item = u32>) -> Neighbours {
    let n = deg.len();
    let max = deg.iter().copied().max().unwrap_or(0) as usize;
    let mut sums = vec![0u64; n];
    let (mut more, mut fewer, mut equal, mut active) = (0u64, 0u64, 0u64, 0u64);
    let mut m_total = 0.0;
    let mut knn_sum = vec![0.0f64; max + 1];
    let mut knn_count = vec![0u64; max + 1];
    let mut contact_excess = vec![0.0f64; max.max(1)];
    let (mut s1, mut s2) = (0u128, 0u128);
    let mut count = 0usize;
    let mut people = people.map(|i| i as usize).peekable();
    while let Some(i) = people.next() {
        // The contacts' degrees sit anywhere: ask for those of the next person's contacts.
        if let Some(&next) = people.peek() {
            for &j in g.neighbors_slice(next as u32) {
                crate::prefetch::prefetch(deg, j as usize);
            }
        }
        count += 1;
        let k = deg[i];
        s1 += u128::from(k);
        s2 += u128::from(k) * u128::from(k);
        if k == 0 {
            continue;
        }
        active += 1;
        let nb = g.neighbors_slice(i as u32);
        let sum: u64 = nb.iter().map(|&j| u64::from(deg[j as usize])).sum();
        sums[i] = sum;
        let k2 = u64::from(k) * u64::from(k);
        match sum.cmp(&k2) {
            std::cmp::Ordering::Greater => more += 1,
            std::cmp::Ordering::Less => fewer += 1,
            std::cmp::Ordering::Equal => equal += 1,
        }
        let m_i = sum as f64 / f64::from(k);
        m_total += m_i;
        knn_sum[k as usize] += m_i;
        knn_count[k as usize] += 1;
        let w = 1.0 / f64::from(k);
        for &j in nb {
            contact_excess[deg[j as usize] as usize - 1] += w;
        }
    }
    let knn = (1..=max)
        .filter(|&k| knn_count[k] > 0)
        .map(|k| (k as u32, knn_sum[k] / knn_count[k] as f64))
        .collect();
    finish(Totals {
        sums,
        count: count as u64,
        active,
        s1,
        s2,
        m_total,
        shares: [more, fewer, equal],
        knn,
        contact_excess,
    })
}

/// What both ways of counting add up, before the shares and means are taken.
struct Totals {
    sums: Vec<u64>,
    count: u64,
    active: u64,
    s1: u128,
    s2: u128,
    m_total: f64,
    /// People whose contacts have more, fewer, as many contacts.
    shares: [u64; 3],
    knn: Vec<(u32, f64)>,
    contact_excess: Vec<f64>,
}

/// The figures from the totals (undefined without people or without contacts).
fn finish(t: Totals) -> Neighbours {
    let Totals {
        sums,
        count,
        active,
        s1,
        s2,
        m_total,
        shares: [more, fewer, equal],
        knn,
        mut contact_excess,
    } = t;
    if active == 0 {
        let u = Err("no contacts (every person has degree 0)");
        let u0 = if count == 0 { Err("no people") } else { u };
        return Neighbours {
            neighbour_degree_sum: sums,
            n_active: 0,
            edge_end_mean: u0,
            contact_mean: u0,
            mean_active: u0,
            share_more: u0,
            share_fewer: u0,
            share_equal: u0,
            knn,
            contact_excess: Vec::new(),
        };
    }
    let a = active as f64;
    for v in contact_excess.iter_mut() {
        *v /= a;
    }
    Neighbours {
        neighbour_degree_sum: sums,
        n_active: active as usize,
        edge_end_mean: Ok(s2 as f64 / s1 as f64),
        contact_mean: Ok(m_total / a),
        mean_active: Ok(s1 as f64 / a),
        share_more: Ok(more as f64 / a),
        share_fewer: Ok(fewer as f64 / a),
        share_equal: Ok(equal as f64 / a),
        knn,
        contact_excess,
    }
}

/// The same figures from tables a database engine counted (no adjacency): `degrees` gives
/// people per degree (k, n_k); `joint` the ends of pairs by (own degree, other end's degree),
/// each pair counted from both ends; `sums` people by (degree k, sum of contacts' degrees).
/// Integers are as exact as from the adjacency; float sums may differ in the last bits (they
/// are added in another order). `neighbour_degree_sum` is empty (no per-person figures).
pub fn from_tables(
    degrees: &[(u32, u64)],
    joint: &[(u32, u32, u64)],
    sums: &[(u32, u64, u64)],
) -> Neighbours {
    let max = degrees.iter().map(|d| d.0).max().unwrap_or(0) as usize;
    let count: u64 = degrees.iter().map(|d| d.1).sum();
    let (mut s1, mut s2) = (0u128, 0u128);
    for &(k, n) in degrees {
        s1 += u128::from(k) * u128::from(n);
        s2 += u128::from(k) * u128::from(k) * u128::from(n);
    }
    let (mut more, mut fewer, mut equal, mut active) = (0u64, 0u64, 0u64, 0u64);
    let mut m_total = 0.0;
    let mut knn_sum = vec![0.0f64; max + 1];
    let mut knn_count = vec![0u64; max + 1];
    for &(k, total, n) in sums.iter().filter(|s| s.0 > 0) {
        active += n;
        let k2 = u64::from(k) * u64::from(k);
        match total.cmp(&k2) {
            std::cmp::Ordering::Greater => more += n,
            std::cmp::Ordering::Less => fewer += n,
            std::cmp::Ordering::Equal => equal += n,
        }
        let m = total as f64 / f64::from(k) * n as f64;
        m_total += m;
        knn_sum[k as usize] += m;
        knn_count[k as usize] += n;
    }
    let mut contact_excess = vec![0.0f64; max.max(1)];
    for &(own, other, ends) in joint.iter().filter(|j| j.0 > 0 && j.1 > 0) {
        contact_excess[other as usize - 1] += ends as f64 / f64::from(own);
    }
    let knn = (1..=max)
        .filter(|&k| knn_count[k] > 0)
        .map(|k| (k as u32, knn_sum[k] / knn_count[k] as f64))
        .collect();
    finish(Totals {
        sums: Vec::new(),
        count,
        active,
        s1,
        s2,
        m_total,
        shares: [more, fewer, equal],
        knn,
        contact_excess,
    })
}
