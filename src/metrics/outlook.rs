//! Epidemic indicators on a configuration-model network with the observed degree distribution
//! (Newman 2002, Phys. Rev. E 66:016128; Molloy & Reed 1995): threshold transmissibility, R0,
//! expected final size, take-off probability (overall and by index degree) and the mean outbreak
//! size below threshold. Model-based: a traced network is sampled, clustered and
//! degree-correlated, and every report of these figures says so.
//!
//! G0(x) = sum p_k x^k, G1(x) = G0'(x)/G0'(1); u is the smallest root in [0, 1] of
//! u = G1(1 - T + T u), found by Newton's method from 0 to a tolerance (never a fixed count: near
//! the threshold plain iteration is very slow); S = 1 - G0(1 - T + T u).

use super::Stat;

/// Indicators at one transmissibility T.
#[derive(Debug, Clone, PartialEq)]
pub struct Outlook {
    /// Transmissibility used.
    pub t: f64,
    /// Mean excess degree kappa = (<k^2> - <k>)/<k>.
    pub kappa: Stat,
    /// Threshold transmissibility 1/kappa.
    pub threshold: Stat,
    /// R0 = T kappa.
    pub r0: Stat,
    /// Probability that a contact does not lead to a large outbreak.
    pub u: Stat,
    /// Expected final size (share of people), S = 1 - G0(1 - T + T u).
    pub final_size: Stat,
    /// Probability of a large outbreak from a random index person (= S for uniform T).
    pub takeoff_probability: Stat,
    /// Mean outbreak size below threshold, 1 + T<k>/(1 - T kappa).
    pub mean_outbreak_size: Stat,
}

fn g0(p: &[f64], x: f64) -> f64 {
    p.iter().rev().fold(0.0, |acc, &pk| acc * x + pk)
}

/// G1(x) = sum_k (k+1) p_{k+1} x^k / <k>.
fn g1(p: &[f64], mean: f64, x: f64) -> f64 {
    (1..p.len())
        .rev()
        .fold(0.0, |acc, k| acc * x + k as f64 * p[k])
        / mean
}

/// G1'(x) = sum_k k (k-1) p_k x^(k-2) / <k>.
fn g1_prime(p: &[f64], mean: f64, x: f64) -> f64 {
    (2..p.len())
        .rev()
        .fold(0.0, |acc, k| acc * x + (k * (k - 1)) as f64 * p[k])
        / mean
}

/// Smallest root in [0, 1) of f(u) = G1(1 - T + T u) - u when T kappa > 1.
fn smallest_root(p: &[f64], mean: f64, t: f64) -> Option<f64> {
    smallest_fixed_point(&|u| g1(p, mean, 1.0 - t + t * u), &|u| {
        t * g1_prime(p, mean, 1.0 - t + t * u)
    })
}

/// Smallest fixed point u = F(u) in [0, 1) of a convex, increasing F with F(1) = 1 and
/// F'(1) > 1 (a generating-function equation above its threshold); `fp` is F'.
///
/// f(u) = F(u) - u is convex on [0, 1] with f(0) >= 0, f(1) = 0 and f'(1) > 0, so f' < 0 left of
/// the smallest root and Newton's method started at 0 climbs to it monotonically (quadratically
/// once close; about halving the gap per step when the root is nearly double, just above the
/// threshold). Steps stop at a tolerance of 1e-15 on u, not after a fixed count; if rounding ever
/// breaks monotonicity the bracket [lo, 1) is bisected instead.
pub(crate) fn smallest_fixed_point(
    big_f: &dyn Fn(f64) -> f64,
    fp: &dyn Fn(f64) -> f64,
) -> Option<f64> {
    let f = |u: f64| big_f(u) - u;
    let mut u = 0.0f64;
    for _ in 0..500 {
        let fu = f(u);
        if fu <= 0.0 {
            return Some(u);
        }
        let slope = fp(u) - 1.0;
        let next = if slope < 0.0 { u - fu / slope } else { 1.0 };
        if !(next > u && next < 1.0) {
            return bisect(&f, u);
        }
        if next - u <= 1e-15 {
            return Some(next);
        }
        u = next;
    }
    bisect(&f, u)
}

