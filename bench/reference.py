"""Reference pipeline written with the Python polars package, timed by hubwatch-bench.

Reads both tables (every column, as text), drops malformed rows (blank IDs) and self-loops,
merges pairs given in either order, and computes the degree of every person. Prints one JSON
line: {"seconds": wall time, "peak_mib": peak resident memory, "pairs": distinct pairs,
"people": n}. `load_pairs` is shared with reference_stats.py.
"""
import json
import resource
import sys
import time

import polars as pl


def load_pairs(people_path, exposures_path):
    """Both tables read whole; returns (people, distinct unordered pairs a < b)."""
    people = pl.read_csv(people_path, infer_schema_length=0)
    ex = pl.read_csv(exposures_path, infer_schema_length=0, truncate_ragged_lines=True)
    ex = ex.with_columns(pl.col("source_id").str.strip_chars(), pl.col("target_id").str.strip_chars())
    ex = ex.filter(
        pl.col("source_id").is_not_null()
        & pl.col("target_id").is_not_null()
        & (pl.col("source_id") != "")
        & (pl.col("target_id") != "")
        & (pl.col("source_id") != pl.col("target_id"))
    )
    pairs = ex.select(
        pl.min_horizontal("source_id", "target_id").alias("a"),
        pl.max_horizontal("source_id", "target_id").alias("b"),
    ).unique()
    return people, pairs


def main():
    t0 = time.perf_counter()
    people, pairs = load_pairs(sys.argv[1], sys.argv[2])
    ends = pl.concat([pairs.select(pl.col("a").alias("id")), pairs.select(pl.col("b").alias("id"))])
    degree = ends.group_by("id").len()
    ids = pl.concat(
        [people.select(pl.col("person_id").str.strip_chars().alias("id")).drop_nulls().filter(pl.col("id") != ""), ends]
    ).unique()
    _ = degree.height
    seconds = time.perf_counter() - t0
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    print(json.dumps({"seconds": seconds, "peak_mib": peak, "pairs": pairs.height, "people": ids.height}))


if __name__ == "__main__":
    main()
