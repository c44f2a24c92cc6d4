#!/usr/bin/env bash
# The main job on the demo universe, from a fresh Debian/Ubuntu machine: install the
# dependencies, build, generate the fictional demo universe, load it into the database,
# define a demo model, refresh it (fit, align and compare its rolling windows), print the
# latest exposures and the drift alerts, store the demo book and its benchmark and print
# the book's risk in the latest window, then start the HTTP daemon on it (Ctrl-C or
# SIGTERM stops it). Run it again and it finds everything current: the load changes
# nothing, the refresh fits nothing and the portfolios are unchanged.
#
#   ./deploy/quickstart.sh [--no-serve] [factorwatch serve options, e.g. --port 9000]
#
# The database goes to the data directory: $FACTORWATCH_DATA if set, else
# ~/.local/share/factorwatch (see README.md).
set -euo pipefail
cd "$(dirname "$0")/.."
serve=1
serve_options=()
for argument in "$@"; do
  if [ "$argument" = --no-serve ]; then serve=0; else serve_options+=("$argument"); fi
done
./deploy/install-deps.sh
./deploy/build.sh -DFACTORWATCH_TESTS=OFF -DFACTORWATCH_BENCH=OFF
if [ ! -f demo-universe/out/returns_long.csv ] || [ ! -f demo-universe/out/portfolio_book.json ]; then
  ./build/demo-universe/factorwatch-demo-universe --out demo-universe/out
fi
fw=./build/server/factorwatch
"$fw" load demo-universe/out/returns_long.csv
# Daily windows of 504 business days with four factors by maximum likelihood, fitted
# from June 2023 on (about 670 windows, spanning the demo's planted change of August 2023).
"$fw" model set demo --method ml --factors 4 --window 504 --step 1 --first-as-of 2023-06-01
"$fw" refresh demo
"$fw" exposures demo --limit 12
# How the factor structure drifted: the windows where a factor stopped matching the first
# window (the demo's planted change shows here), with the assets that moved most.
"$fw" alerts demo
# A fictional long-short book and its benchmark (invented weights; the book names its
# benchmark and holds one delisted asset), then the book's risk in the latest window:
# systematic and specific parts, contributions by factor and asset, active risk.
"$fw" portfolio set demo-benchmark demo-universe/out/portfolio_benchmark.csv --as-of 2025-12-31
"$fw" portfolio set demo-book demo-universe/out/portfolio_book.json
"$fw" risk demo demo-book
if [ "$serve" = 1 ]; then
  echo
  echo "Starting the HTTP daemon on this database (Ctrl-C stops it; docs/api.md lists the routes)."
  exec "$fw" serve "${serve_options[@]}"
fi
