#!/usr/bin/env bash
# Invents the sample scenario's gauge records (observed.csv) and gauge
# points (gauges.gpkg): the sample network routed with Manning's n 30 %
# higher than the layer's (as if the real channels were rougher), read at
# three invented gauges, with a deterministic ±4 % measurement scatter and
# every 11th value missing. Regenerate after changing the sample network:
#   sample-network/make_observed.sh [BUILD_DIR]
set -euo pipefail
here="$(cd "$(dirname "${BASH_SOURCE[0]}")" && pwd)"
build="${1:-$here/../build}"
work="$(mktemp -d)"
trap 'rm -rf "$work"' EXIT

# The "true" river: n × 1.3, with the reservoir RES1.
ogr2ogr -f GPKG "$work/rough.gpkg" "$here/network.gpkg" \
  -sql "SELECT *, manning_n * 1.3 AS n_true FROM reaches" -nln reaches
cat > "$work/run.toml" <<TOML
[network.fields]
manning_n = "n_true"
TOML
"$build/reachwise" route "$work/rough.gpkg" --config "$work/run.toml" --inflow "$here/inflow.csv" \
  --lateral "$here/lateral.csv" --lakes "$here/lakes.gpkg" --out "$work/out.gpkg" --csv "$work/csv" \
  --hydrographs R1,R13,R5 --quiet 2>/dev/null

# Gauge ids and their reaches (invented).
awk -F, 'BEGIN { g["R1"] = "G1-outlet"; g["R13"] = "G2-below-dam"; g["R5"] = "G3-upper"; seed = 12345 }
  NR == 1 { print "reach_id,time,discharge"; next }
  { seed = (seed * 1103515245 + 12345) % 2147483648; r = seed / 2147483648.0
    n = NR - 1
    v = (n % 11 == 5) ? "NA" : sprintf("%.3f", $3 * (0.96 + 0.08 * r))
    print g[$1] "," $2 "," v }' "$work/csv/hydrographs.csv" > "$here/observed.csv"

# Gauge points at the downstream ends of their reaches, reach named.
ogr2ogr -f GPKG "$here/gauges.gpkg" "$work/out.gpkg" -dialect SQLite -nln gauges -sql \
  "SELECT CASE reach_id WHEN 'R1' THEN 'G1-outlet' WHEN 'R13' THEN 'G2-below-dam' ELSE 'G3-upper' END AS gauge_id,
          reach_id, ST_EndPoint(geom) AS geom FROM reaches WHERE reach_id IN ('R1', 'R13', 'R5')"
echo "wrote $here/observed.csv and $here/gauges.gpkg"
