//! The same small export in every supported format gives the identical graph and ledger.

use crate::common;

use std::fs;
use std::io::Write;
use std::path::{Path, PathBuf};

use common::{edge_set, load, quarantined, write};
use polars::prelude::*;

/// The rows of the test export: source, target, date, setting.
const ROWS: [(&str, &str, &str, &str); 6] = [
    ("C1", "C2", "2024-03-01", "household"),
    ("C2", "C1", "2024-03-02", "household"),
    ("C1", "C3", "2024-03-03", "school, class 2"),
    ("C3", "C4", "2024-03-04", "workplace"),
    ("C4", "C4", "2024-03-04", "workplace"),
    ("C5", "C6", "2024-03-05", "community"),
];

fn delimited(sep: &str, eol: &str, bom: bool, comments: bool, quote_all: bool) -> Vec<u8> {
    let q = |v: &str| {
        if quote_all || v.contains(sep) {
            format!("\"{v}\"")
        } else {
            v.to_string()
        }
    };
    let mut s = String::new();
    if bom {
        s.push('\u{feff}');
    }
    if comments {
        s.push_str("# exported by an invented system");
        s.push_str(eol);
        s.push_str("# second comment line");
        s.push_str(eol);
    }
    s.push_str(
        &["source_id", "target_id", "exposure_date", "setting"]
            .map(q)
            .join(sep),
    );
    s.push_str(eol);
    for (a, b, d, st) in ROWS {
        s.push_str(&[a, b, d, st].map(q).join(sep));
        s.push_str(eol);
    }
    s.into_bytes()
}

fn frame() -> DataFrame {
    let col = |i: usize| -> Vec<&str> { ROWS.iter().map(|r| [r.0, r.1, r.2, r.3][i]).collect() };
    df!(
        "source_id" => col(0),
        "target_id" => col(1),
        "exposure_date" => col(2),
        "setting" => col(3),
    )
    .unwrap()
}

fn variants(dir: &Path) -> Vec<PathBuf> {
    let mut v = vec![
        write(dir, "comma.csv", delimited(",", "\n", false, false, false)),
        write(
            dir,
            "semicolon.csv",
            delimited(";", "\n", false, false, false),
        ),
        write(dir, "tab.tsv", delimited("\t", "\n", false, false, false)),
        write(dir, "pipe.txt", delimited("|", "\n", false, false, false)),
        write(
            dir,
            "bom_crlf.csv",
            delimited(",", "\r\n", true, false, false),
        ),
        write(
            dir,
            "comments.csv",
            delimited(",", "\n", false, true, false),
        ),
        write(dir, "quoted.csv", delimited(",", "\r\n", true, true, true)),
    ];
    // Whitespace runs: the setting has a space inside, so quote-free layout needs a token
    // without spaces; use a separate file where settings are single words.
    let mut ws = String::from("source_id   target_id exposure_date  setting\n");
    for (a, b, d, st) in ROWS {
        ws.push_str(&format!(
            "  {a}\t {b}  {d}   {}\n",
            st.replace(", class 2", "")
        ));
    }
    v.push(write(dir, "spaces.dat", ws.as_bytes()));
    // gzip of the comma file.
    let mut gz = flate2::write::GzEncoder::new(Vec::new(), flate2::Compression::default());
    gz.write_all(&delimited(",", "\n", false, false, false))
        .unwrap();
    v.push(write(dir, "comma.csv.gz", gz.finish().unwrap()));
    // Parquet and NDJSON through polars.
    let pq = dir.join("table.parquet");
    ParquetWriter::new(fs::File::create(&pq).unwrap())
        .finish(&mut frame())
        .unwrap();
    v.push(pq);
    let nd = dir.join("table.ndjson");
    JsonWriter::new(fs::File::create(&nd).unwrap())
        .with_json_format(JsonFormat::JsonLines)
        .finish(&mut frame())
        .unwrap();
    v.push(nd);
    // A spreadsheet, with dates as real date cells (Excel serial numbers).
    let xl = dir.join("table.xlsx");
    let mut book = rust_xlsxwriter::Workbook::new();
    let sheet = book.add_worksheet();
    let datefmt = rust_xlsxwriter::Format::new().set_num_format("yyyy-mm-dd");
    for (c, h) in ["source_id", "target_id", "exposure_date", "setting"]
        .iter()
        .enumerate()
    {
        sheet.write_string(0, c as u16, *h).unwrap();
    }
    for (r, (a, b, d, st)) in ROWS.iter().enumerate() {
        let r = r as u32 + 1;
        sheet.write_string(r, 0, *a).unwrap();
        sheet.write_string(r, 1, *b).unwrap();
        let dt = rust_xlsxwriter::ExcelDateTime::parse_from_str(d).unwrap();
        sheet
            .write_datetime_with_format(r, 2, &dt, &datefmt)
            .unwrap();
        sheet.write_string(r, 3, *st).unwrap();
    }
    book.save(&xl).unwrap();
    v.push(xl);
    v
}

