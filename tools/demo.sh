#!/usr/bin/env bash
# Builds qamsight and runs the main job on the built-in demo scenario: writes figures, JSON
# and CSV to ./demo-output (or the folder given as $1) and prints the tables.
set -euo pipefail
cd "$(dirname "$0")/.."
./tools/setup/install-deps.sh
build=${QAMSIGHT_BUILD_DIR:-build}
cmake -S . -B "$build" -DCMAKE_BUILD_TYPE=Release
cmake --build "$build" -j"$(nproc)" --target qamsight_cli
exec "$build/qamsight" demo --out "${1:-demo-output}"
