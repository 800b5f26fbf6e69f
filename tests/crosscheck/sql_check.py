"""The SQL of `hubwatch sql`, run in DuckDB and in Apache Spark (local mode), must give the
same statistics and ledger as hubwatch's own reading of the raw files.

For each export: the raw files are loaded into the engine as text tables (with each row's line
number as `hw_line`), the generated SQL makes the aggregate tables as Parquet, and then

- `summary --json` on the raw files and on `--aggregates DIR` must agree on every member
  (integers and text exactly, floats to 1e-9 relative), apart from where the input came from;
- `check --json` must agree on every count: rows read, used, merged, quarantined by reason,
  field problems by kind;
- `outlook --json` must agree;
- with the pair table removed, `summary --json --aggregates DIR` must give the same degree
  statistics (distribution, excess degree, paradox, k_nn, r and its jackknife SE) and list the
  figures it cannot give.

Usage: sql_check.py HUBWATCH ENGINE WORKDIR NAME=SPEC...   (ENGINE: duckdb or spark)
SPEC: exposures CSV path, then optional ;people=PATH ;column=FIELD=HEADER (repeatable)
;view=--setting=household (extra options for both readings).
"""

import csv
import gzip
import json
import math
import os
import shutil
import subprocess
import sys

AS_OF = "2026-11-01"
# Members that say where the input came from, not what it holds.
IGNORED_KEYS = {"files", "file", "path", "format", "role_by", "encoding", "header", "ignored", "timings"}


def run(binary, *args):
    p = subprocess.run([binary, *args], capture_output=True, text=True)
    if p.returncode != 0:
        raise SystemExit(f"{binary} {' '.join(args)} failed:\n{p.stderr}")
    return p.stdout


def header_of(path):
    opener = gzip.open if path.endswith(".gz") else open
    with opener(path, "rt", newline="", encoding="utf-8-sig") as f:
        return next(csv.reader(f))


def compare(a, b, path, problems, ignore=IGNORED_KEYS):
    if isinstance(a, dict) and isinstance(b, dict):
        for k in sorted(set(a) | set(b)):
            if k in ignore:
                continue
            if k not in a or k not in b:
                problems.append(f"{path}.{k}: only in {'raw' if k in a else 'aggregates'}")
                continue
            compare(a[k], b[k], f"{path}.{k}", problems, ignore)
    elif isinstance(a, list) and isinstance(b, list):
        if len(a) != len(b):
            problems.append(f"{path}: {len(a)} items (raw) vs {len(b)} (aggregates)")
            return
        for i, (x, y) in enumerate(zip(a, b)):
            compare(x, y, f"{path}[{i}]", problems, ignore)
    elif isinstance(a, float) or isinstance(b, float):
        if a is None or b is None or not math.isclose(a, b, rel_tol=1e-9, abs_tol=1e-12):
            problems.append(f"{path}: {a!r} (raw) vs {b!r} (aggregates)")
    elif a != b:
        problems.append(f"{path}: {a!r} (raw) vs {b!r} (aggregates)")


class DuckDb:
    def __init__(self, work):
        import duckdb

        self.con = duckdb.connect(os.path.join(work, "engine.duckdb"))

    def load(self, name, path):
        # Every column as text, each row with its line number (the header is line 1).
        self.con.execute(
            f"CREATE OR REPLACE TABLE {name} AS SELECT row_number() OVER () + 1 AS hw_line, * "
            f"FROM read_csv('{path}', all_varchar = true, header = true, quote = '\"', escape = '\"')"
        )

    def run(self, sql):
        self.con.execute(sql)

    def close(self):
        self.con.close()


