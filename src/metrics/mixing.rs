//! Who mixes with whom: degree assortativity r (Newman 2002, Phys. Rev. Lett. 89:208701, eq. 4;
//! Newman 2003, Phys. Rev. E 67:026126), its jackknife standard error, r under a
//! degree-preserving null model, and mixing by a categorical attribute (area, age group).
//!
//! r is computed from integer sums over the M pairs, with end degrees (j, k):
//! r = (4M Sjk - Sb^2) / (2M Sc - Sb^2), Sjk = sum jk, Sb = sum (j + k), Sc = sum (j^2 + k^2),
//! which is the sheet's (A - B^2)/(C - B^2) multiplied through by 4M^2: exact until the last
//! division, and undefined exactly when every edge end has the same degree.

use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;

use super::Stat;
use crate::prefetch::second_end_ahead;

/// Integer sums over the edges that determine r.
#[derive(Debug, Clone, Copy, Default)]
struct Sums {
    m: i128,
    jk: i128,
    b: i128,
    c: i128,
}

impl Sums {
    fn add(&mut self, j: u32, k: u32, sign: i128) {
        let (j, k) = (i128::from(j), i128::from(k));
        self.m += sign;
        self.jk += sign * j * k;
        self.b += sign * (j + k);
        self.c += sign * (j * j + k * k);
    }

    fn r(&self) -> Stat {
        if self.m == 0 {
            return Err("no contacts");
        }
        let num = 4 * self.m * self.jk - self.b * self.b;
        let den = 2 * self.m * self.c - self.b * self.b;
        if den == 0 {
            return Err("every contact joins people of equal degree (0/0)");
        }
        Ok(num as f64 / den as f64)
    }
}

fn sums(a: &[u32], b: &[u32], deg: &[u32]) -> Sums {
    let mut s = Sums::default();
    for (e, (&x, &y)) in a.iter().zip(b).enumerate() {
        second_end_ahead(deg, b, e, 1);
        s.add(deg[x as usize], deg[y as usize], 1);
    }
    s
}

/// Degree assortativity r over the pairs `(a[e], b[e])` with degrees `deg`.
pub fn assortativity(a: &[u32], b: &[u32], deg: &[u32]) -> Stat {
    sums(a, b, deg).r()
}

/// Degree assortativity within each of `groups` sub-networks of the pairs, degrees counted
/// within each: pair `e` belongs to sub-network `c - 1` for each code `c` in `1..=groups` among
/// `codes[off[e]..off[e + 1]]` (codes distinct per pair; other codes place it in none). The
/// same integer sums as [`assortativity`] over each sub-network's own pairs and degrees, in two
/// passes over the pairs for as many sub-networks as have their per-person degrees fit in
/// `budget` bytes together (at least one at a time). `max_degree` bounds every person's degree
/// (16-bit counts below 65536).
pub fn assortativity_within(
    (a, b): (&[u32], &[u32]),
    people: usize,
    (off, codes): (&[u32], &[u16]),
    (groups, max_degree): (usize, u32),
    budget: usize,
) -> Vec<Stat> {
    if off.len() != a.len() + 1 {
        return vec![Sums::default().r(); groups];
    }
    let member = (off, codes);
    if max_degree < u32::from(u16::MAX) {
        within::<u16>((a, b), people, member, groups, budget)
    } else {
        within::<u32>((a, b), people, member, groups, budget)
    }
}

/// A per-person degree count.
trait Tally: Copy + Default + Into<u32> {
    fn bump(&mut self);
}

impl Tally for u16 {
    fn bump(&mut self) {
        *self += 1;
    }
}

impl Tally for u32 {
    fn bump(&mut self) {
        *self += 1;
    }
}

