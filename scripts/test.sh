#!/usr/bin/env bash
# Set up (install missing packages, build in Release) and run every test.
#   scripts/test.sh                     the suite, Release build in build/
#   scripts/test.sh --sanitize          built with ASan + UBSan + leak checking
#                                       (build-asan/): the readers, the routers
#                                       and a whole run (CTest label sanitize_fast);
#                                       then every fuzz target for 60 s
#                                       (FUZZ_SECONDS=N; 0: no fuzzing)
#   scripts/test.sh --sanitize --full   the same with the whole suite
# docs/testing.md has the details and the times.
set -euo pipefail
here="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
if [[ "${1:-}" == --sanitize ]]; then
  build="${BUILD_DIR:-$here/build-asan}"
  target=sanitize_fast
  only=(-L sanitize_fast)
  if [[ "${2:-}" == --full ]]; then target=all; only=(); fi
  # Sanitizer options (and leak suppressions) for the build, whose test
  # discovery runs the test programs, and for the tests.
  source "$here/tests/sanitize/env.sh"
  SETUP_TARGET="$target" "$here/scripts/setup.sh" --sanitize "$build"
  ctest --test-dir "$build" "${only[@]}" --output-on-failure --parallel "$(nproc)" --timeout 1800
  # The same build holds the fuzz targets (clang; docs/testing.md).
  if [[ ${FUZZ_SECONDS:-60} != 0 ]]; then FUZZ_SEED="${FUZZ_SEED:-1}" FUZZ_BUILD_DIR="$build" "$here/scripts/fuzz.sh" "${FUZZ_SECONDS:-60}"; fi
  exit
fi
build="${BUILD_DIR:-$here/build}"
"$here/scripts/setup.sh" "$build"
ctest --test-dir "$build" --output-on-failure --parallel "$(nproc)" --timeout 600
