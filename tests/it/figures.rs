//! `hubwatch figures` on the bundled sample: the numbers behind every figure are the numbers of
//! `summary --json` and `outlook --json` (themselves checked against networkx and published
//! values in the other tests), the SVG files are well-formed XML of the stated size (parsed
//! with roxmltree), the PNG files carry the PNG signature and the stated size in their header
//! (PNG specification, ISO/IEC 15948, section 5), and every file is private.

use std::path::Path;

use crate::common::{hubwatch, skip};

const AS_OF: &str = "2026-12-01";

fn json(args: &[&str]) -> serde_json::Value {
    let (code, out, err) = hubwatch(args);
    assert_eq!(code, 0, "{err}");
    serde_json::from_str(&out).unwrap()
}

/// The rows of a figure's data file: (part, label, x, y).
fn data(dir: &Path, name: &str) -> Vec<(String, String, Option<f64>, Option<f64>)> {
    let v: serde_json::Value =
        serde_json::from_slice(&std::fs::read(dir.join(format!("{name}.data.json"))).unwrap())
            .unwrap();
    v["rows"]
        .as_array()
        .unwrap()
        .iter()
        .map(|r| {
            (
                r["part"].as_str().unwrap().to_string(),
                r["label"].as_str().unwrap().to_string(),
                r["x"].as_f64(),
                r["y"].as_f64(),
            )
        })
        .collect()
}

fn series(rows: &[(String, String, Option<f64>, Option<f64>)], starts: &str) -> Vec<(f64, f64)> {
    rows.iter()
        .filter(|r| r.0 == "series" && r.1.starts_with(starts))
        .map(|r| (r.2.unwrap(), r.3.unwrap()))
        .collect()
}

fn close(a: f64, b: f64) -> bool {
    (a - b).abs() <= 1e-12 * b.abs().max(1.0)
}

/// Figures need a font to lay text out; without one the command says so and the test skips.
fn figures(dir: &Path, format: &str) -> bool {
    let (code, _, err) = hubwatch(&[
        "figures",
        "--as-of",
        AS_OF,
        "--out",
        dir.to_str().unwrap(),
        "--format",
        format,
        "--with-data",
        "json",
        "--force",
    ]);
    if code != 0 && err.contains("TrueType font") {
        skip(&format!("figures: {err}"));
        return false;
    }
    assert_eq!(code, 0, "{err}");
    true
}

