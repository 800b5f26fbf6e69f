"""The warehouse path, timed whole: raw CSV tables loaded into an engine (DuckDB in-process, or
Apache Spark in local mode on this machine's cores), the SQL of `hubwatch sql` run there to
write the aggregate tables as Parquet, then `hubwatch summary --aggregates DIR`. Prints the time
of each stage on stderr and hubwatch's JSON summary on stdout.

Usage: sql_path.py HUBWATCH duckdb|spark EXPORT_DIR WORK_DIR [--column F=C ...] [--as-of DATE]
EXPORT_DIR holds people.csv and exposures.csv. The engine's own row order stands in for line
numbers (as it would in a warehouse table without one).
"""
import csv
import os
import shutil
import subprocess
import sys
import time


def header(path):
    with open(path, newline="", encoding="utf-8-sig") as f:
        return next(csv.reader(f))


def main():
    binary, engine, export, work, *extra = sys.argv[1:]
    people, exposures = (os.path.join(export, f) for f in ("people.csv", "exposures.csv"))
    out = os.path.join(work, f"agg-{engine}")
    shutil.rmtree(out, ignore_errors=True)
    os.makedirs(out)
    t0 = time.perf_counter()
    sql = subprocess.run(
        [binary, "sql", "--dialect", engine, "--exposures", "raw_exposures", "--people", "raw_people",
         "--exposures-columns", ",".join(header(exposures)), "--people-columns", ",".join(header(people)),
         "--parquet", out, *extra],
        check=True, capture_output=True, text=True).stdout
    if engine == "duckdb":
        import duckdb

        con = duckdb.connect()
        for name, path in (("raw_exposures", exposures), ("raw_people", people)):
            con.execute(f"CREATE TABLE {name} AS SELECT * FROM read_csv('{path}', all_varchar = true, header = true)")
        t1 = time.perf_counter()
        con.execute(sql)
        con.close()
    else:
        from pyspark.sql import SparkSession

        spark = (SparkSession.builder.master("local[*]").appName("hubwatch-sql-path")
                 .config("spark.ui.enabled", "false").config("spark.ui.showConsoleProgress", "false")
                 .config("spark.driver.memory", "12g")
                 .config("spark.local.dir", work).getOrCreate())
        spark.sparkContext.setLogLevel("ERROR")
        for name, path in (("raw_exposures", exposures), ("raw_people", people)):
            spark.read.option("header", True).csv(path).createOrReplaceTempView(name)
        t1 = time.perf_counter()
        stmts, cur = [], []
        for line in sql.splitlines():
            if line.startswith("--") and not cur:
                continue
            cur.append(line)
            if line.rstrip().endswith(";"):
                stmts.append("\n".join(cur).rstrip().rstrip(";"))
                cur = []
        for s in stmts:
            spark.sql(s)
        spark.stop()
    t2 = time.perf_counter()
    summary = subprocess.run([binary, "summary", "--json", "--null-replicates", "0", "--aggregates", out],
                             check=True, capture_output=True, text=True).stdout
    t3 = time.perf_counter()
    print(f"{engine}: load {t1 - t0:.1f} s, SQL {t2 - t1:.1f} s, hubwatch on the aggregates {t3 - t2:.1f} s",
          file=sys.stderr)
    sys.stdout.write(summary)


if __name__ == "__main__":
    main()