class Spark:
    def __init__(self, work):
        from pyspark.sql import SparkSession

        self.spark = (
            SparkSession.builder.master("local[2]")
            .appName("hubwatch-sql-check")
            .config("spark.ui.enabled", "false")
            .config("spark.ui.showConsoleProgress", "false")
            .config("spark.sql.shuffle.partitions", "4")
            .config("spark.driver.memory", "6g")
            .config("spark.sql.warehouse.dir", os.path.join(work, "warehouse"))
            .config("spark.driver.extraJavaOptions", f"-Djava.io.tmpdir={work}")
            .getOrCreate()
        )
        self.spark.sparkContext.setLogLevel("ERROR")

    def load(self, name, path):
        from pyspark.sql import functions as F

        df = self.spark.read.option("header", True).option("escape", '"').csv(path)
        # The line number: rows in file order (zipWithIndex keeps the order of the read).
        rdd = df.rdd.zipWithIndex().map(lambda r: (r[1] + 2, *r[0]))
        cols = ["hw_line", *df.columns]
        self.spark.createDataFrame(rdd, cols).createOrReplaceTempView(name)
        _ = F

    def run(self, sql):
        for stmt in split_statements(sql):
            self.spark.sql(stmt)

    def close(self):
        self.spark.stop()


def split_statements(sql):
    out, cur = [], []
    for line in sql.splitlines():
        if line.startswith("--") and not cur:
            continue
        cur.append(line)
        if line.rstrip().endswith(";"):
            out.append("\n".join(cur).rstrip().rstrip(";"))
            cur = []
    if "".join(cur).strip():
        out.append("\n".join(cur))
    return out


def write_hostile(folder):
    """A small export of invented rows, each planted to hit one rule of the reader: IDs padded
    with tabs and no-break spaces, missing-value codes as IDs, one name in composed and
    decomposed Unicode, a self-exposure hidden by padding, every kind of bad date and duration,
    settings spelled in three cases, yes/no flags and one that is neither, a repeated person
    whose area disagrees."""
    os.makedirs(folder, exist_ok=True)
    jose_nfc, jose_nfd = "Jos\u00e9-01", "Jose\u0301-01"
    exposures = [
        ["source_id", "target_id", "exposure_date", "first_exposure_date", "setting", "duration_min", "transmission"],
        ["A1", "A2", "2026-10-05", "2026-10-01", "Household", "30", "yes"],
        [" A1\t", "A3", "2026-10-05T10:00", "", "household ", "15.5", "no"],
        ["A2", "A1", "2026-10-06", "", "HOUSEHOLD", "abc", "Y"],
        ["A1", "\u00a0A1", "2026-10-06", "", "work", "10", "no"],
        ["NA", "A2", "2026-10-06", "", "work", "10", "no"],
        ["A3", "null", "2026-10-06", "", "work", "10", "no"],
        ["A3", "", "2026-10-06", "", "work", "10", "no"],
        ["A3", jose_nfc, "2026-02-30", "", "school", "-5", "maybe"],
        [jose_nfd, "A4", "2026/01/05", "", "School", "1e9", "0"],
        ["A4", "A5", "2027-01-01", "2026-12-30", "na", "inf", "false"],
        ["A5", "A6", "1900-01-01", "", "work", "NaN", "t"],
        ["A6", "A7", "2026-10-01", "2026-10-09", "work", "20", "n"],
        ["A7", "A8", "", "2026-10-02", "", "", ""],
        ["A8", "A1", "2026-10-03", "", "Community", "0", "1"],
        ["A8", "A9", "2026-10-03", "", "community", "-0", "f"],
        ["A9", "A2", "2026-10-04", "", "community", "1.5e2", "no"],
    ]
    people = [
        ["person_id", "role", "onset_date", "area"],
        ["A1", "case", "2026-10-01", "Fernhollow"],
        ["A2", "contact", "", "Fernhollow"],
        ["A1", "case", "2026-10-02", "Brackenmoor"],
        [" A3 ", "contact", "2026-13-01", "Brackenmoor"],
        ["", "contact", "", "Brackenmoor"],
        ["N/A", "contact", "", "Brackenmoor"],
        [jose_nfd, "case", "2026-10-04", "Saltmere"],
        [jose_nfc, "case", "2026-10-04", "Saltmere"],
        ["A6", "contact", "2099-01-01", ""],
    ]
    for name, rows in (("exposures.csv", exposures), ("people.csv", people)):
        with open(os.path.join(folder, name), "w", newline="", encoding="utf-8") as f:
            csv.writer(f).writerows(rows)


