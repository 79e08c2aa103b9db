#!/usr/bin/env bash
# Builds qamsight and runs every test: C++ unit and reference tests, CLI end-to-end tests,
# reference-script checks and the Python tests. Installs the Debian packages it needs first.
set -euo pipefail
cd "$(dirname "$0")/.."
./tools/setup/install-deps.sh
build=${QAMSIGHT_BUILD_DIR:-build}
jobs=$(nproc)
cmake -S . -B "$build" -DCMAKE_BUILD_TYPE=Release -DQAMSIGHT_WERROR=ON ${QAMSIGHT_CMAKE_ARGS:-}
cmake --build "$build" -j"$jobs"
ctest --test-dir "$build" --output-on-failure -j"$jobs" --timeout 3000
