#!/usr/bin/env bash
# Frame rate of the real explorer window while a parameter slider is dragged:
# start Xvfb, open a session with the release binary under software OpenGL,
# press the mouse on the first slider and sweep it back and forth with
# xdotool, then summarise the explorer's own frame log (PHASEWRIGHT_FRAME_LOG).
#
# Usage: .ci/frames.sh [binary] [session]   (defaults: target/release/phasewright,
#        sessions/biased-resonator.json). Needs xvfb, xdotool.
# Slider position: FRAMES_SLIDER_X0/X1/Y (pixels in the 1280x800 screen) if the
# layout moves.
set -u
BIN=${1:-target/release/phasewright}
SESSION=${2:-sessions/biased-resonator.json}
OUT=${FRAMES_OUT:-target/frames}
DISPLAY_NUM=${FRAMES_DISPLAY:-:98}
X0=${FRAMES_SLIDER_X0:-60}
X1=${FRAMES_SLIDER_X1:-230}
Y=${FRAMES_SLIDER_Y:-0}
SWEEPS=${FRAMES_SWEEPS:-4}

fail() { echo "frames: FAIL: $*" >&2; exit 1; }
[ -x "$BIN" ] || fail "no executable at $BIN"
mkdir -p "$OUT"; rm -rf "$OUT/data"; rm -f "$OUT/frames.log"
export DISPLAY=$DISPLAY_NUM LIBGL_ALWAYS_SOFTWARE=1
export PHASEWRIGHT_DATA_DIR="$OUT/data" PHASEWRIGHT_FRAME_LOG="$OUT/frames.log"
Xvfb "$DISPLAY_NUM" -screen 0 1280x800x24 -nolisten tcp >"$OUT/xvfb.log" 2>&1 &
XVFB=$!; APP=
trap '[ -n "$APP" ] && kill $APP 2>/dev/null; kill $XVFB 2>/dev/null; wait 2>/dev/null' EXIT
for _ in $(seq 1 50); do xdotool getdisplaygeometry >/dev/null 2>&1 && break; sleep 0.2; done
"$BIN" open "$SESSION" >"$OUT/app.log" 2>&1 &
APP=$!
WIN=
for _ in $(seq 1 150); do
  WIN=$(xdotool search --name 'phasewright' 2>/dev/null | head -n 1); [ -n "$WIN" ] && break; sleep 0.2
done
[ -n "$WIN" ] || fail "no window"
sleep 4
xdotool windowactivate --sync "$WIN" 2>/dev/null || true
if [ "$Y" = 0 ]; then fail "set FRAMES_SLIDER_Y to the first slider's row (see $OUT/before.png)"; fi
import -window root "$OUT/before.png"
: >"$OUT/frames.log.mark"
START=$(wc -l <"$OUT/frames.log")
xdotool mousemove "$X0" "$Y" mousedown 1
for s in $(seq 1 "$SWEEPS"); do
  for x in $(seq "$X0" 2 "$X1") $(seq "$X1" -2 "$X0"); do xdotool mousemove "$x" "$Y"; sleep 0.01; done
done
import -window root "$OUT/dragging.png"
xdotool mouseup 1
sleep 2
import -window root "$OUT/after.png"
tail -n +"$((START + 1))" "$OUT/frames.log" | awk '
  /dragging=true/ { n++; split($1,a,"="); split($2,b,"="); ui=a[2]; gap=b[2];
    s+=gap; u+=ui; if (ui>umax) umax=ui; if (gap>gmax) gmax=gap; gaps[n]=gap }
  END { if (n < 2) { print "frames: no dragging frames logged"; exit 1 }
    asort(gaps); p95=gaps[int(0.95*n)];
    printf "frames while dragging: %d, mean interval %.1f ms (%.1f frames/s), p95 interval %.1f ms, worst interval %.1f ms; UI thread mean %.2f ms, worst %.2f ms\n", n, s/n, 1000*n/s, p95, gmax, u/n, umax }'
