//! Aggregate tables (`hubwatch sql` -> an engine -> Parquet -> `--aggregates DIR`).
//!
//! The SQL itself is run in DuckDB and Spark by `tests/crosscheck/sql_check.py` (CI), which
//! compares every statistic and ledger count with the raw reading. Here, without an engine:
//! the generated SQL's text (quoting per dialect, composite IDs, views, refusals); the reader on
//! tables written the way the SQL writes them (from a load of the same export, so the two
//! readings must agree); its messages for broken tables; and the degree-table statistics
//! against the same statistics from the network (property tests).

use std::path::Path;

use polars::prelude::*;
use proptest::prelude::*;

use crate::common::{self, hubwatch};
use hubwatch::config::Config;
use hubwatch::dataset::Dataset;
use hubwatch::ingest::mapping::parse_override;
use hubwatch::ingest::sql::{generate, Dialect, SqlRequest, TableSpec};
use hubwatch::ingest::{dates, View};
use hubwatch::metrics::{degree, mixing, neighbours};

const AS_OF: &str = "2026-11-01";

fn request(dialect: Dialect, columns: Option<&str>, overrides: &[&str]) -> SqlRequest {
    SqlRequest {
        dialect,
        exposures: TableSpec {
            name: "raw.exposures".into(),
            columns: columns.map(|c| c.split(',').map(str::to_string).collect()),
        },
        people: None,
        row_order: None,
        overrides: overrides
            .iter()
            .map(|o| parse_override(o).unwrap())
            .collect(),
        as_of: dates::parse_iso(AS_OF).unwrap(),
        view: View::default(),
        parquet_dir: Some("/data/agg".into()),
    }
}

#[test]
fn sql_quotes_and_writes_per_dialect() {
    let cols = Some("src,dst,when,it's");
    let over = [
        "source_id=src",
        "target_id=dst",
        "exposure_date=when",
        "setting=it's",
    ];
    let duck = generate(&request(Dialect::DuckDb, cols, &over), &Config::default()).unwrap();
    let spark = generate(&request(Dialect::Spark, cols, &over), &Config::default()).unwrap();
    // Identifiers: "double quotes" in DuckDB, `backticks` in Spark; a quote in a literal is
    // doubled in DuckDB and escaped with a backslash in Spark (whose literals read backslashes).
    assert!(duck.contains("CAST(\"it's\" AS VARCHAR)"), "{duck}");
    assert!(spark.contains("CAST(`it's` AS STRING)"));
    assert!(duck.contains("'it''s'") && spark.contains("'it\\'s'"));
    // White space trimmed as a set: DuckDB builds it with chr(), Spark reads \uXXXX escapes.
    assert!(
        duck.contains("chr(9) || chr(10)") && duck.contains("chr(12288))"),
        "{duck}"
    );
    assert!(
        spark.contains("'\\u0009\\u000A") && spark.contains("\\u3000'"),
        "{spark}"
    );
    // Unicode NFC: DuckDB's function, ICU's composition in Spark.
    assert!(duck.contains("nfc_normalize(s)"));
    assert!(spark.contains("com.ibm.icu.text.Normalizer"));
    // The tables are written where asked, one file or one folder each.
    for t in hubwatch::ingest::sql::TABLES {
        assert!(duck.contains(&format!(
            "COPY hw_{t} TO '/data/agg/{t}.parquet' (FORMAT PARQUET);"
        )));
        assert!(spark.contains(&format!(
            "INSERT OVERWRITE DIRECTORY '/data/agg/{t}' USING parquet"
        )));
    }
    // Every statement ends a line with a semicolon (how a runner splits the script).
    assert!(duck.trim_end().ends_with(';') && spark.trim_end().ends_with(';'));
    assert!(duck.contains("-- As of 2026-11-01; network: all exposures."));
}

#[test]
fn sql_maps_columns_like_a_header_and_joins_composite_ids() {
    // With the table's columns, the synonyms of config/default.toml map them as a file's header.
    let s = generate(
        &request(Dialect::DuckDb, Some("indid1,indid2,date,minutes,hh"), &[]),
        &Config::default(),
    )
    .unwrap();
    assert!(s.contains("source_id = indid1") && s.contains("target_id = indid2"));
    assert!(s.contains("exposure_date = date") && s.contains("duration_min = minutes"));
    // Composite IDs: blank if a part is blank, parts joined with '/', a '/' or '\' escaped.
    let s = generate(
        &request(
            Dialect::DuckDb,
            Some("hh_a,m_a,hh_b,m_b"),
            &["source_id=hh_a+m_a", "target_id=hh_b+m_b"],
        ),
        &Config::default(),
    )
    .unwrap();
    assert!(s.contains("source_id = hh_a+m_a"), "{s}");
    assert!(s.contains("IS NULL OR") && s.contains("'\\/'") && s.contains("'\\\\'"));
}

