#!/usr/bin/env bash
# NetCDF forcing in two layouts (not part of CI): a `reachwise synth`
# network of REACHES reaches (default 100,000, seed 1) with STEPS hourly
# steps of lateral inflow as synth writes it (one chunk per reach, read
# reach by reach while routing), and the same values rechunked by
# `nccopy -c time/1,reach/N` (one time step per chunk across all reaches,
# as time-stepping models write; reachwise reads such a file whole, in file
# order, when it opens it). Routes both with `--timings` under
# /usr/bin/time and checks that the two runs' `reaches` tables agree value
# for value (sqlite3).
#
# Usage: bench/netcdf_layouts.sh BUILD_DIR [WORK_DIR]
# Environment: REACHES [100000], STEPS [720], THREADS [2],
#   OLD_TIMEOUT: seconds to also give a second build's reachwise (OLD_BIN)
#   on the rechunked file, to show what per-reach reading costs there.
set -euo pipefail
build="$(cd "${1:?usage: bench/netcdf_layouts.sh BUILD_DIR [WORK_DIR]}" && pwd)"
work="${2:-${TMPDIR:-/tmp}/reachwise_netcdf_layouts}"
n="${REACHES:-100000}" steps="${STEPS:-720}" threads="${THREADS:-2}"
bin="$build/reachwise"
[ -x /usr/bin/time ] || apt-get install -y time >/dev/null
command -v nccopy >/dev/null || { echo "missing nccopy (apt-get install netcdf-bin)"; exit 2; }
command -v sqlite3 >/dev/null || { echo "missing sqlite3 (apt-get install sqlite3)"; exit 2; }
mkdir -p "$work"
cd "$work"
[ -f net.gpkg ] && [ -f by_reach.nc ] ||
  "$bin" synth net.gpkg --reaches "$n" --steps "$steps" --seed 1 --lateral by_reach.nc --overwrite --quiet
if [ ! -f by_time.nc ]; then
  /usr/bin/time -f "nccopy: %e s" nccopy -c "time/1,reach/$n" by_reach.nc by_time.nc
fi
echo "machine: $(nproc) cores, load before: $(cut -d' ' -f1-3 /proc/loadavg)"
for layout in by_reach by_time; do
  echo "== $layout.nc"
  /usr/bin/time -f "wall %e s, peak %M KB" "$bin" route net.gpkg --lateral "$layout.nc" --out "out_$layout.gpkg" \
    --overwrite --quiet --timings --threads "$threads" --hydrographs outlets 2>&1 | grep -E '^  |wall'
done
differ=$(sqlite3 out_by_time.gpkg "attach 'out_by_reach.gpkg' as b;
  select count(*) from reaches a join b.reaches r using (reach_id)
  where a.peak_q is not r.peak_q or a.volume_in_m3 is not r.volume_in_m3
     or a.volume_lateral_m3 is not r.volume_lateral_m3 or a.volume_out_m3 is not r.volume_out_m3")
echo "reaches whose results differ between the layouts: $differ"
if [ -n "${OLD_BIN:-}" ]; then
  echo "== by_time.nc with $OLD_BIN (stopped after ${OLD_TIMEOUT:-150} s)"
  /usr/bin/time -f "wall %e s, peak %M KB" timeout "${OLD_TIMEOUT:-150}" "$OLD_BIN" route net.gpkg \
    --lateral by_time.nc --out out_old.gpkg --overwrite --quiet --threads "$threads" --hydrographs outlets || true
fi
