#!/usr/bin/env bash
# Builds the benchmarks (Release) and runs the whole suite: our PCA / ML cold / ML warm
# fits, the Python peers on the identical panel (BLAS environment as-is and with the
# OpenBLAS overrides unset), the stage split at N = 5000 and the compiler-flag
# comparison. Prints the summary table; the raw JSON lines are kept. About 10 minutes,
# plus about 10 for the storage benchmark (bench/storage_bench.py: `factorwatch load` and
# `factorwatch refresh` against sqlite3 and scikit-learn; it builds build-storagebench/
# and writes build-storagebench/results/storage_bench.txt; --no-storage skips it), plus
# about 25 for the HTTP benchmark (bench/serve_bench.py: `factorwatch serve` under wrk
# against nginx and Python's http.server; it builds build-servebench/ and writes
# build-servebench/results/serve_bench.txt; --no-serve skips it), plus about 8 for the
# risk-query benchmark (bench/risk_bench.cpp: a 2,000-name portfolio's risk through the
# engine and the daemon's handlers in process, against numpy in bench/risk_peer.py; three
# rounds, medians by bench/risk_report.py into OUT/risk_table.txt; it builds the server
# library in build-bench/ first; --no-risk skips it).
#
#   bench/run_all.sh [--sizes "500 2000 5000 10000"] [--rounds 4] [--out DIR] [--no-flags] [--no-storage]
#                    [--no-serve] [--no-risk]
#
# Round 1 covers every size; rounds 2..R repeat N = 5000 (the size the targets are set
# at), ours and the peers alternating; the report uses medians over rounds.
#
# Every timed command waits for a quiet machine (no compiler, CPUs idle) and is
# repeated if other load appeared while it ran (bench/quiet_run.py).
# See docs/performance.md for what is measured and how to read it.
set -euo pipefail

ROOT=$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)
SIZES="500 2000 5000 10000"
OUT="$ROOT/build-bench/results"
FLAGS=1
STORAGE=1
SERVE=1
RISK=1
ROUNDS=4
while [ $# -gt 0 ]; do
  case "$1" in
    --sizes) SIZES="$2"; shift 2 ;;
    --out) OUT="$2"; shift 2 ;;
    --no-flags) FLAGS=0; shift ;;
    --no-storage) STORAGE=0; shift ;;
    --no-serve) SERVE=0; shift ;;
    --no-risk) RISK=0; shift ;;
    --rounds) ROUNDS="$2"; shift 2 ;;
    *) echo "usage: $0 [--sizes \"N ...\"] [--rounds R] [--out DIR] [--no-flags] [--no-storage] [--no-serve] [--no-risk]" >&2; exit 2 ;;
  esac
done

PY=/usr/bin/python3            # Debian's python3 with numpy/scipy/sklearn (not a pyenv one)
PEER_BUDGET_SECONDS=120        # a peer predicted to take longer than this at some N is skipped
TARGET_N=5000                  # the size the targets are stated at
BUILD="$ROOT/build-bench"
TMP=$(mktemp -d /tmp/factorwatch-bench.XXXXXX)
trap 'rm -rf "$TMP"' EXIT
mkdir -p "$OUT"
RAW="$OUT/raw.jsonl"
: > "$RAW"

log() { echo "[run_all] $*" >&2; }

# Other engineers compile and test on this machine: every timed command runs through
# quiet_run.py, which waits for a quiet machine, watches for compilers and other load
# during the run and repeats a disturbed run. measure prints the command's JSON lines
# (with the load it saw); timed also appends them to the raw file.
measure() { "$PY" "$ROOT/bench/quiet_run.py" --tag "round=$ROUND" -- "$@"; }
timed() { measure "$@" | tee -a "$RAW"; }

