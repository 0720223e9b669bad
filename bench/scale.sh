#!/usr/bin/env bash
# Whole-process scale benchmark (not part of CI): synthetic networks of 10k,
# 100k and 1M reaches with 720 hourly steps of lateral inflow (NetCDF), and
# 100k reaches with 8760 steps, routed end to end by `reachwise route` under
# /usr/bin/time -v (wall time, peak RSS), 1 and 2 threads, beside the floors
# measured in the same run: ogr2ogr of the network layer (read + write the
# same features), ogr2ogr of everything the run wrote (its GeoPackage, after
# the 2-thread runs of each case and selection), reading the forcing
# one reach at a time (netCDF-C), and a memory copy of the bytes the kernel
# and the series move. Prints a markdown table, the fitted scaling exponent
# and the thread speed-up. The I/O floor is GDAL copying the input layer and
# everything the run wrote plus reading the forcing; the table also gives
# the ratio to the input copy and the forcing read alone (a stricter floor
# that leaves out what the run writes).
#
# Usage: bench/scale.sh BUILD_DIR [WORK_DIR]
# Environment (defaults in brackets):
#   SIZES          reach counts routed with 720 steps    [10000 100000 1000000]
#   THREAD_SIZES   of those, also routed with 1 thread   [10000 100000]
#   LONG           reach count of the 8760-step case     [100000]; empty: skip
#   SELECTIONS     hydrograph selections to route with   [outlets default]
#                  ("default" is route's own choice: every reach below
#                  10,000 reaches, else outlets and the branches of the
#                  1,000 largest confluences)
#   REPEATS        runs per case up to 100k reaches with the first selection
#                  [3]; the table shows the fastest (the machine may be
#                  shared) and the slowest
#   APPEND=1       add to WORK_DIR/results.tsv instead of starting it anew
#   REPORT_ONLY=1  print the table from WORK_DIR/results.tsv, run nothing
#   ROUTE_TIMEOUT  seconds before a route run is stopped [3600]
#   SEED           synth seed                            [1]
# Inputs are kept in WORK_DIR (default $TMPDIR/reachwise_scale) and reused.
# The figures in docs/performance.md came from
#   SELECTIONS=default REPEATS=2 bench/scale.sh build /dev/shm/reachwise_scale
#   APPEND=1 SELECTIONS=outlets REPEATS=1 LONG= bench/scale.sh build /dev/shm/reachwise_scale
# (memory-backed WORK_DIR: on a machine that evicts cold file pages quickly
# a disk WORK_DIR measures the disk; needs ~6 GB of memory).
set -euo pipefail
here="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
build="$(cd "${1:?usage: bench/scale.sh BUILD_DIR [WORK_DIR]}" && pwd)"
work="${2:-${TMPDIR:-/tmp}/reachwise_scale}"
sizes="${SIZES-10000 100000 1000000}"
thread_sizes="${THREAD_SIZES-10000 100000}"
long="${LONG-100000}"
timeout_s="${ROUTE_TIMEOUT:-3600}"
seed="${SEED:-1}"
selections="${SELECTIONS-outlets default}"
repeats="${REPEATS:-3}"
bin="$build/reachwise"
bw="$build/bench/bandwidth_bench"
mkdir -p "$work/logs"
results="$work/results.tsv"
[ -n "${APPEND:-}${REPORT_ONLY:-}" ] || : >"$results"

[ -x /usr/bin/time ] || apt-get install -y time >/dev/null
for tool in "$bin" "$bw"; do [ -x "$tool" ] || { echo "missing $tool (build reachwise and bandwidth_bench)"; exit 2; }; done
command -v ogr2ogr >/dev/null || { echo "missing ogr2ogr (apt-get install gdal-bin)"; exit 2; }

# measure KIND CASE THREADS CMD...: runs CMD under timeout and /usr/bin/time -v,
# appends "kind case threads wall_s rss_mb status cells_per_s routing_s series inner_s" to results.
measure() {
  local kind="$1" case="$2" threads="$3"; shift 3
  local log="$work/logs/$kind-$case-t$threads.log" status=ok
  timeout "$timeout_s" /usr/bin/time -v "$@" >"$log.out" 2>"$log" || status="exit$?"
  local wall rss rate routing series
  wall=$(awk -F': ' '/Elapsed \(wall clock\)/ {n = split($2, p, ":"); s = 0; for (i = 1; i <= n; i++) s = s * 60 + p[i]; print s}' "$log")
  rss=$(awk '/Maximum resident set size/ {printf "%.0f", $NF / 1024}' "$log")
  # stopped by timeout: /usr/bin/time was killed too; the wall is at least the limit
  [ "$status" = exit124 ] && [ -z "$wall" ] && wall="$timeout_s"
  # route's summary line: "routing took X s: Y M cell updates/s on T thread(s); at most Z routed series ..."
  rate=$(sed -n 's/.* \([0-9.]*\) M cell updates\/s.*/\1/p' "$log.out" "$log" | head -n1)
  routing=$(sed -n 's/.*routing took \([0-9.]*\) s.*/\1/p' "$log.out" "$log" | head -n1)
  series=$(sed -n 's/.*at most \([0-9]*\) routed series.*/\1/p' "$log.out" "$log" | head -n1)
  # the floors' own timed part ("... in X s"), without start-up and buffer set-up
  inner=$(sed -n 's/^\(copy\|ncread\): .* in \([0-9.]*\) s.*/\2/p' "$log.out" | head -n1)
  printf '%s\t%s\t%s\t%s\t%s\t%s\t%s\t%s\t%s\t%s\n' "$kind" "$case" "$threads" "${wall:--}" "${rss:--}" \
    "$status" "${rate:--}" "${routing:--}" "${series:--}" "${inner:--}" >>"$results"
  printf '%-8s %-14s threads %s: wall %8s s  peak RSS %6s MB  %s %s\n' "$kind" "$case" "$threads" \
    "${wall:--}" "${rss:--}" "$status" "${rate:+($rate M cell updates/s)}"
}

