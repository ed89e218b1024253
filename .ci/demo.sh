#!/usr/bin/env bash
# The main job on the built-in scenario, end to end, with every step that
# exists: make the demo capture (cached), check it, fit it, relight it,
# compare with the held-out photos and write the report, then open the
# workbench when a display is available.
set -euo pipefail
# The GUI toolkit reads the locale when the binary starts and logs an error
# for Debian's default LANG=C.UTF-8; Patina's text is English only.
if [ -z "${LANGUAGE:-}" ]; then export LANGUAGE=en; fi
bin=$1
out=$2
size=${DEMO_SIZE:-full}
seed=${DEMO_SEED:-1}
has() { "$bin" help "$1" >/dev/null 2>&1; }

cap="$out/$size-seed$seed"
stamp="$cap/.made-by"
want="$("$bin" version) size=$size seed=$seed"
if [ -f "$stamp" ] && [ "$(cat "$stamp")" = "$want" ]; then
  echo "== demo capture: cached in $cap"
else
  echo "== demo capture: making it in $cap (size $size, seed $seed)"
  rm -rf "$cap"
  "$bin" demo -out "$cap" -size "$size" -seed "$seed"
  echo "$want" > "$stamp"
fi

echo "== check"
"$bin" check "$cap/capture.json"

if has fit; then
  echo "== fit"
  "$bin" fit "$cap/capture.json" -o "$out/materials.json"
fi
if has render && [ -f "$out/materials.json" ]; then
  echo "== relight under the studio environment"
  "$bin" render "$cap/capture.json" -materials "$out/materials.json" -orbit 30,25,0.55 \
    -env studio -spp 64 -o "$out/relit-studio.png"
  echo "== relight under a low evening sky"
  "$bin" render "$cap/capture.json" -materials "$out/materials.json" -orbit 200,20,0.55 \
    -env sky:12,240 -spp 64 -o "$out/relit-sky.png"
fi
if has report && [ -f "$out/materials.json" ]; then
  echo "== report against the held-out photos"
  "$bin" report "$cap/capture.json" -materials "$out/materials.json" -o "$out/report.html"
fi

echo
echo "Results are in $out/"
ls -1 "$out" | sed 's/^/  /'
if has open && [ -n "${DISPLAY:-}" ]; then
  echo "== opening the workbench"
  if [ -f "$out/materials.json" ]; then
    "$bin" open "$cap/capture.json" -materials "$out/materials.json"
  else
    "$bin" open "$cap/capture.json"
  fi
fi
