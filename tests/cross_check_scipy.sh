#!/bin/sh
# Runs a scenario through swashtune-cli and through the independent scipy
# reference (tests/python/reference_model.py, Radau at rtol 1e-9) and requires
# every column of the trace (each state, the flows and the scheduled inputs)
# to agree at every sample within the bounds of table CASE in
# tests/data/cross_check_bounds.toml (set a few times above the error achieved).
# Usage: cross_check_scipy.sh CLI SCENARIO PYTHON CASE [--measure]
set -eu
cli=$1
scenario=$2
python=$3
case=$4
here=$(cd "$(dirname "$0")" && pwd)
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
"$cli" check "$scenario" --json > "$work/params.json"
"$cli" run "$scenario" --out "$work/run" --units si > "$work/run.log"
if [ "${5:-}" = "--measure" ]; then
  exec "$python" "$here/python/compare_traces.py" "$work/params.json" "$work/run/trace.csv" --measure
fi
exec "$python" "$here/python/compare_traces.py" "$work/params.json" "$work/run/trace.csv" \
  --bounds "$here/data/cross_check_bounds.toml" --case "$case"
