#!/bin/sh
# Installs what is missing, builds, and runs every test (C++ and the scipy
# cross-checks) through CTest.
set -eu
root=$(cd "$(dirname "$0")/.." && pwd)
"$root/resources/build.sh" -DSWASHTUNE_BUILD_UI=OFF
ctest --test-dir "$root/build" -j 2 --output-on-failure
