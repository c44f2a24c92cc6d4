#!/usr/bin/env bash
# CI's checking stage, after ./deploy/run-tests.sh. One build (clang, build-check/) in
# which every library, the factorwatch command, the tests and the libFuzzer targets are
# compiled with AddressSanitizer and UndefinedBehaviorSanitizer; then
#   1. the whole test suite: a leak, an out-of-bounds access or undefined behaviour in any
#      test, or in any command or daemon a test runs, fails CI;
#   2. a short fuzz of every libFuzzer target from its seeds: any crash, leak, hang or
#      broken invariant fails CI.
# One build for both halves, not one per compiler: the instrumented build is CI's longest
# stage (docs/reliability.md, "Sanitizer build and CI stages").
# Prints the time of each stage. FUZZ_SMOKE_SECONDS sets the fuzz time per target
# (default 20).
set -euo pipefail
cd "$(dirname "$0")/.."
jobs=$(nproc 2>/dev/null || echo 2)
smoke_seconds="${FUZZ_SMOKE_SECONDS:-20}"
stage_start=$SECONDS
stage() {
  echo "run-sanitized-tests: $1 took $((SECONDS - stage_start)) s"
  stage_start=$SECONDS
}

./deploy/install-deps.sh clang libclang-rt-14-dev
stage "installing dependencies"

# -O1: the build is the longest stage, and -O1 compiles much faster than -O3 while
# keeping the instrumented tests fast enough. No -march=native and no OpenMP (clang's
# runtime is another package): the kernels' serial path is the same code with the
# pragmas ignored, and the Release stage runs them threaded.
build=build-check
cmake -S . -B "$build" -DCMAKE_CXX_COMPILER=clang++ -DCMAKE_BUILD_TYPE=Release \
  -DCMAKE_CXX_FLAGS_RELEASE="-O1 -gline-tables-only" -DFACTORWATCH_NATIVE=OFF -DFACTORWATCH_OPENMP=OFF \
  -DFACTORWATCH_FUZZ=ON -DFACTORWATCH_TESTS=ON -DFACTORWATCH_BENCH=OFF >/dev/null
cmake --build "$build" -j"$jobs"
stage "sanitizer build (libraries, command, tests, fuzz targets)"

# Every process the tests start (the factorwatch command, the daemon) inherits these.
# Reports go to files as well as failing the process: a test that expects a command to
# fail would otherwise take a sanitizer's exit for the expected failure.
reports="$PWD/$build/sanitizer-reports"
rm -rf "$reports"
mkdir -p "$reports"
export ASAN_OPTIONS="detect_leaks=1:halt_on_error=1:print_stacktrace=1:exitcode=86:log_path=$reports/asan"
export UBSAN_OPTIONS="halt_on_error=1:print_stacktrace=1:exitcode=86:log_path=$reports/ubsan"
status=0
ctest --test-dir "$build" --output-on-failure -j"$jobs" || status=$?
if compgen -G "$reports/*" >/dev/null; then
  echo "run-sanitized-tests: sanitizer reports:"
  for f in "$reports"/*; do echo "== $f"; cat "$f"; done
  status=1
fi
unset ASAN_OPTIONS UBSAN_OPTIONS
stage "sanitized test suite"
[ "$status" -eq 0 ] || exit "$status"

export FACTORWATCH_FUZZ_BUILD="$PWD/$build"
rm -rf "$build/seeds" "$build/corpus" "$build/artifacts"
# Writes the seeds once, before the targets run side by side.
./fuzz/make-seeds.sh "$build/seeds" "$build/demo-universe/factorwatch-demo-universe" >/dev/null
# One target per core at a time; each prints one line, or its log's end and the input.
smoke_one() {
  local target="$1" log="$build/$1.log"
  if ! ./fuzz/run-fuzzer.sh "$target" -max_total_time="$smoke_seconds" >"$log" 2>&1; then
    tail -n 60 "$log"
    echo "run-sanitized-tests: $target found a problem; the input is in $build/artifacts/"
    return 1
  fi
  echo "run-sanitized-tests: $target: $(grep -E '^stat::number_of_executed_units' "$log" | awk '{print $2}') runs," \
    "$(grep -E '^stat::average_exec_per_sec' "$log" | awk '{print $2}') per second, no finding"
}
export -f smoke_one
export build smoke_seconds
ls fuzz/fuzz_*.cpp | xargs -n1 basename | sed 's/\.cpp$//' | xargs -P "$jobs" -I{} bash -c 'smoke_one {}'
stage "fuzz smoke ($smoke_seconds s per target, $jobs at a time)"
