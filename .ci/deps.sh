#!/usr/bin/env bash
# Installs what a fresh Debian or Ubuntu machine lacks to build, test and run
# Patina. Idempotent and quick when everything is present. It downloads only
# packages from the registries (Debian's apt, the Go module proxy, npm).
set -euo pipefail
cd "$(dirname "$0")/.."

debs=(
  gcc pkg-config libgl1-mesa-dev xorg-dev    # desktop build (cgo, GLFW)
  xvfb xdotool imagemagick                   # workbench screenshots
  python3 python3-numpy python3-scipy        # reference cross-checks (run with /usr/bin/python3)
  python3-opencv python3-skimage python3-meshio
  libembree-dev                              # side-by-side ray throughput reference
  chromium                                   # the report opened in a real browser
)
# Node.js and npm may come from another packaging of Node (which bundles npm
# and conflicts with Debian's npm package): ask for them only when absent.
command -v node >/dev/null 2>&1 || debs+=(nodejs)
command -v npm >/dev/null 2>&1 || debs+=(npm)

missing=()
if command -v dpkg-query >/dev/null 2>&1; then
  for p in "${debs[@]}"; do
    if ! dpkg-query -W -f='${Status}' "$p" 2>/dev/null | grep -q "install ok installed"; then
      missing+=("$p")
    fi
  done
else
  missing=("${debs[@]}")
fi

if [ ${#missing[@]} -gt 0 ]; then
  if command -v apt-get >/dev/null 2>&1; then
    SUDO=""
    if [ "$(id -u)" -ne 0 ]; then
      if command -v sudo >/dev/null 2>&1; then SUDO="sudo"; else
        echo "deps: run as root or install sudo; missing Debian packages: ${missing[*]}" >&2; exit 1
      fi
    fi
    echo "deps: installing ${missing[*]}"
    stamp=/var/lib/apt/periodic/patina-update-stamp
    if [ ! -e "$stamp" ] || [ -z "$(ls -A /var/lib/apt/lists 2>/dev/null | grep -v lock)" ]; then
      $SUDO apt-get update -q
      $SUDO mkdir -p "$(dirname "$stamp")" && $SUDO touch "$stamp"
    fi
    DEBIAN_FRONTEND=noninteractive $SUDO apt-get install -y -q --no-install-recommends "${missing[@]}"
  else
    echo "deps: not a Debian-like system. Install these (or your system's equivalents):" >&2
    echo "  ${missing[*]}" >&2
    exit 1
  fi
fi

command -v go >/dev/null 2>&1 || { echo "deps: Go 1.26 is required (https://go.dev/dl/)" >&2; exit 1; }
go mod download

# npm reference packages, installed into a build folder (not committed).
if command -v npm >/dev/null 2>&1 && [ -f .ci/npm/package.json ]; then
  if [ ! -d build/npm/node_modules ] || [ .ci/npm/package.json -nt build/npm/node_modules ]; then
    mkdir -p build/npm
    cp .ci/npm/package.json build/npm/
    (cd build/npm && npm install --no-audit --no-fund --silent) && touch build/npm/node_modules
  fi
fi
