#!/usr/bin/env bash
# The main job on the demo universe, from a fresh Debian/Ubuntu machine: install the
# dependencies, build, generate the fictional demo universe, fit its latest window
# (504 business days) by maximum likelihood and print the model summary.
set -euo pipefail
cd "$(dirname "$0")/.."
./deploy/install-deps.sh
./deploy/build.sh -DFACTORWATCH_TESTS=OFF -DFACTORWATCH_BENCH=OFF
if [ ! -f demo-universe/out/returns_wide.csv ]; then
  ./build/demo-universe/factorwatch-demo-universe --out demo-universe/out
fi
./build/server/factorwatch fit --returns demo-universe/out/returns_wide.csv --window 504 \
  --method ml --factors 4 "$@"