#[test]
fn every_format_gives_the_same_graph_and_ledger() {
    let dir = tempfile::tempdir().unwrap();
    let files = variants(dir.path());
    let reference = load(&[&files[0]], &[]);
    let pairs = edge_set(&reference);
    assert_eq!(pairs.len(), 4);
    assert_eq!(reference.people(), 6);
    let dates_of = |d: &hubwatch::dataset::Dataset| -> Vec<(i32, i32)> {
        let mut v: Vec<(i32, i32)> = (0..d.edges.len())
            .map(|e| (d.edges.first[e], d.edges.last[e]))
            .collect();
        v.sort();
        v
    };
    for f in &files {
        let d = load(&[f], &[]);
        let name = f.file_name().unwrap().to_string_lossy();
        assert_eq!(edge_set(&d), pairs, "{name}");
        assert_eq!(d.ledger.exposures, reference.ledger.exposures, "{name}");
        assert_eq!(dates_of(&d), dates_of(&reference), "{name}: dates differ");
        assert!(
            d.ledger.problems.is_empty(),
            "{name}: {:?}",
            d.ledger.problems
        );
        assert_eq!(d.settings.len(), 4, "{name}: {:?}", d.settings);
        // The self-exposure is quarantined on the same line or record in every format.
        let q = &d.ledger.quarantined[0];
        let expect = match name.as_ref() {
            "comments.csv" | "quoted.csv" => 8,
            "table.parquet" => 5,
            "table.ndjson" => 5,
            _ => 6,
        };
        assert_eq!(q.line, expect, "{name}");
    }
}

#[test]
fn a_folder_is_sorted_by_columns_not_names() {
    let dir = tempfile::tempdir().unwrap();
    write(dir.path(), "a.csv", b"from,to,date\nX1,X2,2024-01-01\n");
    write(
        dir.path(),
        "b.csv",
        b"ID,role\nX1,case\nX2,contact\nX3,contact\n",
    );
    write(
        dir.path(),
        "notes.txt",
        b"just some notes\nnothing tabular here\n",
    );
    let d = load(&[dir.path()], &[]);
    let roles: Vec<(String, &str)> = d
        .ledger
        .files
        .iter()
        .map(|f| {
            (
                f.path.file_name().unwrap().to_string_lossy().into_owned(),
                f.role.name(),
            )
        })
        .collect();
    assert_eq!(
        roles,
        [
            ("b.csv".to_string(), "people"),
            ("a.csv".to_string(), "exposures")
        ]
    );
    assert_eq!(
        d.ledger.ignored.len(),
        1,
        "notes.txt is reported as ignored"
    );
    assert_eq!((d.people(), d.implied(), d.edges.len()), (3, 0, 1));
}

#[test]
fn quoted_fields_may_hold_newlines_and_lines_stay_exact() {
    let dir = tempfile::tempdir().unwrap();
    let f = write(
        dir.path(),
        "q.csv",
        b"source_id,target_id,setting\nA,B,\"two\nlines\"\nA,A,x\nB,C,\"a, b\"\n",
    );
    let d = load(&[&f], &[]);
    assert_eq!(d.edges.len(), 2);
    assert_eq!(
        d.ledger.quarantined[0].line, 4,
        "line numbers count the embedded newline"
    );
}

