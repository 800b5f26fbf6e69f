//! Epidemic indicators against methods.md §4 (values in expected-values.csv: generating
//! functions, cross-checked there with EoN 2.0, scipy lambertw/brentq and mpmath).

use crate::common;

use hubwatch::metrics::outlook::{curve, indicators, takeoff_by_degree};

fn close(got: f64, want: f64, rel: f64, what: &str) {
    assert!(
        (got - want).abs() <= rel * want.abs().max(1e-300) || got == want,
        "{what}: got {got}, want {want}"
    );
}

fn poisson(c: f64, kmax: usize) -> Vec<f64> {
    let mut p = vec![(-c).exp()];
    for k in 1..=kmax {
        let prev = p[k - 1];
        p.push(prev * c / k as f64);
    }
    p
}

#[test]
fn poisson_mean_four() {
    // epi.poisson_c4_* (EoN 2.0 Attack_rate_discrete on the Poisson pmf, k <= 120).
    let p = poisson(4.0, 120);
    for (t, r0, u, s) in [
        (0.5, 2.0, 0.2031878699799794, 0.7968121300200203),
        (0.375, 1.5, 0.4171883561341873, 0.5828116438658122),
        (0.75, 3.0, 0.059520209292640326, 0.9404797907073597),
    ] {
        let o = indicators(&p, t);
        close(o.threshold.unwrap(), 0.25, 1e-9, "Tc");
        close(o.r0.unwrap(), r0, 1e-9, "R0");
        close(o.u.unwrap(), u, 1e-9, "u");
        close(o.final_size.unwrap(), s, 1e-9, "S");
        close(o.takeoff_probability.unwrap(), s, 1e-9, "take-off");
    }
    // Below threshold: <s> = 1 + 0.8/0.2 = 5 exactly (methods.md §4).
    let o = indicators(&p, 0.2);
    close(o.mean_outbreak_size.unwrap(), 5.0, 1e-9, "<s>");
    assert_eq!(o.final_size, Ok(0.0));
}

#[test]
fn small_exponential_and_power_law_with_cutoff() {
    // dist-small (p_0..p_8 = .1,.2,.3,.2,0,.1,0,0,.1): epi.small_T0.5 / epi.small_T0.2.
    let small = [0.1, 0.2, 0.3, 0.2, 0.0, 0.1, 0.0, 0.0, 0.1];
    let o = indicators(&small, 0.5);
    close(o.threshold.unwrap(), 0.28723404255319146, 1e-9, "Tc");
    close(o.r0.unwrap(), 1.740740740740741, 1e-9, "R0");
    close(o.u.unwrap(), 0.41547135017464615, 1e-9, "u");
    close(o.final_size.unwrap(), 0.5132353856938248, 1e-9, "S");
    let o = indicators(&small, 0.2);
    close(o.r0.unwrap(), 0.6962962962962964, 1e-9, "R0 below");
    assert_eq!((o.u, o.final_size), (Ok(1.0), Ok(0.0)));
    close(
        o.mean_outbreak_size.unwrap(),
        2.7780488,
        1e-7,
        "<s> (methods.md §4, 7 digits)",
    );
    // Exponential family, kappa_d = 2: p_k = (1 - a) a^k, a = e^(-1/2), k <= 2000 (epi.expo_kappa2_T0.6).
    let a = (-0.5f64).exp();
    let expo: Vec<f64> = (0..=2000).map(|k| (1.0 - a) * a.powi(k)).collect();
    let o = indicators(&expo, 0.6);
    close(o.threshold.unwrap(), 0.32436063535006415, 1e-9, "Tc expo");
    close(o.final_size.unwrap(), 0.3462226740685419, 1e-9, "S expo");
    // Power law with exponential cutoff, tau = 2, kappa_d = 10, k >= 1 (epi.plc_tau2_kappa10_T0.5),
    // normalised over k <= 3000 (the sheet's truncated sum agrees with the closed form).
    let mut plc: Vec<f64> = (0..=3000)
        .map(|k| {
            if k == 0 {
                0.0
            } else {
                (k as f64).powf(-2.0) * (-(k as f64) / 10.0).exp()
            }
        })
        .collect();
    let z: f64 = plc.iter().sum();
    plc.iter_mut().for_each(|x| *x /= z);
    let o = indicators(&plc, 0.5);
    close(o.threshold.unwrap(), 0.3286912696155674, 1e-9, "Tc plc");
    close(o.final_size.unwrap(), 0.16917719818340538, 1e-8, "S plc");
}

