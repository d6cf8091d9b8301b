#!/usr/bin/env bash
# Builds habcast and maps the invented demo model over the rasters in sample-rasters/.
# Installs missing Debian packages first (needs root or sudo once). Re-running is cheap.
set -euo pipefail
cd "$(dirname "$0")/.."

scripts/install-deps.sh
cmake -S . -B build -G Ninja -DCMAKE_BUILD_TYPE=Release -DHABCAST_BUILD_TESTS=OFF -DHABCAST_WERROR=OFF >/dev/null
cmake --build build --parallel

out=out/demo
pictures=out/demo-pictures
echo
echo "== habcast predict on the invented Fenmarrow Uplands demo =="
set +e
build/habcast predict sample-rasters/demo-model.toml -o "$out" --overwrite --quicklook "$out/quicklook.png"
code=$?
set -e
echo
if [[ $code -ne 0 ]]; then
  echo "habcast predict failed with exit code $code" >&2
  exit $code
fi

# Covariates rarely share a grid. The same map with precipitation as a coarse climate grid in
# geographic coordinates (0.01 degree, EPSG:4326; made here with gdalwarp from the demo raster):
# habcast aligns it onto the other covariates' 100 m UTM grid while predicting (docs/alignment.md).
mixed=out/demo-mixed
mkdir -p "$mixed"
gdalwarp -q -overwrite -t_srs EPSG:4326 -tr 0.01 0.01 -r average sample-rasters/precip.tif "$mixed/precip_geographic.tif"
echo "== the same with precip on a 0.01 degree geographic grid, aligned on the fly =="
build/habcast predict sample-rasters/demo-model.toml -c precip="$mixed/precip_geographic.tif" -o "$mixed" --overwrite \
  || { code=$?; echo "habcast predict (mixed grids) failed with exit code $code" >&2; exit $code; }
echo

# The same pictures as PDF, for a report: the niche plot from the model, and the quicklook from a
# second, quiet run (--quicklook draws one file per run; the demo takes a moment).
mkdir -p "$pictures"
build/habcast describe sample-rasters/demo-model.toml --plot "$pictures/niche.pdf" --plot-png "$pictures/niche.png" >/dev/null
build/habcast predict sample-rasters/demo-model.toml -o "$pictures/run" --overwrite -q --quicklook "$pictures/quicklook.pdf"
cp "$out/quicklook.png" "$pictures/quicklook.png"

echo "Open $out/suitability.tif, $out/uncertainty.tif and $out/extrapolation.tif in a GIS;"
echo "$out/report.json holds the numbers. The demo data are invented: do not use them for decisions."
echo
echo "Pictures (PNG at 300 dpi and PDF, A4 width):"
for f in niche.png niche.pdf quicklook.png quicklook.pdf; do echo "  $pictures/$f"; done
