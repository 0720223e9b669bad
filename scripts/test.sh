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
  # A fixed seed and a fixed number of inputs per target (about a minute
  # each on this project's machine, SECONDS capping it on a slower one), so
  # CI starts from the same inputs each time (runs still part: see
  # docs/testing.md, "Fuzzing"); scripts/fuzz.sh alone explores new ones.
  runs="iso_time=3000000 run_file=250000 forcing_csv=12000 forcing_netcdf=3500 network_gpkg=7000"
  if [[ ${FUZZ_SECONDS:-60} != 0 ]]; then
    FUZZ_SEED="${FUZZ_SEED:-1}" FUZZ_RUNS="${FUZZ_RUNS:-$runs}" FUZZ_BUILD_DIR="$build" "$here/scripts/fuzz.sh" "${FUZZ_SECONDS:-60}"
  fi
  exit
fi
build="${BUILD_DIR:-$here/build}"
"$here/scripts/setup.sh" "$build"
ctest --test-dir "$build" --output-on-failure --parallel "$(nproc)" --timeout 600
