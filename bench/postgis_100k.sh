#!/usr/bin/env bash
# Routing from and into PostgreSQL/PostGIS against the same run from and
# into GeoPackages (not part of CI): a synthetic network of N reaches
# (default 100,000) with 720 hourly steps of lateral inflow (NetCDF), the
# network loaded into a throwaway server (scripts/pg-server.sh) with
# ogr2ogr, then `reachwise route` with route's default hydrographs (above
# 10,000 reaches: the outlets and the branches of the 1,000 largest
# confluences) GeoPackage -> GeoPackage and database -> database, each
# REPEATS times (default 2; the fastest counts, the machine may be shared).
# Prints wall times, peak RSS, each run's stages (--timings) and the ratio.
#
# Usage: bench/postgis_100k.sh BUILD_DIR [WORK_DIR]     (N=..., REPEATS=...)
set -euo pipefail
here="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
build="$(cd "${1:?usage: bench/postgis_100k.sh BUILD_DIR [WORK_DIR]}" && pwd)"
work="${2:-${TMPDIR:-/tmp}/reachwise_postgis}"
n="${N:-100000}"
repeats="${REPEATS:-2}"
bin="$build/reachwise"
mkdir -p "$work"
[ -x /usr/bin/time ] || apt-get install -y time >/dev/null

net="$work/net_$n.gpkg" lat="$work/lat_$n.nc"
if [ ! -f "$lat" ]; then
  "$bin" synth "$work/.net.gpkg" --reaches "$n" --steps 720 --seed 1 --lateral "$lat" --overwrite --quiet
  mv "$work/.net.gpkg" "$net"
fi

server="$("$here/scripts/pg-server.sh" start "$work/pg")"
trap '"$here/scripts/pg-server.sh" stop "$work/pg"' EXIT
psql "$server" -Xq -c "drop database if exists bench" -c "create database bench"
db="$server dbname=bench"
psql "$db" -Xq -c "create extension postgis" -c "create schema rivers"
layer="$(ogrinfo -q "$net" | sed -n 's/^1: \([^ ]*\).*/\1/p')"
start=$(date +%s.%N)
ogr2ogr -f PostgreSQL "PG:$db" "$net" "$layer" -nln reaches -lco SCHEMA=rivers
echo "load: ogr2ogr of $n reaches into the database: $(echo "$(date +%s.%N) - $start" | bc) s"

echo "machine: $(nproc) cores, $(awk '/MemTotal/ {printf "%.0f GB", $2 / 1048576}' /proc/meminfo); load before: $(cut -d' ' -f1-3 /proc/loadavg)"
run() {  # LABEL ARGS...: the fastest of REPEATS runs
  local label="$1" best="" rss="" k
  shift
  for ((k = 0; k < repeats; k++)); do
    /usr/bin/time -v "$bin" route "$@" --lateral "$lat" --overwrite --quiet --timings >"$work/$label.out" 2>"$work/$label.log"
    local wall r
    wall=$(awk -F': ' '/Elapsed \(wall clock\)/ {n = split($2, p, ":"); s = 0; for (i = 1; i <= n; i++) s = s * 60 + p[i]; print s}' "$work/$label.log")
    r=$(awk '/Maximum resident set size/ {printf "%.0f", $NF / 1024}' "$work/$label.log")
    if [ -z "$best" ] || awk -v a="$wall" -v b="$best" 'BEGIN {exit !(a < b)}'; then best="$wall"; rss="$r"; fi
  done
  echo "$label: wall $best s, peak RSS $rss MB; stages of the last run:" >&2
  sed -n '/^timings/,$p' "$work/$label.out" >&2
  echo "$best"
}
gpkg=$(run gpkg "$net" --out "$work/out.gpkg")
pg=$(run postgis "PG:$db" --layer rivers.reaches --out "PG:$db" --schema results)
rows=$(psql "$db" -XAtc "select count(*) from results.hydrographs")
echo "hydrograph rows written: $rows"
echo "ratio database/GeoPackage: $(awk -v a="$pg" -v b="$gpkg" 'BEGIN {printf "%.2f", a / b}')"
