#!/usr/bin/env bash
# Install every Debian package reachwise needs (only what is missing) and
# build it with CMake in Release. Safe to run again: it does nothing twice.
#   scripts/setup.sh [BUILD_DIR]                  (default: build)
#   scripts/setup.sh --sanitize [BUILD_DIR]       the sanitizer build (CMake type
#       Asan, default build-asan) with clang and libFuzzer, so that the same
#       build holds the tests and the fuzz targets of fuzz/ (docs/testing.md);
#       with GCC (no fuzz targets) when clang cannot link libFuzzer
#   SETUP_TARGET="A B" scripts/setup.sh ...       build only those targets (default: all)
set -euo pipefail
here="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
type=Release
if [[ "${1:-}" == --sanitize ]]; then
  type=Asan
  shift
fi
if [[ $type == Asan ]]; then build="${1:-$here/build-asan}"; else build="${1:-$here/build}"; fi

packages=(
  build-essential cmake pkg-config git
  libgdal-dev gdal-bin python3-gdal libsqlite3-dev libgeos-dev libgeographiclib-dev
  libboost-graph-dev libtbb-dev libeigen3-dev
  libtomlplusplus-dev libcli11-dev libfmt-dev libnetcdf-dev netcdf-bin
  libcairo2-dev libnlopt-cxx-dev libxml2-dev
  libgtest-dev libgmock-dev libbenchmark-dev
  libudunits2-dev
  postgresql postgresql-client
  libopenmpi-dev openmpi-bin
)
# The fuzz targets (scripts/fuzz.sh) need clang and libFuzzer's runtime.
if [[ $type == Asan ]]; then packages+=(clang libclang-rt-dev); fi

# Installs those of the given packages that are missing.
install_missing() {
  local missing=() p
  for p in "$@"; do
    if ! dpkg-query -W -f='${Status}' "$p" 2>/dev/null | grep -q "install ok installed"; then
      missing+=("$p")
    fi
  done
  if ((${#missing[@]} == 0)); then return; fi
  echo "setup: installing ${missing[*]}"
  local sudo_cmd=()
  if [[ $(id -u) -ne 0 ]]; then sudo_cmd=(sudo); fi
  # Refresh the package lists when they are missing or older than a day.
  if [[ -z "$(find /var/lib/apt/lists -maxdepth 1 -name '*Packages*' -mtime -1 2>/dev/null | head -1)" ]]; then
    "${sudo_cmd[@]}" apt-get update -qq
  fi
  DEBIAN_FRONTEND=noninteractive "${sudo_cmd[@]}" apt-get install -y -qq --no-install-recommends "${missing[@]}"
}
install_missing "${packages[@]}"
# PostGIS for the PostgreSQL server the distribution installed (the database
# tests start a throwaway server: scripts/pg-server.sh).
pg_major="$(ls /usr/lib/postgresql 2>/dev/null | sort -V | tail -1)"
install_missing "postgresql-${pg_major:?setup: no PostgreSQL server under /usr/lib/postgresql}-postgis-3"

configure=(-DCMAKE_BUILD_TYPE="$type")
# The sanitizer build leaves MPI out: the MPI library's own allocations at exit
# are no concern of ours, and the Release build tests the ranks.
if [[ $type == Asan ]]; then configure+=(-DREACHWISE_MPI=OFF); fi
if [[ $type == Asan ]] && cxx="$("$here/scripts/libfuzzer-clang.sh")"; then
  configure+=(-DCMAKE_CXX_COMPILER="$cxx" -DCMAKE_C_COMPILER="${cxx/clang++/clang}" -DREACHWISE_FUZZ=ON)
fi
cmake -S "$here" -B "$build" "${configure[@]}" >/dev/null
# shellcheck disable=SC2086 # SETUP_TARGET is a list of target names
cmake --build "$build" --parallel "$(nproc)" ${SETUP_TARGET:+--target $SETUP_TARGET}
echo "setup: built in $build"
