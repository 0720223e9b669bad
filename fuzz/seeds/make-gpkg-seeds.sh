#!/usr/bin/env bash
# Writes the GeoPackage seeds of fuzz/corpus/network_gpkg: four reaches of
# the sample networks (with and without `to_reach`), 512-byte pages and no
# spatial index so the files are small (about 20 KB) and mutations reach
# the data. The run also seeds with sample-network/*.gpkg whole
# (scripts/fuzz.sh).
set -euo pipefail
here="$(cd "$(dirname "${BASH_SOURCE[0]}")" && pwd)"
sample="$here/../../sample-network"
out="$here/../corpus/network_gpkg"
mkdir -p "$out"
small=(--config OGR_SQLITE_PRAGMA page_size=512 -lco SPATIAL_INDEX=NO -f GPKG -nln reaches)
rm -f "$out/ids-4.gpkg" "$out/geometry-4.gpkg"
ogr2ogr "${small[@]}" "$out/ids-4.gpkg" "$sample/network.gpkg" -where "reach_id IN ('R1','R2','R3','R4')"
ogr2ogr "${small[@]}" "$out/geometry-4.gpkg" "$sample/plain.gpkg" -where "fid <= 4"