fn within<T: Tally>(
    (a, b): (&[u32], &[u32]),
    people: usize,
    (off, codes): (&[u32], &[u16]),
    groups: usize,
    budget: usize,
) -> Vec<Stat> {
    let per_batch = (budget / (people.max(1) * std::mem::size_of::<T>())).clamp(1, groups.max(1));
    let mut out = Vec::with_capacity(groups);
    let mut first = 0;
    while first < groups {
        let g = per_batch.min(groups - first);
        let batch = first..first + g;
        let mut deg = vec![T::default(); people * g];
        each_member(
            (a, b),
            (off, codes),
            (batch.clone(), &mut deg),
            |deg, x, y, s| {
                deg[x + s].bump();
                deg[y + s].bump();
            },
        );
        let mut sums = vec![Sums::default(); g];
        each_member((a, b), (off, codes), (batch, &mut deg), |deg, x, y, s| {
            sums[s].add(deg[x + s].into(), deg[y + s].into(), 1)
        });
        out.extend(sums.iter().map(Sums::r));
        first += g;
    }
    out
}

/// Visit each pair's sub-networks among `batch` (codes `batch.start + 1..=batch.end`) with
/// `table`, the first entries of its two ends' rows of `batch.len()` counts in it and the slot
/// in them. `a` is sorted, so the first end's counts are read in order; a second end's row
/// shares one line, asked for ahead.
#[inline(always)]
fn each_member<T>(
    (a, b): (&[u32], &[u32]),
    (off, codes): (&[u32], &[u16]),
    (batch, table): (std::ops::Range<usize>, &mut [T]),
    mut visit: impl FnMut(&mut [T], usize, usize, usize),
) {
    let g = batch.len();
    for (e, (&x, &y)) in a.iter().zip(b).enumerate() {
        second_end_ahead(table, b, e, g);
        for &c in &codes[off[e] as usize..off[e + 1] as usize] {
            let c = usize::from(c);
            if c > batch.start && c <= batch.end {
                visit(table, x as usize * g, y as usize * g, c - 1 - batch.start);
            }
        }
    }
}

/// Jackknife standard error of r, variant A of the methods sheet: each pair left out in turn
/// with every person's degree kept as in the full network; sigma^2 = sum_i (r_(i) - r)^2
/// (Newman's form). Leaving out a pair changes the sums by what its end degrees (j, k) add, so
/// r_(i) depends on (j, k) only: the pairs are counted by their (j, k) once, and each distinct
/// (j, k) is left out once and weighted by its count (thousands of r's rather than millions).
pub fn jackknife_se(a: &[u32], b: &[u32], deg: &[u32]) -> Stat {
    jackknife_from_joint(&joint_degree_counts(a, b, deg))
}

fn sums_of_joint(joint: &[((u32, u32), u64)]) -> Sums {
    let mut s = Sums::default();
    for &((j, k), count) in joint {
        let (j, k, c) = (i128::from(j), i128::from(k), i128::from(count));
        s.m += c;
        s.jk += c * j * k;
        s.b += c * (j + k);
        s.c += c * (j * j + k * k);
    }
    s
}

/// r from the pairs counted by their end degrees (j <= k), as [`joint_degree_counts`] gives
/// them (or a database engine's aggregate table): the same integer sums, the same value.
pub fn assortativity_from_joint(joint: &[((u32, u32), u64)]) -> Stat {
    sums_of_joint(joint).r()
}

/// The jackknife standard error of r from the pairs counted by their end degrees.
pub fn jackknife_from_joint(joint: &[((u32, u32), u64)]) -> Stat {
    let all = sums_of_joint(joint);
    let r = all.r()?;
    if all.m < 2 {
        return Err("needs at least two contacts");
    }
    let mut ss = 0.0;
    for &((j, k), count) in joint {
        let mut s = all;
        s.add(j, k, -1);
        let ri = s
            .r()
            .map_err(|_| "r is undefined with one contact left out")?;
        ss += count as f64 * (ri - r) * (ri - r);
    }
    Ok(ss.sqrt())
}

