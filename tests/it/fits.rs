//! Distribution fits against ../shared/reference/check-inputs (methods.md §6; values in
//! expected-values.csv from scipy 1.17.1, statsmodels 0.15.0 and powerlaw 2.0.0).

use crate::common;

use common::check_input;
use hubwatch::metrics::fits::{self, Sample};

fn values(file: &str) -> Option<Vec<u64>> {
    let text = std::fs::read_to_string(check_input(file)?).ok()?;
    Some(
        text.lines()
            .filter(|l| !l.starts_with('#') && !l.trim().is_empty())
            .map(|l| l.trim().parse().unwrap())
            .collect(),
    )
}

fn close(got: f64, want: f64, rel: f64, what: &str) {
    assert!(
        (got - want).abs() <= rel * want.abs(),
        "{what}: got {got}, want {want}"
    );
}

fn param(f: &fits::Fit, name: &str) -> f64 {
    f.params
        .iter()
        .find(|(n, _)| *n == name)
        .unwrap()
        .1
        .unwrap()
}

#[test]
fn secondary_cases_poisson_geometric_negative_binomial() {
    let Some(v) = values("secondary-cases.txt") else {
        common::skip("../shared/reference/check-inputs not found");
        return;
    };
    let s = Sample::from_values(&v);
    assert_eq!((s.n(), s.mean().unwrap()), (50, 1.56));
    // expected-values.csv fit.sec.poisson.*, fit.sec.geometric.* (scipy 1.17.1): closed forms, 1e-9.
    let p = fits::poisson(&s);
    close(
        p.log_lik.unwrap(),
        -129.18776997334115,
        1e-9,
        "Poisson logL",
    );
    close(p.aic.unwrap(), 260.3755399466823, 1e-9, "Poisson AIC");
    let g = fits::geometric(&s);
    close(param(&g, "p"), 0.390625, 1e-12, "geometric p");
    close(
        g.log_lik.unwrap(),
        -85.63543502851553,
        1e-9,
        "geometric logL",
    );
    close(g.aic.unwrap(), 173.27087005703106, 1e-9, "geometric AIC");
    // fit.sec.negbin.* (scipy; statsmodels NB2 gives k = 1/alpha = 0.3226101885): iterative, 1e-6.
    let nb = fits::negative_binomial(&s);
    close(param(&nb.fit, "R"), 1.56, 1e-12, "NB R");
    close(param(&nb.fit, "k"), 0.32261019391142937, 1e-6, "NB k");
    close(nb.fit.log_lik.unwrap(), -79.61619893139364, 1e-9, "NB logL");
    close(nb.fit.aic.unwrap(), 163.23239786278728, 1e-9, "NB AIC");
    close(nb.k_low.unwrap(), 0.17098271091291312, 1e-6, "NB k CI low");
    close(nb.k_high.unwrap(), 0.6053269901817147, 1e-6, "NB k CI high");
    // fit.sec.empirical_share80: 0.204.
    close(
        fits::share80_empirical(&s).unwrap(),
        0.20400000000000007,
        1e-12,
        "empirical p80",
    );
}

#[test]
fn no_overdispersion_means_infinite_k_not_a_huge_number() {
    // methods.md §6 edge cases: variance <= mean -> k infinite ("no overdispersion"); all
    // zeros -> "no transmission observed".
    let s = Sample::from_values(&[1, 1, 1, 2, 2, 0]);
    let nb = fits::negative_binomial(&s);
    assert!(nb.fit.params[1]
        .1
        .unwrap_err()
        .starts_with("no overdispersion"));
    let z = Sample::from_values(&[0, 0, 0]);
    assert_eq!(fits::poisson(&z).log_lik, Ok(0.0));
    assert!(fits::negative_binomial(&z).fit.log_lik.is_err());
    assert!(fits::share80_empirical(&z).is_err());
    assert!(fits::poisson(&Sample::from_values(&[])).log_lik.is_err());
}

