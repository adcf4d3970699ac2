#!/usr/bin/env bash
# Smoke check of the desktop explorer: start a virtual X server, run the
# release binary with software OpenGL, take a screenshot, and check that the
# window shows a portrait (many distinct colours, title of the explorer, no
# panic). Exit 0 when it looks right, 1 otherwise.
#
# Needs (Debian): xvfb imagemagick xdotool libgl1-mesa-dri libgl1 libegl1
#                 libxkbcommon-x11-0 libxcursor1 libxrandr2 libxi6 libx11-xcb1
# Usage: .ci/smoke.sh [path/to/phasewright]   (default target/release/phasewright)
set -u

BIN=${1:-target/release/phasewright}
OUT=${SMOKE_OUT:-target/smoke}
DISPLAY_NUM=${SMOKE_DISPLAY:-:99}
MIN_COLOURS=${SMOKE_MIN_COLOURS:-300}

fail() { echo "smoke: FAIL: $*" >&2; exit 1; }

[ -x "$BIN" ] || fail "no executable at $BIN (build with: cargo build --release)"
for tool in Xvfb import convert xdotool; do
  command -v "$tool" >/dev/null 2>&1 || fail "$tool is not installed"
done

mkdir -p "$OUT"
rm -rf "$OUT/data"
export DISPLAY=$DISPLAY_NUM
export LIBGL_ALWAYS_SOFTWARE=1
# A fresh data directory: no recovery offer, no recent files from earlier runs.
export PHASEWRIGHT_DATA_DIR="$OUT/data"
export PHASEWRIGHT_FRAME_LOG="$OUT/frames.log"
rm -f "$PHASEWRIGHT_FRAME_LOG"

Xvfb "$DISPLAY_NUM" -screen 0 1280x800x24 -nolisten tcp >"$OUT/xvfb.log" 2>&1 &
XVFB_PID=$!
APP_PID=
cleanup() {
  [ -n "$APP_PID" ] && kill "$APP_PID" 2>/dev/null
  kill "$XVFB_PID" 2>/dev/null
  wait 2>/dev/null
}
trap cleanup EXIT

for _ in $(seq 1 50); do
  xdotool getdisplaygeometry >/dev/null 2>&1 && break
  kill -0 "$XVFB_PID" 2>/dev/null || fail "Xvfb did not start (see $OUT/xvfb.log)"
  sleep 0.2
done
xdotool getdisplaygeometry >/dev/null 2>&1 || fail "the X server $DISPLAY_NUM does not answer"

"$BIN" >"$OUT/app.log" 2>&1 &
APP_PID=$!

WIN=
for _ in $(seq 1 150); do
  kill -0 "$APP_PID" 2>/dev/null || fail "the explorer exited early: $(tail -n 5 "$OUT/app.log")"
  WIN=$(xdotool search --name 'phasewright' 2>/dev/null | head -n 1)
  [ -n "$WIN" ] && break
  sleep 0.2
done
[ -n "$WIN" ] || fail "no explorer window appeared within 30 s"

# Let the worker deliver the first portrait and a few frames be drawn.
sleep 4
kill -0 "$APP_PID" 2>/dev/null || fail "the explorer exited: $(tail -n 5 "$OUT/app.log")"
TITLE=$(xdotool getwindowname "$WIN" 2>/dev/null)
import -window root "$OUT/shot.png" || fail "screenshot failed"
COLOURS=$(convert "$OUT/shot.png" -format %k info:) || fail "cannot read the screenshot"

echo "smoke: window \"$TITLE\", $COLOURS distinct colours, screenshot $OUT/shot.png"
case "$TITLE" in
  *phasewright*) ;;
  *) fail "unexpected window title \"$TITLE\"" ;;
esac
if grep -qiE 'panicked|error' "$OUT/app.log"; then
  fail "the explorer reported a problem: $(grep -iE 'panicked|error' "$OUT/app.log" | head -n 3)"
fi
[ "$COLOURS" -ge "$MIN_COLOURS" ] || fail "the window looks blank ($COLOURS colours < $MIN_COLOURS)"
[ -s "$PHASEWRIGHT_FRAME_LOG" ] || fail "no frame was drawn (empty frame log)"
echo "smoke: ok"