# synth_case N STEPS: network and lateral forcing, generated once.
synth_case() {
  local n="$1" steps="$2"
  local net="$work/net_$n.gpkg" lat="$work/lat_${n}_$steps.nc"
  if [ ! -f "$lat" ]; then
    local tmpnet="$work/.synth_${n}_$steps.gpkg"
    measure synth "${n}x$steps" 1 "$bin" synth "$tmpnet" --reaches "$n" --steps "$steps" --seed "$seed" \
      --lateral "$lat" --overwrite
    [ -f "$net" ] || mv "$tmpnet" "$net"
    rm -f "$tmpnet"
  fi
}

route_case() {  # N STEPS THREADS SELECTION
  local n="$1" steps="$2" threads="$3" selection="$4" extra=()
  [ "$selection" = default ] || extra=(--hydrographs "$selection")
  local k times=1
  [ "$n" -le 100000 ] && [ "$steps" -le 720 ] && [ "$selection" = "${selections%% *}" ] && times="$repeats"
  for ((k = 0; k < times; k++)); do
    measure "route-$selection" "${n}x$steps" "$threads" "$bin" route "$work/net_$n.gpkg" \
      --lateral "$work/lat_${n}_$steps.nc" --out "$work/out_${n}_$steps.gpkg" --overwrite \
      --threads "$threads" "${extra[@]}"
  done
  # The written part of the floor: GDAL copying everything the run wrote.
  if [ "$threads" = 2 ] && [ -f "$work/out_${n}_$steps.gpkg" ]; then
    rm -f "$work/floor_out_$n.gpkg"
    measure "ogr2ogr-out-$selection" "${n}x$steps" 1 ogr2ogr -f GPKG "$work/floor_out_$n.gpkg" \
      "$work/out_${n}_$steps.gpkg"
    rm -f "$work/floor_out_$n.gpkg"
  fi
  rm -f "$work/out_${n}_$steps.gpkg"
}

floors_case() {  # N STEPS
  local n="$1" steps="$2"
  rm -f "$work/floor_$n.gpkg"
  measure ogr2ogr "${n}x$steps" 1 ogr2ogr -f GPKG "$work/floor_$n.gpkg" "$work/net_$n.gpkg"
  rm -f "$work/floor_$n.gpkg"
  measure ncread "${n}x$steps" 1 "$bw" ncread "$work/lat_${n}_$steps.nc" lateral
  # Bytes moved at the least: each cell update reads and writes one double
  # of state (16 B), and each reach reads its lateral and upstream series
  # and writes its outflow (3 x 8 B per step).
  local rate routing cells bytes
  rate=$(awk -F'\t' -v c="${n}x$steps" '$1 ~ /^route/ && $2 == c && $7 != "-" {print $7; exit}' "$results")
  routing=$(awk -F'\t' -v c="${n}x$steps" '$1 ~ /^route/ && $2 == c && $8 != "-" {print $8; exit}' "$results")
  if [ -n "$rate" ] && [ -n "$routing" ]; then
    cells=$(awk -v r="$rate" -v t="$routing" 'BEGIN {printf "%.0f", r * 1e6 * t}')
  else
    cells=0
  fi
  bytes=$(awk -v c="$cells" -v n="$n" -v s="$steps" 'BEGIN {printf "%.0f", 16 * c + 24 * n * s}')
  measure copy "${n}x$steps" 1 "$bw" copy "$bytes"
}