build() {  # build DIR [cmake options...]: Release, tests off, only the bench targets
  local dir="$1"; shift
  mkdir -p "$dir"
  cmake -S "$ROOT" -B "$dir" -DCMAKE_BUILD_TYPE=Release -DFACTORWATCH_TESTS=OFF \
        -DCMAKE_EXPORT_COMPILE_COMMANDS=ON "$@" > "$dir/configure.log" 2>&1 ||
    { cat "$dir/configure.log" >&2; exit 1; }
  # Only the bench targets (and the engine and demo libraries they link): other
  # folders may be mid-edit and need not compile for the benchmarks.
  cmake --build "$dir" --target fit_bench stage_bench -j2 2>&1 | grep -E "warning|error" >&2 || true
  [ -x "$dir/bench/fit_bench" ] || { log "build failed in $dir"; exit 1; }
}

log "building $BUILD"
build "$BUILD"
if [ "$FLAGS" = 1 ]; then
  build "$ROOT/build-bench-nonative" -DFACTORWATCH_NATIVE=OFF
  build "$ROOT/build-bench-noopenmp" -DFACTORWATCH_OPENMP=OFF
fi
FIT="$BUILD/bench/fit_bench"

# The machine and the flags, recorded with the results.
"$PY" - "$BUILD/compile_commands.json" >> "$RAW" <<'EOF'
import json, os, re, subprocess, sys
cpu = next((l.split(":", 1)[1].strip() for l in subprocess.run(["lscpu"], capture_output=True, text=True).stdout.splitlines()
            if l.startswith("Model name")), "?")
mem = os.sysconf("SC_PAGE_SIZE") * os.sysconf("SC_PHYS_PAGES") / 2**30
cmds = json.load(open(sys.argv[1]))
cmd = next(c["command"] for c in cmds if c["file"].endswith("engine/src/moments.cpp"))
flags = " ".join(t for t in cmd.split() if t.startswith(("-O", "-march", "-f", "-D", "-W", "-std")))
gcc = subprocess.run(["c++", "--version"], capture_output=True, text=True).stdout.splitlines()[0]
root = os.path.dirname(os.path.dirname(os.path.abspath(sys.argv[1])))
git = lambda *a: subprocess.run(["git", "-C", root, *a], capture_output=True, text=True).stdout.strip()
commit = git("rev-parse", "--short", "HEAD")
engine_state = "modified since the commit" if git("status", "--porcelain", "--", "engine") else "as committed"
print(json.dumps({"bench": "machine", "cpu": cpu, "cpus": os.cpu_count(), "memory_gib": round(mem, 1),
                  "compiler": gcc, "build_type": "Release", "flags": flags, "commit": commit,
                  "engine_state": engine_state}))
EOF

ROUND=1
our_fits() {  # N
  timed "$FIT" --assets "$1" --method pca --repeat 5
  timed "$FIT" --assets "$1" --method pca --repeat 5 --eigenvalues 10
  timed "$FIT" --assets "$1" --method pca-warm --repeat 5
  timed "$FIT" --assets "$1" --method ml --repeat 5
  timed "$FIT" --assets "$1" --method ml-warm --repeat 5
  # The T x T Gram matrix alone, the yardstick of the PCA target (once per size).
  if [ "$ROUND" = 1 ]; then timed "$BUILD/bench/stage_bench" --assets "$1" --repeat 5 --only gram; fi
}
peer_runs() {  # N PANEL [extra skip]
  local skip
  log "N = $1: peers (BLAS environment as-is), round $ROUND"
  skip=$("$PY" "$ROOT/bench/report.py" skip "$RAW" --assets "$1" --config as-is --budget "$PEER_BUDGET_SECONDS")
  timed "$PY" "$ROOT/bench/peers.py" --panel "$2" --config as-is --skip "${skip:+$skip,}${3:-}" \
    $([ "$1" -le 500 ] && echo --check-score)
  log "N = $1: peers (OPENBLAS_CORETYPE and OPENBLAS_L2_SIZE unset), round $ROUND"
  skip=$("$PY" "$ROOT/bench/report.py" skip "$RAW" --assets "$1" --config unset --budget "$PEER_BUDGET_SECONDS")
  timed env -u OPENBLAS_CORETYPE -u OPENBLAS_L2_SIZE "$PY" "$ROOT/bench/peers.py" --panel "$2" \
    --config unset --skip "${skip:+$skip,}${3:-}"
}

