#!/usr/bin/env bash
# fuzz/run.sh: builds the libFuzzer harnesses with clang (AddressSanitizer,
# UndefinedBehaviorSanitizer, LeakSanitizer) and runs each for a bounded time, starting
# from its seed corpus in fuzz/corpus/<name>/. Fails on the first crash, leak, timeout or
# sanitizer report, leaving the reproducer in the work folder it names.
#
# Usage: fuzz/run.sh [SECONDS_PER_HARNESS] [HARNESS...]
#   SECONDS_PER_HARNESS  default 15 (13 harnesses: about 3.5 minutes in all)
#   HARNESS              names such as vtk npy stl (default: every fuzz/fuzz_*.c)
# Environment: DPZ_FUZZ_BUILD (build folder, default build-fuzz), JOBS (default 2).
# Reproduce a reported input:  build-fuzz/fuzz/fuzz_vtk CRASH_FILE
# New interesting inputs are kept in the work folder, never added to the committed corpus.
set -euo pipefail
cd "$(dirname "$0")/.."
secs=${1:-15}
shift || true
build=${DPZ_FUZZ_BUILD:-build-fuzz}
jobs=${JOBS:-2}

if [ "$#" -gt 0 ]; then
  names="$*"
else
  names=$(for f in fuzz/fuzz_*.c; do n=${f#fuzz/fuzz_}; echo "${n%.c}"; done)
fi
targets=""
for n in $names; do targets="$targets fuzz_$n"; done

work=$(mktemp -d "${TMPDIR:-/tmp}/dpz-fuzz.XXXXXX")
# The build's own output (compiler warnings included) is shown only if it fails.
if ! { CC=clang cmake -S . -B "$build" -DDPZ_FUZZ=ON -DCMAKE_BUILD_TYPE=Debug &&
    cmake --build "$build" -j "$jobs" --target $targets; } >"$work/build.log" 2>&1; then
  cat "$work/build.log"
  echo "fuzz: the build failed"
  exit 1
fi
export ASAN_OPTIONS=detect_leaks=1:abort_on_error=1:allocator_may_return_null=1
export UBSAN_OPTIONS=print_stacktrace=1:halt_on_error=1
failed=0
for n in $names; do
  exe="$build/fuzz/fuzz_$n"
  mkdir -p "$work/$n/new" "$work/$n/artifacts"
  start=$(date +%s)
  if "$exe" -max_total_time="$secs" -timeout=10 -rss_limit_mb=2048 -max_len=65536 \
      -print_final_stats=1 -artifact_prefix="$work/$n/artifacts/" \
      "$work/$n/new" "fuzz/corpus/$n" >"$work/$n/log" 2>&1; then
    runs=$(grep -o 'stat::number_of_executed_units: *[0-9]*' "$work/$n/log" | grep -o '[0-9]*$')
    echo "fuzz $n: ok, ${runs:-?} inputs in $(( $(date +%s) - start ))s"
  else
    failed=1
    echo "fuzz $n: FAILED; log and reproducer in $work/$n:"
    grep -E 'ERROR|SUMMARY|runtime error|Test unit written|deadly signal' "$work/$n/log" | head -20
    ls "$work/$n/artifacts"
  fi
done
if [ "$failed" = 0 ]; then
  rm -rf "$work"
  echo "fuzz: all harnesses passed"
fi
exit "$failed"
