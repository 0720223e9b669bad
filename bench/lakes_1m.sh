#!/usr/bin/env bash
# What lakes cost a national-scale run: `reachwise check` and `reachwise
# route` on a synthetic network of REACHES reaches, without and with LAKES
# lakes (the `lakes` layer `reachwise synth --lakes` writes into the same
# GeoPackage; the reaches are the same file either way), under
# /usr/bin/time -v (wall time, CPU time user + system, peak RSS). The runs
# alternate (without, with, without, ...) so a change in the machine's load
# hits both; the load average is printed before each run. On a shared
# machine the CPU time is the steadier figure (wall time grows with other
# jobs' threads); route uses 2 threads.
#
# Usage: bench/lakes_1m.sh BUILD_DIR [WORK_DIR]
# Environment (defaults in brackets):
#   REACHES   reaches of the synthetic network     [1000000]
#   LAKES     lakes placed on it                   [10000]
#   STEPS     hourly steps of lateral inflow       [720]
#   REPEATS   runs of each route case              [2]
#   SEED      synth seed                           [1]
# Inputs are kept in WORK_DIR (default $TMPDIR/reachwise_lakes) and reused;
# a memory-backed WORK_DIR (/dev/shm) keeps the disk out of the figures
# (see bench/scale.sh); 1M × 720 needs ~3.5 GB there.
set -euo pipefail
build="$(cd "${1:?usage: bench/lakes_1m.sh BUILD_DIR [WORK_DIR]}" && pwd)"
work="${2:-${TMPDIR:-/tmp}/reachwise_lakes}"
reaches="${REACHES:-1000000}"
lakes="${LAKES:-10000}"
steps="${STEPS:-720}"
repeats="${REPEATS:-2}"
seed="${SEED:-1}"
bin="$build/reachwise"
[ -x "$bin" ] || { echo "missing $bin (build reachwise)"; exit 2; }
[ -x /usr/bin/time ] || { echo "missing /usr/bin/time (apt-get install time)"; exit 2; }
mkdir -p "$work"
net="$work/net_${reaches}_lakes_${lakes}.gpkg"
lat="$work/lat_${reaches}_${steps}.nc"

if [ ! -s "$net" ] || [ ! -s "$lat" ]; then
  rm -f "$net" "$lat"
  "$bin" synth "$net" --reaches "$reaches" --lakes "$lakes" --steps "$steps" --seed "$seed" --lateral "$lat"
fi

# measure LABEL CMD...: one run; prints wall (s), peak RSS (MB), the load
# average before it, and route's own routing time when it prints one.
measure() {
  local label="$1"; shift
  local log; log="$(mktemp)"
  local load; load="$(cut -d' ' -f1-3 /proc/loadavg)"
  /usr/bin/time -v "$@" >"$log.out" 2>"$log" || { tail -n 20 "$log.out" "$log"; rm -f "$log" "$log.out"; return 1; }
  local wall rss routing cpu
  wall=$(awk -F': ' '/Elapsed \(wall clock\)/ {n = split($2, p, ":"); s = 0; for (i = 1; i <= n; i++) s = s * 60 + p[i]; print s}' "$log")
  cpu=$(awk -F': ' '/User time|System time/ {s += $2} END {printf "%.1f", s}' "$log")
  rss=$(awk '/Maximum resident set size/ {printf "%.0f", $NF / 1024}' "$log")
  routing=$(sed -n 's/.*routing took \([0-9.]*\) s.*/\1/p' "$log.out" "$log" | head -n1)
  printf '%-16s wall %8s s   CPU %8s s   peak RSS %6s MB   routing %7s s   load before %s\n' "$label" "$wall" \
    "$cpu" "$rss" "${routing:--}" "$load"
  rm -f "$log" "$log.out"
}

echo "network: $reaches reaches, $lakes lakes, $steps steps; $(nproc) cores; $(date -u +%FT%TZ)"
measure "check" "$bin" check "$net"
measure "check --lakes" "$bin" check "$net" --lakes "$net"
for r in $(seq "$repeats"); do
  measure "route" "$bin" route "$net" --lateral "$lat" --out "$work/out.gpkg" --overwrite --hydrographs outlets
  measure "route --lakes" "$bin" route "$net" --lateral "$lat" --lakes "$net" --out "$work/out.gpkg" --overwrite \
    --hydrographs outlets
done
rm -f "$work/out.gpkg"