#[test]
fn the_numbers_behind_each_figure_are_the_reports_numbers() {
    let dir = tempfile::tempdir().unwrap();
    if !figures(dir.path(), "svg") {
        return;
    }
    let s = json(&["summary", "--as-of", AS_OF, "--json"]);
    let o = json(&["outlook", "--as-of", AS_OF, "--json"]);
    // p_k from the histogram, q_k as reported.
    let people = s["people"].as_f64().unwrap();
    let hist: Vec<(f64, f64)> = s["degree"]["histogram"]
        .as_array()
        .unwrap()
        .iter()
        .map(|p| (p[0].as_f64().unwrap(), p[1].as_f64().unwrap() / people))
        .collect();
    let d = data(dir.path(), "degree-distribution");
    let p = series(&d, "p_k");
    for (k, share) in &hist {
        let got = p.iter().find(|(x, _)| x == k).map(|q| q.1).unwrap_or(0.0);
        assert!(close(got, *share), "p_{k}: {got} against {share}");
    }
    let q: Vec<(f64, f64)> = s["excess"]["q"]
        .as_array()
        .unwrap()
        .iter()
        .map(|p| (p[0].as_f64().unwrap(), p[1].as_f64().unwrap()))
        .collect();
    let got_q = series(&d, "q_k");
    assert_eq!(got_q.len(), q.len());
    for (a, b) in got_q.iter().zip(&q) {
        assert!(a.0 == b.0 && close(a.1, b.1), "{a:?} against {b:?}");
    }
    // The log-log figure drops only the zeros.
    let loglog = series(&data(dir.path(), "degree-distribution-loglog"), "p_k");
    assert_eq!(loglog.len(), p.iter().filter(|x| x.1 > 0.0).count());
    // k_nn(k), and the flat line at <k^2>/<k>.
    let n = data(dir.path(), "neighbour-degree");
    let knn: Vec<(f64, f64)> = s["knn"]
        .as_array()
        .unwrap()
        .iter()
        .map(|p| (p[0].as_f64().unwrap(), p[1].as_f64().unwrap()))
        .collect();
    assert_eq!(series(&n, "k_nn"), knn);
    let flat = n.iter().find(|r| r.0 == "guide").unwrap().3.unwrap();
    assert!(close(flat, s["excess"]["edge_end_mean"].as_f64().unwrap()));
    // The three paradox bars.
    let bars: Vec<f64> = data(dir.path(), "friendship-paradox")
        .iter()
        .filter(|r| r.0 == "bar")
        .map(|r| r.3.unwrap())
        .collect();
    let want = [
        s["degree"]["mean"].as_f64().unwrap(),
        s["excess"]["edge_end_mean"].as_f64().unwrap(),
        s["paradox"]["contact_mean"].as_f64().unwrap(),
    ];
    assert!(
        bars.iter().zip(want).all(|(a, b)| close(*a, b)),
        "{bars:?} {want:?}"
    );
    // Cluster sizes, largest first.
    let mut sizes: Vec<f64> = Vec::new();
    for e in s["components"]["sizes"].as_array().unwrap() {
        let (size, count) = (e[0].as_f64().unwrap(), e[1].as_u64().unwrap());
        sizes.extend(std::iter::repeat_n(size, count as usize));
    }
    sizes.sort_by(|a, b| b.total_cmp(a));
    let got: Vec<f64> = series(&data(dir.path(), "cluster-sizes"), "cluster")
        .iter()
        .map(|p| p.1)
        .collect();
    assert_eq!(got, sizes);
    // The observed excess degree, followed from each person to their contacts.
    let obs: Vec<(f64, f64)> = s["excess"]["contacts_observed"]
        .as_array()
        .unwrap()
        .iter()
        .map(|p| (p[0].as_f64().unwrap(), p[1].as_f64().unwrap()))
        .collect();
    let got = series(&data(dir.path(), "excess-degree-observed"), "observed");
    assert_eq!(got.len(), obs.len());
    assert!(got
        .iter()
        .zip(&obs)
        .all(|(a, b)| a.0 == b.0 && close(a.1, b.1)));
    // The mixing matrices are the reported pair counts.
    for (field, file) in [("area", "mixing-area"), ("age_group", "mixing-age-group")] {
        let want: Vec<f64> = s["mixing"][field]["pairs"]
            .as_array()
            .unwrap()
            .iter()
            .flat_map(|row| row.as_array().unwrap().iter().map(|x| x.as_f64().unwrap()))
            .collect();
        let got: Vec<f64> = data(dir.path(), file)
            .iter()
            .filter(|r| r.0 == "cell")
            .map(|r| r.3.unwrap())
            .collect();
        assert_eq!(got, want, "{field}");
    }
    // Windows ending per day: counted again here from `priority --json`'s window ends.
    let p = json(&["priority", "--as-of", AS_OF, "--top", "0", "--json"]);
    let mut want = [0.0f64; 21];
    for r in p["list"].as_array().unwrap() {
        if let Some(end) = r["window_end"].as_str() {
            let end = chrono::NaiveDate::parse_from_str(end, "%Y-%m-%d").unwrap();
            let as_of = chrono::NaiveDate::parse_from_str(AS_OF, "%Y-%m-%d").unwrap();
            let i = (end - as_of).num_days();
            if (0..21).contains(&i) {
                want[i as usize] += 1.0;
            }
        }
    }
    let got: Vec<f64> = data(dir.path(), "windows-ending")
        .iter()
        .filter(|r| r.0 == "stack")
        .map(|r| r.3.unwrap())
        .collect();
    assert_eq!(got, want.to_vec());
    assert!(
        want.iter().sum::<f64>() > 0.0,
        "the sample has windows ending soon"
    );
    // R0 and the final size over T.
    let t = data(dir.path(), "outlook-transmissibility");
    let curve = o["curve"].as_array().unwrap();
    let r0 = series(&t, "R0");
    let r0_want: Vec<(f64, f64)> = curve
        .iter()
        .filter_map(|c| Some((c["t"].as_f64()?, c["r0"].as_f64()?)))
        .collect();
    assert_eq!(r0.len(), r0_want.len());
    assert!(r0
        .iter()
        .zip(&r0_want)
        .all(|(a, b)| close(a.0, b.0) && close(a.1, b.1)));
    let threshold = t
        .iter()
        .find(|r| r.1.starts_with("threshold"))
        .unwrap()
        .2
        .unwrap();
    assert!(close(threshold, o["threshold"].as_f64().unwrap()));
    // The final size over T.
    let fs = series(
        &data(dir.path(), "outlook-final-size"),
        "expected final size",
    );
    let fs_want: Vec<(f64, f64)> = curve
        .iter()
        .filter_map(|c| Some((c["t"].as_f64()?, c["final_size"].as_f64()?)))
        .collect();
    assert_eq!(fs.len(), fs_want.len());
    assert!(fs
        .iter()
        .zip(&fs_want)
        .all(|(a, b)| close(a.0, b.0) && close(a.1, b.1)));
    // Residual R as people are reached: each strategy's network curve and model curve are the
    // outlook's points (r, and T times the model's mean excess degree), and the legend says
    // where each falls below 1 as the outlook does.
    let reach = data(dir.path(), "outlook-reach");
    let t_est = o["transmissibility"].as_f64().unwrap();
    for st in o["strategies"].as_array().unwrap() {
        let name = st["strategy"].as_str().unwrap();
        let points = st["points"].as_array().unwrap();
        let net = series(&reach, &format!("{name} (network)"));
        let model = series(&reach, &format!("{name} (configuration model)"));
        // Points where R is undefined (no contact left) are not drawn.
        let defined = |key: &str| -> Vec<(f64, f64)> {
            points
                .iter()
                .filter_map(|p| Some((p["reached"].as_f64()?, p[key].as_f64()?)))
                .collect()
        };
        let r_want = defined("r");
        assert_eq!(net.len(), r_want.len(), "{name}");
        assert!(
            net.iter()
                .zip(&r_want)
                .all(|(a, b)| a.0 == b.0 && close(a.1, b.1)),
            "{name}"
        );
        let m_want = defined("model_mean_excess");
        assert_eq!(model.len(), m_want.len(), "{name}");
        assert!(
            model
                .iter()
                .zip(&m_want)
                .all(|(a, b)| a.0 == b.0 && close(a.1, t_est * b.1)),
            "{name}"
        );
        let label = &reach
            .iter()
            .find(|r| r.1.starts_with(&format!("{name} (network)")))
            .unwrap()
            .1;
        match st["reach_for_r_below_1"].as_u64() {
            Some(n) => assert!(
                label.ends_with(&format!("R < 1 from {n} reached")),
                "{label}"
            ),
            None => assert!(label.ends_with("R stays above 1"), "{label}"),
        }
    }
    // People with contacts in both settings, counted again here from the sample's exposures
    // file: each person's set of settings, then every pair of settings they hold.
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("sample-contacts");
    let text = std::fs::read_to_string(root.join("exposures.csv")).unwrap();
    let mut held: std::collections::BTreeMap<String, std::collections::BTreeSet<String>> =
        Default::default();
    for line in text.lines().skip(1) {
        let f: Vec<&str> = line.split(',').collect();
        let (a, b, setting) = (f[0].trim(), f[1].trim(), f[3].trim().to_lowercase());
        // Rows the ledger quarantines (a blank ID or one person on both sides) make no pair.
        if a.is_empty() || b.is_empty() || a == b || setting.is_empty() {
            continue;
        }
        for id in [a, b] {
            held.entry(id.to_string())
                .or_default()
                .insert(setting.clone());
        }
    }
    let overlap = data(dir.path(), "settings-overlap");
    for r in overlap.iter().filter(|r| r.0 == "cell") {
        let (x, y) = r.1.split_once(" / ").unwrap();
        let want = held
            .values()
            .filter(|s| s.contains(&x.to_lowercase()) && s.contains(&y.to_lowercase()))
            .count();
        assert_eq!(r.3.unwrap(), want as f64, "{x} and {y}");
    }
}

