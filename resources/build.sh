#!/bin/sh
# Configures and builds Swashtune in build/ (Release, Ninja). Extra arguments
# go to the CMake configure step.
set -eu
root=$(cd "$(dirname "$0")/.." && pwd)
"$root/resources/install-deps.sh"
cmake -S "$root" -B "$root/build" -G Ninja -DCMAKE_BUILD_TYPE=Release "$@" > "$root/build-configure.log" 2>&1 \
  || { cat "$root/build-configure.log"; exit 1; }
cmake --build "$root/build" -j 2
