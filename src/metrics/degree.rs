//! Degree distribution p_k, its moments, and the excess degree distribution q_k.
//!
//! q_k = (k+1) p_{k+1} / <k> is the distribution of the number of *other* contacts of a person
//! reached along a random exposure (Newman, Strogatz & Watts 2001). Its mean, the mean excess
//! degree, is (<k^2> - <k>)/<k>; a contact reached that way has on average <k^2>/<k> contacts,
//! which exceeds <k> by Var(k)/<k> (Feld 1991).

use super::Stat;
use crate::graph::Adjacency;

/// Degrees and their summary.
#[derive(Debug, Clone, PartialEq)]
pub struct DegreeStats {
    /// People (N, isolated ones included).
    pub n: usize,
    /// Distinct pairs (M).
    pub m: usize,
    /// `histogram[k]` = number of people with k contacts.
    pub histogram: Vec<u64>,
    /// <k> (undefined for N = 0).
    pub mean: Stat,
    /// <k^2>.
    pub mean_sq: Stat,
    /// Var(k) = <k^2> - <k>^2 (population).
    pub variance: Stat,
    /// Largest degree.
    pub max: u32,
    /// <k^2>/<k>: mean degree at the end of a random exposure (undefined for M = 0).
    pub edge_end_mean: Stat,
    /// Mean excess degree (<k^2> - <k>)/<k>.
    pub mean_excess: Stat,
    /// Var(k)/<k> = <k^2>/<k> - <k>.
    pub gap: Stat,
}

/// Degree of every person in the adjacency.
pub fn degrees(g: &Adjacency) -> Vec<u32> {
    crate::graph::degrees(g)
}

/// Compute the degree statistics from the degree sequence.
pub fn degree_stats(deg: &[u32]) -> DegreeStats {
    let n = deg.len();
    let max = deg.iter().copied().max().unwrap_or(0);
    let mut histogram = vec![0u64; max as usize + 1];
    let (mut s1, mut s2) = (0u128, 0u128);
    for &k in deg {
        histogram[k as usize] += 1;
        s1 += u128::from(k);
        s2 += u128::from(k) * u128::from(k);
    }
    let m = (s1 / 2) as usize;
    if n == 0 {
        let u = Err("no people");
        return DegreeStats {
            n,
            m,
            histogram: Vec::new(),
            mean: u,
            mean_sq: u,
            variance: u,
            max,
            edge_end_mean: u,
            mean_excess: u,
            gap: u,
        };
    }
    let nf = n as f64;
    let mean = s1 as f64 / nf;
    let mean_sq = s2 as f64 / nf;
    // Var from integer sums: (N*S2 - S1^2) / N^2, exact before the final division.
    let variance = (n as u128 * s2 - s1 * s1) as f64 / (nf * nf);
    let (edge_end_mean, mean_excess, gap) = if s1 == 0 {
        let u = Err("no contacts (every person has degree 0)");
        (u, u, u)
    } else {
        let eem = s2 as f64 / s1 as f64;
        (
            Ok(eem),
            Ok((s2 - s1) as f64 / s1 as f64),
            Ok(variance / mean),
        )
    };
    DegreeStats {
        n,
        m,
        histogram,
        mean: Ok(mean),
        mean_sq: Ok(mean_sq),
        variance: Ok(variance),
        max,
        edge_end_mean,
        mean_excess,
        gap,
    }
}

impl DegreeStats {
    /// p_k for k = 0..=max (sums to 1; empty for N = 0).
    pub fn p(&self) -> Vec<f64> {
        self.histogram
            .iter()
            .map(|&c| c as f64 / self.n as f64)
            .collect()
    }

    /// q_k for k = 0..max-1: (k+1) n_{k+1} / (2M); empty when there are no contacts.
    pub fn q(&self) -> Vec<f64> {
        let ends: u64 = self
            .histogram
            .iter()
            .enumerate()
            .map(|(k, &c)| k as u64 * c)
            .sum();
        if ends == 0 {
            return Vec::new();
        }
        (0..self.histogram.len().saturating_sub(1))
            .map(|k| (k as u64 + 1) as f64 * self.histogram[k + 1] as f64 / ends as f64)
            .collect()
    }
}