#[test]
fn sql_says_what_it_cannot_do() {
    let mut config = Config::default();
    config.dates.format = "%d/%m/%Y".into();
    let err = generate(&request(Dialect::Spark, None, &[]), &config).unwrap_err();
    assert!(err.to_string().contains("ISO 8601"), "{err}");
    let err = generate(
        &request(Dialect::DuckDb, Some("a,b"), &[]),
        &Config::default(),
    )
    .unwrap_err();
    let msg = err.to_string();
    assert!(
        msg.contains("table raw.exposures: no column for source_id"),
        "{msg}"
    );
    assert!(
        msg.contains("--column source_id=COLUMN") && msg.contains("a, b"),
        "{msg}"
    );
    assert!(Dialect::parse("postgres").is_err());
    let (code, _, err) = hubwatch(&[
        "sql",
        "--dialect",
        "duckdb",
        "--exposures",
        "t",
        "--date-format",
        "%d.%m.%Y",
    ]);
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("ISO 8601"));
}

#[test]
fn sql_for_a_view_keeps_the_ledger_whole() {
    let mut r = request(
        Dialect::DuckDb,
        Some("source_id,target_id,exposure_date,setting"),
        &[],
    );
    r.view = View {
        settings: vec!["Household".into()],
        from: Some(dates::parse_iso("2026-10-01").unwrap()),
        ..View::default()
    };
    let s = generate(&r, &Config::default()).unwrap();
    assert!(s.contains("setting_key IN ('household')"), "{s}");
    assert!(s.contains("coalesce(l_day, f_day) >= '2026-10-01'"));
    // Pairs from the rows in view; used / merged counted over every usable row.
    assert!(s.contains("FROM hw_rows WHERE in_view GROUP BY a, b"));
    assert!(s.contains("SELECT DISTINCT a, b FROM hw_rows) d"));
}

// ---------------------------------------------------------------------------------------------
// The reader, on tables written the way the SQL writes them.

fn frame(cols: Vec<Column>) -> DataFrame {
    let height = cols.first().map_or(0, |c| c.len());
    DataFrame::new(height, cols).unwrap()
}

fn put(dir: &Path, name: &str, mut df: DataFrame) {
    let f = std::fs::File::create(dir.join(format!("{name}.parquet"))).unwrap();
    ParquetWriter::new(f).finish(&mut df).unwrap();
}

fn iso(d: i32) -> Option<String> {
    (d != hubwatch::ingest::reconcile::NO_DATE).then(|| dates::iso(d))
}

