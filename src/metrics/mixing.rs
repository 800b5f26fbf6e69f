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
    for (&x, &y) in a.iter().zip(b) {
        s.add(deg[x as usize], deg[y as usize], 1);
    }
    s
}

/// Degree assortativity r over the pairs `(a[e], b[e])` with degrees `deg`.
pub fn assortativity(a: &[u32], b: &[u32], deg: &[u32]) -> Stat {
    sums(a, b, deg).r()
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
    for (&x, &y) in a.iter().zip(b) {
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

/// Pairs counted by the groups of their ends (row p, column q: a pair between p and q counts
/// in both cells), the pairs with both groups known, and the others.
fn count_pairs(
    a: &[u32],
    b: &[u32],
    g: usize,
    group: impl Fn(u32) -> Option<usize>,
) -> (Vec<u64>, u64, u64) {
    let mut pairs = vec![0u64; g * g];
    let (mut known, mut unknown) = (0u64, 0u64);
    for (&x, &y) in a.iter().zip(b) {
        match (group(x), group(y)) {
            (Some(p), Some(q)) => {
                pairs[p * g + q] += 1;
                if p != q {
                    pairs[q * g + p] += 1;
                }
                known += 1;
            }
            _ => unknown += 1,
        }
    }
    (pairs, known, unknown)
}

/// Mixing by `group[i]` (None = unknown) over the pairs.
pub fn attribute_mixing(
    a: &[u32],
    b: &[u32],
    group: &[Option<u32>],
    labels: Vec<String>,
) -> AttributeMixing {
    let g = labels.len();
    // The groups as 16-bit codes where they fit (a handful of groups, millions of people): the
    // pass reads two of them per pair at random, and a quarter of the bytes stays in cache.
    let (flat, known, unknown) = if g < usize::from(u16::MAX) {
        let small: Vec<u16> = group
            .iter()
            .map(|x| x.map_or(u16::MAX, |v| v as u16))
            .collect();
        count_pairs(a, b, g, |v| {
            let c = small[v as usize];
            (c != u16::MAX).then_some(c as usize)
        })
    } else {
        count_pairs(a, b, g, |v| group[v as usize].map(|c| c as usize))
    };
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
