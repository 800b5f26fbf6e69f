"""Cross-check hubwatch's statistics against networkx on real exports.

Usage: python networkx_check.py HUBWATCH_BINARY EXPORT_DIR [EXPORT_DIR ...]

For each export folder (people.csv + exposures.csv), runs `hubwatch summary --json` and
rebuilds the same network with networkx under the same cleaning rules (IDs trimmed; blank IDs
and self-exposures dropped; pairs in either order merged; every person of the people table is
a node). Compares people, pairs, degree moments and histogram, assortativity r, k_nn(k),
components, transitivity, mean local clustering, core numbers, articulation points, the
attribute assortativity of area and age group (over the pairs whose two ends both have the
value, as hubwatch counts them), and the degree assortativity within each setting's own
sub-network (the pairs with a row of that setting; labels compared without case).
Exits 1 on any difference beyond 1e-9 relative, printing each one.
"""
import csv
import json
import math
import subprocess
import sys

import networkx as nx

REL = 1e-9
failures = []


def close(what, got, want):
    if got is None or want is None or (isinstance(want, float) and math.isnan(want)):
        ok = got is None and (want is None or math.isnan(want))
    else:
        ok = abs(got - want) <= REL * max(abs(want), 1e-300) or got == want
    if not ok:
        failures.append(f"{what}: hubwatch {got!r}, networkx {want!r}")


ATTRIBUTES = ("area", "age_group")
# The missing-value codes of config/default.toml, lower-cased.
MISSING = {"na", "n/a", "null"}


def setting_subgraphs(folder):
    """Each setting's own network (label lower-cased -> graph of the pairs with a row of it)."""
    subs = {}
    with open(f"{folder}/exposures.csv", newline="", encoding="utf-8-sig") as f:
        for row in csv.DictReader(f):
            a = (row.get("source_id") or "").strip()
            b = (row.get("target_id") or "").strip()
            s = (row.get("setting") or "").strip()
            if a and b and a != b and s and s.lower() not in MISSING:
                subs.setdefault(s.lower(), nx.Graph()).add_edge(a, b)
    return subs


def degree_r(g):
    """networkx's degree assortativity, NaN where it is undefined (all degrees equal)."""
    try:
        return nx.degree_assortativity_coefficient(g)
    except (ZeroDivisionError, ValueError):
        return math.nan


def build(folder):
    g = nx.Graph()
    with open(f"{folder}/people.csv", newline="", encoding="utf-8-sig") as f:
        for row in csv.DictReader(f):
            pid = (row.get("person_id") or "").strip()
            if pid:
                # A person listed again keeps the first value of each attribute (hubwatch
                # reports the conflict).
                g.add_node(pid)
                for a in ATTRIBUTES:
                    v = (row.get(a) or "").strip()
                    if v and a not in g.nodes[pid]:
                        g.nodes[pid][a] = v
    with open(f"{folder}/exposures.csv", newline="", encoding="utf-8-sig") as f:
        for row in csv.DictReader(f):
            a = (row.get("source_id") or "").strip()
            b = (row.get("target_id") or "").strip()
            if a and b and a != b:
                g.add_edge(a, b)
    return g


def check(binary, folder):
    out = subprocess.run(
        [binary, "summary", "--json", "--null-replicates", "0", "--as-of", "2030-01-01", folder],
        check=True, capture_output=True, text=True,
    ).stdout
    h = json.loads(out)
    g = build(folder)
    tag = folder
    n, m = g.number_of_nodes(), g.number_of_edges()
    close(f"{tag} people", h["people"], n)
    close(f"{tag} contacts", h["contacts"], m)
    degs = [d for _, d in g.degree()]
    mean = sum(degs) / n
    mean_sq = sum(d * d for d in degs) / n
    close(f"{tag} degree.mean", h["degree"]["mean"], mean)
    close(f"{tag} degree.mean_sq", h["degree"]["mean_sq"], mean_sq)
    close(f"{tag} degree.variance", h["degree"]["variance"], mean_sq - mean * mean)
    close(f"{tag} degree.max", h["degree"]["max"], max(degs))
    hist = {}
    for d in degs:
        hist[d] = hist.get(d, 0) + 1
    if {k: c for k, c in h["degree"]["histogram"]} != hist:
        failures.append(f"{tag} degree histogram differs")
    close(f"{tag} r", h["assortativity"]["r"], nx.degree_assortativity_coefficient(g))
    knn = nx.average_degree_connectivity(g)
    got_knn = {k: v for k, v in h["knn"]}
    for k, v in knn.items():
        if k > 0:
            close(f"{tag} knn({k})", got_knn.get(k), v)
    comps = [len(c) for c in nx.connected_components(g)]
    close(f"{tag} components.count", h["components"]["count"], len(comps))
    close(f"{tag} components.largest", h["components"]["largest"], max(comps))
    close(f"{tag} transitivity", h["clustering"]["transitivity"], nx.transitivity(g))
    close(f"{tag} mean_local", h["clustering"]["mean_local"], nx.average_clustering(g))
    cores = nx.core_number(g)
    core_hist = {}
    for c in cores.values():
        core_hist[c] = core_hist.get(c, 0) + 1
    if {k: c for k, c in h["cores"]["histogram"]} != core_hist:
        failures.append(f"{tag} core-number histogram differs")
    close(f"{tag} cores.max", h["cores"]["max"], max(cores.values()))
    aps = sorted(nx.articulation_points(g))
    if sorted(h["bridges"]["people"]) != aps:
        failures.append(f"{tag} articulation points differ: {len(h['bridges']['people'])} vs {len(aps)}")
    for attr in ATTRIBUTES:
        got = h.get("mixing", {}).get(attr)
        known = [(u, v) for u, v in g.edges() if attr in g.nodes[u] and attr in g.nodes[v]]
        if not known:
            if got is not None and got.get("r") is not None:
                failures.append(f"{tag} mixing.{attr}: hubwatch has r, networkx no known pair")
            continue
        if got is None:
            failures.append(f"{tag} mixing.{attr} missing from hubwatch's output")
            continue
        close(f"{tag} mixing.{attr}.unknown", got["unknown"], m - len(known))
        want = nx.attribute_assortativity_coefficient(g.edge_subgraph(known), attr)
        close(f"{tag} mixing.{attr}.r", got["r"], want)
    got = h.get("mixing", {}).get("setting", {})
    subs = setting_subgraphs(folder)
    if {k.lower() for k in got} != set(subs):
        failures.append(f"{tag} setting labels differ: {sorted(got)} vs {sorted(subs)}")
    for label, v in got.items():
        if label.lower() in subs:
            close(f"{tag} mixing.setting.{label}.r", v.get("r"), degree_r(subs[label.lower()]))
    print(f"checked {tag}: {n} people, {m} pairs, {len(subs)} settings")


def main():
    binary, folders = sys.argv[1], sys.argv[2:]
    print(f"networkx {nx.__version__}")
    for folder in folders:
        check(binary, folder)
    for f in failures:
        print("MISMATCH", f)
    print(f"{len(folders) - len({f.split()[0] for f in failures})} passed, {len({f.split()[0] for f in failures})} failed")
    sys.exit(1 if failures else 0)


if __name__ == "__main__":
    main()
