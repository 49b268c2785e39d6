# Shared by the cluster tests (sourced): the README's recipes as they are
# written there, and the plain sweep they must reproduce.

# Prints the fenced code block that follows the line "<!-- recipe: NAME -->"
# in the README, without its fences. Fails when there is no such block.
readme_recipe() {
  awk -v marker="<!-- recipe: $2 -->" '
    $0 == marker { found = 1; next }
    found == 1 && /^```/ { found = 2; next }
    found == 2 && /^```/ { done = 1; exit }
    found == 2 { print }
    END { if (!done) exit 1 }
  ' "$1" || { echo "FAIL: $1 has no code block after \"<!-- recipe: $2 -->\"" >&2; return 1; }
}

# The --vary arguments of a recipe, to run the same sweep unsharded.
recipe_axes() {
  grep -o -- '--vary [^ ]*' "$1" | tr '\n' ' '
}

# Fails unless two files are the same bytes; shows where they differ.
same_bytes() {
  if cmp -s "$1" "$2"; then
    echo "ok: $2 equals $1 byte for byte ($(wc -l < "$1") lines)"
  else
    echo "FAIL: $2 differs from $1:" >&2
    cmp "$1" "$2" >&2 || true
    diff "$1" "$2" | head -20 >&2 || true
    return 1
  fi
}

skip() {
  echo "SKIPPED: $*"
  exit 77  # CTest's SKIP_RETURN_CODE for these tests
}

# Installs the Debian packages of resources/debian-packages.txt that are
# missing when one of the given commands is absent; skips without root.
need_commands() {
  missing=""
  for c in "$@"; do command -v "$c" > /dev/null 2>&1 || missing="$missing $c"; done
  [ -z "$missing" ] && return 0
  [ "$(id -u)" -eq 0 ] || skip "missing$missing; resources/install-deps.sh installs them (as root)"
  "$source_dir/resources/install-deps.sh"
  for c in "$@"; do command -v "$c" > /dev/null 2>&1 || { echo "FAIL: $c still missing after install" >&2; exit 1; }; done
}
