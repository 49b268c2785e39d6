#!/bin/sh
# Mutation test of the scipy cross-check: runs SCENARIO once through
# swashtune-cli, then the independent reference once per parameter with that
# parameter changed by 1 % (reference side only), and requires the
# cross-check of table CASE (tests/data/cross_check_bounds.toml) to fail for
# each one, except those listed with a reason in [mutation-exempt.CASE].
# Usage: mutation_test.sh CLI SCENARIO PYTHON CASE [--only KEY ...]
set -eu
cli=$1
scenario=$2
python=$3
case=$4
shift 4
here=$(cd "$(dirname "$0")" && pwd)
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
"$cli" check "$scenario" --json > "$work/params.json"
"$cli" run "$scenario" --out "$work/run" --units si > "$work/run.log"
exec "$python" "$here/python/mutation_test.py" "$work/params.json" "$work/run/trace.csv" \
  --bounds "$here/data/cross_check_bounds.toml" --case "$case" "$@"
