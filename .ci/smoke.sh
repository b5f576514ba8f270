#!/usr/bin/env bash
# Smoke test of the real binary: make the demo project, open its labelling
# screen in a window under Xvfb, take a screenshot and check that the window
# really rendered (many colours, not a blank or single-colour image), then
# draw a box with the mouse and check that it reached the project file.
#   .ci/smoke.sh BINARY [SCREENSHOT.png]
set -euo pipefail
bin=$(realpath "$1")
shot=${2:-build/smoke.png}
mkdir -p "$(dirname "$shot")"
shot=$(realpath "$shot")
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
# A settings folder of its own, so that other Boxwright windows on this
# machine (or their half-written preferences) cannot disturb the test.
export XDG_CONFIG_HOME="$work/config"

"$bin" demo "$work/demo" --no-open --images 4 >/dev/null 2>"$work/demo.log" || { cat "$work/demo.log"; exit 1; }

cat >"$work/inside.sh" <<'INSIDE'
set -u
"$BIN" open "$PROJECT" --annotator smoke >"$LOG" 2>&1 &
pid=$!
wid=$(timeout 60 xdotool search --sync --name 'Boxwright' | head -1)
[ -n "$wid" ] || { echo "no window appeared"; kill $pid; exit 1; }
ok=1
for _ in $(seq 80); do  # wait until the image has been decoded and drawn
  sleep 0.25
  import -window "$wid" "$SHOT" 2>/dev/null || continue
  [ "$(identify -format '%k' "$SHOT")" -gt 2000 ] && { ok=0; break; }
done
# Draw a box in the middle of the image area: press, move in steps, release.
if [ $ok -eq 0 ]; then
  xdotool mousemove --window "$wid" 560 330 mousedown 1
  for i in 1 2 3 4 5 6 7 8; do xdotool mousemove --window "$wid" $((560 + 12 * i)) $((330 + 9 * i)); sleep 0.05; done
  xdotool mouseup 1
  sleep 1
fi
kill -TERM $pid; wait $pid  # let it close the project file cleanly
exit $ok
INSIDE
status=0
BIN=$bin PROJECT="$work/demo/harbour.boxw" SHOT=$shot LOG="$work/app.log" \
  xvfb-run -a -s "-screen 0 1400x900x24" bash "$work/inside.sh" || status=$?
if [ $status -ne 0 ]; then
  echo "smoke: the window did not render the demo project"; cat "$work/app.log"; exit 1
fi
drawn=$(/usr/bin/python3 -c 'import sqlite3,sys; c=sqlite3.connect(sys.argv[1]); print(c.execute("select count(*) from labels l join annotators a on a.id=l.annotator_id where a.name=? and l.origin=?", ("smoke","drawn")).fetchone()[0])' "$work/demo/harbour.boxw")
if [ "$drawn" != 1 ]; then
  echo "smoke: a box drawn with the mouse was not saved ($drawn boxes by the smoke annotator)"; cat "$work/app.log"; exit 1
fi
colours=$(identify -format '%wx%h, %k colours' "$shot")
echo "smoke: window rendered ($colours), a drawn box was saved -> $shot"
# The toolkit saves its preferences on exit and its own file watcher can
# read the file while it is being rewritten; that three-line report is
# about the toolkit's shutdown, not the program, and is left out.
grep -v -e 'Preferences load error:' -e 'Cause: EOF' -e 'app/preferences.go:' "$work/app.log" >"$work/app-filtered.log" || true
if grep -qi 'error' "$work/app-filtered.log"; then
  echo "smoke: the program logged errors:"; cat "$work/app.log"; exit 1
fi
