//! Fitting count distributions (degrees, or secondary cases per case) by maximum likelihood:
//! Poisson, geometric, negative binomial (mean R, dispersion k; Lloyd-Smith et al. 2005,
//! Nature 438:355) with a profile-likelihood interval for k, and a discrete power-law tail
//! (Clauset, Shalizi & Newman 2009, SIAM Rev. 51:661) with x_min chosen by the KS distance.
//! Also the share of cases causing 80% of transmission: empirical, continuous (gamma
//! individual reproduction numbers, Lloyd-Smith) and discrete (negative-binomial offspring,
//! Endo et al. 2020, Wellcome Open Res. 5:67). Special functions from statrs.

use statrs::function::gamma::{checked_gamma_lr, ln_gamma};

use super::Stat;

/// Values and how often each occurs (`counts[x]` = number of observations equal to x).
#[derive(Debug, Clone)]
pub struct Sample {
    counts: Vec<u64>,
    n: u64,
    sum: f64,
}

impl Sample {
    /// From a histogram (index = value).
    pub fn from_counts(counts: Vec<u64>) -> Sample {
        let n = counts.iter().sum();
        let sum = counts
            .iter()
            .enumerate()
            .map(|(x, &c)| x as f64 * c as f64)
            .sum();
        Sample { counts, n, sum }
    }

    /// From raw values.
    pub fn from_values(values: &[u64]) -> Sample {
        let max = values.iter().copied().max().unwrap_or(0) as usize;
        let mut counts = vec![0u64; if values.is_empty() { 0 } else { max + 1 }];
        for &v in values {
            counts[v as usize] += 1;
        }
        Sample::from_counts(counts)
    }

    /// Number of observations.
    pub fn n(&self) -> u64 {
        self.n
    }

    /// Sample mean.
    pub fn mean(&self) -> Stat {
        if self.n == 0 {
            Err("no observations")
        } else {
            Ok(self.sum / self.n as f64)
        }
    }

    /// Population variance (divide by n).
    fn variance_pop(&self) -> f64 {
        let m = self.sum / self.n as f64;
        self.iter().map(|(x, c)| c * (x - m) * (x - m)).sum::<f64>() / self.n as f64
    }

    fn iter(&self) -> impl Iterator<Item = (f64, f64)> + '_ {
        self.counts
            .iter()
            .enumerate()
            .filter(|(_, &c)| c > 0)
            .map(|(x, &c)| (x as f64, c as f64))
    }
}

/// One fitted model.
#[derive(Debug, Clone, PartialEq)]
pub struct Fit {
    /// Model name.
    pub model: &'static str,
    /// Parameters by name.
    pub params: Vec<(&'static str, Stat)>,
    /// Maximised log-likelihood.
    pub log_lik: Stat,
    /// Akaike information criterion, 2p - 2 logL (lower is better).
    pub aic: Stat,
}

impl Fit {
    /// Probability of the value `x` under the fitted model (Poisson, geometric, negative
    /// binomial with mean R and dispersion k); undefined where a parameter is.
    pub fn pmf(&self, x: u64) -> Stat {
        let param = |name: &str| {
            self.params
                .iter()
                .find(|(n, _)| *n == name)
                .map(|(_, v)| *v)
                .unwrap_or(Err("missing parameter"))
        };
        let x = x as f64;
        match self.model {
            "poisson" => param("lambda").map(|l| {
                if l == 0.0 {
                    f64::from(u8::from(x == 0.0))
                } else {
                    (x * l.ln() - l - ln_gamma(x + 1.0)).exp()
                }
            }),
            "geometric" => param("p").map(|p| p * (1.0 - p).powf(x)),
            "negative_binomial" => {
                let (r, k) = (param("R")?, param("k")?);
                if r == 0.0 {
                    return Ok(f64::from(u8::from(x == 0.0)));
                }
                Ok((ln_gamma(x + k) - ln_gamma(k) - ln_gamma(x + 1.0)
                    + k * (k / (k + r)).ln()
                    + x * (r / (k + r)).ln())
                .exp())
            }
            _ => Err("no probability function for this model"),
        }
    }
}

fn fit(model: &'static str, params: Vec<(&'static str, Stat)>, p: usize, log_lik: Stat) -> Fit {
    Fit {
        model,
        params,
        log_lik,
        aic: log_lik.map(|l| 2.0 * p as f64 - 2.0 * l),
    }
}

