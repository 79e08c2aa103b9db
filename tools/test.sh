#!/usr/bin/env bash
# Builds qamsight and runs every test: C++ unit and reference tests, CLI end-to-end tests
# (including 2-rank MPI sweeps and the HTML report in headless Chromium), reference-script checks
# and the Python tests; then the sanitizer stage (clang ASan + UBSan build of the whole suite)
# and a bounded libFuzzer run of every file reader. Installs the Debian packages it needs first.
#   QAMSIGHT_BUILD_DIR        build folder of the normal stage (default build)
#   QAMSIGHT_SKIP_SANITIZERS  1: stop after the normal stage (a quick local run)
#   QAMSIGHT_FUZZ_SECONDS     seconds per fuzz harness (default here 30; 0 skips fuzzing)
#   QAMSIGHT_CMAKE_ARGS       extra cmake arguments
set -euo pipefail
cd "$(dirname "$0")/.."
QAMSIGHT_DEPS_EXTRA="mpi browser sanitizers ${QAMSIGHT_DEPS_EXTRA:-}" ./tools/setup/install-deps.sh
build=${QAMSIGHT_BUILD_DIR:-build}
jobs=$(nproc)
start=$(date +%s)
cmake -S . -B "$build" -DCMAKE_BUILD_TYPE=Release -DQAMSIGHT_WERROR=ON -DQAMSIGHT_MPI=ON ${QAMSIGHT_CMAKE_ARGS:-}
cmake --build "$build" -j"$jobs"
ctest --test-dir "$build" --output-on-failure -j"$jobs" --timeout 3000
echo "test: normal stage $(( $(date +%s) - start )) s" >&2
if [ "${QAMSIGHT_SKIP_SANITIZERS:-0}" != 1 ]; then
  QAMSIGHT_FUZZ_SECONDS=${QAMSIGHT_FUZZ_SECONDS:-30} ./tools/test-sanitizers.sh
fi
echo "test: all stages passed in $(( $(date +%s) - start )) s" >&2
