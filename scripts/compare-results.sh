#!/usr/bin/env bash
# Compares two results GeoPackages written by reachwise, layer by layer and
# field by field (every value as GDAL writes it to CSV, geometry as WKT),
# and says which rows differ. run_info rows that name the build or the
# machine's schedule (input paths, git_hash, command_line,
# peak_live_series) are left out. Exit 0 when everything else is equal.
# With --fields-of-before, only BEFORE's fields are compared (AFTER may add
# fields, e.g. a newer version writing more diagnostics).
#   scripts/compare-results.sh [--fields-of-before] BEFORE.gpkg AFTER.gpkg
set -euo pipefail
common=0
if [[ ${1:-} == --fields-of-before ]]; then common=1; shift; fi
[[ $# -eq 2 ]] || { echo "usage: $0 [--fields-of-before] BEFORE.gpkg AFTER.gpkg" >&2; exit 2; }
before=$1
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
layers() { ogrinfo -ro -q "$1" | sed -E 's/^[0-9]+: ([^ ]+).*/\1/'; }
fields() {  # BEFORE's attribute fields of a layer, comma-separated, plus its geometry column
  local info geom
  info=$(ogrinfo -ro -so "$before" "$1")
  geom=$(sed -n 's/^Geometry Column = //p' <<< "$info")
  { grep -E '^[A-Za-z_][A-Za-z0-9_]*: [A-Za-z0-9]+ \(' <<< "$info" | cut -d: -f1; if [[ -n $geom ]]; then echo "$geom"; fi; } | paste -sd,
}
dump() {  # file layer -> sorted CSV on stdout
  local select=()
  if ((common)); then select=(-dialect SQLite -sql "SELECT $(fields "$2") FROM \"$2\""); else select=("$2"); fi
  ogr2ogr -f CSV /vsistdout/ "$1" "${select[@]}" -lco GEOMETRY=AS_WKT |
    grep -vE '^(input|git_hash|command_line|peak_live_series),' | LC_ALL=C sort
}
status=0
if ! diff <(layers "$1" | sort) <(layers "$2" | sort) >/dev/null; then
  echo "layers differ:"; diff <(layers "$1" | sort) <(layers "$2" | sort) || true; status=1
fi
for layer in $(layers "$1"); do
  dump "$1" "$layer" > "$work/a.csv"
  dump "$2" "$layer" > "$work/b.csv" 2>/dev/null || true
  if cmp -s "$work/a.csv" "$work/b.csv"; then
    echo "$layer: $(($(wc -l < "$work/a.csv") - 1)) rows, identical"
  else
    echo "$layer: DIFFERS"; diff "$work/a.csv" "$work/b.csv" | head -20; status=1
  fi
done
exit $status
