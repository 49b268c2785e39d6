#!/bin/sh
# Installs what is missing, builds, and starts the desktop program on the
# built-in demo (a press supply valve slammed shut at full flow and opened
# again). Without a display it renders the window under Xvfb to a picture
# instead, and prints the command-line summary of the same demo.
set -eu
root=$(cd "$(dirname "$0")/.." && pwd)
"$root/resources/build.sh"
if [ -n "${DISPLAY:-}" ] || [ -n "${WAYLAND_DISPLAY:-}" ]; then
  exec "$root/build/app/swashtune" "$@"
fi
mkdir -p "$root/out"
echo "No display found: rendering the desktop program under Xvfb to out/swashtune-demo.png"
xvfb-run -a -s "-screen 0 1920x1200x24" "$root/build/app/swashtune" --screenshot "$root/out/swashtune-demo.png" --run-for 0.8
"$root/build/app/swashtune-cli" run "$root/scenarios/valve-slam.toml" --out "$root/out/valve-slam"
