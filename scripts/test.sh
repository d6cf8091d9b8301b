#!/usr/bin/env bash
# Builds habcast with warnings as errors and runs the whole test suite (Catch2 through ctest).
# Installs missing Debian packages first, including R and statsmodels used by the reference checks
# and Slurm and munge for the job-array integration test.
set -euo pipefail
cd "$(dirname "$0")/.."

scripts/install-deps.sh --with-reference-tools --with-cluster-tools
cmake -S . -B build-test -G Ninja -DCMAKE_BUILD_TYPE=RelWithDebInfo -DHABCAST_WERROR=ON >/dev/null
cmake --build build-test --parallel
ctest --test-dir build-test --output-on-failure --parallel "$(nproc)"
