#!/usr/bin/env bash
# Configures and builds heraldry in build/ (Release by default).
#   scripts/build.sh [BUILD ARGS...]      e.g. scripts/build.sh --target heraldry
#   CMAKE_ARGS="-DHERALDRY_WITH_MPI=ON" scripts/build.sh
set -euo pipefail
cd "$(dirname "$0")/.."
BUILD_DIR=${BUILD_DIR:-build}
JOBS=${JOBS:-$(nproc 2>/dev/null || echo 2)}
# shellcheck disable=SC2086
cmake -S . -B "$BUILD_DIR" -DCMAKE_BUILD_TYPE="${BUILD_TYPE:-Release}" ${CMAKE_ARGS:-} >/dev/null
cmake --build "$BUILD_DIR" -j "$JOBS" "$@"
