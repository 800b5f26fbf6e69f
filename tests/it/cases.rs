//! Attack-rate intervals and serial intervals against ../shared/reference/check-inputs
//! (methods.md §7-8; statsmodels 0.15.0 `proportion_confint`, scipy 1.17.1).

use crate::common;

use hubwatch::metrics::cases;

fn close(got: f64, want: f64, tol: f64, what: &str) {
    assert!((got - want).abs() <= tol, "{what}: got {got}, want {want}");
}

#[test]
fn wilson_and_clopper_pearson() {
    // methods.md §7 table (values to 7 decimals; statsmodels agrees with the direct formulas to 1e-10).
    for (x, n, p, wl, wh, cl, ch) in [
        (17, 68, 0.25, 0.1623501, 0.3643855, 0.1528805, 0.3698224),
        (
            81, 263, 0.3079848, 0.2552885, 0.3662096, 0.2527367, 0.3676219,
        ),
        (
            15, 148, 0.1013514, 0.0623864, 0.1604872, 0.0578440, 0.1616505,
        ),
        (0, 20, 0.0, 0.0, 0.1611252, 0.0, 0.1684335),
        (1, 29, 0.0344828, 0.0061132, 0.1717552, 0.0008726, 0.1776443),
        (12, 12, 1.0, 0.7575060, 1.0, 0.7353515, 1.0),
        (1, 1, 1.0, 0.2065493, 1.0, 0.025, 1.0),
    ] {
        let r = cases::proportion(x, n);
        let what = format!("{x}/{n}");
        close(r.p.unwrap(), p, 5e-8, &what);
        let (a, b) = r.wilson.unwrap();
        close(a, wl, 5e-8, &format!("{what} Wilson low"));
        close(b, wh, 5e-8, &format!("{what} Wilson high"));
        let (a, b) = r.clopper_pearson.unwrap();
        close(a, cl, 5e-8, &format!("{what} CP low"));
        close(b, ch, 5e-8, &format!("{what} CP high"));
    }
    assert!(cases::proportion(0, 0).p.is_err());
}

#[test]
fn serial_intervals_keep_negatives() {
    // serial-pairs.csv (invented): intervals 4, 4, 7, 3, 6, 2, 8, 5, 4, 0, -2, 5 (methods.md §8):
    // mean 46/12, SD 2.8230652, share negative 1/12; gamma by moments shape 1.8437896, scale
    // 2.0790514 (but not fitted here: a 0 and a -2 are present); normal P(SI < 0) 0.0872537.
    let Some(path) = common::check_input("serial-pairs.csv") else {
        common::skip("../shared/reference/check-inputs not found");
        return;
    };
    let text = std::fs::read_to_string(path).unwrap();
    let days: Vec<i64> = text
        .lines()
        .filter(|l| !l.starts_with('#') && !l.starts_with("infector"))
        .map(|l| {
            let (a, b) = l.split_once(',').unwrap();
            let d = |s: &str| i64::from(hubwatch::ingest::dates::parse_iso(s.trim()).unwrap());
            d(b) - d(a)
        })
        .collect();
    assert_eq!(days, [4, 4, 7, 3, 6, 2, 8, 5, 4, 0, -2, 5]);
    let s = cases::serial_interval(&days);
    close(s.mean.unwrap(), 46.0 / 12.0, 1e-12, "mean");
    close(s.sd.unwrap(), 2.8230652, 5e-8, "SD");
    close(
        s.share_negative.unwrap(),
        1.0 / 12.0,
        1e-12,
        "share negative",
    );
    assert!(s.gamma.is_err(), "no gamma when intervals <= 0 are present");
    close(
        s.normal_p_negative.unwrap(),
        0.0872537,
        5e-8,
        "normal P(SI<0)",
    );
    let (shape, scale) = cases::gamma_by_moments(s.mean.unwrap(), s.sd.unwrap()).unwrap();
    close(shape, 1.8437896, 5e-8, "gamma shape");
    close(scale, 2.0790514, 5e-8, "gamma scale");
    // Dropping intervals <= 0 biases the mean up and the SD down (the sheet's warning):
    let kept: Vec<i64> = days.iter().copied().filter(|&d| d > 0).collect();
    let t = cases::serial_interval(&kept);
    close(t.mean.unwrap(), 4.8, 1e-12, "mean without <= 0");
    close(t.sd.unwrap(), 1.8135294, 5e-8, "SD without <= 0");
    assert!(t.gamma.is_ok());
}