/// Write the aggregate tables of a loaded export, as the engine would for the same rows.
fn write_tables(d: &Dataset, dir: &Path) {
    use hubwatch::ingest::ledger::Role;
    std::fs::create_dir_all(dir).unwrap();
    let n = d.people();
    let deg = hubwatch::graph::degrees(&d.graph);
    let mut meta: Vec<(String, String)> = vec![
        ("layout".into(), "1".into()),
        ("dialect".into(), "test".into()),
        ("as_of".into(), dates::iso(d.as_of)),
        ("oldest_day".into(), "1996-11-01".into()),
        ("max_minutes".into(), "144000.0".into()),
        ("case_sensitive".into(), "true".into()),
        ("exposures_table".into(), "raw_exposures".into()),
        ("people_table".into(), "raw_people".into()),
    ];
    for f in &d.ledger.files {
        for (field, col) in &f.mapping {
            meta.push((format!("{}:{field}", f.role.name()), col.clone()));
        }
    }
    let (k, v): (Vec<String>, Vec<String>) = meta.into_iter().unzip();
    put(
        dir,
        "meta",
        frame(vec![
            Column::new("key".into(), k),
            Column::new("value".into(), v),
        ]),
    );
    let mut cols = vec![
        Column::new("node".into(), (0..n as i64).collect::<Vec<_>>()),
        Column::new(
            "id".into(),
            (0..n as u32)
                .map(|i| d.ids.name(i).to_string())
                .collect::<Vec<_>>(),
        ),
        Column::new(
            "listed".into(),
            (0..n as u32)
                .map(|i| i < d.people_in_table)
                .collect::<Vec<_>>(),
        ),
        Column::new(
            "k".into(),
            deg.iter().map(|&k| i64::from(k)).collect::<Vec<_>>(),
        ),
    ];
    for (name, values) in d.attrs.names.iter().zip(&d.attrs.values) {
        let v: Vec<Option<String>> = (0..n).map(|i| values.get(i).map(String::from)).collect();
        cols.push(Column::new(format!("attr:{name}").into(), v));
    }
    put(dir, "nodes", frame(cols));
    put(
        dir,
        "settings",
        frame(vec![
            Column::new(
                "code".into(),
                (1..=d.settings.len() as i64).collect::<Vec<_>>(),
            ),
            Column::new("label".into(), d.settings.clone()),
        ]),
    );
    let e = &d.edges;
    let m = e.len();
    let u = |v: &[u32]| v.iter().map(|&x| i64::from(x)).collect::<Vec<_>>();
    let links = |v: &[u32]| if v.is_empty() { vec![0i64; m] } else { u(v) };
    put(
        dir,
        "pairs",
        frame(vec![
            Column::new("a".into(), u(&e.a)),
            Column::new("b".into(), u(&e.b)),
            Column::new("rows".into(), u(&e.rows)),
            Column::new("a_named_b".into(), u(&e.a_named_b)),
            Column::new(
                "first_day".into(),
                e.first.iter().map(|&x| iso(x)).collect::<Vec<_>>(),
            ),
            Column::new(
                "last_day".into(),
                e.last.iter().map(|&x| iso(x)).collect::<Vec<_>>(),
            ),
            Column::new(
                "minutes".into(),
                e.minutes
                    .iter()
                    .map(|&x| (!x.is_nan()).then_some(x))
                    .collect::<Vec<_>>(),
            ),
            Column::new("links_ab".into(), links(&e.links_ab)),
            Column::new("links_ba".into(), links(&e.links_ba)),
        ]),
    );
    let (mut sa, mut sb, mut sc) = (Vec::new(), Vec::new(), Vec::new());
    let (mut xa, mut xb, mut xf, mut xl) = (Vec::new(), Vec::new(), Vec::new(), Vec::new());
    for i in 0..m {
        for &c in e.settings(i) {
            sa.push(i64::from(e.a[i]));
            sb.push(i64::from(e.b[i]));
            sc.push(i64::from(c));
        }
        let spans: Vec<(i32, i32)> = e.day_spans(i).collect();
        if spans.len() > 1 {
            for (f, l) in spans {
                xa.push(i64::from(e.a[i]));
                xb.push(i64::from(e.b[i]));
                xf.push(dates::iso(f));
                xl.push(dates::iso(l));
            }
        }
    }
    put(
        dir,
        "pair_settings",
        frame(vec![
            Column::new("a".into(), sa),
            Column::new("b".into(), sb),
            Column::new("code".into(), sc),
        ]),
    );
    put(
        dir,
        "spans",
        frame(vec![
            Column::new("a".into(), xa),
            Column::new("b".into(), xb),
            Column::new("span_first".into(), xf),
            Column::new("span_last".into(), xl),
        ]),
    );
    let days = &d.exposures_by_day;
    put(
        dir,
        "days",
        frame(vec![
            Column::new(
                "day".into(),
                days.iter().map(|x| dates::iso(x.0)).collect::<Vec<_>>(),
            ),
            Column::new(
                "setting".into(),
                days.iter().map(|x| i64::from(x.1)).collect::<Vec<_>>(),
            ),
            Column::new(
                "rows".into(),
                days.iter().map(|x| x.2 as i64).collect::<Vec<_>>(),
            ),
        ]),
    );
    let st = degree::degree_stats(&deg);
    let hist: Vec<(i64, i64)> = st
        .histogram
        .iter()
        .enumerate()
        .filter(|(_, &c)| c > 0)
        .map(|(k, &c)| (k as i64, c as i64))
        .collect();
    put(
        dir,
        "degrees",
        frame(vec![
            Column::new("k".into(), hist.iter().map(|h| h.0).collect::<Vec<_>>()),
            Column::new(
                "people".into(),
                hist.iter().map(|h| h.1).collect::<Vec<_>>(),
            ),
        ]),
    );
    let mut joint: std::collections::BTreeMap<(i64, i64), i64> = Default::default();
    for i in 0..m {
        let (j, k) = (
            i64::from(deg[e.a[i] as usize]),
            i64::from(deg[e.b[i] as usize]),
        );
        *joint.entry((j, k)).or_default() += 1;
        *joint.entry((k, j)).or_default() += 1;
    }
    put(
        dir,
        "joint",
        frame(vec![
            Column::new("j".into(), joint.keys().map(|x| x.0).collect::<Vec<_>>()),
            Column::new("k".into(), joint.keys().map(|x| x.1).collect::<Vec<_>>()),
            Column::new("ends".into(), joint.values().copied().collect::<Vec<_>>()),
        ]),
    );
    let nb = neighbours::neighbours(&d.graph, &deg);
    let mut sums: std::collections::BTreeMap<(i64, i64), i64> = Default::default();
    for i in (0..n).filter(|&i| deg[i] > 0) {
        *sums
            .entry((i64::from(deg[i]), nb.neighbour_degree_sum[i] as i64))
            .or_default() += 1;
    }
    put(
        dir,
        "neighbour_sums",
        frame(vec![
            Column::new("k".into(), sums.keys().map(|x| x.0).collect::<Vec<_>>()),
            Column::new("total".into(), sums.keys().map(|x| x.1).collect::<Vec<_>>()),
            Column::new("people".into(), sums.values().copied().collect::<Vec<_>>()),
        ]),
    );
    let (mut lr, mut li, mut ln) = (Vec::new(), Vec::new(), Vec::new());
    for (role, c) in [
        ("exposures", d.ledger.exposures),
        ("people", d.ledger.people),
    ] {
        for (item, v) in [
            ("read", c.read),
            ("used", c.used),
            ("merged", c.merged),
            ("quarantined", c.quarantined),
            ("ids_normalised", c.ids_normalised),
        ] {
            lr.push(role.to_string());
            li.push(item.to_string());
            ln.push(v as i64);
        }
    }
    for role in [Role::Exposures, Role::People] {
        for (code, count) in d.ledger.problem_counts(role) {
            lr.push(role.name().to_string());
            li.push(format!("problem:{code}"));
            ln.push(count as i64);
        }
    }
    put(
        dir,
        "ledger",
        frame(vec![
            Column::new("role".into(), lr),
            Column::new("item".into(), li),
            Column::new("n".into(), ln),
        ]),
    );
    let q = &d.ledger.quarantined;
    let field = |r: &hubwatch::ingest::ledger::QuarantineReason| {
        use hubwatch::ingest::ledger::QuarantineReason::*;
        match r {
            MissingId { field } | MissingValueCode { field, .. } => Some(field.clone()),
            _ => None,
        }
    };
    put(
        dir,
        "quarantine",
        frame(vec![
            Column::new(
                "role".into(),
                q.iter()
                    .map(|r| d.ledger.files[r.file].role.name())
                    .collect::<Vec<_>>(),
            ),
            Column::new(
                "ord".into(),
                q.iter().map(|r| r.line as i64).collect::<Vec<_>>(),
            ),
            Column::new(
                "reason".into(),
                q.iter().map(|r| r.reason.code()).collect::<Vec<_>>(),
            ),
            Column::new(
                "field".into(),
                q.iter().map(|r| field(&r.reason)).collect::<Vec<_>>(),
            ),
            Column::new(
                "code".into(),
                q.iter()
                    .map(|r| match &r.reason {
                        hubwatch::ingest::ledger::QuarantineReason::MissingValueCode {
                            code,
                            ..
                        } => Some(code.clone()),
                        _ => None,
                    })
                    .collect::<Vec<_>>(),
            ),
            Column::new(
                "raw".into(),
                q.iter().map(|r| r.raw.clone()).collect::<Vec<_>>(),
            ),
        ]),
    );
    let p = &d.ledger.problems;
    let none: Vec<Option<String>> = vec![None; p.len()];
    put(
        dir,
        "problems",
        frame(vec![
            Column::new(
                "role".into(),
                p.iter()
                    .map(|r| d.ledger.files[r.file].role.name())
                    .collect::<Vec<_>>(),
            ),
            Column::new(
                "ord".into(),
                p.iter().map(|r| r.line as i64).collect::<Vec<_>>(),
            ),
            Column::new(
                "column_name".into(),
                p.iter().map(|r| r.column.clone()).collect::<Vec<_>>(),
            ),
            Column::new(
                "value".into(),
                p.iter().map(|r| r.value.clone()).collect::<Vec<_>>(),
            ),
            Column::new(
                "kind".into(),
                p.iter().map(|r| r.kind.code()).collect::<Vec<_>>(),
            ),
            Column::new("detail".into(), none.clone()),
            Column::new("person".into(), none.clone()),
            Column::new(
                "first_ord".into(),
                p.iter().map(|_| None::<i64>).collect::<Vec<_>>(),
            ),
        ]),
    );
}

