//! The outlook of a whole export (`planning::plan` and `hubwatch outlook`): figures against
//! methods.md §4-5 on karate, the averaged random strategy against the exact finite ratio, and
//! the command's keys, files and errors.

use crate::common;

use common::hubwatch;
use hubwatch::analysis::planning::{plan, PlanOptions, Strategy, TSource};

#[test]
fn karate_at_t_point_three() {
    // methods.md §4 karate row (T = 0.3): Tc 0.1477273, R0 2.0307692, S 0.5193466; §5 table:
    // degree strategy kappa' 6.769231, 5.639344, 3.888889 after 0, 1, 2 reached, 2.038462 after 4;
    // largest 34, 33, 26, 10.
    let Some(p) = common::check_input("graph-karate.csv") else {
        common::skip("../shared/reference/check-inputs not found");
        return;
    };
    let d = common::load(&[&p], &[]);
    let opts = PlanOptions {
        transmissibility: Some(0.3),
        strategies: vec![Strategy::Degree],
        max_reach: 0,
        ..Default::default()
    };
    let pl = plan(&d, None, &opts);
    assert_eq!(pl.source, TSource::User);
    assert!((pl.at_t.threshold.unwrap() - 0.1477273).abs() < 5e-7);
    assert!((pl.at_t.r0.unwrap() - 2.0307692).abs() < 5e-7);
    assert!((pl.at_t.final_size.unwrap() - 0.5193466).abs() < 5e-7);
    let s = &pl.strategies[0];
    assert_eq!(s.len(), 34);
    for (n, kappa, largest) in [
        (0, 6.769231, 34.0),
        (1, 5.639344, 33.0),
        (2, 3.888889, 26.0),
        (4, 2.038462, 10.0),
    ] {
        assert!((s.curve.kappa[n].unwrap() - kappa).abs() < 5e-7, "n = {n}");
        assert_eq!(s.curve.largest[n], largest, "n = {n}");
    }
    // R = 0.3 kappa': 1.167 after 2 (above 1), 0.612 after 4 (below), so the answer is 3 or 4
    // and is the first n whose R is below 1.
    // Residual thresholds T_c' = 1/kappa' (methods.md §5 table): 0.1773256, 0.2571429, 0.4905660.
    for (n, tc) in [(1, 0.1773256), (2, 0.2571429), (4, 0.4905660)] {
        assert!(
            (1.0 / s.curve.kappa[n].unwrap() - tc).abs() < 5e-7,
            "n = {n}"
        );
    }
    let below = s.below_one(0.3).unwrap();
    assert!((3..=4).contains(&below), "{below}");
    assert!(s.r(0.3, below).unwrap() < 1.0 && s.r(0.3, below - 1).unwrap() >= 1.0);
    // The configuration-model prediction starts at the same kappa and, for {33}, removes
    // 17 x 16 = 272 of sum k(k-1) = 1056 over 156 contact ends: (1056 - 272) / 156 = 5.025641.
    assert!((s.model_kappa[0].unwrap() - 6.769231).abs() < 5e-7);
    assert!((s.model_kappa[1].unwrap() - 784.0 / 156.0).abs() < 1e-12);
}

#[test]
fn averaged_random_strategy_meets_the_exact_ratio() {
    // methods.md §5: random removal of m = 4 of 34 on karate: 5.923077; m = 10: 4.653846 (ratio
    // of expectations, which the averaged curve estimates); 4,000 seeded repeats, within 1.5%.
    let Some(p) = common::check_input("graph-karate.csv") else {
        common::skip("../shared/reference/check-inputs not found");
        return;
    };
    let d = common::load(&[&p], &[]);
    let opts = PlanOptions {
        transmissibility: Some(0.3),
        strategies: vec![Strategy::Random],
        max_reach: 10,
        repeats: 4000,
        ..Default::default()
    };
    let pl = plan(&d, None, &opts);
    let s = &pl.strategies[0];
    assert_eq!(s.repeats, 4000);
    for (m, want) in [(4, 5.923077), (10, 4.653846)] {
        let got = s.curve.kappa[m].unwrap();
        assert!((got - want).abs() < 0.015 * want, "m = {m}: {got}");
        // The configuration model gives (1 - m/N) kappa on average (methods.md §5: 5.972851
        // at m = 4, 4.778281 at m = 10).
    }
    // The model's expected giant cluster is solved at every n here and shrinks as people are
    // reached (on average over the repeats).
    let ml: Vec<f64> = s.model_largest.iter().map(|v| v.unwrap()).collect();
    assert!(ml.windows(2).all(|w| w[1] <= w[0] + 1e-9), "{ml:?}");
    assert!(ml[0] > 0.0 && ml[0] <= 34.0);
    let cm4 = s.model_kappa[4].unwrap();
    assert!((cm4 - 5.972851).abs() < 0.015 * 5.972851, "{cm4}");
    // Same seed, same curve.
    let again = plan(&d, None, &opts);
    assert_eq!(again.strategies[0].curve, s.curve);
}

