#!/usr/bin/env bash
# Installs everything squall needs on a fresh Debian machine (run as root):
# the netCDF C library for the cgo binding, and the reference tools the
# tests check against (ncdump, Debian's real sample netCDF files, Python's
# netCDF4/numpy/scipy/scikit-learn, GDAL, shellcheck, headless Chromium,
# and a single-node Slurm with munge).
set -euo pipefail
export DEBIAN_FRONTEND=noninteractive
need=(libnetcdf-dev netcdf-bin libncarg-data python3-netcdf4 python3-numpy python3-scipy
      python3-sklearn python3-matplotlib gdal-bin shellcheck chromium slurm-wlm munge)
missing=()
for p in "${need[@]}"; do
  dpkg-query -W -f='${Status}' "$p" 2>/dev/null | grep -q "install ok installed" || missing+=("$p")
done
if [ "${#missing[@]}" -gt 0 ]; then
  apt-get update -qq
  apt-get install -y -qq --no-install-recommends "${missing[@]}" >/dev/null
fi
command -v go >/dev/null || { echo "Go is not on PATH (expected /usr/local/go/bin)"; exit 1; }
