//! The built binary on the bundled sample and on bad input: stdout, stderr, exit codes.

use crate::common;

use common::hubwatch;

#[test]
fn default_action_summarises_the_bundled_sample_with_the_caution() {
    let (code, out, err) = hubwatch(&["--as-of", "2026-11-28"]);
    assert_eq!(code, 0, "{err}");
    assert!(
        out.contains("sample-contacts/exposures.csv (built in)"),
        "{out}"
    );
    assert!(
        out.contains("does not replace, the judgement of public-health staff"),
        "{out}"
    );
}

#[test]
fn summary_json_has_the_documented_keys() {
    let (code, out, err) = hubwatch(&["summary", "--json", "--as-of", "2026-11-28"]);
    assert_eq!(code, 0, "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    // Figures of the frozen sample, stated in sample-contacts/README.md.
    assert_eq!(v["people"], 262);
    assert_eq!(v["contacts"], 943);
    assert_eq!(v["implied"], 2);
    for key in ["isolated", "max_degree"] {
        assert!(v[key].is_u64(), "{key}");
    }
    assert!(v["components"]["count"].is_u64() && v["components"]["largest"].is_u64());
    let x = &v["rows"]["exposures"];
    assert_eq!(
        (
            x["read"].as_u64(),
            x["used"].as_u64(),
            x["merged"].as_u64(),
            x["quarantined"].as_u64()
        ),
        (Some(1778), Some(943), Some(831), Some(4))
    );
    assert_eq!(x["field_problems"], 4);
    let p = &v["rows"]["people"];
    assert_eq!(
        (
            p["read"].as_u64(),
            p["used"].as_u64(),
            p["merged"].as_u64(),
            p["quarantined"].as_u64()
        ),
        (Some(262), Some(260), Some(1), Some(1))
    );
    assert_eq!(p["field_problems"], 1);
}

#[test]
fn check_writes_a_private_quarantine_file() {
    let dir = tempfile::tempdir().unwrap();
    let q = dir.path().join("quarantine.csv");
    let (code, out, err) = hubwatch(&[
        "check",
        "--as-of",
        "2026-11-28",
        "--quarantine",
        q.to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("holds for every file"), "{out}");
    let text = std::fs::read_to_string(&q).unwrap();
    // Written by the one writer: metadata lines first (caution first), then the table.
    assert!(text.starts_with("# caution: hubwatch supports"), "{text}");
    let lines: Vec<&str> = text.lines().filter(|l| !l.starts_with("# ")).collect();
    assert_eq!(lines[0], "kind,file,line,column,value,reason");
    // 5 quarantined rows + 5 field problems (sample-contacts/README.md).
    assert_eq!(lines.len(), 11, "{text}");
    #[cfg(unix)]
    {
        use std::os::unix::fs::PermissionsExt;
        assert_eq!(
            std::fs::metadata(&q).unwrap().permissions().mode() & 0o777,
            0o600
        );
    }
    let (code, out, _) = hubwatch(&["check", "--json", "--as-of", "2026-11-28"]);
    assert_eq!(code, 0);
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    assert_eq!(v["balanced"], true);
    assert_eq!(v["quarantined"]["exposures"]["self_exposure"], 2);
}

#[test]
fn errors_go_to_stderr_once_with_documented_exit_codes() {
    let (code, out, err) = hubwatch(&["summary", "/no/such/file.csv"]);
    assert_eq!((code, out.as_str()), (3, ""));
    assert_eq!(err, "hubwatch: /no/such/file.csv: no such file or folder\n");
    let (code, _, err) = hubwatch(&["summary", "--column", "nonsense=1"]);
    assert_eq!(code, 2);
    assert!(
        err.starts_with("hubwatch: --column nonsense=1: unknown field `nonsense`"),
        "{err}"
    );
    let (code, _, err) = hubwatch(&["summary", "--as-of", "yesterday"]);
    assert_eq!(code, 2, "{err}");
    let dir = tempfile::tempdir().unwrap();
    let f = dir.path().join("x.csv");
    std::fs::write(&f, "a,b\n1,2\n").unwrap();
    let (code, _, err) = hubwatch(&["summary", f.to_str().unwrap(), "--header", "yes"]);
    assert_eq!(code, 4, "{err}");
    assert_eq!(err.lines().count(), 1, "one message: {err}");
}

#[test]
fn synth_writes_a_reproducible_export() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("x");
    let (code, stdout, err) = hubwatch(&[
        "synth",
        "--people",
        "500",
        "--seed",
        "3",
        "--out",
        out.to_str().unwrap(),
        "--end",
        "2026-11-01",
    ]);
    assert_eq!(code, 0, "{err}");
    assert!(stdout.contains("planted:"), "{stdout}");
    for f in ["people.csv", "exposures.csv", "manifest.json"] {
        assert!(out.join(f).exists(), "{f}");
    }
}

#[test]
fn last_days_counts_back_from_the_as_of_date() {
    // Toy export (methods.md §0): rows dated 2024-03-06 (P07-P08) and 2024-03-07 (P08-P09) are
    // the last two days up to an as-of date of 2024-03-07.
    let dir =
        std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("../shared/reference/check-inputs");
    if !dir.exists() {
        common::skip("../shared/reference/check-inputs not found");
        return;
    }
    let (p, e) = (dir.join("toy-people.csv"), dir.join("toy-exposures.csv"));
    let args = [
        "summary",
        "--json",
        "--null-replicates",
        "0",
        "--as-of",
        "2024-03-07",
        "--last-days",
        "2",
    ];
    let mut all: Vec<&str> = args.to_vec();
    all.extend([p.to_str().unwrap(), e.to_str().unwrap()]);
    let (code, out, err) = hubwatch(&all);
    assert_eq!(code, 0, "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    assert_eq!(v["contacts"], 2);
    assert_eq!(v["view"]["from"], "2024-03-06");
    assert_eq!(v["view"]["to"], "2024-03-07");
    let (code, _, err) = hubwatch(&["summary", "--last-days", "3", "--from", "2024-01-01"]);
    assert_eq!(code, 2, "{err}");
}

#[test]
fn priority_list_as_json_carries_the_caution_and_the_settings() {
    let (code, out, err) = hubwatch(&[
        "priority",
        "--json",
        "--as-of",
        "2026-11-28",
        "--top",
        "5",
        "--preset",
        "window first",
        "--pathogen",
        "ebola",
    ]);
    assert_eq!(code, 0, "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    assert_eq!(v["list"].as_array().unwrap().len(), 5);
    assert_eq!(v["window"]["days"], 21);
    assert_eq!(v["preset"], "window first");
    assert!(v["caution"]
        .as_str()
        .unwrap()
        .contains("judgement of public-health staff"));
    let first = &v["list"][0];
    let sum: f64 = first["parts"]
        .as_array()
        .unwrap()
        .iter()
        .map(|p| p["contribution"].as_f64().unwrap())
        .sum();
    assert!((sum - first["score"].as_f64().unwrap()).abs() < 1e-9);
    let (code, _, err) = hubwatch(&["priority", "--preset", "fastest"]);
    assert_eq!(code, 2);
    assert!(err.contains("no preset \"fastest\""), "{err}");
}

#[test]
fn the_top_of_the_list_is_the_head_of_the_whole_list() {
    // `--top N` orders only the first N (selected without sorting everyone); the list, the
    // people count and the overdue count must equal the whole list's, with and without a
    // filter (common practice, no source: a top-N list is the head of the full list).
    for extra in [&[][..], &["--role", "contact"][..]] {
        let run = |top: &str| {
            let mut args = vec!["priority", "--json", "--as-of", "2026-11-28", "--top", top];
            args.extend_from_slice(extra);
            let (code, out, err) = hubwatch(&args);
            assert_eq!(code, 0, "{err}");
            serde_json::from_str::<serde_json::Value>(&out).unwrap()
        };
        let whole = run("0");
        let all = whole["list"].as_array().unwrap();
        assert!(all.len() > 10, "the sample list is long enough to cut");
        for top in [1usize, 7, 10] {
            let head = run(&top.to_string());
            assert_eq!(head["people"], whole["people"]);
            assert_eq!(head["overdue"], whole["overdue"]);
            assert_eq!(head["list"].as_array().unwrap()[..], all[..top]);
        }
    }
}

#[test]
fn the_quarantine_file_neutralises_formula_cells() {
    // A raw row a spreadsheet would run as a formula is written with a leading apostrophe, as
    // every file of the one writer (OWASP, "CSV Injection"). Issue 11: check's quarantine file
    // goes through that writer.
    let dir = tempfile::tempdir().unwrap();
    let e = dir.path().join("exposures.csv");
    std::fs::write(&e, "source_id,target_id\nA,B\n+cmd|calc,+cmd|calc\n").unwrap();
    let q = dir.path().join("q.csv");
    let (code, _, err) = hubwatch(&[
        "check",
        e.to_str().unwrap(),
        "--as-of",
        "2026-11-28",
        "--quarantine",
        q.to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{err}");
    let text = std::fs::read_to_string(&q).unwrap();
    let row = text
        .lines()
        .find(|l| l.starts_with("quarantined"))
        .unwrap_or_else(|| panic!("{text}"));
    // The raw row is one quoted cell, its first character no longer a formula sign.
    assert!(row.contains(",\"'+cmd|calc,+cmd|calc\","), "{row}");
}
