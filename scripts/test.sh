#!/usr/bin/env bash
# Set up (install missing packages, build in Release) and run every test.
set -euo pipefail
here="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
build="${BUILD_DIR:-$here/build}"
"$here/scripts/setup.sh" "$build"
ctest --test-dir "$build" --output-on-failure --parallel "$(nproc)" --timeout 600
