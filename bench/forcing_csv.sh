#!/usr/bin/env bash
# Forcing CSV reader benchmark (not part of CI): a wide CSV of 50,000 reaches
# × 720 hourly rows and a long CSV of 5,000 reaches × 720 rows (about the
# same size on disk), written by bench/forcing_csv_bench, then read as a
# run's inflow (io::readForcingCsv: read, checked, put on the axis) under
# /usr/bin/time. Prints a markdown table: file size, the fastest of
# REPEATS runs (the machine may be shared) in wall and in CPU seconds
# (user + system: the speed per core, less sensitive to other load), MB/s
# of each, peak RSS, the decoded values (8 bytes each) and peak RSS /
# decoded. Beside it, when python3 is
# there, the floor of a plain scripting-language CSV reader: Python's csv
# module splitting the same file into fields (no numbers parsed).
#
# Usage: bench/forcing_csv.sh BUILD_DIR [WORK_DIR]
# Environment (defaults in brackets):
#   BEFORE     another forcing_csv_bench binary (e.g. built from an older
#              commit) measured the same way, for a before/after table
#   REPEATS    runs per file and binary                  [3]
#   WIDE       "COLUMNS ROWS" of the wide file           [50000 720]
#   LONG       "REACHES ROWS" of the long file           [5000 720]
# Inputs are kept in WORK_DIR (default $TMPDIR/reachwise_forcing_csv) and
# reused. The figures in docs/performance.md came from
#   BEFORE=/tmp/forcing_csv_bench.main bench/forcing_csv.sh build /dev/shm/reachwise_forcing_csv
set -euo pipefail
build="$(cd "${1:?usage: bench/forcing_csv.sh BUILD_DIR [WORK_DIR]}" && pwd)"
work="${2:-${TMPDIR:-/tmp}/reachwise_forcing_csv}"
repeats="${REPEATS:-3}"
read -r wide_cols wide_rows <<<"${WIDE:-50000 720}"
read -r long_reaches long_rows <<<"${LONG:-5000 720}"
after="$build/bench/forcing_csv_bench"
[ -x "$after" ] || { echo "missing $after (cmake --build $build --target forcing_csv_bench)"; exit 2; }
[ -x /usr/bin/time ] || { echo "missing /usr/bin/time (apt-get install time)"; exit 2; }
mkdir -p "$work"

wide="$work/wide_${wide_cols}x${wide_rows}.csv"
long="$work/long_${long_reaches}x${long_rows}.csv"
[ -s "$wide" ] || "$after" write wide "$wide" "$wide_cols" "$wide_rows"
[ -s "$long" ] || "$after" write long "$long" "$long_reaches" "$long_rows"

# field NAME LINE: the value after NAME in a line of forcing_csv_bench.
field() { awk -v k="$1" '{for (i = 1; i < NF; i++) if ($i == k) print $(i + 1)}' <<<"$2"; }

# row LABEL BIN FILE: the fastest of $repeats runs (wall and CPU seconds
# each at its least), and the largest peak RSS (/usr/bin/time).
row() {
  local label="$1" bin="$2" file="$3" best="" cpu="" rss=0 line s c r
  for _ in $(seq "$repeats"); do
    line="$(/usr/bin/time -f 'maxrss_kb %M' "$bin" read "$file" 2>"$work/time.txt")"
    s="$(field seconds "$line")"
    c="$(field cpu_seconds "$line")"
    r="$(awk '/maxrss_kb/ {print $2}' "$work/time.txt")"
    if [ -z "$best" ] || awk -v a="$s" -v b="$best" 'BEGIN {exit !(a < b)}'; then best="$s"; fi
    if [ -z "$cpu" ] || awk -v a="$c" -v b="$cpu" 'BEGIN {exit !(a < b)}'; then cpu="$c"; fi
    [ "$r" -gt "$rss" ] && rss="$r"
  done
  awk -v label="$label" -v file="$(basename "$file")" -v s="$best" -v c="$cpu" -v rss="$rss" -v line="$line" 'BEGIN {
    n = split(line, f, " ");
    for (i = 1; i < n; i++) v[f[i]] = f[i + 1];
    mb = v["bytes"] / 1e6; dec = v["decoded_MB"]; rmb = rss / 1024;
    printf "| %s | %s | %.0f | %.2f | %.0f | %.2f | %.0f | %.0f | %.0f | %.2f |\n", label, file, mb, s, mb / s, c, mb / c,
           rmb, dec, rmb / dec
  }'
}

echo "machine: $(nproc) cores, $(lscpu | awk -F: '/Model name/ {gsub(/^ +/, "", $2); print $2; exit}'), $(date -u +%Y-%m-%d)"
echo
echo "load average: $(cut -d' ' -f1-3 /proc/loadavg)"
echo
echo "| reader | file | MB | wall s | MB/s | CPU s | MB per CPU s | peak RSS MB | decoded MB | RSS / decoded |"
echo "|---|---|---:|---:|---:|---:|---:|---:|---:|---:|"
for file in "$wide" "$long"; do
  [ -n "${BEFORE:-}" ] && row before "$BEFORE" "$file"
  row after "$after" "$file"
done
if command -v python3 >/dev/null; then
  echo
  for file in "$wide" "$long"; do
    python3 - "$file" <<'EOF'
import csv, os, sys, time
path = sys.argv[1]
start = time.perf_counter()
with open(path, newline="") as f:
    fields = sum(len(r) for r in csv.reader(f))
s = time.perf_counter() - start
mb = os.path.getsize(path) / 1e6
print(f"floor, Python csv module splitting {os.path.basename(path)}: {fields} fields, {s:.2f} s, {mb / s:.0f} MB/s")
EOF
  done
fi
