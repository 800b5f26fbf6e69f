"""Cross-check `hubwatch chains` against networkx on two open sensor data sets with times.

Usage: python chains_check.py HUBWATCH_BINARY SHARED_DATA_DIR WORK_DIR

Data (read from SHARED_DATA_DIR, never copied; CC BY-NC-SA, see each SOURCE.md):
- sp-hospital-lyon-2010/hospital_lyon_contacts.dat.gz (Vanhems et al., PLoS ONE 2013);
- sp-primary-school-2009/primaryschool.csv.gz (Stehle et al., PLoS ONE 2011).
Rows are `t i j ...` with t in seconds. hubwatch works in days, so each hour of recording is
written as one day of an export (day 0 = 2010-01-01): the two school days then give about
30 steps of time instead of 2. The same export is read by both sides.

Forward: some people are made cases (without onset: every dated exposure of theirs
counts), plus one case with an onset date (its infectious period comes from hubwatch's own
settings, read back from the JSON). networkx answers on the time-expanded graph: a node
(person, day) per exposure end, an arc (u, a) -> (v, t) for each exposure u-v on day t with
min_gap <= t - a <= max_gap, and a source arc to every exposure of a case inside its window;
`single_source_shortest_path_length` with a cutoff of the generations gives, per person, the
fewest steps and the earliest day reachable. That is an independent construction of the
same definition (restless walks).

Backward: for each case with a date, the people met 0..DAYS days before it; checked against
a plain computation here (counts per source and earliest day).
Exits 1 on any difference.
"""
import csv
import datetime as dt
import gzip
import json
import os
import subprocess
import sys
from collections import defaultdict

import networkx as nx

BASE = dt.date(2010, 1, 1)
MIN_GAP, MAX_GAP, GENERATIONS, DAYS = 0, 6, 4, 5
failures = []


def day(i):
    return (BASE + dt.timedelta(days=i)).isoformat()


