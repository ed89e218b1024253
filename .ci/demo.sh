#!/usr/bin/env bash
# The main job on the built-in scenario, using every step that exists so far.
set -euo pipefail
bin=$1
out=$2
mkdir -p "$out"
echo "== patina check on the small fixture capture"
"$bin" check testdata/jar-small/capture.json
