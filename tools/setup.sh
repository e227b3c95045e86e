#!/usr/bin/env bash
# Sets up .venv with Rangefold (and, with --test, its test tools) on a Debian machine.
# Installs the few system libraries Qt and the PDF checks need when they are missing and
# this runs as root; otherwise it prints the apt-get line to run.
set -euo pipefail
cd "$(dirname "$0")/.."

with_tests=0
[ "${1:-}" = "--test" ] && with_tests=1

python=${PYTHON:-}
if [ -z "$python" ]; then
  for candidate in python3.11 python3.12 python3.13 python3; do
    if command -v "$candidate" >/dev/null 2>&1; then python=$candidate; break; fi
  done
fi
[ -n "$python" ] || { echo "setup: no python3 found; install python3.11 (apt-get install python3 python3-venv)" >&2; exit 1; }

# shared library -> Debian package that provides it (what PySide6 wheels load at start)
declare -A provider=(
  [libEGL.so.1]=libegl1 [libGL.so.1]=libgl1 [libOpenGL.so.0]=libopengl0
  [libxkbcommon.so.0]=libxkbcommon0 [libfontconfig.so.1]=libfontconfig1
  [libfreetype.so.6]=libfreetype6 [libdbus-1.so.3]=libdbus-1-3 [libglib-2.0.so.0]=libglib2.0-0
  [libxcb-cursor.so.0]=libxcb-cursor0 [libxkbcommon-x11.so.0]=libxkbcommon-x11-0
  [libxcb-icccm.so.4]=libxcb-icccm4 [libxcb-keysyms.so.1]=libxcb-keysyms1
  [libxcb-shape.so.0]=libxcb-shape0 [libxcb-randr.so.0]=libxcb-randr0
  [libxcb-render-util.so.0]=libxcb-render-util0 [libxcb-image.so.0]=libxcb-image0
  [libX11-xcb.so.1]=libx11-xcb1
)
missing=()
for lib in "${!provider[@]}"; do
  ldconfig -p 2>/dev/null | grep -q "$lib" || missing+=("${provider[$lib]}")
done
if [ "$with_tests" = 1 ] && ! command -v pdftoppm >/dev/null 2>&1; then missing+=(poppler-utils); fi
fc-list >/dev/null 2>&1 || missing+=(fontconfig)
if ! "$python" -m venv --help >/dev/null 2>&1 || ! "$python" -c "import ensurepip" >/dev/null 2>&1; then
  missing+=(python3-venv)
fi
if [ "${#missing[@]}" -gt 0 ]; then
  if [ "$(id -u)" = 0 ] && command -v apt-get >/dev/null 2>&1; then
    echo "setup: installing ${missing[*]}"
    apt-get update -qq && DEBIAN_FRONTEND=noninteractive apt-get install -y -qq "${missing[@]}" >/dev/null
  else
    echo "setup: please run: sudo apt-get install -y ${missing[*]}" >&2
  fi
fi

[ -x .venv/bin/python ] || "$python" -m venv .venv
.venv/bin/python -m pip install -q --upgrade pip
if [ "$with_tests" = 1 ]; then
  .venv/bin/python -m pip install -q -e ".[test]"
else
  .venv/bin/python -m pip install -q -e .
fi
echo "setup: ready (.venv)"