#[test]
fn svg_and_png_files_are_valid_private_and_of_the_stated_size() {
    let dir = tempfile::tempdir().unwrap();
    if !figures(dir.path(), "both") {
        return;
    }
    let mut names: Vec<String> = std::fs::read_dir(dir.path())
        .unwrap()
        .flatten()
        .map(|e| e.file_name().to_string_lossy().into_owned())
        .filter(|n| n.ends_with(".svg"))
        .collect();
    names.sort();
    // Six network figures, one mixing matrix per attribute (the sample has area and age group),
    // the settings overlap, exposures per day, windows ending, and the three outlook figures.
    assert_eq!(names.len(), 14, "{names:?}");
    for name in &names {
        let svg = std::fs::read_to_string(dir.path().join(name)).unwrap();
        let doc = roxmltree::Document::parse(&svg).unwrap_or_else(|e| panic!("{name}: {e}"));
        let root = doc.root_element();
        assert_eq!(root.tag_name().name(), "svg");
        assert_eq!(root.attribute("width"), Some("1000"), "{name}");
        assert_eq!(root.attribute("height"), Some("640"), "{name}");
        let text: String = doc
            .descendants()
            .filter(|n| n.is_text())
            .filter_map(|n| n.text())
            .collect();
        assert!(text.contains(&format!("as of {AS_OF}")), "{name}: caption");
        let png = std::fs::read(dir.path().join(name.replace(".svg", ".png"))).unwrap();
        assert_eq!(&png[..8], b"\x89PNG\r\n\x1a\n", "{name}");
        assert_eq!(&png[12..16], b"IHDR");
        let w = u32::from_be_bytes(png[16..20].try_into().unwrap());
        let h = u32::from_be_bytes(png[20..24].try_into().unwrap());
        assert_eq!((w, h), (1000, 640), "{name}");
        // Not blank: more than one colour in the image data is hard to check without a decoder,
        // so check the compressed data is larger than a blank page's.
        assert!(png.len() > 10_000, "{name}: {} bytes", png.len());
        #[cfg(unix)]
        for f in [name.clone(), name.replace(".svg", ".png")] {
            use std::os::unix::fs::PermissionsExt;
            let mode = std::fs::metadata(dir.path().join(&f))
                .unwrap()
                .permissions()
                .mode();
            assert_eq!(mode & 0o777, 0o600, "{f}");
        }
    }
    // Existing figures are replaced only with --force.
    let (code, _, err) = hubwatch(&[
        "figures",
        "--as-of",
        AS_OF,
        "--out",
        dir.path().to_str().unwrap(),
    ]);
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("add --force"), "{err}");
}

