#!/usr/bin/env bash
# `reachwise demo` after `cmake --install` to another prefix: the installed
# program finds its sample data under PREFIX/share/reachwise/sample-network
# (no path into the source or build tree), routes it and writes its outputs.
# Usage: tests/install/installed_demo.sh BUILD_DIR
set -euo pipefail
build="${1:?usage: installed_demo.sh BUILD_DIR}"
work="$(mktemp -d)"
trap 'rm -rf "$work"' EXIT
cmake --install "$build" --prefix "$work/prefix" > "$work/install.log"
test -f "$work/prefix/share/reachwise/sample-network/network.gpkg" || { echo "sample data not installed"; exit 1; }
# Run from elsewhere, with the build and source trees out of reach by name.
cd "$work"
env -u REACHWISE_SAMPLE_DIR "$work/prefix/bin/reachwise" demo --out "$work/demo" > "$work/out.txt" 2> "$work/err.txt" || {
  echo "installed demo failed:"; cat "$work/err.txt"; exit 1; }
grep -q "^reachwise demo: 41 reaches" "$work/out.txt" || { echo "unexpected summary:"; cat "$work/out.txt"; exit 1; }
test -s "$work/demo/demo-results.gpkg" || { echo "no demo-results.gpkg"; exit 1; }
test -s "$work/demo/report/index.html" || { echo "no report"; exit 1; }
# Moved elsewhere, the program no longer finds the data and says so (exit 1, naming the variable).
mkdir -p "$work/elsewhere/bin" && cp "$work/prefix/bin/reachwise" "$work/elsewhere/bin/"
if env -u REACHWISE_SAMPLE_DIR "$work/elsewhere/bin/reachwise" demo --out "$work/demo2" 2> "$work/err2.txt"; then
  echo "a program without its data ran the demo"; exit 1
fi
grep -q "REACHWISE_SAMPLE_DIR" "$work/err2.txt" || { echo "the error does not say how to fix it:"; cat "$work/err2.txt"; exit 1; }
REACHWISE_SAMPLE_DIR="$work/prefix/share/reachwise/sample-network" "$work/elsewhere/bin/reachwise" demo --out "$work/demo3" > /dev/null
echo "installed demo: ok"
