#!/usr/bin/env bash
# Installs what is missing, builds, and runs every test through CTest.
#   scripts/test.sh            the MPI tests (build-mpi/: -DHERALDRY_WITH_MPI=ON, only the
#                              heraldry target, `ctest -L mpi`: 2 ranks against 1, stop and
#                              resume, errors), then the full suite (Release build in build/)
#   scripts/test.sh --no-mpi   the full suite only (no MPI packages needed)
#   scripts/test.sh --sanitize the full suite under AddressSanitizer + UBSan (build-asan/), every
#                              finding fatal
# The full suite runs last so that CTest's closing line is the whole suite's; a failure of the
# MPI tests still fails the script.
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
  exec ctest --output-on-failure --no-tests=error -LE regression -j "${JOBS:-$(nproc 2>/dev/null || echo 2)}"
fi
with_mpi=1
for arg in "$@"; do
  case "$arg" in
    --no-mpi) with_mpi=0 ;;
    *) echo "test.sh: unknown option '$arg' (expected --no-mpi or --sanitize)" >&2; exit 2 ;;
  esac
done
mpi_status=0
if [ "$with_mpi" = 1 ]; then
  ./scripts/setup.sh --mpi
  # Adds MPI to heraldry_io and the executable; the tests run the executable under mpiexec
  # (serially: each uses 2 ranks).
  BUILD_DIR="${MPI_BUILD_DIR:-build-mpi}" CMAKE_ARGS="-DHERALDRY_WITH_MPI=ON ${CMAKE_ARGS:-}" \
    ./scripts/build.sh --target heraldry
  (cd "${MPI_BUILD_DIR:-build-mpi}" && ctest --output-on-failure --no-tests=error -L mpi) || mpi_status=$?
else
  ./scripts/setup.sh
fi
./scripts/build.sh
cd "${BUILD_DIR:-build}"
ctest --output-on-failure --no-tests=error -j "${JOBS:-$(nproc 2>/dev/null || echo 2)}"
if [ "$mpi_status" != 0 ]; then
  echo "test.sh: the MPI tests failed (see above)" >&2
  exit "$mpi_status"
fi
