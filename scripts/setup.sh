#!/usr/bin/env bash
# Set up everything ventset needs on a fresh Debian/Ubuntu machine: system libraries for Qt
# (headless and on a display), a virtual environment in .venv, and the Python packages.
# Usage: bash scripts/setup.sh [--test]   (--test adds the test tools and PDF/image checkers)
set -euo pipefail
cd "$(dirname "$0")/.."

want_test=0
[ "${1:-}" = "--test" ] && want_test=1

# Qt offscreen needs the first line; a real window (xcb) the second; the tests the third.
pkgs=(libgl1 libegl1 libglib2.0-0 libxkbcommon0 libfontconfig1 libfreetype6 libdbus-1-3 fonts-dejavu-core
      libxcb-cursor0 libxcb-icccm4 libxcb-keysyms1 libxcb-render-util0 libxcb-shape0 libxkbcommon-x11-0)
[ "$want_test" = 1 ] && pkgs+=(xvfb xauth poppler-utils)

missing=()
if command -v dpkg-query >/dev/null 2>&1; then
  for p in "${pkgs[@]}"; do
    dpkg-query -W -f='${Status}' "$p" 2>/dev/null | grep -q "install ok installed" || missing+=("$p")
  done
  if ! python3 -c "import venv, ensurepip" >/dev/null 2>&1; then missing+=(python3-venv); fi
fi
if [ "${#missing[@]}" -gt 0 ]; then
  sudo=""
  [ "$(id -u)" -ne 0 ] && sudo="sudo"
  echo "setup: installing system packages: ${missing[*]}"
  export DEBIAN_FRONTEND=noninteractive
  $sudo apt-get update -qq
  $sudo apt-get install -y -qq --no-install-recommends "${missing[@]}" >/dev/null
fi

if [ ! -x .venv/bin/python ]; then
  python3 -m venv .venv
fi
# Install (again) only when pyproject.toml or setup.py changed, or the test extras are newly wanted.
target="."
[ "$want_test" = 1 ] && target=".[test]"
stamp=".venv/.ventset-installed"
hash="$(cat pyproject.toml setup.py | sha256sum | cut -c1-16)"
have="$(cat "$stamp" 2>/dev/null || true)"
if [ "$have" != "$hash $target" ] && [ "$have $target" != "$hash .[test] ." ]; then
  log=$(mktemp)
  echo "setup: installing Python packages into .venv (the first time takes about a minute)"
  if ! { .venv/bin/python -m pip install -q --upgrade pip && .venv/bin/python -m pip install -q -e "$target"; } \
       >"$log" 2>&1; then
    cat "$log" >&2
    echo "setup: pip install failed (output above)" >&2
    exit 1
  fi
  rm -f "$log"
  echo "$hash $target" > "$stamp"
fi
