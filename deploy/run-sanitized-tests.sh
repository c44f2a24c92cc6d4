#!/usr/bin/env bash
# CI's checking stage, after ./deploy/run-tests.sh:
#   1. the whole test suite again, built with AddressSanitizer and UndefinedBehaviorSanitizer
#      (g++, build-sanitize/): a leak, an out-of-bounds access or undefined behaviour in any
#      test, or in any command a test runs, fails CI;
#   2. a short fuzz of every libFuzzer target (clang, build-fuzz/) from its seeds: any
#      crash, leak, hang or broken invariant fails CI.
# Prints the time of each stage (docs/reliability.md keeps the measured figures).
# FUZZ_SMOKE_SECONDS sets the fuzz time per target (default 30).
set -euo pipefail
cd "$(dirname "$0")/.."
jobs=$(nproc 2>/dev/null || echo 2)
smoke_seconds="${FUZZ_SMOKE_SECONDS:-30}"
stage_start=$SECONDS
stage() {
  echo "run-sanitized-tests: $1 took $((SECONDS - stage_start)) s"
  stage_start=$SECONDS
}

./deploy/install-deps.sh clang libclang-rt-14-dev
stage "installing dependencies"

# -O1 (no -DNDEBUG, so assertions stay on): the build is CI's longest stage, and -O1
# compiles faster than -O3 while keeping the instrumented tests fast enough. No
# -march=native: at -O1 GCC 12 warns (-Wuninitialized) inside its own AVX-512 headers.
cmake -S . -B build-sanitize -DCMAKE_BUILD_TYPE=Release -DCMAKE_CXX_FLAGS_RELEASE=-O1 -DFACTORWATCH_NATIVE=OFF \
  -DFACTORWATCH_SANITIZE=ON -DFACTORWATCH_TESTS=ON -DFACTORWATCH_BENCH=OFF >/dev/null
cmake --build build-sanitize -j"$jobs"
stage "sanitizer build"

# Every process the tests start (the factorwatch command, the daemon) inherits these.
# Reports go to files as well as failing the process: a test that expects a command to
# fail would otherwise take a sanitizer's exit for the expected failure.
reports="$PWD/build-sanitize/sanitizer-reports"
rm -rf "$reports"
mkdir -p "$reports"
export ASAN_OPTIONS="detect_leaks=1:halt_on_error=1:print_stacktrace=1:exitcode=86:log_path=$reports/asan"
export UBSAN_OPTIONS="halt_on_error=1:print_stacktrace=1:exitcode=86:log_path=$reports/ubsan"
status=0
ctest --test-dir build-sanitize --output-on-failure -j"$jobs" || status=$?
if compgen -G "$reports/*" >/dev/null; then
  echo "run-sanitized-tests: sanitizer reports:"
  for f in "$reports"/*; do echo "== $f"; cat "$f"; done
  status=1
fi
unset ASAN_OPTIONS UBSAN_OPTIONS
stage "sanitized test suite"
[ "$status" -eq 0 ] || exit "$status"

cmake -S . -B build-fuzz -DCMAKE_CXX_COMPILER=clang++ -DCMAKE_BUILD_TYPE=Release \
  -DCMAKE_CXX_FLAGS_RELEASE="-O2 -gline-tables-only" -DFACTORWATCH_FUZZ=ON -DFACTORWATCH_OPENMP=OFF \
  -DFACTORWATCH_TESTS=OFF -DFACTORWATCH_BENCH=OFF >/dev/null
cmake --build build-fuzz -j"$jobs" --target factorwatch_fuzz_targets
stage "fuzz build"

rm -rf build-fuzz/seeds build-fuzz/corpus
for target in $(ls fuzz/fuzz_*.cpp | xargs -n1 basename | sed 's/\.cpp$//'); do
  log="build-fuzz/$target.log"
  if ! ./fuzz/run-fuzzer.sh "$target" -max_total_time="$smoke_seconds" >"$log" 2>&1; then
    tail -n 60 "$log"
    echo "run-sanitized-tests: $target found a problem; the input is in build-fuzz/artifacts/"
    exit 1
  fi
  echo "run-sanitized-tests: $target: $(grep -E '^stat::number_of_executed_units' "$log" | awk '{print $2}') runs, no finding"
done
stage "fuzz smoke ($smoke_seconds s per target)"