def read_rows(path):
    rows = []
    with gzip.open(path, "rt") as f:
        for line in f:
            p = line.split()
            if len(p) >= 3 and p[1] != p[2]:
                rows.append((int(p[0]) // 3600, p[1], p[2]))
    return rows


def write_export(rows, folder, cases):
    os.makedirs(folder, exist_ok=True)
    people = sorted({x for _, a, b in rows for x in (a, b)})
    with open(f"{folder}/people.csv", "w", newline="") as f:
        w = csv.writer(f)
        w.writerow(["person_id", "role", "onset_date"])
        for p in people:
            if p in cases:
                w.writerow([p, "case", day(cases[p]) if cases[p] is not None else ""])
            else:
                w.writerow([p, "contact", ""])
    with open(f"{folder}/exposures.csv", "w", newline="") as f:
        w = csv.writer(f)
        w.writerow(["source_id", "target_id", "exposure_date"])
        for h, a, b in rows:
            w.writerow([a, b, day(h)])


def run(binary, *args):
    out = subprocess.run([binary, *args], check=True, capture_output=True, text=True).stdout
    return json.loads(out)


def check_forward(tag, binary, folder, rows, cases):
    h = run(binary, "chains", "forward", "--from-cases", "--min-gap", str(MIN_GAP), "--max-gap",
            str(MAX_GAP), "--generations", str(GENERATIONS), "--json", "--top", "0",
            "--as-of", "2011-01-01", folder)
    before = h["windows"]["infectious_before_onset_days"]
    after = h["windows"]["infectious_after_onset_days"]
    days_of = defaultdict(set)  # person -> {(other, day)}
    for t, a, b in rows:
        days_of[a].add((b, t))
        days_of[b].add((a, t))
    g = nx.DiGraph()
    for p, onset in cases.items():
        lo, hi = (-10**9, 10**9) if onset is None else (onset - before, onset + after)
        for v, t in days_of[p]:
            if lo <= t <= hi:
                g.add_edge("SOURCE", (v, t))
    states = {(v, t) for p in days_of for v, t in days_of[p]}
    for (u, a) in states:
        for v, t in days_of[u]:
            if MIN_GAP <= t - a <= MAX_GAP:
                g.add_edge((u, a), (v, t))
    dist = nx.single_source_shortest_path_length(g, "SOURCE", cutoff=GENERATIONS) if "SOURCE" in g else {}
    want = {}
    for node, d in dist.items():
        if node == "SOURCE" or node[0] in cases:
            continue
        v, t = node
        gen, early = want.get(v, (10**9, 10**9))
        want[v] = (min(gen, d), min(early, t))
    got = {r["person_id"]: (r["generation"], r["earliest_exposure"]) for r in h["reached"]}
    if set(got) != set(want):
        failures.append(f"{tag} forward: {len(got)} reached by hubwatch, {len(want)} by networkx; "
                        f"only hubwatch {sorted(set(got) - set(want))[:5]}, only networkx {sorted(set(want) - set(got))[:5]}")
    for v in set(got) & set(want):
        if got[v] != (want[v][0], day(want[v][1])):
            failures.append(f"{tag} forward {v}: hubwatch {got[v]}, networkx {want[v][0]}, {day(want[v][1])}")
    print(f"checked {tag} forward: {len(rows)} rows, {len(cases)} cases, {len(got)} people reached, "
          f"{sum(1 for r in h['reached'] if r['generation'] >= 2)} of them through a chain")


def check_backward(tag, binary, folder, rows, cases):
    h = run(binary, "chains", "backward", "--to-cases", "--days", str(DAYS), "--json", "--top", "0",
            "--as-of", "2011-01-01", folder)
    met = defaultdict(dict)  # source -> case -> earliest day
    for t, a, b in rows:
        for case, other in ((a, b), (b, a)):
            onset = cases.get(case)
            if onset is not None and onset - DAYS <= t <= onset:
                prev = met[other].get(case)
                met[other][case] = t if prev is None else min(prev, t)
    want = {s: (len(c), day(min(c.values()))) for s, c in met.items()}
    got = {s["person_id"]: (s["cases"], s["earliest"]) for s in h["sources"]}
    if got != want:
        diff = [k for k in set(got) | set(want) if got.get(k) != want.get(k)][:5]
        failures.append(f"{tag} backward: {len(got)} sources vs {len(want)}; differ at {diff}")
    counts = [s["cases"] for s in h["sources"]]
    if counts != sorted(counts, reverse=True):
        failures.append(f"{tag} backward: common sources are not listed first")
    print(f"checked {tag} backward: {len(got)} possible sources, {sum(1 for c in counts if c > 1)} common")


def main():
    binary, data, work = sys.argv[1], sys.argv[2], sys.argv[3]
    print(f"networkx {nx.__version__}")
    sets = [
        ("hospital", f"{data}/sp-hospital-lyon-2010/hospital_lyon_contacts.dat.gz"),
        ("primary-school", f"{data}/sp-primary-school-2009/primaryschool.csv.gz"),
    ]
    for tag, path in sets:
        rows = read_rows(path)
        ids = sorted({x for _, a, b in rows for x in (a, b)}, key=int)
        first_hour = min(t for t, _, _ in rows)
        # Forward: three cases without onset (the first IDs) and one with an onset 10 hours in.
        fcases = {ids[0]: None, ids[1]: None, ids[2]: None, ids[len(ids) // 2]: first_hour + 10}
        folder = f"{work}/{tag}-forward"
        write_export(rows, folder, fcases)
        check_forward(tag, binary, folder, rows, fcases)
        # Backward: every tenth person is a case, onset 20 hours after the first row plus a
        # step that spreads them over the recording.
        bcases = {p: first_hour + 20 + (i % 40) for i, p in enumerate(ids) if i % 10 == 0}
        folder = f"{work}/{tag}-backward"
        write_export(rows, folder, bcases)
        check_backward(tag, binary, folder, rows, bcases)
    for f in failures:
        print("MISMATCH", f)
    print(f"chains: {4 - len({' '.join(f.split()[:2]) for f in failures})} checks passed, "
          f"{len({' '.join(f.split()[:2]) for f in failures})} failed")
    sys.exit(1 if failures else 0)


if __name__ == "__main__":
    main()
