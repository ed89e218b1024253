#!/usr/bin/env bash
# Screenshots of the workbench under a virtual display: builds (or takes)
# the desktop binary, makes the small demo capture (cached), starts Xvfb on
# a free display, opens the workbench on the demo, visits every main view
# with its keyboard shortcut and saves PNG screenshots in build/gui-shots/.
# Fails when the window does not appear or a screenshot is blank.
#
# Usage: .ci/gui-shot.sh [PATINA_BINARY]   (default: build it to build/patina)
# Needs: Xvfb, xdotool, ImageMagick (import, convert).
set -euo pipefail
cd "$(dirname "$0")/.."
out=build/gui-shots
mkdir -p "$out"
bin=${1:-}
if [ -z "$bin" ]; then
  bin=build/patina
  echo "== building $bin"
  go build -o "$bin" ./cmd/patina
fi
for tool in Xvfb xdotool import convert; do
  command -v "$tool" >/dev/null || { echo "gui-shot: $tool is not installed" >&2; exit 1; }
done

demo=${GUI_SHOT_DEMO:-build/gui-shots/demo}
if [ ! -f "$demo/capture.json" ]; then
  echo "== making the small demo capture in $demo"
  rm -rf "$demo"
  "$bin" demo -out "$demo" -size small
fi
mats=()
if [ -f "$demo/materials.json" ]; then
  mats=(-materials "$demo/materials.json")
elif "$bin" help fit >/dev/null 2>&1; then
  echo "== fitting the demo for the relight and compare views"
  "$bin" fit "$demo/capture.json" -o "$demo/materials.json" >/dev/null && mats=(-materials "$demo/materials.json")
fi

# A free display number: no lock file and no socket.
n=91
while [ -e "/tmp/.X$n-lock" ] || [ -e "/tmp/.X11-unix/X$n" ]; do n=$((n + 1)); done
Xvfb ":$n" -screen 0 1280x800x24 -nolisten tcp >"$out/xvfb.log" 2>&1 &
xpid=$!
app=""
cleanup() {
  [ -n "$app" ] && kill "$app" 2>/dev/null || true
  kill "$xpid" 2>/dev/null || true
  wait 2>/dev/null || true
}
trap cleanup EXIT
export DISPLAY=":$n" LANG=en_US.UTF-8 LANGUAGE=en
# Ready when a client can talk to it (a stale socket of an earlier server
# is not enough).
ready=""
for _ in $(seq 100); do
  kill -0 "$xpid" 2>/dev/null || { echo "gui-shot: Xvfb :$n did not start:" >&2; cat "$out/xvfb.log" >&2; exit 1; }
  if xdotool getdisplaygeometry >/dev/null 2>&1; then ready=1; break; fi
  sleep 0.1
done
[ -n "$ready" ] || { echo "gui-shot: Xvfb :$n does not answer" >&2; exit 1; }

echo "== opening the workbench on display :$n"
"$bin" open "$demo/capture.json" "${mats[@]}" >"$out/patina.log" 2>&1 &
app=$!
wid=""
for _ in $(seq 120); do
  wid=$(xdotool search --name "Patina" 2>/dev/null | head -1 || true)
  [ -n "$wid" ] && break
  kill -0 "$app" 2>/dev/null || { echo "gui-shot: patina exited:" >&2; cat "$out/patina.log" >&2; exit 1; }
  sleep 0.5
done
[ -n "$wid" ] || { echo "gui-shot: the workbench window did not appear" >&2; exit 1; }
sleep 3 # the capture loads, the first photo decodes

# Without a window manager the keyboard follows the pointer: keep it over
# the window (on the status line, away from the viewers' wheel and drag).
key() {
  xdotool mousemove --window "$wid" 640 790 2>/dev/null || true
  xdotool windowfocus "$wid" 2>/dev/null || true
  xdotool key --clearmodifiers "$@"
}
blank() { # prints the grey standard deviation of the shot (0..1)
  convert "$1" -colorspace Gray -format "%[fx:standard_deviation]" info:
}
shot() {
  local name=$1
  import -window root "$out/$name.png"
  local sd
  sd=$(blank "$out/$name.png")
  echo "   $out/$name.png (grey standard deviation $sd)"
  awk -v s="$sd" 'BEGIN { exit !(s < 0.02) }' && { echo "gui-shot: $name.png is blank" >&2; exit 1; }
  return 0
}

echo "== screenshots"
key ctrl+1; sleep 1; shot 1-capture
key ctrl+2; sleep 1; key ctrl+g; key ctrl+l; sleep 3; shot 2-photos-overlays
key ctrl+g; key ctrl+m; sleep 3; shot 3-photos-wireframe
key ctrl+m; key ctrl+r; sleep 4; shot 4-photos-rejections
key ctrl+r
key ctrl+3; sleep 1; shot 5-materials
key ctrl+4; key ctrl+f; sleep "${GUI_SHOT_FIT_WAIT:-15}"; shot 6-fit
key Escape; sleep 1 # cancel the fit: the materials loaded with the capture stay
key ctrl+5; sleep 5; shot 7-relight
key ctrl+6; sleep "${GUI_SHOT_COMPARE_WAIT:-75}"; shot 8-compare-side-by-side
key ctrl+shift+w; sleep 1; shot 9-compare-wipe
key ctrl+shift+w; sleep 1; shot 10-compare-delta-e
kill -0 "$app" 2>/dev/null || { echo "gui-shot: patina died during the run:" >&2; cat "$out/patina.log" >&2; exit 1; }
echo "== done: $(ls "$out"/*.png | wc -l) screenshots in $out"
