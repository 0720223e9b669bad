#!/usr/bin/env bash
# Install every Debian package reachwise needs (only what is missing) and
# build it with CMake in Release. Safe to run again: it does nothing twice.
#   scripts/setup.sh [BUILD_DIR]      (default: build)
set -euo pipefail
here="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
build="${1:-$here/build}"

packages=(
  build-essential cmake pkg-config git
  libgdal-dev gdal-bin python3-gdal libgeos-dev libgeographiclib-dev
  libboost-graph-dev libtbb-dev libeigen3-dev
  libtomlplusplus-dev libcli11-dev libfmt-dev libnetcdf-dev netcdf-bin
  libcairo2-dev libnlopt-cxx-dev
  libgtest-dev libgmock-dev libbenchmark-dev
)

missing=()
for p in "${packages[@]}"; do
  if ! dpkg-query -W -f='${Status}' "$p" 2>/dev/null | grep -q "install ok installed"; then
    missing+=("$p")
  fi
done

if ((${#missing[@]})); then
  echo "setup: installing ${missing[*]}"
  sudo_cmd=()
  if [[ $(id -u) -ne 0 ]]; then sudo_cmd=(sudo); fi
  # Refresh the package lists when they are missing or older than a day.
  if [[ -z "$(find /var/lib/apt/lists -maxdepth 1 -name '*Packages*' -mtime -1 2>/dev/null | head -1)" ]]; then
    "${sudo_cmd[@]}" apt-get update -qq
  fi
  DEBIAN_FRONTEND=noninteractive "${sudo_cmd[@]}" apt-get install -y -qq --no-install-recommends "${missing[@]}"
fi

cmake -S "$here" -B "$build" -DCMAKE_BUILD_TYPE=Release >/dev/null
cmake --build "$build" --parallel "$(nproc)"
echo "setup: built in $build"
