#!/usr/bin/env bash
# End to end with a wide CSV storm (not part of CI): a `reachwise synth`
# network of REACHES reaches (default 100,000, seed 1), a storm hydrograph
# on every headwater as one wide CSV (a column per headwater, STEPS hourly
# rows, two decimals), routed by `reachwise route --timings` under
# /usr/bin/time -v, beside the GDAL copy floor measured in the same run:
# ogr2ogr of the input layer plus ogr2ogr of everything the run wrote.
#
# Usage: bench/wide_storm_100k.sh BUILD_DIR [WORK_DIR]
set -euo pipefail
build="$(cd "${1:?usage: bench/wide_storm_100k.sh BUILD_DIR [WORK_DIR]}" && pwd)"
work="${2:-${TMPDIR:-/tmp}/reachwise_wide_storm}"
n="${REACHES:-100000}" steps="${STEPS:-720}"
bin="$build/reachwise"
[ -x /usr/bin/time ] || apt-get install -y time >/dev/null
mkdir -p "$work"
cd "$work"
if [ ! -f storm.csv ]; then
  "$bin" synth net.gpkg --reaches "$n" --steps "$steps" --overwrite --quiet
  ogr2ogr -f CSV headwaters.csv net.gpkg -dialect SQLite -sql \
    "select reach_id from reaches where reach_id not in (select to_reach from reaches where to_reach <> '')"
  python3 - "$steps" <<'EOF'
import datetime, math, sys
steps = int(sys.argv[1])
ids = [l.strip().strip('"') for l in open("headwaters.csv").read().splitlines()[1:]]
t0 = datetime.datetime(2026, 5, 1)
with open("storm.csv", "w") as f:
    f.write("time," + ",".join(ids) + "\n")
    for n in range(steps):
        t = (t0 + datetime.timedelta(hours=n)).strftime("%Y-%m-%dT%H:%M:%SZ")
        f.write(t + "," + ",".join("%.2f" % (0.2 + (1 + k % 7) * math.exp(-(((n - 100 - k % 50) / 20.0) ** 2)))
                                   for k in range(len(ids))) + "\n")
EOF
fi
rm -f out.gpkg copy_in.gpkg copy_out.gpkg
echo "machine: $(nproc) cores, load before: $(cut -d' ' -f1-3 /proc/loadavg)"
echo "storm: $(($(head -1 storm.csv | tr ',' '\n' | wc -l) - 1)) columns x $steps rows, $(du -m storm.csv | cut -f1) MB"
/usr/bin/time -v "$bin" route net.gpkg --inflow storm.csv --out out.gpkg --quiet --timings >route.out 2>route.time
cat route.out
awk -F': ' '/Elapsed \(wall clock\)/ {print "route wall: " $2} /Maximum resident/ {printf "route peak RSS: %.0f MB\n", $2 / 1024}' route.time
t0=$(date +%s.%N); ogr2ogr -f GPKG copy_in.gpkg net.gpkg; t1=$(date +%s.%N)
ogr2ogr -f GPKG copy_out.gpkg out.gpkg; t2=$(date +%s.%N)
echo "floor: ogr2ogr input $(echo "$t1 - $t0" | bc) s + outputs $(echo "$t2 - $t1" | bc) s"
