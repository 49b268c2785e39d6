#!/bin/sh
# Linearises a scenario with swashtune-cli and checks the reported
# eigenvalues, dominant mode and loop margins against an independent
# recomputation from the exported A, B, C with numpy/scipy
# (tests/python/check_stability.py). Usage:
#   cross_check_stability.sh CLI SCENARIO PYTHON [stability options...]
set -eu
cli=$1
scenario=$2
python=$3
shift 3
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
"$cli" stability "$scenario" --json "$@" > "$work/stability.json"
"$python" "$(dirname "$0")/python/check_stability.py" "$work/stability.json"
