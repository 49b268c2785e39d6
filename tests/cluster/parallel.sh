#!/bin/sh
# Runs the README's GNU parallel recipe as written (extracted from the
# README) on tests/cluster/press.toml, and requires its merged table to be
# the same bytes as the unsharded sweep of the same axes.
# Usage: parallel.sh BIN_DIR SOURCE_DIR   (BIN_DIR holds swashtune-cli)
set -eu
bin_dir=$(cd "$1" && pwd)
source_dir=$(cd "$2" && pwd)
. "$source_dir/tests/cluster/common.sh"
need_commands parallel
PATH=$bin_dir:$PATH
export PATH

work=$(mktemp -d "${TMPDIR:-/tmp}/swashtune-parallel.XXXXXX")
trap 'rm -rf "$work"' EXIT
mkdir "$work/recipe" "$work/plain"
readme_recipe "$source_dir/README.md" gnu-parallel > "$work/recipe.sh"
echo "--- the README's recipe:"
cat "$work/recipe.sh"
cp "$source_dir/tests/cluster/press.toml" "$work/recipe/press.toml"
cp "$source_dir/tests/cluster/press.toml" "$work/plain/press.toml"

started=$(date +%s)
(cd "$work/recipe" && sh -eu "$work/recipe.sh")
echo "--- recipe ran in $(($(date +%s) - started)) s; parts: $(cd "$work/recipe" && ls part-*.csv | tr '\n' ' ')"

axes=$(recipe_axes "$work/recipe.sh")
[ -n "$axes" ] || { echo "FAIL: the recipe has no --vary" >&2; exit 1; }
# shellcheck disable=SC2086 # the axes are separate words
(cd "$work/plain" && swashtune-cli sweep press.toml $axes --jobs 2 --out sweep.csv > /dev/null)
same_bytes "$work/plain/sweep.csv" "$work/recipe/sweep.csv"