/// Bisection for the sign change of `f` in [lo, 1): f(lo) > 0 and f < 0 just below 1.
fn bisect(f: &dyn Fn(f64) -> f64, lo: f64) -> Option<f64> {
    // Find a point below 1 where f is negative.
    let mut hi = 1.0 - 1e-3 * (1.0 - lo);
    let mut tries = 0;
    while f(hi) >= 0.0 {
        hi = 1.0 - (1.0 - hi) * 1e-2;
        tries += 1;
        if tries > 8 || hi >= 1.0 {
            return None;
        }
    }
    let mut lo = lo;
    while hi - lo > 1e-15 {
        let mid = 0.5 * (lo + hi);
        if mid <= lo || mid >= hi {
            break;
        }
        if f(mid) > 0.0 {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    Some(0.5 * (lo + hi))
}

/// Indicators for the degree distribution `p` (p[k] = share of people with k contacts).
pub fn indicators(p: &[f64], t: f64) -> Outlook {
    let mean: f64 = p.iter().enumerate().map(|(k, &pk)| k as f64 * pk).sum();
    let mean_sq: f64 = p
        .iter()
        .enumerate()
        .map(|(k, &pk)| (k * k) as f64 * pk)
        .sum();
    let none = |why: &'static str| Outlook {
        t,
        kappa: Err(why),
        threshold: Err(why),
        r0: Err(why),
        u: Err(why),
        final_size: Err(why),
        takeoff_probability: Err(why),
        mean_outbreak_size: Err(why),
    };
    if !(0.0..=1.0).contains(&t) {
        return none("transmissibility must lie between 0 and 1");
    }
    if p.is_empty() || mean <= 0.0 {
        return none("no contacts (mean degree 0)");
    }
    let kappa = (mean_sq - mean) / mean;
    let threshold: Stat = if kappa > 0.0 {
        Ok(1.0 / kappa)
    } else {
        Err("no epidemic possible: every person has at most one contact")
    };
    let r0 = t * kappa;
    let mean_size: Stat = if r0 < 1.0 {
        Ok(1.0 + t * mean / (1.0 - t * kappa))
    } else {
        Err("at or above the threshold (R0 >= 1)")
    };
    // At or below threshold the smallest root is u = 1: no large outbreak.
    // At or below threshold the smallest root is u = 1: no large outbreak.
    let (u, s): (Stat, Stat) = if r0 <= 1.0 {
        (Ok(1.0), Ok(0.0))
    } else {
        match smallest_root(p, mean, t) {
            Some(u) => (Ok(u), Ok(1.0 - g0(p, 1.0 - t + t * u))),
            None => (
                Err("did not converge (too close to the threshold)"),
                Err("did not converge (too close to the threshold)"),
            ),
        }
    };
    Outlook {
        t,
        kappa: Ok(kappa),
        threshold,
        r0: Ok(r0),
        u,
        final_size: s,
        takeoff_probability: s,
        mean_outbreak_size: mean_size,
    }
}

/// Probability that an outbreak started by an index person with `k` contacts takes off:
/// 1 - (1 - T + T u)^k.
pub fn takeoff_by_degree(o: &Outlook, k: u32) -> Stat {
    o.u.map(|u| 1.0 - (1.0 - o.t + o.t * u).powi(k as i32))
}

/// S and R0 over a grid of `points` values of T from 0 to 1 (for curves and the dashboard).
pub fn curve(p: &[f64], points: usize) -> Vec<Outlook> {
    let n = points.max(2);
    (0..n)
        .map(|i| indicators(p, i as f64 / (n - 1) as f64))
        .collect()
}