fn sample_tables(dir: &Path) -> Dataset {
    let sample = Path::new(env!("CARGO_MANIFEST_DIR")).join("sample-contacts");
    let d = common::load(&[&sample], &[]);
    write_tables(&d, dir);
    d
}

fn json_of(args: &[&str]) -> serde_json::Value {
    let (code, out, err) = hubwatch(args);
    assert_eq!(code, 0, "hubwatch {args:?}: {err}");
    serde_json::from_str(&out).unwrap()
}

#[test]
fn aggregates_give_the_statistics_of_the_raw_reading() {
    let tmp = tempfile::tempdir().unwrap();
    let agg = tmp.path().join("agg");
    let d = sample_tables(&agg);
    let sample = Path::new(env!("CARGO_MANIFEST_DIR")).join("sample-contacts");
    let (s, a) = (sample.to_str().unwrap(), agg.to_str().unwrap());
    let as_of = dates::iso(d.as_of);
    for cmd in [
        &["summary", "--json", "--null-replicates", "2"][..],
        &["outlook", "--json"],
        &["priority", "--json", "--top", "0"],
    ] {
        let raw = json_of(&[cmd, &[s, "--as-of", &as_of]].concat());
        let from = json_of(&[cmd, &["--aggregates", a, "--as-of", &as_of]].concat());
        let (mut raw, mut from) = (raw, from);
        for v in [&mut raw, &mut from] {
            if let Some(o) = v.as_object_mut() {
                o.remove("meta");
            }
        }
        assert_eq!(raw, from, "{cmd:?}");
    }
    // The ledger's counts, by table, reason and kind.
    let raw = json_of(&["check", "--json", s, "--as-of", &as_of]);
    let from = json_of(&["check", "--json", "--aggregates", a, "--as-of", &as_of]);
    for key in ["rows", "quarantined", "field_problems", "balanced"] {
        assert_eq!(raw.get(key), from.get(key), "check: {key}");
    }
}