#[test]
fn typed_parquet_columns_read_as_their_values() {
    // Integer IDs, a Date column and a Datetime column, as pandas or R would write them.
    // Day numbers computed with Python's datetime: 2024-03-01 is 19783 days after 1970-01-01;
    // 2024-02-28 09:30 is 1709112600000 ms after it.
    let dir = tempfile::tempdir().unwrap();
    let mut df = df!(
        "source_id" => [1i64, 2, 3],
        "target_id" => [2i64, 1, 4],
        "exposure_date" => [19783i32, 19784, 19785],
        "first_exposure_date" => [1_709_112_600_000i64, 1_709_112_600_000, 1_709_112_600_000],
    )
    .unwrap();
    df.try_apply("exposure_date", |s| s.cast(&DataType::Date))
        .unwrap();
    df.try_apply("first_exposure_date", |s| {
        s.cast(&DataType::Datetime(TimeUnit::Milliseconds, None))
    })
    .unwrap();
    let pq = dir.path().join("typed.parquet");
    ParquetWriter::new(fs::File::create(&pq).unwrap())
        .finish(&mut df)
        .unwrap();
    let d = load(&[&pq], &[]);
    assert!(d.ledger.problems.is_empty(), "{:?}", d.ledger.problems);
    assert_eq!(
        edge_set(&d),
        [
            ("1".to_string(), "2".to_string(), 2),
            ("3".to_string(), "4".to_string(), 1)
        ]
    );
    let e = (0..d.edges.len())
        .find(|&e| d.ids.name(d.edges.a[e]) == "1")
        .unwrap();
    assert_eq!(hubwatch::ingest::dates::iso(d.edges.first[e]), "2024-02-28");
    assert_eq!(hubwatch::ingest::dates::iso(d.edges.last[e]), "2024-03-02");
}

#[test]
fn reading_in_many_small_chunks_changes_nothing() {
    // The loader parses text in chunks (about 48 MB each; here forced down to a line or two);
    // line numbers, ledger and graph must not depend on the chunk size.
    let dir = tempfile::tempdir().unwrap();
    let mut text = String::from("# a comment\nsource_id,target_id,exposure_date,duration_min\n");
    // Over 4 KB, so that the pages of consumed chunks are also given back as the read goes.
    for i in 0..400 {
        match i % 17 {
            3 => text.push_str(&format!("P{i},P{i},2024-03-01,5\n")),
            5 => text.push('\n'),
            7 => text.push_str(&format!("P{i},P{},2024-02-30,5,extra\n", i + 1)),
            11 => text.push_str(&format!("P{i},P{},2024-02-30,-5\n", i % 9)),
            _ => text.push_str(&format!(
                "P{},P{},2024-03-0{},{}\n",
                i % 13,
                i % 7 + 20,
                i % 9 + 1,
                i
            )),
        }
    }
    let f = write(dir.path(), "many.csv", text.as_bytes());
    let run = |chunk_rows: usize| read_chunked(&f, chunk_rows).unwrap();
    let whole = run(0);
    for chunk_rows in [1, 2, 5] {
        let d = run(chunk_rows);
        assert_eq!(edge_set(&d), edge_set(&whole), "chunk_rows {chunk_rows}");
        assert_eq!(d.ledger.exposures, whole.ledger.exposures);
        let lines = |d: &hubwatch::dataset::Dataset| -> (Vec<u64>, Vec<(u64, String)>) {
            (
                d.ledger.quarantined.iter().map(|q| q.line).collect(),
                d.ledger
                    .problems
                    .iter()
                    .map(|p| (p.line, p.column.clone()))
                    .collect(),
            )
        };
        assert_eq!(lines(&d), lines(&whole), "chunk_rows {chunk_rows}");
    }
    // Spot-check one line number by hand: row i = 3 is on line 3 + 3 = 6 (two lines before
    // the data, plus blank lines at i = 5 only after it).
    assert!(whole
        .ledger
        .quarantined
        .iter()
        .any(|q| q.line == 6 && q.reason.code() == "self_exposure"));
    assert!(whole.ledger.exposures.balanced());
}