/// Poisson: lambda = mean.
pub fn poisson(s: &Sample) -> Fit {
    let ll = s.mean().map(|lambda| {
        if lambda == 0.0 {
            return 0.0;
        }
        s.iter()
            .map(|(x, c)| c * (x * lambda.ln() - lambda - ln_gamma(x + 1.0)))
            .sum()
    });
    fit("poisson", vec![("lambda", s.mean())], 1, ll)
}

/// Geometric on {0, 1, ...}: p = 1/(1 + mean).
pub fn geometric(s: &Sample) -> Fit {
    let p = s.mean().map(|m| 1.0 / (1.0 + m));
    let ll = p.map(|p| {
        if p == 1.0 {
            0.0
        } else {
            s.iter()
                .map(|(x, c)| c * (p.ln() + x * (1.0 - p).ln()))
                .sum()
        }
    });
    fit("geometric", vec![("p", p)], 1, ll)
}

/// Negative-binomial log-likelihood at mean `r` and dispersion `k`.
pub fn nb_log_lik(s: &Sample, r: f64, k: f64) -> f64 {
    let (lk, lkr, lr) = (k.ln(), (k + r).ln(), r.ln());
    s.iter()
        .map(|(x, c)| {
            c * (ln_gamma(x + k) - ln_gamma(k) - ln_gamma(x + 1.0)
                + k * (lk - lkr)
                + if x > 0.0 { x * (lr - lkr) } else { 0.0 })
        })
        .sum()
}

/// Maximise a unimodal function on [a, b] by golden-section search.
fn golden_max(f: impl Fn(f64) -> f64, mut a: f64, mut b: f64, tol: f64) -> f64 {
    let g = (5f64.sqrt() - 1.0) / 2.0;
    let (mut c, mut d) = (b - g * (b - a), a + g * (b - a));
    let (mut fc, mut fd) = (f(c), f(d));
    while (b - a).abs() > tol {
        if fc > fd {
            b = d;
            d = c;
            fd = fc;
            c = b - g * (b - a);
            fc = f(c);
        } else {
            a = c;
            c = d;
            fc = fd;
            d = a + g * (b - a);
            fd = f(d);
        }
    }
    (a + b) / 2.0
}

/// Find x in [a, b] with f(x) = 0 by bisection, given f(a) and f(b) of opposite signs.
fn bisect(f: impl Fn(f64) -> f64, mut a: f64, mut b: f64) -> f64 {
    let mut fa = f(a);
    for _ in 0..200 {
        let m = 0.5 * (a + b);
        let fm = f(m);
        if (fm > 0.0) == (fa > 0.0) {
            a = m;
            fa = fm;
        } else {
            b = m;
        }
        if (b - a).abs() <= 1e-15 * m.abs().max(1e-300) {
            break;
        }
    }
    0.5 * (a + b)
}

/// Half the 95% quantile of chi-squared with one degree of freedom (1.959963984540054^2 / 2).
const PROFILE_DROP: f64 = 1.959963984540054 * 1.959963984540054 / 2.0;

/// The negative-binomial fit: R = mean (exact MLE), k by the profile likelihood on log k, and
/// the 95% profile interval for k (either end may be missing).
#[derive(Debug, Clone, PartialEq)]
pub struct NegBin {
    /// The fit (parameters R and k).
    pub fit: Fit,
    /// Lower end of the 95% profile interval for k.
    pub k_low: Stat,
    /// Upper end (undefined when the likelihood never drops far enough: no upper end).
    pub k_high: Stat,
}

