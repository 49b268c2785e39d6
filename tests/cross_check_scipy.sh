#!/bin/sh
# Runs a scenario through swashtune-cli and through the independent scipy
# reference (tests/python/reference_model.py, Radau at rtol 1e-9), then
# requires the discharge pressures to agree within 1 % of the peak at every
# sample. Usage: cross_check_scipy.sh CLI SCENARIO PYTHON
set -eu
cli=$1
scenario=$2
python=$3
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
"$cli" check "$scenario" --json > "$work/params.json"
"$cli" run "$scenario" --out "$work/run" --units si > "$work/run.log"
"$python" "$(dirname "$0")/python/compare_traces.py" "$work/params.json" "$work/run/trace.csv" --tolerance-fraction 0.01