/// Pieces read straight from the text while they are plain, then the line scan from the first
/// piece that is not (a quoted value over two lines, a comment, a line with a field too many,
/// a blank line, all well after the start): the same rows, lines, ledger and pairs as one
/// scan of the whole file. (This project's own equivalence check: no external source.)
#[test]
fn plain_pieces_then_the_line_scan_read_as_one_scan() {
    let dir = tempfile::tempdir().unwrap();
    let mut text = String::from("source_id,target_id,exposure_date,setting,duration_min\n");
    for i in 0..600 {
        let row = match i {
            300 => "P300,Q300,2024-03-01,\"work\nsite\",5".to_string(),
            301 => "P301,P301,2024-03-01,home,5".to_string(),
            400 => "# a comment".to_string(),
            450 => "P450,Q450,2024-03-01,home,5,extra".to_string(),
            500 => String::new(),
            _ => format!(
                "P{},Q{},2024-03-{:02},{},{}",
                i % 37,
                i % 41,
                i % 28 + 1,
                ["work", "home"][i % 2],
                i % 200
            ),
        };
        text.push_str(&row);
        text.push('\n');
    }
    let f = write(dir.path(), "late.csv", text.as_bytes());
    let read = |chunk_rows: usize| read_chunked(&f, chunk_rows).unwrap();
    // One piece: the whole file goes through the line scan.
    let whole = read(0);
    for chunk_rows in [1, 7, 100, 290] {
        let d = read(chunk_rows);
        assert_eq!(
            pair_fields(&d),
            pair_fields(&whole),
            "chunk_rows {chunk_rows}"
        );
        assert_eq!(
            ledger_json(&d),
            ledger_json(&whole),
            "chunk_rows {chunk_rows}"
        );
    }
    // By hand: the header is line 1, row i is on line i + 2, and row 300 takes two lines, so
    // the self-exposure of row 301 is on line 304 and the line with a field too many on 453.
    let aside = quarantined(&whole);
    assert!(aside.contains(&(304, "self_exposure")), "{aside:?}");
    assert!(aside.iter().any(|&(l, _)| l == 453), "{aside:?}");
    assert_eq!(aside.len(), 2, "{aside:?}");
    assert!(whole.ledger.exposures.balanced());
}

/// The exposures table's first piece is tokenised while the people table is read (when it is
/// plain) and read as its own piece after; when it is not plain (a comment line here), the
/// line scan reads the table. Either way the rows and their lines are those counted by hand.
#[test]
fn the_next_table_s_first_piece_read_ahead_or_not() {
    let dir = tempfile::tempdir().unwrap();
    let people = write(
        dir.path(),
        "people.csv",
        b"person_id,role\nA1,case\nA2,contact\nA3,contact\n",
    );
    let plain = "source_id,target_id,exposure_date\nA1,A2,2024-03-01\nA2,A3,2024-03-01\nA3,A3,2024-03-02\nA1,A3,2024-03-02\n";
    let commented = "source_id,target_id,exposure_date\n# checked 2024-03-03\nA1,A2,2024-03-01\nA2,A3,2024-03-01\nA3,A3,2024-03-02\nA1,A3,2024-03-02\n";
    // The self-exposure is on line 4 of the plain file and line 5 of the other.
    for (text, line) in [(plain, 4), (commented, 5)] {
        let exposures = write(dir.path(), "exposures.csv", text.as_bytes());
        for chunk_rows in [0, 1, 2] {
            let d = read_pair_chunked(&people, &exposures, chunk_rows);
            let x = d.ledger.exposures;
            let at = format!("line {line}, chunk_rows {chunk_rows}");
            assert_eq!((x.read, x.used, x.quarantined), (4, 3, 1), "{at}");
            assert_eq!(d.ledger.quarantined.len(), 1, "{at}");
            assert_eq!(d.ledger.quarantined[0].line, line, "{at}");
            assert_eq!(d.edges.len(), 3, "{at}");
        }
    }
}