/// Fit the negative binomial. Variance <= mean means no overdispersion: k is infinite and the
/// Poisson fit applies, so k is reported undefined with that reason, never a huge number.
pub fn negative_binomial(s: &Sample) -> NegBin {
    let undefined = |why: &'static str| NegBin {
        fit: fit(
            "negative_binomial",
            vec![("R", s.mean()), ("k", Err(why))],
            2,
            Err(why),
        ),
        k_low: Err(why),
        k_high: Err(why),
    };
    let Ok(r) = s.mean() else {
        return undefined("no observations");
    };
    if r == 0.0 {
        return undefined("no transmission observed (all zeros)");
    }
    if s.variance_pop() <= r {
        return undefined(
            "no overdispersion detected (variance <= mean): k is infinite, see the Poisson fit",
        );
    }
    let prof = |t: f64| nb_log_lik(s, r, t.exp());
    let t = golden_max(prof, -25.0, 25.0, 1e-12);
    let (k, max) = (t.exp(), prof(t));
    let target = max - PROFILE_DROP;
    let k_low = if prof(-25.0) < target {
        Ok(bisect(|u| prof(u) - target, -25.0, t).exp())
    } else {
        Err("no lower end")
    };
    let k_high = if prof(25.0) < target {
        Ok(bisect(|u| prof(u) - target, t, 25.0).exp())
    } else {
        Err("no upper end (consistent with no overdispersion)")
    };
    NegBin {
        fit: fit(
            "negative_binomial",
            vec![("R", Ok(r)), ("k", Ok(k))],
            2,
            Ok(max),
        ),
        k_low,
        k_high,
    }
}

/// Hurwitz zeta(s, q) = sum_{n>=0} (q + n)^-s for s > 1, q > 0, by Euler-Maclaurin summation.
pub fn hurwitz_zeta(s: f64, q: f64) -> f64 {
    const N: usize = 12;
    // B_2j / (2j)! for j = 1..7.
    const B: [f64; 7] = [
        1.0 / 12.0,
        -1.0 / 720.0,
        1.0 / 30240.0,
        -1.0 / 1209600.0,
        1.0 / 47900160.0,
        -691.0 / 1307674368000.0,
        1.0 / 74724249600.0,
    ];
    let mut sum: f64 = (0..N).map(|n| (q + n as f64).powf(-s)).sum();
    let a = q + N as f64;
    sum += a.powf(1.0 - s) / (s - 1.0) + 0.5 * a.powf(-s);
    // Rising factorial s(s+1)...(s+2j-2) times a^(-s-2j+1).
    let mut rising = s;
    let mut pow = a.powf(-s - 1.0);
    for (j, b) in B.iter().enumerate() {
        sum += b * rising * pow;
        let m = 2.0 * j as f64 + 1.0;
        rising *= (s + m) * (s + m + 1.0);
        pow /= a * a;
    }
    sum
}

/// A discrete power-law tail fit at one x_min.
#[derive(Debug, Clone, PartialEq)]
pub struct PowerLaw {
    /// Smallest value in the tail.
    pub x_min: u64,
    /// Observations in the tail.
    pub n_tail: u64,
    /// Exponent alpha (maximum likelihood).
    pub alpha: f64,
    /// Standard error (alpha - 1)/sqrt(n_tail).
    pub se: f64,
    /// KS distance over every integer from x_min to the largest value.
    pub ks: f64,
    /// Log-likelihood of the tail.
    pub log_lik: f64,
}

/// Fit the tail x >= x_min (values >= 1 only).
pub fn power_law_at(s: &Sample, x_min: u64) -> Option<PowerLaw> {
    let tail: Vec<(f64, f64)> = s
        .iter()
        .filter(|(x, _)| *x >= x_min as f64 && *x >= 1.0)
        .collect();
    let n: f64 = tail.iter().map(|(_, c)| c).sum();
    if n < 1.0 || tail.len() < 2 {
        return None;
    }
    let sum_ln: f64 = tail.iter().map(|(x, c)| c * x.ln()).sum();
    let q = x_min as f64;
    let ll = |a: f64| -a * sum_ln - n * hurwitz_zeta(a, q).ln();
    let alpha = golden_max(ll, 1.0 + 1e-9, 20.0, 1e-11);
    let z = hurwitz_zeta(alpha, q);
    let max = tail.last().map(|t| t.0 as u64).unwrap_or(x_min);
    let (mut ks, mut below) = (0.0f64, 0.0);
    let mut it = tail.iter().peekable();
    for x in x_min..=max {
        while let Some(&&(v, c)) = it.peek() {
            if v as u64 <= x {
                below += c;
                it.next();
            } else {
                break;
            }
        }
        let fit_cdf = 1.0 - hurwitz_zeta(alpha, x as f64 + 1.0) / z;
        ks = ks.max((below / n - fit_cdf).abs());
    }
    Some(PowerLaw {
        x_min,
        n_tail: n as u64,
        alpha,
        se: (alpha - 1.0) / n.sqrt(),
        ks,
        log_lik: ll(alpha),
    })
}

