#!/usr/bin/env bash
# Routing across MPI ranks on one machine (not part of CI): a synthetic
# network (`reachwise synth`, one basin unless OUTLETS is set) with 720
# hourly steps of lateral inflow on every reach (NetCDF), routed by
#   - the program alone on all cores (the reference),
#   - `mpirun -n 1` on all cores,
#   - `mpirun -n R` for each R in RANKS, the cores shared among the ranks,
# each under /usr/bin/time -v (wall, peak memory of the largest rank) with
# --timings (rank 0's stages). Checks that every run's reaches table and
# hydrographs equal the reference's (sorted CSV rows), then prints a
# markdown table.
#
# Usage: bench/mpi_ranks.sh BUILD_DIR [WORK_DIR]
# Environment: REACHES [1000000], OUTLETS [1], RANKS ["2"], STEPS [720],
#              SELECTION (--hydrographs) [default: route's own choice],
#              RUNS (which of alone, mpirun_1, mpirun_R to run) [all]
set -euo pipefail
build="$(cd "${1:?usage: bench/mpi_ranks.sh BUILD_DIR [WORK_DIR]}" && pwd)"
work="${2:-${TMPDIR:-/tmp}/reachwise_mpi}"
n="${REACHES:-1000000}" outlets="${OUTLETS:-1}" steps="${STEPS:-720}" ranks_list="${RANKS:-2}"
bin="$build/reachwise"
# --bind-to none: Open MPI binds each rank to one core by default (with two
# ranks or fewer), which would put a rank's threads on one core.
mpirun=(mpirun --oversubscribe --bind-to none)
[ "$(id -u)" -ne 0 ] || mpirun+=(--allow-run-as-root)
[ -x /usr/bin/time ] || apt-get install -y time >/dev/null
mkdir -p "$work"
net="$work/net_${n}_$outlets.gpkg" lat="$work/lat_${n}_${outlets}_$steps.nc"
if [ ! -f "$lat" ]; then
  "$bin" synth "$net" --reaches "$n" --outlets "$outlets" --steps "$steps" --lateral "$lat" --overwrite --quiet
fi
extra=()
[ -z "${SELECTION:-}" ] || extra=(--hydrographs "$SELECTION")

# run NAME THREADS [LAUNCHER...]: wall s, peak RSS MB (largest process),
# routing and writing s (rank 0's --timings), into $work/NAME.*
run() {
  local name="$1" threads="$2"; shift 2
  rm -rf "$work/$name.gpkg" "$work/$name.csv"
  local t=()
  [ -z "$threads" ] || t=(--threads "$threads")
  /usr/bin/time -v "$@" "$bin" route "$net" --lateral "$lat" --out "$work/$name.gpkg" --csv "$work/$name.csv" \
    --quiet --timings "${t[@]}" "${extra[@]}" >"$work/$name.out" 2>"$work/$name.time"
  local wall rss routing writing
  wall="$(awk -F': ' '/Elapsed \(wall clock\)/ {n = split($2, p, ":"); s = 0; for (i = 1; i <= n; i++) s = s * 60 + p[i]; print s}' "$work/$name.time")"
  rss="$(awk -F': ' '/Maximum resident set size/ {printf "%.0f", $2 / 1024}' "$work/$name.time")"
  routing="$(awk '$1 == "routing" {print $2}' "$work/$name.out")"
  writing="$(awk '$1 == "writing" {print $4}' "$work/$name.out")"
  local same=yes
  for t in reaches hydrographs nodes; do
    cmp -s <(sort "$work/alone.csv/$t.csv" 2>/dev/null) <(sort "$work/$name.csv/$t.csv") || same=no
  done
  echo "| $name | $wall | $rss | $routing | $writing | $same |"
}

cores="$(nproc)"
echo "machine: $(nproc) cores, $(awk '/MemTotal/ {printf "%.0f GB", $2 / 1048576}' /proc/meminfo), load before: $(cut -d' ' -f1-3 /proc/loadavg)"
echo "network: $n reaches, $outlets outlet(s), $steps steps; hydrographs: ${SELECTION:-as route chooses}"
echo
echo "| run | wall s | peak RSS MB (one process) | routing s (rank 0) | writing s | same values as alone |"
echo "|---|---|---|---|---|---|"
wanted() { [ -z "${RUNS:-}" ] || [[ " $RUNS " == *" $1 "* ]]; }
if wanted alone; then run alone "$cores"; fi
if wanted mpirun_1; then run mpirun_1 "$cores" "${mpirun[@]}" -n 1; fi
for r in $ranks_list; do
  if wanted "mpirun_$r"; then run "mpirun_$r" "" "${mpirun[@]}" -n "$r"; fi
done