/// A people table large enough to be read on two cores (IDs on one, the attributes' values
/// shared out between both) gives the people, values, quarantined rows and problems, in the same order, as the
/// same table read in pieces small enough to be read on one. (This project's own equivalence
/// check: no external source.)
#[test]
fn people_read_on_two_cores_as_on_one() {
    let dir = tempfile::tempdir().unwrap();
    let mut text = String::from("person_id,role,onset_date,area\n");
    for i in 0..60_000u32 {
        let id = if i % 101 == 0 {
            String::new()
        } else {
            format!("P{}", i % 50_000)
        };
        let onset = match i % 97 {
            0 => "2024-02-30".to_string(),
            1 => "2031-01-01".to_string(),
            2 => String::new(),
            _ => format!("2024-03-{:02}", i % 28 + 1),
        };
        text.push_str(&format!(
            "{id},{},{onset},AR{}\n",
            ["case", "contact"][i as usize % 2],
            i % 7
        ));
    }
    let people = write(dir.path(), "people.csv", text.as_bytes());
    let exposures = write(
        dir.path(),
        "exposures.csv",
        b"source_id,target_id\nP1,P2\nP3,Q9\n",
    );
    let run = |chunk_rows: usize| read_pair_chunked(&people, &exposures, chunk_rows);
    type Seen = (
        Vec<String>,
        Vec<Vec<Option<String>>>,
        Vec<(u64, String)>,
        Vec<(u64, String, String, String)>,
    );
    let seen = |d: &hubwatch::dataset::Dataset| -> Seen {
        let n = d.ids.len() as u32;
        (
            (0..n).map(|i| d.ids.name(i).to_string()).collect(),
            d.attrs
                .values
                .iter()
                .map(|c| c.iter().map(|v| v.map(str::to_string)).collect())
                .collect(),
            d.ledger
                .quarantined
                .iter()
                .map(|q| (q.line, q.reason.code().to_string()))
                .collect(),
            d.ledger
                .problems
                .iter()
                .map(|p| (p.line, p.column.clone(), p.value.clone(), p.reason.clone()))
                .collect(),
        )
    };
    let whole = seen(&run(0));
    let pieces = seen(&run(1000));
    // P0..P49999 less the 396 of P10000..P49999 whose one row has no ID, and Q9 (implied).
    assert_eq!(whole.0.len(), 49_605);
    assert!(
        whole.3.iter().any(|p| p.3.contains("P1") && p.1 == "area"),
        "a conflict is reported"
    );
    assert!(whole
        .3
        .iter()
        .any(|p| p.1 == "onset_date" && p.2 == "2024-02-30"));
    assert_eq!(whole.2.len(), 595, "one row in 101 has no ID");
    assert_eq!(whole, pieces);
}