/// Choose x_min among the distinct values (not the largest), with at least `min_tail`
/// observations in the tail, by the smallest KS distance.
pub fn power_law(s: &Sample, min_tail: u64) -> Result<PowerLaw, &'static str> {
    let values: Vec<u64> = s
        .iter()
        .map(|(x, _)| x as u64)
        .filter(|&x| x >= 1)
        .collect();
    if values.len() < 2 {
        return Err("fewer than two distinct values of at least 1");
    }
    values[..values.len() - 1]
        .iter()
        .filter_map(|&x| power_law_at(s, x))
        .filter(|p| p.n_tail >= min_tail)
        .min_by(|a, b| a.ks.total_cmp(&b.ks))
        .ok_or("no tail with enough observations")
}

/// Smallest share of cases that together cause 80% of the observed secondary cases (counts
/// sorted from the largest, the boundary case counted in part).
pub fn share80_empirical(s: &Sample) -> Stat {
    if s.sum == 0.0 {
        return Err("no transmission observed");
    }
    let target = 0.8 * s.sum;
    let (mut acc, mut cases) = (0.0, 0.0);
    for (x, c) in s.iter().collect::<Vec<_>>().into_iter().rev() {
        if acc + x * c >= target {
            return Ok((cases + (target - acc) / x) / s.n as f64);
        }
        acc += x * c;
        cases += c;
    }
    Ok(cases / s.n as f64)
}

/// The regularised lower incomplete gamma P(a, x), 0 for x <= 0 (statrs refuses x = 0), and
/// NaN for invalid arguments rather than a panic.
fn gamma_lr(a: f64, x: f64) -> f64 {
    if x <= 0.0 {
        return 0.0;
    }
    checked_gamma_lr(a, x).unwrap_or(f64::NAN)
}

/// u with P(a, u) = p (regularised lower incomplete gamma), by bisection.
fn gamma_quantile(a: f64, p: f64) -> f64 {
    let mut hi = a.max(1.0);
    while gamma_lr(a, hi) < p && hi < 1e300 {
        hi *= 2.0;
    }
    bisect(|u| gamma_lr(a, u) - p, 0.0, hi)
}

/// Share of transmission caused by the most infectious share `x` of cases when individual
/// reproduction numbers are gamma with shape k (Lloyd-Smith): t(x) = 1 - F_{k+1}(F_k^-1(1-x)).
pub fn top_share_continuous(k: f64, x: f64) -> f64 {
    1.0 - gamma_lr(k + 1.0, gamma_quantile(k, 1.0 - x))
}

/// Share of cases causing 80% of transmission, continuous form: x = 1 - F_k(F_{k+1}^-1(0.2)).
pub fn share80_continuous(k: f64) -> f64 {
    1.0 - gamma_lr(k, gamma_quantile(k + 1.0, 0.2))
}

/// Share of cases causing 80% of transmission, discrete form (negative-binomial offspring with
/// mean r and dispersion k, ranked by count, the boundary class split in proportion).
pub fn share80_discrete(r: f64, k: f64) -> f64 {
    // pmf by recursion P(z+1) = P(z) (z + k)/(z + 1) * r/(k + r), until the tail is negligible.
    let mut pmf = vec![(k / (k + r)).powf(k)];
    let ratio = r / (k + r);
    while {
        let z = pmf.len() - 1;
        let last = pmf[z];
        z as f64 <= 10.0 * r || last * (z as f64 + 1.0) > 1e-18
    } {
        let z = (pmf.len() - 1) as f64;
        let next = pmf[pmf.len() - 1] * (z + k) / (z + 1.0) * ratio;
        pmf.push(next);
        if pmf.len() > 10_000_000 {
            break;
        }
    }
    // Tr(y) = sum_{z>=y} z P(z) / r ; C(y) = sum_{z>=y} P(z), accumulated from the top.
    let zmax = pmf.len();
    let mut tr = vec![0.0; zmax + 1];
    let mut cc = vec![0.0; zmax + 1];
    for z in (0..zmax).rev() {
        tr[z] = tr[z + 1] + z as f64 * pmf[z] / r;
        cc[z] = cc[z + 1] + pmf[z];
    }
    let x = (1..zmax).rev().find(|&y| tr[y] >= 0.8).unwrap_or(1);
    cc[x + 1] + (0.8 - tr[x + 1]) * r / x as f64
}
