#!/bin/sh
# Installs the Debian packages listed in resources/debian-packages.txt (or in
# the lists given as arguments) that are missing. Needs root (or sudo); does
# nothing when all are present.
set -eu
here=$(cd "$(dirname "$0")" && pwd)
[ $# -eq 0 ] && set -- "$here/debian-packages.txt"
packages=$(cat "$@" | grep -v '^#' | tr '\n' ' ')
missing=""
for p in $packages; do
  dpkg-query -W -f='${Status}' "$p" 2>/dev/null | grep -q "install ok installed" || missing="$missing $p"
done
[ -z "$missing" ] && exit 0
echo "installing:$missing"
as_root=""
[ "$(id -u)" -ne 0 ] && as_root="sudo"
$as_root apt-get update -qq
DEBIAN_FRONTEND=noninteractive $as_root apt-get install -y -qq --no-install-recommends $missing
