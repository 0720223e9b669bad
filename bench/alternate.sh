#!/usr/bin/env bash
# Runs one `reachwise route` command with two builds in turn (not part of
# CI): this machine's speed drifts by 10-15 % within minutes, so a before
# and an after are only comparable run alternately. Prints, for each run,
# route's stage timers (--timings: wall / CPU s) and /usr/bin/time's wall,
# CPU and peak memory.
#
# Usage: [ROUNDS=2] bench/alternate.sh BEFORE_BIN AFTER_BIN -- ROUTE_ARGS...
#   ROUTE_ARGS: everything after `reachwise route` except --out (the
#   output goes to a temporary GeoPackage, removed afterwards), e.g.
#   bench/alternate.sh /tmp/before/reachwise build/reachwise -- \
#     /dev/shm/rw20b/net.gpkg --inflow /dev/shm/rw20b/storm.csv
set -euo pipefail
before="${1:?usage: bench/alternate.sh BEFORE_BIN AFTER_BIN -- ROUTE_ARGS...}"
after="${2:?usage: bench/alternate.sh BEFORE_BIN AFTER_BIN -- ROUTE_ARGS...}"
shift 2
[ "${1:-}" = -- ] && shift
[ -x /usr/bin/time ] || apt-get install -y time >/dev/null
out="$(mktemp -d)"
trap 'rm -rf "$out"' EXIT
for round in $(seq 1 "${ROUNDS:-2}"); do
  for which in before after; do
    bin="$before"
    [ "$which" = after ] && bin="$after"
    /usr/bin/time -f "%e s wall, %U s user, %S s system, %M KB peak" "$bin" route "$@" --out "$out/o.gpkg" \
      --overwrite --quiet --timings >"$out/route.txt" 2>"$out/time.txt"
    stages=$(awk '/^  (reading|routing|writing|total)/ {
      label = $1; for (i = 2; i <= NF - 2; i++) label = label " " $i; gsub(/[^ ]*\//, "", label)
      printf "%s %s/%s; ", label, $(NF-1), $NF}' "$out/route.txt")
    echo "$which, round $round (load $(cut -d' ' -f1 /proc/loadavg)): ${stages}$(tail -1 "$out/time.txt")"
  done
done