#[test]
fn degree_tables_alone_give_the_degree_statistics_and_say_what_is_missing() {
    let tmp = tempfile::tempdir().unwrap();
    let agg = tmp.path().join("agg");
    let d = sample_tables(&agg);
    std::fs::remove_file(agg.join("pairs.parquet")).unwrap();
    let sample = Path::new(env!("CARGO_MANIFEST_DIR")).join("sample-contacts");
    let as_of = dates::iso(d.as_of);
    let raw = json_of(&[
        "summary",
        "--json",
        sample.to_str().unwrap(),
        "--as-of",
        &as_of,
    ]);
    let lean = json_of(&["summary", "--json", "--aggregates", agg.to_str().unwrap()]);
    for key in [
        "degree",
        "excess",
        "paradox",
        "knn",
        "fits",
        "rows",
        "people",
        "contacts",
        "max_degree",
    ] {
        let (a, b) = (&raw[key], &lean[key]);
        assert!(close(a, b), "{key}: {a} vs {b}");
    }
    for key in ["r", "se_jackknife"] {
        assert!(
            close(&raw["assortativity"][key], &lean["assortativity"][key]),
            "{key}"
        );
    }
    let missing = lean["unavailable"].as_object().unwrap();
    for key in [
        "components",
        "clustering",
        "bridges",
        "cores",
        "mixing",
        "cases",
    ] {
        assert!(missing.contains_key(key), "{key} not listed as unavailable");
    }
    let (code, text, _) = hubwatch(&["summary", "--aggregates", agg.to_str().unwrap()]);
    assert_eq!(code, 0);
    assert!(
        text.contains("Not available without the pair table"),
        "{text}"
    );
    // Every other command needs the pairs, and says so.
    let (code, _, err) = hubwatch(&["priority", "--aggregates", agg.to_str().unwrap()]);
    assert_ne!(code, 0);
    assert!(
        err.contains("the pair table (pairs.parquet) is not in this folder"),
        "{err}"
    );
}