def parse_spec(spec):
    parts = spec.split(";")
    case = {"exposures": parts[0], "people": None, "columns": [], "view": []}
    for p in parts[1:]:
        k, v = p.split("=", 1)
        if k == "people":
            case["people"] = v
        elif k == "column":
            case["columns"].append(v)
        elif k == "view":
            case["view"].append(v)
    return case


def check_case(binary, engine, work, name, case):
    problems = []
    maps = [f"--column={c}" for c in case["columns"]]
    raw_in = ["--exposures", case["exposures"]]
    if case["people"]:
        raw_in += ["--people", case["people"]]
    common = ["--as-of", AS_OF, *maps, *case["view"]]
    engine.load("hw_raw_exposures", case["exposures"])
    sql_args = [
        "sql", "--dialect", ENGINE_NAME, "--exposures", "hw_raw_exposures",
        "--exposures-columns", ",".join(header_of(case["exposures"])),
        "--row-order", "hw_line",
    ]
    if case["people"]:
        engine.load("hw_raw_people", case["people"])
        sql_args += ["--people", "hw_raw_people", "--people-columns", ",".join(header_of(case["people"]))]
    out = os.path.join(work, f"agg-{name}")
    shutil.rmtree(out, ignore_errors=True)
    os.makedirs(out)
    sql = run(binary, *sql_args, "--parquet", out, *common)
    engine.run(sql)
    agg = ["--aggregates", out]
    as_of = ["--as-of", AS_OF]
    for cmd in (["summary", "--json", "--null-replicates", "2"], ["check", "--json"], ["outlook", "--json"]):
        a = json.loads(run(binary, *cmd, *raw_in, *common))
        b = json.loads(run(binary, *cmd, *agg, *as_of))
        compare(a, b, f"{name}:{cmd[0]}", problems)
        if cmd[0] == "summary":
            raw_summary = a
    # Degree tables only: the same degree statistics, and the rest said to be unavailable.
    lean = os.path.join(work, f"agg-{name}-lean")
    shutil.rmtree(lean, ignore_errors=True)
    shutil.copytree(out, lean, ignore=shutil.ignore_patterns("pairs", "pairs.parquet"))
    c = json.loads(run(binary, "summary", "--json", *["--aggregates", lean], *as_of))
    for key in ("degree", "excess", "paradox", "knn", "fits", "rows", "people", "contacts", "isolated", "max_degree"):
        if key not in c:
            problems.append(f"{name}:lean: no member {key}")
            continue
        compare(raw_summary[key], c[key], f"{name}:lean.{key}", problems)
    for key in ("r", "se_jackknife"):
        compare(raw_summary["assortativity"][key], c["assortativity"][key], f"{name}:lean.assortativity.{key}", problems)
    if not c.get("unavailable"):
        problems.append(f"{name}:lean: no list of unavailable figures")
    return problems


def main():
    global ENGINE_NAME
    binary, engine_name, work, *cases = sys.argv[1:]
    ENGINE_NAME = engine_name
    engine = DuckDb(work) if engine_name == "duckdb" else Spark(work)
    failed = []
    hostile = os.path.join(work, "hostile")
    write_hostile(hostile)
    cases = [f"hostile={hostile}/exposures.csv;people={hostile}/people.csv", *cases]
    try:
        for c in cases:
            name, spec = c.split("=", 1)
            problems = check_case(binary, engine, work, name, parse_spec(spec))
            status = "ok" if not problems else f"{len(problems)} differences"
            print(f"{engine_name} {name}: {status}")
            for p in problems[:25]:
                print("   ", p)
            if problems:
                failed.append(name)
    finally:
        engine.close()
    if failed:
        raise SystemExit(f"{engine_name}: aggregates differ from the raw reading for {', '.join(failed)}")
    print(f"{engine_name}: {len(cases)} exports, every statistic and ledger count equal")


if __name__ == "__main__":
    main()