# Round 1: every size.
for N in $SIZES; do
  PANEL="$TMP/panel-$N.bin"
  "$FIT" --assets "$N" --write-panel "$PANEL" >> "$RAW"
  log "N = $N: our fits, round $ROUND"
  our_fits "$N"
  peer_runs "$N" "$PANEL"
  [ "$N" = "$TARGET_N" ] || rm -f "$PANEL"
done

# Rounds 2..ROUNDS at the target size, ours and the peers alternating, so that the
# verdicts rest on medians over rounds rather than on one draw of this VM's speed.
if [[ " $SIZES " == *" $TARGET_N "* ]]; then
  for ROUND in $(seq 2 "$ROUNDS"); do
    log "N = $TARGET_N: our fits, round $ROUND"
    our_fits "$TARGET_N"
    peer_runs "$TARGET_N" "$TMP/panel-$TARGET_N.bin" "numpy_eigh=timed in round 1 only"
  done
fi

log "stage split at N = $TARGET_N"
for ROUND in 1 2 3; do
  timed "$BUILD/bench/stage_bench" --assets "$TARGET_N" --repeat 7
done

if [ "$FLAGS" = 1 ]; then
  log "compiler-flag comparison at N = $TARGET_N"
  for ROUND in 1 2 3; do
    for dir in "$BUILD" "$ROOT/build-bench-nonative" "$ROOT/build-bench-noopenmp"; do
      pca=$(measure "$dir/bench/fit_bench" --assets "$TARGET_N" --method pca --repeat 5)
      ml=$(measure "$dir/bench/fit_bench" --assets "$TARGET_N" --method ml --repeat 5)
      "$PY" - "$(basename "$dir")" "$pca" "$ml" "$ROUND" <<'EOF' | tee -a "$RAW"
import json, sys
name, pca, ml = sys.argv[1], json.loads(sys.argv[2]), json.loads(sys.argv[3])
labels = {"build-bench": "default (-march=native, OpenMP)", "build-bench-nonative": "FACTORWATCH_NATIVE=OFF",
          "build-bench-noopenmp": "FACTORWATCH_OPENMP=OFF"}
print(json.dumps({"bench": "flags", "build": labels.get(name, name), "round": int(sys.argv[4]),
                  "pca_seconds": pca["call_seconds"], "ml_seconds": ml["call_seconds"],
                  "ml_iterations": ml["iterations"], "ml_log_likelihood": ml["log_likelihood"],
                  "pca_solver_path": pca["solver_path"]}))
EOF
    done
  done
fi

echo
"$PY" "$ROOT/bench/report.py" table "$RAW" | tee "$OUT/table.txt"
log "raw lines: $RAW; table: $OUT/table.txt"

if [ "$RISK" = 1 ]; then
  log "risk queries: engine and endpoint handlers in process, against numpy"
  cmake --build "$BUILD" --target risk_bench -j2 2>&1 | grep -E "warning|error" >&2 || true
  [ -x "$BUILD/bench/risk_bench" ] || { log "risk_bench did not build in $BUILD"; exit 1; }
  RISK_RAW="$OUT/risk_raw.jsonl"
  : > "$RISK_RAW"
  for ROUND in 1 2 3; do
    measure "$BUILD/bench/risk_bench" --peer "$ROOT/bench/risk_peer.py" --python "$PY" >> "$RISK_RAW"
  done
  "$PY" "$ROOT/bench/risk_report.py" "$RISK_RAW" | tee "$OUT/risk_table.txt"
  log "risk raw lines: $RISK_RAW; table: $OUT/risk_table.txt"
fi

if [ "$STORAGE" = 1 ]; then
  log "storage benchmark: ingest and refresh against sqlite3 and scikit-learn"
  "$PY" "$ROOT/bench/storage_bench.py" --rounds 3
fi

if [ "$SERVE" = 1 ]; then
  log "HTTP benchmark: factorwatch serve under wrk against nginx and Python's http.server"
  "$PY" "$ROOT/bench/serve_bench.py" --rounds 3
fi
