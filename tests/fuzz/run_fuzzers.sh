#!/usr/bin/env bash
# Runs every fuzz target for DURATION seconds (default 60) on its seed corpus and dictionary.
# Usage: tests/fuzz/run_fuzzers.sh [DURATION] [BUILD_DIR]
#   BUILD_DIR defaults to build-fuzz; it is configured and built with clang++-14 when missing:
#   cmake -S . -B build-fuzz -DCYLZONE_FUZZ=ON -DBUILD_SHARED_LIBS=OFF (CXX=clang++-14).
# Inputs the fuzzer finds new coverage with go to a scratch corpus (the seeds in the repository
# stay as they are); a crash, hang, leak or contract breach stops the target and fails the run,
# leaving the reproducer as BUILD_DIR/findings/<target>-crash-* (or -timeout-*, -oom-*).
# Reproduce one with: BUILD_DIR/tests/fuzz/<target> FILE
set -euo pipefail
cd "$(dirname "$0")/../.."
duration=${1:-60}
build=${2:-build-fuzz}

if [ ! -f "$build/CMakeCache.txt" ]; then
  CXX=${CXX:-clang++-14} CC=${CC:-clang-14} cmake -S . -B "$build" -DCMAKE_BUILD_TYPE=RelWithDebInfo \
    -DCYLZONE_FUZZ=ON -DBUILD_SHARED_LIBS=OFF
fi
cmake --build "$build" -j"$(nproc)" --target fuzz_delimited fuzz_mesh fuzz_plan fuzz_report fuzz_summary

mkdir -p "$build/findings"
status=0
for target in delimited mesh plan report summary; do
  work="$build/corpus/$target"
  mkdir -p "$work"
  echo "+ fuzz_$target for ${duration}s"
  # -timeout: one input taking over 10 s is a hang; -rss_limit_mb: over 2 GB is a memory
  # exhaustion (declared sizes must be refused before allocation).
  if ! ASAN_OPTIONS=detect_leaks=1:abort_on_error=1 \
       UBSAN_OPTIONS=print_stacktrace=1:halt_on_error=1 \
       "$build/tests/fuzz/fuzz_$target" "$work" "tests/fuzz/corpus/$target" \
         -dict="tests/fuzz/$target.dict" -max_total_time="$duration" -timeout=10 \
         -rss_limit_mb=2048 -max_len=65536 -print_final_stats=1 \
         -artifact_prefix="$build/findings/$target-" 2>"$build/findings/$target.log"; then
    echo "fuzz_$target: FINDING (see $build/findings/$target.log)" >&2
    tail -n 40 "$build/findings/$target.log" >&2
    status=1
  fi
  grep -E "^(#[0-9]+ +DONE|stat::number_of_executed_units|stat::peak_rss_mb)" \
    "$build/findings/$target.log" || true
done
exit $status