/// Equal JSON, floats to 1e-9 relative (they are summed in another order from the tables).
fn close(a: &serde_json::Value, b: &serde_json::Value) -> bool {
    use serde_json::Value::*;
    match (a, b) {
        (Number(x), Number(y)) => {
            let (x, y) = (x.as_f64().unwrap(), y.as_f64().unwrap());
            (x - y).abs() <= 1e-9 * x.abs().max(y.abs()).max(1e-3)
        }
        (Array(x), Array(y)) => x.len() == y.len() && x.iter().zip(y).all(|(x, y)| close(x, y)),
        (Object(x), Object(y)) => {
            x.len() == y.len() && x.iter().all(|(k, v)| y.get(k).is_some_and(|w| close(v, w)))
        }
        _ => a == b,
    }
}

#[test]
fn broken_tables_are_refused_with_the_table_and_what_is_wrong() {
    let tmp = tempfile::tempdir().unwrap();
    let agg = tmp.path().join("agg");
    sample_tables(&agg);
    let a = agg.to_str().unwrap();
    let err_of = |args: &[&str]| {
        let (code, _, err) = hubwatch(args);
        assert_ne!(code, 0, "{args:?} should fail");
        err
    };
    // A view cannot be asked of tables made for one network.
    let err = err_of(&["summary", "--aggregates", a, "--setting", "household"]);
    assert!(
        err.contains("give --setting") && err.contains("`hubwatch sql`"),
        "{err}"
    );
    // Unbalanced ledger.
    let ledger = agg.join("ledger.parquet");
    let keep = std::fs::read(&ledger).unwrap();
    put(
        &agg,
        "ledger",
        frame(vec![
            Column::new("role".into(), vec!["exposures"]),
            Column::new("item".into(), vec!["read"]),
            Column::new("n".into(), vec![5i64]),
        ]),
    );
    let err = err_of(&["summary", "--aggregates", a]);
    assert!(
        err.contains("aggregate table ledger") && err.contains("read 5 is not used 0"),
        "{err}"
    );
    std::fs::write(&ledger, keep).unwrap();
    // A pair naming a person the nodes table does not have.
    let pairs = agg.join("pairs.parquet");
    let keep = std::fs::read(&pairs).unwrap();
    put(
        &agg,
        "pairs",
        frame(vec![
            Column::new("a".into(), vec![0i64]),
            Column::new("b".into(), vec![99_999i64]),
            Column::new("rows".into(), vec![1i64]),
            Column::new("a_named_b".into(), vec![1i64]),
            Column::new("first_day".into(), vec![None::<String>]),
            Column::new("last_day".into(), vec![None::<String>]),
            Column::new("minutes".into(), vec![None::<f64>]),
            Column::new("links_ab".into(), vec![0i64]),
            Column::new("links_ba".into(), vec![0i64]),
        ]),
    );
    let err = err_of(&["summary", "--aggregates", a]);
    assert!(
        err.contains("aggregate table pairs: node 99999 is not in the nodes table"),
        "{err}"
    );
    std::fs::write(&pairs, keep).unwrap();
    // Another layout.
    put(
        &agg,
        "meta",
        frame(vec![
            Column::new("key".into(), vec!["layout"]),
            Column::new("value".into(), vec!["0"]),
        ]),
    );
    let err = err_of(&["summary", "--aggregates", a]);
    assert!(err.contains("this hubwatch reads layout 1"), "{err}");
    // A missing table names itself and how to make it.
    std::fs::remove_file(agg.join("meta.parquet")).unwrap();
    let err = err_of(&["summary", "--aggregates", a]);
    assert!(
        err.contains("aggregate table meta is missing") && err.contains("hubwatch sql"),
        "{err}"
    );
}

#[test]
fn a_table_may_be_a_folder_of_part_files() {
    let tmp = tempfile::tempdir().unwrap();
    let agg = tmp.path().join("agg");
    let as_of = dates::iso(sample_tables(&agg).as_of);
    let before = json_of(&[
        "summary",
        "--json",
        "--aggregates",
        agg.to_str().unwrap(),
        "--as-of",
        &as_of,
    ]);
    // Spark writes a folder per table: part files, a _SUCCESS marker and .crc files.
    let f = ParquetReader::new(std::fs::File::open(agg.join("pairs.parquet")).unwrap())
        .finish()
        .unwrap();
    std::fs::remove_file(agg.join("pairs.parquet")).unwrap();
    let dir = agg.join("pairs");
    std::fs::create_dir(&dir).unwrap();
    let half = f.height() / 2;
    put(&dir, "part-00000", f.slice(0, half));
    put(&dir, "part-00001", f.slice(half as i64, f.height() - half));
    std::fs::write(dir.join("_SUCCESS"), "").unwrap();
    std::fs::write(dir.join(".part-00000.parquet.crc"), "x").unwrap();
    let after = json_of(&[
        "summary",
        "--json",
        "--aggregates",
        agg.to_str().unwrap(),
        "--as-of",
        &as_of,
    ]);
    assert_eq!(before, after);
}