#[test]
fn share_of_cases_causing_80_percent() {
    // expected-values.csv fit.share80.* (scipy 1.17.1 gamma / nbinom) and fit.t20.*.
    for (r, k, cont, disc) in [
        (2.5, 0.1, 0.09791213479635368, 0.09305149919002828),
        // At the fitted k of the secondary-cases sample (methods.md §6: k 0.3226102).
        (
            1.56,
            0.32261019391142937,
            0.2419774635345156,
            0.20229099460769895,
        ),
        (1.63, 0.16, 0.14476024422511374, 0.13000951135406566),
        (2.5, 0.5, 0.316061778650167, 0.27624452030452984),
        (2.5, 1.0, 0.4385031388542998, 0.36297376093294575),
    ] {
        close(
            fits::share80_continuous(k),
            cont,
            1e-6,
            &format!("continuous R {r} k {k}"),
        );
        close(
            fits::share80_discrete(r, k),
            disc,
            1e-6,
            &format!("discrete R {r} k {k}"),
        );
    }
    close(
        fits::top_share_continuous(0.16, 0.2),
        0.8825192055639901,
        1e-6,
        "t20 k=0.16",
    );
    // t20 at k = 1 is (1 + ln 5)/5 exactly (methods.md §6).
    close(
        fits::top_share_continuous(1.0, 0.2),
        (1.0 + 5f64.ln()) / 5.0,
        1e-9,
        "t20 k=1",
    );
}

#[test]
fn hurwitz_zeta_closed_forms() {
    // zeta(2, 1) = pi^2/6 and zeta(4, 1) = pi^4/90 (Euler; textbook values).
    let pi = std::f64::consts::PI;
    close(
        fits::hurwitz_zeta(2.0, 1.0),
        pi * pi / 6.0,
        1e-13,
        "zeta(2)",
    );
    close(
        fits::hurwitz_zeta(4.0, 1.0),
        pi.powi(4) / 90.0,
        1e-13,
        "zeta(4)",
    );
    // zeta(s, q) = zeta(s, q + 1) + q^-s.
    close(
        fits::hurwitz_zeta(2.5, 3.0),
        fits::hurwitz_zeta(2.5, 4.0) + 3f64.powf(-2.5),
        1e-13,
        "recurrence",
    );
}

#[test]
fn power_law_tail_with_xmin_by_ks() {
    let Some(v) = values("degrees-powerlaw-tail.txt") else {
        return;
    };
    let s = Sample::from_values(&v);
    // expected-values.csv fit.pl.xmin3 (scipy zeta, bounded MLE; mpmath root 2.50443332):
    // best x_min 3, n_tail 60, alpha 2.5044333529, se 0.1942215107, D 0.0083922416.
    let best = fits::power_law(&s, 10).unwrap();
    assert_eq!((best.x_min, best.n_tail), (3, 60));
    close(best.alpha, 2.5044333529, 1e-6, "alpha");
    close(best.se, 0.1942215107, 1e-6, "se");
    close(best.ks, 0.0083922416, 1e-5, "D");
    close(best.log_lik, -132.6579521424, 1e-8, "logL");
    // Other candidates (fit.pl.xmin1/2/4/5).
    for (xmin, alpha, d) in [
        (1, 1.6336737478, 0.254661479),
        (2, 2.0851914533, 0.162209122),
        (4, 2.5264908472, 0.0149433735),
        (5, 2.5021920819, 0.0221682688),
    ] {
        let p = fits::power_law_at(&s, xmin).unwrap();
        close(p.alpha, alpha, 1e-6, &format!("alpha at x_min {xmin}"));
        close(p.ks, d, 1e-5, &format!("D at x_min {xmin}"));
    }
}

#[test]
fn fitted_probability_functions() {
    // scipy.stats.poisson.pmf(3, 2.5) = 0.2137630172497364; scipy.stats.geom on {0,1,...}
    // (loc=-1) pmf(2, p=0.25) = 0.25 * 0.75^2 = 0.140625; scipy.stats.nbinom.pmf(2, n=2, p=0.5)
    // = 0.1875 (mean R = 2, k = 2). Values from memory, each also a closed form.
    use hubwatch::metrics::fits::Fit;
    let f = |model, params| Fit {
        model,
        params,
        log_lik: Ok(0.0),
        aic: Ok(0.0),
    };
    let p = f("poisson", vec![("lambda", Ok(2.5))]).pmf(3).unwrap();
    assert!((p - 0.2137630172497364).abs() < 1e-12, "{p}");
    let g = f("geometric", vec![("p", Ok(0.25))]).pmf(2).unwrap();
    assert!((g - 0.140625).abs() < 1e-15);
    let nb = f("negative_binomial", vec![("R", Ok(2.0)), ("k", Ok(2.0))]);
    assert!((nb.pmf(2).unwrap() - 0.1875).abs() < 1e-12);
    let total: f64 = (0..400).map(|x| nb.pmf(x).unwrap()).sum();
    assert!((total - 1.0).abs() < 1e-12, "{total}");
    assert!(f(
        "negative_binomial",
        vec![("R", Ok(2.0)), ("k", Err("none"))]
    )
    .pmf(1)
    .is_err());
}
