#!/usr/bin/env bash
# The nightly routine: store the night's returns file, then fit the new window of every
# model. Meant for cron or the systemd timer in deploy/systemd/.
#
#   deploy/nightly.sh FILE [load options, e.g. --prices]
#
# Exit status:
#   0  the file brought a new date and every model refreshed;
#   2  the file was rejected (the database is unchanged and no refresh runs);
#   3  the file brought no date after the latest stored one: the feed has not moved on
#      (the same file sent again, or only revisions of past days). The refresh still runs,
#      so revised days are refitted; the status tells the scheduler to raise it;
#   1  a model failed to refresh (the others are refreshed; the log names the model).
# Environment: FACTORWATCH_DATA (data directory), FACTORWATCH_BIN (the factorwatch
# binary; default: this checkout's build/server/factorwatch).
set -uo pipefail
if [ $# -lt 1 ]; then
  echo "usage: $0 FILE [load options]" >&2
  exit 2
fi
fw=${FACTORWATCH_BIN:-"$(cd "$(dirname "$0")/.." && pwd)/build/server/factorwatch"}
stamp() { date -u +%Y-%m-%dT%H:%M:%SZ; }
echo "$(stamp) nightly: loading $1"
"$fw" load "$@"
loaded=$?
case $loaded in
  0) ;;
  3) echo "$(stamp) nightly: no new date in $1: the feed has not moved on (exit 3 after the refresh)" ;;
  *) echo "$(stamp) nightly: the load failed with status $loaded; nothing refreshed"; exit "$loaded" ;;
esac
echo "$(stamp) nightly: refreshing every model"
"$fw" refresh --quiet || exit $?
exit "$loaded"
