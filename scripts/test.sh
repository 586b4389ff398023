#!/usr/bin/env bash
# Installs what is missing, builds, and runs every test through CTest.
#   scripts/test.sh            the MPI tests (build-mpi/: -DHERALDRY_WITH_MPI=ON, only the
#                              heraldry target, `ctest -L mpi`: 2 ranks against 1, stop and
#                              resume, errors), then the full suite (Release build in build/)
#   scripts/test.sh --no-mpi   the full suite only (no MPI packages needed)
# The full suite runs last so that CTest's closing line is the whole suite's; a failure of the
# MPI tests still fails the script.
set -euo pipefail
cd "$(dirname "$0")/.."
with_mpi=1
for arg in "$@"; do
  case "$arg" in
    --no-mpi) with_mpi=0 ;;
    *) echo "test.sh: unknown option '$arg' (expected --no-mpi)" >&2; exit 2 ;;
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
