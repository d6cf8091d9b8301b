#!/usr/bin/env bash
# Builds habcast with warnings as errors and runs the whole test suite (Catch2 through ctest),
# then builds the same suite again with AddressSanitizer + UndefinedBehaviorSanitizer in
# build-asan/ and runs it there: any sanitizer report fails the test that triggered it.
# Installs missing Debian packages first, including R and statsmodels used by the reference checks
# and Slurm and munge for the job-array integration test.
# The Debian package is made from the same build (scripts/package.sh build-test) and checked by
# lintian there and by the package test in ctest.
# HABCAST_TEST_SANITIZE=0 skips the sanitizer build (quicker local runs).
# Both builds are unity builds (CMake compiles the sources of a target in batches of 8 as one
# file): Eigen, GDAL, nlohmann/json and Catch2 headers are then parsed a few times instead of
# once per file, which roughly halves the build time. Everyday builds (demo.sh, build-dev) stay
# file by file, so a missing #include still shows up there.
set -euo pipefail
cd "$(dirname "$0")/.."

scripts/install-deps.sh --with-reference-tools --with-cluster-tools
unity=(-DCMAKE_UNITY_BUILD=ON -DCMAKE_UNITY_BUILD_BATCH_SIZE=8)
cmake -S . -B build-test -G Ninja -DCMAKE_BUILD_TYPE=RelWithDebInfo -DHABCAST_WERROR=ON "${unity[@]}" >/dev/null
cmake --build build-test --parallel
scripts/package.sh build-test  # the .deb of this very build, for the package test below (no rebuild)
ctest --test-dir build-test --output-on-failure --parallel "$(nproc)"

if [[ "${HABCAST_TEST_SANITIZE:-1}" != "0" ]]; then
  # -O1 keeps the instrumented suite fast enough for CI; -g1 gives sanitizer reports file:line.
  # Warnings are the plain build's job: sanitizer instrumentation makes GCC warn spuriously.
  cmake -S . -B build-asan -G Ninja -DCMAKE_BUILD_TYPE=Debug "-DCMAKE_CXX_FLAGS_DEBUG=-O1 -g1" \
    -DHABCAST_SANITIZE=ON "${unity[@]}" >/dev/null
  cmake --build build-asan --parallel
  ASAN_OPTIONS="detect_leaks=1:abort_on_error=1:strict_string_checks=1" \
  LSAN_OPTIONS="suppressions=$PWD/tests/lsan.supp:print_suppressions=0" \
  UBSAN_OPTIONS="print_stacktrace=1:halt_on_error=1" \
    ctest --test-dir build-asan --output-on-failure --parallel "$(nproc)"
fi
