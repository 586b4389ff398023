#!/usr/bin/env bash
# Installs what is missing, builds, and runs every test through CTest.
#   scripts/test.sh            the full suite (Release build in build/)
#   scripts/test.sh --sanitize the full suite under AddressSanitizer + UBSan (build-asan/), every
#                              finding fatal
set -euo pipefail
cd "$(dirname "$0")/.."
if [[ "${1:-}" == "--sanitize" ]]; then
  ./scripts/setup.sh
  # OpenMP off: libgomp is not instrumented and its thread pool reports false positives.
  cmake -S . -B build-asan -DCMAKE_BUILD_TYPE=RelWithDebInfo -DHERALDRY_SANITIZE=address,undefined \
    -DHERALDRY_WITH_OPENMP=OFF > /dev/null
  cmake --build build-asan -j "${JOBS:-$(nproc 2>/dev/null || echo 2)}"
  cd build-asan
  export ASAN_OPTIONS="${ASAN_OPTIONS:-halt_on_error=1:abort_on_error=0:detect_leaks=1:detect_stack_use_after_return=1:strict_string_checks=1}"
  export UBSAN_OPTIONS="${UBSAN_OPTIONS:-halt_on_error=1:print_stacktrace=1}"
  exec ctest --output-on-failure --no-tests=error -j "${JOBS:-$(nproc 2>/dev/null || echo 2)}"
fi
./scripts/setup.sh
./scripts/build.sh
cd "${BUILD_DIR:-build}"
ctest --output-on-failure --no-tests=error -j "${JOBS:-$(nproc 2>/dev/null || echo 2)}"