/// How many pairs join end degrees (j, k), j <= k, in increasing (j, k).
pub fn joint_degree_counts(a: &[u32], b: &[u32], deg: &[u32]) -> Vec<((u32, u32), u64)> {
    // Pairs whose larger end degree is at most `small` are counted in a dense table (a few
    // hundred degrees at most, in practice: it stays in cache); the rest in a map. Which
    // table counts a pair does not change the result, so the largest degree is read from
    // `deg` in order rather than from the pairs' ends at random.
    let max = deg.iter().copied().max().unwrap_or(0);
    let small = max.min(DENSE_DEGREES) as usize;
    let mut dense = vec![0u64; (small + 1) * (small + 1)];
    let mut sparse: hashbrown::HashMap<(u32, u32), u64> = hashbrown::HashMap::new();
    for (e, (&x, &y)) in a.iter().zip(b).enumerate() {
        second_end_ahead(deg, b, e, 1);
        let (j, k) = (deg[x as usize], deg[y as usize]);
        let (j, k) = (j.min(k), j.max(k));
        if k as usize <= small {
            dense[j as usize * (small + 1) + k as usize] += 1;
        } else {
            *sparse.entry((j, k)).or_insert(0) += 1;
        }
    }
    let mut v: Vec<_> = sparse.into_iter().collect();
    v.extend(
        dense
            .iter()
            .enumerate()
            .filter(|(_, &c)| c > 0)
            .map(|(i, &c)| {
                let (j, k) = (i / (small + 1), i % (small + 1));
                ((j as u32, k as u32), c)
            }),
    );
    v.sort_unstable();
    v
}

/// Degrees up to this are counted in [`joint_degree_counts`]'s dense table (4 MiB at most).
const DENSE_DEGREES: u32 = 723;

/// r of degree-preserving randomisations of the network (the configuration model with the
/// observed degrees): mean and standard deviation over `replicates`.
#[derive(Debug, Clone, PartialEq)]
pub struct NullModel {
    /// Mean r over replicates.
    pub mean: Stat,
    /// Standard deviation (n - 1) of r over replicates.
    pub sd: Stat,
    /// Replicates run.
    pub replicates: usize,
    /// Swap attempts per pair in each replicate.
    pub swaps_per_edge: usize,
    /// Share of attempted swaps accepted (over all replicates).
    pub acceptance: f64,
}

/// Randomise by double-edge swaps — (u,v),(x,y) -> (u,y),(x,v), rejected when it would make a
/// self-loop or a repeated pair — keeping every degree; seeded, so reproducible.
pub fn null_model(
    a: &[u32],
    b: &[u32],
    deg: &[u32],
    replicates: usize,
    swaps_per_edge: usize,
    seed: u64,
) -> NullModel {
    let m = a.len();
    let mut results: Vec<(Option<f64>, u64, u64)> = Vec::new();
    if m >= 2 && replicates > 0 {
        // Replicates are independent, each with its own random stream derived from the seed, so
        // they run on all cores and the result does not depend on how many there are.
        let threads = std::thread::available_parallelism()
            .map_or(1, |n| n.get())
            .min(replicates);
        let mut slots: Vec<Option<(Option<f64>, u64, u64)>> = vec![None; replicates];
        std::thread::scope(|sc| {
            for (t, chunk) in slots.chunks_mut(replicates.div_ceil(threads)).enumerate() {
                let first = t * replicates.div_ceil(threads);
                sc.spawn(move || {
                    for (i, slot) in chunk.iter_mut().enumerate() {
                        *slot = Some(randomise(
                            a,
                            b,
                            deg,
                            swaps_per_edge,
                            seed,
                            (first + i) as u64,
                        ));
                    }
                });
            }
        });
        results = slots.into_iter().flatten().collect();
    }
    let rs: Vec<f64> = results.iter().filter_map(|r| r.0).collect();
    let (tried, done) = results
        .iter()
        .fold((0u64, 0u64), |(t, d), r| (t + r.1, d + r.2));
    let n = rs.len() as f64;
    let mean: Stat = if rs.is_empty() {
        Err("no replicate with a defined r")
    } else {
        Ok(rs.iter().sum::<f64>() / n)
    };
    let sd: Stat = match mean {
        Ok(mu) if rs.len() >= 2 => {
            Ok((rs.iter().map(|r| (r - mu) * (r - mu)).sum::<f64>() / (n - 1.0)).sqrt())
        }
        Ok(_) => Err("needs at least two replicates"),
        Err(e) => Err(e),
    };
    NullModel {
        mean,
        sd,
        replicates,
        swaps_per_edge,
        acceptance: if tried > 0 {
            done as f64 / tried as f64
        } else {
            0.0
        },
    }
}

