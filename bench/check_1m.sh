#!/usr/bin/env bash
# Reading and validating a 1,000,000-reach network: wall time and peak RSS of
# each stage, beside the GDAL floor. Usage: bench/check_1m.sh [BUILD_DIR] [FILE]
set -euo pipefail
here="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
build="${1:-$here/build}"
file="${2:-${TMPDIR:-/tmp}/reachwise_bench_1m.gpkg}"
bench="$build/bench/check_bench"

measure() {  # label, command...
  local label="$1"; shift
  local log; log="$(mktemp)"
  /usr/bin/time -v "$@" >"$log.out" 2>"$log" || { cat "$log.out" "$log"; return 1; }
  grep -v '^$' "$log.out" | grep -v '^\(error\|warning\|info\) ' | tail -n 6 | sed "s/^/  [$label] /" || true
  local wall rss
  wall=$(grep 'Elapsed (wall clock)' "$log" | awk '{print $NF}')
  rss=$(grep 'Maximum resident set size' "$log" | awk '{print $NF}')
  printf '%-28s wall %10s   peak RSS %8.0f MB\n' "$label" "$wall" "$(echo "$rss / 1024" | bc -l)"
  rm -f "$log" "$log.out"
}

"$bench" generate "$file"
measure "ogrinfo -al -q" sh -c "ogrinfo -al -q '$file' >/dev/null"
measure "ogrinfo -so -al" ogrinfo -so -al "$file"
measure "GDAL full read (OGR loop)" "$bench" gdal "$file"
measure "reader only" "$bench" read "$file"
measure "read + graph + validate" "$bench" check "$file"
measure "reachwise check" sh -c "'$build/reachwise' check '$file' 2>/dev/null"