// ---------------------------------------------------------------------------------------------
// Degree-table statistics against the same statistics from the network.

fn random_graph(
    n: usize,
    pairs: &[(usize, usize)],
) -> (Vec<u32>, Vec<u32>, hubwatch::graph::Adjacency) {
    let mut set: Vec<(u32, u32)> = pairs
        .iter()
        .map(|&(x, y)| ((x % n) as u32, (y % n) as u32))
        .filter(|(x, y)| x != y)
        .map(|(x, y)| (x.min(y), x.max(y)))
        .collect();
    set.sort_unstable();
    set.dedup();
    let edges = hubwatch::graph::Edges {
        a: set.iter().map(|p| p.0).collect(),
        b: set.iter().map(|p| p.1).collect(),
        ..Default::default()
    };
    let g = hubwatch::graph::adjacency(n, &edges);
    (edges.a, edges.b, g)
}

/// The adjacency of a graph large enough to be filled on two cores (each writing its half of
/// the nodes' lists) holds, for every person, exactly the neighbours and pair indices of the
/// pairs, in increasing order. (The definition of an adjacency list; no external source.)
#[test]
fn adjacency_filled_on_two_cores_lists_every_pair() {
    use rand::{Rng, SeedableRng};
    let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(7);
    let n = 30_000;
    // Skewed ends, so that the two halves of the nodes hold very different numbers of pairs.
    let pairs: Vec<(usize, usize)> = (0..200_000)
        .map(|_| (rng.random_range(0..n) / 7, rng.random_range(0..n)))
        .collect();
    let (a, b, g) = random_graph(n, &pairs);
    assert!(
        a.len() > 100_000,
        "large enough for two workers: {}",
        a.len()
    );
    let mut want: Vec<Vec<(u32, u32)>> = vec![Vec::new(); n];
    for (e, (&x, &y)) in a.iter().zip(&b).enumerate() {
        want[x as usize].push((y, e as u32));
        want[y as usize].push((x, e as u32));
    }
    assert_eq!(g.node_count(), n);
    for (v, w) in want.iter_mut().enumerate() {
        w.sort_unstable();
        let got: Vec<(u32, u32)> = g
            .neighbors_slice(v as u32)
            .iter()
            .copied()
            .zip(g.edges_slice(v as u32).iter().copied())
            .collect();
        assert_eq!(&got, w, "person {v}");
    }
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(64))]

    #[test]
    fn degree_tables_give_the_network_figures(
        n in 2usize..40,
        pairs in proptest::collection::vec((0usize..40, 0usize..40), 0..120),
    ) {
        let (a, b, g) = random_graph(n, &pairs);
        let deg = hubwatch::graph::degrees(&g);
        let direct = neighbours::neighbours(&g, &deg);
        let st = degree::degree_stats(&deg);
        let degrees: Vec<(u32, u64)> = st.histogram.iter().enumerate().filter(|(_, &c)| c > 0).map(|(k, &c)| (k as u32, c)).collect();
        let mut joint: std::collections::BTreeMap<(u32, u32), u64> = Default::default();
        for (&x, &y) in a.iter().zip(&b) {
            let (j, k) = (deg[x as usize], deg[y as usize]);
            *joint.entry((j, k)).or_default() += 1;
            *joint.entry((k, j)).or_default() += 1;
        }
        let joint: Vec<(u32, u32, u64)> = joint.into_iter().map(|((j, k), c)| (j, k, c)).collect();
        let mut sums: std::collections::BTreeMap<(u32, u64), u64> = Default::default();
        for i in (0..n).filter(|&i| deg[i] > 0) {
            *sums.entry((deg[i], direct.neighbour_degree_sum[i])).or_default() += 1;
        }
        let sums: Vec<(u32, u64, u64)> = sums.into_iter().map(|((k, t), c)| (k, t, c)).collect();
        let tables = neighbours::from_tables(&degrees, &joint, &sums);
        let near = |x: &hubwatch::metrics::Stat, y: &hubwatch::metrics::Stat| match (x, y) {
            (Ok(x), Ok(y)) => (x - y).abs() <= 1e-9 * x.abs().max(1.0),
            (Err(x), Err(y)) => x == y,
            _ => false,
        };
        prop_assert_eq!(tables.n_active, direct.n_active);
        for (x, y) in [
            (&tables.edge_end_mean, &direct.edge_end_mean),
            (&tables.contact_mean, &direct.contact_mean),
            (&tables.mean_active, &direct.mean_active),
            (&tables.share_more, &direct.share_more),
            (&tables.share_fewer, &direct.share_fewer),
            (&tables.share_equal, &direct.share_equal),
        ] {
            prop_assert!(near(x, y), "{:?} vs {:?}", x, y);
        }
        // Shares are probabilities that sum to 1 (methods.md: the three versions of the paradox).
        if let (Ok(m), Ok(f), Ok(e)) = (tables.share_more, tables.share_fewer, tables.share_equal) {
            prop_assert!((m + f + e - 1.0).abs() < 1e-12);
        }
        prop_assert_eq!(tables.knn.len(), direct.knn.len());
        for (x, y) in tables.knn.iter().zip(&direct.knn) {
            prop_assert_eq!(x.0, y.0);
            prop_assert!((x.1 - y.1).abs() <= 1e-9 * y.1.abs().max(1.0));
        }
        prop_assert_eq!(tables.contact_excess.len(), direct.contact_excess.len());
        for (x, y) in tables.contact_excess.iter().zip(&direct.contact_excess) {
            prop_assert!((x - y).abs() <= 1e-12);
        }
        // r and its jackknife SE from the pairs counted by end degrees: the same integer sums.
        let counts = mixing::joint_degree_counts(&a, &b, &deg);
        prop_assert_eq!(mixing::assortativity_from_joint(&counts), mixing::assortativity(&a, &b, &deg));
        prop_assert_eq!(mixing::jackknife_from_joint(&counts), mixing::jackknife_se(&a, &b, &deg));
        if let Ok(r) = mixing::assortativity_from_joint(&counts) {
            prop_assert!((-1.0 - 1e-12..=1.0 + 1e-12).contains(&r));
        }
    }
}

