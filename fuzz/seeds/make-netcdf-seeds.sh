#!/usr/bin/env bash
# Writes the NetCDF seeds of fuzz/corpus/forcing_netcdf from the CDL texts
# beside this script (ncgen, from netcdf-bin): classic, 64-bit offset and
# netCDF-4 files.
set -euo pipefail
here="$(cd "$(dirname "${BASH_SOURCE[0]}")" && pwd)"
out="$here/../corpus/forcing_netcdf"
mkdir -p "$out"
ncgen -k classic -o "$out/time-reach-classic.nc" "$here/forcing-time-reach.cdl"
ncgen -k 64-bit-offset -o "$out/reach-time-hours.nc" "$here/forcing-reach-time-hours.cdl"
ncgen -k classic -o "$out/observed-gauge.nc" "$here/observed-gauge.cdl"
ncgen -k netCDF-4 -o "$out/netcdf4-string.nc" "$here/forcing-netcdf4-string.cdl"