#[test]
fn estimated_transmissibility_carries_the_wilson_band() {
    // The bundled sample: T is the secondary attack rate among traced contacts, and its band is
    // that rate's Wilson interval (checked against published values in tests/cases.rs).
    let root = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("sample-contacts");
    let d = common::load(
        &[&root.join("people.csv"), &root.join("exposures.csv")],
        &[],
    );
    let pl = plan(&d, None, &PlanOptions::default());
    let cs = hubwatch::analysis::casedata::case_stats(&d);
    match pl.source {
        TSource::SecondaryAttackRate { x, n, band } => {
            assert_eq!((x, n), (cs.sar.x, cs.sar.n));
            assert_eq!(band, cs.sar.wilson.unwrap());
            let (lo, hi) = pl.band.as_ref().unwrap();
            assert!(lo.r0.unwrap() <= pl.at_t.r0.unwrap() && pl.at_t.r0.unwrap() <= hi.r0.unwrap());
        }
        ref other => panic!("{other:?}"),
    }
    assert_eq!(pl.t, cs.sar.p.ok());
    assert!(hubwatch::report::outlook::assumption(&pl).contains("secondary attack rate"));
}

#[test]
fn outlook_command_keys_files_and_errors() {
    let (code, out, err) = hubwatch(&[
        "outlook",
        "--json",
        "--max-reach",
        "50",
        "--as-of",
        "2026-11-28",
    ]);
    assert_eq!(code, 0, "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    for key in [
        "caution",
        "model_caution",
        "transmissibility",
        "transmissibility_source",
        "assumption",
        "threshold",
        "r0",
        "final_size",
        "takeoff_probability",
        "mean_outbreak_size",
        "takeoff_by_degree",
        "curve",
        "strategies",
    ] {
        assert!(v.get(key).is_some(), "missing {key}");
    }
    assert_eq!(v["curve"].as_array().unwrap().len(), 101);
    let names: Vec<&str> = v["strategies"]
        .as_array()
        .unwrap()
        .iter()
        .map(|s| s["strategy"].as_str().unwrap())
        .collect();
    assert_eq!(names, ["degree", "priority", "random", "acquaintance"]);
    for s in v["strategies"].as_array().unwrap() {
        let points = s["points"].as_array().unwrap();
        assert_eq!(points.len(), 51);
        for key in [
            "reached",
            "mean_excess",
            "threshold",
            "r",
            "largest_cluster",
            "model_mean_excess",
            "model_largest_cluster",
        ] {
            assert!(points[0].get(key).is_some(), "missing {key}");
        }
    }
    // The residual threshold is 1 / mean excess at every point.
    for s in v["strategies"].as_array().unwrap() {
        for pt in s["points"].as_array().unwrap() {
            if let (Some(k), Some(tc)) = (pt["mean_excess"].as_f64(), pt["threshold"].as_f64()) {
                assert!((k * tc - 1.0).abs() < 1e-12);
            }
        }
    }
    // Curves to files, private; T out of range is a usage error (exit 2).
    let dir = tempfile::tempdir().unwrap();
    let curves = dir.path().join("reach.csv");
    let tcurve = dir.path().join("t.json");
    let (code, _, err) = hubwatch(&[
        "outlook",
        "--strategy",
        "degree,random",
        "--max-reach",
        "20",
        "--transmissibility",
        "0.2",
        "--curves-out",
        curves.to_str().unwrap(),
        "--t-curve-out",
        tcurve.to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{err}");
    let text = std::fs::read_to_string(&curves).unwrap();
    let data: Vec<&str> = text.lines().filter(|l| !l.starts_with('#')).collect();
    assert_eq!(
        data[0],
        "strategy,reached,mean_excess,r,largest_cluster,model_mean_excess,model_largest_cluster"
    );
    assert_eq!(data.len(), 1 + 2 * 21);
    assert!(text.contains("Model-based indicators"));
    #[cfg(unix)]
    {
        use std::os::unix::fs::PermissionsExt;
        for f in [&curves, &tcurve] {
            assert_eq!(
                std::fs::metadata(f).unwrap().permissions().mode() & 0o777,
                0o600
            );
        }
    }
    let t: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&tcurve).unwrap()).unwrap();
    assert_eq!(t["rows"].as_array().unwrap().len(), 101);
    let (code, _, err) = hubwatch(&["outlook", "--transmissibility", "1.5"]);
    assert_eq!(code, 2);
    assert!(err.contains("give a value from 0 to 1"), "{err}");
    // Existing file without --force: refused before any work.
    let (code, _, err) = hubwatch(&["outlook", "--curves-out", curves.to_str().unwrap()]);
    assert_eq!(code, 2);
    assert!(err.contains("--force"), "{err}");
}
