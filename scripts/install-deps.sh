#!/usr/bin/env bash
# Installs the Debian 12 packages habcast needs to build and test.
# Idempotent: packages already present are skipped, so re-running is cheap.
# Usage: scripts/install-deps.sh [--with-reference-tools] [--with-cluster-tools] [--with-fuzz]
#                                [--with-packaging-tools] [--with-bench-tools]
#   --with-reference-tools also installs R, vegan, MASS and statsmodels, used by the reference
#   checks and to regenerate reference numbers in tests/reference/.
#   --with-cluster-tools also installs Slurm and munge, for the test that runs
#   the example batch job array on a single-node cluster it starts itself.
#   --with-fuzz also installs clang and its libFuzzer/sanitizer runtime (scripts/fuzz.sh).
#   --with-bench-tools also installs SciPy, whose normal CDF the separate way's change step of
#   bench/several.py uses (bench/run.py needs only the base packages).
#   --with-packaging-tools also installs what scripts/package.sh needs: dpkg-shlibdeps (dpkg-dev),
#   file (CPack's strip step), lintian, and man-db (the manual-page test).
set -euo pipefail

packages=(
  build-essential cmake ninja-build pkg-config
  libgdal-dev gdal-bin libproj-dev proj-data libeigen3-dev
  libcli11-dev catch2 libtomlplusplus-dev nlohmann-json3-dev
  libqhull-dev
  libcairo2-dev libpango1.0-dev fonts-dejavu-core zlib1g-dev  # figures: Cairo, Pango, DejaVu Sans; PNG text CRCs
  python3 python3-gdal python3-numpy
  time  # /usr/bin/time: the benchmark's per-run peak memory
  lighttpd  # serves rasters over HTTP with byte ranges to the /vsicurl/ test (ctest vsicurl_lighttpd)
)
for flag in "$@"; do
  case "$flag" in
    --with-reference-tools) packages+=(r-base-core r-cran-vegan r-cran-mass python3-statsmodels) ;;
    --with-cluster-tools) packages+=(slurm-wlm munge) ;;
    --with-fuzz) packages+=(clang libclang-rt-14-dev) ;;
    --with-packaging-tools) packages+=(dpkg-dev file lintian man-db) ;;
    --with-bench-tools) packages+=(python3-scipy) ;;
    *) echo "install-deps.sh: unknown option $flag" >&2; exit 2 ;;
  esac
done

missing=()
for p in "${packages[@]}"; do
  if ! dpkg-query -W -f='${Status}' "$p" 2>/dev/null | grep -q "install ok installed"; then
    missing+=("$p")
  fi
done

if ((${#missing[@]} == 0)); then
  exit 0
fi

echo "habcast: installing Debian packages: ${missing[*]}" >&2
sudo_cmd=()
if [[ $(id -u) -ne 0 ]]; then
  if command -v sudo >/dev/null; then sudo_cmd=(sudo); else
    echo "habcast: need root (or sudo) to install: ${missing[*]}" >&2; exit 1
  fi
fi
export DEBIAN_FRONTEND=noninteractive
"${sudo_cmd[@]}" apt-get update -qq
"${sudo_cmd[@]}" apt-get install -y -qq --no-install-recommends "${missing[@]}"
