"""Reference pipeline with statistics, written with the Python polars package, timed by
hubwatch-bench: everything bench/reference.py does (its `load_pairs`), then the degree histogram, the mean over
people of their contacts' mean degree, degree assortativity r (Pearson over edge ends) and
connected components (label propagation by repeated joins until nothing changes).
Prints one JSON line: {"seconds", "peak_mib", "pairs", "people", "r", "components"}.
"""
import json
import resource
import sys
import time

import polars as pl

from reference import load_pairs

t0 = time.perf_counter()
people, pairs = load_pairs(sys.argv[1], sys.argv[2])
ids = pl.concat([
    people.select(pl.col("person_id").str.strip_chars().alias("id")).drop_nulls().filter(pl.col("id") != ""),
    pairs.select(pl.col("a").alias("id")),
    pairs.select(pl.col("b").alias("id")),
]).unique().with_row_index("node")
e = (
    pairs.join(ids, left_on="a", right_on="id").rename({"node": "u"})
    .join(ids, left_on="b", right_on="id").rename({"node": "v"})
    .select("u", "v")
)
both = pl.concat([e, e.select(pl.col("v").alias("u"), pl.col("u").alias("v"))])
deg = ids.select("node").join(both.group_by("u").len().rename({"u": "node", "len": "k"}), on="node", how="left").fill_null(0)
hist = deg.group_by("k").len()
# Contacts' mean degree per person with contacts, then its mean.
nb = both.join(deg.rename({"node": "v", "k": "kv"}), on="v").group_by("u").agg(pl.col("kv").mean().alias("m"))
contact_mean = nb["m"].mean()
# Assortativity: Pearson correlation of degrees over ordered edge ends.
ends = both.join(deg.rename({"node": "u", "k": "ku"}), on="u").join(deg.rename({"node": "v", "k": "kv"}), on="v")
r = ends.select(pl.corr("ku", "kv")).item()
# Components by label propagation.
labels = ids.select(pl.col("node"), pl.col("node").alias("label"))
while True:
    prop = (
        both.join(labels.rename({"node": "v", "label": "lv"}), on="v")
        .group_by("u").agg(pl.col("lv").min())
        .rename({"u": "node"})
    )
    new = labels.join(prop, on="node", how="left").select(
        "node", pl.min_horizontal("label", pl.col("lv").fill_null(pl.col("label"))).alias("label")
    )
    if new.join(labels, on="node").filter(pl.col("label") != pl.col("label_right")).height == 0:
        break
    labels = new
components = labels["label"].n_unique()
seconds = time.perf_counter() - t0
peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
print(json.dumps({"seconds": seconds, "peak_mib": peak, "pairs": pairs.height, "people": ids.height,
                  "r": r, "components": components, "contact_mean": contact_mean, "histogram_rows": hist.height}))
