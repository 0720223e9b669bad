#!/usr/bin/env bash
# Calibrating a synthetic network of REACHES reaches against five gauges:
# the mouths of the four largest tributaries of Strahler order (max - 1)
# and the outlet. The observations are the network's own routed outflow at
# those reaches, scaled per gauge (1.15, 0.9, 1.1, 0.95, 1.05; invented), so
# the fit has something to change. Reports wall and CPU time (user +
# system; the steadier figure on a shared machine), peak RSS and routings.
#
# Usage: bench/calibrate_synth.sh BUILD_DIR [WORK_DIR]
# Environment: REACHES [20000], STEPS [240], EVALS (routings per sub-basin) [30]
set -euo pipefail
build="$(cd "${1:?usage: bench/calibrate_synth.sh BUILD_DIR [WORK_DIR]}" && pwd)"
work="${2:-${TMPDIR:-/tmp}/reachwise_calibrate}"
reaches="${REACHES:-20000}"
steps="${STEPS:-240}"
evals="${EVALS:-30}"
bin="$build/reachwise"
[ -x "$bin" ] || { echo "missing $bin (build reachwise)"; exit 2; }
command -v sqlite3 >/dev/null || { echo "missing sqlite3 (apt-get install sqlite3)"; exit 2; }
mkdir -p "$work"
cd "$work"
net="net_${reaches}.gpkg"
lat="lat_${reaches}_${steps}.nc"
if [ ! -s "$net" ] || [ ! -s "$lat" ]; then
  rm -f "$net" "$lat"
  "$bin" synth "$net" --reaches "$reaches" --steps "$steps" --lateral "$lat" --quiet
fi
"$bin" route "$net" --lateral "$lat" --out first.gpkg --hydrographs none --quiet --overwrite
# Gauges: the outlet, and the reaches of order (max - 1) that flow into one of order max.
sqlite3 first.gpkg "ATTACH '$net' AS n;
  CREATE TEMP VIEW o AS SELECT r.reach_id, r.strahler, r.peak_q, a.to_reach FROM reaches r JOIN n.reaches a USING (reach_id);
  SELECT o.reach_id FROM o JOIN o d ON d.reach_id = o.to_reach
   WHERE o.strahler = (SELECT max(strahler) FROM o) - 1 AND d.strahler = o.strahler + 1
   ORDER BY o.peak_q DESC LIMIT 4;
  SELECT reach_id FROM o WHERE to_reach IS NULL OR to_reach = '';" > gauges.txt
ids=$(paste -sd, gauges.txt)
"$bin" route "$net" --lateral "$lat" --out gauged.gpkg --csv csv --hydrographs "$ids" --quiet --overwrite
awk -F, -v ids="$ids" 'BEGIN { n = split(ids, g, ","); split("1.15,0.9,1.1,0.95,1.05", f, ","); for (k = 1; k <= n; ++k) s[g[k]] = f[k] }
  NR == 1 { print "reach_id,time,discharge"; next } { printf "%s,%s,%.9g\n", $1, $2, $3 * s[$1] }' \
  csv/hydrographs.csv > observed.csv
log="$work/time.log"
/usr/bin/time -v "$bin" calibrate "$net" --lateral "$lat" --observed observed.csv --out calibrated.gpkg \
  --max-evaluations "$evals" --overwrite 2>"$log" | tee out.txt
wall=$(grep 'Elapsed (wall clock)' "$log" | awk '{print $NF}')
user=$(grep 'User time' "$log" | awk '{print $NF}')
sys=$(grep 'System time' "$log" | awk '{print $NF}')
rss=$(grep 'Maximum resident set size' "$log" | awk '{print $NF}')
routings=$(grep -o '^[0-9]* routings in all' out.txt | awk '{print $1}')
printf 'calibrate, %s reaches x %s steps, 5 gauges: wall %s, CPU %.1f s, peak RSS %.0f MB, %s routings; load %s\n' \
  "$reaches" "$steps" "$wall" "$(echo "$user + $sys" | bc -l)" "$(echo "$rss / 1024" | bc -l)" "$routings" \
  "$(cut -d' ' -f1-3 /proc/loadavg)"
