#!/usr/bin/env bash
# Builds habcast's Debian package with CPack and checks it with lintian:
#   BUILD_DIR/package/habcast_<version>_<arch>.deb
# Its Depends are computed by dpkg-shlibdeps from the libraries the binary links against.
# Usage: scripts/package.sh [BUILD_DIR]
#   without BUILD_DIR: configures and builds a Release tree in build-package/ (no tests);
#   with BUILD_DIR: packages that (configured) tree after bringing it up to date - scripts/test.sh
#   passes its test tree, so CI compiles once and the package test in ctest finds the package.
# Install: sudo apt install ./build-package/package/habcast_*.deb
set -euo pipefail
cd "$(dirname "$0")/.."

scripts/install-deps.sh --with-packaging-tools
if (($# == 0)); then
  build=build-package
  cmake -S . -B "$build" -G Ninja -DCMAKE_BUILD_TYPE=Release -DHABCAST_BUILD_TESTS=OFF \
    -DHABCAST_BUILD_BENCH=OFF -DHABCAST_WERROR=OFF >/dev/null
else
  build=$1
  [[ -f $build/CPackConfig.cmake ]] || { echo "package.sh: $build is not a configured habcast build tree" >&2; exit 2; }
fi
cmake --build "$build" --parallel
rm -f "$build"/package/habcast_*.deb
(cd "$build" && cpack -G DEB --config CPackConfig.cmake >/dev/null)
deb=$(ls "$build"/package/habcast_*.deb)

# lintian: no errors allowed (warnings are printed for the record).
lintian --fail-on error "$deb"
echo "package.sh: built $deb"
dpkg-deb --field "$deb" Package Version Architecture Depends
