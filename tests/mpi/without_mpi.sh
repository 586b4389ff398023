#!/usr/bin/env bash
# A heraldry built without MPI, started by an MPI launcher as 2 ranks, refuses with exit code 2
# and says how to build with MPI; no rank writes a file.
#   without_mpi.sh HERALDRY MPIEXEC
set -euo pipefail
heraldry=$1 mpiexec=$2
here=$(cd "$(dirname "$0")" && pwd)
work=$(mktemp -d "${TMPDIR:-/tmp}/heraldry_without_mpi_XXXXXX")
trap 'rm -rf "$work"' EXIT
status=0
OMPI_ALLOW_RUN_AS_ROOT=1 OMPI_ALLOW_RUN_AS_ROOT_CONFIRM=1 "$mpiexec" --oversubscribe -n 2 \
  "$heraldry" run "$here/small_grid.toml" -o "$work/r.h5" >"$work/out.txt" 2>"$work/err.txt" || status=$?
grep -q "built without MPI" "$work/err.txt" || { echo "FAIL: no message: $(cat "$work/err.txt")"; exit 1; }
grep -q "HERALDRY_WITH_MPI=ON" "$work/err.txt" || { echo "FAIL: the message does not say how to build with MPI"; exit 1; }
[ "$status" = 2 ] || { echo "FAIL: exit code $status, expected 2"; cat "$work/err.txt"; exit 1; }
[ ! -e "$work/r.h5" ] || { echo "FAIL: a rank wrote the result file"; exit 1; }
echo "refused with exit code 2 and the build hint"
