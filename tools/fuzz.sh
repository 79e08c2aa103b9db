#!/usr/bin/env bash
# Builds the libFuzzer harnesses of every file reader (clang 14, ASan + UBSan, build-fuzz) and runs
# each for a bounded time, starting from the checked-in corpora (tests/fuzz/corpus/<reader>/).
#   QAMSIGHT_FUZZ_SECONDS  seconds per harness (default 60)
#   QAMSIGHT_FUZZ_READERS  space-separated subset of readers (default: all)
#   QAMSIGHT_FUZZ_BUILD_DIR build folder (default build-fuzz)
#   QAMSIGHT_FUZZ_SEED     libFuzzer's -seed (default 1; 0 lets libFuzzer pick one at random)
# With a fixed seed and an empty <build>/corpus, a run explores the same inputs in the same order
# each time (how far it gets depends on the machine's speed): a CI run is reproducible, and a
# longer local run with the same seed covers what CI will try. Explore new ground with
# QAMSIGHT_FUZZ_SEED=0 and a long QAMSIGHT_FUZZ_SECONDS.
# New interesting inputs stay in <build>/corpus/<reader>/ (not the source tree). A finding (crash,
# leak, undefined behaviour, an exception other than InputError/ConfigError, a timeout) is saved
# as <build>/findings/<reader>-...; the script goes on with the other readers, then lists the
# findings and exits 1. Once fixed, copy the input into tests/fuzz/corpus/<reader>/: the corpus
# replay test of every build then keeps it fixed.
set -euo pipefail
cd "$(dirname "$0")/.."
QAMSIGHT_DEPS_EXTRA="${QAMSIGHT_DEPS_EXTRA:-} sanitizers" ./tools/setup/install-deps.sh
build=${QAMSIGHT_FUZZ_BUILD_DIR:-build-fuzz}
seconds=${QAMSIGHT_FUZZ_SECONDS:-60}
seed=${QAMSIGHT_FUZZ_SEED:-1}
# QAMSIGHT_FUZZ_REUSE_BUILD=1: the harnesses are already built in $build (tools/test-sanitizers.sh).
if [ "${QAMSIGHT_FUZZ_REUSE_BUILD:-0}" != 1 ]; then
  cmake -S . -B "$build" -DCMAKE_CXX_COMPILER=clang++-14 -DCMAKE_BUILD_TYPE=Release \
    -DCMAKE_CXX_FLAGS=-gline-tables-only -DQAMSIGHT_FUZZ=ON -DQAMSIGHT_SANITIZE=ON -DQAMSIGHT_TESTS=OFF \
    -DQAMSIGHT_TOOLS=OFF -DQAMSIGHT_PYTHON=OFF -DQAMSIGHT_BENCH=OFF -DQAMSIGHT_INSTALL=OFF \
    -DQAMSIGHT_WERROR=OFF ${QAMSIGHT_CMAKE_ARGS:-} >/dev/null
  cmake --build "$build" -j"$(nproc)"
fi
readers=${QAMSIGHT_FUZZ_READERS:-$(ls tests/fuzz/corpus)}
export ASAN_OPTIONS=${ASAN_OPTIONS:-detect_leaks=1}
export UBSAN_OPTIONS=${UBSAN_OPTIONS:-print_stacktrace=1:halt_on_error=1}
mkdir -p "$build/findings"
failed=()
for r in $readers; do
  harness="$build/tests/fuzz/qamsight_fuzz_$r"
  if [ ! -x "$harness" ]; then
    echo "fuzz: no harness for '$r' (tests/fuzz/CMakeLists.txt lists the readers)" >&2
    failed+=("$r (no harness)")
    continue
  fi
  mkdir -p "$build/corpus/$r"
  echo "fuzz: $r for $seconds s (seed $seed)" >&2
  # -timeout: an input that takes 10 s is a hang; -rss_limit_mb: a reader that asks for gigabytes
  # on a small file is a finding too.
  if ! "$harness" -seed="$seed" -max_total_time="$seconds" -timeout=10 -rss_limit_mb=2048 -max_len=65536 \
      -print_final_stats=1 -artifact_prefix="$build/findings/$r-" \
      "$build/corpus/$r" "tests/fuzz/corpus/$r" >"$build/findings/$r.log" 2>&1; then
    failed+=("$r")
    grep -E "ERROR|SUMMARY|Test unit written" "$build/findings/$r.log" | head -5 >&2 || true
  else
    grep -E "stat::number_of_executed_units|cov:" "$build/findings/$r.log" | tail -2 >&2 || true
  fi
done
if [ "${#failed[@]}" -ne 0 ]; then
  echo "fuzz: findings in: ${failed[*]} (inputs and logs in $build/findings/)" >&2
  exit 1
fi
echo "fuzz: no findings" >&2