/// One randomisation: (r, swaps tried, swaps done).
fn randomise(
    a: &[u32],
    b: &[u32],
    deg: &[u32],
    swaps_per_edge: usize,
    seed: u64,
    replicate: u64,
) -> (Option<f64>, u64, u64) {
    let m = a.len();
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    rng.set_stream(replicate);
    let mut ea = a.to_vec();
    let mut eb = b.to_vec();
    let key = |x: u32, y: u32| {
        if x < y {
            u64::from(x) << 32 | u64::from(y)
        } else {
            u64::from(y) << 32 | u64::from(x)
        }
    };
    let mut present: hashbrown::HashSet<u64> =
        ea.iter().zip(&eb).map(|(&x, &y)| key(x, y)).collect();
    let (mut tried, mut done) = (0u64, 0u64);
    for _ in 0..m * swaps_per_edge {
        tried += 1;
        let i = rng.random_range(0..m);
        let j = rng.random_range(0..m);
        if i == j {
            continue;
        }
        let (u, v) = (ea[i], eb[i]);
        let (x, y) = if rng.random_bool(0.5) {
            (ea[j], eb[j])
        } else {
            (eb[j], ea[j])
        };
        if u == y || x == v || present.contains(&key(u, y)) || present.contains(&key(x, v)) {
            continue;
        }
        present.remove(&key(u, v));
        present.remove(&key(x, y));
        present.insert(key(u, y));
        present.insert(key(x, v));
        (ea[i], eb[i]) = (u, y);
        (ea[j], eb[j]) = (x, v);
        done += 1;
    }
    (assortativity(&ea, &eb, deg).ok(), tried, done)
}

/// Mixing by a categorical attribute of people.
#[derive(Debug, Clone, PartialEq)]
pub struct AttributeMixing {
    /// Group labels, sorted.
    pub groups: Vec<String>,
    /// `pairs[g][h]`: contact pairs between groups g and h; symmetric, and a pair within group
    /// g counts once in `pairs[g][g]`.
    pub pairs: Vec<Vec<u64>>,
    /// Pairs left out because one end has no value.
    pub unknown: u64,
    /// Attribute assortativity (Newman 2003, eq. 2): (sum e_ii - sum a_i^2) / (1 - sum a_i^2).
    pub r: Stat,
}

/// One categorical attribute of people, for [`attribute_mixing`].
pub struct Grouping<'a> {
    /// Each person's value code; `missing`, or no entry (people past the end), for none.
    pub codes: &'a [u32],
    /// The code of a missing value.
    pub missing: u32,
    /// The group of each value code (groups numbered as `labels` are listed).
    pub group: Vec<u32>,
    /// The groups' labels.
    pub labels: Vec<String>,
}

/// No group (a missing value) in the pass's table of every person's groups (16-bit: at most
/// [`MAX_GROUPS`] groups, and a smaller table keeps more of itself in cache).
const NO_GROUP: u16 = u16::MAX;

/// Per attribute: pairs counted by the groups of their ends (row p, column q: a pair between p
/// and q counts in both cells), the pairs with both groups known, and the others.
type Counted = (Vec<u64>, u64, u64);

