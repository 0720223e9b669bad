#!/usr/bin/env bash
# Set up (install missing packages, build in Release) and run every test.
#   scripts/test.sh               the suite, Release build in build/
#   scripts/test.sh --sanitize    the suite built with ASan + UBSan + leak checking
#                                 (build-asan/), then every fuzz target for 60 s
#                                 (scripts/fuzz.sh, build-fuzz/); docs/testing.md
set -euo pipefail
here="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
if [[ "${1:-}" == --sanitize ]]; then
  build="${BUILD_DIR:-$here/build-asan}"
  # Sanitizer options (and leak suppressions) for the build, whose test
  # discovery runs the test programs, and for the tests.
  source "$here/tests/sanitize/env.sh"
  "$here/scripts/setup.sh" --sanitize "$build"
  ctest --test-dir "$build" --output-on-failure --parallel "$(nproc)" --timeout 1800
  "$here/scripts/fuzz.sh" "${FUZZ_SECONDS:-60}"
  exit
fi
build="${BUILD_DIR:-$here/build}"
"$here/scripts/setup.sh" "$build"
ctest --test-dir "$build" --output-on-failure --parallel "$(nproc)" --timeout 600
