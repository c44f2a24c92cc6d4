#!/usr/bin/env bash
# A long fuzz run of each target in turn, at low priority, and one Markdown row each for
# docs/reliability.md (runs, exec/s, corpus files, peak RSS, findings):
#
#   fuzz/campaign.sh RUNS SECONDS [TARGET ...]     e.g. fuzz/campaign.sh 10000000 1800
#
# Each target stops after RUNS executions or SECONDS, whichever comes first; all targets
# when none are named. Logs in build-fuzz/campaign-TARGET.log.
set -uo pipefail
root="$(cd "$(dirname "$0")/.." && pwd)"
build="${FACTORWATCH_FUZZ_BUILD:-$root/build-fuzz}"
runs="$1"
seconds="$2"
shift 2
targets=("$@")
[ ${#targets[@]} -gt 0 ] || targets=($(ls "$root"/fuzz/fuzz_*.cpp | xargs -n1 basename | sed 's/\.cpp$//'))
echo "| target | executions | exec/s | corpus files | peak RSS (MB) | findings |"
echo "|---|---:|---:|---:|---:|---|"
for target in "${targets[@]}"; do
  log="$build/campaign-$target.log"
  nice -n 10 "$root/fuzz/run-fuzzer.sh" "$target" -runs="$runs" -max_total_time="$seconds" >"$log" 2>&1
  status=$?
  stat() { grep -E "^stat::$1:" "$log" | awk '{print $2}' | tail -n1; }
  findings="none"
  [ "$status" -eq 0 ] || findings="exit $status: $(grep -m1 -E 'ERROR|SUMMARY|invariant' "$log")"
  echo "| $target | $(stat number_of_executed_units) | $(stat average_exec_per_sec) | $(ls "$build/corpus/$target" | wc -l) | $(stat peak_rss_mb) | $findings |"
done
