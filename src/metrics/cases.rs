//! Case data: secondary attack rate with its intervals, and serial intervals.
//!
//! SAR = contacts who became cases / contacts at risk (methods sheet §7; CDC, Principles of
//! Epidemiology, Lesson 3). Wilson score interval (Wilson 1927) and exact Clopper-Pearson
//! interval (Clopper & Pearson 1934). Contacts cluster in households, so a binomial interval is
//! too narrow there (Sharker & Kenah 2021): reported with that caution.
//! Serial interval = infectee's onset - infector's onset, in days; negative values are real
//! (pre-symptomatic transmission) and kept (Du et al. 2020); a gamma is fitted by moments only
//! when every interval is positive, otherwise a normal fit is given with a warning.

use statrs::function::beta::checked_beta_reg;

use super::Stat;

/// The 97.5% standard normal quantile (methods sheet: use this, not 1.96).
pub const Z95: f64 = 1.959963984540054;

/// A proportion with its 95% intervals.
#[derive(Debug, Clone, PartialEq)]
pub struct Proportion {
    /// Successes (secondary cases).
    pub x: u64,
    /// Trials (contacts at risk).
    pub n: u64,
    /// x / n.
    pub p: Stat,
    /// Wilson score interval.
    pub wilson: Result<(f64, f64), &'static str>,
    /// Clopper-Pearson exact interval.
    pub clopper_pearson: Result<(f64, f64), &'static str>,
}

/// x of n with both intervals at 95%.
pub fn proportion(x: u64, n: u64) -> Proportion {
    if n == 0 {
        let u = Err("no contacts at risk");
        return Proportion {
            x,
            n,
            p: Err("no contacts at risk"),
            wilson: u,
            clopper_pearson: u,
        };
    }
    let (xf, nf) = (x as f64, n as f64);
    let p = xf / nf;
    let z2 = Z95 * Z95;
    let centre = (p + z2 / (2.0 * nf)) / (1.0 + z2 / nf);
    let half = Z95 / (1.0 + z2 / nf) * (p * (1.0 - p) / nf + z2 / (4.0 * nf * nf)).sqrt();
    let lo = if x == 0 {
        0.0
    } else {
        beta_quantile(0.025, xf, nf - xf + 1.0)
    };
    let hi = if x == n {
        1.0
    } else {
        beta_quantile(0.975, xf + 1.0, nf - xf)
    };
    Proportion {
        x,
        n,
        p: Ok(p),
        wilson: Ok(((centre - half).max(0.0), (centre + half).min(1.0))),
        clopper_pearson: Ok((lo, hi)),
    }
}

/// The `q` quantile of Beta(a, b), by bisection on the regularised incomplete beta.
fn beta_quantile(q: f64, a: f64, b: f64) -> f64 {
    let (mut lo, mut hi) = (0.0f64, 1.0f64);
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if checked_beta_reg(a, b, mid).unwrap_or(f64::NAN) < q {
            lo = mid;
        } else {
            hi = mid;
        }
        if hi - lo < 1e-16 {
            break;
        }
    }
    0.5 * (lo + hi)
}

/// Summary of serial intervals.
#[derive(Debug, Clone, PartialEq)]
pub struct SerialInterval {
    /// Number of infector-infectee pairs with both onset dates.
    pub n: usize,
    /// Mean interval (days).
    pub mean: Stat,
    /// Standard deviation (n - 1).
    pub sd: Stat,
    /// Share of negative intervals.
    pub share_negative: Stat,
    /// Gamma by moments: (shape, scale); only when every interval is > 0.
    pub gamma: Result<(f64, f64), &'static str>,
    /// Normal fit's P(SI < 0), offered when some interval is <= 0.
    pub normal_p_negative: Stat,
}

/// Gamma parameters (shape, scale) with the given mean and SD: mean^2/SD^2 and SD^2/mean.
pub fn gamma_by_moments(mean: f64, sd: f64) -> Result<(f64, f64), &'static str> {
    if sd <= 0.0 || mean <= 0.0 {
        return Err("needs a positive mean and SD");
    }
    Ok((mean * mean / (sd * sd), sd * sd / mean))
}

/// Standard normal CDF via the complementary error function.
fn normal_cdf(z: f64) -> f64 {
    0.5 * statrs::function::erf::erfc(-z / std::f64::consts::SQRT_2)
}

/// Summarise intervals in days.
pub fn serial_interval(days: &[i64]) -> SerialInterval {
    let n = days.len();
    if n == 0 {
        let u: Stat = Err("no infector-infectee pair with both onset dates");
        return SerialInterval {
            n,
            mean: u,
            sd: u,
            share_negative: u,
            gamma: Err("no pairs"),
            normal_p_negative: u,
        };
    }
    let nf = n as f64;
    let mean = days.iter().sum::<i64>() as f64 / nf;
    let sd: Stat = if n < 2 {
        Err("one pair: no SD")
    } else {
        Ok((days.iter().map(|&d| (d as f64 - mean).powi(2)).sum::<f64>() / (nf - 1.0)).sqrt())
    };
    let negatives = days.iter().filter(|&&d| d < 0).count();
    let all_positive = days.iter().all(|&d| d > 0);
    let gamma = match sd {
        Ok(s) if all_positive => gamma_by_moments(mean, s),
        Ok(_) => Err("some intervals are zero or negative: a gamma cannot represent them (see the normal fit)"),
        Err(e) => Err(e),
    };
    let normal_p_negative = match sd {
        Ok(s) if !all_positive && s > 0.0 => Ok(normal_cdf((0.0 - mean) / s)),
        Ok(_) if all_positive => Err("every interval is positive (see the gamma fit)"),
        Ok(_) => Err("SD is zero"),
        Err(e) => Err(e),
    };
    SerialInterval {
        n,
        mean: Ok(mean),
        sd,
        share_negative: Ok(negatives as f64 / nf),
        gamma,
        normal_p_negative,
    }
}
