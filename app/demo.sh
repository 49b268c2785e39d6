#!/bin/sh
# Installs what is missing, builds, and runs the built-in demo: the supply
# valve of a press slammed shut at full flow and opened again.
set -eu
root=$(cd "$(dirname "$0")/.." && pwd)
"$root/resources/build.sh" -DSWASHTUNE_BUILD_UI=OFF
"$root/build/app/swashtune-cli" run "$root/scenarios/valve-slam.toml" --out "$root/out/valve-slam"
