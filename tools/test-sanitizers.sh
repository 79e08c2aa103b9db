#!/usr/bin/env bash
# The sanitizer stage of the test suite: builds qamsight with clang 14 under AddressSanitizer and
# UndefinedBehaviorSanitizer in build-asan, runs the tests there, then the fuzz harnesses
# (tools/fuzz.sh). tools/test.sh calls it after the normal build; it also runs alone.
#   QAMSIGHT_ASAN_BUILD_DIR  build folder (default build-asan)
#   QAMSIGHT_TEST_TIME_SCALE time limits of the CLI tests are multiplied by this (default 4 here)
#   QAMSIGHT_FUZZ_SECONDS    seconds per fuzz harness (default 60; 0 skips fuzzing)
#   QAMSIGHT_CMAKE_ARGS      extra arguments for cmake (both stages)
# The Python bindings are not built here (an instrumented module needs an instrumented
# interpreter); they hold no logic of their own. The build does not use -Werror: the normal GCC
# build does, and clang's different warnings should not fail the sanitizer run.
set -euo pipefail
cd "$(dirname "$0")/.."
QAMSIGHT_DEPS_EXTRA="${QAMSIGHT_DEPS_EXTRA:-} sanitizers" ./tools/setup/install-deps.sh
build=${QAMSIGHT_ASAN_BUILD_DIR:-build-asan}
jobs=$(nproc)
start=$(date +%s)
# The libFuzzer harnesses are built in the same tree (QAMSIGHT_FUZZ=ON: the library carries the
# fuzzer's coverage instrumentation, which the sanitizer runtime's weak hooks absorb in the test
# programs), so the library is compiled with clang once for both stages.
cmake -S . -B "$build" -DCMAKE_CXX_COMPILER=clang++-14 -DCMAKE_BUILD_TYPE=Release \
  -DCMAKE_CXX_FLAGS=-gline-tables-only -DQAMSIGHT_SANITIZE=ON -DQAMSIGHT_FUZZ=ON -DQAMSIGHT_PYTHON=OFF \
  -DQAMSIGHT_BENCH=OFF -DQAMSIGHT_WERROR=OFF ${QAMSIGHT_CMAKE_ARGS:-}
cmake --build "$build" -j"$jobs"
built=$(date +%s)
# Any report is fatal; leaks count (LeakSanitizer); stacks are symbolised.
export ASAN_OPTIONS=${ASAN_OPTIONS:-abort_on_error=1:detect_leaks=1:strict_string_checks=1:check_initialization_order=1}
export UBSAN_OPTIONS=${UBSAN_OPTIONS:-print_stacktrace=1:halt_on_error=1}
export QAMSIGHT_TEST_TIME_SCALE=${QAMSIGHT_TEST_TIME_SCALE:-4}
# reference_scripts runs Python scripts only (no C++), so the normal stage covers it.
ctest --test-dir "$build" --output-on-failure -j"$jobs" --timeout 5400 -E '^reference_scripts$'
tested=$(date +%s)
echo "test-sanitizers: build $((built - start)) s, tests $((tested - built)) s" >&2
if [ "${QAMSIGHT_FUZZ_SECONDS:-60}" != 0 ]; then
  QAMSIGHT_FUZZ_BUILD_DIR="$build" QAMSIGHT_FUZZ_REUSE_BUILD=1 ./tools/fuzz.sh
fi
