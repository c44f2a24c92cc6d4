#!/usr/bin/env bash
# The nightly routine: store the night's returns file, then fit the new window of every
# model. Meant for cron or the systemd timer in deploy/systemd/.
#
#   deploy/nightly.sh FILE [load options, e.g. --prices]
#
# Exit status: that of the first step that fails — 2 when the file is rejected (the
# database is unchanged and no refresh runs), 1 when a window could not be fitted.
# Environment: FACTORWATCH_DATA (data directory), FACTORWATCH_BIN (the factorwatch
# binary; default: this checkout's build/server/factorwatch).
set -euo pipefail
if [ $# -lt 1 ]; then
  echo "usage: $0 FILE [load options]" >&2
  exit 2
fi
fw=${FACTORWATCH_BIN:-"$(cd "$(dirname "$0")/.." && pwd)/build/server/factorwatch"}
echo "$(date -u +%Y-%m-%dT%H:%M:%SZ) nightly: loading $1"
"$fw" load "$@"
echo "$(date -u +%Y-%m-%dT%H:%M:%SZ) nightly: refreshing every model"
"$fw" refresh --quiet
