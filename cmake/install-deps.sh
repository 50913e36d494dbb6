#!/usr/bin/env bash
# Installs every Debian package gridtruth needs to build, test and benchmark.
# Idempotent: skips apt entirely when every package is already installed.
set -euo pipefail
packages=(
  build-essential cmake ninja-build pkg-config
  libgeographiclib-dev libproj-dev proj-data proj-bin libtbb-dev libgdal-dev
  gdal-bin                 # tests: ogrinfo checks the GeoPackage written by --gpkg
  libboost-dev libfmt-dev nlohmann-json3-dev libsimdjson-dev libcli11-dev
  libgtest-dev libgmock-dev libbenchmark-dev
  doxygen
  librsvg2-bin libxml2-utils zlib1g-dev
  chromium                 # tests: ReportCliTest.HtmlRendersInHeadlessChromium renders the HTML report
  clang libclang-rt-14-dev
  python3-dev pybind11-dev python3-pybind11 python3-pytest python3-numpy python3-pandas python3-shapely
  libgeos-dev python3-geopandas python3-pyproj python3-geographiclib python3-dask python3-distributed
)
missing=()
for p in "${packages[@]}"; do
  dpkg-query -W -f='${Status}' "$p" 2>/dev/null | grep -q "install ok installed" || missing+=("$p")
done
if [ ${#missing[@]} -eq 0 ]; then
  echo "install-deps: all ${#packages[@]} packages present"
  exit 0
fi
echo "install-deps: installing ${missing[*]}"
SUDO=""
if [ "$(id -u)" -ne 0 ]; then SUDO="sudo"; fi
export DEBIAN_FRONTEND=noninteractive
$SUDO apt-get update -qq
$SUDO apt-get install -y -qq --no-install-recommends "${missing[@]}"
