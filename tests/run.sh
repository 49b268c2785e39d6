#!/bin/sh
# Installs what is missing, builds, and runs every test (C++, the desktop
# program offscreen, and the scipy cross-checks) through CTest.
set -eu
root=$(cd "$(dirname "$0")/.." && pwd)
"$root/resources/build.sh"
QT_QPA_PLATFORM=offscreen ctest --test-dir "$root/build" -j 2 --output-on-failure