/// Exposure fields are checked for the usable rows only: a quarantined row (same person
/// twice, or no source) reports no field problem and brings no setting label. Read whole (each
/// chunk's rows in four runs on two cores, the IDs no person has numbered on two cores) or in
/// small pieces (one run each), everything is the same: people and their order, pairs and
/// their fields, setting labels and their numbering (one spelled in two ways, one first seen
/// in the second run), and the ledger to the last line and reason. (The reader's rule that a
/// quarantined row adds nothing, and that the cores change nothing: this project's own, no
/// external source.)
#[test]
fn quarantined_exposure_rows_add_no_field_problem_and_no_setting() {
    let dir = tempfile::tempdir().unwrap();
    let mut text = String::from("source_id,target_id,exposure_date,setting,duration_min\n");
    for i in 0..60_000u32 {
        let (a, b) = (format!("P{}", i % 5000), format!("P{}", (i * 7 + 1) % 5000));
        let row = match i % 53 {
            // Quarantined, with a bad date, a bad duration and a label of its own.
            0 => format!("{a},{a},2024-02-30,Boat,-5"),
            1 => format!(",{b},2031-01-01,Boat,abc"),
            // Usable, with the same problems and a common label.
            2 => format!("{a},{b},2024-02-30,work,-5"),
            // Blank and coded IDs, a date after the last one, a label first seen late.
            3 => format!("{a}, ,2024-03-01,work,5"),
            4 => format!("NA,{b},2024-03-01,work,5"),
            5 => format!("{a},{b},2024-03-01,work,5,"),
            6 if i > 40_000 => format!("{a},Q{i},2024-03-01,Ship,5"),
            7 => format!("{a},{b},2024-03-01,home,2.5"),
            _ => format!(
                "{a},{b},2024-03-{:02},{},{}",
                i % 28 + 1,
                ["work", "Home"][i as usize % 2],
                i % 300
            ),
        };
        text.push_str(&row);
        text.push('\n');
    }
    let f = write(dir.path(), "exposures.csv", text.as_bytes());
    let read = |chunk_rows: usize| read_chunked(&f, chunk_rows).unwrap();
    let whole = read(0);
    for (chunk_rows, d) in [(0, &whole), (1000, &read(1000))] {
        let aside: std::collections::BTreeSet<u64> =
            d.ledger.quarantined.iter().map(|q| q.line).collect();
        let set_aside = (0..60_000).filter(|i| [0, 1, 3, 4, 5].contains(&(i % 53)));
        assert_eq!(
            aside.len(),
            set_aside.count(),
            "rows i % 53 in 0, 1, 3, 4 and 5, chunk_rows {chunk_rows}"
        );
        assert!(d.ledger.problems.iter().all(|p| !aside.contains(&p.line)));
        // Each usable row i % 53 == 2 has a bad date and a negative duration.
        assert_eq!(d.ledger.problems.len(), 2 * 1133, "chunk_rows {chunk_rows}");
        assert_eq!(
            d.settings,
            ["work", "home", "Ship"],
            "chunk_rows {chunk_rows}"
        );
        let people: Vec<&str> = (0..d.people() as u32).map(|i| d.ids.name(i)).collect();
        let whole_people: Vec<&str> = (0..whole.people() as u32)
            .map(|i| whole.ids.name(i))
            .collect();
        assert_eq!(people, whole_people, "chunk_rows {chunk_rows}");
        assert_eq!(
            pair_fields(d),
            pair_fields(&whole),
            "chunk_rows {chunk_rows}"
        );
        assert_eq!(
            ledger_json(d),
            ledger_json(&whole),
            "chunk_rows {chunk_rows}"
        );
    }
}

/// A table that stops on its first piece (ambiguous dates) while later pieces are being parsed
/// on the reader's own thread: the error comes back and nothing waits for ever.
#[test]
fn an_error_in_an_early_piece_stops_the_parser_thread_too() {
    let dir = tempfile::tempdir().unwrap();
    let mut text = String::from("source_id,target_id,exposure_date\n");
    for i in 0..2000 {
        text.push_str(&format!("P{i},Q{i},{:02}/04/2024\n", i % 28 + 1));
    }
    let f = write(dir.path(), "dmy.csv", text.as_bytes());
    for chunk_rows in [1, 3, 0] {
        let e = read_chunked(&f, chunk_rows)
            .err()
            .unwrap_or_else(|| panic!("chunk_rows {chunk_rows}: the load should stop"));
        assert!(
            e.to_string().contains("could be day-first or month-first"),
            "chunk_rows {chunk_rows}: {e}"
        );
    }
}

/// One file, its role decided by its columns, read in pieces of about `chunk_rows` rows (0:
/// whole).
fn read_chunked(
    f: &Path,
    chunk_rows: usize,
) -> hubwatch::error::Result<hubwatch::dataset::Dataset> {
    use hubwatch::ingest::Input;
    let inputs = [Input::Path(f.to_path_buf())];
    hubwatch::dataset::load(
        &inputs,
        &hubwatch::config::Config::default(),
        &chunked(chunk_rows),
    )
}

