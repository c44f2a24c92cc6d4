#!/usr/bin/env bash
# Runs one fuzz target on its seeds and its growing corpus:
#
#   fuzz/run-fuzzer.sh TARGET [libFuzzer flags, e.g. -runs=10000000 or -max_total_time=60]
#
# Needs the fuzz build in build-fuzz/ (or FACTORWATCH_FUZZ_BUILD); writes seeds on first
# use (fuzz/make-seeds.sh), keeps new inputs in build-fuzz/corpus/TARGET and saves any
# crashing, leaking or hanging input in build-fuzz/artifacts/. Exit status 0: no finding.
set -euo pipefail
root="$(cd "$(dirname "$0")/.." && pwd)"
build="${FACTORWATCH_FUZZ_BUILD:-$root/build-fuzz}"
target="$1"
shift
[ -d "$build/seeds/$target" ] || "$root/fuzz/make-seeds.sh" "$build/seeds" "$build/demo-universe/factorwatch-demo-universe"
mkdir -p "$build/corpus/$target" "$build/artifacts"
# Leaks and undefined behaviour are findings; stop at the first, with its stack.
export ASAN_OPTIONS="detect_leaks=1:halt_on_error=1:print_stacktrace=1${ASAN_OPTIONS:+:$ASAN_OPTIONS}"
export UBSAN_OPTIONS="halt_on_error=1:print_stacktrace=1${UBSAN_OPTIONS:+:$UBSAN_OPTIONS}"
# -max_len 4096: every rule of the readers shows within a few lines and fields, and short
# inputs keep the rate high. -timeout 10: an input taking 10 s is a hang (a finding).
# -rss_limit_mb 2048: an input that makes a reader hold 2 GB is a finding too.
exec "$build/fuzz/$target" -max_len=4096 -timeout=10 -rss_limit_mb=2048 -print_final_stats=1 \
  -artifact_prefix="$build/artifacts/$target-" "$@" "$build/corpus/$target" "$build/seeds/$target"
