#!/usr/bin/env bash
# Cross-check hubwatch's statistics, and its chains along dated exposures, against networkx
# (installed from the package registry into a throw-away virtual environment). Fails loudly when the registry cannot be reached.
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