#[test]
fn karate_plug_in_and_takeoff_by_degree() {
    // methods.md §4 karate row (T = 0.3): Tc 0.1477273, R0 2.0307692, u 0.3952075, S 0.5193466;
    // take-off by index degree k=1 0.1814378, k=2 0.3299559, k=5 0.6324990, k=17 0.9667433.
    let Some(path) = common::check_input("graph-karate.csv") else {
        common::skip("../shared/reference/check-inputs not found");
        return;
    };
    let d = common::load(&[&path], &[]);
    let s = hubwatch::metrics::degree::degree_stats(&hubwatch::metrics::degree::degrees(&d.graph));
    let o = indicators(&s.p(), 0.3);
    close(o.threshold.unwrap(), 0.1477273, 5e-7, "Tc");
    close(o.r0.unwrap(), 2.0307692, 5e-7, "R0");
    close(o.u.unwrap(), 0.3952075, 5e-7, "u");
    close(o.final_size.unwrap(), 0.5193466, 5e-7, "S");
    for (k, want) in [
        (1, 0.1814378),
        (2, 0.3299559),
        (5, 0.6324990),
        (17, 0.9667433),
    ] {
        close(
            takeoff_by_degree(&o, k).unwrap(),
            want,
            5e-7,
            &format!("take-off k={k}"),
        );
    }
}

#[test]
fn edge_cases_and_the_curve() {
    // methods.md §4 edge cases: <k> = 0 undefined; kappa = 0 (degrees <= 1): no epidemic
    // possible, R0 = 0, S = 0; T = 0: S = 0.
    assert!(indicators(&[1.0], 0.5).r0.is_err());
    let o = indicators(&[0.5, 0.5], 0.9);
    assert!(o.threshold.is_err());
    assert_eq!((o.r0, o.final_size), (Ok(0.0), Ok(0.0)));
    assert_eq!(
        indicators(&[0.1, 0.2, 0.3, 0.2, 0.0, 0.1, 0.0, 0.0, 0.1], 0.0).final_size,
        Ok(0.0)
    );
    let c = curve(&poisson(4.0, 120), 101);
    assert_eq!(c.len(), 101);
    // S rises with T.
    assert!(c
        .windows(2)
        .all(|w| w[1].final_size.unwrap() >= w[0].final_size.unwrap() - 1e-12));
}

#[test]
fn just_above_the_threshold() {
    // Poisson c = 4 (G0 = G1 = exp(c(x-1)), methods.md §4): S solves S = 1 - exp(-R0 S). Just above
    // T_c = 0.25 the root is nearly double, where plain iteration crawls; the solver must still
    // meet the equation to 1e-12 and give S ~ 2 (R0 - 1) (series of the Lambert-W form,
    // derived here).
    let p = poisson(4.0, 120);
    for eps in [1e-3, 1e-5, 1e-7] {
        let t = 0.25 * (1.0 + eps);
        let o = indicators(&p, t);
        let s = o.final_size.expect("S defined above threshold");
        let r0 = o.r0.unwrap();
        assert!(
            (s - (1.0 - (-r0 * s).exp())).abs() < 1e-12,
            "eps {eps}: S {s}"
        );
        // S = 2x - (8/3)x^2 + ..., x = R0 - 1; a nearly double root is fixed by floating point
        // only to ~sqrt(machine epsilon) in u, so allow 1e-8 absolute on top of the series term.
        let x = r0 - 1.0;
        assert!(
            (s - 2.0 * x).abs() <= 3.0 * x * x + 1e-8,
            "eps {eps}: S {s} vs 2(R0 - 1) {}",
            2.0 * x
        );
    }
}
