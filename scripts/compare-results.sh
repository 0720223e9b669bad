#!/usr/bin/env bash
# Compares two results GeoPackages written by reachwise, layer by layer and
# field by field (every value as GDAL writes it to CSV, geometry as WKT),
# and says which rows differ. run_info rows that name the build or the
# machine's schedule (input paths, git_hash, command_line,
# peak_live_series) are left out. Exit 0 when everything else is equal.
#   scripts/compare-results.sh BEFORE.gpkg AFTER.gpkg
set -euo pipefail
[[ $# -eq 2 ]] || { echo "usage: $0 BEFORE.gpkg AFTER.gpkg" >&2; exit 2; }
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
layers() { ogrinfo -ro -q "$1" | sed -E 's/^[0-9]+: ([^ ]+).*/\1/'; }
dump() {  # file layer -> sorted CSV on stdout
  ogr2ogr -f CSV /vsistdout/ "$1" "$2" -lco GEOMETRY=AS_WKT |
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
