#!/usr/bin/env bash
# Set up (install missing packages, build in Release) and run every test.
set -euo pipefail
here="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
build="${BUILD_DIR:-$here/build}"
"$here/scripts/setup.sh" "$build"
# Serial: the CLI tests write fixture files under shared temporary names.
ctest --test-dir "$build" --output-on-failure --timeout 600