#[test]
fn figures_and_the_outlook_work_on_aggregate_tables() {
    let tmp = tempfile::tempdir().unwrap();
    let agg = tmp.path().join("agg");
    let as_of = dates::iso(sample_tables(&agg).as_of);
    let out = tmp.path().join("figs");
    let (code, _, err) = hubwatch(&[
        "figures",
        "--aggregates",
        agg.to_str().unwrap(),
        "--as-of",
        &as_of,
        "--out",
        out.to_str().unwrap(),
        "--format",
        "svg",
        "--null-replicates",
        "0",
    ]);
    assert_eq!(code, 0, "{err}");
    let svgs = std::fs::read_dir(&out)
        .unwrap()
        .filter(|e| {
            e.as_ref()
                .unwrap()
                .path()
                .extension()
                .is_some_and(|x| x == "svg")
        })
        .count();
    assert!(svgs >= 5, "{svgs} figures");
}

#[test]
fn the_tables_as_of_date_wins_and_a_different_one_is_said() {
    let tmp = tempfile::tempdir().unwrap();
    let agg = tmp.path().join("agg");
    let made = dates::iso(sample_tables(&agg).as_of);
    let a = agg.to_str().unwrap();
    let same = json_of(&["check", "--json", "--aggregates", a, "--as-of", &made]);
    let other = json_of(&[
        "check",
        "--json",
        "--aggregates",
        a,
        "--as-of",
        "2020-01-01",
    ]);
    let codes = |v: &serde_json::Value| -> Vec<String> {
        v["warnings"]
            .as_array()
            .unwrap()
            .iter()
            .map(|w| w["code"].as_str().unwrap().to_string())
            .collect()
    };
    assert!(!codes(&same).contains(&"aggregates_as_of".to_string()));
    assert!(
        codes(&other).contains(&"aggregates_as_of".to_string()),
        "{other}"
    );
    let text = other["warnings"].to_string();
    assert!(
        text.contains(&format!("made as of {made}")) && text.contains("not 2020-01-01"),
        "{text}"
    );
}
