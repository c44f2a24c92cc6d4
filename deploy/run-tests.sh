#!/usr/bin/env bash
# Installs the dependencies, builds everything (Release) and runs the whole test
# suite through CTest.
set -euo pipefail
cd "$(dirname "$0")/.."
./deploy/install-deps.sh
./deploy/build.sh -DFACTORWATCH_TESTS=ON -DFACTORWATCH_BENCH=OFF
jobs=$(nproc 2>/dev/null || echo 2)
ctest --test-dir build --output-on-failure -j"$jobs"
