#!/bin/sh
# Installs what is missing, builds, and runs every test in three stages:
#   1. the Release build and every test through CTest (C++, the desktop
#      program offscreen, the scipy cross-checks);
#   2. the same suite built with clang under AddressSanitizer and
#      UndefinedBehaviorSanitizer (toml++ compiled with its assertions on);
#   3. libFuzzer on the scenario loader and the recorded-trace reader, each
#      for SWASHTUNE_FUZZ_SECONDS (default 60) on the committed seed corpus.
# Any failure, sanitizer report or fuzz finding fails the run. Each stage's
# time is printed. SWASHTUNE_CHECKS=0 runs stage 1 only (a quick local run).
set -eu
root=$(cd "$(dirname "$0")/.." && pwd)
fuzz_seconds=${SWASHTUNE_FUZZ_SECONDS:-60}
checks=${SWASHTUNE_CHECKS:-1}
timings=""

stage() {
  name=$1
  shift
  echo "=== stage: $name"
  started=$(date +%s)
  "$@"
  seconds=$(($(date +%s) - started))
  timings="$timings$(printf '  %-34s %5d s' "$name" "$seconds")
"
  echo "=== stage: $name: $seconds s"
}

release_build() { "$root/resources/build.sh"; }
release_tests() { QT_QPA_PLATFORM=offscreen ctest --test-dir "$root/build" -j 2 --output-on-failure; }

sanitizer_build() {
  "$root/resources/install-deps.sh" "$root/resources/debian-packages-checks.txt"
  cmake -S "$root" -B "$root/build-sanitize" -G Ninja -DCMAKE_CXX_COMPILER=clang++ -DCMAKE_BUILD_TYPE=Debug \
    "-DCMAKE_CXX_FLAGS_DEBUG=-O1 -gline-tables-only" -DSWASHTUNE_SANITIZE=ON -DSWASHTUNE_FUZZ=ON -DSWASHTUNE_TOML_CHECKED=ON \
    > "$root/build-sanitize-configure.log" 2>&1 || { cat "$root/build-sanitize-configure.log"; exit 1; }
  cmake --build "$root/build-sanitize" -j 2
}

# Desktop.test_desktop is left out here for now: its run/pause/reset case
# depends on timing (pause is asynchronous to the worker thread) and fails
# about two runs in three at the sanitizers' slowdown; it runs in stage 1.
sanitizer_tests() {
  ASAN_OPTIONS=abort_on_error=1:detect_leaks=1:strict_string_checks=1:check_initialization_order=1 \
  UBSAN_OPTIONS=print_stacktrace=1:halt_on_error=1 \
  LSAN_OPTIONS=suppressions="$root/tests/lsan-suppressions.txt":print_suppressions=0 \
  QT_QPA_PLATFORM=offscreen ctest --test-dir "$root/build-sanitize" -j 2 --output-on-failure -E '^Desktop\.test_desktop$'
}

# One fuzz target for fuzz_seconds; new inputs go to a scratch copy, the
# committed corpus and reproducers are only read. Prints the execution count.
fuzz_one() {
  target=$1 corpus=$2 dict=$3
  work="$root/build-sanitize/fuzz-$target"
  rm -rf "$work"
  mkdir -p "$work/new"
  status=0
  UBSAN_OPTIONS=print_stacktrace=1:halt_on_error=1 ASAN_OPTIONS=abort_on_error=1 \
    "$root/build-sanitize/tests/fuzz/$target" -max_total_time="$fuzz_seconds" -timeout=10 -rss_limit_mb=2048 \
    -max_len=8192 -print_final_stats=1 -artifact_prefix="$work/" -dict="$root/tests/fuzz/$dict" \
    "$work/new" "$root/tests/fuzz/corpus/$corpus" "$root/tests/fuzz/regressions/$corpus" \
    > "$work/log.txt" 2>&1 || status=$?
  runs=$(sed -n 's/^stat::number_of_executed_units: *//p' "$work/log.txt" | tail -1)
  if [ "$status" -ne 0 ]; then
    tail -n 60 "$work/log.txt"
    echo "$target: FINDING after ${runs:-?} executions (exit $status); reproducer(s):"
    ls "$work"/crash-* "$work"/leak-* "$work"/timeout-* "$work"/oom-* 2>/dev/null || true
    echo "keep each as a regression test in tests/fuzz/regressions/$corpus/ once fixed"
    return 1
  fi
  echo "$target: ${runs:-?} executions in $fuzz_seconds s, no finding"
}

# The two targets run at once, one per core.
fuzz() {
  fuzz_one fuzz_scenario scenario toml.dict > "$root/build-sanitize/fuzz-scenario.out" 2>&1 &
  scenario_pid=$!
  fuzz_one fuzz_field_trace field csv.dict > "$root/build-sanitize/fuzz-field.out" 2>&1 &
  field_pid=$!
  failed=0
  wait "$scenario_pid" || failed=1
  wait "$field_pid" || failed=1
  cat "$root/build-sanitize/fuzz-scenario.out" "$root/build-sanitize/fuzz-field.out"
  return "$failed"
}

total_started=$(date +%s)
stage "Release build" release_build
stage "Release tests" release_tests
if [ "$checks" != 0 ]; then
  stage "ASan+UBSan build (clang)" sanitizer_build
  stage "ASan+UBSan tests" sanitizer_tests
  stage "libFuzzer, ${fuzz_seconds} s per target" fuzz
fi
echo "=== stage times"
printf '%s' "$timings"
printf '  %-34s %5d s\n' "total" "$(($(date +%s) - total_started))"
