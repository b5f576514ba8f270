#!/usr/bin/env bash
# Kill test of the window: opens the demo project in the real binary under a
# private X server, edits it with xdotool and kills the process with
# SIGKILL at random moments, then checks the file (integrity, every edit
# the status bar acknowledged, `boxwright info`). The runs and the checks
# are in killtest.py beside this script.
#   .ci/killtest.sh BINARY [RUNS] [SEED]     (make killtest)
# RUNS per mode (default 50; modes: a fresh copy each run, and one copy for
# all runs); SEED replays a sequence (printed at the start). Work files go
# to build/killtest/; a failed run's project and trace are kept there.
set -euo pipefail
bin=$(realpath "$1")
runs=${2:-50}
seed=${3:-}
for tool in Xvfb xdotool sqlite3; do
  command -v "$tool" >/dev/null || { echo "killtest: $tool is missing (make test-deps, and apt-get install sqlite3)"; exit 1; }
done

dispfile=$(mktemp)
xvfb_pid=''
cleanup() {
  if [ -n "$xvfb_pid" ]; then kill "$xvfb_pid" 2>/dev/null || true; wait "$xvfb_pid" 2>/dev/null || true; fi
  rm -f "$dispfile"
}
trap cleanup EXIT
# -displayfd picks a free display number, so that other X servers on the
# machine (other people's tests) are not disturbed.
Xvfb -displayfd 3 -screen 0 1400x900x24 -nolisten tcp 3>"$dispfile" 2>/dev/null &
xvfb_pid=$!
for _ in $(seq 100); do [ -s "$dispfile" ] && break; sleep 0.1; done
[ -s "$dispfile" ] || { echo "killtest: the X server did not start"; exit 1; }
export DISPLAY=":$(head -1 "$dispfile")"

/usr/bin/python3 "$(dirname "$0")/killtest.py" "$bin" --runs "$runs" ${seed:+--seed "$seed"} ${KILLTEST_ARGS:-}