/// A people file and an exposures file, given as such, read in pieces of about `chunk_rows`
/// rows (0: whole).
fn read_pair_chunked(
    people: &Path,
    exposures: &Path,
    chunk_rows: usize,
) -> hubwatch::dataset::Dataset {
    use hubwatch::ingest::{ledger::Role, Input};
    let inputs = [
        Input::Given {
            path: people.to_path_buf(),
            role: Role::People,
        },
        Input::Given {
            path: exposures.to_path_buf(),
            role: Role::Exposures,
        },
    ];
    hubwatch::dataset::load(
        &inputs,
        &hubwatch::config::Config::default(),
        &chunked(chunk_rows),
    )
    .unwrap()
}

/// Each pair in order: its two people, rows, first and last day, minutes and settings.
type PairFields = ((String, String), u32, (i32, i32), String, Vec<u16>);

/// The pairs of `d` with what each holds (see [`PairFields`]).
fn pair_fields(d: &hubwatch::dataset::Dataset) -> Vec<PairFields> {
    (0..d.edges.len())
        .map(|e| {
            let (a, b) = (d.edges.a[e], d.edges.b[e]);
            let names = (d.ids.name(a).to_string(), d.ids.name(b).to_string());
            let days = (d.edges.first[e], d.edges.last[e]);
            let minutes = format!("{:?}", d.edges.minutes[e]);
            (
                names,
                d.edges.rows[e],
                days,
                minutes,
                d.edges.settings(e).to_vec(),
            )
        })
        .collect()
}

/// The ledger of `d` as JSON, to compare two loads to the last line and reason.
fn ledger_json(d: &hubwatch::dataset::Dataset) -> String {
    serde_json::to_string(&d.ledger).unwrap()
}

/// Load options reading delimited text in pieces of about `chunk_rows` rows (0: whole), dates
/// up to 2030.
fn chunked(chunk_rows: usize) -> hubwatch::ingest::LoadOptions {
    use hubwatch::ingest::{dates, table::ReadOptions, LoadOptions};
    LoadOptions {
        overrides: Vec::new(),
        as_of: dates::parse_iso("2030-01-01").unwrap(),
        read: ReadOptions {
            sheet: None,
            chunk_rows,
        },
        progress: false,
        view: Default::default(),
    }
}

/// Each chunk of delimited text says how many rows are still to come, estimated from the bytes
/// left at its own rows per byte (so the people table can take room for all of them at once):
/// with rows of one length the estimate is within a row of the count, and 0 after the last
/// chunk; the rows delivered are every row, in the same pieces when the first was tokenised
/// ahead. (Counting rule of the reader, no external source.)
#[test]
fn chunks_estimate_the_rows_still_to_come() {
    use hubwatch::config::Config;
    use hubwatch::ingest::table::{ReadOptions, Table};
    let dir = tempfile::tempdir().unwrap();
    let mut text = String::from("person_id,area\n");
    for i in 0..5000 {
        text.push_str(&format!("P{i:06},north\n"));
    }
    let f = write(dir.path(), "people.csv", text.as_bytes());
    let opts = ReadOptions {
        sheet: None,
        chunk_rows: 300,
    };
    let read = |ahead: bool| {
        let table = Table::open(&f, &Config::default(), &opts).unwrap();
        // The first piece tokenised ahead, as while a table before this one is read.
        let first = ahead.then(|| table.first_piece(&opts)).flatten();
        assert_eq!(first.is_some(), ahead);
        let mut seen = Vec::new();
        table
            .read(&opts, (first, None), |chunk| {
                seen.push((chunk.cells.height(), chunk.rows_ahead));
                Ok(())
            })
            .unwrap();
        seen
    };
    let seen = read(false);
    assert_eq!(read(true), seen);
    assert!(seen.len() > 5, "{seen:?}");
    let mut left = 5000usize;
    for &(n, ahead) in &seen {
        left -= n;
        assert!(
            ahead.abs_diff(left) <= 1,
            "estimated {ahead}, {left} to come"
        );
    }
    assert_eq!(left, 0);
    assert_eq!(seen.last().unwrap().1, 0);
}