if [ -z "${REPORT_ONLY:-}" ]; then
echo "machine: $(nproc) cores, $(awk '/MemTotal/ {printf "%.0f GB", $2 / 1048576}' /proc/meminfo), $(uname -sr)"
echo "load before: $(cut -d' ' -f1-3 /proc/loadavg)"
echo "reachwise $("$bin" --version | sed 's/^reachwise //')"
for n in $sizes; do
  synth_case "$n" 720
  for sel in $selections; do
    route_case "$n" 720 2 "$sel"
    # 1 thread: only with the first selection (the one closest to routing alone)
    for t in $thread_sizes; do [ "$t" = "$n" ] && [ "$sel" = "${selections%% *}" ] && route_case "$n" 720 1 "$sel"; done
  done
  floors_case "$n" 720
done
if [ -n "$long" ]; then
  synth_case "$long" 8760
  for sel in $selections; do route_case "$long" 8760 2 "$sel"; done
  floors_case "$long" 8760
fi
echo "load after: $(cut -d' ' -f1-3 /proc/loadavg)"
fi

python3 - "$results" <<'EOF'
import math, sys
rows = [l.rstrip("\n").split("\t") for l in open(sys.argv[1]) if l.strip()]
def get(kind, case, threads=None):
    for r in rows:
        if r[0] == kind and r[1] == case and (threads is None or r[2] == str(threads)):
            return r
    return None
def num(x):
    try: return float(x)
    except ValueError: return None
# Repeated route runs: keep the fastest finished one, remember the spread.
best, spread = {}, {}
for r in rows:
    if not r[0].startswith("route-"): continue
    key = (r[0], r[1], r[2])
    spread.setdefault(key, []).append(num(r[3]))
    b = best.get(key)
    if b is None or (r[5] == "ok" and (b[5] != "ok" or (num(r[3]) or 1e300) < (num(b[3]) or 1e300))):
        best[key] = r
routes = list(best.values())
print()
print("| case (reaches x steps) | hydrographs | threads | end-to-end wall s (runs) | peak RSS MB | routing s | M cell updates/s | peak live series | synth s | ogr2ogr input s | ogr2ogr outputs s | NetCDF read s | I/O floor s | end-to-end / I/O floor | end-to-end / (input + forcing) | memory-copy floor s |")
print("|---|---|---|---|---|---|---|---|---|---|---|---|---|---|---|---|")
for r in routes:
    c = r[1]
    og, nc, cp, sy = get("ogr2ogr", c), get("ncread", c), get("copy", c), get("synth", c)
    out = get("ogr2ogr-out-" + r[0][6:], c)
    strict = (num(og[3]) or 0) + (num(nc[3]) or 0) if og and nc else None
    io = strict + (num(out[3]) or 0) if strict and out else None
    wall = num(r[3])
    ok = r[5] == "ok"
    def over(floor):
        if not (wall and floor): return "-"
        return f"{wall / floor:.1f}" if ok else f"> {wall / floor:.1f}"
    ratio, ratio_strict = over(io), over(strict)
    status = "" if ok else f" (stopped: {r[5]})"
    walls = [w for w in spread[(r[0], r[1], r[2])] if w]
    if len(walls) > 1: status += f" ({len(walls)} runs, up to {max(walls):g})"
    print(f"| {c} | {r[0][6:]} | {r[2]} | {r[3]}{status} | {r[4]} | {r[7]} | {r[6]} | {r[8]} | "
          f"{sy[3] if sy else '-'} | {og[3] if og else '-'} | {out[3] if out else '-'} | {nc[3] if nc else '-'} | "
          f"{f'{io:.2f}' if io else '-'} | {ratio} | {ratio_strict} | {cp[9] if cp else '-'} |")
def slope(xy):
    if len(xy) < 2: return None
    mx = sum(x for x, _ in xy) / len(xy); my = sum(y for _, y in xy) / len(xy)
    return sum((x - mx) * (y - my) for x, y in xy) / sum((x - mx) ** 2 for x, _ in xy)
print()
for kind in dict.fromkeys(r[0] for r in routes):
    pts = [(math.log(float(r[1].split("x")[0])), math.log(num(r[3])), num(r[7]))
           for r in routes if r[0] == kind and r[2] == "2" and r[1].endswith("x720") and r[5] == "ok" and num(r[3])]
    b = slope([(x, y) for x, y, _ in pts])
    br = slope([(x, math.log(z)) for x, _, z in pts if z])
    if b is None:
        print(f"{kind[6:]}: fewer than 2 sizes finished; no scaling exponent")
    else:
        print(f"{kind[6:]}: scaling exponent (wall ~ N^b, 720 steps, 2 threads, {len(pts)} sizes) b = {b:.3f}"
              + (f"; routing time alone b = {br:.3f}" if br is not None else ""))
for r in routes:
    if r[2] != "1": continue
    two = best.get((r[0], r[1], "2"))
    if two and num(r[3]) and num(two[3]):
        rs = f", routing {num(r[7]) / num(two[7]):.2f}x" if num(r[7]) and num(two[7]) else ""
        print(f"threads 1 -> 2, {r[0][6:]} {r[1]}: end-to-end {num(r[3]) / num(two[3]):.2f}x{rs}")
EOF