#[test]
fn exposures_per_day_count_each_row_by_its_date() {
    // Worked by hand: A-B on 11-20 and again on 11-30 (household), B-C on 11-30 (work), C-D
    // undated, D-E in January. As of 2026-12-01 the 42 days run from 2026-10-21, so 11-20 is
    // bar 30 and 11-30 bar 40; the undated row and the January one are counted in the title.
    let dir = tempfile::tempdir().unwrap();
    let ex = dir.path().join("exposures.csv");
    std::fs::write(
        &ex,
        "source_id,target_id,exposure_date,setting\nA,B,2026-11-20,household\nB,A,2026-11-30,household\nB,C,2026-11-30,work\nC,D,,household\nD,E,2026-01-01,work\n",
    )
    .unwrap();
    let out = dir.path().join("figs");
    let (code, _, err) = hubwatch(&[
        "figures",
        ex.to_str().unwrap(),
        "--as-of",
        AS_OF,
        "--out",
        out.to_str().unwrap(),
        "--with-data",
        "json",
    ]);
    if code != 0 && err.contains("TrueType font") {
        skip(&format!("figures: {err}"));
        return;
    }
    assert_eq!(code, 0, "{err}");
    let rows: Vec<(String, f64, f64)> = data(&out, "exposures-per-day")
        .into_iter()
        .filter(|r| r.0 == "stack" && r.3.unwrap() > 0.0)
        .map(|r| (r.1, r.2.unwrap(), r.3.unwrap()))
        .collect();
    assert_eq!(
        rows,
        [
            ("household / 2026-11-20".to_string(), 30.0, 1.0),
            ("household / 2026-11-30".to_string(), 40.0, 1.0),
            ("work / 2026-11-30".to_string(), 40.0, 1.0)
        ]
    );
    let svg = std::fs::read_to_string(out.join("exposures-per-day.svg")).unwrap();
    assert!(
        svg.contains("1 undated, 1 outside these 42 days"),
        "the title counts the rest"
    );
}
