#!/usr/bin/env bash
# Cross-check hubwatch's statistics, and its chains along dated exposures, against networkx
# (installed from the package registry into a throw-away virtual environment), and the SQL of
# `hubwatch sql` in DuckDB and Spark against hubwatch's own reading. Fails loudly when the
# registry cannot be reached.
# Usage: tests/crosscheck/run.sh [HUBWATCH_BINARY]
set -euo pipefail
here=$(cd "$(dirname "$0")" && pwd)
top=$(cd "$here/../.." && pwd)
bin=${1:-}
if [ -z "$bin" ]; then
  cargo build --quiet --manifest-path "$top/Cargo.toml" --bin hubwatch
  bin="${CARGO_TARGET_DIR:-$top/target}/debug/hubwatch"
fi
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
python3 -m venv "$work/venv"
if ! "$work/venv/bin/pip" install --quiet networkx scipy; then
  echo "networkx cross-check: could not install networkx from the package registry" >&2
  exit 1
fi
"$bin" synth --people 2000 --seed 3 --out "$work/synth-a" --end 2026-11-01 >/dev/null
"$bin" synth --people 6000 --seed 9 --out "$work/synth-b" --end 2026-11-01 >/dev/null
"$work/venv/bin/python" "$here/networkx_check.py" "$bin" "$top/sample-contacts" "$work/synth-a" "$work/synth-b"
# Chains along dated exposures, on two open sensor data sets with times (read in place from
# ../shared/data; skipped with a message where it is absent).
data="$top/../shared/data"
if [ -f "$data/sp-hospital-lyon-2010/hospital_lyon_contacts.dat.gz" ] && [ -f "$data/sp-primary-school-2009/primaryschool.csv.gz" ]; then
  "$work/venv/bin/python" "$here/chains_check.py" "$bin" "$data" "$work"
elif [ -n "${HUBWATCH_REQUIRE_SHARED:-}" ]; then
  echo "chains cross-check: the sensor data sets are missing from $data" >&2
  exit 1
else
  echo "SKIPPED: chains cross-check (no $data)"
fi
# The SQL of `hubwatch sql`, run in DuckDB and in Apache Spark (local mode), against hubwatch's
# own reading of the same raw files: an invented hostile export, the sample, a synth export with
# its planted defects, and two open data sets. The engines go into a virtual environment kept
# outside the checkout (HUBWATCH_PY_CACHE; a fresh machine makes it). DuckDB must install;
# Spark needs Java 17 as well and is skipped, with a message, where either cannot be had.
py="${HUBWATCH_PY_CACHE:-/var/tmp/hubwatch-ci-py}"
[ -x "$py/bin/python" ] || python3 -m venv "$py"
if ! "$py/bin/pip" install --quiet duckdb; then
  echo "SQL cross-check: could not install duckdb from the package registry" >&2
  exit 1
fi
"$bin" synth --people 3000 --seed 5 --out "$work/synth-sql" --end 2026-10-30 >/dev/null
cases=(
  "sample=$top/sample-contacts/exposures.csv;people=$top/sample-contacts/people.csv"
  "synth=$work/synth-sql/exposures.csv;people=$work/synth-sql/people.csv"
  "synth-household-october=$work/synth-sql/exposures.csv;people=$work/synth-sql/people.csv;view=--setting=household;view=--from=2026-10-01"
)
household="$data/sa-household-sarscov2-2020"
pairs="$data/covid19-china-transmission-pairs-2020/TableS1_1407TransPairs.csv"
if [ -f "$household/sashts_contact_network.csv.gz" ] && [ -f "$pairs" ]; then
  cases+=(
    "sa-household=$household/sashts_contact_network.csv.gz;people=$household/sashts_metadata.csv"
    "transmission-pairs=$pairs;column=source_id=infector_id;column=target_id=infectee_id"
  )
elif [ -n "${HUBWATCH_REQUIRE_SHARED:-}" ]; then
  echo "SQL cross-check: the open data sets are missing from $data" >&2
  exit 1
else
  echo "SKIPPED: SQL cross-check on the open data sets (no $data)"
fi
mkdir -p "$work/duckdb" "$work/spark"
"$py/bin/python" "$here/sql_check.py" "$bin" duckdb "$work/duckdb" "${cases[@]}"
if ! java -version >/dev/null 2>&1; then
  echo "SKIPPED: SQL cross-check on Spark (no Java runtime; .ci/run installs openjdk-17-jre-headless where it can)"
elif ! "$py/bin/pip" install --quiet pyspark; then
  echo "SKIPPED: SQL cross-check on Spark (pyspark could not be installed from the package registry)"
else
  "$py/bin/python" "$here/sql_check.py" "$bin" spark "$work/spark" "${cases[@]}"
fi
