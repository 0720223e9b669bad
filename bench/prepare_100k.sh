#!/usr/bin/env bash
# `reachwise prepare` on a 100,000-reach synthetic network with a
# 10,000 x 10,000 tiled GeoTIFF DEM: wall time and peak RSS, beside a plain
# GDAL read of the DEM (the floor). Usage: bench/prepare_100k.sh [BUILD_DIR] [DIR]
set -euo pipefail
here="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
build="${1:-$here/build}"
dir="${2:-${TMPDIR:-/tmp}/reachwise_prepare_bench}"
mkdir -p "$dir"
net="$dir/net100k.gpkg" dem="$dir/dem10k.tif" out="$dir/prepared.gpkg" run="$dir/prepare.toml"
# The synthetic layer has slopes and sections; derive them all the same.
printf '[prepare]\nreplace = ["slope", "elevations", "bottom_width", "side_slope", "manning_n"]\n' >"$run"

measure() {  # label, command...
  local label="$1"; shift
  local log; log="$(mktemp)"
  /usr/bin/time -v "$@" >"$log.out" 2>"$log" || { tail -n 20 "$log.out" "$log"; return 1; }
  grep -v '^\(error\|warning\|info\) ' "$log.out" | tail -n 12 | sed "s/^/  [$label] /" || true
  local wall rss
  wall=$(grep 'Elapsed (wall clock)' "$log" | awk '{print $NF}')
  rss=$(grep 'Maximum resident set size' "$log" | awk '{print $NF}')
  printf '%-28s wall %10s   peak RSS %8.0f MB\n' "$label" "$wall" "$(echo "$rss / 1024" | bc -l)"
  rm -f "$log" "$log.out"
}

[ -e "$net" ] || "$build/reachwise" synth --reaches 100000 --outlets 10 --steps 2 --quiet "$net"
[ -e "$dem" ] || "$build/bench/dem_bench" generate "$net" "$dem" 10000
measure "GDAL read of the DEM" "$build/bench/dem_bench" read "$dem"
measure "reachwise check" sh -c "'$build/reachwise' check '$net' 2>/dev/null"
measure "reachwise prepare" sh -c "'$build/reachwise' prepare '$net' --dem '$dem' --config '$run' --out '$out' --overwrite 2>/dev/null"
