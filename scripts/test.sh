#!/usr/bin/env bash
# Installs what is missing, builds, and runs every test through CTest.
#   scripts/test.sh            the full suite (Release build in build/)
set -euo pipefail
cd "$(dirname "$0")/.."
./scripts/setup.sh
./scripts/build.sh
cd "${BUILD_DIR:-build}"
ctest --output-on-failure --no-tests=error -j "${JOBS:-$(nproc 2>/dev/null || echo 2)}"
