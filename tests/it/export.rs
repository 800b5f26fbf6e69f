//! Exports: every format round-trips the same list; files are private; overwrite needs --force;
//! formula cells are neutralised; pseudonymised files hold no raw ID; call sheets partition the
//! list and keep households together.

use std::path::Path;
use std::process::Command;

use hubwatch::ingest::sniff::{split_fields, Separator};

fn hubwatch(args: &[&str], key: Option<&str>) -> (i32, String, String) {
    let mut c = Command::new(env!("CARGO_BIN_EXE_hubwatch"));
    c.args(args).env_remove("HUBWATCH_PSEUDONYM_KEY");
    if let Some(k) = key {
        c.env("HUBWATCH_PSEUDONYM_KEY", k);
    }
    let out = c.output().unwrap();
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

/// An invented export with a household column, a phone column and a formula-like value.
fn fixture(dir: &Path) -> std::path::PathBuf {
    let ex = dir.join("ex");
    std::fs::create_dir(&ex).unwrap();
    std::fs::write(
        ex.join("people.csv"),
        "person_id,role,area,household_id,phone\n\
         Q1,case,North,H1,555-0101\nQ2,contact,North,H1,555-0102\nQ3,contact,\"=HYPERLINK(\"\"x\"\")\",H2,555-0103\n\
         Q4,contact,South,H2,555-0104\nQ5,contact,South,H3,555-0105\nQ6,contact,East,H4,555-0106\n",
    )
    .unwrap();
    std::fs::write(
        ex.join("exposures.csv"),
        "source_id,target_id,exposure_date,setting\nQ1,Q2,2024-03-01,household\nQ1,Q3,2024-03-02,workplace\n\
         Q3,Q4,2024-03-03,household\nQ1,Q5,2024-03-04,community\nQ5,Q6,2024-03-05,community\n",
    )
    .unwrap();
    ex
}

fn csv_ids(path: &Path) -> Vec<String> {
    let text = std::fs::read_to_string(path).unwrap();
    let mut lines = text.lines().filter(|l| !l.starts_with('#'));
    let header = split_fields(lines.next().unwrap().as_bytes(), Separator::Byte(b','));
    let c = header.iter().position(|h| h == "person_id").unwrap();
    lines
        .map(|l| split_fields(l.as_bytes(), Separator::Byte(b','))[c].clone())
        .collect()
}

#[test]
fn every_format_round_trips_the_same_list_privately() {
    let dir = tempfile::tempdir().unwrap();
    let ex = fixture(dir.path());
    let exs = ex.to_str().unwrap();
    let mut lists = Vec::new();
    for ext in ["csv", "json", "parquet", "xlsx"] {
        let out = dir.path().join(format!("list.{ext}"));
        let (code, _, err) = hubwatch(
            &[
                "export",
                exs,
                "--as-of",
                "2024-03-10",
                "--out",
                out.to_str().unwrap(),
            ],
            None,
        );
        assert_eq!(code, 0, "{ext}: {err}");
        #[cfg(unix)]
        {
            use std::os::unix::fs::PermissionsExt;
            assert_eq!(
                std::fs::metadata(&out).unwrap().permissions().mode() & 0o777,
                0o600,
                "{ext}"
            );
        }
        let ids: Vec<String> = match ext {
            "csv" => csv_ids(&out),
            "json" => {
                let v: serde_json::Value =
                    serde_json::from_slice(&std::fs::read(&out).unwrap()).unwrap();
                assert!(v["metadata"]["caution"]
                    .as_str()
                    .unwrap()
                    .contains("public-health staff"));
                v["rows"]
                    .as_array()
                    .unwrap()
                    .iter()
                    .map(|r| r["person_id"].as_str().unwrap().to_string())
                    .collect()
            }
            "parquet" => {
                use polars::prelude::*;
                let df = ParquetReader::new(std::fs::File::open(&out).unwrap())
                    .finish()
                    .unwrap();
                df.column("person_id")
                    .unwrap()
                    .str()
                    .unwrap()
                    .iter()
                    .map(|s| s.unwrap().to_string())
                    .collect()
            }
            _ => {
                use calamine::{open_workbook_auto, Reader};
                let mut book = open_workbook_auto(&out).unwrap();
                assert_eq!(book.sheet_names(), ["list", "about"]);
                let range = book.worksheet_range("list").unwrap();
                range.rows().skip(1).map(|r| r[1].to_string()).collect()
            }
        };
        lists.push(ids);
    }
    assert_eq!(lists[0].len(), 6);
    for l in &lists[1..] {
        assert_eq!(l, &lists[0]);
    }
}

#[test]
fn overwrite_needs_force_and_formulas_are_neutralised() {
    let dir = tempfile::tempdir().unwrap();
    let ex = fixture(dir.path());
    let out = dir.path().join("l.csv");
    let args = [
        "export",
        ex.to_str().unwrap(),
        "--as-of",
        "2024-03-10",
        "--out",
        out.to_str().unwrap(),
    ];
    assert_eq!(hubwatch(&args, None).0, 0);
    let (code, _, err) = hubwatch(&args, None);
    assert_eq!(code, 2);
    assert!(err.contains("exists; add --force"), "{err}");
    let mut forced = args.to_vec();
    forced.push("--force");
    assert_eq!(hubwatch(&forced, None).0, 0);
    let text = std::fs::read_to_string(&out).unwrap();
    // OWASP "CSV Injection": a cell starting with = is prefixed with an apostrophe.
    assert!(text.contains("\"'=HYPERLINK(\"\"x\"\")\""), "{text}");
    assert!(!text
        .lines()
        .any(|l| !l.starts_with('#') && l.split(',').any(|c| c.starts_with('='))));
}

#[test]
fn pseudonymised_exports_hold_no_raw_id_and_no_direct_identifier() {
    let dir = tempfile::tempdir().unwrap();
    let ex = fixture(dir.path());
    let out = dir.path().join("p.csv");
    let args = [
        "export",
        ex.to_str().unwrap(),
        "--as-of",
        "2024-03-10",
        "--out",
        out.to_str().unwrap(),
        "--pseudonymise",
    ];
    let (code, _, err) = hubwatch(&args, None);
    assert_eq!(code, 2, "refuses without a key");
    assert!(err.contains("will not pseudonymise without one"), "{err}");
    let (code, _, err) = hubwatch(&args, Some("a-test-key-of-some-length"));
    assert_eq!(code, 0, "{err}");
    // The temporary folder's random name (in the input checksum lines) may spell an ID by
    // chance ("/tmp/.tmpQ5…" did once): it is no data, so it is left out of the search.
    let text = std::fs::read_to_string(&out)
        .unwrap()
        .replace(dir.path().to_str().unwrap(), "<dir>");
    for id in ["Q1", "Q2", "Q3", "Q4", "Q5", "Q6", "555-01"] {
        assert!(
            !text.contains(id),
            "raw value {id} in the pseudonymised file"
        );
    }
    assert!(!text
        .lines()
        .find(|l| !l.starts_with('#'))
        .unwrap()
        .contains("phone"));
    assert!(text.contains("# pseudonymised:"));
    // The same key gives the same pseudonyms (so lists from two days can be matched).
    let again = dir.path().join("p2.csv");
    let mut a2 = args.to_vec();
    a2[5] = again.to_str().unwrap();
    assert_eq!(hubwatch(&a2, Some("a-test-key-of-some-length")).0, 0);
    assert_eq!(csv_ids(&out), csv_ids(&again));
    // The quarantine list holds raw rows and is refused.
    let q = dir.path().join("q.csv");
    let (code, _, _) = hubwatch(
        &[
            "export",
            ex.to_str().unwrap(),
            "--list",
            "quarantine",
            "--out",
            q.to_str().unwrap(),
            "--pseudonymise",
        ],
        Some("a-test-key-of-some-length"),
    );
    assert_eq!(code, 2);
}

#[test]
fn call_sheets_partition_the_list_and_keep_households() {
    let dir = tempfile::tempdir().unwrap();
    let ex = fixture(dir.path());
    let out = dir.path().join("sheet.csv");
    let (code, stdout, err) = hubwatch(
        &[
            "export",
            ex.to_str().unwrap(),
            "--as-of",
            "2024-03-10",
            "--out",
            out.to_str().unwrap(),
            "--split",
            "2",
        ],
        None,
    );
    assert_eq!(code, 0, "{err}");
    assert!(stdout.contains("sheet-1of2.csv") && stdout.contains("sheet-2of2.csv"));
    let whole_dir = dir.path().join("whole.csv");
    assert_eq!(
        hubwatch(
            &[
                "export",
                ex.to_str().unwrap(),
                "--as-of",
                "2024-03-10",
                "--out",
                whole_dir.to_str().unwrap()
            ],
            None
        )
        .0,
        0
    );
    let a = csv_ids(&dir.path().join("sheet-1of2.csv"));
    let b = csv_ids(&dir.path().join("sheet-2of2.csv"));
    let mut all: Vec<String> = a.iter().chain(&b).cloned().collect();
    all.sort();
    let mut whole = csv_ids(&whole_dir);
    whole.sort();
    assert_eq!(all, whole, "the sheets partition the list");
    assert!(
        (a.len() as i64 - b.len() as i64).abs() <= 2,
        "balanced: {a:?} {b:?}"
    );
    // Households H1 = {Q1, Q2}, H2 = {Q3, Q4} each sit on one sheet.
    for pair in [["Q1", "Q2"], ["Q3", "Q4"]] {
        let on_a = pair.iter().filter(|p| a.contains(&p.to_string())).count();
        assert!(
            on_a == 0 || on_a == 2,
            "household {pair:?} split: {a:?} / {b:?}"
        );
    }
}

#[test]
fn chosen_columns_and_workspace_states_shape_the_list() {
    let dir = tempfile::tempdir().unwrap();
    let ex = fixture(dir.path());
    let exs = ex.to_str().unwrap();
    let out = dir.path().join("c.csv");
    let (code, _, err) = hubwatch(
        &[
            "export",
            exs,
            "--as-of",
            "2024-03-10",
            "--out",
            out.to_str().unwrap(),
            "--columns",
            "person_id,score,followup",
        ],
        None,
    );
    assert_eq!(code, 0, "{err}");
    let text = std::fs::read_to_string(&out).unwrap();
    assert_eq!(
        text.lines().find(|l| !l.starts_with('#')).unwrap(),
        "person_id,score,followup"
    );
    let (code, _, err) = hubwatch(
        &[
            "export",
            exs,
            "--out",
            dir.path().join("d.csv").to_str().unwrap(),
            "--columns",
            "person_id,shoe_size",
        ],
        None,
    );
    assert_eq!(code, 2);
    assert!(err.contains("no column \"shoe_size\""), "{err}");
    // Q2 reached (in the workspace, beside the export): --not-reached leaves Q2 out, and the
    // exported list shows the state.
    let (code, _, err) = hubwatch(
        &["followup", exs, "--person", "Q2", "--set", "reached"],
        None,
    );
    assert_eq!(code, 0, "{err}");
    let (_, json, _) = hubwatch(
        &[
            "priority",
            exs,
            "--as-of",
            "2024-03-10",
            "--json",
            "--top",
            "0",
            "--not-reached",
        ],
        None,
    );
    let v: serde_json::Value = serde_json::from_str(&json).unwrap();
    let ids: Vec<&str> = v["list"]
        .as_array()
        .unwrap()
        .iter()
        .map(|r| r["id"].as_str().unwrap())
        .collect();
    assert!(!ids.contains(&"Q2") && ids.contains(&"Q1"), "{ids:?}");
    let out = dir.path().join("s.csv");
    assert_eq!(
        hubwatch(
            &[
                "export",
                exs,
                "--as-of",
                "2024-03-10",
                "--out",
                out.to_str().unwrap(),
                "--columns",
                "person_id,followup"
            ],
            None
        )
        .0,
        0
    );
    assert!(std::fs::read_to_string(&out)
        .unwrap()
        .lines()
        .any(|l| l == "Q2,reached"));
}

/// Parquet, xlsx, JSON, CSV and TSV of the same list, read back with general-purpose readers
/// (polars for Parquet and delimited text, calamine for xlsx): each column keeps its type, IDs
/// come back byte for byte where nothing evaluates text, and only CSV and TSV carry the formula
/// guard (OWASP, "CSV Injection": the guard is for spreadsheets opening delimited text; text
/// cells of xlsx are never run, Parquet and JSON are not evaluated).
#[test]
fn typed_tables_read_back_with_their_types_and_exact_ids() {
    use polars::prelude::*;
    let dir = tempfile::tempdir().unwrap();
    let ex = dir.path().join("ex");
    std::fs::create_dir(&ex).unwrap();
    // IDs that look like arithmetic or an international phone number, and an area value that
    // is a formula: all must survive as they are outside CSV/TSV.
    std::fs::write(
        ex.join("people.csv"),
        "person_id,role,area\n-2+3,case,North\n+447700900123,contact,\"=HYPERLINK(\"\"x\"\")\"\nQ3,contact,South\n@Q4,contact,South\n=Q5,contact,North\n",
    )
    .unwrap();
    std::fs::write(
        ex.join("exposures.csv"),
        "source_id,target_id,exposure_date,setting\n-2+3,+447700900123,2024-03-01,household\n-2+3,Q3,2024-03-05,workplace\nQ3,@Q4,2024-03-06,household\n=Q5,Q3,2024-03-07,household\n",
    )
    .unwrap();
    let export = |ext: &str| {
        let out = dir.path().join(format!("typed.{ext}"));
        let (code, _, err) = hubwatch(
            &[
                "export",
                ex.to_str().unwrap(),
                "--as-of",
                "2024-03-10",
                "--out",
                out.to_str().unwrap(),
            ],
            None,
        );
        assert_eq!(code, 0, "{ext}: {err}");
        out
    };
    // JSON: the reference list (IDs, dates as ISO 8601, numbers as numbers).
    let json: serde_json::Value =
        serde_json::from_slice(&std::fs::read(export("json")).unwrap()).unwrap();
    let rows = json["rows"].as_array().unwrap();
    let ids: Vec<String> = rows
        .iter()
        .map(|r| r["person_id"].as_str().unwrap().to_string())
        .collect();
    let mut sorted = ids.clone();
    sorted.sort();
    assert_eq!(sorted, ["+447700900123", "-2+3", "=Q5", "@Q4", "Q3"]);
    let last: Vec<Option<String>> = rows
        .iter()
        .map(|r| r["last_exposure"].as_str().map(str::to_string))
        .collect();
    assert!(rows
        .iter()
        .all(|r| r["rank"].is_i64() && r["score"].is_f64() && r["overdue"].is_boolean()));
    let area_of = |id: &str| rows.iter().find(|r| r["person_id"] == id).unwrap()["area"].clone();
    assert_eq!(area_of("+447700900123"), "=HYPERLINK(\"x\")");

    // Parquet: real types, nulls where empty, IDs exact.
    let df = ParquetReader::new(std::fs::File::open(export("parquet")).unwrap())
        .finish()
        .unwrap();
    let dtype = |c: &str| df.column(c).unwrap().dtype().clone();
    assert_eq!(dtype("rank"), DataType::Int64);
    assert_eq!(dtype("person_id"), DataType::String);
    assert_eq!(dtype("score"), DataType::Float64);
    assert_eq!(dtype("degree"), DataType::Int64);
    assert_eq!(dtype("last_exposure"), DataType::Date);
    assert_eq!(dtype("window_end"), DataType::Date);
    assert_eq!(dtype("days_left"), DataType::Int64);
    assert_eq!(dtype("overdue"), DataType::Boolean);
    assert_eq!(dtype("bridge"), DataType::Boolean);
    assert_eq!(dtype("score_degree"), DataType::Float64);
    assert_eq!(dtype("area"), DataType::String);
    let strs = |c: &str| -> Vec<Option<String>> {
        df.column(c)
            .unwrap()
            .str()
            .unwrap()
            .iter()
            .map(|s| s.map(str::to_string))
            .collect()
    };
    assert_eq!(
        strs("person_id"),
        ids.iter().cloned().map(Some).collect::<Vec<_>>()
    );
    assert!(strs("area").contains(&Some("=HYPERLINK(\"x\")".to_string())));
    assert_eq!(
        df.column("followup").unwrap().null_count(),
        df.height(),
        "no follow-up: nulls"
    );
    let as_text = df
        .column("last_exposure")
        .unwrap()
        .cast(&DataType::String)
        .unwrap();
    let parquet_last: Vec<Option<String>> = as_text
        .str()
        .unwrap()
        .iter()
        .map(|s| s.map(str::to_string))
        .collect();
    assert_eq!(parquet_last, last);
    let rank: Vec<i64> = df
        .column("rank")
        .unwrap()
        .i64()
        .unwrap()
        .into_no_null_iter()
        .collect();
    assert_eq!(rank, (1..=ids.len() as i64).collect::<Vec<_>>());

    // xlsx: numbers, dates (a date cell, shown yyyy-mm-dd), booleans, text cells as they are.
    {
        use calamine::{open_workbook_auto, Data, Reader};
        let mut book = open_workbook_auto(export("xlsx")).unwrap();
        let range = book.worksheet_range("list").unwrap();
        let header: Vec<String> = range
            .rows()
            .next()
            .unwrap()
            .iter()
            .map(|c| c.to_string())
            .collect();
        let col = |name: &str| header.iter().position(|h| h == name).unwrap();
        for (i, row) in range.rows().skip(1).enumerate() {
            assert_eq!(row[col("rank")], Data::Float(i as f64 + 1.0));
            assert_eq!(row[col("person_id")], Data::String(ids[i].clone()));
            assert!(
                matches!(row[col("overdue")], Data::Bool(_)),
                "{:?}",
                row[col("overdue")]
            );
            match (&row[col("last_exposure")], &last[i]) {
                (Data::DateTime(dt), Some(iso)) => {
                    // Excel's serial day: days since 1899-12-30 (1970-01-01 is 25569).
                    let day = chrono::NaiveDate::parse_from_str(iso, "%Y-%m-%d").unwrap();
                    let epoch = chrono::NaiveDate::from_ymd_opt(1899, 12, 30).unwrap();
                    assert_eq!(dt.as_f64(), (day - epoch).num_days() as f64);
                }
                (Data::Empty, None) => {}
                other => panic!("last_exposure: {other:?}"),
            }
        }
        let areas: Vec<String> = range
            .rows()
            .skip(1)
            .map(|r| r[col("area")].to_string())
            .collect();
        assert!(
            areas.contains(&"=HYPERLINK(\"x\")".to_string()),
            "{areas:?}"
        );
    }

    // CSV and TSV: the metadata lines are one cell each (no delimiter or quote in them), a
    // general reader skips them as comments, and text cells a spreadsheet would run carry the
    // guard.
    for (ext, sep) in [("csv", b','), ("tsv", b'\t')] {
        let out = export(ext);
        let text = std::fs::read_to_string(&out).unwrap();
        for l in text.lines().filter(|l| l.starts_with('#')) {
            assert!(!l.contains(sep as char) && !l.contains('"'), "{ext}: {l}");
        }
        assert!(text.lines().any(|l| l.starts_with("# weights: ")), "{text}");
        let df = CsvReadOptions::default()
            .map_parse_options(|p| p.with_separator(sep).with_comment_prefix(Some("#")))
            .try_into_reader_with_file_path(Some(out.clone()))
            .unwrap()
            .finish()
            .unwrap();
        assert_eq!(df.height(), ids.len(), "{ext}");
        let read: Vec<String> = df
            .column("person_id")
            .unwrap()
            .cast(&DataType::String)
            .unwrap()
            .str()
            .unwrap()
            .iter()
            .map(|s| s.unwrap().to_string())
            .collect();
        let guarded: Vec<String> = ids
            .iter()
            .map(|id| match id.starts_with(['=', '+', '-', '@']) {
                true => format!("'{id}"),
                false => id.clone(),
            })
            .collect();
        assert_eq!(read, guarded, "{ext}");
        assert!(text.contains("'=HYPERLINK"), "{ext}");
    }
}
