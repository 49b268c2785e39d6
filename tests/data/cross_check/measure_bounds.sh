#!/bin/sh
# Measures the error achieved on every cross-check case and prints a bounds
# table (each bound 5 x the achieved error, rounded up to 1, 2 or 5 x 10^n,
# with the achieved figure beside it) to review and paste into tests/data/cross_check_bounds.toml.
# Usage (from the repository root, after building):
#   sh tests/data/cross_check/measure_bounds.sh build/app/swashtune-cli > /tmp/bounds.toml
set -eu
cli=${1:-build/app/swashtune-cli}
root=$(cd "$(dirname "$0")/../../.." && pwd)
for f in "$root"/scenarios/valve-slam.toml "$root"/scenarios/setting-under-flow.toml \
         "$root"/scenarios/aerated-oil.toml "$root"/scenarios/sticky-spool.toml \
         "$root"/scenarios/hunting-oversized-damping-orifice.toml "$root"/scenarios/hunting-remedy.toml \
         "$root"/scenarios/hunting-sticky-spool.toml "$root"/scenarios/hunting-aerated-oil.toml \
         "$root"/tests/data/cross_check/*.toml; do
  [ -f "$f" ] || continue
  name=$(basename "$f" .toml)
  echo "[$name]   # ${f#"$root"/}"
  sh "$root/tests/cross_check_scipy.sh" "$cli" "$f" /usr/bin/python3 "$name" --measure
  echo
done
