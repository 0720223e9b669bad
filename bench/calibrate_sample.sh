#!/usr/bin/env bash
# Calibrating the sample network against three gauges (R1, R13 and R5):
# wall time, peak RSS and routings per second. The observations are the
# sample's own routed outflow, scaled differently per gauge (invented), so
# the fit has something to change. Usage: bench/calibrate_sample.sh [BUILD_DIR]
set -euo pipefail
here="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
build="${1:-$here/build}"
sample="$here/sample-network"
work="$(mktemp -d)"
trap 'rm -rf "$work"' EXIT
forcing=(--inflow "$sample/inflow.csv" --lateral "$sample/lateral.csv")

"$build/reachwise" route "$sample/network.gpkg" "${forcing[@]}" --out "$work/a.gpkg" --csv "$work/csv" \
  --hydrographs R1,R13,R5 --quiet 2>/dev/null
awk -F, 'NR == 1 { print "reach_id,time,discharge"; next }
         { f = ($1 == "R13") ? 1.2 : ($1 == "R5") ? 0.85 : 1.05; printf "%s,%s,%.9g\n", $1, $2, $3 * f }' \
  "$work/csv/hydrographs.csv" > "$work/observed.csv"

log="$work/time.log"
/usr/bin/time -v "$build/reachwise" calibrate "$sample/network.gpkg" "${forcing[@]}" \
  --observed "$work/observed.csv" --out "$work/calibrated.gpkg" 2>"$log" | tee "$work/out.txt"
wall=$(grep 'Elapsed (wall clock)' "$log" | awk '{print $NF}')
rss=$(grep 'Maximum resident set size' "$log" | awk '{print $NF}')
routings=$(grep -o '^[0-9]* routings in all' "$work/out.txt" | awk '{print $1}')
secs=$(echo "$wall" | awk -F: '{ s = 0; for (i = 1; i <= NF; ++i) s = s * 60 + $i; print s }')
printf 'calibrate, 3 gauges: wall %s, peak RSS %.0f MB, %s routings, %.0f routings/s\n' \
  "$wall" "$(echo "$rss / 1024" | bc -l)" "$routings" "$(echo "$routings / $secs" | bc -l)"