/// Count the pairs by the groups of their ends under every attribute in one pass: each
/// person's groups side by side in one table (so a pair reads one line per end, not one per
/// end and attribute; the first ends come in order, since `a` is sorted).
fn count_pairs((a, b): (&[u32], &[u32]), people: usize, attrs: &[Grouping]) -> Vec<Counted> {
    let k = attrs.len();
    let mut table = vec![NO_GROUP; people * k];
    for (t, at) in attrs.iter().enumerate() {
        for (row, &c) in table.chunks_exact_mut(k).zip(at.codes) {
            if c != at.missing {
                row[t] = at.group[c as usize] as u16;
            }
        }
    }
    let mut out: Vec<Counted> = attrs
        .iter()
        .map(|at| (vec![0u64; at.labels.len().pow(2)], 0, 0))
        .collect();
    for (e, (&x, &y)) in a.iter().zip(b).enumerate() {
        second_end_ahead(&table, b, e, k);
        let (rx, ry) = (x as usize * k, y as usize * k);
        for (t, (pairs, known, unknown)) in out.iter_mut().enumerate() {
            let (p, q) = (table[rx + t], table[ry + t]);
            if p == NO_GROUP || q == NO_GROUP {
                *unknown += 1;
                continue;
            }
            let (p, q, g) = (usize::from(p), usize::from(q), attrs[t].labels.len());
            pairs[p * g + q] += 1;
            if p != q {
                pairs[q * g + p] += 1;
            }
            *known += 1;
        }
    }
    out
}

/// Attributes with more groups than this get no mixing table (it would hold the square of
/// their number: 128 MiB here), and so no r.
pub const MAX_GROUPS: usize = 4096;

/// Mixing by each of `attrs` over the pairs, counted in one pass (an attribute with more than
/// [`MAX_GROUPS`] groups gets no table and r says why).
pub fn attribute_mixing(
    (a, b): (&[u32], &[u32]),
    people: usize,
    attrs: Vec<Grouping>,
) -> Vec<AttributeMixing> {
    let (counted, too_many): (Vec<_>, Vec<_>) = attrs
        .into_iter()
        .enumerate()
        .partition(|(_, at)| at.labels.len() <= MAX_GROUPS);
    let (order, counted): (Vec<usize>, Vec<Grouping>) = counted.into_iter().unzip();
    let counts = match counted.is_empty() {
        true => Vec::new(),
        false => count_pairs((a, b), people, &counted),
    };
    let mut out: Vec<(usize, AttributeMixing)> = order
        .into_iter()
        .zip(counted.into_iter().zip(counts))
        .map(|(i, (at, c))| (i, mixing_of(at.labels, c)))
        .collect();
    out.extend(too_many.into_iter().map(|(i, _)| {
        let m = AttributeMixing {
            groups: Vec::new(),
            pairs: Vec::new(),
            unknown: 0,
            r: Err("more than 4096 groups: no mixing table"),
        };
        (i, m)
    }));
    out.sort_by_key(|(i, _)| *i);
    out.into_iter().map(|(_, m)| m).collect()
}

/// Mixing and r from the pairs counted by their ends' groups.
fn mixing_of(labels: Vec<String>, (flat, known, unknown): Counted) -> AttributeMixing {
    let g = labels.len();
    let pairs: Vec<Vec<u64>> = flat.chunks(g.max(1)).map(<[u64]>::to_vec).collect();
    let pairs = if g == 0 { Vec::new() } else { pairs };
    let r = if known == 0 {
        Err("no contact with the attribute known at both ends")
    } else {
        // e_pq over ordered edge ends: a pair within p adds 2 to e_pp; between p and q adds 1 to each.
        let ends = 2.0 * known as f64;
        let e = |p: usize, q: usize| {
            if p == q {
                2.0 * pairs[p][p] as f64 / ends
            } else {
                pairs[p][q] as f64 / ends
            }
        };
        let trace: f64 = (0..g).map(|p| e(p, p)).sum();
        let sum_a2: f64 = (0..g)
            .map(|p| (0..g).map(|q| e(p, q)).sum::<f64>().powi(2))
            .sum();
        if (1.0 - sum_a2).abs() < 1e-15 {
            Err("all contacts fall in one group")
        } else {
            Ok((trace - sum_a2) / (1.0 - sum_a2))
        }
    };
    AttributeMixing {
        groups: labels,
        pairs,
        unknown,
        r,
    }
}
